"""Standard atmosphere against fluids' U.S. Standard Atmosphere 1976 model."""
import numpy as np
import pytest
from fluids.atmosphere import ATMOSPHERE_1976

from gisgrade.hydraulics.atmosphere import atmospheric_pressure


def test_sea_level_is_standard_pressure():
    # ISO 2533 / US Standard Atmosphere 1976: 101 325 Pa at sea level (by definition).
    assert atmospheric_pressure(0.0) == 101325.0


def test_matches_us_standard_atmosphere_1976():
    # fluids.atmosphere.ATMOSPHERE_1976 takes geometric altitude and converts it to
    # geopotential height; our formula takes the elevation as geopotential. Over the
    # elevations of water mains (-100 to 3000 m) the two differ by < 0.02 %.
    z = np.linspace(-100.0, 3000.0, 32)
    ref = np.array([ATMOSPHERE_1976(float(h)).P for h in z])
    np.testing.assert_allclose(atmospheric_pressure(z), ref, rtol=2e-4)
    # Table value (US Standard Atmosphere 1976, from memory): 89 876 Pa at 1000 m.
    assert atmospheric_pressure(1000.0) == pytest.approx(89876.0, rel=5e-5)


def test_vapour_floor_against_iapws_and_the_1976_atmosphere():
    # The lowest gauge pressure water holds: IAPWS-IF97 saturation pressure (iapws.iapws97,
    # Psat at T) less the US Standard Atmosphere 1976 (fluids) at the elevation.
    from iapws.iapws97 import _PSat_T

    from gisgrade.hydraulics.atmosphere import vapour_floor
    for z, t in ((0.0, 288.15), (1500.0, 278.15), (400.0, 303.15)):
        ref = _PSat_T(t) * 1e6 - ATMOSPHERE_1976(z).P
        assert float(vapour_floor(z, t)) == pytest.approx(ref, rel=5e-4)
