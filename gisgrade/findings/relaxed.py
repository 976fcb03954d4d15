"""Design rules that had to give way (see :class:`gisgrade.design.Relaxation`)."""
from __future__ import annotations

import numpy as np

from . import Finding, Quantity, check, station_token

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
                           worst_value=float(r.amount), unit=r.unit, limit=0.0,
                           message=relaxation_template(r)))
    return out


def relaxation_template(r) -> str:
    """The relaxation's message as a template in the reader's units: the
    amount (m, or rad as degrees, m/m as percent) and stations as tokens,
    then the designer's reason (the text after the station in its message).

    >>> from gisgrade.design.rules import Relaxation
    >>> from gisgrade.display import Display
    >>> r = Relaxation("max cover", 300.0, 310.0, 0.5, "m", "max cover gave way ... m: why")
    >>> Display("US").render(relaxation_template(r))
    'max cover gave way by up to 1.6 ft from 9+84.25 to 10+17.06: why'
    """
    amount = {"rad": Quantity(np.degrees(r.amount), "deg"),
              "m/m": Quantity(100.0 * r.amount, "%")}.get(r.unit, Quantity(r.amount, r.unit))
    why = r.message.split(" m: ", 1)[1] if " m: " in r.message else r.message
    where = (f"at {station_token(r.station_from)}" if r.station_to == r.station_from else
             f"from {station_token(r.station_from)} to {station_token(r.station_to)}")
    return f"{r.rule} gave way by up to {amount} {where}: {why}"


@check("rule-relaxed", scope="rules")
def relaxed(inputs):
    return relaxation_findings(inputs.relaxations, inputs.table)
