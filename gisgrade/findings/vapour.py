"""Column separation: the absolute pressure at the top of the pipe below the
water's vapour pressure. The water would boil and the column separate, so
the flow cannot be carried as computed (critical)."""
from __future__ import annotations

import numpy as np

from ..hydraulics.atmosphere import atmospheric_pressure
from ..hydraulics.friction import G
from ..hydraulics.water import vapour_pressure
from ..display import token
from . import check, ranges


def column_separation_findings(station, pressure_abs, p_vapour, scenario: str,
                               density: float = 999.1):
    """Stations where the absolute pressure (Pa) falls below the vapour
    pressure (Pa). ``pressure_abs`` is gauge plus atmospheric pressure at the
    same point (the top of the pipe, where vapour forms first).

    The worst value is how far the HGL falls below the vapour-pressure
    line, as head (m): (p_vapour - p_abs) / (rho g), so a pressure the water
    cannot hold (an "absolute pressure" below zero) is never printed.

    >>> rows = column_separation_findings(np.array([0.0, 10.0, 20.0]),
    ...                                   np.array([50e3, 1e3, 3e3]), 1.7e3, "fire", 1000.0)
    >>> [(r.check, r.worst_station_m, round(r.worst_value, 4)) for r in rows]
    [('column separation', 10.0, 0.0714)]
    """
    p = np.asarray(pressure_abs, dtype=float)
    deficit = (p_vapour - p) / (density * G)
    vapour = token(p_vapour, "pressure", 1).replace("{", "{{").replace("}", "}}")  # kept by format
    return ranges(
        station, deficit, p < p_vapour, code="column-separation", check="column separation",
        severity="critical", unit="m", limit=0.0, scenario=scenario, worst="max",
        text=f"HGL up to {{value}} below the vapour-pressure line (absolute pressure {vapour}): "
             "the column separates and the flow cannot be carried as computed")


@check("column-separation")
def column_separation(inputs, i):
    """Gauge pressure at the top of pipe (lower side of any point loss) plus
    the standard atmosphere at that elevation, against the vapour pressure
    at the project temperature."""
    g, top = inputs.grades, inputs.top
    if not g.minimum_applies[i]:  # at rest, pumps off: no flow to carry (pressure.py)
        return []
    absolute = g.density * G * (g.hgl_low[i] - top) + atmospheric_pressure(top)
    p_vapour = float(vapour_pressure(inputs.project.hydraulics.temperature))
    return column_separation_findings(inputs.station, absolute, p_vapour, g.names[i], g.density)
