"""The buildable profile: straight grade runs between joints, high and low
points as decisions, plan and combined bends, air valves and drains.

Known answers come from the geometry made in each test (analytic crests and
sags, a 30 degree plan turn), from the `fluids` library (Rennels & Hudson
rounded-bend K), from an exhaustive search of a tiny design problem, and
from the valve siting rules as the AWWA M51 manual states them (*from
memory*: the manual's well-known rules as recalled, not a checked clause).
"""
import math

import numpy as np
import pytest

import fluids.fittings
import fluids.friction
from iapws import IAPWS95

import gisgrade
from gisgrade.design import DesignRules, design_profile
from gisgrade.design.plan import fewest_fittings, joint_deflection, plan_design, plan_turns
from gisgrade.findings.valves import ValveRules, site_valves

from conftest import PROJECT, write_dem, write_lines

G = 9.80665  # standard gravity, CGPM 1901 (exact)
X0, Y0 = 500_000.0, 4_650_000.0


def terrain(x):
    """Two crests (about +6 m at 800 m, +5 m at 2000 m) and a sag (-4 m at
    1400 m) on a level plain at 100 m, plus a lidar-like ripple of 0.1-0.3 m
    (two sines of 23 m and 9 m wavelength: its own high points every few metres)."""
    smooth = (100 + 6 * np.exp(-((x - 800) / 200) ** 2) + 5 * np.exp(-((x - 2000) / 250) ** 2)
              - 4 * np.exp(-((x - 1400) / 150) ** 2))
    return smooth + 0.15 * np.sin(2 * np.pi * x / 23.0) + 0.08 * np.sin(2 * np.pi * x / 9.0 + 1)


def ridge_site(folder, extra=""):
    """A 2.8 km line due east over :func:`terrain` on a 1 m DEM."""
    cols = np.arange(2900)
    x = cols + 0.5  # cell centres, m from the grid's west edge
    z = np.tile(terrain(x - 50.0), (40, 1))
    write_dem(folder / "dem.tif", z, x0=X0 - 50.0, y0=Y0 + 20.0, cell=1.0)
    write_lines(folder / "line.geojson", [[(X0, Y0), (X0 + 2800.0, Y0)]])
    text = (PROJECT.replace('spacing = "10 m"', 'spacing = "1 m"')
            .replace('dem = "dem.tif"', 'dem = "dem.tif"\nvertical_accuracy = "lidar"'))
    (folder / "project.toml").write_text(text + extra)
    return folder / "project.toml"


def test_ripples_make_no_high_point_the_crests_and_sag_do(tmp_path):
    r = gisgrade.compute(ridge_site(tmp_path))
    p = r.points
    inner = p[(p["station_m"] > 0) & (p["station_m"] < 2800)]
    highs, lows = inner[inner["kind"] == "high"], inner[inner["kind"] == "low"]
    # the terrain's own crests and sag, no more (the ripple alone has hundreds)
    assert len(highs) == 2 and len(lows) == 1, p
    assert abs(highs["station_m"].iloc[0] - 800) < 150 and abs(highs["station_m"].iloc[1] - 2000) < 150
    assert abs(lows["station_m"].iloc[0] - 1400) < 150
    assert set(highs["why"]) == {"terrain crest"} and set(lows["why"]) == {"terrain sag"}
    # every joint is a straight-pipe break: between joints no change of grade
    t = r.table
    joint = (t["kind"].to_numpy() & gisgrade.alignment.KNOTS) != 0
    assert np.abs(t["deflection_deg"].to_numpy()[~joint]).max() < 1e-9
    # few grade breaks: straight runs tens of metres long on average
    breaks = np.abs(t["deflection_deg"].to_numpy()) > 0.01
    assert 2800 / breaks.sum() > 40
    # and the cover is kept everywhere (1.2 m, the project's minimum)
    assert t["cover_m"].min() >= 1.2 - 1e-6
    # excavation stays near the least: within 10 % of the trench of the
    # least-excavation profile that follows every ripple (same stations, no
    # grade-break cost, no tolerance)
    least = design_profile(t["station_m"], t["ground_m"], rules=DesignRules(
        min_cover=1.2, outside_diameter=0.32, knots=joint))
    assert r.profile.trench_volume <= 1.10 * least.trench_volume


