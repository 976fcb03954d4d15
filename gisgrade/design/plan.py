"""Turns in plan: how the pipe takes the centerline's vertices.

A pipe turns at its joints and fittings. At a vertex of the centerline the
plan turn is taken by deflecting the joints nearest it, up to
``curve_joints`` of them at ``max_joint_deflection`` each (a short curve of
straight lengths, *common practice*), or, beyond that, by standard bend
fittings whose angles come closest with the fewest fittings, the joints
taking the rest. A joint's deflection is the angle between its two pipe
lengths in 3D, so a joint that takes a share of a plan turn has only the
rest left for a change of grade [1] (:func:`vertical_allowance`).

[1] The angle between two pipe lengths whose plan and vertical turns are
    orthogonal components: cos(theta) = cos(a) cos(b) (exact for a level
    pipe, within a hair for water-main grades); the drawn polyline's own
    angles: :func:`deflection_3d`.
"""
from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations_with_replacement

import numpy as np
import pandas as pd

#: Joints a plan turn may be spread over before a fitting is used (common practice).
CURVE_JOINTS = 3


def plan_turns(x, y) -> np.ndarray:
    """Signed plan turn (rad, + left) at each point of a polyline (0 at the ends).

    >>> plan_turns(np.array([0.0, 10, 10]), np.array([0.0, 0, 10])).round(6).tolist()
    [0.0, 1.570796, 0.0]
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    out = np.zeros(len(x))
    if len(x) < 3:
        return out
    a = np.arctan2(np.diff(y), np.diff(x))
    keep = np.hypot(np.diff(x), np.diff(y)) > 0
    turn = np.angle(np.exp(1j * (a[1:] - a[:-1])))
    out[1:-1] = np.where(keep[1:] & keep[:-1], turn, 0.0)
    return out


def deflection_3d(x, y, z) -> np.ndarray:
    """Angle (rad) between successive pieces of a 3D polyline at each point
    (0 at the ends): arccos of the dot product of their unit vectors.

    >>> deflection_3d(np.array([0.0, 1, 2]), np.zeros(3), np.array([0.0, 0, 1])).round(6).tolist()
    [0.0, 0.785398, 0.0]
    """
    p = np.column_stack([x, y, z]).astype(float)
    out = np.zeros(len(p))
    if len(p) < 3:
        return out
    d = np.diff(p, axis=0)
    u = d / np.linalg.norm(d, axis=1, keepdims=True)
    out[1:-1] = np.arccos(np.clip(np.sum(u[1:] * u[:-1], axis=1), -1.0, 1.0))
    return out


def fewest_fittings(turn: float, angles, capacity: float, max_count: int = 3) -> tuple:
    """Standard fittings (rad) for a turn of ``turn`` rad whose total leaves at
    most ``capacity`` rad for the joints: the fewest fittings, then the
    closest total. () if the joints alone can take it.

    >>> deg = lambda c: [round(float(np.degrees(a)), 2) for a in c]
    >>> std = np.radians([11.25, 22.5, 45, 90])
    >>> deg(fewest_fittings(np.radians(30), std, np.radians(9)))
    [22.5]
    >>> deg(fewest_fittings(np.radians(8), std, np.radians(9)))
    []
    >>> deg(fewest_fittings(np.radians(5), std, np.radians(3)))  # joints beyond their reach
    []
    """
    turn = abs(float(turn))
    tol = 1e-9  # rad: the rounding of coordinates far from the origin (2e-10 seen), not a turn
    if turn <= capacity + tol:
        return ()
    best = None
    for count in range(1, max_count + 1):
        for combo in combinations_with_replacement(sorted(angles), count):
            miss = abs(turn - sum(combo))
            if miss <= capacity + tol and (best is None or miss < best[0] - 1e-12):
                best = (miss, combo)
        if best is not None:
            return best[1]
    # nothing within the joints' reach: what leaves the joints least to do,
    # no fitting at all included (a 5 deg turn on 1 deg joints is five joints,
    # not an 11.25 deg bend turned back by seven), then the fewest fittings
    combos = [()] + [c for k in range(1, max_count + 1)
                     for c in combinations_with_replacement(sorted(angles), k)]
    return min(combos, key=lambda c: (round(abs(turn - sum(c)), 12), len(c)))


def vertical_allowance(delta, share):
    """The change of grade (rad) a joint allowed ``delta`` rad may still take
    when it turns ``share`` rad in plan: cos(delta) = cos(share) cos(b) for the
    two orthogonal components, so b = arccos(cos delta / cos share).

    >>> round(float(np.degrees(vertical_allowance(np.radians(3), np.radians(2)))), 4)
    2.2365
    """
    share = np.minimum(np.abs(share), delta)
    return np.arccos(np.clip(np.cos(delta) / np.cos(share), -1.0, 1.0))


def joint_deflection(share, vertical):
    """The deflection (rad) of a joint turning ``share`` rad in plan and
    ``vertical`` rad in grade: arccos(cos(share) cos(vertical)).

    >>> round(float(np.degrees(joint_deflection(np.radians(2), np.radians(2.2365)))), 3)
    3.0
    """
    return np.arccos(np.clip(np.cos(share) * np.cos(vertical), -1.0, 1.0))


@dataclass(frozen=True)
class PlanDesign:
    """How each vertex's plan turn is taken."""

    turn: np.ndarray  #: (n,) rad, signed plan turn at each station (vertices only)
    share: np.ndarray  #: (n,) rad, the plan turn each station's joint takes (+ left, - right)
    allowance: np.ndarray  #: (n,) rad left for a change of grade at each station's joint
    fittings: pd.DataFrame  #: one row per horizontal fitting: station index, angle (rad), direction


