"""Tests of the pipe-profile designer against exact analytic profiles.

Each check names its outside source: an exact analytic result (geometry of
straight pipe lengths turned by a fixed angle at each joint), or common
practice for the rule values.
"""
from math import radians

import numpy as np
import pytest

from gisgrade.design import (PRIORITY, STANDARD_BEND_ANGLES, Crossing, DesignRules, design_profile,
                             fittings_table)
from gisgrade.errors import InputError

DELTA = radians(3.0)  # joint deflection, 2-5 deg typical (field notes, from memory)
JOINT = 6.0           # m pipe length, 5.5-6 m (common practice)


def tributary(s):
    h = np.diff(s)
    return np.r_[h, 0] / 2 + np.r_[0, h] / 2


def dip_profile(p, step, h):
    """Exact least-area dip under a crossing on flat ground, rising side.

    Stations every h; the pipe may turn by ``step`` rad at each station. The
    turning is spent at full rate: the crossing station turns by ``step``
    (half each side, by symmetry), the next p stations sag by ``step`` each,
    then p crest by ``step`` and the last by step/2 back to level. Segment
    angles are therefore step/2, 3 step/2, ..., (2p+1) step/2, ..., step/2.
    Returns z relative to the level line (0 at the top), crossing first.
    """
    ang = np.array([(2 * i + 1) * step / 2 for i in range(p + 1)])
    ang = np.r_[ang, ang[-2::-1]]
    rise = np.r_[0.0, np.cumsum(h * np.tan(ang))]
    return rise - rise[-1], ang


def flat_line(length=600.0, h=JOINT, z=100.0):
    s = np.arange(0.0, length + h / 2, h)
    return s, np.full(len(s), z)


# ---------------------------------------------------------------------------
# Flat and planar ground
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("grade", [0.0, 0.04, -0.12])
def test_plane_ground_pipe_exactly_at_minimum_cover(grade):
    # exact analytic: on a plane the minimum-cover line is straight, needs no
    # turning, and nothing deeper can dig less
    s = np.linspace(0.0, 500.0, 101)
    ground = 80.0 + grade * s
    p = design_profile(s, ground, [], DesignRules(min_cover=1.2))
    np.testing.assert_allclose(p.top, ground - 1.2, atol=1e-9)
    assert p.excavation_volume == pytest.approx(0.0, abs=1e-6)
    assert set(p.reason) == {"min cover"}
    assert p.relaxations == [] and len(p.bends) == 0
    # exact analytic: 3D length of a straight line of this grade
    assert p.length_3d == pytest.approx(500.0 * np.hypot(1.0, grade), rel=1e-12)


# ---------------------------------------------------------------------------
# One crossing on flat ground
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("p_, h", [(1, 6.0), (2, 6.0), (4, 6.0), (3, 3.0)])
def test_single_crossing_symmetric_dip_at_full_joint_deflection(p_, h):
    # exact analytic: a dip of straight lengths each turned by the allowed
    # deflection; station spacing h, one joint every JOINT m, so each station
    # may turn by DELTA * h / JOINT
    step = DELTA * h / JOINT
    s, ground = flat_line(h=h)
    rise, ang = dip_profile(p_, step, h)
    depth = -rise[0]
    cover_line = 100.0 - 1.2
    clearance = 0.45  # water main over/under sewer: 18 in (Ten States Standards, from memory)
    limit = cover_line - depth + clearance
    x = 300.0
    rules = DesignRules(min_cover=1.2, joint_length=JOINT, max_joint_deflection=DELTA,
                        trench_width=1.0)
    prof = design_profile(s, ground, [Crossing(x, limit, clearance, name="sewer")], rules)

    expected = np.full(len(s), cover_line)
    j = int(np.flatnonzero(s == x)[0])
    expected[j:j + len(rise)] = cover_line + rise
    expected[j - len(rise) + 1:j + 1] = cover_line + rise[::-1]
    np.testing.assert_allclose(prof.top, expected, atol=1e-7)
    # depth meets the clearance exactly, the dip is symmetric
    assert prof.top[j] == pytest.approx(limit - clearance, abs=1e-7)
    np.testing.assert_allclose(prof.top[j - 40:j + 41], prof.top[j - 40:j + 41][::-1], atol=1e-7)
    # each joint turns by exactly the allowed deflection (half at the ends)
    k = len(rise) - 1
    turn = prof.deflection[j - k:j + k + 1]
    want = np.r_[-step / 2, -np.full(p_, step), np.full(2 * p_ + 1, step), -np.full(p_, step), -step / 2]
    np.testing.assert_allclose(turn, want, atol=1e-7)
    # nothing dug elsewhere
    outside = np.abs(s - x) >= k * h
    np.testing.assert_allclose(prof.top[outside], cover_line, atol=1e-9)
    assert set(prof.reason[outside]) == {"min cover"}
    assert prof.reason[j] == "crossing sewer"
    # excavation: trench width x depth below the cover line x tributary length
    assert prof.excavation_volume == pytest.approx(np.sum(tributary(s) * (cover_line - expected)), rel=1e-7)
    assert prof.relaxations == [] and len(prof.bends) == 0


