"""``gradelines.csv``: one row per scenario and station."""
from __future__ import annotations

from .csv import write_csv
from . import has_pipe, writer
from .profile_csv import STATION_DECIMALS

#: gradelines.csv columns (stable; later issues append).
COLUMNS = ["scenario", "station_m", "flow_m3_s", "velocity_m_s", "hgl_m", "egl_m",
           "pressure_kpa", "pressure_band_kpa"]


@writer("gradelines.csv", applies=has_pipe)
def write_gradelines(result, folder, display):
    grades = display.dual(result.gradelines[COLUMNS]).round({"station_m": STATION_DECIMALS})
    write_csv(grades, folder / "gradelines.csv", 6)
