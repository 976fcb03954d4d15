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
    s, x, y, kind = al.stations(line, cfg.spacing, crossings)
    table = pd.DataFrame({"station_m": s + line.start_station, "x": x, "y": y, "kind": kind})
    crossings = replace(crossings, station=crossings.station + line.start_station)
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
    """Pipe profile: top of pipe, axis, invert and cover at every station."""
    from .design import Crossing, DesignRules, design_profile

    pipe = project.pipe
    station = table["station_m"].to_numpy()
    design_crossings = [
        Crossing(station=float(s), limit=float(b), clearance=float(c), name=str(n))
        for s, b, c, n in zip(crossings.station, crossings.bottom, crossings.clearance,
                              crossings.name)
    ]
    rules = DesignRules(min_cover=project.cover.minimum, outside_diameter=pipe.outside_diameter)
    profile = design_profile(station, table["ground_m"].to_numpy(), design_crossings, rules)
    axis = profile.top - pipe.outside_diameter / 2
    table = table.assign(
        top_m=profile.top,
        axis_m=axis,
        invert_m=axis - pipe.inside_diameter / 2,
        cover_m=table["ground_m"].to_numpy() - profile.top,
        reason=profile.reason,
    )
    return table, profile


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


def stage_findings(project: Project, table: pd.DataFrame, grades: pd.DataFrame) -> pd.DataFrame:
    """Pressure, velocity and cover violations as station ranges."""
    station = table["station_m"].to_numpy()
    top = table["top_m"].to_numpy()
    rows = fd.cover_findings(station, table["cover_m"].to_numpy(), project.cover.minimum)
    axis = table["axis_m"].to_numpy()
    for name, g in grades.groupby("scenario", sort=False):
        hgl = np.minimum(g["hgl_m"].to_numpy(), g["hgl_upstream_m"].to_numpy())
        pressure = g["density_kg_m3"].to_numpy() * G * (hgl - axis)
        rows += fd.pressure_findings(station, pressure, hgl, top, g["velocity_m_s"].to_numpy(),
                                     name, project.checks)
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
    table, profile = stage_design(project, table, crossings)
    bends = _bends_frame(profile.bends)
    grades = stage_hydraulics(project, table, bends)
    found = stage_findings(project, table, grades)
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


def _bends_frame(bends) -> pd.DataFrame:
    frame = pd.DataFrame(bends)
    if "station" in frame.columns and "station_m" not in frame.columns:
        frame = frame.rename(columns={"station": "station_m"})
    if frame.empty:
        frame = pd.DataFrame({"station_m": [], "angle_deg": [], "direction": []})
    return frame
