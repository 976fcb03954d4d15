"""The pipe profile through the whole run: cover zones, crossings given by
depth and size, passing over a feature where cover permits, and the fittings table.

Geometry here is checked analytically on flat ground (exact by construction);
the values of cover and clearance are the project file's (common practice
magnitudes from the field notes).
"""
import json

import numpy as np
import pytest

from gisgrade.pipeline import run

from conftest import BASE, CROSSING_X, X0, Y, box, flat_site, write_dem, write_lines

def test_cover_zone_overrides_inside_and_boundaries_are_stations(tmp_path):
    extra = """
[[cover_zones]]
path = "zones.geojson"
minimum_field = "cover"
"""
    # A road corridor from x = X0 + 402.5 to X0 + 611.25: deeper cover inside.
    project = flat_site(tmp_path, extra, zones=[(box(X0 + 402.5, X0 + 611.25), {"cover": 1.8})])
    t = run(project, write=False).table
    s = t["station_m"].to_numpy()
    assert 402.5 in s and 611.25 in s  # zone edges are exact stations
    inside = (s >= 402.5) & (s <= 611.25)
    # Flat ground, no other rule binding: the pipe sits exactly at each stretch's
    # minimum cover away from the transitions at the zone edges (each a straight
    # grade run between two grade breaks, under 100 m long here).
    far = (np.abs(s - 402.5) > 100) & (np.abs(s - 611.25) > 100)
    assert np.allclose(t["cover_m"][inside & far], 1.8, atol=1e-6)
    assert np.allclose(t["cover_m"][~inside & far], 1.2, atol=1e-6)
    # every station keeps the zone's own minimum, cover recomputed from the
    # exact DEM value (flat 100 m) and the top of pipe (exact by construction)
    assert (100.0 - t["top_m"] >= np.where(inside, 1.8, 1.2) - 1e-6).all()


def test_crossing_by_depth_and_size_and_passing_over(tmp_path):
    extra = """
[[crossings]]
path = "x.geojson"
depth_field = "depth"
size_field = "height"
clearance = "0.45 m"

[[crossings]]
path = "x2.geojson"
bottom_field = "bottom"
size = "0.2 m"
side = "over"
clearance = "0.3 m"
"""
    # A sewer 2.0 m down to its top, 0.6 m tall, at x = X0 + 300: water main
    # passes under with 0.45 m (18 in; "Ten States Standards", from memory).
    project = flat_site(tmp_path, extra,
                        crossings=[([(X0 + 300, Y - 20), (X0 + 300, Y + 20)], {"depth": 2.0, "height": 0.6})])
    # A shallow duct bank whose bottom is at 99.4 m, 0.2 m tall, at x = X0 + 700,
    # and a deep tunnel (bottom 94.8 m, 0.2 m tall) at x = X0 + 850, both to pass over.
    write_lines(tmp_path / "x2.geojson", [[(X0 + 700, Y - 20), (X0 + 700, Y + 20)],
                                          [(X0 + 850, Y - 20), (X0 + 850, Y + 20)]],
                props=[{"bottom": 99.4, "name": "duct"}, {"bottom": 94.8, "name": "tunnel"}])
    r = run(project, write=False)
    t = r.table
    top_at = dict(zip(t["station_m"], t["top_m"]))
    # Under: top of pipe <= feature bottom - clearance = 100 - 2.0 - 0.6 - 0.45.
    assert top_at[300.0] <= 100 - 2.0 - 0.6 - 0.45 + 1e-6
    # Over the duct: pipe bottom (top - OD) >= 99.6 + 0.3 would put the top at
    # 100.22, above the 1.2 m cover line (98.8): cover does not permit passing
    # over, so the pipe passes under it (bottom - clearance = 99.1 >= 98.8 holds
    # at minimum cover) and the run says so.
    assert top_at[700.0] <= 99.4 - 0.3 + 1e-6
    assert any("duct: passing over it would leave less than the minimum cover" in n
               for n in r.summary["notes"])
    assert not r.relaxations
    # Over the tunnel: allowed; at minimum cover the pipe's bottom clears its top
    # by 98.8 - 0.32 - 95.0 = 3.48 m.
    sides = dict(zip(r.crossings.name, r.crossings.side))
    assert sides["tunnel"] == "over" and sides["duct"] == "under"
    achieved = dict(zip(r.crossings.name, r.clearances.achieved))
    assert achieved["tunnel"] == pytest.approx(98.8 - 0.32 - 95.0, abs=1e-6)


