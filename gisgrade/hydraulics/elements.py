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

from ..arrays import runs
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
    head it adds per scenario (m) with the whole proposal applied as
    ``[[pressure_elements]]`` (what a run with them gives), with why."""

    kind: str
    index: int
    station_m: float
    setting: float  #: Pa: a PRV's downstream pressure, a booster's pressure to keep
    step: np.ndarray  #: (k,) m, per scenario, with the whole proposal applied
    reason: str
    toml: str = ""  #: the element as a ``[[pressure_elements]]`` table, in the reader's units


@dataclass(frozen=True)
class Unfixable:
    """A stretch of stations no PRV or booster brings within limits, and why."""

    from_station_m: float
    to_station_m: float
    reason: str


@dataclass(frozen=True, eq=False)
class Proposal:
    """What :func:`suggest_elements` found."""

    suggestions: tuple  #: Suggestion, in station order
    solved: bool  #: every station of every scenario within limits with them (verified)
    reason: str  #: why not, when not solved ("" otherwise)
    unfixable: tuple = ()  #: Unfixable stretches, in station order
    applied: Applied | None = None  #: the grade arrays with the proposal (and the project's own elements)


def _band(axis, p_min, p_max, density, k=1, check_min=None):
    """(k, n) head bands; a scenario where the minimum does not apply
    (``check_min`` False) has no lower limit."""
    rho_g = density * G
    lo = np.tile(axis + p_min / rho_g, (k, 1))
    if check_min is not None:
        lo[~np.asarray(check_min, dtype=bool)] = -np.inf
    return lo, np.tile(axis + p_max / rho_g, (k, 1))


def first_violation(hgl, hgl_upstream, lo, hi, start=0):
    """Index of the first station at or after ``start`` where a scenario's
    HGL (either side of the station) leaves [lo, hi] (arrays (n,) or (k, n)), or None.

    >>> first_violation(np.array([[5.0, 5.0, 9.0]]), np.array([[5.0, 5.0, 9.0]]),
    ...                 np.zeros(3), np.full(3, 8.0))
    2
    """
    v = violations(hgl, hgl_upstream, lo, hi, start)
    return int(v[0]) if len(v) else None


def violations(hgl, hgl_upstream, lo, hi, start=0):
    """Indices of every station at or after ``start`` out of [lo, hi] in some scenario.

    >>> violations(np.array([[5.0, 9.0, 9.0]]), np.array([[5.0, 5.0, 9.0]]),
    ...            np.zeros(3), np.full(3, 8.0)).tolist()
    [1, 2]
    """
    low = np.minimum(hgl, hgl_upstream)[:, start:] < lo[..., start:] - HEAD_TOLERANCE
    high = np.maximum(hgl, hgl_upstream)[:, start:] > hi[..., start:] + HEAD_TOLERANCE
    return np.flatnonzero((low | high).any(axis=0)) + start


def _sides(hgl, hgl_up, i):
    """Low and high sides from station i on, the downstream side at i."""
    lo_side, hi_side = np.minimum(hgl, hgl_up)[:, i:], np.maximum(hgl, hgl_up)[:, i:]
    lo_side[:, 0] = hi_side[:, 0] = hgl[:, i]
    return lo_side, hi_side


def _limits(lo, hi, i, shape, excused):
    """The bands from station i on as (k, n - i), open (-inf, inf) at excused stations."""
    lo_i, hi_i = (np.broadcast_to(b[..., i:], shape).copy() for b in (lo, hi))
    if excused is not None:
        lo_i[:, excused[i:]], hi_i[:, excused[i:]] = -np.inf, np.inf
    return lo_i, hi_i


def prv_reach(hgl, hgl_up, lo, hi, i, excused=None):
    """How far downstream (first station index it cannot keep within [lo, hi])
    a PRV at station ``i`` reaches with its best setting, and that setting as
    a head (m). The PRV acts in every scenario (setting below each one's head);
    ``excused`` (n,) bool marks stations nothing mends (they never stop it)."""
    lo_side, hi_side = _sides(hgl, hgl_up, i)
    lo_i, hi_i = _limits(lo, hi, i, lo_side.shape, excused)
    ref = hgl[:, i:i + 1]
    need_lo = (lo_i - (lo_side - ref)).max(axis=0)  # the setting head must be at least this
    need_hi = (hi_i - (hi_side - ref)).min(axis=0)  # and at most this
    LO = np.maximum.accumulate(need_lo)
    HI = np.minimum(np.minimum.accumulate(need_hi), hgl[:, i].min())
    ok = LO <= HI + HEAD_TOLERANCE
    reach = int(np.argmin(ok)) if not ok.all() else len(ok)
    if reach == 0:
        return i, None
    lo_h, hi_h = LO[reach - 1], HI[reach - 1]
    if not np.isfinite(lo_h):  # no lower limit down to the reach: just under the highest
        lo_h = hi_h - 1.0
    return i + reach, 0.5 * (lo_h + hi_h)


def booster_reach(hgl, hgl_up, lo, hi, i, flowing, excused=None):
    """How far downstream a booster at station ``i`` keeps every scenario
    within [lo, hi] (each flowing scenario with its own least head, as
    :func:`apply_elements` solves it: every station counts; off at no flow),
    and those heads (k,) at that reach. ``excused`` stations never stop it."""
    lo_side, hi_side = _sides(hgl, hgl_up, i)
    lo_i, hi_i = _limits(lo, hi, i, lo_side.shape, excused)
    true_lo = np.broadcast_to(lo[..., i:], lo_side.shape)
    need = np.maximum.accumulate(np.maximum(true_lo - lo_side, 0.0), axis=1)
    room = np.minimum.accumulate(hi_i - hi_side, axis=1)
    ok_flow = need <= room + HEAD_TOLERANCE  # excused stations too: the head is solved for them
    ok_still = np.logical_and.accumulate((lo_side >= lo_i - HEAD_TOLERANCE)
                                         & (hi_side <= hi_i + HEAD_TOLERANCE), axis=1)
    ok = np.where(np.asarray(flowing)[:, None], ok_flow, ok_still).all(axis=0)
    reach = int(np.argmin(ok)) if not ok.all() else len(ok)
    heads = np.where(flowing, need[:, reach - 1], 0.0) if reach else None
    if reach == 0 or not np.max(heads) > MIN_BOOST:  # a booster that adds nothing is no help
        return i, None
    return i + reach, heads


#: Stations upstream of a violation tried as an element's place.
CANDIDATES = 24
#: Head (m) a suggested element must add or take in some scenario (no zero-head booster).
MIN_BOOST = 1e-3


#: Steps a suggested setting is rounded to, in the reader's pressure unit.
GRID = {"kPa": (10.0, 1.0, 0.1), "psi": (5.0, 1.0, 0.1)}


def _nice_setting(head, lo_head, hi_head, axis_i, rho_g, display=None):
    """A setting in whole steps of the reader's unit (10 kPa, else 1, else
    0.1 kPa; 5 psi, 1, 0.1 psi) inside the feasible band around ``head``,
    so the value as written gives what was verified; the band's middle
    otherwise (Pa).

    >>> _nice_setting(130.0, 120.0, 140.0, 100.0, 1000 * G)
    290000.0
    >>> from gisgrade.display import Display, PSI
    >>> round(_nice_setting(130.0, 120.0, 140.0, 100.0, 1000 * G, Display("US")) / PSI, 6)
    45.0
    """
    from ..display import Display

    d = display or Display()
    f = d.factor("pressure")
    p, p_lo, p_hi = ((h - axis_i) * rho_g for h in (head, lo_head, hi_head))
    for step in GRID.get(d.unit("pressure"), (10.0, 1.0, 0.1)):
        q = round(np.round(p * f / step) * step, 6) / f
        if p_lo + 1.0 <= q <= p_hi - 1.0:
            return float(q)
    return float(p)


def _booster_setting(p_min, display) -> float:
    """The minimum pressure rounded up to 0.1 of the reader's unit (Pa), so
    the setting as written keeps at least the minimum.

    >>> from gisgrade.display import Display, PSI
    >>> _booster_setting(140e3, Display()), round(_booster_setting(140e3, Display("US")) / PSI, 6)
    (140000.0, 20.4)
    """
    f = display.factor("pressure")
    return float(np.ceil(round(p_min * f * 10, 6)) / 10 / f)


def _plain(value: float) -> str:
    """A number as written in a project file, without needless zeros.

    >>> _plain(4105.5), _plain(20.4), _plain(140.0)
    ('4105.5', '20.4', '140')
    """
    return f"{value:.3f}".rstrip("0").rstrip(".")


def element_toml(kind, station_m, setting, display) -> str:
    """One ``[[pressure_elements]]`` table in the reader's units, station to
    the nearest 0.001 unit (within the 1 mm a station is known by).

    >>> from gisgrade.display import Display
    >>> print(element_toml("booster", 4105.5, 140e3, Display()))
    [[pressure_elements]]
    kind = "booster"
    station = "4105.5 m"
    setting = "140 kPa"
    """
    d = display
    return (f'[[pressure_elements]]\nkind = "{kind}"\n'
            f'station = "{_plain(d.value(station_m, "length"))} {d.unit("length")}"\n'
            f'setting = "{_plain(d.value(setting, "pressure"))} {d.unit("pressure")}"')


#: How a pressure under the water's vapour floor is said (it has no number).
VAPOUR = "below vapour pressure (the column separates)"


def suggest_elements(station, axis, hgl, hgl_upstream, egl, flowing, names, p_min, p_max,
                     density, display=None, resets=(), check_min=None, base=None, own=(),
                     p_floor=None):
    """The fewest PRVs and boosters (greedy, each reaching as far as it can)
    that keep every station of every scenario within [p_min, p_max].

    The sweep goes down the whole line: a station no element can mend is
    reported (:class:`Unfixable`, consecutive ones as one stretch) and passed,
    and the sweep goes on beyond it. Each suggestion's steps are those of the
    whole proposal applied with :func:`apply_elements` (with the project's
    own elements, when ``base`` is given: exactly what a run with the
    suggestions pasted as ``[[pressure_elements]]`` gives); an element that
    adds or takes nothing there is dropped.

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
    check_min : array (k,) bool, optional
        Scenarios the minimum pressure applies to (default all; a pumped
        main's static case, pumps off, has none).
    base : tuple of three arrays (k, n), optional
        The grade lines before the project's own elements ``own``
        (:class:`Element`), to apply the proposal with them as a run does.
    p_floor : array (n,), optional
        The lowest gauge pressure water holds at each station [Pa]
        (:func:`~gisgrade.hydraulics.atmosphere.vapour_floor`): a pressure
        under it is said as "below vapour pressure (the column separates)",
        never as a number (default: no floor).

    Returns
    -------
    Proposal
    """
    from ..display import Display
    d = display or Display()
    label = lambda s: d.station([s])[0]  # noqa: E731
    floor = (np.full(len(station), -np.inf) if p_floor is None
             else np.broadcast_to(np.asarray(p_floor, dtype=float), (len(station),)))
    kpa = lambda p, decimals=1: d.text(p, "pressure", decimals)  # noqa: E731
    rho_g = density * G
    flowing = np.asarray(flowing, dtype=bool)
    lo, hi = _band(axis, p_min, p_max, density, len(names), check_min)
    H, Hu, E = (np.array(a, dtype=float) for a in (hgl, hgl_upstream, egl))
    # the line entering the first station (before its point loss) is the source's:
    # no element acts there, so the sweep looks at its downstream side only
    entry = violations(Hu[:, :1], Hu[:, :1], lo[:, :1], hi[:, :1]).size > 0
    Hu[:, 0] = H[:, 0]
    excused = np.zeros(len(station), dtype=bool)
    start, out, bad, bad_still = 0, [], [], []
    walls = sorted(resets)
    still_low = np.zeros(H.shape, dtype=bool)
    while True:
        # a line at no flow below the minimum: boosters are off and a PRV only
        # lowers, so nothing mends it; said once, and the sweep looks past it
        still = (np.minimum(H, Hu) < lo - HEAD_TOLERANCE) & ~flowing[:, None]
        still[:, :start] = False
        still_low |= still
        lo[still] = -np.inf
        if (j := _first_open(H, Hu, lo, hi, start, excused)) is None:
            break
        why = _why(H, Hu, axis, j, p_min, p_max, rho_g, names, kpa, np.isfinite(lo[:, j]),
                   floor[j])
        first = start + 1 if out else 0  # never two elements at one station
        places = range(max(first, j - CANDIDATES), max(j, first + 1) if j == 0 else j)
        best = None
        for i in places:
            for kind in ("prv", "booster"):
                if kind == "prv":
                    reach, arg = prv_reach(H, Hu, lo, hi, i, excused)
                else:
                    reach, arg = booster_reach(H, Hu, lo, hi, i, flowing, excused)
                wall = next((r for r in walls if r > i), None)
                if wall is not None and reach > wall:  # the project's element takes over
                    reach = (len(station) if _first_open(H, Hu, lo, hi, wall, excused) is None
                             else wall)
                if arg is not None and reach > j and (best is None or reach >= best[0]):
                    best = (reach, i, kind, arg)
        if best is None:  # nothing mends station j: say so, and go on past it
            excused[j] = True
            bad.append((j, why))
            continue
        reach, i, kind, arg = best
        if kind == "prv":
            lo_head, hi_head = _prv_interval(H, Hu, lo, hi, i, reach, excused)
            setting = _nice_setting(arg, lo_head, hi_head, axis[i], rho_g, d)
            step = apply_elements([Element("prv", i, setting=setting)], axis, H, Hu, E, flowing,
                                  density).step[0]
        else:
            setting, step = _booster_setting(p_min, d), arg
        _shift_until((H, Hu, E), i, step, next((r for r in walls if r > i), None))
        Hu[:, 0] = H[:, 0]  # the entering side stays out of the sweep
        out.append((kind, i, setting, j, why, reach))
        start = i
    for k in np.flatnonzero(still_low.any(axis=1)):
        for a, b in runs(still_low[k]):
            w = int(a + np.argmin(np.minimum(H, Hu)[k, a:b + 1] - axis[a:b + 1]))
            p = rho_g * (min(H[k, w], Hu[k, w]) - axis[w])
            where = (f"station {label(station[a])}" if a == b
                     else f"{label(station[a])} to {label(station[b])}")
            bad_still.append(Unfixable(float(station[a]), float(station[b]), (
                f"{names[k]} {where}: pressure "
                f"{'falls ' + VAPOUR if p < floor[w] else 'down to ' + kpa(p)} at "
                f"{label(station[w])}, "
                f"below {kpa(p_min)}; with no flow the boosters are off and a PRV only "
                "lowers the line, so no element raises it")))
    unfixable = tuple(sorted(bad_still + _stretches(bad, station, label, kpa, p_min, p_max),
                             key=lambda u: u.from_station_m))
    # the proposal as a run applies it; elements that do nothing there are dropped
    plain = base if base is not None else (hgl, hgl_upstream, egl)
    applied = None
    while True:
        mine = [Element(kind, i, setting=setting) for kind, i, setting, *_ in out]
        applied = apply_elements(list(own) + mine, axis, *plain, flowing, density)
        steps = applied.step[len(own):]
        idle = [m for m, st in enumerate(steps) if not np.max(np.abs(st)) > MIN_BOOST]
        if not idle:
            break
        out = [o for m, o in enumerate(out) if m not in idle]
    suggestions = tuple(_suggestion(o, st, station, names, label, kpa, d)
                        for o, st in zip(out, steps))
    up = applied.hgl_upstream.copy()
    up[:, 0] = applied.hgl[:, 0]  # the entering side: said apart
    left = [int(v) for v in violations(applied.hgl, up, lo, hi) if not excused[v]]
    notes = [u.reason for u in unfixable]
    if entry:
        notes.insert(0, f"the line enters out of limits at {label(station[0])}, before any "
                        "element can act: the source head itself is outside the pressure range")
    if left:
        notes.append(f"the proposal, applied to the line, still leaves the limits at "
                     f"{label(station[left[0]])}")
    return Proposal(suggestions, not notes, "; ".join(notes), unfixable, applied)


def _first_open(H, Hu, lo, hi, start, excused):
    """The first station at or after ``start`` out of limits and not excused."""
    v = violations(H, Hu, lo, hi, start)
    v = v[~excused[v]]
    return int(v[0]) if len(v) else None


def _why(H, Hu, axis, j, p_min, p_max, rho_g, names, kpa, check_min, floor=-np.inf):
    """Which scenario leaves the limits at station j, and how far (a low
    pressure only where ``check_min`` (k,) holds; under ``floor`` [Pa] as
    :data:`VAPOUR`, not a number)."""
    p_lo = rho_g * (np.minimum(H, Hu)[:, j] - axis[j])
    p_hi = rho_g * (np.maximum(H, Hu)[:, j] - axis[j])
    if check_min is not None:
        p_lo = np.where(check_min, p_lo, np.inf)
    k_hi, k_lo = int(np.argmax(p_hi)), int(np.argmin(p_lo))
    if p_hi[k_hi] > p_max:
        return f"{names[k_hi]}: {_apart(kpa, p_hi[k_hi], p_max)}, above {_apart(kpa, p_max, p_hi[k_hi])}"
    if p_lo[k_lo] < floor:
        return f"{names[k_lo]}: {VAPOUR}, below {kpa(p_min)}"
    return f"{names[k_lo]}: {_apart(kpa, p_lo[k_lo], p_min)}, below {_apart(kpa, p_min, p_lo[k_lo])}"


def _apart(kpa, p, other) -> str:
    """``kpa(p)``, with more decimals where it would read the same as ``other``
    (34.96 psi below a 35 psi minimum is not "35.0 psi, below 35.0 psi")."""
    return kpa(p) if kpa(p) != kpa(other) else kpa(p, 3)


def _stretches(bad, station, label, kpa, p_min, p_max):
    """Consecutive unmendable stations as :class:`Unfixable` stretches."""
    out, run = [], []
    for j, why in bad + [(None, None)]:
        if run and (j is None or j != run[-1][0] + 1):
            a, b = run[0][0], run[-1][0]
            where = (f"station {label(station[a])}" if a == b
                     else f"{label(station[a])} to {label(station[b])}")
            out.append(Unfixable(float(station[a]), float(station[b]),
                                 f"no PRV or booster keeps {where} within {kpa(p_min)} to "
                                 f"{kpa(p_max)} ({run[0][1]}): the scenarios' grade lines there "
                                 "spread wider than the pressure range, or mending it would take "
                                 "another scenario or a station downstream out of the limits"))
            run = []
        if j is not None:
            run.append((j, why))
    return out


def _suggestion(o, step, station, names, label, kpa, d):
    """A :class:`Suggestion` with its reason, from the sweep's record and its applied step."""
    kind, i, setting, j, why, reach = o
    end = label(station[reach]) if reach < len(station) else "the end"
    text = (f"{why} at {label(station[j])}; a {'PRV' if kind == 'prv' else 'booster'} at "
            f"{label(station[i])} {'set to' if kind == 'prv' else 'keeping'} "
            f"{kpa(setting)} keeps every scenario within limits to {end}")
    if kind == "booster":
        text += f" (head up to {d.text(float(np.max(step)), 'head')} in {names[int(np.argmax(step))]})"
    return Suggestion(kind, i, float(station[i]), setting, np.asarray(step, dtype=float), text,
                      element_toml(kind, float(station[i]), setting, d))


def _prv_interval(H, Hu, lo, hi, i, reach, excused=None):
    lo_side, hi_side = _sides(H, Hu, i)
    lo_i, hi_i = _limits(lo, hi, i, lo_side.shape, excused)
    ref = H[:, i:i + 1]
    n = reach - i
    LO = (lo_i - (lo_side - ref)).max(axis=0)[:n].max()
    HI = min((hi_i - (hi_side - ref)).min(axis=0)[:n].min(), H[:, i].min())
    if not np.isfinite(LO):
        LO = HI - 1.0
    return LO, HI
