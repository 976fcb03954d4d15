"""Properties of liquid water at atmospheric pressure, 0-40 degC.

Every function takes the temperature ``T`` in kelvin (a scalar or a numpy
array) and returns SI values of the same shape. The correlations are
published fits valid over 0-40 degC (273.15-313.15 K), the range of water in
buried mains; outside it they extrapolate without warning, so callers should
check the temperature they accept (the project-file reader does).

References
----------
.. [1] Tanaka, M., Girard, G., Davis, R., Peuto, A., Bignell, N.
   "Recommended table for the density of water between 0 degC and 40 degC
   based on recent experimental reports." Metrologia 38, no. 4 (2001):
   301-309. doi:10.1088/0026-1394/38/4/3
.. [2] Kestin, J., Sokolov, M., Wakeham, W. A. "Viscosity of liquid water
   in the range -8 degC to 150 degC." Journal of Physical and Chemical
   Reference Data 7, no. 3 (1978): 941-948. doi:10.1063/1.555581
.. [3] Wagner, W., Pruss, A. "International equations for the saturation
   properties of ordinary water substance. Revised according to the
   international temperature scale of 1990." Journal of Physical and
   Chemical Reference Data 22, no. 3 (1993): 783-787. doi:10.1063/1.555926
   (the IAPWS supplementary release on saturation properties).
"""

from __future__ import annotations

import numpy as np

#: Range over which the correlations below are documented and tested [K].
T_MIN = 273.15
T_MAX = 313.15

_ZERO_C = 273.15

# Tanaka et al. 2001 [1], eq. 1 constants (t in degC, rho in kg/m3), for
# air-free water of the isotopic composition of SMOW at 101 325 Pa.
_TANAKA_A1 = -3.983035  # degC
_TANAKA_A2 = 301.797  # degC
_TANAKA_A3 = 522528.9  # degC^2
_TANAKA_A4 = 69.34881  # degC
_TANAKA_A5 = 999.974950  # kg/m3

# Kestin, Sokolov & Wakeham 1978 [2]: viscosity at 20 degC and 0.1 MPa.
_MU_20C = 1.002e-3  # Pa.s

# Wagner & Pruss 1993 [3]: critical point and coefficients.
_TC = 647.096  # K
_PC = 22.064e6  # Pa
_WP_A = (-7.85951783, 1.84408259, -11.7866497, 22.6807411, -15.9618719, 1.80122502)


def density(T):
    """Density of air-free water at 101 325 Pa, Tanaka et al. (2001) [1].

    rho = a5 [1 - (t + a1)^2 (t + a2) / (a3 (t + a4))], t in degC.

    Parameters
    ----------
    T : float or array
        Temperature [K], valid 273.15-313.15 K (0-40 degC).

    Returns
    -------
    rho : float or array
        Density [kg/m3].

    Examples
    --------
    >>> round(float(density(293.15)), 3)
    998.207
    """
    t = np.asarray(T, dtype=float) - _ZERO_C
    ta = t + _TANAKA_A1
    rho = _TANAKA_A5 * (1.0 - ta * ta * (t + _TANAKA_A2) / (_TANAKA_A3 * (t + _TANAKA_A4)))
    return rho[()] if rho.ndim == 0 else rho


def dynamic_viscosity(T):
    """Dynamic viscosity of water at 0.1 MPa, Kestin, Sokolov & Wakeham (1978) [2].

    log10(mu/mu20) = (20 - t)/(t + 96) [1.2378 - 1.303e-3 (20 - t)
    + 3.06e-6 (20 - t)^2 + 2.55e-8 (20 - t)^3], t in degC, mu20 = 1.002 mPa.s.

    Parameters
    ----------
    T : float or array
        Temperature [K], valid 273.15-313.15 K as used here (the source
        fits -8 to 150 degC).

    Returns
    -------
    mu : float or array
        Dynamic viscosity [Pa.s].

    Examples
    --------
    >>> round(float(dynamic_viscosity(293.15)) * 1e3, 4)
    1.002
    """
    t = np.asarray(T, dtype=float) - _ZERO_C
    d = 20.0 - t
    exponent = d / (t + 96.0) * (1.2378 - 1.303e-3 * d + 3.06e-6 * d * d + 2.55e-8 * d * d * d)
    mu = _MU_20C * 10.0**exponent
    return mu[()] if mu.ndim == 0 else mu


def kinematic_viscosity(T):
    """Kinematic viscosity nu = mu / rho of water at atmospheric pressure.

    Parameters
    ----------
    T : float or array
        Temperature [K], valid 273.15-313.15 K.

    Returns
    -------
    nu : float or array
        Kinematic viscosity [m2/s].

    Examples
    --------
    >>> round(float(kinematic_viscosity(293.15)) * 1e6, 4)
    1.0038
    """
    return dynamic_viscosity(T) / density(T)


def vapour_pressure(T):
    """Saturation (vapour) pressure of water, Wagner & Pruss (1993) [3].

    ln(p/pc) = (Tc/T)(a1 tau + a2 tau^1.5 + a3 tau^3 + a4 tau^3.5 + a5 tau^4
    + a6 tau^7.5), tau = 1 - T/Tc.

    Parameters
    ----------
    T : float or array
        Temperature [K]. The equation holds from the triple point
        (273.16 K) to the critical point; 273.15 K is 0.01 K below the
        triple point (supercooled liquid) and is within the documented
        0-40 degC range of this module.

    Returns
    -------
    p : float or array
        Vapour pressure [Pa].

    Examples
    --------
    >>> round(float(vapour_pressure(293.15)), 1)
    2339.2
    """
    T = np.asarray(T, dtype=float)
    tau = 1.0 - T / _TC
    a1, a2, a3, a4, a5, a6 = _WP_A
    poly = a1 * tau + a2 * tau**1.5 + a3 * tau**3 + a4 * tau**3.5 + a5 * tau**4 + a6 * tau**7.5
    p = _PC * np.exp(_TC / T * poly)
    return p[()] if p.ndim == 0 else p
