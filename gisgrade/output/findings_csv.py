"""``findings.csv``: the station ranges that fail a check, most serious first.

The numbers are SI (``worst_value`` and ``limit`` in ``unit``: m, kPa, m/s,
or the design rule's unit); the ``message`` is in the display units. With
``[output] units = "US"`` the columns ``station``, ``worst_value_us``,
``limit_us`` and ``unit_us`` (and ``*_ft`` stations) follow the SI ones.
"""
from __future__ import annotations

import numpy as np

from ..findings import COLUMNS, by_severity, messages
from .csv import write_csv
from . import writer


def findings_listing(result, display):
    """The findings table as written: most serious first, messages in
    ``display``'s units, US columns beside the SI ones when US."""
    f = by_severity(result.findings)
    out = f[COLUMNS].copy()
    out["message"] = messages(f, display)
    out.insert(COLUMNS.index("worst_station_m") + 1, "station",
               display.station(f["worst_station_m"].to_numpy(float)))
    if display.us:
        conv = [display.of_label(np.array([v, lim]), u) for v, lim, u in
                zip(f["worst_value"], f["limit"], f["unit"])]
        out["worst_value_us"] = [c[0][0] for c in conv]
        out["limit_us"] = [c[0][1] for c in conv]
        out["unit_us"] = [c[1] for c in conv]
        out = display.dual(out, ["from_station_m", "to_station_m", "worst_station_m"])
    return out


@writer("findings.csv", applies=lambda result: result.findings is not None)
def write_findings(result, folder, display):
    write_csv(findings_listing(result, display), folder / "findings.csv", 4)
