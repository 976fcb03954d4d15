"""Small array helpers shared by the stages."""
from __future__ import annotations

import numpy as np


def runs(mask) -> np.ndarray:
    """First and last index (inclusive) of each run of True in ``mask``, as a (k, 2) array.

    >>> runs(np.array([0, 1, 1, 0, 1], dtype=bool)).tolist()
    [[1, 2], [4, 4]]
    >>> runs(np.zeros(3, dtype=bool)).shape
    (0, 2)
    """
    m = np.concatenate([[False], np.asarray(mask, dtype=bool), [False]])
    edges = np.flatnonzero(np.diff(m.astype(np.int8)))
    return edges.reshape(-1, 2) - np.array([0, 1])


#: Two stations closer than this (m) are one station; a position within it of
#: a station is at that station (offtakes, fittings, section ends). Stations
#: are never rounded to the spacing, so 1 mm separates every pair of real ones.
STATION_TOLERANCE = 1e-3


def station_index(station, x, key: str) -> np.ndarray:
    """Index of the station at each position ``x`` (m, within
    :data:`STATION_TOLERANCE`); an InputError naming ``key`` if one is not a station.

    >>> station_index(np.array([0.0, 10.0, 20.0]), [10.0004, 20.0], "fittings[0].station").tolist()
    [1, 2]
    """
    from .errors import InputError

    station = np.asarray(station, dtype=float)
    x = np.atleast_1d(np.asarray(x, dtype=float))
    i = np.clip(np.searchsorted(station, x), 1, len(station) - 1)
    i = np.where(np.abs(station[i - 1] - x) <= np.abs(station[i] - x), i - 1, i)
    off = np.abs(station[i] - x) > STATION_TOLERANCE
    if off.any():
        from .display import current

        bad, d = float(x[np.flatnonzero(off)[0]]), current()  # in the reader's units
        raise InputError(f"{key}: station {d.text(bad, 'length')} is not on the line (stations "
                         f"{d.number(station[0], 'length')} to {d.text(station[-1], 'length')})")
    return i
