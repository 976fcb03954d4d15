"""Minor-loss coefficients against the `fluids` library's published correlations."""

import math

import numpy as np
import pytest
from fluids import fittings as ff

from gisgrade.errors import InputError
from gisgrade.hydraulics import minor
from gisgrade.hydraulics.friction import friction_factor

SIZES = np.array([0.1, 0.15, 0.2, 0.3, 0.45, 0.6])  # m, the sizes the Crane ranges cover


@pytest.mark.parametrize("angle_deg", [11.25, 22.5, 45.0, 60.0, 90.0, 135.0, 180.0])
@pytest.mark.parametrize("rD", [1.0, 1.5, 3.0, 5.0])
def test_bend_matches_fluids_rennels(angle_deg, rD):
    # fluids.fittings.bend_rounded(method="Rennels"), Rennels & Hudson 2012.
    for fd in (0.012, 0.018, 0.03):
        ref = ff.bend_rounded(Di=0.3, angle=angle_deg, fd=fd, bend_diameters=rD, method="Rennels")
        assert minor.bend_k(math.radians(angle_deg), rD, fd=fd) == pytest.approx(ref, rel=1e-12)


def test_bend_default_friction_factor_matches_fluids():
    # Without fd, fluids computes f by Clamond from Re and roughness; ours by Colebrook.
    for Re, eD in ((1e5, 0.0), (3e5, 1e-4), (2e6, 1e-3)):
        ref = ff.bend_rounded(Di=0.3, angle=45.0, bend_diameters=1.5, Re=Re, roughness=eD * 0.3)
        assert minor.bend_k(math.pi / 4, Re=Re, rel_roughness=eD) == pytest.approx(ref, rel=1e-9)


def test_bend_vectorized_and_zero_angle():
    angles = np.radians([0.0, 11.25, 22.5, 45.0, 90.0])
    K = minor.bend_k(angles)
    assert K.shape == (5,) and K[0] == 0.0 and np.all(np.diff(K) > 0)
    assert minor.bend_k(-math.pi / 4) == minor.bend_k(math.pi / 4)  # down bend = up bend


def test_bend_90_near_crane_tp410():
    # Crane TP-410 K for 90 deg rounded bends, r/D = 1.5, by pipe size
    # (fluids.fittings.bend_rounded_Crane); the two published methods agree
    # within ~25 % for 100-600 mm pipe (Crane's K falls with size via fT).
    for D in SIZES:
        crane = ff.bend_rounded_Crane(Di=D, angle=90.0, bend_diameters=1.5)
        ours = minor.bend_k(math.pi / 2, 1.5, fd=float(friction_factor(3e5, 0.0)))
        assert ours == pytest.approx(crane, rel=0.25)


def test_bend_defaults_within_field_ranges():
    # Typical K (field notes, from memory): 90 deg 0.2-0.4, 45 deg ~0.2, 22.5 deg ~0.1.
    assert 0.15 <= minor.NAMED_K["bend_90"].k <= 0.4
    assert 0.1 <= minor.NAMED_K["bend_45"].k <= 0.25
    assert 0.05 <= minor.NAMED_K["bend_22_5"].k <= 0.15


def test_sudden_expansion_matches_fluids():
    # fluids.fittings.diffuser_sharp (Rennels: Borda-Carnot), on the upstream velocity head.
    for d1, d2 in ((0.1, 0.15), (0.2, 0.3), (0.5, 1.0), (0.3, 0.31)):
        assert minor.sudden_expansion_k(d1, d2) == pytest.approx(ff.diffuser_sharp(Di1=d1, Di2=d2), rel=1e-12)
    # Vectorized; no expansion -> 0.
    np.testing.assert_array_equal(minor.sudden_expansion_k(np.array([0.3, 0.3]), np.array([0.3, 0.2])), [0.0, 0.0])


