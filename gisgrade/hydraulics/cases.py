"""Operating cases: pipe sections by station range and the inflow between two heads.

Pure helpers that turn the project's station ranges and offtakes into the
per-segment arrays the grade-line engine (:mod:`gisgrade.hydraulics.gradelines`)
takes, and solve for the inflow when both end heads are known.
"""
from __future__ import annotations

import numpy as np
from scipy.optimize import brentq

from gisgrade.hydraulics.gradelines import STATION_TOLERANCE, grade_lines, segment_flows


def range_values(x, starts, ends, values, default):
    """Value at each position ``x`` from station ranges [start, end).

    A position takes the value of the last range that holds it (later
    ranges win where ranges overlap), else ``default``. A position within
    1 micrometre of a range's start counts as inside it, of its end as
    outside; so at a boundary station the downstream range's value applies.
    ``None`` in ``values`` means "keep the default" for that range.

    Parameters
    ----------
    x : array (n,)
        Positions (stations) [m].
    starts, ends : sequences (k,)
        Range starts and ends [m].
    values : sequence (k,)
        Value of each range (float or None).
    default : float
        Value outside every range.

    Returns
    -------
    out : array (n,) float

    Examples
    --------
    >>> range_values([0, 50, 100, 150], [50], [150], [0.2], 0.3).tolist()
    [0.3, 0.2, 0.2, 0.3]
    """
    x = np.asarray(x, dtype=float)
    out = np.full(x.shape, np.nan if default is None else float(default))
    for a, b, v in zip(starts, ends, values):
        if v is None:
            continue
        inside = (x >= a - STATION_TOLERANCE) & (x < b - STATION_TOLERANCE)
        out[inside] = float(v)
    return out


def segment_values(station, starts, ends, values, default):
    """Per-segment (n-1,) and per-station (n,) values from station ranges.

    A segment takes the value at its midpoint; a station the value of the
    segment that leaves it (the last station: of the segment that reaches
    it), so with a station at every range boundary both agree.

    Examples
    --------
    >>> seg, st = segment_values([0, 50, 100], [50], [100], [0.2], 0.3)
    >>> seg.tolist(), st.tolist()
    ([0.3, 0.2], [0.3, 0.2, 0.2])
    """
    s = np.asarray(station, dtype=float)
    seg = range_values(0.5 * (s[:-1] + s[1:]), starts, ends, values, default)
    return seg, np.append(seg, seg[-1])


def solve_inflow(station, axis, *, head_start, head_end, offtake_station=(), offtake_flow=(),
                 end_at_rest=False, **kwargs) -> float:
    """Inflow at station 0 that joins two known heads, with offtakes on the way.

    Finds Q such that the head at the last station (after its point losses)
    equals ``head_end``: the HGL, or the EGL when the line ends in a tank
    (``end_at_rest``). Offtakes leave fixed flows (:func:`segment_flows`),
    so Q is at least their sum (forward flow in every segment). Brent's
    method on a bracket grown by doubling.

    Parameters
    ----------
    station, axis : arrays (n,)
        As for :func:`~gisgrade.hydraulics.gradelines.grade_lines`.
    head_start, head_end : float
        Head at the start (``source_head``) and at the end [m].
    offtake_station, offtake_flow : arrays (k,)
        Offtake positions [m] and flows [m3/s].
    end_at_rest : bool
        True when the end is a tank whose level is ``head_end``.
    **kwargs
        The other keywords of ``grade_lines`` (diameter, method, roughness,
        hw_c, density, viscosity, point_k, source_at_rest).

    Returns
    -------
    flow : float
        Inflow [m3/s].

    Raises
    ------
    ValueError
        If the end head is out of reach with forward flow: even the
        smallest inflow (the offtakes' sum) leaves the end below ``head_end``.

    Examples
    --------
    >>> q = solve_inflow([0.0, 1000.0], [0.0, 0.0], head_start=50.0, head_end=43.577,
    ...                  diameter=0.3, method="hazen-williams", hw_c=130.0,
    ...                  density=998.2, viscosity=1.002e-3)
    >>> round(q, 4)
    0.1
    """
    q_off = float(np.sum(offtake_flow)) if np.size(offtake_flow) else 0.0

    def residual(q):
        flows = segment_flows(station, q, offtake_station, offtake_flow)
        gl = grade_lines(station, axis, source_head=head_start, flow=flows, **kwargs)
        return float((gl.egl if end_at_rest else gl.hgl)[-1]) - float(head_end)

    lo = q_off
    r_lo = residual(lo)
    if r_lo == 0.0:
        return lo
    if r_lo < 0.0:
        raise ValueError("the end head is above what the start head gives even with only the "
                         "offtakes flowing: the flow would run backwards in part of the line")
    d = np.min(np.asarray(kwargs["diameter"], dtype=float))
    hi = lo + np.pi * d * d / 4.0  # 1 m/s more in the smallest pipe
    for _ in range(200):
        if residual(hi) < 0.0:
            break
        hi = lo + 2.0 * (hi - lo)
    else:  # pragma: no cover - only for absurd inputs
        raise ValueError("could not bracket the flow between the two heads")
    return float(brentq(residual, lo, hi, xtol=1e-14, rtol=1e-15, maxiter=500))
