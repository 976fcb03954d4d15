"""Rating: the highest pressure above the pipe's pressure rating (per section)."""
from __future__ import annotations

import numpy as np

from . import PRESSURE_TOLERANCE, check, ranges


def rating_findings(station, pressure, rating, scenario: str):
    """Stations where the pressure (Pa) exceeds the pipe's pressure rating (Pa,
    one value per station; NaN where none is given), one finding per run.

    >>> f = rating_findings(np.array([0.0, 10.0]), np.array([1.1e6, 0.9e6]), np.full(2, 1e6), "s")
    >>> from gisgrade.display import Display
    >>> [(r.worst_station_m, Display("US").render(r.message)) for r in f]
    [(0.0, "pressure up to 159.5 psi, above the pipe's 145.0 psi rating")]
    """
    rating = np.asarray(rating, dtype=float)
    out = []
    for r in np.unique(rating[np.isfinite(rating)]):  # one pass per rating (sections)
        over = (rating == r) & (pressure > r + PRESSURE_TOLERANCE)
        out += ranges(station, pressure / 1e3, over, code="rating", check="rating",
                      severity="critical", unit="kPa", limit=r / 1e3, scenario=scenario,
                      worst="max", text="pressure up to {value}, above the pipe's {limit} rating")
    return out


@check("rating")
def rating(inputs, i):
    g = inputs.grades
    return rating_findings(inputs.station, g.pressure_high[i], inputs.column("rating_pa"), g.names[i])
