"""Sparse linear programs, solved by HiGHS [1]_ through its own binding.

A :class:`Program` is the problem::

    minimise  cost @ x
    subject to  row_lower <= A @ x <= row_upper,   lower <= x <= upper

with ``A`` given as coordinate triplets (row, column, value); entries given
twice at one place add up, as in a sparse matrix built from triplets.
:func:`solve_lp` hands it to HiGHS's dual simplex (its default for a linear
program) and returns the optimal ``x``, or None when there is none.

HiGHS is the solver behind ``scipy.optimize.linprog(method="highs")``; the
``highspy`` binding [2]_ reaches it in a hundredth of a second, where
importing ``scipy.optimize`` takes half a second of every run's start (it
imports most of SciPy). The release is held to HiGHS 1.12, the one SciPy
1.17 bundles, so that a design is what it was through SciPy: on programs at
the edge of feasibility HiGHS releases differ (1.16's presolve calls some
feasible design programs infeasible, and without presolve it accepts
others that 1.12 rightly refuses, within 1e-7), and the design's path
through its least-violation steps follows those verdicts. An equality row has ``row_lower == row_upper``;
an inequality ``A x <= b`` has ``row_lower = -inf``.

References
----------
.. [1] Huangfu, Q., Hall, J. A. J. (2018). Parallelizing the dual revised
   simplex method. Mathematical Programming Computation 10, 119-142.
.. [2] HiGHS, "highspy", the Python interface to HiGHS,
   ergo-code.github.io/HiGHS/stable/interfaces/python/.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Program", "rowwise", "solve_lp"]


@dataclass
class Program:
    """A linear program (see the module docstring); every field a numpy array."""

    cost: np.ndarray       #: (n,) objective coefficients
    rows: np.ndarray       #: (k,) row of each matrix entry
    cols: np.ndarray       #: (k,) column of each matrix entry
    values: np.ndarray     #: (k,) value of each matrix entry
    row_lower: np.ndarray  #: (m,) lower bound of each row (-inf: none)
    row_upper: np.ndarray  #: (m,) upper bound of each row (inf: none)
    lower: np.ndarray      #: (n,) lower bound of each unknown (-inf: none)
    upper: np.ndarray      #: (n,) upper bound of each unknown (inf: none)


def rowwise(rows, cols, values, nrow: int):
    """Coordinate triplets as compressed rows: ``(start, index, value)``, the
    entries of row ``i`` at ``start[i]:start[i + 1]`` in column order, entries
    at one place summed (HiGHS refuses duplicates).

    >>> start, index, value = rowwise([1, 0, 1], [2, 0, 2], [1.0, 3.0, 0.5], 2)
    >>> start.tolist(), index.tolist(), value.tolist()
    ([0, 1, 2], [0, 2], [3.0, 1.5])
    """
    rows = np.asarray(rows, np.int64)
    cols = np.asarray(cols, np.int64)
    values = np.asarray(values, float)
    ncol = int(cols.max()) + 1 if cols.size else 1
    key = rows * ncol + cols
    order = np.argsort(key, kind="stable")
    key = key[order]
    first = np.r_[True, key[1:] != key[:-1]] if key.size else np.zeros(0, bool)
    at = np.flatnonzero(first)
    value = np.add.reduceat(values[order], at) if at.size else np.zeros(0)
    key = key[at]
    row = key // ncol
    start = np.searchsorted(row, np.arange(nrow + 1))
    return start.astype(np.int32), (key % ncol).astype(np.int32), value


def solve_lp(program: Program):
    """The optimal ``x`` of ``program`` (an ndarray), or None when HiGHS
    finds none (infeasible, unbounded, or stopped short).

    >>> p = Program(cost=np.array([-1.0, -2.0]), rows=np.array([0, 0]),
    ...             cols=np.array([0, 1]), values=np.array([1.0, 1.0]),
    ...             row_lower=np.array([-np.inf]), row_upper=np.array([1.5]),
    ...             lower=np.zeros(2), upper=np.ones(2))
    >>> solve_lp(p).tolist()  # max x0 + 2 x1 with x0 + x1 <= 1.5, 0 <= x <= 1
    [0.5, 1.0]
    """
    import highspy

    n, m = len(program.cost), len(program.row_lower)
    h = highspy._Highs()  # the bare solver: the wrapping class prints a banner when made
    h.setOptionValue("output_flag", False)
    lp = highspy.HighsLp()
    lp.num_col_, lp.num_row_ = n, m
    lp.col_cost_ = np.asarray(program.cost, float)
    lp.col_lower_ = np.asarray(program.lower, float)
    lp.col_upper_ = np.asarray(program.upper, float)
    lp.row_lower_ = np.asarray(program.row_lower, float)
    lp.row_upper_ = np.asarray(program.row_upper, float)
    start, index, value = rowwise(program.rows, program.cols, program.values, m)
    lp.a_matrix_.format_ = highspy.MatrixFormat.kRowwise
    lp.a_matrix_.num_col_, lp.a_matrix_.num_row_ = n, m
    lp.a_matrix_.start_, lp.a_matrix_.index_, lp.a_matrix_.value_ = start, index, value
    if h.passModel(lp) == highspy.HighsStatus.kError:
        return None
    h.run()
    if h.getModelStatus() != highspy.HighsModelStatus.kOptimal:
        return None
    return np.asarray(h.getSolution().col_value, float)