def test_the_least_excavation_profile_would_follow_the_ripple(tmp_path):
    # the contrast, on the same ground: without the grade-break cost and the
    # tolerance, the ripple itself makes high points (so the test above can fail)
    r = gisgrade.compute(ridge_site(tmp_path))
    t = r.table
    joint = (t["kind"].to_numpy() & gisgrade.alignment.KNOTS) != 0
    least = design_profile(t["station_m"], t["ground_m"], rules=DesignRules(
        min_cover=1.2, outside_diameter=0.32, knots=joint))
    g = np.diff(least.top)
    sign = np.sign(g[np.abs(g) > 1e-9])
    assert int((np.diff(sign) < 0).sum()) > 20


def turn_site(folder, angle_deg=30.0, extra=""):
    """Flat ground at 100 m; the line runs 500 m east, turns ``angle_deg``
    left at a vertex, and runs 500 m on."""
    write_dem(folder / "dem.tif", np.full((300, 300), 100.0), x0=X0 - 100.0, y0=Y0 + 1400.0)
    a = math.radians(angle_deg)
    v = (X0 + 500.0, Y0 + 200.0)
    end = (v[0] + 500.0 * math.cos(a), v[1] + 500.0 * math.sin(a))
    write_lines(folder / "line.geojson", [[(X0, Y0 + 200.0), v, end]])
    (folder / "project.toml").write_text(PROJECT + extra)
    return folder / "project.toml"


def test_a_30_degree_plan_turn_gets_a_bend_and_its_loss(tmp_path):
    r = gisgrade.compute(turn_site(tmp_path, 30.0))
    b = r.bends
    # joints (3 deg each, up to 3 of them) take 9 deg at most: the fewest
    # standard fittings leaving the joints at most that is one 22.5 deg bend
    assert b["plane"].tolist() == ["horizontal"]
    assert b["angle_deg"].iloc[0] == pytest.approx(22.5) and b["direction"].iloc[0] == "left"
    assert b["station_m"].iloc[0] == pytest.approx(500.0, abs=1e-6)
    # the rest, 7.5 deg, is spread over 3 joints near the vertex, 2.5 deg each
    t = r.table
    share = t["plan_share_deg"].to_numpy()
    assert np.sort(share[share > 0]).tolist() == pytest.approx([2.5, 2.5, 2.5])
    # no joint deflects more than 3 deg in 3D (plan share and grade change)
    assert t["joint_deflection_deg"].max() <= 3.0 + 1e-6
    # its minor loss in the grade lines: K of a 22.5 deg rounded bend (r/D 1.5)
    # from fluids (Rennels & Hudson 2012) at the pipe's f; 300 mm, 0.1 mm, 50 L/s, 15 degC
    state = IAPWS95(T=288.15, P=0.101325)
    V = 0.05 / (math.pi * 0.3 ** 2 / 4)
    fd = fluids.friction.friction_factor(Re=state.rho * V * 0.3 / state.mu, eD=1e-4 / 0.3)
    k = fluids.fittings.bend_rounded(Di=0.3, angle=22.5, fd=fd, bend_diameters=1.5)
    g = r.grades
    i = int(np.flatnonzero(np.isclose(t["station_m"], 500.0, atol=1e-6))[0])
    d = g.index("design")
    assert g.hgl_upstream[d, i] - g.hgl[d, i] == pytest.approx(k * V ** 2 / (2 * G), rel=2e-3)
    # and fittings.csv lists it with that K (at the reference Re 3e5)
    r.write(tmp_path / "o", figures=False)
    import pandas as pd

    listed = pd.read_csv(tmp_path / "o" / "fittings.csv")
    assert listed["plane"].tolist() == ["horizontal"]


