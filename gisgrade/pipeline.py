"""The run: each stage's function, called in order, data flowing forward.

project file -> alignment -> terrain -> design -> hydraulics -> findings -> output

Every stage takes the :class:`~gisgrade.project.Project` and what the stages
before it produced, and returns new data; nothing reaches back. The station
table (a pandas DataFrame, one row per station) grows columns as it flows.
The CLI and the Python API (:func:`gisgrade.run`) both call :func:`run`.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd

from . import alignment as al
from . import findings as fd
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
    s, x, y, kind = al.stations(line, cfg.spacing, crossings, zones)
    offset = line.start_station
    table = pd.DataFrame({"station_m": s + offset, "x": x, "y": y, "kind": kind})
    if project.cover is not None:
        lo, hi = al.zone_cover(s, zones, project.cover.minimum, project.cover.maximum)
        table["min_cover_m"], table["max_cover_m"] = lo, hi
    crossings = replace(crossings, station=crossings.station + offset)
    return line, crossings, table


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
    table = table.assign(ground_m=ground.z, ground_bridged=ground.bridged,
                         ground_band_m=accuracy_95(rmse))
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
    design_crossings = [
        Crossing(station=float(s), limit=float(b if side == "under" else t), clearance=float(c),
                 side=str(side), name=str(n))
        for s, b, t, c, side, n in zip(crossings.station, crossings.bottom, top,
                                       crossings.clearance, crossings.side, crossings.name)
    ]
    od = pipe.outside_diameter
    rules = DesignRules(
        min_cover=table["min_cover_m"].to_numpy(),
        max_cover=None if not np.isfinite(table["max_cover_m"]).any() else
        np.where(np.isfinite(table["max_cover_m"]), table["max_cover_m"], 1e6),
        outside_diameter=od,
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
        invert_m=axis - pipe.inside_diameter / 2,
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


def stage_hydraulics(project: Project, table: pd.DataFrame, bends: pd.DataFrame) -> pd.DataFrame:
    """HGL, EGL, velocity and pressure per scenario (design flow and static).

    The vertical bends of the pipe profile are point losses, K by angle at
    each scenario's Reynolds number. ``hgl_upstream_m`` keeps the HGL just
    upstream of any point loss (lower than ``hgl_m`` where an expansion
    recovers pressure), so the checks see the lowest pressure at a station.
    """
    from .hydraulics import friction, minor, water
    from .hydraulics.gradelines import grade_lines

    pipe, hyd = project.pipe, project.hydraulics
    station = table["station_m"].to_numpy()
    axis = table["axis_m"].to_numpy()
    rho = float(water.density(hyd.temperature))
    mu = float(water.dynamic_viscosity(hyd.temperature))
    d = pipe.inside_diameter
    at = np.clip(np.searchsorted(station, bends["station_m"].to_numpy()), 0, len(station) - 1)
    angles = np.radians(bends["angle_deg"].to_numpy(dtype=float))
    rel_roughness = (pipe.roughness or 0.0) / d
    frames = []
    for name, flow in scenarios(project):
        point_k = np.zeros(len(station))
        if len(at) and flow > 0:
            re = friction.reynolds(flow / (np.pi * d * d / 4), d, rho, mu)
            np.add.at(point_k, at, minor.bend_k(angles, Re=re, rel_roughness=rel_roughness))
        g = grade_lines(
            station, axis, source_head=hyd.source_head, flow=flow, diameter=d,
            method=pipe.friction, roughness=pipe.roughness, hw_c=pipe.hazen_williams_c,
            density=rho, viscosity=mu, point_k=point_k,
        )
        frames.append(pd.DataFrame({
            "scenario": name, "station_m": station, "flow_m3_s": flow,
            "velocity_m_s": g.velocity, "hgl_m": g.hgl, "egl_m": g.egl,
            "pressure_kpa": g.pressure / 1e3, "hgl_upstream_m": g.hgl_upstream,
            "density_kg_m3": rho,
        }))
    return pd.concat(frames, ignore_index=True)


def scenarios(project: Project) -> list[tuple[str, float]]:
    """Named flow cases: the design flow, then the static case (no flow)."""
    return [("design", project.hydraulics.flow), ("static", 0.0)]


def stage_findings(project: Project, table: pd.DataFrame, grades: pd.DataFrame,
                   relaxations=()) -> pd.DataFrame:
    """Pressure, velocity and cover violations, and design rules that gave
    way, as station ranges."""
    station = table["station_m"].to_numpy()
    top = table["top_m"].to_numpy()
    rows = fd.cover_findings(station, table["cover_m"].to_numpy(), table["min_cover_m"].to_numpy())
    axis = table["axis_m"].to_numpy()
    for name, g in grades.groupby("scenario", sort=False):
        hgl = np.minimum(g["hgl_m"].to_numpy(), g["hgl_upstream_m"].to_numpy())
        pressure = g["density_kg_m3"].to_numpy() * G * (hgl - axis)
        rows += fd.pressure_findings(station, pressure, hgl, top, g["velocity_m_s"].to_numpy(),
                                     name, project.checks)
    rows += fd.relaxation_findings(relaxations)
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
    table, crossings, profile = stage_design(project, table, crossings)
    bends = fittings_frame(profile, table)
    grades = stage_hydraulics(project, table, bends)
    found = stage_findings(project, table, grades, profile.relaxations)
    result = Result(project, line, crossings, table, grades, found, bends,
                    list(profile.relaxations), profile=profile, notes=notes)
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