def test_fittings_table_lists_standard_bends(tmp_path):
    extra = CROSSING_X + """
[design]
joint_length = "6 m"
max_joint_deflection = "0 deg"
"""
    # Rigid joints: every change of grade the culvert's dip needs is a bend fitting.
    project = flat_site(tmp_path, extra,
                        crossings=[([(X0 + 500, Y - 20), (X0 + 500, Y + 20)], {"bottom": 95.0})])
    r = run(project, write=False)
    assert len(r.bends) > 0
    standard = {11.25, 22.5, 45.0, 90.0}  # standard vertical bend angles (common practice)
    assert set(np.round(r.bends["angle_deg"], 6)) <= standard
    assert set(r.bends["direction"]) <= {"sag", "crest"}
    top_at = dict(zip(r.table["station_m"], r.table["top_m"]))
    assert top_at[500.0] <= 95.0 - 0.3 + 1e-6


def skewed_at_500(props):
    """One crossed feature drawn at 30 degrees to the line through station 500."""
    t30 = np.tan(np.radians(30))
    return [([(X0 + 500 - 40, Y - 40 * t30), (X0 + 500 + 40, Y + 40 * t30)], props)]


def test_a_wide_feature_is_cleared_over_its_whole_footprint(tmp_path):
    extra = """
[[crossings]]
path = "x.geojson"
bottom_field = "bottom"
width_field = "width"
clearance = "0.3 m"
"""
    # A 3 m wide box culvert crossed at 30 degrees: the pipe runs (3/2)/sin 30 = 3 m
    # either side of the crossing point beneath it (plane geometry, exact).
    xing = skewed_at_500({"bottom": 97.0, "width": 3.0})
    r = run(flat_site(tmp_path, extra, crossings=xing), write=False)
    st, top = r.table["station_m"].to_numpy(), r.table["top_m"].to_numpy()
    for s in (497.0, 500.0, 503.0):
        at = np.isclose(st, s, atol=1e-9)
        assert at.sum() == 1
        assert top[at][0] <= 97.0 - 0.3 + 1e-6
    # achieved clearance: the least of bottom - top of pipe at the centre and at
    # both edges (plane geometry), from the top of pipe alone
    least = min(97.0 - np.interp(s, st, top) for s in (497.0, 500.0, 503.0))
    assert r.clearances.achieved[0] == pytest.approx(least, abs=1e-9)
    assert least >= 0.3 - 1e-6


def plane_site(folder, extra, crossings, grade):
    """Ground rising east at ``grade`` from 100 m at the line's start: a plane
    sampled at cell centres comes back exactly (bilinear, exact for a plane)."""
    xc = 500_000.0 + 10.0 * np.arange(200) + 5.0
    write_dem(folder / "dem.tif", np.tile(100.0 + grade * (xc - X0), (200, 1)), dtype="float64")
    write_lines(folder / "line.geojson", [[(X0, Y), (X0 + 1000.0, Y)]])
    write_lines(folder / "x.geojson", [c[0] for c in crossings], props=[c[1] for c in crossings])
    (folder / "project.toml").write_text(BASE + extra)
    return folder / "project.toml"


