"""Screening: input that cannot be right (refused) or looks wrong (warned).

The project reader refuses each key that is wrong on its own; this stage
looks at what only the files and the keys together show, once the line is
stationed and the ground sampled:

- refused: a DEM of several bands (an image, not a DEM); ground values that
  cannot be ground (voids written as -9999 or -32768 without a nodata tag,
  or any value below -500 m or above 9000 m);
- warned: a DEM whose CRS or band unit is in feet while
  ``terrain.vertical_unit`` says metres; a DEM much coarser than the station
  spacing; a Hazen-Williams C or a cover outside the usual range; a crossed
  feature whose bottom lies far above the ground; a flow whose velocity is
  extreme; a source head below the ground at the first station.

Each is a :class:`Problem` naming the file, key or feature with a hint.
``gisgrade check`` prints them all; a run stops at the first error
(:func:`enforce`) and prints every warning on stderr, one line each.
The thresholds are common practice, each named beside its constant.
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import InputError

log = logging.getLogger("gisgrade")

#: Ground elevations outside this range cannot be ground on Earth (m): the Dead
#: Sea shore lies near -430 m, Everest's summit near 8849 m (from memory).
GROUND_RANGE = (-500.0, 9000.0)
#: Values GIS software writes for a void when no nodata tag is set (common practice).
VOID_VALUES = (-9999.0, -32767.0, -32768.0, -99999.0, -3.4028234663852886e38)
#: A DEM whose cells are more than this many station spacings wide is warned (common practice).
COARSE_CELLS = 2.0
#: Hazen-Williams C usually met in service (common practice: 60 old unlined iron, 150 new plastic).
HW_C_USUAL = (60.0, 160.0)
#: Least cover above this is warned (m; common practice 0.8-2 m).
DEEP_COVER = 3.0
#: A crossed feature's bottom more than this above the ground is warned (m, common practice).
HIGH_CROSSING = 5.0
#: Velocity beyond this is extreme for a water main (m/s; common practice: 0.6-3 m/s in service).
EXTREME_VELOCITY = 5.0

_FEET = ("ft", "foot", "feet", "us-ft", "us survey foot", "us_survey_foot", "ftus", "international foot")


@dataclass(frozen=True)
class Problem:
    """One finding about the input: ``level`` "error" or "warning", one line of text."""

    level: str
    text: str

    def line(self) -> str:
        return f"gisgrade: {self.level}: {self.text}"


def error(text: str) -> Problem:
    return Problem("error", " ".join(text.split()))


def warning(text: str) -> Problem:
    return Problem("warning", " ".join(text.split()))


def screen_config(project) -> list[Problem]:
    """Warnings from the project file alone (keys possible but unusual)."""
    out = []
    name = project.path.name
    pipes = [("pipe", project.pipe)] if project.pipe is not None else []
    pipes += [(s.key, s) for s in project.sections]
    for key, cfg in pipes:
        c = cfg.hazen_williams_c
        if c is not None and not HW_C_USUAL[0] <= c <= HW_C_USUAL[1]:
            out.append(warning(f"{name}: {key}.hazen_williams_c = {c:g} is outside the usual "
                               f"{HW_C_USUAL[0]:g}-{HW_C_USUAL[1]:g}; check it"))
    if project.cover is not None and project.cover.minimum > DEEP_COVER:
        out.append(warning(f"{name}: cover.minimum = {project.cover.minimum:g} m is deeper than "
                           f"{DEEP_COVER:g} m along the whole line; a unit slip?"))
    return out


def screen_dems(project, spacing: float) -> list[Problem]:
    """The DEM files' own form: one band, feet against metres, cell size."""
    import rasterio

    from .terrain import _cell_size_m, vertical_unit_factor

    out = []
    metres = vertical_unit_factor(project.terrain.vertical_unit) == 1.0
    for path in project.terrain.dem:
        try:
            src = rasterio.open(path)
        except Exception:
            continue  # the terrain stage says why
        with src:
            label = Path(str(path)).name
            if src.count > 1:
                out.append(error(f"terrain.dem: {label} holds {src.count} bands (an image?); a "
                                 "DEM has one band of elevations: export the elevation band alone"))
            unit = (src.units[0] or "").strip().lower() if src.units else ""
            crs_feet = (src.crs is not None and src.crs.is_projected
                        and (src.crs.linear_units or "").lower() in _FEET)
            if metres and (unit in _FEET or crs_feet):
                why = f"its band unit is {unit!r}" if unit in _FEET else "its CRS is in feet"
                out.append(warning(f"terrain.dem: {label}: {why} but terrain.vertical_unit is "
                                   "metres; if its elevations are in feet set terrain.vertical_unit"
                                   " = \"ft\" (or \"us-ft\")"))
            cell = _cell_size_m(src, None)
            if cell > COARSE_CELLS * spacing:
                out.append(warning(f"terrain.dem: {label} has {cell:.3g} m cells, coarser than "
                                   f"{COARSE_CELLS:g} x alignment.spacing ({spacing:g} m): the "
                                   "stations between cells only interpolate"))
    return out


