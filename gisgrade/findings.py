"""Findings: where the main breaks a planning check, as station ranges.

Pure functions over the station arrays. Each finding is one contiguous run
of stations that fails one check in one scenario, with the worst value in
the run and its station. Later issues add air valves and drains here.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from .arrays import runs
from .project import ChecksConfig as Thresholds

#: Pressures within this much (Pa) of a limit meet it (a solved head meets a
#: required pressure to rounding error, not one pascal short).
PRESSURE_TOLERANCE = 1e-3

#: Columns of the findings table (``findings.csv``).
COLUMNS = ["scenario", "check", "severity", "from_station_m", "to_station_m",
           "worst_station_m", "worst_value", "unit", "limit", "message"]


def range_findings(station, value, mask, *, scenario, check, severity, unit, limit,
                   worst="min", text="{check}") -> list[dict]:
    """One finding per run of ``mask``, reporting the worst ``value`` in it."""
    out = []
    for a, b in runs(mask):
        seg = value[a:b + 1]
        k = a + int(np.argmin(seg) if worst == "min" else np.argmax(seg))
        out.append(dict(
            scenario=scenario, check=check, severity=severity,
            from_station_m=float(station[a]), to_station_m=float(station[b]),
            worst_station_m=float(station[k]), worst_value=float(value[k]), unit=unit,
            limit=float(limit), message=text.format(check=check, value=value[k], limit=limit),
        ))
    return out


def pressure_sides(grades: pd.DataFrame, axis) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Lowest and highest pressure (Pa) at each station of one scenario's grade
    lines, over both sides of any point loss there, and the lower HGL (m).

    ``grades`` has ``hgl_m``, ``hgl_upstream_m`` and ``density_kg_m3``; the
    pressure is rho g (HGL - axis) at the pipe axis.
    """
    from .hydraulics.friction import G

    both = grades[["hgl_m", "hgl_upstream_m"]].to_numpy()
    rho_g = grades["density_kg_m3"].to_numpy() * G
    low_hgl = both.min(axis=1)
    return rho_g * (low_hgl - axis), rho_g * (both.max(axis=1) - axis), low_hgl


def pressure_findings(station, pressure, hgl, top, velocity, scenario: str,
                      limits: Thresholds = Thresholds(), pressure_high=None) -> list[dict]:
    """Low, high and sub-atmospheric pressure, and velocity, for one scenario.

    ``pressure`` in Pa at the pipe axis, ``hgl`` and ``top`` (top of pipe) in
    m, ``velocity`` in m/s. Sub-atmospheric means the HGL is below the top of
    the pipe (field notes: air entry, contamination, column separation).
    ``pressure_high`` (Pa, default ``pressure``) is the higher side of any
    point loss, used for the high-pressure check.
    """
    kpa = pressure / 1e3
    high = pressure if pressure_high is None else np.asarray(pressure_high)
    out = []
    out += range_findings(station, top - hgl, hgl < top, scenario=scenario,
                          check="sub-atmospheric", severity="critical", unit="m", limit=0.0,
                          worst="max", text="HGL {value:.2f} m below the top of pipe")
    low = (pressure < limits.min_pressure - PRESSURE_TOLERANCE) & (hgl >= top)
    out += range_findings(station, kpa, low, scenario=scenario, check="low pressure",
                          severity="warning", unit="kPa", limit=limits.min_pressure / 1e3,
                          text="pressure {value:.0f} kPa below {limit:.0f} kPa")
    too_high = high > limits.max_pressure + PRESSURE_TOLERANCE
    out += range_findings(station, high / 1e3, too_high, scenario=scenario, check="high pressure",
                          severity="warning", unit="kPa", limit=limits.max_pressure / 1e3,
                          worst="max",
                          text="pressure {value:.0f} kPa above {limit:.0f} kPa")
    if limits.max_velocity > 0:
        out += range_findings(station, velocity, velocity > limits.max_velocity,
                              scenario=scenario, check="high velocity", severity="warning",
                              unit="m/s", limit=limits.max_velocity, worst="max",
                              text="velocity {value:.2f} m/s above {limit:.2f} m/s")
    if limits.min_velocity > 0:
        slow = (velocity < limits.min_velocity) & (velocity > 0)
        out += range_findings(station, velocity, slow, scenario=scenario, check="low velocity",
                              severity="note", unit="m/s", limit=limits.min_velocity,
                              text="velocity {value:.2f} m/s below {limit:.2f} m/s")
    return out


