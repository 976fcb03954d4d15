"""Grade-line engine: invariants, textbook problems and fluids cross-checks."""

import math

import numpy as np
import pytest
from fluids import fittings as ff
from fluids.friction import Colebrook
from fluids.friction import friction_factor as fluids_friction_factor
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from gisgrade.hydraulics.gradelines import (
    GradeLines,
    grade_lines,
    required_source_head,
    segment_flows,
    solve_flow,
)

G = 9.80665  # standard gravity, exact
RHO, MU = 998.2, 1.002e-3  # water at 20 degC (rounded IAPWS values)


def _profile(n=41, seed=0, length=2000.0):
    rng = np.random.default_rng(seed)
    station = np.linspace(0.0, length, n)
    axis = 100.0 + 8.0 * np.sin(station / 300.0) + rng.normal(0.0, 0.3, n)
    return station, axis


def _darcy(**kw):
    base = dict(diameter=0.3, roughness=1e-4, density=RHO, viscosity=MU)
    base.update(kw)
    return base


def test_egl_minus_hgl_is_velocity_head_everywhere():
    # Exact definition: EGL = HGL + V^2/2g, V = Q/(pi D^2/4) with the segment
    # flows and diameters written out here (offtakes of 10 and 20 L/s leave
    # at stations 500 m and 1500 m; the pipe narrows at 1000 m).
    station, axis = _profile()
    m = station.size - 1
    start = station[:-1]
    D = np.where(start < 1000.0, 0.3, 0.25)
    Q = 0.08 - 0.01 * (start >= 500.0) - 0.02 * (start >= 1500.0)
    K = np.zeros(station.size)
    K[[0, 10, 30, -1]] = [0.5, 0.2, 0.12, 1.0]
    gl = grade_lines(station, axis, source_head=160.0, flow=Q, **_darcy(diameter=D), point_k=K)
    V = Q / (math.pi * D**2 / 4)
    V_station = np.append(V, V[-1])  # a station carries the pipe leaving it; the last, the one reaching it
    np.testing.assert_allclose(gl.velocity, V_station, rtol=1e-15)
    np.testing.assert_allclose(gl.egl - gl.hgl, V_station**2 / (2 * G), rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(gl.pressure, RHO * G * (gl.hgl - axis), rtol=1e-12)
    assert isinstance(gl, GradeLines) and gl.friction_loss.shape == (m,) and gl.minor_loss.shape == (m + 1,)


def test_constant_diameter_and_flow_lines_are_parallel():
    station, axis = _profile()
    gl = grade_lines(station, axis, source_head=150.0, flow=0.06, **_darcy())
    np.testing.assert_allclose(np.diff(gl.egl), np.diff(gl.hgl), atol=1e-12)
    # The common slope is Darcy-Weisbach h = f (L/D) V^2/2g over the axis
    # length, f from Colebrook-White by fluids (Colebrook, exact Lambert-W form).
    V = 0.06 / (math.pi * 0.3**2 / 4)
    f = Colebrook(RHO * V * 0.3 / MU, 1e-4 / 0.3)
    L = np.hypot(np.diff(station), np.diff(axis))
    np.testing.assert_allclose(-np.diff(gl.hgl), f * L / 0.3 * V**2 / (2 * G), rtol=1e-9)
    # source_head is the HGL of a main at station 0 (no point loss there).
    assert gl.hgl[-1] == pytest.approx(150.0 - f * L.sum() / 0.3 * V**2 / (2 * G), abs=1e-9)


def test_friction_loss_matches_fluids_per_segment():
    # Cross-check each segment's Darcy-Weisbach loss with fluids'
    # friction_factor (Clamond) and the axis length sqrt(ds^2 + dz^2).
    station, axis = _profile(seed=3)
    gl = grade_lines(station, axis, source_head=150.0, flow=0.06, **_darcy())
    V = 0.06 / (math.pi * 0.3**2 / 4)
    Re = RHO * V * 0.3 / MU
    f = fluids_friction_factor(Re=Re, eD=1e-4 / 0.3)
    L = np.hypot(np.diff(station), np.diff(axis))
    np.testing.assert_allclose(gl.friction_loss, f * L / 0.3 * V**2 / (2 * G), rtol=1e-9)
    np.testing.assert_allclose(gl.friction_factor, f, rtol=1e-9)


@pytest.mark.parametrize("method", ["darcy-weisbach", "hazen-williams"])
def test_no_flow_hgl_level_and_pressure_head_mirrors_pipe(method):
    # Static case (hydrostatics): HGL level at the source head; pressure head
    # falls exactly as much as the pipe rises.
    station, axis = _profile(seed=1)
    K = np.full(station.size, 0.3)
    gl = grade_lines(station, axis, source_head=140.0, flow=0.0, method=method, hw_c=130.0,
                     point_k=K, **_darcy())
    assert np.all(gl.hgl == 140.0) and np.all(gl.egl == 140.0)
    head = gl.pressure / (RHO * G)
    np.testing.assert_allclose(np.diff(head), -np.diff(axis), atol=1e-11)
    np.testing.assert_allclose(head + axis, 140.0, atol=1e-11)
    assert np.all(gl.friction_loss == 0.0) and np.all(gl.minor_loss == 0.0)


@settings(max_examples=40, deadline=None)
@given(
    seed=st.integers(0, 10_000),
    q=st.floats(1e-5, 0.3),
    n_off=st.integers(0, 4),
    hw=st.booleans(),
)
def test_hgl_never_rises_without_a_pump(seed, q, n_off, hw):
    # Energy: without a pump the EGL never rises along the flow; with
    # non-increasing diameter the HGL does not either (it may rise only at an
    # expansion, by pressure recovery).
    rng = np.random.default_rng(seed)
    station, axis = _profile(n=30, seed=seed)
    m = station.size - 1
    D = np.sort(rng.choice([0.2, 0.25, 0.3, 0.4], m))[::-1]
    x_off = rng.uniform(0, station[-1], n_off)
    Q = segment_flows(station, q, x_off, np.full(n_off, q / 10))
    K = rng.choice([0.0, 0.1, 0.5, 1.0], station.size)
    kw = dict(method="hazen-williams", hw_c=120.0) if hw else dict(roughness=rng.uniform(0, 1e-3))
    gl = grade_lines(station, axis, source_head=200.0, flow=Q, diameter=D, density=RHO, viscosity=MU,
                     point_k=K, source_at_rest=bool(seed % 2), **kw)
    assert np.all(np.diff(gl.hgl) <= 1e-12)
    assert np.all(np.diff(gl.egl) <= 1e-12)
    assert np.all(gl.hgl <= gl.hgl_upstream + 1e-12)


def test_egl_never_rises_across_expansion_while_hgl_recovers():
    # Borda-Carnot: across a sudden expansion the EGL drops by
    # (V1 - V2)^2/2g and the HGL rises by (V1^2 - V2^2)/2g - (V1 - V2)^2/2g.
    station = np.array([0.0, 100.0, 200.0])
    axis = np.zeros(3)
    gl = grade_lines(station, axis, source_head=50.0, flow=0.05, diameter=[0.15, 0.3], roughness=1e-4,
                     density=RHO, viscosity=MU)
    V1, V2 = 0.05 / (math.pi * 0.15**2 / 4), 0.05 / (math.pi * 0.3**2 / 4)
    assert gl.minor_loss[1] == pytest.approx((V1 - V2) ** 2 / (2 * G), rel=1e-12)
    assert gl.hgl[1] - gl.hgl_upstream[1] == pytest.approx((V1**2 - V2**2) / (2 * G) - (V1 - V2) ** 2 / (2 * G), rel=1e-9)


def test_contraction_loss_on_downstream_velocity_head():
    # fluids.fittings.contraction_sharp (Rennels) on the smaller pipe's velocity head.
    gl = grade_lines([0.0, 100.0, 200.0], [0.0, 0.0, 0.0], source_head=50.0, flow=0.05,
                     diameter=[0.3, 0.2], roughness=1e-4, density=RHO, viscosity=MU)
    V2 = 0.05 / (math.pi * 0.2**2 / 4)
    assert gl.minor_loss[1] == pytest.approx(ff.contraction_sharp(0.3, 0.2) * V2**2 / (2 * G), rel=1e-12)


def test_offtakes_reduce_flow_and_friction_slope_downstream():
    station, axis = _profile(n=51, seed=2, length=5000.0)
    offtakes = np.array([1000.0, 2500.0, 4000.0])
    Q = segment_flows(station, 0.12, offtakes, [0.02, 0.03, 0.04])
    gl = grade_lines(station, axis, source_head=200.0, flow=Q, **_darcy())
    L = np.hypot(np.diff(station), np.diff(axis))
    slope = gl.friction_loss / L
    starts = station[:-1]
    for x in offtakes:
        before = slope[(starts < x)][-1]
        after = slope[(starts >= x)][0]
        assert after < before
    # Constant D, flow falling -> the slope never increases downstream.
    assert np.all(np.diff(slope) <= 1e-15)
    # HGL continuous at each offtake (junction rule): the step there is
    # friction only, so the EGL step equals the velocity-head drop.
    i = int(np.searchsorted(station, 1000.0))
    assert gl.hgl_upstream[i] == pytest.approx(gl.hgl[i], abs=1e-12)
    v_up, v_dn = gl.velocity[i - 1], gl.velocity[i]
    assert gl.minor_loss[i] == pytest.approx((v_up**2 - v_dn**2) / (2 * G), rel=1e-9)


def test_segment_flows_placement():
    s = np.array([0.0, 100.0, 200.0, 300.0])
    # Hand arithmetic: offtake at a station, between stations (acts at the
    # next station), at the start and at the end (nothing downstream).
    np.testing.assert_allclose(segment_flows(s, 1.0, [100.0], [0.25]), [1.0, 0.75, 0.75])
    np.testing.assert_allclose(segment_flows(s, 1.0, [150.0], [0.25]), [1.0, 1.0, 0.75])
    np.testing.assert_allclose(segment_flows(s, 1.0, [0.0, 300.0], [0.5, 0.2]), [0.5, 0.5, 0.5])
    np.testing.assert_allclose(segment_flows(s, 1.0, [200.0 + 1e-9, 200.0], [0.1, 0.1]), [1.0, 1.0, 0.8])
    np.testing.assert_allclose(segment_flows(s, 1.0), [1.0, 1.0, 1.0])
    with pytest.raises(ValueError):
        segment_flows(s, 1.0, [301.0], [0.1])


def test_white_type_2_as_two_reservoirs():
    # White, F. M., Fluid Mechanics, McGraw-Hill, chapter 6, the "type 2"
    # (find the flow) example (from memory; the example number and printed
    # digits may differ between editions): oil rho = 950 kg/m3,
    # nu = 2e-5 m2/s, 100 m of 30 cm pipe, eps/d = 0.0002, head loss 8 m ->
    # V = 4.84 m/s, Q = 0.342 m3/s. Posed here as two heads 8 m apart on a
    # level pipe, friction only.
    rho, nu, d, L, eD = 950.0, 2e-5, 0.30, 100.0, 0.0002
    kw = dict(diameter=d, roughness=eD * d, density=rho, viscosity=rho * nu)
    station, axis = np.array([0.0, L]), np.array([0.0, 0.0])
    q = solve_flow(station, axis, head_start=58.0, head_end=50.0, **kw)
    # Reproducible outside check: the same problem solved here with fluids'
    # exact Colebrook (Lambert W) and Darcy-Weisbach, 8 = f (L/d) V^2/2g.
    V_ref = brentq(lambda V: Colebrook(V * d / nu, eD) * L / d * V**2 / (2 * G) - 8.0, 0.1, 20.0,
                   xtol=1e-14, rtol=1e-15)
    assert q == pytest.approx(V_ref * math.pi * d**2 / 4, rel=1e-7)
    # The book's rounded answers.
    assert q == pytest.approx(0.342, abs=0.0005)
    gl = grade_lines(station, axis, source_head=58.0, flow=q, **kw)
    assert abs(gl.hgl[0] - 58.0) < 1e-3 and abs(gl.hgl[-1] - 50.0) < 1e-3
    assert gl.velocity[0] == pytest.approx(4.84, abs=0.005)


def _fluids_two_tank_flow(h1, h2, L, D, eps, bends_deg, rD):
    """Independent solve of h1 - h2 = (K_ent + f L/D + sum K_bend + K_exit) V^2/2g
    with fluids: friction_factor (Clamond), entrance_sharp (Crane), bend_rounded
    (Rennels, f of the pipe), exit_normal."""

    def resid(V):
        Re = RHO * V * D / MU
        f = fluids_friction_factor(Re=Re, eD=eps / D)
        K = ff.entrance_sharp(method="Crane") + ff.exit_normal()
        K += sum(ff.bend_rounded(Di=D, angle=a, fd=f, bend_diameters=rD) for a in bends_deg)
        return (K + f * L / D) * V**2 / (2 * G) - (h1 - h2)

    V = brentq(resid, 1e-6, 50.0, xtol=1e-14, rtol=1e-15)
    return V * math.pi * D**2 / 4


def test_two_tanks_with_fittings_cross_checked_by_fluids():
    from gisgrade.hydraulics.minor import bend_k

    # A 1.2 km main from a tank at 152.0 m to a tank at 131.5 m over a hill
    # (synthetic), square entrance, two 22.5 deg vertical bends, exit.
    station = np.linspace(0.0, 1200.0, 121)
    axis = 100.0 + np.where(station < 600, station, 1200 - station) * 0.02
    dz = np.diff(axis)
    L = np.hypot(np.diff(station), dz).sum()
    D, eps = 0.25, 5e-5
    h1, h2 = 152.0, 131.5
    q_ref = _fluids_two_tank_flow(h1, h2, L, D, eps, [22.5, 22.5], 1.5)

    V = q_ref / (math.pi * D**2 / 4)
    f = fluids_friction_factor(Re=RHO * V * D / MU, eD=eps / D)
    K = np.zeros(station.size)
    K[0], K[-1] = 0.5, 1.0
    K[[40, 80]] = bend_k(math.radians(22.5), 1.5, fd=f)  # where they sit does not change the flow
    kw = dict(diameter=D, roughness=eps, density=RHO, viscosity=MU, point_k=K,
              source_at_rest=True)
    q = solve_flow(station, axis, head_start=h1, head_end=h2, end_at_rest=True, **kw)
    assert q == pytest.approx(q_ref, rel=1e-4)  # the bend K uses f at q_ref
    gl = grade_lines(station, axis, source_head=h1, flow=q, end_at_rest=True, **kw)
    # Both levels at both ends to 1 mm (Bernoulli, water at rest in each tank):
    # in the source tank HGL = EGL = h1; on the pipe side of the entrance
    # HGL = h1 - (1 + K_ent) V^2/2g; on the pipe side of the exit HGL = h2
    # (the exit loss K = 1 takes the whole velocity head); in the receiving
    # tank V = 0 and HGL = EGL = h2, so the pressure at the outlet is
    # rho g (h2 - axis).
    hv = (q / (math.pi * D**2 / 4)) ** 2 / (2 * G)
    assert abs(gl.hgl_upstream[0] - h1) < 1e-3
    assert abs(gl.hgl[0] + 1.5 * hv - h1) < 1e-3
    assert abs(gl.hgl_upstream[-1] - h2) < 1e-3
    assert abs(gl.hgl[-1] - h2) < 1e-3 and abs(gl.egl[-1] - h2) < 1e-3
    assert gl.velocity[-1] == 0.0
    assert gl.pressure[-1] == pytest.approx(RHO * G * (h2 - axis[-1]), abs=RHO * G * 1e-3)
    # The same flow with both ends as main connections (velocity heads cancel).
    q2 = solve_flow(station, axis, head_start=h1, head_end=h2,
                    **{**kw, "source_at_rest": False})
    assert q2 == pytest.approx(q, rel=1e-9)


def test_hazen_williams_two_heads_vs_original_form():
    # Williams & Hazen (1920), SI: V = 0.849 C R^0.63 S^0.54, R = D/4. Heads
    # 60 m and 45 m, 3 km level main, D = 0.4 m, C = 120: closed-form flow
    # from the original velocity form. The SI head-loss form differs from it
    # by at most 0.22 % in slope (tests/test_friction.py), i.e. 0.54 x 0.22 =
    # 0.12 % in flow, so 0.15 %.
    D, C, L = 0.4, 120.0, 3000.0
    S = 15.0 / L
    q_ref = 0.849 * C * (D / 4) ** 0.63 * S**0.54 * math.pi * D**2 / 4
    station, axis = np.linspace(0, L, 31), np.full(31, 10.0)
    kw = dict(diameter=D, method="hazen-williams", hw_c=C, density=RHO, viscosity=MU)
    q = solve_flow(station, axis, head_start=60.0, head_end=45.0, **kw)
    assert q == pytest.approx(q_ref, rel=1.5e-3)
    gl = grade_lines(station, axis, source_head=60.0, flow=q, **kw)
    assert abs(gl.hgl[0] - 60.0) < 1e-3 and abs(gl.hgl[-1] - 45.0) < 1e-3
    assert np.all(np.isnan(gl.friction_factor))
    # Uniform slope on a level, constant main: HGL linear in station.
    np.testing.assert_allclose(np.diff(gl.hgl), -15.0 / 30, rtol=1e-9)


def test_solve_flow_refuses_uphill_and_zero_difference():
    station, axis = np.array([0.0, 100.0]), np.zeros(2)
    assert solve_flow(station, axis, head_start=10.0, head_end=10.0, **_darcy()) == 0.0
    with pytest.raises(ValueError):
        solve_flow(station, axis, head_start=10.0, head_end=11.0, **_darcy())


def test_required_source_head_meets_minimum_exactly():
    station, axis = _profile(seed=5)
    p_min = 140e3  # 20 psi floor (common practice)
    Q = segment_flows(station, 0.09, [800.0], [0.03])
    D = np.where(np.arange(station.size - 1) < 10, 0.25, 0.35)  # includes an expansion
    K = np.zeros(station.size)
    K[0] = 0.5
    kw = dict(flow=Q, diameter=D, roughness=1e-4, density=RHO, viscosity=MU, point_k=K, source_at_rest=True)
    h = required_source_head(station, axis, min_pressure=p_min, **kw)
    gl = grade_lines(station, axis, source_head=h, **kw)

    def lowest(g):  # both sides of every station's point losses
        return RHO * G * (np.minimum(g.hgl, g.hgl_upstream) - axis).min()

    assert lowest(gl) == pytest.approx(p_min, rel=1e-9)
    # 1 mm less head breaks the minimum somewhere.
    assert lowest(grade_lines(station, axis, source_head=h - 1e-3, **kw)) < p_min
    # Static case: the highest point sets it (hydrostatics).
    h0 = required_source_head(station, axis, min_pressure=p_min, **{**kw, "flow": 0.0})
    assert h0 == pytest.approx(axis.max() + p_min / (RHO * G), abs=1e-9)
    # Only at the far end.
    where = np.zeros(station.size, bool)
    where[-1] = True
    h_end = required_source_head(station, axis, min_pressure=p_min, where=where, **kw)
    gl3 = grade_lines(station, axis, source_head=h_end, **kw)
    assert gl3.pressure[-1] == pytest.approx(p_min, rel=1e-9)


def test_bad_shapes_and_method_raise():
    s, z = np.array([0.0, 1.0, 2.0]), np.zeros(3)
    with pytest.raises(ValueError):
        grade_lines(s, z, source_head=1.0, flow=[0.1], **_darcy())
    with pytest.raises(ValueError):
        grade_lines(s, z, source_head=1.0, flow=0.1, method="manning", **_darcy())
    with pytest.raises(ValueError):
        grade_lines(s, z, source_head=1.0, flow=0.1, diameter=0.3, density=RHO, viscosity=MU)
    with pytest.raises(ValueError):
        grade_lines(s[::-1], z, source_head=1.0, flow=0.1, **_darcy())
