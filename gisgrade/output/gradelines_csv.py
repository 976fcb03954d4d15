"""``gradelines.csv``: one row per scenario and station."""
from __future__ import annotations

import numpy as np

from ..hydraulics.atmosphere import vapour_floor
from .csv import write_csv
from . import has_pipe, writer
from .profile_csv import STATION_DECIMALS

#: gradelines.csv columns (stable; later issues append). ``below_vapour`` (the
#: last column, after the US ones) is true where the computed pressure is under
#: the lowest gauge pressure water holds there: that grade line is not reachable.
COLUMNS = ["scenario", "station_m", "flow_m3_s", "velocity_m_s", "hgl_m", "egl_m",
           "pressure_kpa", "pressure_band_kpa"]


def below_vapour(result) -> np.ndarray:
    """(k n,) bool in the order of ``result.gradelines``: the pressure at the
    axis under :func:`~gisgrade.hydraulics.atmosphere.vapour_floor` there."""
    g = result.grades
    floor = vapour_floor(g.axis, result.project.hydraulics.temperature)
    return (g.pressure < floor).ravel()


@writer("gradelines.csv", applies=has_pipe)
def write_gradelines(result, folder, display):
    grades = display.dual(result.gradelines[COLUMNS]).round({"station_m": STATION_DECIMALS})
    grades["below_vapour"] = below_vapour(result)
    write_csv(grades, folder / "gradelines.csv", 6)
