"""``fittings.csv``: every fitting of the line: the bends the pipe profile
needs (vertical, horizontal, combined) and the fittings the project gives
(valves and the like), with the loss coefficient each carries."""
from __future__ import annotations

import numpy as np
import pandas as pd

from .csv import write_csv
from . import has_pipe, writer

#: fittings.csv columns.
COLUMNS = ["station_m", "station", "plane", "fitting", "angle_deg", "direction", "k", "x", "y"]


def fittings_listing(result, display) -> pd.DataFrame:
    """One row per fitting piece. A bend's ``k`` is the Rennels & Hudson
    rounded-bend K at the reference Reynolds number 3e5 and the pipe's
    relative roughness there (the grade lines use each scenario's own
    Reynolds number); a given fitting's ``k`` is the one used."""
    from ..hydraulics.minor import DEFAULT_BEND_RE, bend_k

    t = result.table
    s = t["station_m"].to_numpy()
    b = result.bends
    eps_d = np.interp(b["station_m"], s, (t["roughness_m"] / t["inside_diameter_m"]).fillna(0.0))
    bends = pd.DataFrame({
        "station_m": b["station_m"], "plane": b["plane"], "fitting": b["fitting"],
        "angle_deg": b["angle_deg"], "direction": b["direction"],
        "k": bend_k(np.radians(b["angle_deg"].to_numpy(float)), Re=DEFAULT_BEND_RE,
                    rel_roughness=eps_d) if len(b) else np.zeros(0),
        "x": b["x"], "y": b["y"],
    })
    given = result.project.fittings
    at = np.array([f.station for f in given], float)
    inline = pd.DataFrame({
        "station_m": at, "plane": "inline",
        "fitting": [f.kind or "fitting (k given)" for f in given],
        "angle_deg": np.nan, "direction": "", "k": [f.k for f in given],
        "x": np.interp(at, s, t["x"]), "y": np.interp(at, s, t["y"]),
    })
    frame = pd.concat([f for f in (bends, inline) if len(f)] or [bends], ignore_index=True)
    frame = frame.sort_values("station_m", kind="stable").reset_index(drop=True)
    frame["station"] = display.station(frame["station_m"].to_numpy(float))
    return frame[COLUMNS]


@writer("fittings.csv", applies=has_pipe)
def write_fittings(result, folder, display):
    write_csv(fittings_listing(result, display), folder / "fittings.csv", 4)
