"""gisgrade corridors: candidate routes from the terrain.

Each test is checked against something outside the code under test: an
analytic shortest route around a ridge (8-neighbour grid metric: a diagonal
step is sqrt 2 cells), shapely's geometry for crossings and no-go areas, the
fluids library for the friction slope, and scipy's Dijkstra
(``scipy.sparse.csgraph.dijkstra``) for the path cost. The terrain here is
invented for the tests.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
import shapely
from shapely.geometry import LineString, Point

from conftest import UTM, write_dem, write_lines

X0, Y0, CELL = 500_000.0, 4_650_000.0, 10.0

BASE = """\
[alignment]
path = "line.geojson"
spacing = "10 m"

[terrain]
dem = "dem.tif"
"""

HYDRAULICS = """
[pipe]
inside_diameter = "300 mm"
outside_diameter = "320 mm"
roughness = "0.1 mm"

[cover]
minimum = "1.2 m"

[hydraulics]
source_head = "{head} m"
flow = "20 L/s"
temperature = "15 degC"
"""


def xy(row, col):
    """Centre of grid cell (row, col) in the test DEM's CRS."""
    return X0 + (col + 0.5) * CELL, Y0 - (row + 0.5) * CELL


def site(folder, z, corridors="", extra=""):
    """A project over grid ``z`` (10 m cells, UTM 33N) with a dummy drawn line."""
    write_dem(folder / "dem.tif", z)
    rows, cols = z.shape
    write_lines(folder / "line.geojson", [[xy(rows // 2, 1), xy(rows // 2, cols - 2)]])
    (folder / "project.toml").write_text(BASE + extra + "\n[corridors]\n" + corridors)
    from gisgrade.project import load
    return load(folder / "project.toml", ground_only=True)


def write_polygons(path, polys):
    feats = [{"type": "Feature", "properties": {},
              "geometry": {"type": "Polygon", "coordinates": [[list(c) for c in p]]}}
             for p in polys]
    doc = {"type": "FeatureCollection", "features": feats,
           "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32633"}}}
    path.write_text(json.dumps(doc))
    return path


def ridge_with_pass():
    """Flat valley floor at 100 m; a ridge 40 m high over columns 78..82 with
    one pass, rows 34..41, through it."""
    z = np.full((100, 161), 100.0)
    z[:, 78:83] = 140.0
    z[34:42, 78:83] = 100.0
    return z


def test_route_goes_through_the_pass_as_the_analytic_route(tmp_path):
    """Steep ground (the ridge's flanks) is dear, so the cheapest route goes
    through the pass. Analytic route (8-neighbour metric): the cells beside
    the ridge see its flank in Horn's 3x3 stencil, so the free corridor is
    rows 35..40 and columns <= 76 or >= 84 beside the ridge; from the source
    (90, 27) a pure diagonal reaches the pass corner (40, 77), the pass row
    40 runs to (40, 83) and a pure diagonal reaches the destination
    (90, 133): 2 x 50 sqrt 2 + 6 cells = 1474.2 m. The found route is within
    1.5 cells (15 m, Hausdorff) of it and its cost is that length (plain
    ground costs 1 per metre)."""
    from gisgrade.corridors import plan_corridors

    p = site(tmp_path, ridge_with_pass(), 'roughness_weight = "0 / m"\nk = 1\n'
             'simplify_tolerance = "0 m"\nmargin = "2 km"\n')
    res = plan_corridors(p, [xy(90, 27), xy(90, 133)])
    analytic = LineString([xy(90, 27), xy(40, 77), xy(40, 83), xy(90, 133)])
    found = res.candidates.geometry.iloc[0]
    assert found.hausdorff_distance(analytic) <= 1.5 * CELL
    assert res.table.cost_m.iloc[0] == pytest.approx((100 * math.sqrt(2) + 6) * CELL, rel=1e-9)
    assert res.table.grid_length_m.iloc[0] == pytest.approx(analytic.length, rel=1e-9)
    assert res.table.max_ground_m.iloc[0] == pytest.approx(100.0)  # never on the ridge


def test_no_go_polygon_is_never_crossed(tmp_path):
    """A no-go square across the straight line: no candidate, even simplified
    with a coarse tolerance, touches it (shapely)."""
    from gisgrade.corridors import plan_corridors

    x0, y1 = xy(30, 40)
    x1, y0 = xy(70, 60)
    write_polygons(tmp_path / "park.geojson", [[(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]])
    p = site(tmp_path, np.full((100, 100), 100.0),
             'no_go = ["park.geojson"]\nk = 3\nsimplify_tolerance = "80 m"\nseparation = "30 m"\n')
    res = plan_corridors(p, [xy(50, 5), xy(50, 95)])
    park = shapely.box(x0, y0, x1, y1)
    assert len(res.candidates) == 3
    for line in res.candidates.geometry:
        assert not line.intersects(park)
        assert line.length > 0


def test_crossing_cost_moves_the_route_to_cross_fewer_features(tmp_path):
    """Three streams across the straight line, each ending 200 m short of the
    grid's edges: free to cross, the route crosses all three (straight); at
    500 m a crossing it goes round their ends and crosses none (counted by
    shapely on the written polyline)."""
    from gisgrade.corridors import plan_corridors
    from gisgrade.project import load

    streams = [[xy(20, c), xy(80, c)] for c in (30, 50, 70)]
    write_lines(tmp_path / "streams.geojson", streams)
    crossing = ('\n[[crossings]]\npath = "streams.geojson"\ndepth_field = "d"\n'
                'clearance = "0.3 m"\n')
    counts = {}
    for cost in ("0 m", "500 m"):
        site(tmp_path, np.full((100, 100), 100.0), f'crossing_cost = "{cost}"\nk = 1\n',
             extra=crossing)
        res = plan_corridors(load(tmp_path / "project.toml", ground_only=True),
                             [xy(50, 5), xy(50, 95)])
        line = res.candidates.geometry.iloc[0]
        counts[cost] = sum(len(shapely.get_parts(line.intersection(LineString(s))))
                           for s in streams if line.intersects(LineString(s)))
        assert res.table.crossings.iloc[0] == counts[cost]
    assert counts == {"0 m": 3, "500 m": 0}


def test_hgl_term_keeps_the_route_below_a_hill_the_flow_cannot_climb(tmp_path):
    """A hill 40 m high between source and destination, the source head
    126 m over a 100 m valley: with the pipe 1.36 m deep and 140 kPa the
    least pressure (14.28 m of water at 15 degC), ground above about
    113.08 m less friction is out of reach. Without the HGL term the route goes
    straight over the top; with it, it keeps to ground the flow can serve."""
    from gisgrade.corridors import plan_corridors
    from gisgrade.project import load

    rows, cols = np.mgrid[0:100, 0:140]
    z = 100.0 + 40.0 * np.exp(-((rows - 50) ** 2 + (cols - 70) ** 2) / (2 * 12.0 ** 2))
    hyd = HYDRAULICS.format(head=126)
    out = {}
    for weight in ("0 / m", "1 / m"):
        site(tmp_path, z, f'hgl_weight = "{weight}"\nk = 1\nsteepness_weight = 0\n'
             'roughness_weight = "0 / m"\n', extra=hyd)
        res = plan_corridors(load(tmp_path / "project.toml", ground_only=True),
                             [xy(50, 5), xy(50, 135)])
        out[weight] = res.table.iloc[0]
        served = res.profiles[0]["served"]  # at the source: no friction yet
        assert served[0] == pytest.approx(126 + 1.36 - 14.28, abs=0.01)
        if weight == "0 / m":  # straight away from the source: the head only falls
            assert np.all(np.diff(served) <= 1e-9) and served[-1] < served[0]
    assert out["0 / m"].max_ground_m > 135  # straight over the hill
    assert out["0 / m"].max_head_deficit_m > 20
    # The penalty rises with the deficit: a few centimetres may be traded for length.
    assert out["1 / m"].max_head_deficit_m < 0.5
    assert out["1 / m"].max_ground_m < 126 + 1.36 - 14.28  # 113.08 m, before friction


def test_friction_slope_from_the_project_matches_fluids(tmp_path):
    """The HGL term's friction slope is Darcy-Weisbach with the Colebrook
    factor, checked against fluids.friction.friction_factor (the reference
    library) for 20 L/s in a 300 mm pipe, 0.1 mm roughness, water at 15 degC
    (density 999.1 kg/m3, viscosity 1.138 mPa s, IAPWS via iapws)."""
    import fluids
    import iapws

    from gisgrade.corridors.stage import hydraulic_reach

    p = site(tmp_path, np.full((10, 10), 100.0), "", extra=HYDRAULICS.format(head=126))
    reach, why = hydraulic_reach(p)
    assert why is None
    w = iapws.IAPWS95(T=288.15, P=0.101325)
    v = 0.02 / (math.pi * 0.3 ** 2 / 4)
    f = fluids.friction.friction_factor(Re=w.rho * v * 0.3 / w.mu, eD=0.1e-3 / 0.3)
    assert reach.friction_slope == pytest.approx(f / 0.3 * v ** 2 / (2 * 9.80665), rel=2e-3)
    assert reach.min_head == pytest.approx(140e3 / (w.rho * 9.80665), rel=1e-3)
    assert reach.depth == pytest.approx(1.2 + 0.16)


def shared_by_sampling(line, earlier, radius, fixed):
    """Share of ``line`` within ``radius`` of ``earlier`` lines, sampled every
    metre, leaving out samples within ``radius`` of the ``fixed`` points."""
    s = np.arange(0.0, line.length, 1.0)
    pts = shapely.points(np.array([line.interpolate(d).coords[0] for d in s]))
    keep = np.min([shapely.distance(pts, Point(f)) for f in fixed], axis=0) > radius
    near = np.min([shapely.distance(pts, e) for e in earlier], axis=0) <= radius
    return float(np.mean(near[keep]))


def test_k_routes_are_distinct_by_the_stated_measure(tmp_path):
    """Three candidates on rolling ground: each has at most 50 % of its length
    (away from the source and destination) within 100 m of an earlier one,
    by an independent sampling every metre."""
    from gisgrade.corridors import plan_corridors

    rows, cols = np.mgrid[0:80, 0:120]
    z = 100 + 8 * np.sin(rows / 9.0) * np.cos(cols / 13.0)
    p = site(tmp_path, z, 'k = 3\nseparation = "100 m"\nmax_shared = "50 %"\n')
    pts = [xy(40, 5), xy(40, 115)]
    res = plan_corridors(p, pts)
    lines = list(res.candidates.geometry)
    assert len(lines) == 3
    for i in range(1, 3):
        share = shared_by_sampling(lines[i], lines[:i], 100.0, pts)
        assert share <= 0.5 + 0.01
        assert res.table.shared.iloc[i] == pytest.approx(share, abs=0.01)


def test_path_cost_equals_plain_dijkstra():
    """On a small random cost grid the least-cost path's cost equals scipy's
    Dijkstra over the same grid as a graph (8 neighbours, edge = step length
    x mean of the two cells' costs), and so does the cost summed along the
    path found."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import dijkstra

    from gisgrade.corridors.path import least_cost_path, path_cost

    rng = np.random.default_rng(7)
    c = rng.uniform(0.5, 5.0, (12, 15))
    c[3:9, 7] = np.inf  # a wall with gaps
    n_r, n_c = c.shape
    idx = np.arange(c.size).reshape(c.shape)
    src, dst, w = [], [], []
    for dr, dc in [(0, 1), (1, 0), (1, 1), (1, -1)]:
        r0, r1 = 0, n_r - dr
        c0, c1 = max(0, -dc), n_c - max(0, dc)
        a = idx[r0:r1, c0:c1]
        b = idx[r0 + dr:r1 + dr, c0 + dc:c1 + dc]
        wt = math.hypot(dr, dc) * 2.0 * (c.flat[a] + c.flat[b]) / 2
        ok = np.isfinite(wt)
        src += [a[ok], b[ok]]
        dst += [b[ok], a[ok]]
        w += [wt[ok], wt[ok]]
    g = coo_matrix((np.concatenate(w), (np.concatenate(src), np.concatenate(dst))),
                   shape=(c.size, c.size)).tocsr()
    ref = dijkstra(g, indices=idx[6, 1])[idx[5, 13]]
    cells, total = least_cost_path(c, (6, 1), (5, 13), 2.0)
    assert total == pytest.approx(ref, rel=1e-12)
    assert path_cost(c, cells, 2.0) == pytest.approx(ref, rel=1e-12)


def test_outputs_written_and_readable(tmp_path):
    """candidates.gpkg reads back as a centerline layer (one route picked by
    its route field); cost.tif holds the cost surface; the CSV a row per
    candidate."""
    import pandas as pd
    import rasterio

    from gisgrade.alignment import read_alignment
    from gisgrade.corridors import plan_corridors

    p = site(tmp_path, ridge_with_pass(), "k = 2\n")
    res = plan_corridors(p, [xy(90, 27), xy(90, 133)])
    res.write(tmp_path / "out")
    out = tmp_path / "out"
    al = read_alignment(out / "candidates.gpkg", where="route = 'C2'")
    assert al.length == pytest.approx(res.table.length_m.iloc[1], rel=1e-9)
    with rasterio.open(out / "cost.tif") as src:
        back = src.read(1)
        assert src.transform == res.grid.transform
    fin = np.isfinite(res.cost)
    assert np.allclose(back[fin], res.cost[fin], rtol=1e-6)
    table = pd.read_csv(out / "corridors.csv")
    assert list(table.route) == ["C1", "C2"]
    assert (out / "corridors.png").stat().st_size > 10_000


def run_cli(args):
    from gisgrade.cli import main
    return main(args)


@pytest.mark.parametrize("case", ["outside", "no-go", "k0", "bad-xy", "same-cell"])
def test_cli_refusals_exit_2_one_line(tmp_path, capsys, case):
    """Bad coordinates, a point in a no-go area, k < 1 and a source in the
    destination's cell stop with one line and exit status 2, and nothing is
    written."""
    x0, y1 = xy(30, 40)
    x1, y0 = xy(70, 60)
    write_polygons(tmp_path / "park.geojson", [[(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]])
    site(tmp_path, np.full((100, 100), 100.0), 'no_go = ["park.geojson"]\n')
    a, b = xy(50, 5), xy(50, 95)
    start = {"outside": f"{a[0] - 5000},{a[1]}", "no-go": "%f,%f" % xy(50, 50),
             "k0": "%f,%f" % a, "bad-xy": "east,north",
             "same-cell": "%f,%f" % (b[0] + 2, b[1])}[case]
    args = ["corridors", str(tmp_path / "project.toml"), "--from", start, "--to",
            "%f,%f" % b, "-o", str(tmp_path / "out")] + (["-k", "0"] if case == "k0" else [])
    assert run_cli(args) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("gisgrade: error:") and "\n" not in err
    assert not (tmp_path / "out").exists()


def test_cli_writes_the_candidates(tmp_path, capsys):
    """The command end to end over the ridge: three files and the map."""
    site(tmp_path, ridge_with_pass(), "k = 2\n")
    a, b = xy(90, 27), xy(90, 133)
    assert run_cli(["corridors", str(tmp_path / "project.toml"), "--from", "%f,%f" % a,
                    "--to", "%f,%f" % b, "--crs", UTM, "-o", str(tmp_path / "out")]) == 0
    assert {f.name for f in (tmp_path / "out").iterdir()} == {
        "candidates.gpkg", "cost.tif", "corridors.png", "corridors.csv", "MANIFEST.json"}
    assert "C1:" in capsys.readouterr().out


def test_dem_read_through_a_window_and_averaged_to_the_resolution(tmp_path):
    """With margin 100 m and resolution 20 m over a 10 m DEM, the grid holds
    only the window around the points (plus the margin) and each cell is the
    mean of its 2 x 2 DEM cells (numpy's mean of the same cells; GDAL's
    average resampling)."""
    from gisgrade.corridors.stage import read_window

    z = np.random.default_rng(3).uniform(90, 110, (100, 120))
    p = site(tmp_path, z, 'margin = "100 m"\nresolution = "20 m"\n')
    pts = np.array([xy(40, 30), xy(60, 80)])
    g = read_window(p.terrain.dem[0], pts, margin=100.0, resolution=20.0, max_cells=4e6,
                    vertical_factor=1.0, mpu=1.0)
    assert g.cell == 20.0
    r0, c0 = int(round((Y0 - g.y0) / CELL)), int(round((g.x0 - X0) / CELL))
    # The cells holding the window's corner: 100 m beyond the points' cell centres.
    assert (r0, c0) == (int((405 + 0 - 100) // CELL), int((305 - 100) // CELL)) == (30, 20)
    rows, cols = g.z.shape
    assert rows * 2 <= 42 and cols * 2 <= 72  # the window only, not the 100 x 120 DEM
    ref = z[r0:r0 + 2 * rows, c0:c0 + 2 * cols].reshape(rows, 2, cols, 2).mean(axis=(1, 3))
    assert np.allclose(g.z, ref.astype("float32"), atol=1e-4)


def test_preferred_corridor_draws_the_route_along_it(tmp_path):
    """A road 200 m north of the straight line: at half the cost per metre the
    cheapest continuous route meets the road at 60 deg (cos 60 = 0.5, the
    refraction rule of a two-speed medium), costing 2 x 231 m + 670 m / 2 =
    797 m against the 900 m straight line, with about 59 % of its length on
    the road; the grid route follows it (more than 40 % on the road, cost
    within 3 % of 797 m). At no discount the route is straight, never on it."""
    from gisgrade.corridors import plan_corridors
    from gisgrade.project import load

    road = LineString([xy(30, 5), xy(30, 95)])
    write_lines(tmp_path / "road.geojson", [list(road.coords)])
    share = {}
    for factor in (1.0, 0.5):
        site(tmp_path, np.full((100, 100), 100.0), f'preferred = ["road.geojson"]\n'
             f'preferred_factor = {factor}\npreferred_width = "20 m"\nk = 1\n')
        res = plan_corridors(load(tmp_path / "project.toml", ground_only=True),
                             [xy(50, 5), xy(50, 95)])
        line = res.candidates.geometry.iloc[0]
        share[factor] = line.intersection(road.buffer(15.0)).length / line.length
        cost = res.table.cost_m.iloc[0]
    assert share[1.0] == 0.0
    assert share[0.5] > 0.4
    best = 2 * 200 / math.sin(math.radians(60)) + (900 - 2 * 200 / math.tan(math.radians(60))) / 2
    assert best == pytest.approx(796.4, abs=0.1)
    assert cost == pytest.approx(best, rel=0.03)


def test_waypoints_are_visited_in_order(tmp_path):
    """With a waypoint off the straight line the route passes through it
    (its cell centre, within half a cell diagonal) and its length is at least
    the two straight legs' (triangle inequality)."""
    from gisgrade.corridors import plan_corridors

    p = site(tmp_path, np.full((60, 100), 100.0), "k = 1\n")
    a, v, b = xy(30, 5), xy(10, 50), xy(30, 95)
    res = plan_corridors(p, [a, v, b])
    line = res.candidates.geometry.iloc[0]
    assert line.distance(Point(v)) <= CELL * math.sqrt(2) / 2 + 1e-6
    assert line.length >= math.dist(a, v) + math.dist(v, b) - CELL


def test_point_layer_as_source_and_crossing_cost_list_checked(tmp_path, capsys):
    """--from may be a one-point layer; a list of crossing costs must have one
    cost per [[crossings]] table (one line, exit 2)."""
    write_lines(tmp_path / "streams.geojson", [[xy(20, 50), xy(80, 50)]])
    extra = '\n[[crossings]]\npath = "streams.geojson"\ndepth_field = "d"\nclearance = "0.3 m"\n'
    site(tmp_path, np.full((100, 100), 100.0), 'crossing_cost = ["100 m", "50 m"]\n', extra)
    a, b = xy(50, 5), xy(50, 95)
    (tmp_path / "src.geojson").write_text(json.dumps({
        "type": "FeatureCollection",
        "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32633"}},
        "features": [{"type": "Feature", "properties": {},
                      "geometry": {"type": "Point", "coordinates": list(a)}}]}))
    args = ["corridors", str(tmp_path / "project.toml"), "--from", str(tmp_path / "src.geojson"),
            "--to", "%f,%f" % b, "-o", str(tmp_path / "out")]
    assert run_cli(args) == 2
    err = capsys.readouterr().err.strip()
    assert "corridors.crossing_cost" in err and "\n" not in err
    text = (tmp_path / "project.toml").read_text().replace('["100 m", "50 m"]', '["100 m"]')
    (tmp_path / "project.toml").write_text(text)
    assert run_cli(args) == 0
    from gisgrade.alignment import read_alignment
    al = read_alignment(tmp_path / "out" / "candidates.gpkg", where="route = 'C1'")
    assert np.allclose(al.coords[0], a)


def test_no_go_closing_the_way_is_refused(tmp_path):
    """A no-go band across the whole window: no route exists, one line names why."""
    from gisgrade.corridors import plan_corridors
    from gisgrade.errors import InputError

    x0, y1 = xy(-10, 45)
    x1, y0 = xy(110, 55)
    write_polygons(tmp_path / "band.geojson", [[(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]])
    p = site(tmp_path, np.full((100, 100), 100.0), 'no_go = ["band.geojson"]\n')
    with pytest.raises(InputError, match="no route between the points"):
        plan_corridors(p, [xy(50, 5), xy(50, 95)])


def test_compare_runs_the_candidates_and_the_drawn_line_through_the_whole_job(tmp_path):
    """--compare: one table from gisgrade routes, the drawn centerline (route
    "drawn") beside each candidate, one row per route and scenario. The whole
    job measures each line itself: its length equals the candidate's polyline
    length and the drawn line's (shapely), and its crossings the count on the
    written line."""
    import pandas as pd

    streams = [[xy(20, 50), xy(80, 50)]]
    write_lines(tmp_path / "streams.geojson", streams, props=[{"bottom": 95.0}])
    extra = (HYDRAULICS.format(head=140) + '\n[[crossings]]\npath = "streams.geojson"\n'
             'bottom_field = "bottom"\nclearance = "0.3 m"\n')
    site(tmp_path, np.full((100, 100), 100.0), 'k = 2\ncrossing_cost = "50 m"\n', extra)
    a, b = xy(50, 5), xy(50, 95)
    assert run_cli(["corridors", str(tmp_path / "project.toml"), "--from", "%f,%f" % a,
                    "--to", "%f,%f" % b, "--compare", "--workers", "0", "-q",
                    "-o", str(tmp_path / "out")]) == 0
    table = pd.read_csv(tmp_path / "out" / "comparison.csv")
    cands = pd.read_csv(tmp_path / "out" / "corridors.csv")
    assert list(dict.fromkeys(table.route)) == ["drawn", "C1", "C2"]
    assert set(table.status) == {"ok"}
    assert set(table.scenario) == {"design", "static"}
    first = table.drop_duplicates("route").set_index("route")
    drawn = LineString([xy(50, 1), xy(50, 98)])
    assert first.loc["drawn", "length_m"] == pytest.approx(drawn.length, rel=1e-9)
    for row in cands.itertuples():
        assert first.loc[row.route, "length_m"] == pytest.approx(row.length_m, rel=1e-6)
        assert first.loc[row.route, "crossings"] == row.crossings


# --------------------------------------------------------------------------
# Findings of the hostile trial
# --------------------------------------------------------------------------


def test_default_folder_is_the_runs_with_corridors_added(tmp_path, capsys):
    """With no -o the candidates go to gisgrade-out-corridors beside the
    project (as sizes goes to gisgrade-out-sizes), so a run's folder
    gisgrade-out is left as it was."""
    site(tmp_path, np.full((40, 60), 100.0), "k = 1\n")
    run_out = tmp_path / "gisgrade-out"
    run_out.mkdir()
    (run_out / "profile.csv").write_text("station_m\n0\n")
    assert run_cli(["corridors", str(tmp_path / "project.toml"), "--from", "%f,%f" % xy(20, 5),
                    "--to", "%f,%f" % xy(20, 55)]) == 0
    assert (tmp_path / "gisgrade-out-corridors" / "corridors.csv").is_file()
    assert [f.name for f in run_out.iterdir()] == ["profile.csv"]
    assert "gisgrade-out-corridors" in capsys.readouterr().out


def test_default_margin_holds_a_pass_half_a_leg_off_the_line(tmp_path):
    """An 80 m ridge across the line between points 3000 m apart, with its
    only pass 1000 m off the straight line. The default margin (half the
    longest leg: 1500 m) holds the pass and the route goes through it; the
    old rule (a quarter of the span, 750 m) does not, and climbs the ridge
    at a higher cost. Plane geometry: any route up to sqrt 2 x 3000 m =
    4243 m long lies within 1500 m of the line; through the pass, the
    8-neighbour route is about 2 x (100 sqrt 2 + 48) x 10 m + 50 m = 3878 m, under
    that."""
    from gisgrade.corridors import plan_corridors
    from gisgrade.corridors.stage import default_margin

    z = np.full((400, 360), 100.0)
    z[:, 178:183] = 180.0
    z[96:104, 178:183] = 100.0  # the pass, rows 96..103: 1000 m north of row 200
    a, b = xy(200, 30), xy(200, 330)
    assert default_margin(np.array([a, b])) == pytest.approx(1500.0)
    res = plan_corridors(site(tmp_path, z, 'k = 1\nroughness_weight = "0 / m"\n'), [a, b])
    assert res.table.max_ground_m.iloc[0] == pytest.approx(100.0)  # never on the ridge
    old = plan_corridors(site(tmp_path, z, 'k = 1\nroughness_weight = "0 / m"\n'
                              'margin = "750 m"\n'), [a, b])
    assert old.table.max_ground_m.iloc[0] == pytest.approx(180.0)
    assert res.table.cost_m.iloc[0] < old.table.cost_m.iloc[0]


def test_a_route_along_the_window_edge_gets_a_note(tmp_path):
    """A ridge that is lowest at the north end of the DEM: with a small
    margin the cheapest route crosses at the window's north edge and a note
    says the window may be too small; the window's sides that are the DEM's
    own edges are told apart (with 2 km the window is the whole DEM)."""
    from gisgrade.corridors import plan_corridors

    z = np.full((100, 161), 100.0)
    z[:, 78:83] = 100.0 + 0.8 * np.arange(100)[:, None]  # 0.8 m higher per row southward
    pts = [xy(50, 27), xy(50, 133)]
    res = plan_corridors(site(tmp_path, z, 'k = 1\nmargin = "200 m"\n'), pts)
    note = res.table.note.iloc[0]
    assert "C1 runs along the window's north edge" in note and "corridors.margin" in note
    assert any(n.startswith("C1 runs along the window's north edge") for n in res.notes)
    assert "north" not in res.grid.dem_edges  # the window ends inside the DEM
    res = plan_corridors(site(tmp_path, z, 'k = 1\nmargin = "2 km"\n'), pts)
    assert set(res.grid.dem_edges) == {"north", "south", "west", "east"}  # the whole DEM


def test_head_deficit_named_on_the_console_and_in_the_table(tmp_path, capsys):
    """The hill of the HGL test with the HGL term off: the route goes over
    the 140 m top where the flow serves at most 113.08 m of ground (hand
    calculation in that test, before friction), so the deficit is at least
    26.9 m and both the console and corridors.csv name C1 and the deficit."""
    import pandas as pd

    rows, cols = np.mgrid[0:100, 0:140]
    z = 100.0 + 40.0 * np.exp(-((rows - 50) ** 2 + (cols - 70) ** 2) / (2 * 12.0 ** 2))
    site(tmp_path, z, 'hgl_weight = "0 / m"\nk = 1\nsteepness_weight = 0\n'
         'roughness_weight = "0 / m"\n', extra=HYDRAULICS.format(head=126))
    assert run_cli(["corridors", str(tmp_path / "project.toml"), "--from", "%f,%f" % xy(50, 5),
                    "--to", "%f,%f" % xy(50, 135), "-o", str(tmp_path / "out")]) == 0
    table = pd.read_csv(tmp_path / "out" / "corridors.csv")
    deficit = table.max_head_deficit_m.iloc[0]
    assert deficit >= 140.0 - 113.08 - 0.5  # the ground's top is sampled within a cell
    said = f"C1: the design flow cannot serve its ground, up to {deficit:.2f} m"
    assert said in table.note.iloc[0]
    assert f"note: {said}" in capsys.readouterr().out


def test_candidates_are_written_cheapest_first_in_every_output(tmp_path):
    """Over the ridge with its pass, 100 m separation and k = 8, the
    penalised search finds a dearer route before a cheaper one; the written
    candidates are ordered by cost (C1 cheapest), and the table, the line
    layer and the figure's profiles agree row for row."""
    import geopandas as gpd
    import pandas as pd

    from gisgrade.corridors import plan_corridors
    from gisgrade.corridors.path import shared_share

    p = site(tmp_path, ridge_with_pass(), 'k = 8\nseparation = "100 m"\n')
    res = plan_corridors(p, [xy(90, 27), xy(90, 133)])
    t = res.table
    assert len(t) >= 3
    assert list(t.route) == [f"C{i + 1}" for i in range(len(t))]
    assert np.all(np.diff(t.cost_m) >= 0)
    assert np.allclose(t.cost_ratio, t.cost_m / t.cost_m.iloc[0])
    res.write(tmp_path / "out")
    back = gpd.read_file(tmp_path / "out" / "candidates.gpkg")
    assert list(back.route) == list(t.route)
    assert np.allclose(back.geometry.length, t.length_m)
    assert np.allclose(pd.read_csv(tmp_path / "out" / "corridors.csv").cost_m, t.cost_m)
    assert np.allclose([pr["distance"][-1] for pr in res.profiles], t.grid_length_m)
    lines = list(res.candidates.geometry)
    for i in range(1, len(lines)):  # shared is with the cheaper ones, at most max_shared
        assert t.shared.iloc[i] == pytest.approx(
            shared_share(lines[i], lines[:i], 100.0, res.points), abs=1e-9)
        assert t.shared.iloc[i] <= 0.5


def test_close_points_never_give_the_same_line_twice(tmp_path, capsys):
    """Points 100 m apart with a 200 m separation: no two written candidates
    are the same line (Hausdorff distance above a cell, shapely), fewer than
    k come with a note; points closer than three cells are refused."""
    from gisgrade.corridors import plan_corridors

    p = site(tmp_path, np.full((60, 60), 100.0), "k = 3\n")
    res = plan_corridors(p, [xy(30, 25), xy(30, 35)])
    lines = list(res.candidates.geometry)
    for i in range(len(lines)):
        for j in range(i):
            assert lines[i].hausdorff_distance(lines[j]) > CELL
    if len(lines) < 3:
        assert any("distinct route" in n or "left out" in n for n in res.notes)
    a = xy(30, 25)
    assert run_cli(["corridors", str(tmp_path / "project.toml"), "--from", "%f,%f" % a,
                    "--to", "%f,%f" % (a[0] + 25.0, a[1]), "-o", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert "closer than 3 cost-grid cells (30 m)" in err and "\n" not in err.strip()
    assert not (tmp_path / "out").exists()


def test_eight_candidates_each_drawn_apart(tmp_path):
    """With eight candidates the map's lines differ in colour or line style
    pair by pair (matplotlib's own line properties), in the legend too."""
    from matplotlib.colors import to_hex

    from gisgrade.corridors import plan_corridors
    from gisgrade.corridors.figure import corridor_figure

    p = site(tmp_path, ridge_with_pass(), 'k = 8\nseparation = "50 m"\n')
    res = plan_corridors(p, [xy(90, 27), xy(90, 133)])
    assert len(res.table) == 8
    fig = corridor_figure(res)
    drawn = [ln for ln in fig.axes[0].get_lines() if (ln.get_gid() or "").startswith("route ")]
    styles = [(to_hex(ln.get_color()), ln.get_linestyle()) for ln in drawn]
    assert len(drawn) == 8 and len(set(styles)) == 8
    legend = [h for h in fig.axes[2].get_legend().get_lines() if h.get_label().startswith("C")]
    assert [(to_hex(h.get_color()), h.get_linestyle()) for h in legend] == styles


def test_a_point_on_the_dem_edge_is_accepted(tmp_path):
    """A source exactly on the DEM's west edge lies in the closed interval of
    its bounds (rasterio's bounds): the route starts at that point."""
    from gisgrade.corridors import plan_corridors

    p = site(tmp_path, np.full((40, 60), 100.0), "k = 1\n")
    a, b = (X0, xy(20, 0)[1]), xy(20, 50)
    line = plan_corridors(p, [a, b]).candidates.geometry.iloc[0]
    assert line.coords[0] == pytest.approx(a)
    assert line.coords[-1] == pytest.approx(b)


def test_a_via_that_doubles_back_gets_a_note(tmp_path):
    """A waypoint behind the source: the route runs back over its own first
    leg (a turn of 180 degrees at the waypoint), and a note says so."""
    from gisgrade.corridors import plan_corridors

    p = site(tmp_path, np.full((40, 100), 100.0), "k = 1\n")
    res = plan_corridors(p, [xy(20, 40), xy(20, 10), xy(20, 90)])
    assert any("turns the route back by 180 degrees" in n for n in res.notes)
    fine = plan_corridors(p, [xy(20, 10), xy(5, 50), xy(20, 90)])
    assert not any("turns the route back" in n for n in fine.notes)