def screen_ground(project, table) -> list[Problem]:
    """Ground values that cannot be ground: voids without a nodata tag, absurd magnitudes."""
    import rasterio

    from .terrain import vertical_unit_factor

    ground = table["ground_m"].to_numpy()
    station = table["station_m"].to_numpy()
    bad = (ground < GROUND_RANGE[0]) | (ground > GROUND_RANGE[1])
    if not bad.any():
        return []
    i = int(np.flatnonzero(bad)[0])
    factor = vertical_unit_factor(project.terrain.vertical_unit)
    raw = ground[i] / factor
    untagged = []
    for path in project.terrain.dem:
        try:
            with rasterio.open(path) as src:
                if src.nodata is None:
                    untagged.append(Path(str(path)).name)
        except Exception:
            continue
    near_void = any(abs(raw - v) <= 1e-6 * abs(v) for v in VOID_VALUES)
    where = f"ground of {ground[i]:.6g} m at station {station[i]:.1f} m ({int(bad.sum())} stations)"
    if untagged and (near_void or raw < GROUND_RANGE[0]):
        return [error(f"terrain.dem: {', '.join(untagged)}: {where}: voids without a nodata tag "
                      f"(the value {raw:.6g} looks like one); set the file's nodata value, "
                      "e.g. gdal_edit.py -a_nodata -9999")]
    return [error(f"terrain.dem: {where} cannot be ground (outside {GROUND_RANGE[0]:g} to "
                  f"{GROUND_RANGE[1]:g} m); check terrain.vertical_unit and the DEM's values")]


def screen_crossings(crossings, table) -> list[Problem]:
    """Crossed features whose bottom lies far above the ground."""
    if not len(crossings):
        return []
    ground = np.interp(crossings.station, table["station_m"].to_numpy(), table["ground_m"].to_numpy())
    high = np.flatnonzero(np.isfinite(crossings.bottom) & (crossings.bottom - ground > HIGH_CROSSING))
    return [warning(f"{crossings.layer[k]}: {crossings.name[k]} at station "
                    f"{crossings.station[k]:.1f} m has its bottom {crossings.bottom[k] - ground[k]:.1f}"
                    f" m above the ground; a bridge (side = \"over\"), or the attribute in another "
                    "unit or datum?") for k in high]


def _flows(project) -> list[tuple[str, float]]:
    hyd = project.hydraulics
    base = hyd.flow or 0.0
    if not project.scenarios:
        return [("design", base)]
    return [(sc.name, sc.flow if sc.flow is not None else (sc.multiplier or 0.0) * base + sc.fire_flow)
            for sc in project.scenarios]


def screen_hydraulics(project, table) -> list[Problem]:
    """Extreme velocities and a source head below the ground at the start."""
    if project.hydraulics is None or project.pipe is None:
        return []
    out = []
    hyd = project.hydraulics
    diameters = [project.pipe.inside_diameter] + [s.inside_diameter for s in project.sections
                                                  if s.inside_diameter is not None]
    area = math.pi * min(diameters) ** 2 / 4.0
    for name, q in _flows(project):
        v = q / area
        if v > EXTREME_VELOCITY:
            out.append(warning(f"{project.path.name}: scenario {name!r}: {q * 1e3:.4g} L/s in "
                               f"{min(diameters) * 1e3:.0f} mm is {v:.3g} m/s, beyond "
                               f"{EXTREME_VELOCITY:g} m/s; the flow's or the diameter's unit?"))
    if hyd.source_head is not None and hyd.boundary != "min-pressure":
        ground0 = float(table["ground_m"].iloc[0])
        if hyd.source_head < ground0:
            out.append(warning(f"{project.path.name}: hydraulics.source_head = "
                               f"{hyd.source_head:.2f} m is below the ground at the first station "
                               f"({ground0:.2f} m): the line would start under suction; is it the "
                               "HGL in the DEM's datum (not a pressure or a depth)?"))
    return out


def screen_sections(project, line) -> list[Problem]:
    """[[sections]] wholly off the line (never used: refused) or reaching beyond
    an end (cut there: warned)."""
    s0, s1 = line.start_station, line.start_station + line.length
    out = []
    for sec in project.sections:
        span = f"{sec.key}: from {sec.start:.1f} m to {sec.end:.1f} m"
        if sec.end <= s0 + 1e-3 or sec.start >= s1 - 1e-3:
            out.append(error(f"{span} lies wholly off the line (stations {s0:.1f} to {s1:.1f} m); "
                             "give stations on the line"))
        elif sec.start < s0 - 1e-3 or sec.end > s1 + 1e-3:
            out.append(warning(f"{span} reaches beyond the line (stations {s0:.1f} to "
                               f"{s1:.1f} m); it is cut at the line's end"))
    return out


def screen(project, line, crossings, table) -> list[Problem]:
    """Every problem this stage finds, errors first."""
    problems = (screen_config(project) + screen_dems(project, project.alignment.spacing)
                + screen_sections(project, line) + screen_ground(project, table))
    if not any(p.level == "error" for p in problems):
        problems += screen_crossings(crossings, table) + screen_hydraulics(project, table)
    return sorted(problems, key=lambda p: p.level != "error")


def enforce(problems) -> None:
    """The run's part: the first error raised (one line), every warning logged."""
    errors = [p for p in problems if p.level == "error"]
    if errors:
        raise InputError(errors[0].text)
    for p in problems:
        log.warning("warning: %s", p.text)
