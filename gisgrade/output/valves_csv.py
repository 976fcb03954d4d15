"""``valves.csv``: the air valves and drains sited along the designed pipe,
and ``high_low_points.csv``: the pipe's high and low points with why."""
from __future__ import annotations

from .csv import write_csv
from . import writer

#: valves.csv columns.
VALVE_COLUMNS = ["station_m", "station", "kind", "reason", "x", "y", "top_m", "axis_m", "ground_m"]
#: high_low_points.csv columns.
POINT_COLUMNS = ["station_m", "station", "kind", "elevation_m", "prominence_m", "why"]


@writer("valves.csv", "high_low_points.csv", applies=lambda r: r.valves is not None)
def write_valves(result, folder, display):
    v = result.valves.assign(station=display.station(result.valves["station_m"].to_numpy(float)),
                             reason=[display.render(r) for r in result.valves["reason"]])
    write_csv(display.dual(v[VALVE_COLUMNS]), folder / "valves.csv", 4)
    p = result.points.assign(station=display.station(result.points["station_m"].to_numpy(float)))
    write_csv(display.dual(p[POINT_COLUMNS]), folder / "high_low_points.csv", 4)