def test_a_small_plan_turn_is_taken_by_the_joints(tmp_path):
    r = gisgrade.compute(turn_site(tmp_path, 7.0))
    assert len(r.bends) == 0  # 7 deg over 3 joints of 3 deg: no fitting
    share = r.table["plan_share_deg"].to_numpy()
    assert share.sum() == pytest.approx(7.0) and share.max() <= 3.0 + 1e-9


@pytest.mark.parametrize("turn, expected", [(30.0, [22.5]), (8.0, []), (50.0, [45.0]),
                                             (100.0, [11.25, 90.0]), (70.0, [22.5, 45.0])])
def test_fewest_fittings_within_the_joints_reach(turn, expected):
    # 3 joints of 3 deg take up to 9 deg (exact arithmetic on the standard series)
    got = fewest_fittings(math.radians(turn), np.radians([11.25, 22.5, 45, 90]), math.radians(9))
    assert sorted(round(math.degrees(a), 4) for a in got) == expected


def test_plan_turn_and_joint_deflection_are_exact_geometry():
    # a right-angle corner, and a 3D joint: cos(theta) = cos(a) cos(b) for
    # orthogonal plan and vertical turns (spherical trigonometry)
    assert math.degrees(plan_turns(np.array([0.0, 1, 1]), np.array([0.0, 0, -1]))[1]) == pytest.approx(-90)
    a, b = math.radians(2.0), math.radians(1.5)
    u1, u2 = np.array([1.0, 0, 0]), np.array([math.cos(a) * math.cos(b), math.sin(a) * math.cos(b),
                                               math.sin(b)])
    assert float(joint_deflection(a, b)) == pytest.approx(math.acos(u1 @ u2), abs=1e-12)


def test_a_straight_line_far_from_the_origin_takes_no_plan_turn():
    # 2 km due north-east at 0.5 m stations in UTM-sized coordinates: the
    # computed turns are the rounding of the coordinates (nanoradians), not
    # turns; only the vertices turn, so every joint keeps its whole 3 deg
    # for grade: b = arccos(cos 3 deg / cos 0) = 3 deg (spherical trigonometry)
    s = np.arange(0.0, 2000.5, 0.5)
    x, y = X0 + s * math.sqrt(0.5), Y0 + s * math.sqrt(0.5)
    assert np.abs(plan_turns(x, y)).max() > 1e-9  # the rounding this test is about
    vertices = np.zeros(len(s), bool)
    vertices[[0, -1]] = True
    d = plan_design(s, x, y, np.ones(len(s), bool), math.radians(3),
                    np.radians([11.25, 22.5, 45, 90]), vertices=vertices)
    assert len(d.fittings) == 0 and not d.share.any()
    assert np.allclose(d.allowance, math.radians(3), rtol=0, atol=1e-15)


# ---------------------------------------------------------------------------
# The optimum, checked against an exhaustive search
# ---------------------------------------------------------------------------

