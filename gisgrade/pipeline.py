"""The run: each stage's function, called in order, data flowing forward.

project file -> alignment -> terrain -> pipe -> design -> hydraulics -> findings -> output

Every stage takes the :class:`~gisgrade.project.Project` and what the stages
before it produced, and returns new data; nothing reaches back. The station
table (a pandas DataFrame, one row per station) grows columns as it flows.
The CLI and the Python API (:func:`gisgrade.run`) both call :func:`run`.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import NamedTuple

import numpy as np
import pandas as pd

from . import alignment as al
from . import findings as fd
from .errors import InputError
from .hydraulics.friction import G
from .project import Project, load


@dataclass
class Result:
    """Everything a run computed; :mod:`gisgrade.output` writes it."""

    project: Project
    alignment: al.Alignment
    crossings: al.Crossings
    table: pd.DataFrame  # one row per station: geometry, ground, pipe
    gradelines: pd.DataFrame | None = None  # one row per scenario and station
    findings: pd.DataFrame | None = None
    bends: pd.DataFrame | None = None
    relaxations: list = field(default_factory=list)
    summary: dict = field(default_factory=dict)
    profile: object = None  # design.PipeProfile
    notes: list = field(default_factory=list)  # stage remarks for the summary
    cases: pd.DataFrame | None = None  # one row per scenario: heads used, solved or required


# --------------------------------------------------------------------------
# Stages
# --------------------------------------------------------------------------


def stage_alignment(project: Project):
    """Centerline, crossings located on it, and the station table."""
    from .terrain import vertical_unit_factor

    cfg = project.alignment
    line = al.read_alignment(cfg.path, layer=cfg.layer, reverse=cfg.reverse, where=cfg.where,
                             feature=cfg.feature, start_station=cfg.start_station)
    vfac = vertical_unit_factor(project.terrain.vertical_unit)
    crossings = al.locate_crossings(line, project.crossings, vfac)
    zones = al.locate_zones(line, project.cover_zones)
    extra, located, line = hydraulic_stations(project, line)
    s, x, y, kind = al.stations(line, cfg.spacing, crossings, zones, extra)
    offset = line.start_station
    table = pd.DataFrame({"station_m": s + offset, "x": x, "y": y, "kind": kind})
    if project.cover is not None:
        lo, hi = al.zone_cover(s, zones, project.cover.minimum, project.cover.maximum)
        table["min_cover_m"], table["max_cover_m"] = lo, hi
    if located is not None:  # offtakes from point layers (flows in m3/s)
        at = _station_index(table["station_m"].to_numpy(), located[0], "offtakes")
        table["offtake_m3_s"] = np.bincount(at, weights=located[1], minlength=len(table))
    crossings = replace(crossings, station=crossings.station + offset)
    hit = set(crossings.layer) | set(zones.layer)
    missed = tuple(f"{c.key}: no feature of {c.path.name} meets the centerline"
                   for c in (*project.crossings, *project.cover_zones) if c.key not in hit)
    if missed:
        line = replace(line, notes=line.notes + missed)
    return line, crossings, table


def hydraulic_stations(project: Project, line: al.Alignment):
    """Stations the hydraulics needs on the table: fittings, offtakes (and
    scenarios' fire stations) and section boundaries as ``(stations, flag)``
    pairs measured from the line's first point; offtake point layers snapped
    to the line, as ``(station, flow)`` arrays (or None); and the line with a
    note on how far the points lay from it."""
    s0 = line.start_station
    extra = [(np.array([f.station for f in project.fittings]) - s0, al.FITTING),
             (np.array([o.station for o in project.offtakes if o.station is not None]
                       + [sc.fire_station for sc in project.scenarios
                          if sc.fire_station is not None]) - s0, al.OFFTAKE),
             (np.array([b for sec in project.sections for b in (sec.start, sec.end)]) - s0,
              al.SECTION)]
    layers = [o for o in project.offtakes if o.path is not None]
    if not layers:
        return extra, None, line
    stations, flows, notes = [], [], []
    for o in layers:
        gdf, st, offset = al.locate_points(line, o.path, f"{o.key}.path", layer=o.layer)
        if o.flow_field not in gdf.columns:
            raise InputError(f"{o.key}.flow_field = {o.flow_field!r}: no such attribute in "
                             f"{o.path.name} (has {', '.join(c for c in gdf.columns if c != 'geometry')})")
        q = pd.to_numeric(gdf[o.flow_field], errors="coerce").to_numpy(dtype=float)
        bad = ~np.isfinite(q) | (q < 0)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"{o.key}.flow_field: feature {i} of {o.path.name} has "
                             f"{o.flow_field} = {gdf[o.flow_field].iloc[i]!r}, not a flow >= 0")
        stations.append(st)
        flows.append(q * o.flow_factor)
        if len(st):
            k = int(np.argmax(offset))
            notes.append(f"{o.key}: {len(st)} offtake points from {o.path.name} snapped to the "
                         f"line; farthest {offset[k]:.1f} m away (station {st[k] + s0:.1f} m)")
    st, q = np.concatenate(stations), np.concatenate(flows)
    extra.append((st, al.OFFTAKE))
    line = replace(line, notes=line.notes + tuple(notes))
    return extra, (st + s0, q), line


def _station_index(station: np.ndarray, x, key: str) -> np.ndarray:
    """Index of the table station at each position ``x`` (within the
    stationing tolerance); an InputError naming ``key`` if one is not a station."""
    x = np.atleast_1d(np.asarray(x, dtype=float))
    i = np.clip(np.searchsorted(station, x), 1, len(station) - 1)
    i = np.where(np.abs(station[i - 1] - x) <= np.abs(station[i] - x), i - 1, i)
    off = np.abs(station[i] - x) > al.STATION_TOLERANCE
    if off.any():
        bad = float(x[np.flatnonzero(off)[0]])
        raise InputError(f"{key}: station {bad:g} m is not on the line (stations "
                         f"{station[0]:g} to {station[-1]:g} m)")
    return i


def stage_terrain(project: Project, line: al.Alignment, table: pd.DataFrame):
    """Ground elevation (m) at every station, sampled from the DEM(s), with
    the 95 % band of the DEM's vertical accuracy; returns (table, notes)."""
    from .terrain import default_vertical_accuracy, sample_ground

    cfg = project.terrain
    ground = sample_ground(
        list(cfg.dem), table["x"].to_numpy(), table["y"].to_numpy(), line.crs,
        station=table["station_m"].to_numpy(), vertical_unit=cfg.vertical_unit,
        method=cfg.method, max_gap=cfg.max_gap,
    )
    rmse = cfg.vertical_accuracy
    notes = []
    if rmse is None:
        kind, rmse = default_vertical_accuracy(ground.cell_size)
        notes.append(f"terrain.vertical_accuracy not given: {rmse:g} m RMSE assumed for a {kind} "
                     f"DEM ({ground.cell_size:.2f} m cells)")
    names = np.array([Path(str(p)).name for p in cfg.dem] + ["bridged"], dtype=object)
    table = table.assign(ground_m=ground.z, ground_bridged=ground.bridged,
                         ground_band_m=accuracy_95(rmse), ground_source=names[ground.source])
    return table, notes


def accuracy_95(rmse: float) -> float:
    """Half-width (m) of the 95 % band of a DEM with vertical ``rmse`` (m).

    Accuracy_z = 1.96 RMSE_z for normally distributed errors (FGDC-STD-007.3
    NSSDA, 1998; ASPRS Positional Accuracy Standards, 2014).

    >>> accuracy_95(0.15)
    0.294
    """
    return round(1.96 * rmse, 12)


def stage_design(project: Project, table: pd.DataFrame, crossings: al.Crossings):
    """Pipe profile: top of pipe, axis, invert and cover at every station.

    Returns the grown table, the crossings with their bottoms resolved (from
    depth below ground where given so) and the design's
    :class:`~gisgrade.design.PipeProfile`.
    """
    from .design import Crossing, DesignRules, design_profile

    pipe, rules_cfg = project.pipe, project.design
    station = table["station_m"].to_numpy()
    ground = table["ground_m"].to_numpy()
    crossings = crossings.resolve(lambda s: np.interp(s, station, ground))
    ground_at = np.interp(crossings.station, station, ground)
    top = np.where(np.isfinite(crossings.size), crossings.top, ground_at - crossings.depth)
    od = _column(table, "outside_diameter_m", pipe.outside_diameter)  # per station (sections)
    # "over" only where cover permits: passing above must leave the pipe's top
    # under the minimum-cover line; otherwise the pipe passes under (noted in run)
    # (checked at the centre and at both edges of a wide feature's footprint)
    reach = crossings.reach()
    points = np.stack([crossings.station - reach, crossings.station, crossings.station + reach])
    cover_line = (np.interp(points, station, ground)
                  - np.interp(points, station, table["min_cover_m"])).min(axis=0)
    od_at = np.interp(points, station, od).max(axis=0)
    blocked = (crossings.side == "over") & (top + crossings.clearance + od_at > cover_line + 1e-9)
    if blocked.any():
        crossings = replace(crossings, side=np.where(blocked, "under", crossings.side).astype(object))
    # a wide feature holds its limit over its whole footprint: at its centre
    # and where the pipe enters and leaves it (edges inside the line only)
    edge_s, edge_i = crossings.edges()
    keep = (edge_s >= station[0]) & (edge_s <= station[-1])
    at = np.concatenate([crossings.station, edge_s[keep]])
    i = np.concatenate([np.arange(len(crossings)), edge_i[keep]])
    design_crossings = [
        Crossing(station=float(s), limit=float(b if side == "under" else t), clearance=float(c),
                 side=str(side), name=str(n))
        for s, b, t, c, side, n in zip(at, crossings.bottom[i], top[i], crossings.clearance[i],
                                       crossings.side[i], crossings.name[i])
    ]
    rules = DesignRules(
        min_cover=table["min_cover_m"].to_numpy(),
        max_cover=table["max_cover_m"].to_numpy(),  # inf where there is no limit
        outside_diameter=float(od.max()),
        joint_length=rules_cfg.joint_length,
        max_joint_deflection=rules_cfg.max_joint_deflection,
        bend_angles=rules_cfg.bend_angles,
        min_grade=rules_cfg.min_grade,
        max_transition_grade=rules_cfg.max_grade,
        trench_width=rules_cfg.trench_width or od + TRENCH_SIDE_ROOM,
    )
    profile = design_profile(station, ground, design_crossings, rules)
    axis = profile.top - od / 2
    grown = table.assign(
        top_m=profile.top,
        axis_m=axis,
        invert_m=axis - _column(table, "inside_diameter_m", pipe.inside_diameter) / 2,
        cover_m=ground - profile.top,
        upper_limit_m=profile.upper_limit,
        lower_limit_m=profile.lower_limit,
        deflection_deg=np.degrees(profile.deflection),
        deflection_limit_deg=np.degrees(profile.deflection_limit),
        reason=profile.reason,
    )
    return grown, crossings, profile


#: Trench width beyond the pipe's outside diameter, 0.3 m each side (common
#: practice for preliminary quantities; the utility's standard governs).
TRENCH_SIDE_ROOM = 0.6


def fittings_frame(profile, table: pd.DataFrame) -> pd.DataFrame:
    """The design's vertical bends with their map position (x, y)."""
    from .design import fittings_table

    frame = fittings_table(profile)
    s = table["station_m"].to_numpy()
    frame["x"] = np.interp(frame["station_m"], s, table["x"])
    frame["y"] = np.interp(frame["station_m"], s, table["y"])
    return frame


def _column(table: pd.DataFrame, name: str, default: float) -> np.ndarray:
    if name in table.columns:
        return table[name].to_numpy(dtype=float)
    return np.full(len(table), float(default))


def stage_pipe(project: Project, table: pd.DataFrame) -> pd.DataFrame:
    """Pipe data per station from [pipe], [[sections]], [[fittings]] and [[offtakes]].

    Adds ``inside_diameter_m, outside_diameter_m, roughness_m, hw_c,
    rating_pa, fitting_k, offtake_m3_s``. A station carries the data of the
    pipe that leaves it (the last station: of the pipe that reaches it), so
    the design stage lays each section at its own outside diameter.
    ``fitting_k`` sums the K of the fittings at a station; ``offtake_m3_s``
    the base-case flow leaving there (point-layer offtakes are already in
    the column from the alignment stage).
    """
    from .hydraulics.cases import segment_values

    pipe, secs = project.pipe, project.sections
    station = table["station_m"].to_numpy(dtype=float)
    starts, ends = [s.start for s in secs], [s.end for s in secs]

    def per_station(attr, default):
        return segment_values(station, starts, ends, [getattr(s, attr) for s in secs], default)[1]

    inside = per_station("inside_diameter", pipe.inside_diameter)
    outside = per_station("outside_diameter", pipe.outside_diameter)
    if np.any(outside < inside):
        i = int(np.argmax(outside < inside))
        raise InputError(f"[[sections]]: outside diameter {outside[i] * 1e3:g} mm is smaller than "
                         f"the inside diameter {inside[i] * 1e3:g} mm at station {station[i]:g} m "
                         "(give both diameters in a section that changes one)")
    for sec in secs:  # ends inside the line must be stations; beyond it, the line's end holds
        for value, which in ((sec.start, "from"), (sec.end, "to")):
            if station[0] < value < station[-1]:
                _station_index(station, value, f"{sec.key}.{which}")
    fitting_k = np.zeros(len(station))
    if project.fittings:
        for f in project.fittings:
            fitting_k[_station_index(station, f.station, f"{f.key}.station")] += f.k
    offtake = _column(table, "offtake_m3_s", 0.0).copy()
    for o in project.offtakes:
        if o.station is not None:
            offtake[_station_index(station, o.station, f"{o.key}.station")] += o.flow
    rating = per_station("pressure_rating", pipe.pressure_rating)
    return table.assign(
        inside_diameter_m=inside, outside_diameter_m=outside,
        roughness_m=per_station("roughness", pipe.roughness),
        hw_c=per_station("hazen_williams_c", pipe.hazen_williams_c),
        rating_pa=rating, fitting_k=fitting_k, offtake_m3_s=offtake,
    )


def stage_hydraulics(project: Project, table: pd.DataFrame, bends: pd.DataFrame):
    """HGL, EGL, velocity and pressure per scenario, and the heads used.

    Returns ``(grades, cases)``: ``grades`` one row per scenario and station
    (``scenario, station_m, flow_m3_s, velocity_m_s, hgl_m, egl_m,
    pressure_kpa, hgl_upstream_m, density_kg_m3``); ``cases`` one row per
    scenario (``scenario, boundary, inflow_m3_s, source_head_m,
    required_head_m, pump_head_m, end_head_m``).

    The table needs ``station_m, axis_m`` and the columns of
    :func:`stage_pipe` (added here from the project if missing). The
    vertical bends of the pipe profile are point losses, K by angle at each
    scenario's Reynolds number; fittings, a tank entrance at the first
    station and a tank exit at the last add theirs. ``hgl_upstream_m`` keeps
    the HGL just upstream of any point loss (lower than ``hgl_m`` where an
    expansion recovers pressure), so the checks see the lowest pressure.
    """
    from .hydraulics import friction, minor, water
    from .hydraulics.gradelines import grade_lines, required_source_head, segment_flows, solve_flow

    if "fitting_k" not in table.columns:
        table = stage_pipe(project, table)
    pipe, hyd = project.pipe, project.hydraulics
    station = table["station_m"].to_numpy(dtype=float)
    axis = table["axis_m"].to_numpy(dtype=float)
    n = len(station)
    rho = float(water.density(hyd.temperature))
    mu = float(water.dynamic_viscosity(hyd.temperature))
    d = table["inside_diameter_m"].to_numpy(dtype=float)
    eps = table["roughness_m"].to_numpy(dtype=float)
    base_k = table["fitting_k"].to_numpy(dtype=float).copy()
    if hyd.start == "tank":
        base_k[0] += minor.NAMED_K[f"entrance_{hyd.entrance}"].k
    if hyd.end == "tank":
        base_k[-1] += minor.NAMED_K["exit"].k
    off = table["offtake_m3_s"].to_numpy(dtype=float)
    xs, qs = station[off > 0], off[off > 0]
    at = np.clip(np.searchsorted(station, bends["station_m"].to_numpy()), 0, n - 1)
    angles = np.radians(bends["angle_deg"].to_numpy(dtype=float))
    engine = dict(
        diameter=d[:-1], method=pipe.friction,
        roughness=None if pipe.friction == "hazen-williams" else eps[:-1],
        hw_c=table["hw_c"].to_numpy(dtype=float)[:-1] if pipe.friction == "hazen-williams" else None,
        density=rho, viscosity=mu, source_at_rest=hyd.start == "tank",
        end_at_rest=hyd.end == "tank",
    )

    def point_k(flows):
        k = base_k.copy()
        if len(at):
            q = np.append(flows, flows[-1])[at]
            re = friction.reynolds(q / (np.pi * d[at] ** 2 / 4), d[at], rho, mu)
            k_bend = minor.bend_k(angles, Re=np.where(re > 0, re, 3e5),
                                  rel_roughness=np.nan_to_num(eps[at] / d[at]))
            np.add.at(k, at, np.where(re > 0, k_bend, 0.0))
        return k

    def demands(c):
        """Where water leaves in case ``c`` and how much: the offtakes times its
        scale, and its fire flow at its fire station (default the last)."""
        if not c.fire_flow:
            return xs, qs * c.scale
        at = (station[-1] if c.fire_station is None else
              station[_station_index(station, c.fire_station, f"{c.key}.fire_station")[0]])
        return np.append(xs, at), np.append(qs * c.scale, c.fire_flow)

    def flows_for(c, inflow):
        out_at, out_q = demands(c)
        taken = float(np.sum(out_q))
        if taken > inflow * (1 + 1e-12) + 1e-15:  # every offtake counts, the last station's too
            raise InputError(f"scenario {c.name!r}: the offtakes take {taken * 1e3:.3f} L/s, more "
                             f"than the {inflow * 1e3:.3f} L/s entering ({c.inflow_key}; the "
                             "offtakes scale with it)")
        return np.maximum(segment_flows(station, inflow, out_at, out_q), 0.0)

    p_req = hyd.required_pressure if hyd.required_pressure is not None else project.checks.min_pressure
    where = None
    if hyd.required_at == "end":
        where = np.zeros(n, dtype=bool)
        where[-1] = True
    end_head = hyd.end_head
    if hyd.boundary == "two-heads" and end_head is None:  # free outlet: atmospheric at the axis
        end_head = float(axis[-1])
    # a pipe laid at its cover below a ground line that is off by the DEM's
    # 95 % band sits that much higher or lower: pressure +/- rho g band
    band = table["ground_band_m"].to_numpy() if "ground_band_m" in table else 0.0
    pressure_band_kpa = rho * G * band / 1e3
    frames, cases = [], []
    flowing_heads = []
    for c in scenarios(project):
        name, inflow = c.name, c.inflow
        required = pump = None
        head = hyd.source_head
        if inflow is None:  # two heads: solve the inflow (bend K follow the flow)
            out_at, out_q = demands(c)
            inflow = float(np.sum(out_q))
            for _ in range(3):
                k = point_k(flows_for(c, inflow))
                try:
                    inflow = solve_flow(station, axis, head_start=head, head_end=end_head,
                                        offtake_station=out_at, offtake_flow=out_q,
                                        point_k=k, **engine)
                except ValueError as exc:
                    raise InputError(f"hydraulics.end_head: {exc}") from None
        flows = flows_for(c, inflow)
        k = point_k(flows)
        if hyd.boundary == "min-pressure":
            if inflow > 0:
                required = required_source_head(station, axis, min_pressure=p_req, flow=flows,
                                                point_k=k, where=where, **engine)
                head = required if hyd.source_head is None else max(required, hyd.source_head)
                pump = None if hyd.source_head is None else max(0.0, required - hyd.source_head)
                flowing_heads.append(head)
            elif head is None:  # static case without an available head: the highest used
                head = max(flowing_heads) if flowing_heads else float(np.max(axis)) + p_req / (rho * G)
        g = grade_lines(station, axis, source_head=head, flow=flows, point_k=k, **engine)
        frames.append(pd.DataFrame({
            "scenario": name, "station_m": station, "flow_m3_s": np.append(flows, flows[-1]),
            "velocity_m_s": g.velocity, "hgl_m": g.hgl, "egl_m": g.egl,
            "pressure_kpa": g.pressure / 1e3,
            "pressure_band_kpa": pressure_band_kpa,
            "hgl_upstream_m": g.hgl_upstream, "density_kg_m3": rho,
        }))
        cases.append(dict(scenario=name, boundary=hyd.boundary, inflow_m3_s=float(inflow),
                          source_head_m=float(head), required_head_m=required, pump_head_m=pump,
                          end_head_m=end_head if inflow > 0 else None))
    return pd.concat(frames, ignore_index=True), pd.DataFrame(cases)


class FlowCase(NamedTuple):
    """One flow case of :func:`scenarios` (SI)."""

    name: str
    inflow: float | None  #: m3/s entering at the start (None: solved from two heads)
    scale: float  #: factor on every offtake of the base case
    fire_flow: float = 0.0  #: m3/s, in ``inflow``, leaving at ``fire_station``
    fire_station: float | None = None  #: m (None: the last station)
    key: str = "hydraulics"  #: the project table of the case, for messages
    inflow_key: str = "hydraulics.flow"  #: the key that sets the inflow, for messages


def scenarios(project: Project) -> list[FlowCase]:
    """Named flow cases, the static case last.

    Without [[scenarios]]: one case "design" at [hydraulics] flow. A
    scenario is the base case (inflow and every offtake) times its
    multiplier, plus its fire flow, which is not scaled: it enters at the
    start and leaves at its fire station (default the last station). A
    scenario given by its flow has multiplier flow / [hydraulics] flow (so
    its offtakes scale too). With two heads the inflow is solved (None here).

    >>> from types import SimpleNamespace as NS
    >>> p = NS(hydraulics=NS(boundary="source-head", flow=0.04), scenarios=[
    ...     NS(name="max day + fire", multiplier=1.5, flow=None, fire_flow=0.063,
    ...        fire_station=None, key="scenarios[0]")])
    >>> [(c.name, round(c.inflow, 6), c.scale) for c in scenarios(p)]
    [('max day + fire', 0.123, 1.5), ('static', 0.0, 0.0)]
    """
    hyd = project.hydraulics
    if hyd.boundary == "two-heads":
        cases = [FlowCase("design", None, 1.0)]
    elif not project.scenarios:
        cases = [FlowCase("design", hyd.flow, 1.0)]
    else:
        cases = []
        for sc in project.scenarios:
            if sc.multiplier is not None:
                cases.append(FlowCase(sc.name, sc.multiplier * hyd.flow + sc.fire_flow, sc.multiplier,
                                      sc.fire_flow, sc.fire_station, sc.key,
                                      f"{sc.key}.multiplier x hydraulics.flow"))
            else:
                cases.append(FlowCase(sc.name, sc.flow, sc.flow / hyd.flow if hyd.flow else 1.0,
                                      key=sc.key, inflow_key=f"{sc.key}.flow"))
    return cases + [FlowCase("static", 0.0, 0.0)]


def stage_findings(project: Project, table: pd.DataFrame, grades: pd.DataFrame,
                   relaxations=()) -> pd.DataFrame:
    """Pressure, velocity, pressure-rating and cover violations, column
    separation, and design rules that gave way, as station ranges.

    Column separation compares the absolute pressure at the top of the pipe
    (gauge + the standard atmosphere at that elevation) with the water's
    vapour pressure at the project temperature.
    """
    from .hydraulics.atmosphere import atmospheric_pressure
    from .hydraulics.water import vapour_pressure

    station = table["station_m"].to_numpy()
    top = table["top_m"].to_numpy()
    rows = fd.cover_findings(station, table["cover_m"].to_numpy(), table["min_cover_m"].to_numpy())
    axis = table["axis_m"].to_numpy()
    rating = _column(table, "rating_pa", np.nan if project.pipe.pressure_rating is None
                     else project.pipe.pressure_rating)
    p_vapour = float(vapour_pressure(project.hydraulics.temperature))
    for name, g in grades.groupby("scenario", sort=False):
        pressure, high, hgl = fd.pressure_sides(g, axis)
        rho_g = g["density_kg_m3"].to_numpy() * G
        rows += fd.pressure_findings(station, pressure, hgl, top, g["velocity_m_s"].to_numpy(),
                                     name, project.checks, pressure_high=high)
        rows += fd.rating_findings(station, high, rating, name)
        absolute = rho_g * (hgl - top) + atmospheric_pressure(top)
        rows += fd.column_separation_findings(station, absolute, p_vapour, name)
    rows += fd.relaxation_findings(relaxations, table)
    return fd.table(rows)


# --------------------------------------------------------------------------
# The whole run
# --------------------------------------------------------------------------


def run(project, outdir=None, *, write: bool = True) -> Result:
    """Run every stage on a project file (path or loaded :class:`Project`).

    With ``write`` (default) the outputs go to ``outdir`` (or the project's
    ``[output] dir``, or ``gisgrade-out`` beside the project file).
    """
    if not isinstance(project, Project):
        project = load(project)
    line, crossings, table = stage_alignment(project)
    table, notes = stage_terrain(project, line, table)
    table = stage_pipe(project, table)
    asked = crossings.side
    table, crossings, profile = stage_design(project, table, crossings)
    notes += [f"crossing {n}: passing over it would leave less than the minimum cover; the pipe "
              "passes under it" for n, a, b in zip(crossings.name, asked, crossings.side) if a != b]
    bends = fittings_frame(profile, table)
    grades, cases = stage_hydraulics(project, table, bends)
    found = stage_findings(project, table, grades, profile.relaxations)
    result = Result(project, line, crossings, table, grades, found, bends,
                    list(profile.relaxations), profile=profile, notes=notes, cases=cases)
    return _finish(result, outdir, write)


def run_ground(project, outdir=None, *, write: bool = True) -> Result:
    """Only the alignment and terrain stages: the ground profile for screening
    a route before any pipe data exist (the ``profile`` command)."""
    if not isinstance(project, Project):
        project = load(project, ground_only=True)
    line, crossings, table = stage_alignment(project)
    table, notes = stage_terrain(project, line, table)
    return _finish(Result(project, line, crossings, table, notes=notes), outdir, write)


def _finish(result: Result, outdir, write: bool) -> Result:
    from .output import summarize, write_all

    result.summary = summarize(result)
    if write:
        write_all(result, resolve_outdir(result.project, outdir))
    return result


def resolve_outdir(project: Project, outdir=None) -> Path:
    if outdir is not None:
        return Path(outdir)
    if project.output.dir is not None:
        return project.output.dir
    return project.base_dir / "gisgrade-out"
