"""Column separation: the absolute pressure at the top of the pipe below the
water's vapour pressure. The water would boil and the column separate, so
the flow cannot be carried as computed (critical)."""
from __future__ import annotations

import numpy as np

from ..hydraulics.atmosphere import atmospheric_pressure
from ..hydraulics.friction import G
from ..hydraulics.water import vapour_pressure
from . import check, ranges


def column_separation_findings(station, pressure_abs, p_vapour, scenario: str):
    """Stations where the absolute pressure (Pa) falls below the vapour
    pressure (Pa). ``pressure_abs`` is gauge plus atmospheric pressure at the
    same point (the top of the pipe, where vapour forms first).

    >>> rows = column_separation_findings(np.array([0.0, 10.0, 20.0]),
    ...                                   np.array([50e3, 1e3, 3e3]), 1.7e3, "fire")
    >>> [(r.check, r.worst_station_m, r.worst_value) for r in rows]
    [('column separation', 10.0, 1.0)]
    """
    p = np.asarray(pressure_abs, dtype=float)
    return ranges(
        station, p / 1e3, p < p_vapour, code="column-separation", check="column separation",
        severity="critical", unit="kPa", limit=p_vapour / 1e3, scenario=scenario,
        text="absolute pressure {value:.1f} kPa below the vapour pressure {limit:.1f} kPa: "
             "column separation: the flow cannot be carried as computed")


@check("column-separation")
def column_separation(inputs, i):
    """Gauge pressure at the top of pipe (lower side of any point loss) plus
    the standard atmosphere at that elevation, against the vapour pressure
    at the project temperature."""
    g, top = inputs.grades, inputs.top
    absolute = g.density * G * (g.hgl_low[i] - top) + atmospheric_pressure(top)
    p_vapour = float(vapour_pressure(inputs.project.hydraulics.temperature))
    return column_separation_findings(inputs.station, absolute, p_vapour, g.names[i])