def test_tiny_design_is_the_optimum_of_its_stated_objective():
    # Knots (joints) at 0, 6 and 12 m; stations every 2 m; flat ground at 100 m,
    # minimum cover 1.2 m; a crossing at 4 m needing the top of pipe at 98.5 m;
    # joints 3 deg; grade breaks cost lam per radian. The stated objective: the
    # trench below the cover line (trench width 1 m x tributary length) plus lam
    # times the joint's turn. Exhaustive search over the three knot elevations on
    # a 2.5 mm grid (brute force, nothing shared with the solver but the objective).
    s = np.arange(0.0, 12.1, 2.0)
    knots = np.isin(s, [0.0, 6.0, 12.0])
    lam = 20.0
    from gisgrade.design import Crossing

    rules = DesignRules(min_cover=1.2, trench_width=1.0, knots=knots, grade_break_cost=lam,
                        max_joint_deflection=math.radians(3), bend_angles=())
    p = design_profile(s, np.full(s.shape, 100.0), [Crossing(4.0, 98.8, 0.3)], rules)
    trib = np.r_[1.0, np.full(5, 2.0), 1.0]

    def objective(z0, z6, z12):
        zs = np.stack([z0 + (z6 - z0) * s[:4, None] / 6, z6 + (z12 - z6) * (s[4:, None] - 6) / 6])
        zs = np.concatenate([zs[0], zs[1][1:]]) if zs.ndim == 2 else None
        return zs

    grid = np.arange(97.5, 98.8 + 1e-9, 0.0025)
    z0, z6 = np.meshgrid(grid, grid, indexing="ij")
    best = np.inf
    for z12 in grid:  # the third knot by slices: 521^3 points in all
        zs = np.stack([z0 + (z6 - z0) * x / 6 if x <= 6 else z6 + (z12 - z6) * (x - 6) / 6 for x in s])
        ok = (zs <= 98.8 + 1e-12).all(axis=0) & (zs[2] <= 98.5 + 1e-12)
        turn = np.abs(np.arctan((z12 - z6) / 6) - np.arctan((z6 - z0) / 6))
        ok &= turn <= math.radians(3) + 1e-12
        f = (trib[:, None, None] * (98.8 - zs)).sum(axis=0) + lam * turn
        best = min(best, float(np.where(ok, f, np.inf).min()))
    k = np.flatnonzero(knots)
    turn = abs(math.atan((p.top[k[2]] - p.top[k[1]]) / 6) - math.atan((p.top[k[1]] - p.top[k[0]]) / 6))
    ours = float(np.sum(trib * (98.8 - p.top)) + lam * turn)
    assert p.top[2] <= 98.5 + 1e-9 and (p.top <= 98.8 + 1e-9).all()
    assert turn <= math.radians(3) + 1e-9
    # no grid point beats it, and it is within the grid's resolution of the best
    assert ours <= best + 1e-9
    assert best - ours < 0.0025 * (trib.sum() + lam)


# ---------------------------------------------------------------------------
# Valve siting rules on hand-built profiles
# ---------------------------------------------------------------------------

S = np.arange(0.0, 2001.0, 10.0)
WIDE = ValveRules(interval=1e9)  # no interval valves: one rule at a time


def kinds(frame):
    return list(zip(frame["station_m"].tolist(), frame["kind"].tolist()))


def test_high_point_gets_a_combination_valve_low_point_a_drain():
    top = 100 - 0.02 * np.abs(S - 600) + 0.01 * np.maximum(S - 1400, 0)  # crest 600, sag 1400
    got = site_valves(S, top, [60], [140], rules=WIDE)
    assert kinds(got) == [(600.0, "combination"), (1400.0, "drain")]


def test_hgl_near_the_pipe_gets_an_air_vacuum_valve():
    top = np.full(S.shape, 100.0) + 0.001 * S  # rising: no high point inside
    hgl = top + 3 + ((S - 1200) / 400) ** 2  # within 5 m of the pipe from 634 to 1766 m
    got = site_valves(S, top, [], [], grades=[hgl], names=["peak"], rules=WIDE)
    assert kinds(got) == [(1200.0, "air-vacuum")]  # at the closest point
    assert got["reason"].iloc[0].endswith("above the top of pipe in peak")


def test_slope_changes():
    # descent steepens at 500 (air-vacuum); ascent flattens at 1500 (air-release)
    down = np.where(S < 500, 100 - 0.005 * S, 97.5 - 0.03 * (S - 500))
    got = site_valves(S, down, [0], [], rules=WIDE)
    assert kinds(got) == [(500.0, "air-vacuum")]
    up = np.where(S < 1500, 100 + 0.03 * S, 145 + 0.005 * (S - 1500))
    got = site_valves(S, up, [], [0], rules=WIDE)
    assert kinds(got) == [(1500.0, "air-release")]
    # a change smaller than the rule's grade change is no reason
    mild = np.where(S < 500, 100 - 0.005 * S, 97.5 - 0.01 * (S - 500))
    assert len(site_valves(S, mild, [0], [], rules=WIDE)) == 0


