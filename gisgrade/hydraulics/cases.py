"""Operating cases: pipe data by station range.

Pure helpers that turn the project's station ranges into the per-segment
arrays the grade-line engine (:mod:`gisgrade.hydraulics.gradelines`) takes.
The inflow between two heads is :func:`gisgrade.hydraulics.gradelines.solve_flow`.
"""
from __future__ import annotations

import numpy as np

from gisgrade.arrays import STATION_TOLERANCE


def range_values(x, starts, ends, values, default):
    """Value at each position ``x`` from station ranges [start, end).

    A position takes the value of the last range that holds it (later
    ranges win where ranges overlap), else ``default``. A position within
    half the station tolerance (0.5 mm) of a range's start counts as inside
    it, of its end as outside; so at a boundary station the downstream
    range's value applies, while a segment midpoint, always more than half
    the tolerance from its stations, falls on its own side.
    ``None`` in ``values`` means "keep the default" for that range.

    Parameters
    ----------
    x : array (n,)
        Positions (stations) [m].
    starts, ends : sequences (k,)
        Range starts and ends [m].
    values : sequence (k,)
        Value of each range (float or None).
    default : float
        Value outside every range.

    Returns
    -------
    out : array (n,) float

    Examples
    --------
    >>> range_values([0, 50, 100, 150], [50], [150], [0.2], 0.3).tolist()
    [0.3, 0.2, 0.2, 0.3]
    """
    x = np.asarray(x, dtype=float)
    out = np.full(x.shape, np.nan if default is None else float(default))
    for a, b, v in zip(starts, ends, values):
        if v is None:
            continue
        tol = STATION_TOLERANCE / 2
        inside = (x >= a - tol) & (x < b - tol)
        out[inside] = float(v)
    return out


def segment_values(station, starts, ends, values, default):
    """Per-segment (n-1,) and per-station (n,) values from station ranges.

    A segment takes the value at its midpoint; a station the value of the
    segment that leaves it (the last station: of the segment that reaches
    it), so with a station at every range boundary both agree.

    Examples
    --------
    >>> seg, st = segment_values([0, 50, 100], [50], [100], [0.2], 0.3)
    >>> seg.tolist(), st.tolist()
    ([0.3, 0.2], [0.3, 0.2, 0.2])
    """
    s = np.asarray(station, dtype=float)
    seg = range_values(0.5 * (s[:-1] + s[1:]), starts, ends, values, default)
    return seg, np.append(seg, seg[-1])
