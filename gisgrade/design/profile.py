"""The least-excavation pipe profile: a sparse linear program solved by HiGHS.

Unknowns: the top-of-pipe elevation z_i at every station. Objective: the
trench dug below the minimum-cover line, sum of w_i T_i (U_i - z_i), with w
the trench width, T the tributary length and U = ground - min cover.
Constraints: cover, crossings, joint deflection, optional grades. The pipe's
change of angle at a station, atan(g_i) - atan(g_{i-1}), is not linear in z;
it is linearized about the current grades and the program solved again until
the linearization error is below :data:`SLP_TOL` (sequential linear
programming, usually two or three solves). Turning beyond what the joints
allow is paid for by an *excess* variable; runs of excess become standard
bends, whose angles are then held exactly in a new solve. Contradictory rules
give way in the order of :data:`~gisgrade.design.rules.PRIORITY`: settled at
single stations first, else by a least-violation program in two stages, and
every shortfall is re-measured on the final profile and reported. Method,
equations and limits: docs/design.md.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..arrays import STATION_TOLERANCE, runs
from .fittings import bends_frame, place_bends
from .lp import Program, solve_lp
from .rules import PRIORITY, Crossing, DesignRules, PipeProfile, Relaxation, trench_width

#: A rule broken by more than this (m, rad or m/m) is reported as relaxed.
TOL = 1e-6
#: Linearization error (rad) at which the sequential solves stop.
SLP_TOL = 1e-8
#: With the pipe's joints as knots: the joints are held this much (rad,
#: 0.0006 deg) inside their allowance, and a linearization error below it
#: ends the solves (the true angles then keep the allowance); bends hold their
#: standard angle to within it.
JOINT_MARGIN = 1e-5
#: Linearization error (rad) enough while turning is still short (more bends to come).
SLP_ROUGH = 1e-3
#: Most linear solves per sequential-linearization loop.
SLP_MAX = 8
#: Most bend-placing rounds.
BEND_ROUNDS = 4
#: Penalty weights of the least-violation solve, per m (per m/m of grade over
#: a mean segment): well apart so a higher rule gives way only when a lower
#: one cannot make room. Joint deflection is kept by bends, which cost
#: BEND_WEIGHT per rad there.
WEIGHT = {"crossing clearance": 1e7, "min cover": 1e5, "joint deflection": 1e4, "max cover": 1e3,
          "max grade": 1e2, "min grade": 1e1, "grade direction": 1e1}
BEND_WEIGHT = 1e-1
#: The rules settled first (stage 1) when rules contradict each other; the
#: rest are then settled with these held (stage 2), so a rule below joint
#: deflection never buys relief for one above it.
UPPER_RULES = PRIORITY[:3]
#: Cost of 1 m^3 of trench below the maximum cover where a crossing forces
#: it (max cover is elastic there): far above excavation and bend costs, so
#: the dip is as small as the rules above max cover allow, fittings included
#: (as in the least-violation solve, where bends are nearly free).
MAX_COVER_COST = 1e3
#: Weight of excavation (per m of depth at a mean station) in that solve.
EXCAVATION_WEIGHT = 1e-3

#: Steepest pipe grade, m/m (45 degrees), held in every solve and never relaxed:
#: a lowering under an obstruction is built of 45-degree bends (*common
#: practice*), so no station turns by more than a right angle and the pipe
#: cannot fold back on itself; it also keeps the linearized angle within a
#: factor of two of its slope (1/(1+g^2) >= 1/2), so no linear solve can reach
#: a far, steep vertex the true angles would never allow.
MAX_PIPE_GRADE = 1.0
#: Largest total of the fittings at one bend, rad (the 90-degree fitting).
MAX_BEND = np.pi / 2

#: m^3 of excavation judged equal to breaking the minimum grade by 1 m/m over
#: 1 m of pipe: the minimum grade is elastic in every solve, so it gives way
#: where it cannot be kept without relaxing anything else, or only at an
#: enormous excavation (0.001 short over 10 m weighs as 100 m^3).
MIN_GRADE_COST = 1e4

#: The grade rows held in one direction per segment, elastic at MIN_GRADE_COST.
GRADE_RULES = ("min grade", "grade direction")

#: The words :attr:`PipeProfile.reason` uses.
REASONS = ("min cover", "crossing <name>", "max cover", "bend", "deflection", "max grade",
           "min grade", "transition")


@dataclass
class _Problem:
    """The program's data. The unknowns are the top of pipe at the knots
    (where the pipe may change grade); every station is a point the rules
    are checked at, its top interpolated between its two knots."""

    s: np.ndarray        # knot stations, m
    h: np.ndarray        # knot segment lengths, m
    ground: np.ndarray   # ground at the knots
    wt: np.ndarray       # excavation weight per knot (stations' trench width x tributary length)
    allow: np.ndarray    # joint allowance at interior knots, rad
    cj: np.ndarray       # crossing: knot segment index
    ct: np.ndarray       # crossing: position in segment, 0..1
    csign: np.ndarray    # +1 under (z <= rhs), -1 over (z >= rhs)
    crhs: np.ndarray     # crossing limit on top of pipe, m
    cname: list
    rules: DesignRules
    st: np.ndarray = None        # every (unique) station, m
    st_ground: np.ndarray = None
    upper: np.ndarray = None     # per station: ground - min cover
    lower: np.ndarray = None     # per station: ground - max cover (-inf: none)
    st_wt: np.ndarray = None     # per station: trench width x tributary length, m^2
    sj: np.ndarray = None        # per station: its knot segment
    stt: np.ndarray = None       # per station: position in that segment, 0..1
    kidx: np.ndarray = None      # per knot: its station index
    other: np.ndarray = None     # stations that are not knots
    st_cj: np.ndarray = None     # crossing: station segment index (for limits and reasons)
    st_ct: np.ndarray = None     # crossing: position in that station segment
    upper_lp: np.ndarray = None  # upper and lower with pointwise contradictions
    lower_lp: np.ndarray = None  # settled by priority (see _settle_pointwise)
    steep: np.ndarray = None     # knot segments whose grade is held within MAX_PIPE_GRADE by a row
    margin: float = 0.0          # rad the joints are held inside their allowance (JOINT_MARGIN)
    soft_mc: np.ndarray = None   # stations where max cover is elastic (beside deep crossings)

    @property
    def n(self):
        return len(self.s)

    def at_stations(self, z):
        """Top of pipe at every station from the knots' ``z``."""
        j = np.minimum(self.sj + 1, self.n - 1)
        return (1 - self.stt) * z[self.sj] + self.stt * z[j]


