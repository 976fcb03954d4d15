"""Air valves and drains sited from the designed profile and the grade lines.

Siting rules, after the AWWA manual M51 on air valves (*from memory*: the
rules below are the manual's well-known recommendations as recalled; confirm
against the current edition before citing a clause):

1. every high point of the pipe: a **combination** valve (releases air under
   pressure, admits and exhausts air on draining and filling);
2. where the HGL of any scenario comes within ``hgl_margin`` of the top of
   the pipe (a high point relative to the HGL; it may go sub-atmospheric):
   an **air-vacuum** valve at the closest point inside the line (not at an
   end station, even where the stretch reaches it);
3. an increase in downward slope: **air-vacuum**; a decrease in upward
   slope: **air-release**, where the grade changes by at least
   ``grade_change`` (grade breaks within ``slope_window`` count as one);
4. along long runs, so that no stretch between air valves (or the line's
   ends) exceeds ``interval``: **air-release** on ascending runs,
   **air-vacuum** on descending runs, **combination** on near-horizontal runs
   (flatter than ``flat_grade``);
5. the ends of a near-horizontal run longer than ``flat_run`` where the
   pipe turns convex (it rises into the run, or falls away from it): air
   gathers there, not at a concave end: **combination**;
6. every low point: a **drain** (blow-off).

Points at the line's ends are served by what the line connects to (a tank
or a main) and get no valve. Valves closer than ``merge_distance`` merge into
one (an air-release and an air-vacuum make a combination). Pure numpy.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..arrays import runs
from ..display import token
from ..project import ValvesConfig

#: Columns of the valve table.
COLUMNS = ["station_m", "kind", "reason"]
#: The kinds, in the order a merge prefers them.
AIR_KINDS = ("combination", "air-vacuum", "air-release")
KINDS = AIR_KINDS + ("drain",)


#: The siting rules: the project's [valves] table (defaults defined there).
ValveRules = ValvesConfig


def site_valves(station, top, highs, lows, grades=(), names=(), knots=None,
                rules: ValveRules = ValveRules()) -> pd.DataFrame:
    """The valves a pipe profile needs: ``station_m, kind, reason``.

    ``station``, ``top``: (n,) m; ``highs``, ``lows``: station indices of the
    designed high and low points (with the ends where they are such);
    ``grades``: (k, n) HGL (m, the lower side of any point loss) of the
    flowing scenarios named ``names``; ``knots``: bool (n,), the stations a
    valve may sit at (the pipe's joints; default all).

    >>> s = np.arange(0.0, 1001.0, 10.0)
    >>> top = np.where(s < 500, 100 + 0.01 * s, 110 - 0.01 * (s - 500))
    >>> site_valves(s, top, [50], [], rules=ValveRules(interval=2000.0)).values.tolist()
    [[500.0, 'combination', 'high point']]
    """
    s = np.asarray(station, float)
    z = np.asarray(top, float)
    n = len(s)
    knots = np.ones(n, bool) if knots is None else np.asarray(knots, bool)
    ends = {0, n - 1}
    out = []  # (station index, kind, reason, priority)
    for i in highs:
        if i not in ends:
            out.append((int(i), "combination", "high point", 0))
    for i in lows:
        if i not in ends:
            out.append((int(i), "drain", "low point", 0))
    for hgl, name in zip(np.atleast_2d(grades) if len(grades) else [], names):
        margin = hgl - z
        for a, b in runs(margin < rules.hgl_margin):
            a, b = max(a, 1), min(b, n - 2)  # the closest point inside the line
            if a > b:
                continue
            i = a + int(np.argmin(margin[a:b + 1]))
            where = (f"{token(margin[i], 'length')} above" if margin[i] >= 0 else
                     f"{token(-margin[i], 'length')} below")  # below: the pipe is under a vacuum
            out.append((i, "air-vacuum", f"HGL {where} the top of pipe in {name}", 1))
    g = np.diff(z) / np.diff(s)
    out += _slope_changes(s, g, knots, rules)
    out += _runs(s, z, g, knots, rules, [o[0] for o in out if o[1] != "drain"])
    return _merge(s, out, rules.merge_distance)


def _slope_changes(s, g, knots, rules):
    """Rule 3: grade breaks (those within slope_window of each other count as
    one slope change) where the descent steepens or the ascent flattens by at
    least grade_change."""
    inner = np.flatnonzero(np.abs(np.diff(g)) > 1e-9) + 1  # stations where the grade changes
    if not len(inner):
        return []
    new = np.r_[True, np.diff(s[inner]) > max(rules.slope_window, rules.merge_distance)]
    cluster = np.cumsum(new) - 1
    out = []
    for c in range(cluster[-1] + 1):  # clusters of breaks: few
        at = inner[cluster == c]
        g_in, g_out = g[at[0] - 1], g[at[-1]]
        i = int(at[np.argmax(np.abs(g[at] - g[at - 1]))])
        if g_in <= rules.flat_grade and g_out < g_in - rules.grade_change:
            out.append((i, "air-vacuum", f"descent steepens from {-100 * g_in:.2f} % to "
                                         f"{-100 * g_out:.2f} %", 2))
        elif g_in > rules.flat_grade and rules.flat_grade <= g_out < g_in - rules.grade_change:
            out.append((i, "air-release", f"ascent flattens from {100 * g_in:.2f} % to "
                                          f"{100 * g_out:.2f} %", 2))
    return out


def _runs(s, z, g, knots, rules, placed):
    """Rules 4 and 5: the ends of long near-horizontal runs; then valves so
    that no stretch between air valves (or the line's ends) is longer than
    the interval, the kind by the run each falls in. Each of those goes in
    the middle half of its even share of what is left of the stretch (and
    no farther from the last than the interval), at the joint that stands
    highest above the straight line across that half: where air gathers;
    on a straight run that is its even place. A stretch through a sag so
    gets its valve up a side, not at the bottom beside the drain."""
    cls = np.where(g > rules.flat_grade, 1, np.where(g < -rules.flat_grade, -1, 0))
    change = np.flatnonzero(np.diff(cls)) + 1
    out = []
    for a, b in zip(np.r_[0, change], np.r_[change, len(g)]):  # runs: few
        if cls[a] == 0 and s[b] - s[a] >= rules.flat_run:
            # the convex ends, where air gathers: not where the pipe falls into the
            # run or rises out of it (concave)
            sag_start = a > 0 and cls[a - 1] == -1
            sag_end = b < len(g) and cls[b] == 1
            for i, where, sag in ((a, "start", sag_start), (b, "end", sag_end)):
                if 0 < i < len(s) - 1 and not sag:
                    out.append((i, "combination", f"{where} of a near-horizontal run", 3))
    kinds = {1: ("air-release", "long ascending run"), -1: ("air-vacuum", "long descending run"),
             0: ("combination", "long near-horizontal run")}
    at = np.unique(np.r_[s[0], s[np.asarray(list(placed) + [o[0] for o in out], int)], s[-1]])
    knot_s = np.flatnonzero(knots)
    for x0, x1 in zip(at[:-1], at[1:]):  # gaps between air valves: few
        k = int(np.ceil((x1 - x0) / rules.interval - 1e-9)) - 1
        prev = x0
        for left in range(k, 0, -1):  # valves still to place in this gap
            share = (x1 - prev) / (left + 1)
            even = prev + share
            # within the middle half of its share, keeping every stretch within the interval
            lo = max(even - share / 4, x1 - left * rules.interval)
            hi = min(even + share / 4, prev + rules.interval)
            near = knot_s[(s[knot_s] >= lo) & (s[knot_s] <= hi)] if lo < hi else knot_s[:0]
            if len(near):
                zl, zh = np.interp([lo, hi], s, z)
                rise = z[near] - (zl + (zh - zl) * (s[near] - lo) / (hi - lo))
                best = near[rise >= rise.max() - 1e-3]  # within a millimetre: the nearest to even
                i = int(best[np.argmin(np.abs(s[best] - even))])
            else:
                i = int(knot_s[np.argmin(np.abs(s[knot_s] - even))])
            prev = float(s[i])
            c = int(cls[min(i, len(g) - 1)])
            out.append((i, kinds[c][0], kinds[c][1], 4))
    return out


def _merge(s, found, distance) -> pd.DataFrame:
    """One valve per cluster closer than ``distance``; drains kept apart from air valves."""
    rows = []
    for drain in (True, False):
        group = sorted((f for f in found if (f[1] == "drain") == drain), key=lambda f: s[f[0]])
        while group:
            first = group[0]
            near = [f for f in group if s[f[0]] - s[first[0]] < distance]
            group = group[len(near):]
            lead = min(near, key=lambda f: f[3])
            kinds = {f[1] for f in near}
            kind = "drain" if drain else (kinds.pop() if len(kinds) == 1 else "combination")
            reasons = list(dict.fromkeys(f[2] for f in sorted(near, key=lambda f: f[3])))
            rows.append((float(s[lead[0]]), kind, "; ".join(reasons)))
    rows.sort(key=lambda r: r[0])
    return pd.DataFrame(rows, columns=COLUMNS)


def stage_valves(project, table: pd.DataFrame, points: pd.DataFrame, grades) -> pd.DataFrame:
    """The valves of a designed, computed line: ``station_m, x, y, kind,
    reason, top_m, axis_m, ground_m``, at the pipe's joints."""
    from ..design.stage import knots_of

    s = table["station_m"].to_numpy()
    top = table["top_m"].to_numpy()
    at = lambda kind: np.searchsorted(s, points.loc[points["kind"] == kind, "station_m"].to_numpy())  # noqa: E731
    rows = grades.flowing if grades is not None else []
    rules = project.valves
    v = site_valves(s, top, at("high"), at("low"), grades.hgl_low[rows] if len(rows) else (),
                    [grades.names[i] for i in rows], knots_of(table), rules)
    for col in ("x", "y", "top_m", "axis_m", "ground_m"):
        v[col] = np.interp(v["station_m"], s, table[col].to_numpy())
    return v[["station_m", "x", "y", "kind", "reason", "top_m", "axis_m", "ground_m"]]
