"""The grade-line engine: HGL and EGL along a pipe of n stations.

Stations 0..n-1 lie along the pipe axis; segment j joins station j to j+1;
flow runs from station 0 toward station n-1. Everything is computed at once
with numpy (cumulative sums), no loop over stations.

Model (all heads in metres, elevations in the same datum):

- Segment length is the length along the pipe axis, sqrt(dstation^2 + daxis^2).
- Friction loss per segment by Darcy-Weisbach (f from
  :func:`~gisgrade.hydraulics.friction.friction_factor`) or Hazen-Williams.
- Point losses at a station, in this order, lower the EGL there:
  1. where the flow changes (an offtake), the HGL is continuous (the common
     junction rule of network analysis: one head at a node, velocity heads
     not carried across it), so the EGL steps by the change in velocity head;
  2. where the diameter changes, the Borda-Carnot expansion loss (on the
     upstream velocity head) or the sharp contraction loss (on the
     downstream velocity head), see :mod:`gisgrade.hydraulics.minor`;
  3. ``point_k[i]`` times the velocity head of the segment downstream of
     station i (for the last station, of its upstream segment).
- The source: ``source_head`` is the HGL just upstream of station 0 in a pipe
  flowing at the first segment's velocity (a connection to an existing main).
  With ``source_at_rest=True`` it is the still-water level of a tank, so the
  velocity head is drawn from it as well (HGL = level - (1 + K) V^2/2g), and
  just upstream of the entrance, in the tank, HGL = EGL = level.
- The end: with ``end_at_rest=True`` the last station discharges into a tank:
  downstream of its point losses (the exit loss, K = 1 in ``point_k[-1]``)
  the water is at rest, so there V = 0 and HGL = EGL = the tank level.
- EGL = HGL + V^2/(2 g) at every station, V the station's ``velocity``.
  Pressure at the pipe axis p = rho g (HGL - axis).

Losses keep the sign of the flow (V|V|), but diameter-change and junction
rules assume forward flow (flow >= 0).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from gisgrade.hydraulics.friction import (
    G,
    darcy_head_loss,
    friction_factor,
    hazen_williams_head_loss,
    reynolds,
)
from gisgrade.arrays import STATION_TOLERANCE
from gisgrade.hydraulics.minor import sudden_contraction_k, sudden_expansion_k

METHODS = ("darcy-weisbach", "hazen-williams")


@dataclass(frozen=True)
class GradeLines:
    """Grade lines for one flow case (arrays in SI units)."""

    velocity: np.ndarray  #: (n,) m/s, segment downstream of each station (last: its upstream segment, or 0 in a receiving tank)
    hgl: np.ndarray  #: (n,) m, HGL just downstream of any point loss at the station
    egl: np.ndarray  #: (n,) m, = hgl + velocity^2/2g
    pressure: np.ndarray  #: (n,) Pa, rho g (hgl - axis)
    friction_loss: np.ndarray  #: (n-1,) m per segment
    minor_loss: np.ndarray  #: (n,) m, EGL drop at each station (point losses)
    reynolds: np.ndarray  #: (n-1,) per segment
    friction_factor: np.ndarray  #: (n-1,) Darcy f (nan for Hazen-Williams)
    hgl_upstream: np.ndarray  #: (n,) m, HGL just upstream of the station's point losses (upstream segment's velocity; a source tank's level at 0)
    flow: np.ndarray  #: (n-1,) m3/s per segment


def _per_segment(value, m, name):
    """Broadcast a scalar or (m,) array to a float (m,) array."""
    if value is None:
        raise ValueError(f"{name} is required for this friction method")
    a = np.asarray(value, dtype=float)
    if a.ndim == 0:
        return np.full(m, float(a))
    if a.shape != (m,):
        raise ValueError(f"{name} must be a scalar or have one value per segment ({m}), got shape {a.shape}")
    return a


def _stations(station, axis):
    s = np.asarray(station, dtype=float)
    z = np.asarray(axis, dtype=float)
    if s.ndim != 1 or s.size < 2 or z.shape != s.shape:
        raise ValueError("station and axis must be 1-D arrays of the same length >= 2")
    if not np.all(np.diff(s) > 0):
        raise ValueError("stations must increase strictly")
    return s, z


def grade_lines(
    station,
    axis,
    *,
    source_head,
    flow,
    diameter,
    method="darcy-weisbach",
    roughness=None,
    hw_c=None,
    density,
    viscosity,
    point_k=None,
    source_at_rest=False,
    end_at_rest=False,
) -> GradeLines:
    """March the HGL and EGL downstream from a known head at station 0.

    Parameters
    ----------
    station : array (n,)
        Stations along the pipe [m], strictly increasing.
    axis : array (n,)
        Pipe axis (centerline) elevation at each station [m].
    source_head : float
        Head at the start [m]: the HGL just upstream of station 0, or the
        tank level if ``source_at_rest``.
    flow : float or array (n-1,)
        Flow in each segment [m3/s] (see :func:`segment_flows`).
    diameter : float or array (n-1,)
        Inside diameter of each segment [m].
    method : {"darcy-weisbach", "hazen-williams"}
        Friction law.
    roughness : float or array (n-1,), optional
        Absolute roughness [m] (Darcy-Weisbach).
    hw_c : float or array (n-1,), optional
        Hazen-Williams C [-] (Hazen-Williams).
    density : float
        Water density [kg/m3].
    viscosity : float
        Dynamic viscosity [Pa.s].
    point_k : array (n,), optional
        Loss coefficient at each station (fittings, bends, entrance at 0,
        exit at n-1), on the velocity head of the segment downstream of the
        station (the last station: its upstream segment).
    source_at_rest : bool
        True when station 0 draws from a tank whose level is ``source_head``
        (``hgl_upstream[0]``, in the tank, is then the level).
    end_at_rest : bool
        True when the last station discharges into a tank: ``velocity[-1]``,
        ``hgl[-1]`` and ``egl[-1]`` describe the water in the tank after the
        exit loss (V = 0, HGL = EGL = the level the flow reaches);
        ``hgl_upstream[-1]`` is the pipe side of the exit.

    Returns
    -------
    GradeLines

    Examples
    --------
    >>> gl = grade_lines([0.0, 1000.0], [0.0, 0.0], source_head=50.0, flow=0.1,
    ...                  diameter=0.3, method="hazen-williams", hw_c=130.0,
    ...                  density=998.2, viscosity=1.002e-3)
    >>> [round(float(h), 3) for h in gl.hgl]
    [50.0, 43.577]
    """
    s, z = _stations(station, axis)
    n = s.size
    m = n - 1
    Q = _per_segment(flow, m, "flow")
    D = _per_segment(diameter, m, "diameter")
    A = np.pi * D * D / 4.0
    V = Q / A
    L = np.hypot(np.diff(s), np.diff(z))
    Re = np.asarray(reynolds(V, D, density, viscosity), dtype=float)

    if method == "darcy-weisbach":
        eps = _per_segment(roughness, m, "roughness")
        f = np.asarray(friction_factor(Re, eps / D), dtype=float)
        hf = np.asarray(darcy_head_loss(L, D, V, f), dtype=float)
    elif method == "hazen-williams":
        C = _per_segment(hw_c, m, "hw_c")
        f = np.full(m, np.nan)
        hf = np.asarray(hazen_williams_head_loss(L, Q, D, C), dtype=float)
    else:
        raise ValueError(f"unknown friction method {method!r}; expected one of {METHODS}")

    # Per-station quantities: upstream segment (station 0: the first) and
    # downstream segment (last station: the last).
    V_dn = np.append(V, V[-1])
    V_up = np.insert(V, 0, V[0])
    Q_dn = np.append(Q, Q[-1])
    D_dn = np.append(D, D[-1])
    D_up = np.insert(D, 0, D[0])
    A_up = np.insert(A, 0, A[0])

    def signed_head(v):
        return v * np.abs(v) / (2.0 * G)

    # 1. Junction rule where the flow changes: HGL continuous, the upstream
    #    pipe now carries the downstream flow at velocity V_mid.
    V_mid = Q_dn / A_up
    junction = signed_head(V_up) - signed_head(V_mid)
    # 2. Diameter change (each K is 0 where there is no such change).
    change = sudden_expansion_k(D_up, D_dn) * signed_head(V_mid) + sudden_contraction_k(D_up, D_dn) * signed_head(V_dn)
    # 3. Fittings.
    if point_k is None:
        fittings = np.zeros(n)
    else:
        K = np.asarray(point_k, dtype=float)
        if K.shape != (n,):
            raise ValueError(f"point_k must have one value per station ({n}), got shape {K.shape}")
        fittings = K * signed_head(V_dn)
    minor = junction + change + fittings

    egl_source = float(source_head) + (0.0 if source_at_rest else signed_head(V[0]))
    friction_before = np.concatenate(([0.0], np.cumsum(hf)))
    e_dn = egl_source - np.cumsum(minor) - friction_before
    e_up = e_dn + minor

    # Velocity on either side of each station's point losses; a tank is at rest.
    v_after = V_dn.copy()
    v_before = V_up.copy()
    if end_at_rest:
        v_after[-1] = 0.0
    if source_at_rest:
        v_before[0] = 0.0
    hv = v_after * v_after / (2.0 * G)
    hgl = e_dn - hv
    egl = hgl + hv
    return GradeLines(
        velocity=v_after,
        hgl=hgl,
        egl=egl,
        pressure=density * G * (hgl - z),
        friction_loss=hf,
        minor_loss=minor,
        reynolds=Re,
        friction_factor=f,
        hgl_upstream=e_up - v_before * v_before / (2.0 * G),
        flow=Q,
    )


def segment_flows(station, inflow, offtake_station=(), offtake_flow=()):
    """Flow in each segment given the inflow at station 0 and offtakes.

    An offtake at position x takes its flow out of every segment that starts
    at or after x (within :data:`~gisgrade.arrays.STATION_TOLERANCE`, 1 mm, of a
    station counts as at it); an
    offtake between stations therefore acts at the next station downstream
    (the segment it lies in carries the full upstream flow: conservative).
    Station the pipe at every offtake to place it exactly.

    Parameters
    ----------
    station : array (n,)
        Stations [m], strictly increasing.
    inflow : float
        Flow entering at station 0 [m3/s].
    offtake_station : array (k,)
        Where water leaves [m], within [station[0], station[-1]].
    offtake_flow : array (k,)
        Flow leaving at each offtake [m3/s].

    Returns
    -------
    flow : array (n-1,)
        Flow per segment [m3/s] (negative if offtakes exceed the inflow:
        the caller should treat that as an input error).

    Examples
    --------
    >>> segment_flows([0, 100, 200, 300], 0.1, [100, 200], [0.02, 0.03]).tolist()
    [0.1, 0.08, 0.05]
    """
    s = np.asarray(station, dtype=float)
    xs = np.atleast_1d(np.asarray(offtake_station, dtype=float))
    qs = np.atleast_1d(np.asarray(offtake_flow, dtype=float))
    if xs.shape != qs.shape:
        raise ValueError("offtake_station and offtake_flow must have the same length")
    if np.any(xs < s[0] - STATION_TOLERANCE) or np.any(xs > s[-1] + STATION_TOLERANCE):
        raise ValueError("offtake outside the stationed pipe")
    idx = np.searchsorted(s, xs - STATION_TOLERANCE, side="left")
    taken = np.cumsum(np.bincount(idx, weights=qs, minlength=s.size))
    return float(inflow) - taken[: s.size - 1]


def solve_flow(
    station,
    axis,
    *,
    head_start,
    head_end,
    diameter,
    method="darcy-weisbach",
    roughness=None,
    hw_c=None,
    density,
    viscosity,
    point_k=None,
    source_at_rest=False,
    end_at_rest=False,
    offtake_station=(),
    offtake_flow=(),
) -> float:
    """Inflow at station 0 that joins two known heads, with offtakes on the way.

    Finds Q such that the head at the end, after any point loss there (an
    exit loss in ``point_k[-1]``), equals ``head_end``: the HGL
    (``end_at_rest=False``, a connection to a main) or the still-water level
    of a receiving tank (``end_at_rest=True``; with the exit K = 1 this is
    the classic tank-to-tank energy equation). Offtakes leave fixed flows
    (:func:`segment_flows`), so Q is at least their sum (forward flow in
    every segment). Brent's method on a bracket grown by doubling from 1 m/s
    more than that sum in the smallest pipe; the end head is met to well
    under 1 mm.

    Parameters
    ----------
    station, axis, diameter, method, roughness, hw_c, density, viscosity,
    point_k, source_at_rest, end_at_rest
        As for :func:`grade_lines` (``head_start`` is its ``source_head``).
    head_start : float
        Head at the start [m].
    head_end : float
        Head at the end [m].
    offtake_station, offtake_flow : arrays (k,), optional
        Offtake positions [m] and flows [m3/s].

    Returns
    -------
    flow : float
        Inflow [m3/s], >= the offtakes' sum.

    Raises
    ------
    ValueError
        If the end head is out of reach with forward flow: even the
        smallest inflow (the offtakes' sum, or none) leaves the end below
        ``head_end``.

    Examples
    --------
    >>> q = solve_flow([0.0, 1000.0], [0.0, 0.0], head_start=50.0, head_end=43.577,
    ...                diameter=0.3, method="hazen-williams", hw_c=130.0,
    ...                density=998.2, viscosity=1.002e-3)
    >>> round(q, 4)
    0.1
    """
    kwargs = dict(
        diameter=diameter, method=method, roughness=roughness, hw_c=hw_c,
        density=density, viscosity=viscosity, point_k=point_k,
        source_at_rest=source_at_rest, end_at_rest=end_at_rest,
    )

    def residual(q):
        flows = segment_flows(station, q, offtake_station, offtake_flow)
        gl = grade_lines(station, axis, source_head=head_start, flow=flows, **kwargs)
        return float(gl.hgl[-1]) - float(head_end)

    lo = float(np.sum(offtake_flow)) if np.size(offtake_flow) else 0.0
    r_lo = residual(lo)
    if r_lo == 0.0:
        return lo
    if r_lo < 0.0:
        raise ValueError("head_end is above what head_start gives" +
                         (" even with only the offtakes flowing" if lo > 0 else "") +
                         ": the flow would run backwards")
    d = np.min(np.asarray(diameter, dtype=float))
    hi = lo + np.pi * d * d / 4.0  # 1 m/s more in the smallest pipe
    for _ in range(200):
        if residual(hi) < 0.0:
            break
        hi = lo + 2.0 * (hi - lo)
    else:  # pragma: no cover - only for absurd inputs
        raise ValueError("could not bracket the flow between the two heads")
    from scipy.optimize import brentq  # here: scipy.optimize takes half a second to import

    return float(brentq(residual, lo, hi, xtol=1e-14, rtol=1e-15, maxiter=500))


def required_source_head(
    station,
    axis,
    *,
    min_pressure,
    flow,
    diameter,
    method="darcy-weisbach",
    roughness=None,
    hw_c=None,
    density,
    viscosity,
    point_k=None,
    source_at_rest=False,
    end_at_rest=False,
    where=None,
) -> float:
    """Smallest source head that keeps pressure >= ``min_pressure``.

    Losses do not depend on the source head, so the grade lines for any
    source head are a vertical shift of those for another: compute them once
    and shift. Both sides of every point loss count (``hgl`` and
    ``hgl_upstream``; the HGL rises across an expansion).

    Parameters
    ----------
    station, axis, flow, diameter, method, roughness, hw_c, density,
    viscosity, point_k, source_at_rest, end_at_rest
        As for :func:`grade_lines`.
    min_pressure : float
        Required minimum pressure at the pipe axis [Pa].
    where : array (n,) of bool, optional
        Stations where the minimum applies (e.g. only the last one);
        default everywhere.

    Returns
    -------
    head : float
        Required source head [m] (as ``source_head`` of :func:`grade_lines`).

    Examples
    --------
    >>> h = required_source_head([0.0, 1000.0], [0.0, 10.0], min_pressure=0.0,
    ...                          flow=0.0, diameter=0.3, roughness=1e-4,
    ...                          density=998.2, viscosity=1.002e-3)
    >>> float(h)
    10.0
    """
    gl = grade_lines(
        station, axis, source_head=0.0, flow=flow, diameter=diameter, method=method,
        roughness=roughness, hw_c=hw_c, density=density, viscosity=viscosity,
        point_k=point_k, source_at_rest=source_at_rest, end_at_rest=end_at_rest,
    )
    z = np.asarray(axis, dtype=float)
    head_needed = float(min_pressure) / (density * G) + z
    need = np.maximum(head_needed - gl.hgl, head_needed - gl.hgl_upstream)
    if where is not None:
        need = need[np.asarray(where, dtype=bool)]
    return float(np.max(need))