def test_over_a_wide_feature_on_a_slope_the_downhill_edge_governs(tmp_path):
    import pyogrio

    extra = """
[[crossings]]
path = "x.geojson"
bottom_field = "bottom"
size_field = "height"
width_field = "width"
side = "over"
clearance = "0.3 m"
"""
    # Ground rises 5 % east; a 3 m wide duct bank (bottom 121.0 m, 0.2 m tall)
    # crossed at 30 deg spans stations 497-503 ((3/2)/sin 30 = 3 m, plane
    # geometry). Nothing else binds: the pipe lies at minimum cover, top =
    # 98.8 + 0.05 s (exact), so its bottom is lowest over the feature at the
    # downhill edge, 497 m: clearance 98.8 + 0.05 x 497 - 0.32 - 121.2 = 2.13 m.
    xing = skewed_at_500({"bottom": 121.0, "height": 0.2, "width": 3.0, "name": "duct bank"})
    r = run(plane_site(tmp_path, extra, xing, 0.05), tmp_path / "o", figures=False)
    st, top = r.table["station_m"].to_numpy(), r.table["top_m"].to_numpy()
    np.testing.assert_allclose(top, 98.8 + 0.05 * st, atol=1e-6)
    layer = pyogrio.read_dataframe(tmp_path / "o" / "layers.gpkg", layer="crossings")
    assert layer["side"].tolist() == ["over"]
    assert layer["clearance_achieved_m"].iloc[0] == pytest.approx(98.8 + 0.05 * 497 - 0.32 - 121.2,
                                                                  abs=1e-6)
    assert layer["governing_station_m"].iloc[0] == pytest.approx(497.0, abs=1e-9)
    # the layer reports the angle the feature was drawn at (30 deg, plane geometry)
    assert layer["angle_deg"].iloc[0] == pytest.approx(30.0, abs=1e-9)


def test_a_relaxed_rule_is_found_at_its_worst_station(tmp_path):
    extra = CROSSING_X
    project = flat_site(tmp_path, extra,
                        crossings=[([(X0 + 500, Y - 20), (X0 + 500, Y + 20)], {"bottom": 90.0})])
    project.write_text(project.read_text().replace('minimum = "1.2 m"',
                                                   'minimum = "1.2 m"\nmaximum = "4 m"'))
    r = run(project, write=False)
    # The crossing needs the top of pipe at 90 - 0.3 = 89.7 m, 10.3 m below flat
    # ground at 100 m: max cover (4 m) gives way, worst exactly at the crossing,
    # by 10.3 - 4 = 6.3 m (exact arithmetic).
    rows = r.findings[r.findings["check"] == "rule relaxed: max cover"]
    assert len(rows) == 1
    # worst on the dip's bottom, the pipe lengths at the crossing (491 to 509 m:
    # the length centred on it, 497 to 503 m, and one either side), by at least
    # the crossing's own need and at most a little more: the bottom length may
    # tilt by its bends (standard angles), a few decimetres over a joint
    assert 491.0 - 1e-9 <= rows["worst_station_m"].iloc[0] <= 509.0 + 1e-9
    assert 6.3 - 1e-6 <= rows["worst_value"].iloc[0] <= 6.3 + 0.5


