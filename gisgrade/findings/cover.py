"""Cover: the laid pipe with less than the minimum cover (zones may change it)."""
from __future__ import annotations

from dataclasses import replace

import numpy as np

from . import Quantity, check, ranges

#: Cover short of the minimum by more than this (m) is a finding.
COVER_TOLERANCE = 1e-6


def cover_findings(station, cover, min_cover):
    """Stations where the designed pipe has less than the minimum cover
    (``min_cover`` per station), the limit and message at the worst station.

    >>> f = cover_findings(np.array([0.0, 5.0, 10.0]), np.array([1.5, 1.0, 1.5]), 1.2)
    >>> from gisgrade.display import Display
    >>> Display().render(f[0].message), Display("US").render(f[0].message)
    ('cover 1.00 m, 0.20 m short of the 1.20 m minimum', 'cover 3.3 ft, 0.7 ft short of the 3.9 ft minimum')
    """
    min_cover = np.broadcast_to(np.asarray(min_cover, dtype=float), np.shape(cover))
    rows = ranges(station, cover, cover < min_cover - COVER_TOLERANCE, code="cover",
                  check="cover", severity="critical", unit="m", limit=0.0, scenario="design")
    out = []
    for row in rows:  # the limit and message at the worst station (zones vary it)
        k = int(np.searchsorted(station, row.worst_station_m))
        c, lim = Quantity(cover[k], "m"), Quantity(min_cover[k], "m")
        short = Quantity(min_cover[k] - cover[k], "m")
        out.append(replace(row, limit=float(min_cover[k]), message=(
            f"cover {c}, {short} short of the {lim} minimum")))
    return out


@check("cover", scope="line")
def cover(inputs):
    return cover_findings(inputs.station, inputs.column("cover_m"), inputs.column("min_cover_m"))