@dataclass
class _Solution:
    z: np.ndarray
    g: np.ndarray
    excess: np.ndarray
    slack: dict
    err: float = 0.0  # linearization error left, rad
    done: bool = True  # the linearization converged (or is rough only where bends are pending)


def _grades(z, h):
    return np.diff(z) / h


def _turn(g):
    """Change of pipe angle at each interior station, rad (+ sag)."""
    a = np.arctan(g)
    return a[1:] - a[:-1]


def _locate(s, h, x):
    """Segment index and position 0..1 of position ``x`` on stations ``s``."""
    n = len(s)
    j = int(np.clip(np.searchsorted(s, x, "right") - 1, 0, max(n - 2, 0)))
    t = 0.0 if n == 1 else float(np.clip((x - s[j]) / h[j], 0, 1))
    if t < 1e-6 and n > 1:
        t = 0.0
    elif t > 1 - 1e-6:
        j, t = j + 1, 0.0
    return j, t


def _prepare(station, ground, crossings, rules) -> tuple[_Problem, np.ndarray, np.ndarray]:
    station = np.asarray(station, float)
    ground = np.asarray(ground, float)
    if station.ndim != 1 or ground.shape != station.shape or len(station) == 0:
        raise ValueError("station and ground must be 1-D arrays of the same, non-zero length")
    if not (np.all(np.isfinite(station)) and np.all(np.isfinite(ground))):
        raise InputError("design: station or ground has missing (non-finite) values")
    if np.any(np.diff(station) < 0):
        raise ValueError("stations must be in increasing order")
    rules.check(len(station))
    n0 = len(station)

    def per(v):
        return np.broadcast_to(np.asarray(v, float), (n0,))

    # stations closer than 1 mm are one station: the pipe has one elevation there
    new = np.r_[True, np.diff(station) > STATION_TOLERANCE]
    group = np.cumsum(new) - 1
    first = np.flatnonzero(new)
    st = station[first]
    n = len(st)
    upper = np.full(n, np.inf)
    np.minimum.at(upper, group, ground - per(rules.min_cover))
    lower = np.full(n, -np.inf)
    if rules.max_cover is not None:
        mc = per(rules.max_cover)
        np.maximum.at(lower, group, np.where(np.isfinite(mc), ground - mc, -np.inf))
    g_u = ground[first]
    width = np.zeros(n)
    np.maximum.at(width, group, per(trench_width(rules.outside_diameter, rules.trench_width)))
    sh = np.diff(st)
    trib = np.r_[sh, 0] / 2 + np.r_[0, sh] / 2 if n > 1 else np.ones(1)

    # the knots: where the pipe may change grade (every station without knots)
    knot = np.ones(n, bool)
    if rules.knots is not None:
        knot = np.zeros(n, bool)
        np.logical_or.at(knot, group, np.asarray(rules.knots, bool))
        knot[[0, -1]] = True
    kidx = np.flatnonzero(knot)
    s = st[kidx]
    h = np.diff(s)
    m = len(s)
    sj = np.clip(np.cumsum(knot) - 1, 0, max(m - 2, 0))
    stt = np.zeros(n)
    if m > 1:
        stt = np.where(knot, 0.0, (st - s[sj]) / h[sj])
        stt[-1], sj[-1] = 1.0, m - 2  # the last station: the end of the last segment
    if rules.knots is None:  # the joints' turning spread along the line
        allow = rules.max_joint_deflection * (h[:-1] + h[1:]) / (2 * rules.joint_length)
    else:  # a joint at each knot, straight pipe between
        a = np.full(n, np.inf)
        np.minimum.at(a, group, per(rules.max_joint_deflection if rules.allowance is None
                                    else rules.allowance))
        allow = a[kidx][1:-1]
    st_wt = width * trib
    wt = np.zeros(m)  # the stations' excavation weights shared by their two knots
    if m > 1:
        np.add.at(wt, sj, st_wt * (1 - stt))
        np.add.at(wt, np.minimum(sj + 1, m - 1), st_wt * stt)
    else:
        wt[:] = st_wt.sum()

    cj, ct, sjc, stc, cs, cr, names = [], [], [], [], [], [], []
    for k, c in enumerate(crossings):
        name = c.name or f"#{k + 1}"
        if c.side not in ("under", "over"):
            raise InputError(f"crossing {name}: side {c.side!r} is not 'under' or 'over'")
        if not (np.isfinite(c.limit) and np.isfinite(c.clearance) and c.clearance >= 0):
            raise InputError(f"crossing {name}: limit and clearance must be finite, clearance >= 0")
        if not (st[0] - STATION_TOLERANCE <= c.station <= st[-1] + STATION_TOLERANCE):
            raise InputError(f"crossing {name}: station {c.station} m is off the line "
                             f"({st[0]} to {st[-1]} m)")
        j, t = _locate(s, h, c.station)
        cj.append(j)
        ct.append(t)
        j, t = _locate(st, sh, c.station)
        sjc.append(j)
        stc.append(t)
        if c.side == "under":
            cs.append(1.0)
            cr.append(c.limit - c.clearance)
        else:
            cs.append(-1.0)
            cr.append(c.limit + c.clearance + rules.outside_diameter)
        names.append(name)
    P = _Problem(s, h, g_u[kidx], wt, allow, np.array(cj, int), np.array(ct, float),
                 np.array(cs, float), np.array(cr, float), names, rules,
                 st=st, st_ground=g_u, upper=upper, lower=lower, st_wt=st_wt, sj=sj, stt=stt,
                 kidx=kidx, other=np.flatnonzero(~knot), st_cj=np.array(sjc, int),
                 st_ct=np.array(stc, float))
    P.upper_lp, P.lower_lp = _settle_pointwise(P)
    P.steep = np.abs(np.diff(P.ground) / h) > MAX_PIPE_GRADE / 2 if m > 1 else np.zeros(0, bool)
    P.margin = JOINT_MARGIN if rules.knots is not None else 0.0
    P.soft_mc = np.zeros(n, bool)
    if rules.knots is not None and len(P.cj):
        low_at = np.interp(np.array([c.station for c in crossings]), st, np.where(np.isfinite(lower), lower, -1e300))
        deep = np.flatnonzero((P.csign > 0) & (P.crhs < low_at - TOL))
        for c in deep:  # few
            reach = 10 * rules.joint_length + 20 * (low_at[c] - P.crhs[c])
            P.soft_mc |= np.abs(st - crossings[c].station) <= reach
    return P, group, first