def test_sudden_contraction_matches_fluids():
    # fluids.fittings.contraction_sharp(method="Rennels"), on the downstream velocity head.
    for d1, d2 in ((1.0, 0.4), (0.3, 0.2), (0.15, 0.1), (0.6, 0.59)):
        assert minor.sudden_contraction_k(d1, d2) == pytest.approx(ff.contraction_sharp(Di1=d1, Di2=d2), rel=1e-12)
    # Hooper 1988 (fluids method="Hooper", turbulent) agrees within 15 %.
    for d1, d2 in ((3.0, 2.0), (1.0, 0.5), (0.3, 0.1)):
        ref = ff.contraction_sharp(d1, d2, Re=1e6, method="Hooper")
        assert minor.sudden_contraction_k(d1, d2) == pytest.approx(ref, rel=0.15)
    assert minor.sudden_contraction_k(0.2, 0.3) == 0.0


def _crane_range(fn):
    vals = np.array([fn(D) for D in SIZES])
    return vals.min(), vals.max()


CRANE_VALVES = [
        ("gate_valve_open", lambda D: ff.K_gate_valve_Crane(D, D, 0.0)),
        ("butterfly_valve_open", lambda D: ff.K_butterfly_valve_Crane(D)),
        ("ball_valve_open", lambda D: ff.K_ball_valve_Crane(D, D, 0.0)),
        ("swing_check_valve", lambda D: ff.K_swing_check_valve_Crane(D)),
        # Crane TP-410 standard tee: through run 20 fT, through branch 60 fT
        # (n from memory; fT from fluids.fittings.ft_Crane).
        ("tee_through", lambda D: 20 * ff.ft_Crane(D)),
        ("tee_branch", lambda D: 60 * ff.ft_Crane(D)),
]


@pytest.mark.parametrize("name, fn", CRANE_VALVES)
def test_named_valves_within_crane_range(name, fn):
    lo, hi = _crane_range(fn)
    assert lo <= minor.k_for(name) <= hi


def test_named_entrances_and_exit_match_fluids():
    assert minor.k_for("entrance_sharp") == ff.entrance_sharp(method="Crane")
    assert minor.k_for("entrance_rounded") == pytest.approx(ff.entrance_rounded(0.3, 0.15 * 0.3, method="Crane"))
    assert minor.k_for("entrance_projecting") == pytest.approx(ff.entrance_distance(0.3, 1.0, method="Crane"))
    assert minor.k_for("exit") == ff.exit_normal()


BENDS = {"bend_90": 90.0, "bend_45": 45.0, "bend_22_5": 22.5, "bend_11_25": 11.25}
ENDS = ("entrance_sharp", "entrance_rounded", "entrance_projecting", "exit")


@pytest.mark.parametrize("name, angle", BENDS.items())
def test_named_bends_match_fluids_rennels(name, angle):
    # fluids.fittings.bend_rounded (Rennels & Hudson 2012), r/D = 1.5, smooth pipe,
    # f from fluids' friction factor at Re = 3e5 (the documented defaults); the
    # table keeps three decimals.
    ref = ff.bend_rounded(Di=0.3, angle=angle, bend_diameters=1.5, Re=3e5, roughness=0.0, method="Rennels")
    assert minor.NAMED_K[name].k == pytest.approx(ref, abs=5e-4)
    assert "Rennels" in minor.NAMED_K[name].source


def test_every_named_k_is_checked_against_its_source():
    # Each named K is compared above with the reference its source names:
    # Crane TP-410 valves and tees (range over 100-600 mm), Crane entrances and
    # the Borda-Carnot exit (fluids), Rennels bends (fluids). A new name must
    # join one of those checks.
    valves = {name for name, _ in CRANE_VALVES}
    assert set(minor.NAMED_K) == valves | set(ENDS) | set(BENDS)
    for name in valves | set(ENDS[:3]):
        assert minor.NAMED_K[name].source.startswith("Crane TP-410"), name
    assert "Borda-Carnot" in minor.NAMED_K["exit"].source


def test_k_for_unknown_name_suggests_nearest():
    with pytest.raises(InputError, match="'gate_valve_opne'.*did you mean 'gate_valve_open'"):
        minor.k_for("gate_valve_opne")
    assert minor.k_for("Butterfly-valve open") == minor.NAMED_K["butterfly_valve_open"].k
