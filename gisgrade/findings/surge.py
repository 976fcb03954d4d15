"""Surge screening checks: the envelope's maximum above the pipe's rating
(plus its surge allowance) and its minimum below vapour pressure.

Screening only (Joukowsky on the steady grade line, see
:mod:`gisgrade.hydraulics.surge`); a finding here calls for a transient
analysis or surge protection, not for a verdict."""
from __future__ import annotations

import numpy as np

from ..hydraulics.atmosphere import atmospheric_pressure
from ..hydraulics.friction import G
from ..hydraulics.water import vapour_pressure
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
    'surge envelope 2100 kPa above the rating with its surge allowance, 2000 kPa (screening)'
    """
    limit = np.asarray(limit, dtype=float)
    out = []
    for r in np.unique(limit[np.isfinite(limit)]):
        over = (limit == r) & (pressure_max > r + PRESSURE_TOLERANCE)
        out += ranges(station, pressure_max / 1e3, over, code="surge-rating",
                      check="surge above rating", severity="critical", unit="kPa", limit=r / 1e3,
                      scenario=scenario, worst="max",
                      text="surge envelope {value} above the rating with its surge "
                           "allowance, {limit} (screening)")
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
    """The envelope's minimum at the top of the pipe, plus the standard
    atmosphere there, below the water's vapour pressure."""
    s = inputs.surge
    if s is None:
        return []
    top = inputs.top
    rho_g = inputs.grades.density * G
    absolute = rho_g * (s.head_min[i] - top) + atmospheric_pressure(top)
    p_vapour = float(vapour_pressure(inputs.project.hydraulics.temperature))
    # as for steady column separation: how far the down-surge head falls below
    # the vapour-pressure line (a head), never an absolute pressure below zero
    deficit = (p_vapour - absolute) / rho_g
    return ranges(inputs.station, deficit, absolute < p_vapour,
                  code="surge-column-separation", check="surge column separation",
                  severity="warning", unit="m", limit=0.0, scenario=s.names[i], worst="max",
                  text="down-surge head {value} below the vapour-pressure line: the column "
                       "may separate (screening)")
