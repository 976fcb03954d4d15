"""Friction factor and head loss against outside references.

Reference for the turbulent friction factor: ``fluids.friction.Colebrook``
with its default tol=None, which evaluates the exact Lambert-W solution of
Colebrook-White (not Clamond's iteration used in our code); where that
overflows (very large eps/D * Re) fluids falls back to a secant solve of the
Colebrook equation itself.
"""

import math

import numpy as np
import pytest
from fluids.friction import Colebrook
from scipy.optimize import brentq

from gisgrade.hydraulics import friction as fr
from gisgrade.hydraulics.water import density

# Unit definitions (exact by definition: NIST SP 811).
FT = 0.3048
INCH = 0.0254
GPM = 3.785411784e-3 / 60.0
PSI = 6894.757293168361


def test_colebrook_matches_fluids_on_dense_grid():
    Re = np.geomspace(4e3, 1e8, 120)
    eD = np.concatenate([[0.0], np.geomspace(1e-8, 0.05, 40)])
    R, E = np.meshgrid(Re, eD)
    ref = np.array([Colebrook(float(r), float(e)) for r, e in zip(R.ravel(), E.ravel())]).reshape(R.shape)
    np.testing.assert_allclose(fr.colebrook(R, E), ref, rtol=1e-9)
    np.testing.assert_allclose(fr.friction_factor(R, E), ref, rtol=1e-9)


def test_colebrook_satisfies_its_equation():
    # Exact check: residual of 1/sqrt(f) + 2 log10(eps/3.7D + 2.51/(Re sqrt f)).
    Re = np.geomspace(4e3, 1e8, 50)[:, None]
    eD = np.array([0.0, 1e-6, 1e-4, 1e-2, 0.05])[None, :]
    f = fr.colebrook(Re, eD)
    resid = 1 / np.sqrt(f) + 2 * np.log10(eD / 3.7 + 2.51 / (Re * np.sqrt(f)))
    assert np.abs(resid).max() < 1e-12


def _colebrook_grid(Re, eD):
    R, E = np.meshgrid(Re, eD)
    return R, E, np.array([Colebrook(float(r), float(e)) for r, e in zip(R.ravel(), E.ravel())]).reshape(R.shape)


def test_swamee_jain_accuracy():
    # Swamee & Jain 1976 state +-1 % of Colebrook for 5e3 <= Re <= 1e8,
    # 1e-6 <= eps/D <= 1e-2. Against the exact Colebrook solution (fluids
    # Colebrook, Lambert W) that holds at 1 % for 1e4 <= Re <= 1e7 with
    # eps/D <= 1e-3 ...
    R, E, ref = _colebrook_grid(np.geomspace(1e4, 1e7, 40), np.concatenate([[0.0], np.geomspace(1e-6, 1e-3, 16)]))
    np.testing.assert_allclose(fr.swamee_jain(R, E), ref, rtol=0.01)
    # ... and over the whole stated range the largest deviation is 2.8 %, at
    # Re = 5e3, eps/D = 1e-2 (the figure docs/hydraulics.md gives).
    R, E, ref = _colebrook_grid(np.geomspace(5e3, 1e8, 40), np.concatenate([[0.0], np.geomspace(1e-6, 1e-2, 21)]))
    err = np.abs(fr.swamee_jain(R, E) / ref - 1)
    assert 0.027 < err.max() < 0.029
    assert R.ravel()[err.argmax()] == 5e3 and E.ravel()[err.argmax()] == pytest.approx(1e-2)


def test_laminar_is_hagen_poiseuille():
    # Hagen-Poiseuille: f = 64/Re exactly, independent of roughness.
    Re = np.linspace(1.0, 1999.0, 200)
    for e in (0.0, 1e-3, 0.05):
        np.testing.assert_allclose(fr.friction_factor(Re, e), 64.0 / Re, rtol=1e-15)
    # Head loss then equals the analytic laminar law h = 32 mu L V / (rho g D^2).
    rho, mu, D, L, V = 998.2, 1.002e-3, 0.01, 10.0, 0.1
    f = fr.friction_factor(fr.reynolds(V, D, rho, mu), 0.0)
    assert fr.darcy_head_loss(L, D, V, f) == pytest.approx(32 * mu * L * V / (rho * fr.G * D**2), rel=1e-12)


@pytest.mark.parametrize("eD", [0.0, 1e-5, 1e-3, 0.01, 0.05])
def test_transition_blend_is_continuous(eD):
    # Value continuity at both ends: laminar 64/Re at 2000, fluids' Colebrook at 4000.
    eps = 1e-9
    lo = fr.friction_factor(np.array([2000.0 - eps, 2000.0]), eD)
    hi = fr.friction_factor(np.array([4000.0 - eps, 4000.0]), eD)
    assert lo[0] == pytest.approx(64 / 2000, rel=1e-9) and lo[1] == pytest.approx(64 / 2000, rel=1e-12)
    assert hi[0] == pytest.approx(Colebrook(4000.0, eD), rel=1e-9)
    assert hi[1] == pytest.approx(Colebrook(4000.0, eD), rel=1e-9)
    # Slope continuity (a cubic Hermite blend matches slopes): one-sided differences agree.
    h = 1e-3
    for Re0 in (2000.0, 4000.0):
        left = (fr.friction_factor(Re0, eD) - fr.friction_factor(Re0 - h, eD)) / h
        right = (fr.friction_factor(Re0 + h, eD) - fr.friction_factor(Re0, eD)) / h
        assert left == pytest.approx(right, rel=1e-3, abs=1e-9)
    # No wild excursion inside: stays between laminar and turbulent bounds.
    f = fr.friction_factor(np.linspace(2000, 4000, 401), eD)
    assert f.min() >= 0.9 * min(0.032, Colebrook(4000.0, eD))
    assert f.max() <= 1.1 * max(0.032, Colebrook(4000.0, eD))


