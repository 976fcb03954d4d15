"""Crossings as the designer sees them: which side the pipe passes, the
limits it must hold over each feature's footprint, and the clearance a
profile achieves.

The crossings come located from the alignment stage
(:class:`gisgrade.alignment.Crossings`); everything here is pure numpy over
the station arrays.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .rules import Crossing


def feature_top(crossings, station, ground) -> np.ndarray:
    """The crossed feature's top (m): bottom + size where its size is known,
    else ground - depth (nan where neither is known)."""
    ground_at = np.interp(crossings.station, station, ground)
    return np.where(np.isfinite(crossings.size), crossings.top, ground_at - crossings.depth)


def footprint(crossings) -> np.ndarray:
    """(3, k) stations of each feature's footprint along the line: where the
    pipe enters it, its centre, and where the pipe leaves it."""
    reach = crossings.reach()
    return np.stack([crossings.station - reach, crossings.station, crossings.station + reach])


def choose_sides(crossings, station, ground, min_cover, outside_diameter):
    """The crossings with ``side`` settled: "over" only where cover permits.

    Passing above a feature must leave the pipe's top under the
    minimum-cover line (ground - min cover) over the whole footprint; where
    it would not, the pipe passes under. ``min_cover`` and
    ``outside_diameter`` are per station (m). Returns ``(crossings, changed)``
    with ``changed`` a bool mask of the crossings moved under.
    """
    points = footprint(crossings)
    cover_line = (np.interp(points, station, ground) - np.interp(points, station, min_cover)).min(axis=0)
    od_at = np.interp(points, station, outside_diameter).max(axis=0)
    top = feature_top(crossings, station, ground)
    blocked = (crossings.side == "over") & (top + crossings.clearance + od_at > cover_line + 1e-9)
    if blocked.any():
        crossings = replace(crossings, side=np.where(blocked, "under", crossings.side).astype(object))
    return crossings, blocked


def design_crossings(crossings, station, ground) -> list[Crossing]:
    """The limits the designer holds: each feature at its centre, and a wide
    feature also where the pipe enters and leaves its footprint (edges on the
    line only). Under a feature the limit is its bottom; over it, its top."""
    top = feature_top(crossings, station, ground)
    edge_s, edge_i = crossings.edges()
    keep = (edge_s >= station[0]) & (edge_s <= station[-1])
    at = np.concatenate([crossings.station, edge_s[keep]])
    i = np.concatenate([np.arange(len(crossings)), edge_i[keep]])
    return [
        Crossing(station=float(s), limit=float(b if side == "under" else t), clearance=float(c),
                 side=str(side), name=str(n))
        for s, b, t, c, side, n in zip(at, crossings.bottom[i], top[i], crossings.clearance[i],
                                       crossings.side[i], crossings.name[i])
    ]


@dataclass(frozen=True)
class Clearances:
    """Achieved vertical separation at each crossing, at its governing point."""

    achieved: np.ndarray  #: (k,) m between the outsides (negative: the pipe runs into it)
    station: np.ndarray  #: (k,) m, the point of the footprint where it is least
    top: np.ndarray  #: (k,) m, top of pipe there

    @classmethod
    def empty(cls) -> "Clearances":
        return cls(np.empty(0), np.empty(0), np.empty(0))


def clearances(crossings, station, top, ground, outside_diameter) -> Clearances:
    """Vertical separation between the outsides at each crossing (m), the
    least over the feature's footprint (its centre and the two edges where
    the pipe enters and leaves it): under a feature, its bottom minus the top
    of pipe; over it, the pipe's bottom (top minus outside diameter) minus
    the feature's top. ``outside_diameter`` is per station (m).
    """
    if not len(crossings):
        return Clearances.empty()
    at = footprint(crossings)
    top_at = np.interp(at, station, top)
    od = np.interp(crossings.station, station, np.broadcast_to(outside_diameter, np.shape(station)))
    over = crossings.side == "over"
    k = np.where(over, top_at.argmin(axis=0), top_at.argmax(axis=0))  # the governing point
    cols = np.arange(len(crossings))
    top_k = top_at[k, cols]
    achieved = np.where(over, top_k - od - feature_top(crossings, station, ground),
                        crossings.bottom - top_k)
    return Clearances(achieved, at[k, cols], top_k)
