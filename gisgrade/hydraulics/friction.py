"""Pipe friction: Reynolds number, Darcy friction factor, head loss.

All functions are vectorized over numpy arrays (scalars in, scalars out)
and use SI units. Head losses are in metres of the flowing liquid.

References
----------
.. [1] Colebrook, C. F. "Turbulent flow in pipes, with particular reference
   to the transition region between the smooth and rough pipe laws."
   Journal of the Institution of Civil Engineers 11, no. 4 (1939): 133-156.
.. [2] Clamond, D. "Efficient resolution of the Colebrook equation."
   Industrial & Engineering Chemistry Research 48, no. 7 (2009): 3665-3671.
   doi:10.1021/ie801626g
.. [3] Swamee, P. K., Jain, A. K. "Explicit equations for pipe-flow
   problems." Journal of the Hydraulics Division (ASCE) 102, no. 5 (1976):
   657-664.
.. [4] Burden, R. L., Faires, J. D. "Numerical Analysis." 9th ed.
   Brooks/Cole, 2011, chapter 3 (Hermite interpolation).
.. [5] Williams, G. S., Hazen, A. "Hydraulic Tables." 3rd ed. John Wiley
   & Sons, New York, 1920.
.. [6] NFPA 13, "Standard for the Installation of Sprinkler Systems",
   National Fire Protection Association (hydraulic calculation section,
   friction loss formula in psi per foot).
"""

from __future__ import annotations

import numpy as np

#: Standard acceleration of gravity [m/s2] (CGPM 1901, exact).
G = 9.80665

#: Reynolds number below which flow is taken as laminar (f = 64/Re).
RE_LAMINAR = 2000.0
#: Reynolds number at and above which Colebrook-White applies.
RE_TURBULENT = 4000.0

#: SI Hazen-Williams constant (Q in m3/s, D in m); sources quote 10.67-10.68.
HW_SI_CONSTANT = 10.67


def _out(a):
    """Return a 0-d array as a numpy scalar, anything else unchanged."""
    return a[()] if isinstance(a, np.ndarray) and a.ndim == 0 else a


def reynolds(velocity, diameter, density, viscosity):
    """Reynolds number Re = rho |V| D / mu.

    Parameters
    ----------
    velocity : float or array
        Mean velocity [m/s]; the sign (flow direction) is ignored.
    diameter : float or array
        Inside diameter [m].
    density : float or array
        Density [kg/m3].
    viscosity : float or array
        Dynamic viscosity [Pa.s].

    Returns
    -------
    Re : float or array
        Reynolds number [-].

    Examples
    --------
    >>> round(float(reynolds(1.0, 0.3, 998.2, 1.002e-3)))
    298862
    """
    v = np.abs(np.asarray(velocity, dtype=float))
    return _out(np.asarray(density, dtype=float) * v * np.asarray(diameter, dtype=float) / np.asarray(viscosity, dtype=float))


def colebrook(Re, rel_roughness):
    """Darcy friction factor from the Colebrook-White equation [1].

    1/sqrt(f) = -2 log10(eps/(3.7 D) + 2.51/(Re sqrt(f))), solved to machine
    precision with Clamond's explicit-iterative scheme [2] (two steps of a
    third-order iteration on a Lambert-W form), fully vectorized.

    Parameters
    ----------
    Re : float or array
        Reynolds number [-], > 0 (turbulent use: Re >= 4000).
    rel_roughness : float or array
        Relative roughness eps/D [-], >= 0.

    Returns
    -------
    f : float or array
        Darcy friction factor [-].

    Examples
    --------
    >>> round(float(colebrook(1e5, 1e-4)), 12)
    0.018513866077
    """
    Re = np.asarray(Re, dtype=float)
    eD = np.asarray(rel_roughness, dtype=float)
    # Constants of Clamond (2009): ln(10)/18.574 and ln(ln(10)/5.02).
    X1 = eD * Re * 0.12396818633541755
    X2 = np.log(Re) - 0.7793974884556819
    F = X2 - 0.2
    X1F = X1 + F
    X1F1 = 1.0 + X1F
    E = (np.log(X1F) - 0.2) / X1F1
    F = F - (X1F1 + 0.5 * E) * E * X1F / (X1F1 + E * (1.0 + E / 3.0))
    X1F = X1 + F
    X1F1 = 1.0 + X1F
    E = (np.log(X1F) + F - X2) / X1F1
    F = F - (X1F1 + 0.5 * E) * E * X1F / (X1F1 + E * (1.0 + E / 3.0))
    # f = (ln(10)/2 / F)^2
    return _out((1.151292546497023 / F) ** 2)