def test_crossing_between_stations_and_twice_same_feature_and_at_repeated_station():
    # exact analytic: clearance must hold on the straight pipe between two
    # stations (linear interpolation), at a station given twice, and at both
    # crossings of one feature
    s, ground = flat_line(h=5.0)
    s = np.sort(np.r_[s, 250.0])  # the crossing inserted at an existing vertex: station repeated
    ground = np.full(len(s), 100.0)
    cx = [Crossing(102.5, 97.0, 0.3, name="culvert"), Crossing(250.0, 96.5, 0.3, name="main"),
          Crossing(400.0, 97.2, 0.3, name="culvert")]
    p = design_profile(s, ground, cx, DesignRules(min_cover=1.2))
    assert len(p.top) == len(s)
    assert np.interp(102.5, s, p.top) <= 97.0 - 0.3 + 1e-7
    i = np.flatnonzero(s == 250.0)
    assert p.top[i[0]] == p.top[i[1]] <= 96.2 + 1e-7
    assert np.interp(400.0, s, p.top) == pytest.approx(96.9, abs=1e-7)
    assert p.relaxations == []


def test_over_crossing_pipe_bottom_clears_the_feature_top():
    # exact analytic: with side="over", top - outside diameter >= feature top + clearance
    s, ground = flat_line()
    rules = DesignRules(min_cover=1.2, max_cover=3.0, outside_diameter=0.5)
    p = design_profile(s, ground, [Crossing(300.0, 97.0, 0.3, side="over", name="duct")], rules)
    # the cover line (98.8) already clears 97.0 + 0.3 + 0.5 = 97.8: no change
    np.testing.assert_allclose(p.top, 98.8, atol=1e-9)


# ---------------------------------------------------------------------------
# Grades
# ---------------------------------------------------------------------------


def test_min_grade_on_flat_ground_rises_at_exactly_min_grade():
    # exact analytic: on level ground the pipe rises (flat runs rise, by the
    # documented rule) at the minimum grade to reach minimum cover at the end;
    # 0.1 % is the common-practice floor for air to move
    s, ground = flat_line(length=300.0, h=10.0)
    p = design_profile(s, ground, [], DesignRules(min_cover=1.0, min_grade=0.001))
    np.testing.assert_allclose(p.top, 99.0 - 0.001 * (300.0 - s), atol=1e-9)
    assert p.relaxations == []


def test_min_grade_follows_gently_falling_ground():
    # exact analytic: ground falls at 0.05 %, flatter than the 0.1 % minimum;
    # the run follows the ground's fall (documented rule), so the pipe falls
    # at exactly 0.1 % from minimum cover at the high end
    s = np.linspace(0.0, 300.0, 31)
    ground = 100.0 - 0.0005 * s
    p = design_profile(s, ground, [], DesignRules(min_cover=1.0, min_grade=0.001))
    np.testing.assert_allclose(p.top, 99.0 - 0.001 * s, atol=1e-9)
    assert p.relaxations == []


def test_max_grade_on_steep_plane():
    # exact analytic: ground climbs at 30 %, the pipe may climb at 20 %; it
    # keeps minimum cover only at the low end and falls behind the ground
    s = np.linspace(0.0, 100.0, 51)
    ground = 50.0 + 0.3 * s
    p = design_profile(s, ground, [], DesignRules(min_cover=1.0, max_transition_grade=0.2))
    np.testing.assert_allclose(p.top, ground[0] - 1.0 + 0.2 * s, atol=1e-9)
    assert set(p.reason) == {"max grade", "min cover"} and p.reason[0] == "min cover"


# ---------------------------------------------------------------------------
# Bends
# ---------------------------------------------------------------------------