@pytest.mark.parametrize("grade, kind", [(0.01, "air-release"), (-0.01, "air-vacuum"), (0.0, "combination")])
def test_long_runs_get_valves_at_the_interval(grade, kind):
    top = 100 + grade * S
    highs, lows = ([len(S) - 1], [0]) if grade > 0 else ([0], [len(S) - 1])
    got = site_valves(S, top, highs, lows, rules=ValveRules(interval=500.0, flat_run=1e9))
    # 2000 m in stretches of at most 500 m: valves at 500, 1000, 1500
    assert kinds(got) == [(500.0, kind), (1000.0, kind), (1500.0, kind)]


def test_a_stretch_through_a_sag_gets_its_valve_up_a_side_not_beside_the_drain():
    # common practice: air gathers at the high side of a stretch, never at the
    # bottom of a sag, where the drain is; 2000 m falling to a low point at
    # 1000 m and rising again, interval 1200 m: one valve is needed (the even
    # place would be the low point itself), and it goes up a side, no stretch
    # over the interval
    top = 100 + 0.01 * np.abs(S - 1000.0)
    got = site_valves(S, top, [], [100], rules=ValveRules(interval=1200.0, flat_run=1e9))
    air = got[got["kind"] != "drain"]
    assert len(air) == 1 and kinds(got[got["kind"] == "drain"]) == [(1000.0, "drain")]
    at = float(air["station_m"].iloc[0])
    assert abs(at - 1000.0) >= 200.0 and max(at, 2000.0 - at) <= 1200.0
    assert air["kind"].iloc[0] == ("air-vacuum" if at < 1000 else "air-release")


def test_ends_of_a_long_near_horizontal_run():
    # air gathers where the pipe leaves a level run downhill (a convex knee), not
    # where it falls into one (concave: 600 m here)
    top = np.where(S < 600, 100 - 0.01 * S, np.where(S < 1400, 94.0, 94.0 - 0.01 * (S - 1400)))
    got = site_valves(S, top, [0], [len(S) - 1], rules=ValveRules(interval=1e9, flat_run=100.0))
    assert kinds(got) == [(1400.0, "combination")]
    # a level run between two rises: its start is convex (the rise turns level)
    up = np.where(S < 600, 100 + 0.01 * S, np.where(S < 1400, 106.0, 106.0 + 0.01 * (S - 1400)))
    got = site_valves(S, up, [len(S) - 1], [0], rules=ValveRules(interval=1e9, flat_run=100.0))
    assert kinds(got) == [(600.0, "combination")]


def test_valves_close_together_merge_into_one_combination():
    top = 100 - 0.02 * np.abs(S - 600)
    hgl = np.full(S.shape, 103.0)  # level, 3 m above the crest: an air-vacuum there too
    got = site_valves(S, top, [60], [], grades=[hgl], names=["x"], rules=WIDE)
    assert kinds(got) == [(600.0, "combination")]
    assert "high point" in got["reason"].iloc[0] and "HGL" in got["reason"].iloc[0]


def test_demo_valves_follow_the_designed_high_and_low_points():
    from gisgrade.cli.demo import demo_project

    r = gisgrade.compute(demo_project())
    v, p = r.valves, r.points
    inner = p[(p["station_m"] > 0) & (p["station_m"] < r.table["station_m"].iloc[-1])]
    for row in inner.itertuples():  # a valve at every interior high point, a drain at every low point
        want = "drain" if row.kind == "low" else "combination"
        near = v[np.abs(v["station_m"] - row.station_m) < 20.0]
        assert want in set(near["kind"]), row
    # no stretch longer than the interval without an air valve
    air = np.sort(np.r_[0.0, v.loc[v["kind"] != "drain", "station_m"], r.table["station_m"].iloc[-1]])
    assert np.diff(air).max() <= 500.0 + 1e-6


