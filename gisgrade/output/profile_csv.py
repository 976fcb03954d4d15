"""``profile.csv``: one row per station, ground and pipe."""
from __future__ import annotations

from .csv import write_csv
from . import writer

#: profile.csv columns (stable; later issues append).
COLUMNS = ["station_m", "x", "y", "ground_m", "top_m", "axis_m", "invert_m", "cover_m"]
#: Columns appended when the stages produced them.
EXTRA_COLUMNS = ["ground_band_m", "ground_bridged", "ground_source", "min_cover_m", "max_cover_m",
                 "upper_limit_m", "lower_limit_m", "deflection_deg", "deflection_limit_deg",
                 "plan_turn_deg", "plan_share_deg", "joint_deflection_deg", "reason"]
#: Decimals of metres written for stations and elevations (0.1 mm), the same in every
#: table so rows join on ``station_m``.
STATION_DECIMALS = 4


@writer("profile.csv")
def write_profile(result, folder, display):
    table = result.table
    columns = [c for c in COLUMNS + EXTRA_COLUMNS if c in table.columns]  # ground only: no pipe
    profile = table[columns].copy()
    profile["station"] = display.station(table["station_m"])
    profile = display.dual(profile)  # US: a column in feet beside each in metres
    write_csv(profile, folder / "profile.csv", STATION_DECIMALS)