def test_written_tables_limits_reasons_summary_earthwork(tmp_path):
    import pandas as pd

    extra = CROSSING_X + """
[[crossings]]
path = "x2.geojson"
bottom_field = "bottom"
size = "0.2 m"
side = "over"
clearance = "0.3 m"
"""
    project = flat_site(tmp_path, extra, crossings=[([(X0 + 500, Y - 20), (X0 + 500, Y + 20)],
                                                     {"bottom": 95.0, "name": "culvert"})])
    write_lines(tmp_path / "x2.geojson", [[(X0 + 850, Y - 20), (X0 + 850, Y + 20)]],
                props=[{"bottom": 94.8, "name": "tunnel"}])
    r = run(project, tmp_path / "o", figures=False)
    prof = pd.read_csv(tmp_path / "o" / "profile.csv").set_index("station_m")
    # Limits on the top of pipe (exact arithmetic): the minimum-cover line
    # 100 - 1.2 everywhere; under the culvert its bottom - clearance; over the
    # tunnel its top + clearance + outside diameter, 94.8 + 0.2 + 0.3 + 0.32;
    # no max cover, so no lower limit elsewhere.
    assert prof.loc[500.0, "upper_limit_m"] == pytest.approx(95.0 - 0.3, abs=1e-4)
    assert prof.loc[500.0, "reason"] == "crossing culvert"
    # (a feature of unknown width is taken as wide as it is tall: 0.2 m, so
    # its footprint spans 849.9-850.1; documented rule)
    footprint = [849.9, 850.0, 850.1]
    np.testing.assert_allclose(prof.loc[footprint, "lower_limit_m"], 94.8 + 0.2 + 0.3 + 0.32,
                               atol=1e-4)
    others = ~prof.index.isin([500.0] + footprint)
    np.testing.assert_allclose(prof.loc[others, "upper_limit_m"], 98.8, atol=1e-4)
    assert prof.loc[others, "lower_limit_m"].isna().all()
    # Earthwork in the summary, by definition: trench below the minimum-cover
    # line = sum of trench width x depth below that line x tributary length
    # (half of each neighbouring interval), trench width = outside diameter +
    # 0.6 m (common practice default, docs/design.md); pipe length in 3D =
    # sum of the straight pieces' lengths (Pythagoras).
    summary = json.loads((tmp_path / "o" / "summary.json").read_text())
    s, top = r.table["station_m"].to_numpy(), r.table["top_m"].to_numpy()
    h = np.diff(s)
    tributary = np.r_[h, 0.0] / 2 + np.r_[0.0, h] / 2
    assert (98.8 - top).max() > 1.0  # the culvert's dip digs: the check has teeth
    assert summary["excavation_m3"] == pytest.approx(
        np.sum(0.92 * tributary * np.maximum(98.8 - top, 0.0)), rel=1e-9)
    assert summary["pipe_length_3d_m"] == pytest.approx(np.sum(np.hypot(h, np.diff(top))), rel=1e-12)


def nodata_site(folder, cols, extra=""):
    """Flat 100 m ground with nodata in row 99, columns ``cols``. The line
    y = Y runs on the boundary between rows 99 and 100 (their centres are 5 m
    either side), so bilinear sampling there touches both rows; it touches
    column j for cell-centre x of column j-1 < x < centre of column j+1."""
    z = np.full((200, 200), 100.0)
    z[99, cols] = -9999.0
    write_dem(folder / "dem.tif", z, nodata=-9999.0)
    write_lines(folder / "line.geojson", [[(X0, Y), (X0 + 1000.0, Y)]])
    (folder / "project.toml").write_text(BASE.replace('dem = "dem.tif"', 'dem = "dem.tif"' + extra))
    return folder / "project.toml"


def test_ground_bridged_exactly_where_the_stencil_meets_nodata(tmp_path):
    import pandas as pd

    # One nodata cell, column 60 (centre x = 500605): stations with
    # 500595 < X0 + s < 500615, i.e. 495 < s < 515: 500, 505, 510 (5 m spacing).
    # The gap between valid stations 495 and 515 is 20 m, within the default
    # max_gap of 3 cells (30 m), so it is bridged: flat ground, bridged exactly.
    r = run(nodata_site(tmp_path, [60]), tmp_path / "o", figures=False)
    prof = pd.read_csv(tmp_path / "o" / "profile.csv")
    s = prof["station_m"].to_numpy()
    inside = s[(s > 495.0) & (s < 515.0)]  # 500, 505, 510 and the pipe joints between
    assert prof.loc[prof["ground_bridged"], "station_m"].tolist() == inside.tolist()
    assert {500.0, 505.0, 510.0} <= set(inside)
    np.testing.assert_allclose(prof["ground_m"], 100.0, atol=1e-9)
    assert r.summary["ground_bridged_stations"] == len(inside)