def _settle_pointwise(P: _Problem):
    """Limits for the solver with the contradictions at single stations settled
    by priority before any solve: a crossing at a station beats max cover
    (under) or min cover (over); min cover beats max cover. The rules
    themselves are unchanged, so the shortfall is still reported. Two
    crossings that contradict each other are left to the least-violation
    solve."""
    upper, lower = P.upper.copy(), P.lower.copy()
    at = P.st_ct == 0
    under, over = at & (P.csign > 0), at & (P.csign < 0)
    np.minimum.at(lower, P.st_cj[under], P.crhs[under])
    np.maximum.at(upper, P.st_cj[over], P.crhs[over])
    return upper, np.minimum(lower, upper)


def _build(P: _Problem, ghat, bends, mg_dir, mode, caps, strict=False, stage=2, totals=None):
    """Assemble one linear program about the grades ``ghat``.

    mode "capped": every rule as stated, or loosened by the amounts in
    ``caps`` (the least violation found before); no slack variables except
    the always-elastic minimum grade. mode "least": each rule row gets a
    slack variable and the objective is the priority-weighted sum of slacks
    (plus a small share of excavation, which keeps the solve well
    conditioned); ``stage`` 1 weighs the rules below joint deflection a
    thousandth as much; ``totals`` maps a rule (or "excess") to the largest
    weighted sum of its slacks allowed (stage 2: the upper rules' totals
    found in stage 1). Every segment's grade is held within
    :data:`MAX_PIPE_GRADE` in every mode. ``strict``: turning beyond the joints
    where no bend is placed is a joint-deflection violation, weighted by its
    priority, rather than a cheap call for a bend. Returns the
    :class:`~.lp.Program` (inequality rows ``A x <= b`` first, then the
    bends' equality rows) and the layout of its unknowns.
    """
    n, h, r = P.n, P.h, P.rules
    m = max(n - 2, 0)
    least = mode == "least"
    caps = caps or {}
    cap = lambda name, size: caps.get(name, np.zeros(size))  # noqa: E731
    wt_rel = P.wt / P.wt.mean()
    st_rel = P.st_wt / P.st_wt.mean()
    e_cost = (WEIGHT["joint deflection"] if strict else BEND_WEIGHT) if least else r.bend_cost
    cost = [-(EXCAVATION_WEIGHT * wt_rel if least else P.wt), np.full(m, e_cost)]
    lo = [np.full(n, -np.inf), np.zeros(m)]
    hi = [np.full(n, np.inf), caps.get("excess", np.full(m, np.inf)).copy()]
    layout = {"z": (0, n), "excess": (n, n + m)}
    nv = n + m
    R, C, V, rhs = [], [], [], []
    nrow = 0

    def add_rows(rows, cols, vals, b, name=None, weight=None, elastic=None):
        """Rows ``A x <= b``; in "least" mode each row gets its own slack;
        ``elastic`` (a cost per unit of slack) gives the rows slack in any mode."""
        nonlocal nrow, nv
        k = len(b)
        rows, cols, vals = np.asarray(rows), np.asarray(cols), np.asarray(vals, float)
        soft = name in GRADE_RULES and not least  # always elastic, at MIN_GRADE_COST
        if elastic is not None:
            layout[name] = (nv, nv + k)
            rows, cols, vals = np.r_[rows, np.arange(k)], np.r_[cols, nv + np.arange(k)], np.r_[vals, -np.ones(k)]
            cost.append(np.asarray(elastic, float))
            lo.append(np.zeros(k))
            hi.append(np.full(k, np.inf))
            nv += k
        elif (least or soft) and name is not None:
            layout[name] = (nv, nv + k)
            rows, cols, vals = np.r_[rows, np.arange(k)], np.r_[cols, nv + np.arange(k)], np.r_[vals, -np.ones(k)]
            base = name.rstrip(" +-")
            w = MIN_GRADE_COST * h if soft else WEIGHT[base] * np.broadcast_to(weight, (k,))
            if least and stage == 1 and base not in UPPER_RULES:
                w = w * 1e-3
            cost.append(w)
            lo.append(np.zeros(k))
            hi.append(caps.get(name, np.full(k, np.inf)) if least else np.full(k, np.inf))
            nv += k
        elif name is not None:
            b = b + cap(name, k)
        R.append(rows + nrow)
        C.append(cols)
        V.append(vals)
        rhs.append(np.asarray(b, float))
        nrow += k

    # cover at every station: plain bounds at the knots, rows on the straight
    # pipe between them, and a row (and slack) per station in the least violation
    ns = len(P.st)
    upper, lower = P.upper_lp, P.lower_lp
    fin = np.flatnonzero(np.isfinite(lower))
    j0, j1 = P.sj, np.minimum(P.sj + 1, n - 1)

    def interp_rows(where, sign):
        k = len(where)
        return (np.r_[np.arange(k), np.arange(k)], np.r_[j0[where], j1[where]],
                sign * np.r_[1 - P.stt[where], P.stt[where]])

    if least:
        add_rows(*interp_rows(np.arange(ns), 1.0), upper, "min cover", st_rel)
        add_rows(*interp_rows(fin, -1.0), -lower[fin], "max cover", st_rel[fin])
    else:
        up = upper + cap("min cover", ns)
        low = lower.copy()
        low[fin] -= cap("max cover", len(fin))
        # beside a crossing deeper than the maximum cover, max cover is elastic
        # (it must give way there; its cost keeps the dip as shallow and short as
        # the rules above it allow), so no least-violation solve is needed for it
        soft = P.soft_mc & np.isfinite(low)
        hard_low = np.where(soft, -np.inf, low)
        lo[0] = hard_low[P.kidx]
        hi[0] = up[P.kidx]
        o = P.other
        if len(o):  # a straight piece under (over) its points: the hull's vertices suffice
            keep = _hull(P.st, up, P.sj, o, P.kidx, below=True)
            add_rows(*interp_rows(keep, 1.0), up[keep])
            of = o[np.isfinite(hard_low[o])]
            keep = _hull(P.st, hard_low, P.sj, of, P.kidx, below=False)
            add_rows(*interp_rows(keep, -1.0), -hard_low[keep])
        sf = np.flatnonzero(soft)
        if len(sf):
            add_rows(*interp_rows(sf, -1.0), -low[sf], "max cover elastic",
                     elastic=MAX_COVER_COST * P.st_wt[sf])

    # crossings: csign * ((1-t) z_j + t z_{j+1}) <= csign * rhs
    k = len(P.cj)
    if k:
        add_rows(np.r_[np.arange(k), np.arange(k)], np.r_[P.cj, np.minimum(P.cj + 1, n - 1)],
                 np.r_[P.csign * (1 - P.ct), P.csign * P.ct], P.csign * P.crhs, "crossing clearance", 1.0)
        if r.grade_break_cost > 0 and not least and n > 1 and r.knots is not None:
            # the pipe length under (over) a crossing laid level where it can be: its
            # grade costs as much as a grade break of the same size (a judgement)
            j = np.unique(np.minimum(P.cj, n - 2))
            q = len(j)
            u = nv + np.arange(q)
            cost.append(np.full(q, r.grade_break_cost))
            lo.append(np.zeros(q))
            hi.append(np.full(q, np.inf))
            nv += q
            for sgn in (1.0, -1.0):
                add_rows(np.tile(np.arange(q), 3), np.r_[j, j + 1, u],
                         np.r_[-sgn / h[j], sgn / h[j], -np.ones(q)], np.zeros(q))

    # grades g_j = (z_{j+1} - z_j) / h_j:  d_j g_j <= b_j
    seg = np.arange(n - 1)
    hrel = h / h.mean() if n > 1 else h
    cut = np.flatnonzero(P.steep)  # |g| <= MAX_PIPE_GRADE, hard, where a solve needed it
    for d in (1.0, -1.0):
        add_rows(np.r_[np.arange(len(cut)), np.arange(len(cut))], np.r_[cut, cut + 1],
                 np.r_[-d / h[cut], d / h[cut]], np.full(len(cut), MAX_PIPE_GRADE))
    grade_rows = []
    if r.max_transition_grade is not None:
        grade_rows += [("max grade +", np.ones(n - 1), r.max_transition_grade),
                       ("max grade -", -np.ones(n - 1), r.max_transition_grade)]
    if mg_dir is not None:
        grade_rows.append(("min grade" if r.min_grade is not None else "grade direction",
                           -mg_dir, -(r.min_grade or 0.0)))
    for name, d, b in grade_rows:
        add_rows(np.r_[seg, seg], np.r_[seg, seg + 1], np.r_[-d / h, d / h], np.full(n - 1, b), name, hrel)

    # joint deflection, linearized about ghat:
    # theta_i ~ c_i + a_i g_i - a_{i-1} g_{i-1},  a = 1/(1+ghat^2)
    eq_parts = None
    if m:
        a = 1.0 / (1.0 + ghat ** 2)
        c0 = _turn(ghat) - a[1:] * ghat[1:] + a[:-1] * ghat[:-1]
        i = np.arange(1, n - 1)
        cm, cc, cp = a[:-1] / h[:-1], -(a[1:] / h[1:] + a[:-1] / h[:-1]), a[1:] / h[1:]
        is_bend, target = _bend_arrays(bends, n)
        is_bend, target = is_bend[1:-1], target[1:-1]
        hi[1][is_bend] = 0.0
        free = np.flatnonzero(~is_bend)
        q = len(free)
        for sgn in (1.0, -1.0):
            add_rows(np.tile(np.arange(q), 4), np.r_[i[free] - 1, i[free], i[free] + 1, n + free],
                     np.r_[sgn * cm[free], sgn * cc[free], sgn * cp[free], -np.ones(q)],
                     np.maximum(P.allow[free] - P.margin, 0.0) - sgn * c0[free])
        if r.grade_break_cost > 0 and not least:
            # l1 penalty on the change of grade at each knot: |theta| <= t, cost per rad
            # (in the least violation, scaled as the excavation is: a tie-breaker)
            layout["grade break"] = (nv, nv + q)
            cost.append(np.full(q, r.grade_break_cost * (EXCAVATION_WEIGHT / P.wt.mean() if least
                                                         else 1.0)))
            lo.append(np.zeros(q))
            hi.append(np.full(q, np.inf))
            t = nv + np.arange(q)
            nv += q
            for sgn in (1.0, -1.0):
                add_rows(np.tile(np.arange(q), 4), np.r_[i[free] - 1, i[free], i[free] + 1, t],
                         np.r_[sgn * cm[free], sgn * cc[free], sgn * cp[free], -np.ones(q)],
                         -sgn * c0[free])
        fixed = np.flatnonzero(is_bend)
        rows_eq, cols_eq, vals_eq, beq = [], [], [], []
        if len(fixed):
            q = len(fixed)
            rows_eq += [np.tile(np.arange(q), 3)]
            cols_eq += [np.r_[i[fixed] - 1, i[fixed], i[fixed] + 1]]
            vals_eq += [np.r_[cm[fixed], cc[fixed], cp[fixed]]]
            beq.append(target[fixed] - c0[fixed])
        eq_parts = (rows_eq, cols_eq, vals_eq, beq)
    for name, budget in (totals or {}).items():
        a0, a1 = layout[name]
        w = np.concatenate(cost)[a0:a1]
        add_rows(np.zeros(a1 - a0, int), np.arange(a0, a1), w, np.array([budget]))
    if eq_parts is not None and eq_parts[3]:  # equality rows after the inequalities
        rows_eq, cols_eq, vals_eq, beq = eq_parts
        beq = np.concatenate(beq)
        R.append(np.concatenate(rows_eq) + nrow)
        C.append(np.concatenate(cols_eq))
        V.append(np.concatenate(vals_eq))
    else:
        beq = np.zeros(0)
    b = np.concatenate(rhs) if rhs else np.zeros(0)
    cat = lambda parts: np.concatenate(parts) if parts else np.zeros(0, np.int64)  # noqa: E731
    program = Program(cost=np.concatenate(cost), rows=cat(R), cols=cat(C), values=cat(V),
                      row_lower=np.r_[np.full(len(b), -np.inf), beq],
                      row_upper=np.r_[b, beq], lower=np.concatenate(lo), upper=np.concatenate(hi))
    return program, layout