def nearest(sorted_at, at: float, k: int) -> np.ndarray:
    """Positions in ``sorted_at`` (ascending) of the ``k`` values nearest
    ``at``, nearest first (the lower one first on a tie): only the ``k``
    on either side of ``at`` are looked at.

    >>> nearest(np.array([0.0, 6, 12, 18, 24]), 13.0, 3).tolist()
    [2, 3, 1]
    """
    i = int(np.searchsorted(sorted_at, at))
    lo, hi = max(i - k, 0), min(i + k, len(sorted_at))
    window = np.arange(lo, hi)
    return window[np.argsort(np.abs(sorted_at[lo:hi] - at), kind="stable")[:k]]


def _spread(share, knot_idx, knot_at, at: float, turn: float, delta: float) -> None:
    """Add the plan turn ``turn`` (rad, signed) to ``share`` at the joints
    nearest station ``at``: an equal part on each of the fewest joints that
    can take it, a joint short of room (an earlier vertex used it) giving what
    it has and the next nearest the rest; beyond every joint's room, the rest
    on the nearest (a joint over its limit, which the profile's allowance
    then shows as none left for grade).

    >>> share = np.zeros(5)
    >>> _spread(share, np.arange(5), np.arange(5.0) * 6, 12.0, np.radians(5), np.radians(3))
    >>> np.degrees(share).round(2).tolist()
    [0.0, 2.5, 2.5, 0.0, 0.0]
    >>> _spread(share, np.arange(5), np.arange(5.0) * 6, 12.0, np.radians(5), np.radians(3))
    >>> np.degrees(share).round(2).tolist()
    [1.5, 3.0, 3.0, 2.5, 0.0]
    """
    d, amount = np.sign(turn), abs(turn)
    k = int(np.ceil(amount / delta - 1e-9))
    each = amount / k
    m = k
    while True:
        m = min(2 * m + 2, len(knot_at))
        cand = knot_idx[nearest(knot_at, at, m)]
        room = np.clip(delta - d * share[cand], 0.0, None)
        give = np.minimum(room, each)
        done = np.cumsum(give)
        if done[-1] >= amount - 1e-12 or m == len(knot_at):
            break
    last = int(np.searchsorted(done, amount - 1e-12))  # the joints needed, nearest first
    give = give[:last + 1].copy()
    give[-1] -= max(done[min(last, len(done) - 1)] - amount, 0.0)
    share[cand[:last + 1]] += d * give
    left = amount - give.sum()
    if left > 1e-12:  # no joint has room: over the limit on the nearest
        share[cand[:k]] += d * left / k


def plan_design(station, x, y, knots, delta: float, angles, curve_joints: int = CURVE_JOINTS,
                vertices=None) -> PlanDesign:
    """Joints and fittings for the plan turns of a line stationed at
    ``station`` (m) through ``(x, y)``; ``knots`` marks the stations that are
    joints (a vertex must be one); ``delta`` rad per joint; ``angles`` the
    standard fitting angles (rad). ``vertices`` marks the centerline's
    vertices, the only stations that turn (elsewhere the computed turn is the
    rounding of coordinates far from the origin, nanoradians); None: any
    station whose turn is above 1e-9 rad.

    >>> s = np.arange(0.0, 61.0, 6.0); x = np.minimum(s, 30.0); y = np.maximum(s - 30.0, 0.0)
    >>> d = plan_design(s, x, y, np.ones(len(s), bool), np.radians(3), np.radians([11.25, 22.5, 45, 90]))
    >>> np.degrees(d.fittings["angle"]).tolist(), d.fittings["direction"].tolist()
    ([90.0], ['left'])
    """
    s = np.asarray(station, float)
    turn = plan_turns(x, y)
    if vertices is not None:
        turn = np.where(np.asarray(vertices, bool), turn, 0.0)
    share = np.zeros(len(s))
    rows = []
    knot_idx = np.flatnonzero(np.asarray(knots, bool))
    knot_at = s[knot_idx]  # ascending
    for v in np.flatnonzero(np.abs(turn) > 1e-9):  # the vertices: few, not the stations
        sign = np.sign(turn[v])
        # what the nearest curve_joints joints can still turn this way: vertices
        # close together share joints, and a joint never takes more than delta
        near = knot_idx[nearest(knot_at, s[v], curve_joints)]
        capacity = float(np.clip(delta - sign * share[near], 0.0, None).sum())
        combo = fewest_fittings(turn[v], angles, capacity) if len(angles) else ()
        rest = abs(turn[v]) - sum(combo)
        if combo:
            rows.append((int(v), float(sum(combo)), "left" if turn[v] > 0 else "right", combo))
        if delta > 0 and abs(rest) > 1e-12:
            _spread(share, knot_idx, knot_at, s[v], sign * rest, delta)
    allowance = vertical_allowance(delta, share)
    fittings = pd.DataFrame(rows, columns=["index", "angle", "direction", "combo"])
    return PlanDesign(turn, share, allowance, fittings)
