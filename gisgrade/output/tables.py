"""CSV tables: the station profile, grade lines per scenario, findings, fittings."""
from __future__ import annotations

from pathlib import Path

#: profile.csv columns (stable; later issues append).
PROFILE_COLUMNS = ["station_m", "x", "y", "ground_m", "top_m", "axis_m", "invert_m", "cover_m"]
#: Decimals of metres written for stations and elevations (0.1 mm), the same in every
#: table so rows join on ``station_m``.
STATION_DECIMALS = 4
#: Columns appended to profile.csv when the stages produced them.
EXTRA_PROFILE_COLUMNS = ["ground_band_m", "ground_bridged", "ground_source", "min_cover_m", "max_cover_m",
                         "upper_limit_m", "lower_limit_m", "deflection_deg",
                         "deflection_limit_deg", "reason"]
#: gradelines.csv columns (stable; later issues append).
GRADELINE_COLUMNS = ["scenario", "station_m", "flow_m3_s", "velocity_m_s", "hgl_m", "egl_m",
                     "pressure_kpa", "pressure_band_kpa"]


def write_tables(result, folder: Path) -> None:
    from ..alignment import format_station

    table = result.table
    columns = [c for c in PROFILE_COLUMNS if c in table.columns]  # ground only: no pipe
    extra = [c for c in EXTRA_PROFILE_COLUMNS if c in table.columns]
    profile = table[columns + extra].copy()
    profile["station"] = format_station(table["station_m"], result.project.output.units)
    profile.to_csv(folder / "profile.csv", index=False, float_format=f"%.{STATION_DECIMALS}f")
    if result.gradelines is not None:
        grades = result.gradelines[GRADELINE_COLUMNS].round({"station_m": STATION_DECIMALS})
        grades.to_csv(folder / "gradelines.csv", index=False, float_format="%.6f")
    if result.findings is not None:
        result.findings.to_csv(folder / "findings.csv", index=False, float_format="%.4f")
    if result.bends is not None:
        result.bends.to_csv(folder / "fittings.csv", index=False, float_format="%.4f")