def test_bends_are_standard_angles_honoured_exactly():
    # a 4 m drop over 6 m with cover held between 1.0 and 1.6 m: far more
    # turning than 3 deg per 6 m joint gives, so bends are needed; their
    # angles must come from the standard series (11.25, 22.5, 45, 90 deg,
    # common practice) and the profile must turn by exactly their sum there
    s = np.arange(0.0, 300.1, 2.0)
    ground = np.where(s < 150, 100.0, np.where(s > 156, 96.0, 100 - 4 * (s - 150) / 6))
    rules = DesignRules(min_cover=1.0, max_cover=1.6)
    p = design_profile(s, ground, [], rules)
    assert len(p.bends) > 0 and p.relaxations == []
    std = np.degrees(STANDARD_BEND_ANGLES)
    assert all(np.isclose(a, std).any() for a in p.bends["angle_deg"])
    signed = np.where(p.bends["direction"] == "sag", 1.0, -1.0) * np.radians(p.bends["angle_deg"])
    total = np.zeros(len(s))
    np.add.at(total, p.bends["index"].to_numpy(), signed)
    at = total != 0
    np.testing.assert_allclose(p.deflection[at], total[at], atol=1e-7)
    assert np.all(np.abs(p.deflection[~at][1:-1]) <= p.deflection_limit[~at][1:-1] + 1e-7)
    cover = ground - p.top
    assert cover.min() >= 1.0 - 1e-7 and cover.max() <= 1.6 + 1e-7
    # the drop turns down (crest) then back up (sag) by the same total
    assert signed.sum() == pytest.approx(0.0, abs=1e-12)
    f = fittings_table(p)
    assert list(f.columns) == ["station_m", "angle_deg", "direction", "index", "fitting"]
    np.testing.assert_allclose(f["station_m"], s[f["index"]])


# ---------------------------------------------------------------------------
# Contradictions
# ---------------------------------------------------------------------------


def rules_of(relax, rule):
    return [r for r in relax if r.rule == rule]


def test_crossing_deeper_than_max_cover_relaxes_max_cover_by_the_exact_amount():
    # priority: crossing clearance above max cover (docs/design.md);
    # exact analytic amount: needed depth of top - max cover
    s, ground = flat_line()
    rules = DesignRules(min_cover=1.2, max_cover=2.5)
    p = design_profile(s, ground, [Crossing(300.0, 96.9, 0.45, name="sewer")], rules)
    j = int(np.flatnonzero(s == 300.0)[0])
    assert p.top[j] == pytest.approx(96.45, abs=1e-7)  # clearance kept
    mc = rules_of(p.relaxations, "max cover")
    assert len(mc) == 1 and not rules_of(p.relaxations, "crossing clearance")
    assert mc[0].station_from <= 300.0 <= mc[0].station_to
    assert mc[0].amount == pytest.approx(100.0 - 96.45 - 2.5, abs=1e-6)
    assert mc[0].unit == "m" and "max cover" in mc[0].message and "300.00" in mc[0].message


def test_over_crossing_without_room_relaxes_min_cover():
    # priority: crossing clearance above min cover; exact amount
    s, ground = flat_line()
    rules = DesignRules(min_cover=1.2, outside_diameter=0.4)
    p = design_profile(s, ground, [Crossing(300.0, 98.6, 0.3, side="over", name="duct")], rules)
    j = int(np.flatnonzero(s == 300.0)[0])
    assert p.top[j] - 0.4 == pytest.approx(98.9, abs=1e-7)
    (mc,) = rules_of(p.relaxations, "min cover")
    assert mc.amount == pytest.approx(99.3 - 98.8, abs=1e-6)
    assert mc.station_from <= 300.0 <= mc.station_to


def test_min_cover_above_max_cover_gives_way_to_min_cover():
    # priority: min cover above max cover; pipe stays at min cover
    s, ground = flat_line(length=60.0)
    maxc = np.where(s > 30, 1.0, 2.0)
    p = design_profile(s, ground, [], DesignRules(min_cover=1.2, max_cover=maxc))
    np.testing.assert_allclose(p.top, 98.8, atol=1e-7)
    (mc,) = rules_of(p.relaxations, "max cover")
    assert (mc.station_from, mc.station_to) == (36.0, 60.0)
    assert mc.amount == pytest.approx(0.2, abs=1e-6)


