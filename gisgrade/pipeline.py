"""The run: each stage's function, called in order, data flowing forward.

project file -> alignment -> terrain -> design -> hydraulics -> findings -> output

Every stage takes the :class:`~gisgrade.project.Project` and what the stages
before it produced, and returns new data; nothing reaches back. The station
table (a pandas DataFrame, one row per station) grows columns as it flows.
The CLI and the Python API (:func:`gisgrade.run`) both call :func:`run`.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from . import alignment as al
from . import findings as fd
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
    return line, crossings, table


def stage_terrain(project: Project, line: al.Alignment, table: pd.DataFrame) -> pd.DataFrame:
    """Ground elevation (m) at every station, sampled from the DEM(s)."""
    from .terrain import sample_ground

    cfg = project.terrain
    ground = sample_ground(
        list(cfg.dem), table["x"].to_numpy(), table["y"].to_numpy(), line.crs,
        station=table["station_m"].to_numpy(), vertical_unit=cfg.vertical_unit,
        method=cfg.method, max_gap=cfg.max_gap,
    )
    table = table.assign(ground_m=ground.z, ground_bridged=ground.bridged)
    if cfg.vertical_accuracy is not None:
        table["ground_band_m"] = accuracy_95(cfg.vertical_accuracy)
    return table


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
    offset = station[0]
    design_crossings = [
        Crossing(station=float(s) + offset, limit=float(b), clearance=float(c), name=str(n))
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
    """HGL, EGL, velocity and pressure per scenario (design flow and static)."""
    from .hydraulics import minor, water
    from .hydraulics.gradelines import grade_lines

    pipe, hyd = project.pipe, project.hydraulics
    station = table["station_m"].to_numpy()
    axis = table["axis_m"].to_numpy()
    rho = float(water.density(hyd.temperature))
    mu = float(water.dynamic_viscosity(hyd.temperature))
    point_k = np.zeros(len(station))
    if len(bends):
        idx = np.searchsorted(station, bends["station_m"].to_numpy())
        np.add.at(point_k, np.clip(idx, 0, len(station) - 1),
                  minor.bend_k(np.radians(bends["angle_deg"].to_numpy())))
    frames = []
    for name, flow in scenarios(project):
        g = grade_lines(
            station, axis, source_head=hyd.source_head, flow=flow,
            diameter=pipe.inside_diameter, method=pipe.friction, roughness=pipe.roughness,
            hw_c=pipe.hazen_williams_c, density=rho, viscosity=mu, point_k=point_k,
        )
        frames.append(pd.DataFrame({
            "scenario": name, "station_m": station, "flow_m3_s": flow,
            "velocity_m_s": g.velocity, "hgl_m": g.hgl, "egl_m": g.egl,
            "pressure_kpa": g.pressure / 1e3,
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
    for name, g in grades.groupby("scenario", sort=False):
        rows += fd.pressure_findings(
            station, g["pressure_kpa"].to_numpy() * 1e3, g["hgl_m"].to_numpy(), top,
            g["velocity_m_s"].to_numpy(), name, project.checks,
        )
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
    table = stage_terrain(project, line, table)
    table, profile = stage_design(project, table, crossings)
    bends = _bends_frame(profile.bends)
    grades = stage_hydraulics(project, table, bends)
    found = stage_findings(project, table, grades)
    result = Result(project, line, crossings, table, grades, found, bends,
                    list(profile.relaxations), profile=profile)
    return _finish(result, outdir, write)


def run_ground(project, outdir=None, *, write: bool = True) -> Result:
    """Only the alignment and terrain stages: the ground profile for screening
    a route before any pipe data exist (the ``profile`` command)."""
    if not isinstance(project, Project):
        project = load(project, ground_only=True)
    line, crossings, table = stage_alignment(project)
    table = stage_terrain(project, line, table)
    return _finish(Result(project, line, crossings, table), outdir, write)


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
