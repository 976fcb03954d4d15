"""``surge.csv``: the surge screening envelope, one row per scenario and station."""
from __future__ import annotations

import numpy as np
import pandas as pd

from .csv import write_csv
from . import writer
from .profile_csv import STATION_DECIMALS

#: surge.csv columns.
COLUMNS = ["scenario", "station_m", "head_max_m", "head_min_m", "pressure_max_kpa",
           "pressure_min_kpa"]


def surge_frame(surge) -> pd.DataFrame:
    """The envelope as a long table (:data:`COLUMNS`, then ``head_change_m`` and
    ``wave_speed_m_s``)."""
    k, n = surge.head_max.shape
    return pd.DataFrame({
        "scenario": np.repeat(np.asarray(surge.names, dtype=object), n),
        "station_m": np.tile(surge.station, k).round(STATION_DECIMALS),
        "head_max_m": surge.head_max.ravel(), "head_min_m": surge.head_min.ravel(),
        "pressure_max_kpa": surge.pressure_max.ravel() / 1e3,
        "pressure_min_kpa": surge.pressure_min.ravel() / 1e3,
        "head_change_m": surge.head_change.ravel(),
        "wave_speed_m_s": np.tile(surge.wave_speed, k),
    })


@writer("surge.csv", applies=lambda result: getattr(result, "surge", None) is not None)
def write_surge(result, folder, display):
    write_csv(surge_frame(result.surge), folder / "surge.csv", 6)