def _hull(x, y, seg, idx, kidx, below=True):
    """The stations of ``idx`` (points between knots) that a straight piece
    must be checked at: the vertices of the lower (``below``) or upper convex
    hull of each knot segment's points, its end knots (station indices
    ``kidx[seg]``, ``kidx[seg + 1]``) included. A line under (over) those
    vertices is under (over) every point of the segment, and a point on or
    above the chord of two others is no hull vertex, so such points are
    dropped until none is left.

    >>> x = np.arange(6.0); y = np.array([0.0, 1, -1, 2, 3, 0])
    >>> _hull(x, y, np.zeros(6, int), np.arange(1, 5), np.array([0, 5])).tolist()
    [2]
    """
    idx = np.asarray(idx, int)
    sign = 1.0 if below else -1.0
    k = idx
    while len(k):
        same_p = np.r_[False, seg[k[1:]] == seg[k[:-1]]]
        same_n = np.r_[seg[k[:-1]] == seg[k[1:]], False]
        left = np.where(same_p, np.r_[0, k[:-1]], kidx[seg[k]])
        right = np.where(same_n, np.r_[k[1:], 0], kidx[np.minimum(seg[k] + 1, len(kidx) - 1)])
        t = (x[k] - x[left]) / (x[right] - x[left])
        chord = (1 - t) * y[left] + t * y[right]
        above = sign * (y[k] - chord) >= -1e-12
        if not above.any():
            break
        k = k[~above]
    return k