def test_min_grade_impossible_is_flagged_and_cover_kept():
    # a band of 5 cm of cover over 200 m of level ground cannot hold 0.1 %
    # in one direction: min grade (lowest priority) gives way, cover does not
    s, ground = flat_line(length=200.0, h=5.0)
    p = design_profile(s, ground, [], DesignRules(min_cover=1.0, max_cover=1.05, min_grade=0.001))
    cover = ground - p.top
    assert cover.min() >= 1.0 - 1e-7 and cover.max() <= 1.05 + 1e-7
    mg = rules_of(p.relaxations, "min grade")
    assert mg and {r.rule for r in p.relaxations} == {"min grade"}
    assert all(0 < r.amount <= 0.001 + 1e-9 and r.unit == "m/m" for r in mg)
    # where the grade is short of 0.1 %, a relaxation says so
    g = np.abs(np.diff(p.top) / np.diff(s))
    for j in np.flatnonzero(g < 0.001 - 1e-6):
        assert any(r.station_from <= s[j] and s[j + 1] <= r.station_to for r in mg)


def test_two_crossings_at_one_station_that_cannot_both_hold():
    # under one feature and over another at the same place: the clearance
    # rule itself must give way; the run still finishes and says where
    s, ground = flat_line()
    cx = [Crossing(300.0, 96.0, 0.3, name="sewer"), Crossing(300.0, 96.5, 0.3, side="over", name="duct")]
    p = design_profile(s, ground, cx, DesignRules(min_cover=1.2))
    cc = rules_of(p.relaxations, "crossing clearance")
    assert cc and all(r.station_from == 300.0 for r in cc)
    # the two shortfalls add up to the overlap: 96.5 + 0.3 - (96.0 - 0.3)
    assert sum(r.amount for r in cc) == pytest.approx(1.1, abs=1e-5)
    assert PRIORITY[0] == "crossing clearance"


# ---------------------------------------------------------------------------
# Bad input
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("kw, crossing, word", [
    (dict(min_cover=-1.0), None, "min_cover"),
    (dict(min_cover=1.0, joint_length=0.0), None, "joint_length"),
    (dict(min_cover=1.0, trench_width=np.ones(3)), None, "trench_width"),
    (dict(min_cover=1.0), Crossing(900.0, 95.0, 0.3, name="far"), "far"),
    (dict(min_cover=1.0), Crossing(100.0, 95.0, 0.3, side="beside", name="odd"), "odd"),
])
def test_bad_rules_name_the_culprit(kw, crossing, word):
    # Requirement (issue 2): bad input is an InputError naming the key or value
    s, ground = flat_line()
    with pytest.raises(InputError, match=word):
        design_profile(s, ground, [crossing] if crossing else [], DesignRules(**kw))


def test_max_cover_unlimited_where_not_finite():
    # exact analytic: a crossing 3.2 m down where max cover is unset (nan)
    # needs no relaxation; the same depth where max cover is 2.5 m does
    s, ground = flat_line()
    maxc = np.where(s < 300, np.nan, 2.5)
    cx = [Crossing(150.0, 96.8, 0.0, name="a"), Crossing(450.0, 96.8, 0.0, name="b")]
    p = design_profile(s, ground, cx, DesignRules(min_cover=1.2, max_cover=maxc))
    (mc,) = rules_of(p.relaxations, "max cover")
    assert mc.station_from == mc.station_to == 450.0
    assert mc.amount == pytest.approx(0.7, abs=1e-6)


def test_dip_too_sharp_for_the_joints_without_fittings_relaxes_max_cover():
    # priority: joint deflection above max cover. The crossing needs the
    # joints-only dip of the analytic test above, but max cover allows only
    # half its depth and no fittings are available: the joints must keep
    # their limit everywhere and max cover gives way, by exactly the excess
    # depth at the crossing (exact analytic) and wherever else it must
    s, ground = flat_line()
    rise, _ = dip_profile(3, DELTA, JOINT)
    depth = -rise[0]
    rules = DesignRules(min_cover=1.2, max_cover=1.2 + depth / 2, bend_angles=())
    p = design_profile(s, ground, [Crossing(300.0, 98.8 - depth, 0.0, name="main")], rules)
    j = int(np.flatnonzero(s == 300.0)[0])
    assert p.top[j] == pytest.approx(98.8 - depth, abs=1e-7)  # clearance kept
    turn = np.diff(np.arctan(np.diff(p.top) / np.diff(s)))
    assert np.abs(turn).max() <= DELTA + 1e-6  # every joint within 3 deg (the reporting tolerance)
    assert np.all(p.top <= 98.8 + 1e-7)  # min cover kept
    assert {r.rule for r in p.relaxations} == {"max cover"} and len(p.bends) == 0
    (mc,) = p.relaxations
    assert mc.amount == pytest.approx(depth / 2, abs=1e-6)
    too_deep = s[(100.0 - p.top) > 1.2 + depth / 2 + 1e-6]
    assert mc.station_from <= too_deep[0] and too_deep[-1] <= mc.station_to


