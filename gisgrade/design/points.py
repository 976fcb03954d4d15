"""High and low points of a designed pipe, as decisions with their reasons.

A high point is where the pipe stops rising and starts to fall (air
collects there); a low point where it stops falling and starts to rise
(sediment settles, the line drains there). Flat stretches between a rise and
a fall count as one point at their upstream end. The ends of the line count
when the pipe falls away from (high) or rises away from (low) them.

Prominence is the topographic one along the profile [1]: how far the pipe
must descend (ascend) from a high (low) point before it reaches a higher
(lower) one, or the end. Pure numpy (the tests check it against SciPy's
``peak_prominences`` [1], which is not imported here: it brings in all of
``scipy.signal`` and ``scipy.stats``, most of a second at every start).

[1] scipy.signal.peak_prominences (SciPy reference): the vertical distance
    between a peak and its lowest contour line.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

#: Grades flatter than this (m/m) are level when finding high and low points.
LEVEL = 1e-7

#: Heights closer than this (m) are one height when following the profile from
#: a high point for its prominence: a millimetre, below anything laid or surveyed
#: (a level top rounded a hair higher further on is not a higher point).
SAME_HEIGHT = 1e-3

#: Columns of the high/low point table.
COLUMNS = ["station_m", "kind", "elevation_m", "prominence_m", "why"]


def turning_points(station, z, level: float = LEVEL):
    """Indices of the high and low points of profile ``z`` (m) along ``station`` (m).

    >>> s = np.arange(7.0)
    >>> turning_points(s, np.array([0.0, 1, 2, 2, 1, 1.5, 3]))
    (array([2, 6]), array([0, 4]))
    """
    g = np.diff(z) / np.diff(station)
    sign = np.where(g > level, 1, np.where(g < -level, -1, 0))
    steep = np.flatnonzero(sign)
    if not len(steep):
        return np.zeros(0, int), np.zeros(0, int)
    d = sign[steep]
    change = np.flatnonzero(d[1:] != d[:-1])
    # a change between segment steep[c] and steep[c+1]: the point is where the
    # first run ends (the upstream end of any flat stretch between them)
    at = steep[change] + 1
    highs = list(at[d[change] > 0])
    lows = list(at[d[change] < 0])
    (lows if d[0] > 0 else highs).insert(0, 0)  # the start: the pipe leaves it rising or falling
    (highs if d[-1] > 0 else lows).append(len(z) - 1)
    return np.array(sorted(highs), int), np.array(sorted(lows), int)


def prominence(z, peaks, same: float = SAME_HEIGHT) -> np.ndarray:
    """Prominence (m) of ``peaks`` (indices) of ``z`` (m), the line's ends
    counting as the bottom of the lowest contour: from each peak the profile
    is followed both ways to the first point higher than it (or the end); the
    lowest point on each side is that side's base, an end reached counting as
    the bottom; the prominence is the peak above the higher base [1]. A point
    less than ``same`` (m) higher is not higher.

    >>> prominence(np.array([0.0, 3.0, 1.0, 2.0, 0.5]), np.array([1, 3]))
    array([3., 1.])
    >>> prominence(np.array([10.0, 10.0, 10.0000001, 5.0, 0.0]), np.array([0]))  # a level top
    array([10.])
    """
    z = np.asarray(z, float)
    peaks = np.asarray(peaks, int)
    out = np.empty(len(peaks))
    if not len(peaks):
        return out
    bottom = float(z.min())
    for k, p in enumerate(peaks):  # the high points, few: not the stations
        h = z[p]
        left = np.flatnonzero(z[:p] > h + same)
        right = np.flatnonzero(z[p + 1:] > h + same)
        base_left = z[left[-1] + 1:p + 1].min() if len(left) else bottom
        base_right = z[p:p + 1 + right[0]].min() if len(right) else bottom
        out[k] = h - max(base_left, base_right)
    return out


def high_low_points(station, top, reason=None, near: float = 0.0) -> pd.DataFrame:
    """The high and low points of a pipe profile with prominence and why.

    ``top``: m, top of pipe; ``reason``: the design's reason per station
    (``crossing <name>``, ``min cover``, ``max cover``, ...); a point within
    ``near`` m of a station whose reason is a crossing is there because of it.
    ``why`` is one of ``end``, ``crossing <name>``, ``max cover``, ``terrain
    crest`` (high) or ``terrain sag`` (low).

    >>> t = high_low_points(np.arange(5.0) * 10, np.array([99.0, 98, 97, 98, 99]))
    >>> t[["station_m", "kind", "prominence_m", "why"]].values.tolist()
    [[0.0, 'high', 2.0, 'end'], [20.0, 'low', 2.0, 'terrain sag'], [40.0, 'high', 2.0, 'end']]
    """
    s = np.asarray(station, float)
    z = np.asarray(top, float)
    highs, lows = turning_points(s, z)
    rows = []
    for kind, idx, sign in (("high", highs, 1.0), ("low", lows, -1.0)):
        prom = prominence(sign * z, idx)
        for i, p in zip(idx, prom):
            rows.append((float(s[i]), kind, float(z[i]), float(p), _why(s, reason, i, kind, near)))
    rows.sort(key=lambda r: r[0])
    return pd.DataFrame(rows, columns=COLUMNS)


def _why(s, reason, i, kind, near) -> str:
    if i == 0 or i == len(s) - 1:
        return "end"
    if reason is not None:
        close = np.flatnonzero(np.abs(s - s[i]) <= near + 1e-9)
        words = [str(reason[j]) for j in close]
        crossing = [w for w in words if w.startswith("crossing ")]
        if crossing:
            return crossing[0]
        if str(reason[i]) == "max cover":
            return "max cover"
    return "terrain crest" if kind == "high" else "terrain sag"