def _bend_arrays(bends, n):
    is_bend = np.zeros(n, bool)
    target = np.zeros(n)
    for v, (total, _) in bends.items():
        is_bend[v], target[v] = True, total
    return is_bend, target


def _solve(P, ghat, bends, mg_dir, mode, caps=None, max_iter=SLP_MAX, strict=False, stage=2, totals=None):
    """Sequential linearization: solve, relinearize at the answer, repeat until
    the linearization is exact within :data:`SLP_TOL` at the answer (so the
    true joint and bend angles keep the rules). Returns the converged
    solution, else the one with the least linearization error (``done`` is
    then False), or None if the first solve is infeasible."""
    best, best_err = None, np.inf
    prev_err = np.inf
    it = 0
    while it < max_iter:
        program, lay = _build(P, ghat, bends, mg_dir, mode, caps, strict, stage, totals)
        x = solve_lp(program)
        if x is None:
            return best
        z = x[slice(*lay["z"])]
        g = _grades(z, P.h)
        over = (np.abs(g) > MAX_PIPE_GRADE * (1 + 1e-9)) & ~P.steep
        if over.any():  # hold those segments (and their neighbours) too, and solve again
            near = np.flatnonzero(over)[:, None] + np.arange(-2, 3)
            P.steep[np.clip(near, 0, len(P.steep) - 1)] = True
            continue
        it += 1
        sol = _Solution(z, g, x[slice(*lay["excess"])],
                        {k: x[slice(*v)] for k, v in lay.items() if k not in ("z", "excess")})
        if P.n < 3:
            return sol  # no angles: linear, exact
        a = 1.0 / (1.0 + ghat ** 2)  # error of the linearization this solve used
        lin = _turn(ghat) + a[1:] * (g[1:] - ghat[1:]) - a[:-1] * (g[:-1] - ghat[:-1])
        err = float(np.max(np.abs(_turn(g) - lin)))
        sol.err = err
        sol.done = err <= max(SLP_TOL, P.margin) or (err <= SLP_ROUGH and sol.excess.max() > TOL)
        if err <= best_err:
            best, best_err = sol, err
        if sol.done:
            best = sol  # (with excess turning left, a bend round follows: rough angles do)
            break
        # relinearize at the answer; halfway there when the error stalls
        # (the answer jumping between two vertices of the linear program)
        ghat = g if err < 0.5 * prev_err else 0.5 * (ghat + g)
        prev_err = err
    return best


