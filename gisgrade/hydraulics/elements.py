"""Pressure elements in the line, and the fewest that bring a line within limits.

For given flows the losses do not depend on the head, so an element at a
station shifts the HGL and EGL of everything downstream of it by one head
step per scenario (it acts on the downstream side of its station, after the
station's point losses):

- ``prv`` (pressure-reducing valve, setting p): the head just downstream is
  at most z + p/(ρg); a PRV whose upstream head is lower stands open. It
  holds its setting at no flow too (the static case).
- ``booster`` (in-line pump): a fixed head, or the least head that keeps a
  pressure p everywhere downstream up to the next element; off (no step) at
  no flow.
- ``break-tank`` (break-pressure tank): the water falls to the tank's level
  (default: the ground at the station); downstream the line starts from that
  level, flowing or not. The entrance loss of the outlet is neglected.

:func:`apply_elements` applies them to (scenario x station) grade arrays;
:func:`suggest_elements` proposes the fewest PRVs and boosters that bring
every station of every scenario within [p_min, p_max], a greedy sweep that
places each element where it reaches farthest downstream (verified by
applying the proposal). Pure numpy; a loop over elements, none over stations.

References
----------
.. [1] AWWA Manual M32, *Computer Modeling of Water Distribution Systems*
   (PRVs and pumps as head changes at a node in steady flow; from memory).
.. [2] Field notes of this project: working pressure 280-550 kPa, at least
   140 kPa under every demand (common practice).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .friction import G

#: Element kinds, as the project file names them.
KINDS = ("prv", "booster", "break-tank")
#: Head (m) within which a pressure meets a limit in the suggestion search.
HEAD_TOLERANCE = 1e-6


@dataclass(frozen=True)
class Element:
    """One element at station index ``index`` (SI). ``setting`` (Pa): a PRV's
    downstream pressure or a solved booster's pressure to keep; ``head`` (m):
    a fixed booster head; ``level`` (m): a break tank's water level."""

    kind: str
    index: int
    setting: float | None = None
    head: float | None = None
    level: float | None = None


@dataclass(frozen=True, eq=False)
class Applied:
    """Grade arrays with the elements applied, and each element's step."""

    hgl: np.ndarray  #: (k, n) m, downstream side of each station
    hgl_upstream: np.ndarray  #: (k, n) m
    egl: np.ndarray  #: (k, n) m
    step: np.ndarray  #: (m, k) m, the head each element adds (negative: taken) per scenario


def _shift_until(arrays, i, step, wall=None):
    """:func:`_shift`, undone from the downstream side of station ``wall`` on
    (an element there sets the line downstream of it)."""
    _shift(arrays, i, step)
    if wall is not None:  # its upstream side keeps the shift
        _shift(arrays, wall, -np.asarray(step))


def _shift(arrays, i, step):
    """Add ``step`` (k,) to the downstream side of station ``i`` and beyond."""
    hgl, hgl_up, egl = arrays
    hgl[:, i:] += step[:, None]
    egl[:, i:] += step[:, None]
    hgl_up[:, i + 1:] += step[:, None]


