"""Vertical bends: choosing standard fittings and listing them.

The linear program (:mod:`gisgrade.design.profile`) reports, at each station,
how much turning the joints could not give (the *excess*). This module turns
each run of stations with excess into one bend position and a combination of
standard fittings whose angles add up to at least the turning needed there;
the profile is then solved again with that angle held exactly.
"""
from __future__ import annotations

from itertools import combinations_with_replacement
from math import degrees

import numpy as np
import pandas as pd

from ..arrays import runs

#: Most fittings stacked at one bend position.
MAX_FITTINGS_PER_BEND = 3


def standard_combination(need: float, angles, max_count: int = MAX_FITTINGS_PER_BEND,
                         at_least: bool = False, max_total: float | None = None) -> tuple:
    """Standard fittings (rad) whose angles add up closest to ``need`` (rad).

    Up to ``max_count`` fittings; of two totals equally close the one with
    fewer fittings wins. The joints on either side take up the small
    difference (or a later round adds a bend). With ``at_least`` only totals
    of at least ``need`` count (the largest combination if none does).
    ``max_total`` (rad): combinations adding up to more are not used (a
    vertical bend past a right angle folds the pipe back on itself).

    >>> deg = lambda c: [round(degrees(a), 2) for a in c]
    >>> std = np.radians([11.25, 22.5, 45, 90])
    >>> deg(standard_combination(np.radians(30), std)), deg(standard_combination(np.radians(40), std))
    ([11.25, 22.5], [45.0])
    >>> deg(standard_combination(np.radians(100), std)), deg(standard_combination(np.radians(48), std, at_least=True))
    ([11.25, 90.0], [11.25, 45.0])
    >>> deg(standard_combination(np.radians(100), std, max_total=np.pi / 2))
    [90.0]
    """
    angles = sorted(float(a) for a in angles)
    top = np.inf if max_total is None else max_total + 1e-12
    combos = [c for count in range(1, max_count + 1) for c in combinations_with_replacement(angles, count)
              if sum(c) <= top] or [(angles[0],)]
    best, key = max(combos, key=sum), None  # the largest, if none is at least the need
    for combo in combos:
        if at_least and sum(combo) < need - 1e-12:
            continue
        k = (round(abs(sum(combo) - need), 12), len(combo))
        if key is None or k < key:
            best, key = combo, k
    return best


def place_bends(excess: np.ndarray, turn: np.ndarray, allowance: np.ndarray, angles,
                tol: float = 1e-7, at_least: bool = False, max_total: float | None = None,
                separate: bool = False) -> dict:
    """Bend positions and fittings for the stations whose turning exceeds the joints.

    excess: rad per interior station, turning beyond the joints' allowance;
    turn: rad, the profile's change of angle there (sign: + sag, - crest);
    allowance: rad the joints allow there; angles: rad, standard fittings.
    A run of consecutive stations with excess of one sign gets one bend, at
    its largest excess; the fittings give, as closely as the standard angles
    allow, the run's whole excess plus the joint allowance lost at the bend
    station (with ``at_least``: never less than that). Returns
    ``{interior index: (signed total angle, fittings tuple)}``.

    >>> b = place_bends(np.array([0, .2, .1, 0]), np.array([0, .25, .15, 0]), np.full(4, .05),
    ...                 np.radians([11.25, 22.5, 45, 90]))
    >>> {k: (round(degrees(v[0]), 2), len(v[1])) for k, v in b.items()}
    {1: (22.5, 1)}
    """
    out = {}
    sign = np.sign(turn)
    half = 0.5 * min(angles) if len(angles) else np.inf
    for kind in (1.0, -1.0):
        for a, b in runs((excess > tol) & (sign == kind)).tolist():
            idx = np.arange(a, b + 1)
            big = idx[excess[idx] >= half] if separate else idx[:0]
            if len(big) < 2:
                big = np.array([a + int(np.argmax(excess[a:b + 1]))])
            owner = big[np.argmin(np.abs(idx[:, None] - big[None, :]), axis=1)]
            for i in big:
                need = float(excess[idx[owner == i]].sum() + allowance[i])
                combo = standard_combination(need, angles, at_least=at_least, max_total=max_total)
                out[int(i)] = (kind * sum(combo), combo)
    return out


def bends_frame(station: np.ndarray, bends: dict, index: np.ndarray | None = None) -> pd.DataFrame:
    """One row per fitting: station (m), angle_deg, direction ("sag"/"crest"), index.

    ``bends`` maps a station index to (signed total angle, fittings); sag
    means the grade increases through the bend (a low point shape).
    """
    rows = []
    for i, (total, combo) in sorted(bends.items()):
        for a in combo:
            rows.append((float(station[i]), round(degrees(a), 6), "sag" if total > 0 else "crest",
                         int(i if index is None else index[i])))
    return pd.DataFrame(rows, columns=["station", "angle_deg", "direction", "index"]).astype(
        {"station": float, "angle_deg": float, "direction": object, "index": int})


def fittings_table(profile) -> pd.DataFrame:
    """The profile's fittings for a CSV or map layer and for minor losses.

    Columns: ``station_m``, ``angle_deg`` (standard fitting angle),
    ``direction`` ("sag" or "crest"), ``index`` (station index), ``fitting``
    (a label such as "vertical bend 22.5 deg sag").
    """
    b = profile.bends
    return pd.DataFrame({
        "station_m": b["station"].to_numpy(float),
        "angle_deg": b["angle_deg"].to_numpy(float),
        "direction": b["direction"].to_numpy(object),
        "index": b["index"].to_numpy(int),
        "fitting": [f"vertical bend {a:g} deg {d}" for a, d in zip(b["angle_deg"], b["direction"])],
    })