def _least(P, ghat, bends, mg_dir, strict, max_iter):
    """Least priority-weighted violation in two stages: crossing clearance,
    min cover and joint deflection first; then, with the weighted total of
    each of those held to what stage 1 found, the rest. The totals, not the
    stage-1 amount at each station, are held: stage 2 is linearized about
    other grades, and may move a violation of the same weight elsewhere."""
    first = _solve(P, ghat, bends, mg_dir, "least", None, max_iter, strict, stage=1)
    if first is None or all(k.rstrip(" +-") in UPPER_RULES for k in first.slack):
        return first
    program, lay = _build(P, first.g, bends, mg_dir, "least", None, strict, 1)
    c = program.cost
    x = np.concatenate([first.z, first.excess] + [first.slack[k] for k in first.slack])
    held = [k for k in first.slack if k.rstrip(" +-") in UPPER_RULES] + (["excess"] if strict else [])
    totals = {}
    for k in held:
        a0, a1 = lay[k]
        total = float(c[a0:a1] @ x[a0:a1])
        totals[k] = total * (1 + 1e-9) + TOL / 10 * float(np.max(c[a0:a1], initial=0.0))
    return _solve(P, first.g, bends, mg_dir, "least", None, max_iter, strict, stage=2, totals=totals) or first


def _attempt(P, ghat, bends, mg_dir, caps, strict=False, relax=True):
    """One design solve: the rules as stated (or loosened by ``caps``); if
    they contradict each other, find the least priority-weighted violation
    and solve again with each rule loosened by that much. Fittings just
    placed (``bends``) may make only the rules below joint deflection give
    way, never crossing clearance or min cover: such bends are refused (None).
    ``strict`` (see :func:`_build`) goes straight to the least violation;
    without ``relax`` there is no least-violation step. Returns (solution or
    None, caps used)."""
    best = None
    if not strict:
        best = _solve(P, ghat, bends, mg_dir, "capped", caps)
        if not relax or (best is not None and best.done):
            return best, caps
        ghat = best.g if best is not None else ghat
    best_caps = caps
    # when the answer is not exact yet (a later linearization left no room
    # within the caps), the least violation is found again about it, once
    for _ in range(2):
        # the least violation needs only approximate angles; the capped solve
        # after it iterates to full accuracy
        least = _least(P, ghat, bends, mg_dir, strict, SLP_MAX if strict else 1)
        if least is None:
            break
        new_caps = {k: v + TOL / 10 for k, v in least.slack.items()}
        if bends and not strict:
            for k in ("crossing clearance", "min cover"):
                if k in new_caps and np.any(new_caps[k] > (caps or {}).get(k, 0.0) + TOL):
                    return None, None
        if strict:
            new_caps["excess"] = least.excess + TOL / 10
        sol = _solve(P, least.g, bends, mg_dir, "capped", new_caps) or least
        if best is None or sol.done or sol.err < best.err:
            best, best_caps = sol, new_caps
        if best.done:
            break
        ghat = sol.g
    return best, best_caps


def _place(P, sol, at_least=False):
    """New bends {station index: (signed angle, fittings)} from a solution's excess turning."""
    if not len(P.rules.bend_angles):
        return {}
    got = place_bends(sol.excess, _turn(sol.g), P.allow, P.rules.bend_angles, at_least=at_least,
                      max_total=MAX_BEND, separate=P.rules.knots is not None)
    return {v + 1: val for v, val in got.items()}


def _grade_directions(z, ground, h, flat: float, tolerance: float, protected=None):
    """Direction (+1 rising, -1 falling) each segment is held to.

    The profile ``z`` is cut into runs of one direction (segments flatter
    than ``flat`` m/m join their neighbours). While the least prominent run
    (the smallest rise or fall between its ends) is below ``tolerance`` m, it
    is merged away: an interior run joins both its neighbours (its high and
    its low point go), an end run joins its neighbour. A run holding a
    ``protected`` segment (a cover zone's edge or a crossing: a rule, not the
    terrain, shaped it) is never merged away. Flat stretches between runs of
    opposite direction follow the ground's net rise over them (rising if
    level), as do wholly flat profiles.

    >>> z = np.array([0.0, 1.0, 2.0, 1.9, 3.0, 4.0, 2.0, 0.0])
    >>> _grade_directions(z, z, np.ones(7), 1e-9, 0.5).tolist()
    [1.0, 1.0, 1.0, 1.0, 1.0, -1.0, -1.0]
    >>> z = np.array([0.0, 0.1, -2.0, -3.0, -3.2, -3.1])  # small runs at both ends go
    >>> _grade_directions(z, z, np.ones(5), 1e-9, 0.5).tolist()
    [-1.0, -1.0, -1.0, -1.0, -1.0]
    """
    g = np.diff(z) / h
    sign = np.where(g >= flat, 1.0, np.where(g <= -flat, -1.0, 0.0))
    steep = np.flatnonzero(sign)
    d = np.zeros(len(g))
    if len(steep):
        new = np.r_[True, sign[steep][1:] != sign[steep][:-1]]
        first = steep[new]
        last = steep[np.r_[new[1:], True]]
        way = sign[first]  # each run's direction
        guard = np.zeros(len(g) + 1) if protected is None else np.r_[0, np.cumsum(protected)]
        while len(first) > 1:
            rise = np.abs(z[last + 1] - z[first])
            # a rule shaped it (with the level stretches either side): keep it
            lo_ = np.r_[0, last[:-1] + 1]
            hi_ = np.r_[first[1:], len(g)]
            rise[guard[hi_] - guard[lo_] > 0] = np.inf
            k = int(np.argmin(rise))
            if rise[k] >= tolerance:
                break
            if k == 0:  # the first run joins the second
                first, last, way = first[1:], last[1:], way[1:]
                first[0] = 0
            elif k == len(first) - 1:  # the last run joins the one before
                first, last, way = first[:-1], last[:-1], way[:-1]
                last[-1] = len(g) - 1
            else:  # the run and its two neighbours become one
                last = np.r_[last[:k - 1], last[k + 1:]]
                first = np.r_[first[:k], first[k + 2:]]
                way = np.r_[way[:k], way[k + 2:]]
        for a, b, w in zip(first, last, way):
            d[a:b + 1] = w
        d[:first[0]] = way[0]
        d[last[-1] + 1:] = way[-1]
    flat_run = d == 0  # between runs of opposite direction, or no direction at all
    if flat_run.any():
        run = np.cumsum(flat_run & ~np.r_[False, flat_run[:-1]])
        net = np.zeros(run.max() + 1)
        np.add.at(net, run[flat_run], np.diff(ground)[flat_run])
        d[flat_run] = np.where(net[run[flat_run]] < 0, -1.0, 1.0)
    return d