def column_separation_findings(station, pressure_abs, vapour_pressure, scenario: str) -> list[dict]:
    """Stations where the absolute pressure (Pa) falls below the water's
    vapour pressure (Pa): the water would boil and the column separate, so
    the flow cannot be carried as computed (critical). ``pressure_abs`` is
    gauge plus atmospheric pressure at the same point (the top of the pipe,
    where vapour forms first).

    >>> rows = column_separation_findings(np.array([0.0, 10.0, 20.0]),
    ...                                   np.array([50e3, 1e3, 3e3]), 1.7e3, "fire")
    >>> [(r["check"], r["worst_station_m"], r["worst_value"]) for r in rows]
    [('column separation', 10.0, 1.0)]
    """
    p = np.asarray(pressure_abs, dtype=float)
    return range_findings(
        station, p / 1e3, p < vapour_pressure, scenario=scenario, check="column separation",
        severity="critical", unit="kPa", limit=vapour_pressure / 1e3,
        text="absolute pressure {value:.1f} kPa below the vapour pressure {limit:.1f} kPa: "
             "column separation: the flow cannot be carried as computed")


def rating_findings(station, pressure, rating, scenario: str) -> list[dict]:
    """Stations where the pressure (Pa) exceeds the pipe's pressure rating (Pa,
    one value per station; NaN where none is given), one finding per run."""
    rating = np.asarray(rating, dtype=float)
    out = []
    for r in np.unique(rating[np.isfinite(rating)]):  # one pass per rating (sections)
        over = (rating == r) & (pressure > r + PRESSURE_TOLERANCE)
        out += range_findings(station, pressure / 1e3, over, scenario=scenario, check="rating",
                              severity="critical", unit="kPa", limit=r / 1e3, worst="max",
                              text="pressure {value:.0f} kPa above the pipe's rating {limit:.0f} kPa")
    return out


def cover_findings(station, cover, min_cover) -> list[dict]:
    """Stations where the designed pipe has less than the minimum cover
    (``min_cover`` per station: zones may change it)."""
    min_cover = np.broadcast_to(np.asarray(min_cover, dtype=float), np.shape(cover))
    short = cover < min_cover - 1e-6
    rows = range_findings(station, cover, short, scenario="design", check="cover",
                          severity="critical", unit="m", limit=0.0)
    for row in rows:  # the limit and message at the worst station (zones vary it)
        k = int(np.searchsorted(station, row["worst_station_m"]))
        row["limit"] = float(min_cover[k])
        row["message"] = (f"cover {cover[k]:.2f} m, {min_cover[k] - cover[k]:.2f} m short of "
                          f"the {min_cover[k]:.2f} m minimum")
    return rows


#: How far each design rule is broken at a station, from station-table
#: columns, so a relaxation's worst station can be found (rules not listed
#: report the start of their range).
RULE_EXCESS = {
    "min cover": lambda t: t["min_cover_m"] - t["cover_m"],
    "max cover": lambda t: t["cover_m"] - t["max_cover_m"],
    "joint deflection": lambda t: t["deflection_deg"].abs() - t["deflection_limit_deg"],
}


def relaxation_findings(relaxations, table: pd.DataFrame | None = None) -> list[dict]:
    """One finding per design rule that had to give way (see design.Relaxation),
    its worst station found from the station ``table`` where the rule allows."""
    rows = []
    for r in relaxations:
        worst = float(r.station_from)
        if table is not None and r.rule in RULE_EXCESS:
            s = table["station_m"].to_numpy()
            excess = np.nan_to_num(RULE_EXCESS[r.rule](table).to_numpy(dtype=float), nan=-np.inf)
            inside = (s >= r.station_from - 1e-6) & (s <= r.station_to + 1e-6)
            if inside.any():
                worst = float(s[inside][np.argmax(excess[inside])])
        rows.append(dict(scenario="design", check=f"rule relaxed: {r.rule}", severity="critical",
                         from_station_m=float(r.station_from), to_station_m=float(r.station_to),
                         worst_station_m=worst, worst_value=float(r.amount), unit=r.unit,
                         limit=0.0, message=r.message))
    return rows


def table(findings: list[dict]) -> pd.DataFrame:
    return pd.DataFrame(findings, columns=COLUMNS)
