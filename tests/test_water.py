"""Water properties against the IAPWS formulations (the `iapws` package).

References used by the checks:
- IAPWS-95 (Wagner & Pruss 2002) via iapws.IAPWS95: density at 0.101325 MPa
  and saturation pressure (x = 0), and its viscosity (IAPWS 2008 formulation,
  which iapws.IAPWS95 evaluates as ``.mu``).
- IAPWS-IF97 region 4 (iapws.iapws97._PSat_T) for the saturation pressure at
  exactly 0 degC, where IAPWS-95 saturation is undefined (below the triple
  point 273.16 K).
"""

import numpy as np
import pytest
from iapws import IAPWS95
from iapws._iapws import _Viscosity
from iapws.iapws97 import _PSat_T

from gisgrade.hydraulics import water

P_ATM_MPA = 0.101325
# 0-40 degC every 2 K: 21 points, IAPWS-95 is slow-ish but this stays < 1 s.
T_GRID = np.linspace(273.15, 313.15, 21)


@pytest.fixture(scope="module")
def iapws_liquid():
    states = [IAPWS95(T=float(t), P=P_ATM_MPA) for t in T_GRID]
    rho = np.array([s.rho for s in states])
    mu = np.array([s.mu for s in states])
    return rho, mu


def test_density_matches_iapws95(iapws_liquid):
    # IAPWS-95 density at 1 atm; Tanaka et al. 2001 agrees to ~1 ppm.
    # Tolerance 1e-5 (0.001 %), ten times tighter than the 0.01 % target.
    rho_ref, _ = iapws_liquid
    np.testing.assert_allclose(water.density(T_GRID), rho_ref, rtol=1e-5)


def test_viscosity_matches_iapws2008(iapws_liquid):
    # IAPWS 2008 viscosity (via IAPWS95(...).mu, cross-checked with
    # iapws._iapws._Viscosity at the same state). Kestin et al. 1978 differs
    # by at most ~0.14 % over 0-40 degC; tolerance 0.2 %.
    rho_ref, mu_ref = iapws_liquid
    mu_direct = np.array([_Viscosity(r, t) for r, t in zip(rho_ref, T_GRID)])
    np.testing.assert_allclose(mu_direct, mu_ref, rtol=1e-12)
    np.testing.assert_allclose(water.dynamic_viscosity(T_GRID), mu_ref, rtol=2e-3)


def test_kinematic_viscosity_is_mu_over_rho(iapws_liquid):
    # nu = mu/rho with both from IAPWS (IAPWS-95 density, IAPWS 2008 viscosity).
    rho_ref, mu_ref = iapws_liquid
    np.testing.assert_allclose(water.kinematic_viscosity(T_GRID), mu_ref / rho_ref, rtol=2e-3)


def test_vapour_pressure_matches_iapws95_saturation():
    # IAPWS-95 saturated liquid (x = 0) from the triple point to 40 degC;
    # Wagner & Pruss 1993 differs by < 0.01 %; tolerance 1e-4.
    T = np.linspace(273.16, 313.15, 21)
    p_ref = np.array([IAPWS95(T=float(t), x=0).P * 1e6 for t in T])
    np.testing.assert_allclose(water.vapour_pressure(T), p_ref, rtol=1e-4)


def test_vapour_pressure_at_zero_celsius_matches_if97():
    # IAPWS-IF97 region 4 is defined from 273.15 K.
    assert water.vapour_pressure(273.15) == pytest.approx(_PSat_T(273.15) * 1e6, rel=1e-4)


def test_scalar_in_scalar_out_and_array_shape():
    assert np.ndim(water.density(288.15)) == 0
    T = np.full((2, 3), 288.15)
    for fn in (water.density, water.dynamic_viscosity, water.kinematic_viscosity, water.vapour_pressure):
        assert fn(T).shape == (2, 3)
