"""Surge screening checks: the envelope's maximum above the pipe's rating
(plus its surge allowance) and its minimum below vapour pressure.

Screening only (Joukowsky on the steady grade line, see
:mod:`gisgrade.hydraulics.surge`); a finding here calls for a transient
analysis or surge protection, not for a verdict."""
from __future__ import annotations

import numpy as np

from . import PRESSURE_TOLERANCE, check, ranges


def surge_rating_findings(station, pressure_max, limit, scenario: str):
    """Stations where the surge envelope's pressure (Pa) exceeds ``limit``
    (Pa per station: the rating plus any surge allowance; NaN: no rating).

    >>> from gisgrade.display import Display
    >>> f = surge_rating_findings(np.array([0.0, 10.0]), np.array([2.1e6, 1.2e6]),
    ...                           np.full(2, 2.0e6), "fire")
    >>> [(r.check, r.worst_station_m) for r in f]
    [('surge above rating', 0.0)]
    >>> Display().render(f[0].message)
    'surge envelope up to 2100 kPa, above the 2000 kPa rating with its surge allowance (screening)'
    """
    limit = np.asarray(limit, dtype=float)
    out = []
    for r in np.unique(limit[np.isfinite(limit)]):
        over = (limit == r) & (pressure_max > r + PRESSURE_TOLERANCE)
        out += ranges(station, pressure_max / 1e3, over, code="surge-rating",
                      check="surge above rating", severity="critical", unit="kPa", limit=r / 1e3,
                      scenario=scenario, worst="max",
                      text="surge envelope up to {value}, above the {limit} rating with "
                           "its surge allowance (screening)")
    return out


@check("surge-rating")
def surge_rating(inputs, i):
    s = inputs.surge
    if s is None:
        return []
    return surge_rating_findings(inputs.station, s.pressure_max[i],
                                 inputs.column("rating_pa") + s.allowance, s.names[i])


@check("surge-column-separation")
def surge_column_separation(inputs, i):
    """Where the down-surge would take the head at the top of the pipe below
    the vapour-pressure line (absolute pressure = the water's vapour pressure,
    with the standard atmosphere at that elevation)."""
    s = inputs.surge
    if s is None or (inputs.grades is not None and not inputs.grades.minimum_applies[i]):
        return []  # a pumped main at rest, pumps off: nothing flows, nothing stops
    # how far the down-surge head would fall below the vapour-pressure line (a
    # head; the envelope itself stops at that line)
    deficit = s.vapour_deficit[i]
    return ranges(inputs.station, deficit, deficit > 0,
                  code="surge-column-separation", check="surge column separation",
                  severity="warning", unit="m", limit=0.0, scenario=s.names[i], worst="max",
                  text="down-surge head up to {value} below the vapour-pressure line: the "
                       "column may separate (screening)")