def test_transition_head_loss_rises_with_flow():
    # Friction loss ~ f Re^2 must increase with flow through the blend, so a
    # flow solve cannot find two answers (exact property of the physics).
    Re = np.linspace(1500, 4500, 3001)
    for eD in (0.0, 1e-3, 0.05):
        assert np.all(np.diff(fr.friction_factor(Re, eD) * Re**2) > 0)


def test_zero_flow_gives_zero_loss():
    f = fr.friction_factor(0.0, 1e-4)
    assert math.isinf(f)
    assert fr.darcy_head_loss(100.0, 0.3, 0.0, f) == 0.0
    assert fr.hazen_williams_head_loss(100.0, 0.0, 0.3, 130.0) == 0.0


def test_losses_are_sign_preserving():
    assert fr.darcy_head_loss(100.0, 0.3, -1.0, 0.02) == -fr.darcy_head_loss(100.0, 0.3, 1.0, 0.02)
    assert fr.hazen_williams_head_loss(100.0, -0.05, 0.3, 130) == -fr.hazen_williams_head_loss(100.0, 0.05, 0.3, 130)
    assert fr.reynolds(-1.0, 0.3, 1000.0, 1e-3) == fr.reynolds(1.0, 0.3, 1000.0, 1e-3)


def test_velocity_head_uses_standard_gravity():
    # g = 9.80665 m/s2 (standard gravity, exact); V = 2 m/s -> 4/19.6133 m.
    assert fr.velocity_head(2.0) == 4.0 / 19.6133


def test_white_type_2_problem():
    # White, F. M., Fluid Mechanics, McGraw-Hill, chapter 6, the "type 2"
    # (find the flow) example: oil rho = 950 kg/m3, nu = 2e-5 m2/s, d = 30 cm,
    # L = 100 m, head loss 8 m, eps/d = 0.0002; answer V = 4.84 m/s,
    # Q = 0.342 m3/s (from memory; example number differs between editions).
    nu, d, L = 2e-5, 0.30, 100.0

    def resid(V):
        Re = fr.reynolds(V, d, 1.0, nu)  # rho/mu = 1/nu
        return fr.darcy_head_loss(L, d, V, fr.friction_factor(Re, 2e-4)) - 8.0

    V = brentq(resid, 0.1, 20.0, xtol=1e-12)
    assert V == pytest.approx(4.84, abs=0.005)
    assert V * math.pi * d**2 / 4 == pytest.approx(0.342, abs=0.0005)


def test_hazen_williams_si_vs_nfpa13_psi_per_ft():
    # NFPA 13 form: p = 4.52 Q^1.85/(C^1.85 d^4.87) psi/ft (gpm, in). Convert our
    # SI head loss per metre to psi/ft with water at 60 degF (the US form's
    # basis, common practice) density from Tanaka et al. Agreement within
    # ~1 %, the spread of the rounded constants and exponents.
    rho = density((60.0 - 32.0) / 1.8 + 273.15)
    q = np.array([50.0, 200.0, 500.0, 1000.0, 2500.0, 5000.0])
    d = np.array([2.0, 4.0, 6.065, 8.0, 12.0, 16.0])
    for c in (100.0, 120.0, 140.0, 150.0):
        h_per_m = fr.hazen_williams_head_loss(1.0, q * GPM, d * INCH, c)
        psi_per_ft = h_per_m * rho * fr.G / PSI * FT
        np.testing.assert_allclose(psi_per_ft, fr.hazen_williams_psi_per_ft(q, c, d), rtol=0.01)


def test_hazen_williams_si_vs_original_velocity_form():
    # Williams & Hazen (1920): V = k C R^0.63 S^0.54 with k = 0.849 in SI
    # (R = D/4 hydraulic radius, S = friction slope). Inverting gives
    # S = (V/(0.849 C R^0.63))^(1/0.54); agreement within ~1 % (the SI
    # constant and exponents are rounded from this form).
    Q = np.array([0.01, 0.05, 0.1, 0.5])
    D = np.array([0.1, 0.2, 0.3, 0.6])
    C = 130.0
    V = Q / (math.pi * D**2 / 4)
    S_ref = (V / (0.849 * C * (D / 4) ** 0.63)) ** (1 / 0.54)
    np.testing.assert_allclose(fr.hazen_williams_head_loss(1.0, Q, D, C), S_ref, rtol=0.01)


def test_hazen_williams_handbook_example():
    # engineeringtoolbox.com, "Hazen-Williams friction loss equation" example:
    # 200 gpm in 3.048 in ID PE pipe, C = 140 -> about 9 ft per 100 ft
    # (their US constant 0.2083 and exponent 4.8655; answer rounded to 1 ft).
    h = fr.hazen_williams_head_loss(100.0, 200 * GPM, 3.048 * INCH, 140.0)  # m per 100 m = ft per 100 ft
    assert h == pytest.approx(9.0, abs=0.5)
