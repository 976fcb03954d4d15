"""The cost surface: what one metre of route costs in each cell of the grid.

Pure functions over numpy arrays (no files, no CRS). Every cost is in metres
of route: a step between two cells costs its length times the mean of the
two cells' costs (the convention of the minimum-cost-path graph [1]), and a
cell's cost is

    c = (1 + steepness + roughness + head deficit) x discount + crossings

with infinity where no route may go (a no-go polygon, no ground). Each term
is a small function here; :func:`cell_cost` adds them up.

References
----------
[1] scikit-image, ``skimage.graph.MCP_Geometric``: the cost of a move is the
    distance travelled times the mean of the costs of the two cells.
[2] Horn, B. K. P. (1981). Hill shading and the reflectance map. Proc. IEEE
    69(1), 14-47 (the 3 x 3 gradient, :func:`gisgrade.output.mapfig.horn_gradient`).
[3] Darcy-Weisbach and Hazen-Williams friction, :mod:`gisgrade.hydraulics.friction`.
"""
from __future__ import annotations

import numpy as np
from scipy import ndimage

from ..output.mapfig import horn_gradient


def slope(z, dx: float, dy: float):
    """Ground slope (rise over run, unitless) of grid ``z`` [m] with cells
    ``dx`` x ``dy`` [m]: the magnitude of Horn's gradient [2]. It is the
    steepest grade through the cell in any direction: a step along it meets
    it as grade, a step across it as cross-slope.

    >>> x, y = np.meshgrid(np.arange(5.0) * 10, -np.arange(4.0) * 10)
    >>> round(float(slope(0.3 * x + 0.4 * y, 10.0, 10.0)[2, 2]), 12)
    0.5
    """
    gx, gy = horn_gradient(np.asarray(z, float), dx, dy)
    return np.hypot(gx, gy)


def steepness_term(s, steep: float, weight: float):
    """Extra cost per metre [-] for slope ``s`` [-] above ``steep`` [-]:
    ``weight`` x (s - steep) where steeper, else 0 (the pipe cannot follow
    such a grade, nor a trench sit across such a side slope, without extra
    work; common practice as a screening measure).

    >>> steepness_term(np.array([0.1, 0.25, 0.65]), 0.15, 20.0).round(6).tolist()
    [0.0, 2.0, 10.0]
    """
    return weight * np.maximum(np.asarray(s, float) - steep, 0.0)


def roughness(z, window: int):
    """Roughness [m] of grid ``z`` [m]: the RMS departure of the ground from
    its own mean over a ``window`` x ``window`` cell box, averaged over the
    same box. A plane is smooth (0); bumps and pits a pipe laid in straight
    grade runs must cut through or fill are rough. NaN cells count as their
    neighbours' mean (they are closed off elsewhere).

    >>> x, y = np.meshgrid(np.arange(9.0), np.arange(9.0))
    >>> float(np.abs(roughness(2 * x + y, 3)[2:-2, 2:-2]).max()) < 1e-9
    True
    >>> bumps = np.where((x + y) % 2 == 0, 1.0, -1.0)  # +-1 m: each cell 8/9 m off its box mean
    >>> round(float(roughness(bumps, 3)[4, 4]), 3)
    0.889
    """
    z = np.asarray(z, float)
    fill = np.where(np.isfinite(z), z, np.nanmean(z) if np.isfinite(z).any() else 0.0)
    w = max(int(window), 1)
    mean = ndimage.uniform_filter(fill, w, mode="nearest")
    return np.sqrt(np.maximum(ndimage.uniform_filter((fill - mean) ** 2, w, mode="nearest"), 0.0))


def roughness_term(rough, weight: float):
    """Extra cost per metre [-]: ``weight`` [1/m] x roughness [m].

    >>> float(roughness_term(2.0, 0.5))
    1.0
    """
    return weight * np.asarray(rough, float)


def reachable_head(source_head: float, friction_slope: float, distance):
    """The most head [m] the flow can have at a cell: the source head [m] less
    the friction slope [m/m] times the least route length [m] from the source
    to the cell (a real route is at least that long, so loses at least that
    much; point losses are left out, which only raises the head) [3].

    >>> reachable_head(200.0, 0.004, np.array([0.0, 2500.0])).tolist()
    [200.0, 190.0]
    """
    return source_head - friction_slope * np.asarray(distance, float)


def head_deficit(ground, depth: float, head, min_pressure_head: float):
    """Head [m] the flow lacks for the minimum pressure at a pipe ``depth`` [m]
    below ``ground`` [m]: (ground - depth + min_pressure_head) - head, or 0
    where the head is enough. Pressure at the axis is rho g (HGL - axis).

    >>> head_deficit(np.array([150.0, 190.0]), 1.5, 200.0, 14.3).round(3).tolist()
    [0.0, 2.8]
    """
    need = np.asarray(ground, float) - depth + min_pressure_head
    return np.maximum(need - np.asarray(head, float), 0.0)


def hgl_term(deficit, weight: float):
    """Extra cost per metre [-]: ``weight`` [1/m] x head deficit [m], rising
    as the pressure would fall further below the minimum.

    >>> float(hgl_term(3.0, 1.0))
    3.0
    """
    return weight * np.asarray(deficit, float)


def crossing_term(count, cost_per_crossing, cell: float):
    """Extra cost per metre [-] in the cells of crossed features: each
    feature's cost [m] spread over one cell width ``cell`` [m], so a step
    through a one-cell-wide feature pays about its cost once. ``count`` is
    (layers, rows, cols) of 0/1 (the cells each layer's features touch),
    ``cost_per_crossing`` one cost per layer.

    >>> crossing_term(np.ones((2, 1, 1)), [100.0, 50.0], 10.0).tolist()
    [[15.0]]
    """
    count = np.asarray(count, float)
    c = np.asarray(cost_per_crossing, float).reshape(-1, *([1] * (count.ndim - 1)))
    return (count * c).sum(axis=0) / cell


def cell_cost(extra, *, discount=None, crossing=None, blocked=None):
    """Cost per metre [-] of each cell: (1 + ``extra``) x ``discount`` (a
    preferred corridor's factor, else 1) + ``crossing``; infinite where
    ``blocked`` or where anything is NaN (no ground).

    >>> cell_cost(np.array([0.0, 1.0, 2.0]), discount=np.array([1.0, 0.5, 1.0]),
    ...           blocked=np.array([False, False, True])).tolist()
    [1.0, 1.0, inf]
    """
    c = 1.0 + np.asarray(extra, float)
    if discount is not None:
        c = c * discount
    if crossing is not None:
        c = c + crossing
    c = np.where(np.isfinite(c), c, np.inf)
    return np.where(blocked, np.inf, c) if blocked is not None else c