@pytest.mark.parametrize("station", [[5.0], [0.0, 8.0], [0.0, 0.0, 0.0], [0.0, 0.0, 8.0, 8.0]])
def test_degenerate_lines(station):
    # exact analytic: a line of one or two distinct stations (repeated
    # stations are one point) has no joint to turn, so it lies at minimum
    # cover except where the crossing holds it down
    s = np.array(station)
    p = design_profile(s, np.full(len(s), 50.0), [Crossing(s[-1], 49.0, 0.5, name="x")],
                       DesignRules(min_cover=1.0, max_cover=2.0))
    assert p.top.shape == s.shape
    np.testing.assert_allclose(p.top[s < s[-1]], 49.0, atol=1e-9)
    np.testing.assert_allclose(p.top[s == s[-1]], 48.5, atol=1e-9)  # the crossing's clearance
    assert p.relaxations == []


# ---------------------------------------------------------------------------
# A crossing far deeper than max cover (no runaway)
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("fittings", [(), STANDARD_BEND_ANGLES])
def test_crossing_far_below_max_cover_dips_just_as_deep_as_it_needs(fittings):
    # flat ground, max cover 4 m, 1 deg joints, and a crossing whose clearance
    # needs the top of pipe 50 m under the minimum-cover line. Priority
    # (docs/design.md): clearance and min cover held; with no fittings the
    # joints hold too and only max cover may give way. Exact analytic: the
    # deepest point is the crossing's limit minus clearance, max cover gives
    # way by exactly that depth minus 4 m, and far from the dip the pipe lies
    # at minimum cover (nothing forces it lower)
    s, ground = flat_line(length=1200.0)
    need = 98.8 - 50.0
    deg1 = radians(1.0)  # tight joints (2-5 deg typical, from memory)
    rules = DesignRules(min_cover=1.2, max_cover=4.0, max_joint_deflection=deg1, bend_angles=fittings)
    p = design_profile(s, ground, [Crossing(600.0, need + 0.3, 0.3, name="deep")], rules)
    j = int(np.flatnonzero(s == 600.0)[0])
    assert p.top.min() == pytest.approx(need, abs=1e-6)
    assert p.top[j] == pytest.approx(need, abs=1e-6)
    far = np.abs(s - 600.0) > 300.0
    np.testing.assert_allclose(p.top[far], 98.8, atol=1e-7)
    assert np.all(p.top <= 98.8 + 1e-7)  # min cover kept
    (mc,) = p.relaxations
    assert mc.rule == "max cover" and mc.unit == "m"
    assert mc.amount == pytest.approx(100.0 - need - 4.0, abs=1e-6)
    assert mc.station_from < 600.0 < mc.station_to
    too_deep = s[(100.0 - p.top) > 4.0 + 1e-6]
    assert mc.station_from <= too_deep[0] and too_deep[-1] <= mc.station_to
    # a pipe, not a fold: grades within 45 deg (1 m/m, the 45-deg bend
    # lowering of common practice) and no station turning past a right angle
    assert np.abs(np.diff(p.top) / np.diff(s)).max() <= 1.0 + 1e-9
    assert np.abs(p.deflection[1:-1]).max() <= np.pi / 2 + 1e-7
    if not fittings:  # the joints alone: each within its allowance (exact geometry)
        assert len(p.bends) == 0
        assert np.all(np.abs(p.deflection[1:-1]) <= p.deflection_limit[1:-1] + 1e-6)
    else:  # fittings are standard angles adding up to no more than 90 deg per station
        assert p.bends.groupby("index")["angle_deg"].sum().max() <= 90.0 + 1e-9
    # no runaway: a pipe within 45 deg is shorter than sqrt(2) x its plan length (exact geometry)
    assert p.length_3d < 1200.0 * np.sqrt(2.0)