def test_hgl_near_the_pipe_at_the_end_still_gets_a_valve_inside_the_line():
    # the HGL closest to the pipe at the last station (a fire flow drawn down
    # at the line's end): the valve goes at the closest point inside the line
    top = np.full(S.shape, 100.0) + 0.001 * S
    hgl = 125 - 0.012 * S  # within 5 m of the pipe from 1538 m, 1 m below it at the end
    got = site_valves(S, top, [], [], grades=[hgl], names=["fire"], rules=WIDE)
    assert kinds(got) == [(1990.0, "air-vacuum")]
    # there the HGL is under the pipe: 101.99 - (125 - 0.012 * 1990) = 0.87 m below
    from gisgrade.display import Display

    assert Display("SI").render(got["reason"].iloc[0]) == "HGL 0.87 m below the top of pipe in fire"


def test_a_turn_beyond_three_stiff_joints_is_taken_by_more_joints_not_a_big_bend(tmp_path):
    # 1 deg joints, curve_joints 3 (3 deg): a 5 deg turn needs a fitting or more
    # joints; the smallest standard bend (11.25 deg) would turn 6.25 deg too far,
    # so five joints of 1 deg take it (exact arithmetic)
    r = gisgrade.compute(turn_site(tmp_path, 5.0, '\n[design]\nmax_joint_deflection = "1 deg"\n'))
    assert len(r.bends) == 0
    share = r.table["plan_share_deg"].to_numpy()
    assert share.sum() == pytest.approx(5.0) and np.count_nonzero(share) == 5


@pytest.mark.parametrize("seed", range(6))
def test_prominence_matches_scipy_peak_prominences(seed):
    # SciPy's scipy.signal.peak_prominences (reference implementation of
    # topographic prominence) on the profile padded below its minimum at
    # both ends (the ends count as the bottom); the peaks are our high
    # points, plateaus included (values rounded to 0.5 m make flat tops and
    # peaks of equal height)
    from scipy.signal import peak_prominences
    from gisgrade.design.points import prominence, turning_points

    rng = np.random.default_rng(seed)
    z = np.round(np.cumsum(rng.normal(0, 1, 400)) * 2) / 2
    highs, _ = turning_points(np.arange(z.size, dtype=float), z)
    padded = np.r_[z.min() - 1, z, z.min() - 1]
    expected = np.minimum(peak_prominences(padded, highs + 1)[0], z[highs] - z.min())
    assert len(highs) > 10
    np.testing.assert_allclose(prominence(z, highs), expected, rtol=0, atol=1e-12)


def test_close_vertices_never_push_a_joint_past_its_deflection():
    # two 8 deg left turns 4 m apart, joints every 6 m of 3 deg, curve_joints 3:
    # the second vertex finds its joints used by the first, so the 16 deg are
    # taken by fittings and joints of at most 3 deg each, and every degree of
    # the plan turn is taken once (turns summed: plane geometry)
    a1, a2 = math.radians(8.0), math.radians(16.0)
    p0, p1 = np.array([0.0, 0.0]), np.array([500.0, 0.0])
    p2 = p1 + 4.0 * np.array([math.cos(a1), math.sin(a1)])
    s_vert = [0.0, 500.0, 504.0, 1004.0]
    p3 = p2 + 500.0 * np.array([math.cos(a2), math.sin(a2)])
    s = np.unique(np.r_[np.arange(0.0, 1004.0, 6.0), s_vert])
    xy = np.array([np.interp(s, s_vert, [p[i] for p in (p0, p1, p2, p3)]) for i in (0, 1)])
    vertices = np.isin(s, s_vert)
    std = np.radians([11.25, 22.5, 45, 90])
    d = plan_design(s, X0 + xy[0], Y0 + xy[1], np.ones(len(s), bool), math.radians(3), std,
                    vertices=vertices)
    assert np.abs(d.share).max() <= math.radians(3) + 1e-12
    fitted = sum(a if w == "left" else -a for a, w in zip(d.fittings["angle"], d.fittings["direction"]))
    assert fitted + d.share.sum() == pytest.approx(a2, abs=1e-9)
    assert len(d.fittings) >= 1  # 16 deg within 4 m is more than three 3 deg joints on each side hold
