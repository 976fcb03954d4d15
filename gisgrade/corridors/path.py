"""Least-cost paths on the cost grid, distinct alternatives, simplification.

Pure functions over arrays and shapely geometry in grid coordinates. The path
is found with scikit-image's minimum-cost-path graph [1] over the 8
neighbours of each cell (a step costs its length times the mean cost of its
two cells); a diagonal step is sqrt(2) cells long, so a path's grid length
may exceed the straight line by up to 8.2 % (1 / cos 22.5 deg) between the
compass and diagonal directions. Alternatives come from penalising the cells
near the routes already found; the polyline is simplified by
Douglas-Peucker [2] and never simplified into a no-go area.

References
----------
[1] scikit-image, ``skimage.graph.MCP_Geometric`` (Dijkstra's algorithm [3]
    on the raster with geometric step lengths).
[2] Douglas, D. H. and Peucker, T. K. (1973). Algorithms for the reduction of
    the number of points required to represent a digitized line or its
    caricature. The Canadian Cartographer 10(2), 112-122 (shapely ``simplify``).
[3] Dijkstra, E. W. (1959). A note on two problems in connexion with graphs.
    Numerische Mathematik 1, 269-271.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import shapely
from scipy import ndimage
from shapely.geometry import LineString


def least_cost_path(cost, start, end, cell: float):
    """The cheapest 8-connected path on ``cost`` [per m] from cell ``start``
    to cell ``end`` ((row, col) each) with square cells ``cell`` [m]:
    ((n, 2) int array of cells, its cost [m]); (None, inf) if none exists.

    >>> c = np.ones((3, 4))
    >>> p, total = least_cost_path(c, (0, 0), (0, 3), 10.0)
    >>> p.tolist(), round(total, 6)
    ([[0, 0], [0, 1], [0, 2], [0, 3]], 30.0)
    """
    from skimage.graph import MCP_Geometric

    mcp = MCP_Geometric(np.asarray(cost, float), sampling=(cell, cell), fully_connected=True)
    acc, _ = mcp.find_costs([tuple(start)], [tuple(end)])
    total = float(acc[tuple(end)])
    if not np.isfinite(total):
        return None, np.inf
    return np.asarray(mcp.traceback(tuple(end)), int), total


def path_cost(cost, cells, cell: float) -> float:
    """Cost [m] of the path ``cells`` ((n, 2) rows, cols) on ``cost`` [per m]:
    the sum over its steps of the step length times the mean of the two
    cells' costs (the rule of [1]).

    >>> round(path_cost(np.array([[1.0, 3.0], [1.0, 1.0]]), np.array([[0, 0], [1, 1]]), 1.0), 6)
    1.414214
    """
    cells = np.asarray(cells, int)
    c = np.asarray(cost, float)[cells[:, 0], cells[:, 1]]
    step = np.hypot(*np.diff(cells, axis=0).T) * cell
    return float(np.sum(step * (c[:-1] + c[1:]) / 2.0))


def distance_from(cost_mask_free, start, cell: float):
    """Least route length [m] from cell ``start`` to every cell through the
    cells where ``cost_mask_free`` is True (8 neighbours, step lengths as
    above); inf where none reaches.

    >>> d = distance_from(np.ones((2, 3), bool), (0, 0), 1.0)
    >>> d.round(4).tolist()
    [[0.0, 1.0, 2.0], [1.0, 1.4142, 2.4142]]
    """
    from skimage.graph import MCP_Geometric

    unit = np.where(cost_mask_free, 1.0, np.inf)
    mcp = MCP_Geometric(unit, sampling=(cell, cell), fully_connected=True)
    acc, _ = mcp.find_costs([tuple(start)])
    return np.where(np.isfinite(acc), acc, np.inf)


def route_through(cost, points, cell: float):
    """The cheapest path through ``points`` ((m, 2) cells, in order): the
    legs' paths joined ((n, 2) cells) and the cost [m]; (None, inf) if a
    leg has no path.

    >>> p, total = route_through(np.ones((3, 3)), [(0, 0), (0, 2), (2, 2)], 1.0)
    >>> p.tolist(), total
    ([[0, 0], [0, 1], [0, 2], [1, 2], [2, 2]], 4.0)
    """
    parts, total = [], 0.0
    for a, b in zip(points[:-1], points[1:]):
        leg, c = least_cost_path(cost, a, b, cell)
        if leg is None:
            return None, np.inf
        parts.append(leg if not parts else leg[1:])
        total += c
    return np.concatenate(parts), total


def near(cells, shape, cell: float, radius: float):
    """Cells of a grid of ``shape`` within ``radius`` [m] of any of ``cells``
    ((n, 2)): a boolean grid (Euclidean distance transform).

    >>> near(np.array([[1, 1]]), (3, 4), 1.0, 1.0).astype(int).tolist()
    [[0, 1, 0, 0], [1, 1, 1, 0], [0, 1, 0, 0]]
    """
    free = np.ones(shape, bool)
    free[cells[:, 0], cells[:, 1]] = False
    return ndimage.distance_transform_edt(free, sampling=cell) <= radius


def fixed_radius(fixed, radius: float) -> float:
    """The radius around the ``fixed`` points ((m, 2), source, waypoints,
    destination, in order) that the distinctness measure leaves out:
    ``radius``, but at most a quarter of the shortest straight leg between
    consecutive points, so that between close points (nearly) the whole
    line counts (same units as ``fixed``).

    >>> fixed_radius(np.array([[0.0, 0.0], [1000.0, 0.0]]), 200.0)
    200.0
    >>> fixed_radius(np.array([[0.0, 0.0], [3.0, 4.0]]), 200.0)  # 5 apart
    1.25
    """
    fixed = np.asarray(fixed, float)
    if len(fixed) < 2:
        return float(radius)
    return float(min(radius, np.min(np.hypot(*np.diff(fixed, axis=0).T)) / 4))


def shared_share(line, earlier, radius: float, fixed=None) -> float:
    """Share [0..1] of ``line``'s length within ``radius`` of any of the
    ``earlier`` lines, leaving out its length within :func:`fixed_radius` of the
    ``fixed`` points (source, waypoints, destination: every route meets
    there). 0 with no earlier line.

    >>> a = LineString([(0, 0), (100, 0)])
    >>> b = LineString([(0, 0), (50, 5), (100, 0)])
    >>> round(shared_share(b, [a], 10.0), 3)
    1.0
    >>> round(shared_share(LineString([(0, 50), (100, 50)]), [a], 10.0), 3)
    0.0
    >>> round(shared_share(a, [a], 200.0, fixed=[(0, 0), (100, 0)]), 3)  # close ends: all counts
    1.0
    """
    if not earlier:
        return 0.0
    zone = shapely.union_all([shapely.buffer(e, radius) for e in earlier])
    part = line
    if fixed is not None and len(fixed):
        around = fixed_radius(fixed, radius)
        part = line.difference(shapely.union_all(shapely.buffer(shapely.points(fixed), around)))
    if part.length == 0:
        return 0.0
    return float(part.intersection(zone).length / part.length)


def segment_cost(cost, a, b, cell: float) -> float:
    """Cost [m] of the straight segment between cell centres ``a`` and ``b``
    ((row, col), fractional allowed) on ``cost`` [per m]: the cost of the
    cell under each point sampled every quarter cell, times the length
    (trapezoid rule); inf where it meets an impassable cell.

    >>> round(segment_cost(np.ones((3, 4)), (0, 0), (2, 3), 10.0), 6)  # sqrt(2^2 + 3^2) cells
    36.055513
    """
    cost = np.asarray(cost, float)
    a, b = np.asarray(a, float), np.asarray(b, float)
    n = int(np.ceil(4 * np.hypot(*(b - a)))) + 1
    t = np.linspace(0.0, 1.0, max(n, 2))
    rc = np.rint(a[None, :] + t[:, None] * (b - a)[None, :]).astype(int)
    rc = np.clip(rc, 0, np.array(cost.shape) - 1)
    c = cost[rc[:, 0], rc[:, 1]]
    if not np.all(np.isfinite(c)):
        return np.inf
    length = np.hypot(*(b - a)) * cell
    return float(np.sum((c[:-1] + c[1:]) / 2) * length / (len(t) - 1))


def leg_ends(cells, points) -> np.ndarray:
    """Indices into the path ``cells`` of the ``points`` (cells) it passes in order.

    >>> leg_ends(np.array([[0, 0], [0, 1], [1, 2], [0, 3]]), [(0, 0), (1, 2), (0, 3)]).tolist()
    [0, 2, 3]
    """
    cells, out, at = np.asarray(cells, int), [], 0
    for p in np.asarray(points, int):
        at += int(np.flatnonzero((cells[at:] == p).all(axis=1))[0])
        out.append(at)
    return np.array(out)


def straighten(cost, cells, cell: float, fixed=()) -> np.ndarray:
    """The vertices (indices into ``cells``) of a taut polyline along the
    raster path ``cells``: top-down like Douglas-Peucker [2], but a stretch
    of the path is replaced by its chord when the chord costs no more than
    the stretch (:func:`segment_cost` against :func:`path_cost`), else split
    at the cell farthest from the chord. This takes out the 8-neighbour
    staircase (up to 8.2 % of length) where the ground allows a straight
    line, and keeps every bend the cost asks for. The ``fixed`` indices
    (waypoints) are always kept.

    >>> stair = np.array([[0, 0], [1, 1], [2, 2], [2, 3], [2, 4], [2, 5]])
    >>> straighten(np.ones((3, 6)), stair, 1.0).tolist()
    [0, 5]
    >>> wall = np.ones((3, 6)); wall[1, 2:4] = np.inf; wall[2, 2:4] = np.inf
    >>> straighten(wall, np.array([[2, 0], [1, 1], [0, 2], [0, 3], [1, 4], [2, 5]]), 1.0).tolist()
    [0, 2, 3, 5]
    """
    cost = np.asarray(cost, float)
    cells = np.asarray(cells, int)
    n = len(cells)
    c = cost[cells[:, 0], cells[:, 1]]
    step = np.hypot(*np.diff(cells, axis=0).T) * cell
    cum = np.concatenate([[0.0], np.cumsum(step * (c[:-1] + c[1:]) / 2.0)])
    ends = sorted({0, n - 1, *map(int, fixed)})
    keep, todo = set(ends), list(zip(ends[:-1], ends[1:]))
    while todo:  # one pass per kept vertex, each vectorized over its stretch
        i, j = todo.pop()
        if j - i < 2:
            continue
        if segment_cost(cost, cells[i], cells[j], cell) <= (cum[j] - cum[i]) * (1 + 1e-9):
            continue
        d = cells[j] - cells[i]
        rel = cells[i + 1:j] - cells[i]
        off = np.abs(rel[:, 0] * d[1] - rel[:, 1] * d[0])
        k = i + 1 + int(np.argmax(off))
        keep.add(k)
        todo += [(i, k), (k, j)]
    return np.array(sorted(keep))


def simplify(line, tolerance: float, ok=None):
    """Douglas-Peucker [2] of ``line`` with ``tolerance`` [m]; where the
    result fails ``ok(simplified)`` (e.g. it cuts into a no-go area or
    crosses more features) the tolerance is halved until it passes (down to
    the line itself). Returns (line, the tolerance used).

    >>> zig = LineString([(0, 0), (1, 0.2), (2, 0), (3, 0.2), (4, 0)])
    >>> simplify(zig, 0.5)[0].wkt
    'LINESTRING (0 0, 4 0)'
    >>> simplify(zig, 0.5, ok=lambda s: len(s.coords) > 2)[0].wkt  # 0.5, 0.25: no; 0.125: kept
    'LINESTRING (0 0, 1 0.2, 2 0, 3 0.2, 4 0)'
    """
    tol, least = float(tolerance), 1e-3 * float(tolerance)
    while tol > least:
        out = line.simplify(tol, preserve_topology=False)
        if ok is None or ok(out):
            return out, tol
        tol /= 2
    return line, 0.0


@dataclass(frozen=True)
class Alternative:
    """One candidate: its cells, cost on the unpenalised surface [m], the
    share of its length shared with earlier candidates, the penalty factor
    that produced it."""

    cells: np.ndarray
    cost: float
    shared: float
    factor: float
    line: LineString  # the simplified polyline
    tolerance: float  # the simplification tolerance used (CRS units)


def alternatives(cost, points, cell: float, k: int, *, radius: float, factor: float,
                 max_shared: float, to_line, fixed=None, unit: float = 1.0, tries: int = 4):
    """Up to ``k`` distinct cheapest routes through ``points``.

    The first is the cheapest. Each next one is the cheapest on ``cost`` with
    the cells within ``radius`` [m] of every earlier route (but not of the
    ``fixed`` points, given as grid cells) costing ``factor`` times more; it
    is kept when no more than ``max_shared`` of its length (as the polyline
    and tolerance ``to_line(cells, the cost it was found on)``, in CRS units
    of ``unit`` metres) lies
    within ``radius`` of an earlier one
    (:func:`shared_share`), else the factor is squared and tried again, up to
    ``tries`` times. Returns the candidates (in the order found; see
    :func:`cheapest_first`) and a note when fewer than ``k`` were distinct.
    The fixed points' neighbourhood (free of the penalty, left out of the
    share) is :func:`fixed_radius`.
    """
    cost = np.asarray(cost, float)
    fixed_cells = np.asarray(points, int)
    around_fixed = near(fixed_cells, cost.shape, cell, fixed_radius(fixed_cells * cell, radius))
    penalised = np.zeros(cost.shape, bool)
    found, lines, note = [], [], None
    for i in range(k):
        f = factor
        for _ in range(tries if i else 1):
            c = np.where(penalised, cost * f, cost)
            cells, _ = route_through(c, fixed_cells, cell)
            if cells is None:
                return found, ("no route between the points: no-go areas or missing ground "
                               "close them off")
            line, tol = to_line(cells, c)
            share = shared_share(line, lines, radius / unit, fixed)
            if share <= max_shared:
                break
            f = f * f if f > 1 else 2.0
        else:
            note = (f"{i} distinct route{'s' if i != 1 else ''} of {k} asked for: the next "
                    f"shares {share:.0%} of its length with earlier ones (at most "
                    f"{max_shared:.0%} allowed)")
            break
        found.append(Alternative(cells, path_cost(cost, cells, cell), share, f if i else 1.0,
                                 line, tol))
        lines.append(line)
        penalised |= near(cells, cost.shape, cell, radius) & ~around_fixed
    return found, note


def cheapest_first(found, radius: float, max_shared: float, fixed=None):
    """The candidates ``found`` (:class:`Alternative`) ordered by cost,
    cheapest first, each kept when at most ``max_shared`` of its line lies
    within ``radius`` (CRS units) of the cheaper ones kept before it
    (:func:`shared_share`, recomputed in this order): (kept, how many were
    dropped). A penalised search can find a dearer route before a cheaper
    one, so the order found is not the order of cost.

    >>> a = Alternative(np.zeros((1, 2)), 3.0, 0.0, 1.0, LineString([(0, 0), (10, 0)]), 0.0)
    >>> b = Alternative(np.zeros((1, 2)), 2.0, 0.0, 1.0, LineString([(0, 5), (10, 5)]), 0.0)
    >>> c = Alternative(np.zeros((1, 2)), 4.0, 0.0, 1.0, LineString([(0, 5), (10, 5)]), 0.0)
    >>> kept, dropped = cheapest_first([a, c, b], 1.0, 0.5)
    >>> [x.cost for x in kept], [x.shared for x in kept], dropped
    ([2.0, 3.0], [0.0, 0.0], 1)
    """
    kept, lines = [], []
    for alt in sorted(found, key=lambda a: a.cost):
        share = shared_share(alt.line, lines, radius, fixed)
        if lines and share > max_shared:
            continue
        kept.append(replace(alt, shared=share))
        lines.append(alt.line)
    return kept, len(found) - len(kept)