def swamee_jain(Re, rel_roughness):
    """Darcy friction factor by the explicit Swamee-Jain formula [3].

    f = 0.25 / [log10(eps/(3.7 D) + 5.74/Re^0.9)]^2. Swamee & Jain state
    +-1 % of Colebrook for 5e3 <= Re <= 1e8 and 1e-6 <= eps/D <= 1e-2 [3].
    Measured against the exact Colebrook solution the largest deviation in
    that range is 2.8 % (Re = 5e3, eps/D = 1e-2) and 1.4 % at Re = 1e8 in
    smooth pipe; it is within 1 % for 1e4 <= Re <= 1e7 and eps/D <= 1e-3.
    Use :func:`colebrook` where the last percent matters.

    Parameters
    ----------
    Re : float or array
        Reynolds number [-].
    rel_roughness : float or array
        Relative roughness eps/D [-].

    Returns
    -------
    f : float or array
        Darcy friction factor [-].

    Examples
    --------
    >>> round(float(swamee_jain(1e5, 1e-4)), 5)
    0.01845
    """
    Re = np.asarray(Re, dtype=float)
    eD = np.asarray(rel_roughness, dtype=float)
    y = np.log10(eD / 3.7 + 5.74 / Re**0.9)
    return _out(0.25 / (y * y))


def _colebrook_dfdRe(Re, rel_roughness, f):
    """Derivative df/dRe of the Colebrook friction factor (implicit differentiation)."""
    x = 1.0 / np.sqrt(f)
    c = 2.0 / np.log(10.0)
    s = rel_roughness / 3.7 + 2.51 * x / Re
    dxdRe = c * 2.51 * x / (Re * Re * s + c * 2.51 * Re)
    return -2.0 * dxdRe / (x * x * x)


def friction_factor(Re, rel_roughness):
    """Darcy friction factor for any Reynolds number.

    - Re < 2000: laminar, f = 64/Re (Hagen-Poiseuille);
    - Re >= 4000: Colebrook-White, solved as in :func:`colebrook`;
    - 2000 <= Re < 4000: a cubic Hermite interpolation in Re [4] between
      the laminar value and slope (64/Re, -64/Re^2) at Re = 2000 and the
      Colebrook value and slope (slope by implicit differentiation) at
      Re = 4000, so f and df/dRe are continuous at both ends. The transition
      region has no physical law; the blend only keeps a flow solve smooth;
    - Re == 0: inf (no flow); :func:`darcy_head_loss` returns zero loss
      for zero velocity whatever f is.

    Parameters
    ----------
    Re : float or array
        Reynolds number [-], >= 0.
    rel_roughness : float or array
        Relative roughness eps/D [-], >= 0.

    Returns
    -------
    f : float or array
        Darcy friction factor [-].

    Examples
    --------
    >>> float(friction_factor(1000.0, 1e-4))
    0.064
    >>> round(float(friction_factor(3000.0, 1e-4)), 5)
    0.03274
    """
    Re, eD = np.broadcast_arrays(np.asarray(Re, dtype=float), np.asarray(rel_roughness, dtype=float))
    f = np.empty(Re.shape)
    lam = Re < RE_LAMINAR
    turb = Re >= RE_TURBULENT
    mid = ~lam & ~turb
    with np.errstate(divide="ignore"):
        f[lam] = 64.0 / Re[lam]
    f[turb] = colebrook(Re[turb], eD[turb])
    if mid.any():
        e = eD[mid]
        f4 = colebrook(RE_TURBULENT, e)
        d4 = _colebrook_dfdRe(RE_TURBULENT, e, f4)
        f2 = 64.0 / RE_LAMINAR
        d2 = -64.0 / RE_LAMINAR**2
        h = RE_TURBULENT - RE_LAMINAR
        t = (Re[mid] - RE_LAMINAR) / h
        # Cubic Hermite basis on [2000, 4000].
        h00 = (1 + 2 * t) * (1 - t) ** 2
        h10 = t * (1 - t) ** 2
        h01 = t * t * (3 - 2 * t)
        h11 = t * t * (t - 1)
        f[mid] = h00 * f2 + h10 * h * d2 + h01 * f4 + h11 * h * d4
    return _out(f)