def _rule_shaped(P) -> np.ndarray:
    """Knot segments a rule shaped rather than the terrain: those holding a
    station where the cover limits change (a zone's edge) or a crossing."""
    change = np.zeros(len(P.st), bool)
    for v in (P.st_ground - P.upper, P.st_ground - P.lower):
        v = np.where(np.isfinite(v), v, 1e300)
        d = np.abs(np.diff(v)) > 1e-9
        change[1:] |= d
        change[:-1] |= d
    out = np.zeros(max(P.n - 1, 0), bool)
    out[np.minimum(P.sj[change], max(P.n - 2, 0))] = True
    if len(P.cj):
        out[np.minimum(P.cj, max(P.n - 2, 0))] = True
    return out


def design_profile(station, ground, crossings=(), rules: DesignRules | None = None) -> PipeProfile:
    """Least-excavation top-of-pipe profile under cover, crossing, joint and grade rules.

    station: (n,) m, increasing (stations closer than 1 mm are merged);
    ground: (n,) m elevation; crossings: :class:`Crossing` located on the
    line; rules: :class:`DesignRules`. Returns a :class:`PipeProfile` with
    one value per input station. Contradictory rules never raise: the least
    important rule gives way and is listed in ``relaxations`` [1]_ [2]_.

    References
    ----------
    .. [1] Huangfu, Q., Hall, J. A. J. (2018). Parallelizing the dual revised
       simplex method. Mathematical Programming Computation 10, 119-142
       (HiGHS, the solver :func:`~.lp.solve_lp` calls).
    .. [2] Nocedal, J., Wright, S. J. (2006). Numerical Optimization, 2nd ed.,
       ch. 18 (sequential linearization of nonlinear constraints).

    >>> p = design_profile([0, 6, 12, 18], [100.0] * 4, rules=DesignRules(min_cover=1.2))
    >>> p.top.round(6).tolist(), p.reason.tolist(), p.excavation_volume
    ([98.8, 98.8, 98.8, 98.8], ['min cover', 'min cover', 'min cover', 'min cover'], 0.0)
    """
    if rules is None:
        raise InputError("design: no design rules given (min_cover is required)")
    crossings = list(crossings)
    P, group, first = _prepare(station, ground, crossings, rules)
    n = P.n
    # first linearized about level pipe when laid in joints (the ground's
    # grades between knots are noise), else about the ground
    ghat = np.zeros(max(P.n - 1, 0)) if rules.knots is not None else _grades(P.ground, P.h)
    bends: dict = {}
    prev_bends: dict = {}
    mg_dir = caps = sol = None
    trials = [(bends, True)]
    for rnd in range(BEND_ROUNDS + 2):
        for trial, relax in trials:  # closest fittings, then totals at least as large
            new, new_caps = _attempt(P, ghat, trial, mg_dir, caps, relax=relax)
            if new is not None:
                bends = trial
                break
        if new is None:  # no fittings fit: keep the last profile
            bends = prev_bends
            break
        sol, caps, ghat = new, new_caps, new.g
        if rules.min_grade is not None and mg_dir is None and n > 1:
            mg_dir = _grade_directions(sol.z, P.ground, P.h, rules.min_grade,
                                       rules.high_point_tolerance or 0.0, _rule_shaped(P))
            caps = None  # contradictions are looked for again with the grade rows
            continue
        if n < 3 or rnd >= BEND_ROUNDS:
            break
        placed = _place(P, sol)
        if not placed:
            break
        prev_bends = bends
        near, over = {**bends, **placed}, {**bends, **_place(P, sol, at_least=True)}
        trials = [(near, False), (over, False), (near, True), (over, True)] if over != near \
            else [(near, False), (near, True)]
    if sol is not None and mg_dir is None and rules.high_point_tolerance is not None and n > 1:
        # high and low points less prominent than the tolerance go: the runs
        # either side are held to one direction, the bends placed kept
        mg_dir = _grade_directions(sol.z, P.ground, P.h, 1e-7, rules.high_point_tolerance,
                                   _rule_shaped(P))
        if np.any(mg_dir * sol.g < -TOL):  # some were merged away: solve with the directions
            new, _ = _attempt(P, sol.g, bends, mg_dir, caps)
            if new is not None:
                sol, ghat = new, new.g
    if sol is not None and n > 2 and sol.excess.max() > TOL:
        # turning beyond the joints that no standard bend could take: keep the
        # joints at their priority, letting lower rules (max cover, grades) give way
        new, _ = _attempt(P, ghat, bends, mg_dir, None, strict=True)
        sol = new or sol
    if sol is None:  # no solver answer at all: the cover line, with every shortfall reported
        z = np.where(np.isfinite(P.upper), P.upper, P.st_ground)[P.kidx]
        sol = _Solution(z, _grades(z, P.h), np.zeros(max(n - 2, 0)), {})
    return _finish(P, sol, bends, crossings, group, first, np.asarray(station, float), mg_dir)