def test_max_gap_from_the_project_file(tmp_path):
    from gisgrade.errors import InputError

    # Three nodata cells, columns 60-62: stations 500-530 (495 < s < 535); the
    # gap from 495 to 535 is 40 m, longer than the default 30 m: an error ...
    with pytest.raises(InputError, match="max_gap 30.0 m"):
        run(nodata_site(tmp_path, [60, 61, 62]), write=False)
    # ... which terrain.max_gap = 45 m turns into bridging, exactly there
    r = run(nodata_site(tmp_path, [60, 61, 62], '\nmax_gap = "45 m"'), write=False)
    t = r.table
    s = t["station_m"].to_numpy()
    assert t.loc[t["ground_bridged"], "station_m"].tolist() == s[(s > 495.0) & (s < 535.0)].tolist()
    # and a max_gap below the one-cell gap (20 m) refuses even that
    with pytest.raises(InputError, match="max_gap 15.0 m"):
        run(nodata_site(tmp_path, [60], '\nmax_gap = "15 m"'), write=False)


def test_cover_findings_where_the_pipe_has_too_little_cover(tmp_path):
    from gisgrade.pipeline import stage_findings

    # The findings stage on a designed table whose pipe is lifted 0.5 m from
    # station 300 to 320: cover there is 100 - (98.8 + 0.5) = 0.7 m, short of
    # the 1.2 m minimum (exact arithmetic); elsewhere it is kept.
    r = run(flat_site(tmp_path), write=False)
    t = r.table.copy()
    lift = (t["station_m"] >= 300.0) & (t["station_m"] <= 320.0)
    t.loc[lift, "top_m"] += 0.5
    t["cover_m"] = 100.0 - t["top_m"]
    found = stage_findings(r.project, t, r.grades, [])
    cover = found[found["check"] == "cover"]
    assert len(cover) == 1
    row = cover.iloc[0]
    assert (row["from_station_m"], row["to_station_m"]) == (300.0, 320.0)
    assert row["worst_value"] == pytest.approx(0.7, abs=1e-9)
    assert row["limit"] == 1.2
    assert not (r.findings["check"] == "cover").any()  # the designed pipe keeps its cover


def test_over_a_wide_feature_only_where_cover_permits_across_its_footprint(tmp_path):
    # A 10 m wide duct bank crossed square at station 500 on ground falling 5 %
    # (plane geometry, exact): ground 75.0 m at its centre, 74.75 m at its
    # downhill edge (505), so the 1.2 m cover line is 73.8 m there and 73.55 m
    # at the edge. Passing over needs the top of pipe at feature top 73.08 +
    # clearance 0.3 + OD 0.32 = 73.70 m: it fits at the centre, not at the
    # edge, so the pipe must pass under (top <= 72.78 - 0.3 over the whole
    # footprint), with a note and no rule giving way.
    extra = """
[[crossings]]
path = "x.geojson"
bottom_field = "bottom"
size = "0.3 m"
width = "10 m"
side = "over"
clearance = "0.3 m"
"""
    project = flat_site(tmp_path, extra,
                        crossings=[([(X0 + 500, Y - 20), (X0 + 500, Y + 20)], {"bottom": 72.78})])
    cols = np.arange(200) * 10.0 + 5.0 + 500_000.0  # cell-centre x of the conftest grid
    write_dem(tmp_path / "dem.tif", np.tile(100.0 - 0.05 * (cols - X0), (200, 1)), dtype="float64")
    r = run(project, write=False)
    assert r.crossings.side.tolist() == ["under"]
    assert any("passing over it would leave less than the minimum cover" in n
               for n in r.summary["notes"])
    assert not r.relaxations
    st, top = r.table["station_m"].to_numpy(), r.table["top_m"].to_numpy()
    foot = (st >= 495 - 1e-9) & (st <= 505 + 1e-9)
    assert (top[foot] <= 72.78 - 0.3 + 1e-6).all()