def velocity_head(velocity):
    """Velocity head V^2/(2 g) with g = 9.80665 m/s2.

    Parameters
    ----------
    velocity : float or array
        Mean velocity [m/s].

    Returns
    -------
    hv : float or array
        Velocity head [m].

    Examples
    --------
    >>> round(float(velocity_head(1.0)), 6)
    0.050986
    """
    v = np.asarray(velocity, dtype=float)
    return _out(v * v / (2.0 * G))


def darcy_head_loss(length, diameter, velocity, f):
    """Friction head loss by Darcy-Weisbach, h = f (L/D) V|V|/(2 g).

    Sign-preserving: reverse flow (V < 0) gives a negative loss. Zero
    velocity gives zero loss even where f is inf (Re = 0).

    Parameters
    ----------
    length : float or array
        Pipe length [m].
    diameter : float or array
        Inside diameter [m].
    velocity : float or array
        Mean velocity [m/s].
    f : float or array
        Darcy friction factor [-].

    Returns
    -------
    h : float or array
        Head loss [m].

    Examples
    --------
    >>> round(float(darcy_head_loss(100.0, 0.3, 1.0, 0.02)), 6)
    0.339905
    """
    v = np.asarray(velocity, dtype=float)
    L = np.asarray(length, dtype=float)
    D = np.asarray(diameter, dtype=float)
    f = np.asarray(f, dtype=float)
    with np.errstate(invalid="ignore"):
        h = f * L / D * v * np.abs(v) / (2.0 * G)
    return _out(np.where(v == 0.0, 0.0, h))


def hazen_williams_head_loss(length, flow, diameter, c):
    """Friction head loss by Hazen-Williams in SI units [5].

    h = 10.67 L Q|Q|^0.852 / (C^1.852 D^4.8704). The constant appears as
    10.67-10.68 in different sources (it comes from converting the original
    US form); the spread is 0.1 %. Water only, turbulent flow, normal
    temperatures. Sign-preserving for reverse flow.

    Parameters
    ----------
    length : float or array
        Pipe length [m].
    flow : float or array
        Volumetric flow [m3/s].
    diameter : float or array
        Inside diameter [m].
    c : float or array
        Hazen-Williams C [-] (about 140-150 PVC, 130-140 new lined ductile
        iron, 80-100 aged cast iron; common practice).

    Returns
    -------
    h : float or array
        Head loss [m].

    Examples
    --------
    >>> round(float(hazen_williams_head_loss(1000.0, 0.1, 0.3, 130.0)), 4)
    6.4235
    """
    Q = np.asarray(flow, dtype=float)
    L = np.asarray(length, dtype=float)
    D = np.asarray(diameter, dtype=float)
    C = np.asarray(c, dtype=float)
    h = HW_SI_CONSTANT * L * np.sign(Q) * np.abs(Q) ** 1.852 / (C**1.852 * D**4.8704)
    return _out(h)


def hazen_williams_psi_per_ft(q_gpm, c, d_in):
    """Friction loss in psi per foot of pipe, the US form used in NFPA 13 [6].

    p = 4.52 Q^1.85 / (C^1.85 d^4.87), Q in US gpm, d in inches.

    Parameters
    ----------
    q_gpm : float or array
        Flow [US gal/min].
    c : float or array
        Hazen-Williams C [-].
    d_in : float or array
        Inside diameter [in].

    Returns
    -------
    p : float or array
        Friction loss [psi/ft]. (The only non-SI function here: it exists to
        check the SI form against the published US one.)

    Examples
    --------
    >>> round(float(hazen_williams_psi_per_ft(500.0, 120.0, 6.065)), 5)
    0.00976
    """
    Q = np.asarray(q_gpm, dtype=float)
    C = np.asarray(c, dtype=float)
    d = np.asarray(d_in, dtype=float)
    return _out(4.52 * np.sign(Q) * np.abs(Q) ** 1.85 / (C**1.85 * d**4.87))