def apply_elements(elements, axis, hgl, hgl_upstream, egl, flowing, density):
    """Apply ``elements`` (:class:`Element`, any order) to the grade arrays.

    Parameters
    ----------
    elements : sequence of Element
    axis : array (n,)
        Pipe axis [m].
    hgl, hgl_upstream, egl : arrays (k, n)
        Grade lines without the elements [m].
    flowing : array (k,) bool
        Scenarios with flow (boosters run only in these).
    density : float
        [kg/m³].

    Returns
    -------
    Applied

    Examples
    --------
    A level line at 200 m over an axis at 100 m; a PRV at station 1 set to
    300 kPa holds the head there and beyond at 100 + 300e3/(ρg):

    >>> h = np.full((1, 3), 200.0)
    >>> out = apply_elements([Element("prv", 1, setting=300e3)], np.full(3, 100.0), h, h, h,
    ...                      np.array([False]), 1000.0)
    >>> np.round(out.hgl, 2).tolist(), np.round(out.hgl_upstream, 2).tolist()
    ([[200.0, 130.59, 130.59]], [[200.0, 200.0, 130.59]])
    """
    hgl, hgl_up, egl = (np.array(a, dtype=float) for a in (hgl, hgl_upstream, egl))
    flowing = np.asarray(flowing, dtype=bool)
    order = sorted(range(len(elements)), key=lambda e: elements[e].index)
    steps = np.zeros((len(elements), hgl.shape[0]))
    rho_g = density * G
    for rank, e in enumerate(order):
        el = elements[e]
        i = el.index
        here = hgl[:, i]
        if el.kind == "prv":
            step = np.minimum(0.0, axis[i] + el.setting / rho_g - here)
        elif el.kind == "break-tank":
            step = np.minimum(0.0, el.level - here)
        elif el.head is not None:
            step = np.where(flowing, el.head, 0.0)
        else:  # the least head keeping el.setting up to the next element
            nxt = elements[order[rank + 1]].index if rank + 1 < len(order) else len(axis) - 1
            need = axis[i:nxt + 1] + el.setting / rho_g - np.minimum(hgl[:, i:nxt + 1],
                                                                       hgl_up[:, i:nxt + 1])
            need[:, 0] = axis[i] + el.setting / rho_g - here
            if nxt > i and rank + 1 < len(order):  # the next element's own side is its business
                need[:, -1] = axis[nxt] + el.setting / rho_g - hgl_up[:, nxt]
            step = np.where(flowing, np.maximum(0.0, need.max(axis=1)), 0.0)
        _shift((hgl, hgl_up, egl), i, step)
        steps[e] = step
    return Applied(hgl, hgl_up, egl, steps)


@dataclass(frozen=True)
class Suggestion:
    """One proposed element: kind, station index, its setting (Pa) and the
    head it adds per scenario (m), with why."""

    kind: str
    index: int
    station_m: float
    setting: float  #: Pa: a PRV's downstream pressure, a booster's pressure to keep
    step: np.ndarray  #: (k,) m, per scenario, when applied alone at this point of the sweep
    reason: str


@dataclass(frozen=True)
class Proposal:
    """What :func:`suggest_elements` found."""

    suggestions: tuple  #: Suggestion, in station order
    solved: bool  #: every station of every scenario within limits with them (verified)
    reason: str  #: why not, when not solved ("" otherwise)


def _band(axis, p_min, p_max, density):
    rho_g = density * G
    return axis + p_min / rho_g, axis + p_max / rho_g


def first_violation(hgl, hgl_upstream, lo, hi, start=0):
    """Index of the first station at or after ``start`` where a scenario's
    HGL (either side of the station) leaves [lo, hi], or None.

    >>> first_violation(np.array([[5.0, 5.0, 9.0]]), np.array([[5.0, 5.0, 9.0]]),
    ...                 np.zeros(3), np.full(3, 8.0))
    2
    """
    low = np.minimum(hgl, hgl_upstream)[:, start:] < lo[start:] - HEAD_TOLERANCE
    high = np.maximum(hgl, hgl_upstream)[:, start:] > hi[start:] + HEAD_TOLERANCE
    bad = np.flatnonzero((low | high).any(axis=0))
    return int(bad[0]) + start if len(bad) else None


def _sides(hgl, hgl_up, i):
    """Low and high sides from station i on, the downstream side at i."""
    lo_side, hi_side = np.minimum(hgl, hgl_up)[:, i:], np.maximum(hgl, hgl_up)[:, i:]
    lo_side[:, 0] = hi_side[:, 0] = hgl[:, i]
    return lo_side, hi_side


def prv_reach(hgl, hgl_up, lo, hi, i):
    """How far downstream (first station index it cannot keep within [lo, hi])
    a PRV at station ``i`` reaches with its best setting, and that setting as
    a head (m). The PRV acts in every scenario (setting below each one's head)."""
    lo_side, hi_side = _sides(hgl, hgl_up, i)
    ref = hgl[:, i:i + 1]
    need_lo = (lo[i:] - (lo_side - ref)).max(axis=0)  # the setting head must be at least this
    need_hi = (hi[i:] - (hi_side - ref)).min(axis=0)  # and at most this
    LO = np.maximum.accumulate(need_lo)
    HI = np.minimum(np.minimum.accumulate(need_hi), hgl[:, i].min())
    ok = LO <= HI + HEAD_TOLERANCE
    reach = int(np.argmin(ok)) if not ok.all() else len(ok)
    if reach == 0:
        return i, None
    return i + reach, 0.5 * (LO[reach - 1] + HI[reach - 1])