@pytest.mark.parametrize("seed", range(6))
def test_lp_solver_matches_scipy_linprog_on_random_programs(seed):
    # reference: scipy.optimize.linprog(method="highs") (SciPy's own binding of
    # HiGHS), on random bounded programs with duplicate entries (summed, as in a
    # sparse matrix built from triplets), free unknowns and equality rows
    from scipy.optimize import linprog
    from scipy.sparse import coo_matrix

    from gisgrade.design.lp import Program, solve_lp

    rng = np.random.default_rng(seed)
    n, m, k = 30, 40, 160
    rows, cols = rng.integers(0, m, k), rng.integers(0, n, k)
    rows[:10], cols[:10] = rows[10:20], cols[10:20]  # ten places given twice
    values = rng.normal(size=k)
    x0 = rng.uniform(-1, 1, n)  # a feasible point: every row holds at x0
    a = coo_matrix((values, (rows, cols)), shape=(m, n)).toarray()
    upper = a @ x0 + rng.uniform(0, 1, m)
    eq = rng.random(m) < 0.2
    lower = np.where(eq, upper, -np.inf)
    upper = np.where(eq, a @ x0, upper)
    lower[eq] = upper[eq]
    lo, hi = np.full(n, -2.0), np.full(n, 2.0)
    lo[:5] = -np.inf  # free below, bounded above
    cost = rng.normal(size=n)
    got = solve_lp(Program(cost, rows, cols, values, lower, upper, lo, hi))
    ref = linprog(cost, A_ub=a[~eq], b_ub=upper[~eq], A_eq=a[eq], b_eq=upper[eq],
                  bounds=np.c_[lo, hi], method="highs")
    assert ref.status == 0 and got is not None
    assert cost @ got == pytest.approx(ref.fun, rel=1e-9, abs=1e-9)
    assert np.all(a[~eq] @ got <= upper[~eq] + 1e-9) and np.allclose(a[eq] @ got, upper[eq], atol=1e-9)


def test_lp_solver_says_none_for_an_infeasible_program():
    # x <= -1 with 0 <= x: no answer (scipy.optimize.linprog gives status 2 here)
    from gisgrade.design.lp import Program, solve_lp

    p = Program(np.ones(1), np.array([0]), np.array([0]), np.array([1.0]),
                np.array([-np.inf]), np.array([-1.0]), np.zeros(1), np.full(1, np.inf))
    assert solve_lp(p) is None