def _finish(P, sol, bends, crossings, group, first, station, mg_dir=None) -> PipeProfile:
    r, n, s = P.rules, P.n, P.s
    z, g = sol.z, sol.g
    zs = P.at_stations(z)  # every station's top
    ns, k = len(P.st), P.kidx
    turn = np.r_[0.0, _turn(g), 0.0] if n > 2 else np.zeros(n)
    allow = np.r_[np.nan, P.allow, np.nan] if n > 2 else np.full(n, np.nan)
    is_bend, target = _bend_arrays(bends, n)

    # crossing: value of the constrained quantity at the crossing point
    ztc = (1 - P.ct) * z[P.cj] + P.ct * z[np.minimum(P.cj + 1, n - 1)] if len(P.cj) else np.zeros(0)
    cshort = P.csign * (ztc - P.crhs)  # > 0: clearance short by this much

    relax = []
    above = {k_: PRIORITY[:i] for i, k_ in enumerate(PRIORITY)}
    above["bend angle"] = PRIORITY[:2]

    def report(rule, short, where, unit):
        for a, b in runs(short > TOL).tolist():
            amt = float(short[a:b + 1].max())
            s0, s1 = where(a, b)
            why = (f"it ranks below {', '.join(above[rule])}, which could not all be kept otherwise"
                   if above[rule] else "no profile keeps every crossing clearance")
            relax.append(Relaxation(rule, s0, s1, amt, unit,
                                    f"{rule} gave way by up to {amt:.4g} {unit} from station {s0:.2f} m "
                                    f"to {s1:.2f} m: {why}"))

    at = lambda a, b: (float(s[a]), float(s[b]))  # noqa: E731  (knots)
    at_st = lambda a, b: (float(P.st[a]), float(P.st[b]))  # noqa: E731  (stations)
    seg = lambda a, b: (float(s[a]), float(s[b + 1]))  # noqa: E731  (knot segments)
    for c, name in enumerate(P.cname):
        if cshort[c] > TOL:
            sc = float(crossings[c].station)
            relax.append(Relaxation("crossing clearance", sc, sc, float(cshort[c]), "m",
                                    f"crossing clearance at {name} gave way by {cshort[c]:.4g} m at station "
                                    f"{sc:.2f} m: no profile keeps every crossing clearance"))
    report("min cover", zs - P.upper, at_st, "m")
    report("max cover", P.lower - zs, at_st, "m")
    over = np.where(is_bend, 0.0, np.abs(turn) - np.nan_to_num(allow, nan=np.inf))
    report("joint deflection", over, at, "rad")
    report("bend angle", np.where(is_bend, np.abs(turn - target) - P.margin, 0.0), at, "rad")
    if r.max_transition_grade is not None and n > 1:
        report("max grade", np.abs(g) - r.max_transition_grade, seg, "m/m")
    if r.min_grade is not None and n > 1:
        report("min grade", r.min_grade - np.abs(g), seg, "m/m")
    if mg_dir is not None and n > 1:
        report("grade direction", -mg_dir * g, seg, "m/m")
    order = {k_: i for i, k_ in enumerate(PRIORITY)}
    relax.sort(key=lambda x: (order.get(x.rule, 2), x.station_from))

    # why each station sits where it does (later assignments win)
    act = 1e-6
    reason = np.full(ns, "transition", dtype=object)
    if n > 1:
        def gflag(cond):  # a segment's flag on its stations, and on the knot that ends it
            out = cond[P.sj].copy()
            out[k[1:]] |= cond
            return out

        if r.min_grade is not None:
            reason[gflag(np.abs(np.abs(g) - r.min_grade) <= act)] = "min grade"
        if r.max_transition_grade is not None:
            reason[gflag(np.abs(np.abs(g) - r.max_transition_grade) <= act)] = "max grade"
    reason[k[np.abs(turn) >= np.nan_to_num(allow, nan=np.inf) - act]] = "deflection"
    reason[k[is_bend]] = "bend"
    reason[np.abs(zs - P.lower) <= act] = "max cover"
    reason[np.abs(zs - P.upper) <= act] = "min cover"
    for c, name in enumerate(P.cname):
        if cshort[c] >= -act:
            reason[P.st_cj[c] + (1 if P.st_ct[c] > 0.5 else 0)] = f"crossing {name}"

    wt = P.st_wt
    excavation = float(np.sum(wt * np.maximum(P.upper - zs, 0.0)))
    trench = float(np.sum(wt * np.maximum(P.st_ground - zs + r.outside_diameter, 0.0)))
    length = float(np.sum(np.hypot(P.h, np.diff(z)))) if n > 1 else 0.0
    upper = P.upper.copy()
    lower = np.where(np.isfinite(P.lower), P.lower, np.nan)
    for c in range(len(P.cj)):  # crossings tighten the limits at their station
        j = P.st_cj[c] + (1 if P.st_ct[c] > 0.5 else 0)
        if P.csign[c] > 0:
            upper[j] = min(upper[j], P.crhs[c])
        else:
            lower[j] = np.fmax(lower[j], P.crhs[c])
    turn_st = np.zeros(ns)
    turn_st[k] = turn
    allow_st = np.where(np.arange(ns) == 0, np.nan, 0.0)
    allow_st[-1] = np.nan
    allow_st[k] = allow
    direction = None
    if mg_dir is not None:
        direction = mg_dir[P.sj]
    return PipeProfile(
        station=station, top=zs[group], reason=reason[group],
        bends=bends_frame(s, bends, first[k]), relaxations=relax,
        excavation_volume=excavation, length_3d=length,
        upper_limit=upper[group], lower_limit=lower[group],
        deflection=turn_st[group], deflection_limit=allow_st[group], trench_volume=trench,
        direction=None if direction is None else direction[group],
    )


__all__ = ["Crossing", "DesignRules", "PipeProfile", "Relaxation", "design_profile", "REASONS"]
