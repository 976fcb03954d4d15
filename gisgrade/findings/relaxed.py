"""Design rules that had to give way (see :class:`gisgrade.design.Relaxation`)."""
from __future__ import annotations

import numpy as np

from . import Finding, check

#: How far each design rule is broken at a station, from station-table
#: columns, so a relaxation's worst station can be found (rules not listed
#: report the start of their range).
RULE_EXCESS = {
    "min cover": lambda t: t["min_cover_m"] - t["cover_m"],
    "max cover": lambda t: t["cover_m"] - t["max_cover_m"],
    "joint deflection": lambda t: t["deflection_deg"].abs() - t["deflection_limit_deg"],
}


def relaxation_findings(relaxations, table=None) -> list[Finding]:
    """One finding per rule that gave way, its worst station found from the
    station ``table`` where the rule allows."""
    from ..arrays import STATION_TOLERANCE

    out = []
    for r in relaxations:
        worst = float(r.station_from)
        if table is not None and r.rule in RULE_EXCESS:
            s = table["station_m"].to_numpy()
            excess = np.nan_to_num(RULE_EXCESS[r.rule](table).to_numpy(dtype=float), nan=-np.inf)
            inside = (s >= r.station_from - STATION_TOLERANCE) & (s <= r.station_to + STATION_TOLERANCE)
            if inside.any():
                worst = float(s[inside][np.argmax(excess[inside])])
        out.append(Finding(code="rule-relaxed", check=f"rule relaxed: {r.rule}", severity="critical",
                           scenario="design", from_station_m=float(r.station_from),
                           to_station_m=float(r.station_to), worst_station_m=worst,
                           worst_value=float(r.amount), unit=r.unit, limit=0.0, message=r.message))
    return out


@check("rule-relaxed", scope="rules")
def relaxed(inputs):
    return relaxation_findings(inputs.relaxations, inputs.table)