#: A 14-unknown program a design built (found by a fuzzed design_profile):
#: HiGHS 1.16's presolve calls it infeasible; SciPy's linprog (HiGHS 1.12) and
#: the highspy release gisgrade holds to (1.12) solve it.
PRESOLVE_TRAP = dict(
    cost=[-8.9364, -11.23, -11.1964, -23.583600000000004, -15.897200000000002, -1.5379999999999996,
        -3.4548000000000005, -3.1331999999999995, 100000.0, 100000.0, 100000.0, 100000.0, 100000.0,
        100000.0],
    rows=[0, 1, 2, 0, 1, 2, 3, 4, 5, 6, 7, 8, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 9, 10, 11, 12, 13,
        14, 15, 16, 17, 18, 19, 20, 21, 15, 16, 17, 18, 19, 20, 21, 22, 23, 24, 25, 26, 27, 28, 22, 23,
        24, 25, 26, 27, 28, 29, 30, 31, 32, 33, 34, 29, 30, 31, 32, 33, 34, 29, 30, 31, 32, 33, 34],
    cols=[4, 5, 1, 5, 6, 2, 0, 1, 2, 3, 4, 5, 1, 2, 3, 4, 5, 6, 0, 1, 2, 3, 4, 5, 1, 2, 3, 4, 5, 6, 0, 1,
        2, 3, 4, 5, 6, 1, 2, 3, 4, 5, 6, 7, 0, 1, 2, 3, 4, 5, 6, 1, 2, 3, 4, 5, 6, 7, 0, 1, 2, 3, 4, 5,
        1, 2, 3, 4, 5, 6, 2, 3, 4, 5, 6, 7],
    values=[1.0, 1.0, 1.0, 0.0, 0.0, 0.0, -0.0447607537710935, -0.17439832577607262, -0.04492968504290785,
        -0.027246471581930137, -0.32883919763235814, -1.24378109452736, 0.0447607537710935,
        0.17439832577607262, 0.04492968504290785, 0.027246471581930137, 0.32883919763235814,
        1.24378109452736, 0.0447607537710935, 0.17439832577607262, 0.04492968504290785,
        0.027246471581930137, 0.32883919763235814, 1.24378109452736, -0.0447607537710935,
        -0.17439832577607262, -0.04492968504290785, -0.027246471581930137, -0.32883919763235814,
        -1.24378109452736, -0.0447607537710935, -0.17439832577607262, -0.04492968504290785,
        -0.027246471581930137, -0.32883919763235814, -1.24378109452736, -0.1276650070215754,
        0.0447607537710935, 0.17439832577607262, 0.04492968504290785, 0.027246471581930137,
        0.32883919763235814, 1.24378109452736, 0.1276650070215754, 0.0447607537710935,
        0.17439832577607262, 0.04492968504290785, 0.027246471581930137, 0.32883919763235814,
        1.24378109452736, 0.1276650070215754, -0.0447607537710935, -0.17439832577607262,
        -0.04492968504290785, -0.027246471581930137, -0.32883919763235814, -1.24378109452736,
        -0.1276650070215754, 0.022380376885546886, 0.0871991628880357, 0.03106176556510524,
        0.013623235790965011, 0.16441959881617907, 0.6218905472636911, -0.10957953977358259,
        -0.11826092845314093, -0.04468500135607025, -0.17804283460714407, -0.7863101460798702,
        -0.7495555542852665, 0.0871991628880357, 0.03106176556510524, 0.013623235790965011,
        0.16441959881617907, 0.6218905472636911, 0.1276650070215754],
    row_lower=[-np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf,
        -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf,
        -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf, -np.inf,
        0.9999999999999996, -0.9619397662556417, 0.961939766255643, -0.9999999999999978,
        1.0000000000000089, -0.5000000000000088],
    row_upper=[98.59093774155754, 94.34718825501719, 71.86428753497877, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0,
        1.0, 1.0, 1.0, 1.0, 1.0, 0.050000100000000006, 1.0000001000000063, 0.050000100000000006,
        1.0000001000000043, 0.050000100000000006, 1.0000000999999885, 0.050000100000000006,
        1.0000000999999938, 0.050000100000000006, 0.668178737919295, 0.050000100000000006,
        1.0000000999999992, 0.050000100000000006, 0.050000100000000006, 0.9999999999999996,
        -0.9619397662556417, 0.961939766255643, -0.9999999999999978, 1.0000000000000089,
        -0.5000000000000088],
    lower=[92.16483999918661, 69.82383999918675, 75.55783999918677, 60.68618805501703, 97.3881880550172,
        94.3471880550172, 95.15118805501719, 95.079560087833, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    upper=[99.75282531853483, 100.31428753497877, 100.6278266003251, 98.6217957904855, 99.04093774155754,
        97.34718825501719, 98.55094610244586, 96.07956028783299, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0],
)


def test_lp_solver_answers_where_presolve_alone_would_say_infeasible():
    # reference: scipy.optimize.linprog(method="highs") finds this program's optimum;
    # solve_lp must too (a HiGHS release whose presolve refuses it would not)
    from scipy.optimize import linprog
    from scipy.sparse import coo_matrix

    from gisgrade.design.lp import Program, solve_lp

    p = Program(**{k: np.array(v, dtype=int if k in ("rows", "cols") else float)
                   for k, v in PRESOLVE_TRAP.items()})
    a = coo_matrix((p.values, (p.rows, p.cols)), shape=(len(p.row_lower), len(p.cost))).toarray()
    eq = p.row_lower == p.row_upper
    ref = linprog(p.cost, A_ub=a[~eq], b_ub=p.row_upper[~eq], A_eq=a[eq], b_eq=p.row_upper[eq],
                  bounds=np.c_[p.lower, p.upper], method="highs")
    got = solve_lp(p)
    assert ref.status == 0 and got is not None
    # the two HiGHS versions stop at vertices equal within the solvers' 1e-7 feasibility
    # tolerance (the rows hold bends exactly): the optima agree to 1e-6
    assert p.cost @ got == pytest.approx(ref.fun, rel=1e-6)
    assert np.all(a[~eq] @ got <= p.row_upper[~eq] + 1e-6)
    assert np.allclose(a[eq] @ got, p.row_upper[eq], atol=1e-6)
    assert np.all(got >= p.lower - 1e-9) and np.all(got <= p.upper + 1e-9)