def booster_reach(hgl, hgl_up, lo, hi, i, flowing):
    """How far downstream a booster at station ``i`` keeps every scenario
    within [lo, hi] (each flowing scenario with its own least head; off at no
    flow), and those heads (k,) at that reach."""
    lo_side, hi_side = _sides(hgl, hgl_up, i)
    need = np.maximum.accumulate(np.maximum(lo[i:] - lo_side, 0.0), axis=1)
    room = np.minimum.accumulate(hi[i:] - hi_side, axis=1)
    ok_flow = need <= room + HEAD_TOLERANCE
    ok_still = np.logical_and.accumulate((lo_side >= lo[i:] - HEAD_TOLERANCE)
                                         & (hi_side <= hi[i:] + HEAD_TOLERANCE), axis=1)
    ok = np.where(np.asarray(flowing)[:, None], ok_flow, ok_still).all(axis=0)
    reach = int(np.argmin(ok)) if not ok.all() else len(ok)
    if reach == 0:
        return i, None
    return i + reach, np.where(flowing, need[:, reach - 1], 0.0)


#: Stations upstream of a violation tried as an element's place.
CANDIDATES = 24


def _nice_setting(head, lo_head, hi_head, axis_i, rho_g):
    """A setting in whole 10 kPa (else whole kPa) inside the feasible band
    around ``head``; the band's middle otherwise (Pa)."""
    p, p_lo, p_hi = ((h - axis_i) * rho_g for h in (head, lo_head, hi_head))
    for step in (10e3, 1e3):
        q = np.round(p / step) * step
        if p_lo + 1.0 <= q <= p_hi - 1.0:
            return float(q)
    return float(p)


def suggest_elements(station, axis, hgl, hgl_upstream, egl, flowing, names, p_min, p_max,
                     density, display=None, resets=()):
    """The fewest PRVs and boosters (greedy, each reaching as far as it can)
    that keep every station of every scenario within [p_min, p_max].

    Parameters
    ----------
    station, axis : arrays (n,)
        [m].
    hgl, hgl_upstream, egl : arrays (k, n)
        Grade lines, with the project's own elements already applied [m].
    flowing : array (k,) bool
    names : sequence (k,)
        Scenario names, for the reasons.
    p_min, p_max : float
        [Pa].
    density : float
        [kg/m³].
    display : gisgrade.display.Display, optional
        Formats stations and pressures in the reasons (default SI).
    resets : sequence of int
        Station indices of the project's own PRVs and break tanks: the line
        downstream of one is its business, so a proposed element's effect
        ends there (a PRV there is taken to keep acting).

    Returns
    -------
    Proposal
    """
    from ..display import Display
    d = display or Display()
    label = lambda s: d.station([s])[0]  # noqa: E731
    kpa = lambda p: d.text(p, "pressure", 1)  # noqa: E731
    rho_g = density * G
    lo, hi = _band(axis, p_min, p_max, density)
    H, Hu, E = (np.array(a, dtype=float) for a in (hgl, hgl_upstream, egl))
    start, out, reason = 0, [], ""
    while (j := first_violation(H, Hu, lo, hi, start)) is not None:
        p_lo = rho_g * (np.minimum(H, Hu)[:, j] - axis[j])
        p_hi = rho_g * (np.maximum(H, Hu)[:, j] - axis[j])
        k_hi, k_lo = int(np.argmax(p_hi)), int(np.argmin(p_lo))
        high = p_hi[k_hi] > p_max
        why = (f"{names[k_hi]}: {kpa(p_hi[k_hi])} above {kpa(p_max)}" if high
               else f"{names[k_lo]}: {kpa(p_lo[k_lo])} below {kpa(p_min)}")
        first = start + 1 if out else 0  # never two elements at one station
        places = range(max(first, j - CANDIDATES), max(j, first + 1) if j == 0 else j)
        best = None
        for i in places:
            for kind in ("prv", "booster"):
                if kind == "prv":
                    reach, arg = prv_reach(H, Hu, lo, hi, i)
                else:
                    reach, arg = booster_reach(H, Hu, lo, hi, i, flowing)
                wall = next((r for r in sorted(resets) if r > i), None)
                if wall is not None and reach > wall:  # the project's element takes over
                    reach = len(station) if first_violation(H, Hu, lo, hi, wall) is None else wall
                if arg is not None and reach > j and (best is None or reach >= best[0]):
                    best = (reach, i, kind, arg)
        if best is None:
            reason = (f"no PRV or booster keeps station {label(station[j])} within "
                      f"{kpa(p_min)} to {kpa(p_max)} ({why}): the scenarios' grade "
                      "lines there spread wider than the pressure range, or the static line "
                      "(boosters off) leaves it")
            break
        reach, i, kind, arg = best
        if kind == "prv":
            lo_head, hi_head = _prv_interval(H, Hu, lo, hi, i, reach)
            setting = _nice_setting(arg, lo_head, hi_head, axis[i], rho_g)
            el = Element("prv", i, setting=setting)
        else:
            setting = p_min
            el = Element("booster", i, setting=setting)
        end = label(station[min(reach, len(station) - 1)]) if reach < len(station) else "the end"
        text = (f"{why} at {label(station[j])}; a {'PRV' if kind == 'prv' else 'booster'} at "
                f"{label(station[i])} {'set to' if kind == 'prv' else 'keeping'} "
                f"{kpa(setting)} keeps every scenario within limits to {end}")
        if kind == "prv":
            step = apply_elements([el], axis, H, Hu, E, flowing, density).step[0]
        else:  # for the sweep, at the heads that reach that far
            step = arg
        if kind == "booster":
            text += f" (head up to {d.text(float(np.max(step)), 'head')} in {names[int(np.argmax(step))]})"
        _shift_until((H, Hu, E), i, step, next((r for r in sorted(resets) if r > i), None))
        out.append(Suggestion(kind, i, float(station[i]), setting, step, text))
        start = i
    solved = not reason and _verified(out, axis, hgl, hgl_upstream, egl, flowing, density,
                                      lo, hi, resets)
    if not reason and not solved:
        reason = "the proposal, applied to the line, still leaves the limits"
    return Proposal(tuple(out), solved, reason)


def _prv_interval(H, Hu, lo, hi, i, reach):
    lo_side, hi_side = _sides(H, Hu, i)
    ref = H[:, i:i + 1]
    n = reach - i
    LO = (lo[i:] - (lo_side - ref)).max(axis=0)[:n].max()
    HI = min((hi[i:] - (hi_side - ref)).min(axis=0)[:n].min(), H[:, i].min())
    return LO, HI


def _verified(out, axis, hgl, hgl_up, egl, flowing, density, lo, hi, resets=()):
    """The proposal (solved boosters, PRVs at their settings) applied to the
    lines it was made for keeps every station within [lo, hi]. With the
    project's own resetting elements (``resets``) each proposed step stops at
    the next of them, as in the sweep."""
    if not out:
        return True
    mine = [Element(s.kind, s.index, setting=s.setting) for s in out]
    if not resets:
        applied = apply_elements(mine, axis, hgl, hgl_up, egl, flowing, density)
        return first_violation(applied.hgl, applied.hgl_upstream, lo, hi) is None
    H, Hu, E = (np.array(a, dtype=float) for a in (hgl, hgl_up, egl))
    for rank, el in enumerate(mine):
        nxt = [r for r in resets if r > el.index] + [m.index for m in mine[rank + 1:]]
        wall = min(nxt) if nxt else None
        one = apply_elements([el], axis, H, Hu, E, flowing, density) if wall is None else \
            apply_elements([el, Element("booster", wall, head=0.0)], axis, H, Hu, E, flowing, density)
        _shift_until((H, Hu, E), el.index, one.step[0],
                     next((r for r in sorted(resets) if r > el.index), None))
    return first_violation(H, Hu, lo, hi) is None
