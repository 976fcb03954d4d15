"""``gisgrade routes``: many routes on Dask give exactly what each gives alone.

The reference for every route's figures is ``gisgrade run`` of the same
project with ``[alignment] where`` picking that route (the tool's own
single-route path, whose numbers are checked against outside sources in
the other test files); the equality here is exact, byte for byte for the
tables. Layer contents are read back with pyogrio (an outside reader).
The terrain and lines are invented for the test.
"""
from __future__ import annotations

import json
import platform
import shutil
import sqlite3
import sys

import numpy as np
import pandas as pd
import pytest

from conftest import PROJECT, write_dem, write_lines

Y0 = 4_650_000.0
#: Three routes from one start to one end (C drawn as two touching features)
#: and one that runs off the DEM.
LINES = [[(500_100, Y0 - 1500), (502_500, Y0 - 1500)],
         [(500_100, Y0 - 1500), (501_300, Y0 - 700), (502_500, Y0 - 1500)],
         [(500_100, Y0 - 1500), (501_300, Y0 - 2300)], [(501_300, Y0 - 2300), (502_500, Y0 - 1500)],
         [(500_100, Y0 - 1500), (504_500, Y0 - 1500)]]
NAMES = ["A", "B/north", "C", "C", "D"]
GOOD = ["A", "B/north", "C"]


def make_site(folder, extra=""):
    x = np.arange(300) * 10.0
    X, Y = np.meshgrid(x, x)
    z = 120 - 0.01 * X + 8 * np.exp(-((X - 1500) ** 2 + (Y - 1500) ** 2) / 4e5)
    write_dem(folder / "dem.tif", z, x0=500_000.0, y0=Y0)
    write_lines(folder / "lines.geojson", LINES, props=[{"name": n} for n in NAMES])
    text = PROJECT.replace('path = "line.geojson"', 'path = "lines.geojson"\nroute_field = "name"')
    (folder / "project.toml").write_text(text + extra)
    return folder / "project.toml"


@pytest.fixture(scope="module")
def routes_run(tmp_path_factory):
    """One ``routes`` run on a 2-worker LocalCluster."""
    from gisgrade.cli import main

    folder = tmp_path_factory.mktemp("routes")
    project = make_site(folder)
    before = {p.name: p.read_bytes() for p in folder.iterdir()}
    out = folder / "out"
    status = main(["routes", str(project), "-o", str(out), "--workers", "2", "-q"])
    return project, out, status, before


def test_exit_status_one_when_a_route_fails(routes_run):
    project, out, status, before = routes_run
    assert status == 1
    # inputs untouched
    assert {p.name: p.read_bytes() for p in project.parent.iterdir() if p.name != "out"} == before


def test_routes_csv_has_a_row_per_route_and_scenario(routes_run):
    from gisgrade.routes import COLUMNS

    _, out, _, _ = routes_run
    t = pd.read_csv(out / "routes.csv", keep_default_na=False, na_values=[""])
    assert tuple(t.columns[: len(COLUMNS)]) == COLUMNS
    assert list(dict.fromkeys(t["route"])) == GOOD + ["D"]
    ok = t[t["route"].isin(GOOD)]
    assert set(ok["status"]) == {"ok"}
    assert sorted(set(ok["scenario"])) == ["design", "static"]
    bad = t[t["route"] == "D"]
    assert len(bad) == 1 and "outside every DEM" in bad["status"].iloc[0]
    assert bad["length_m"].isna().all()


@pytest.mark.parametrize("name", GOOD)
def test_each_route_equals_running_it_alone(routes_run, tmp_path, name):
    """The figures of a 2-worker LocalCluster run equal `gisgrade run` of the route alone."""
    from gisgrade.cli import main
    from gisgrade.routes import folder_name

    project, out, _, _ = routes_run
    alone = tmp_path / "alone"
    shutil.copytree(project.parent, alone, ignore=shutil.ignore_patterns("out"))
    text = (alone / "project.toml").read_text().replace(
        'route_field = "name"', f"where = \"name = '{name}'\"")
    (alone / "project.toml").write_text(text)
    assert main(["run", str(alone / "project.toml"), "-o", str(alone / "o"), "-q"]) == 0
    mine = out / folder_name(name)
    for table in ("profile.csv", "gradelines.csv", "findings.csv", "fittings.csv", "valves.csv",
                  "high_low_points.csv"):
        assert (mine / table).read_bytes() == (alone / "o" / table).read_bytes(), table
    summary = json.loads((alone / "o" / "summary.json").read_text())
    row = pd.read_csv(out / "routes.csv").query("route == @name")
    assert row["length_m"].iloc[0] == pytest.approx(summary["length_m"], abs=5e-7)
    assert row["trench_volume_m3"].iloc[0] == pytest.approx(summary["trench_volume_m3"], abs=5e-7)
    by = {s["scenario"]: s for s in summary["scenarios"]}
    for r in row.itertuples():
        assert r.min_pressure_kpa == pytest.approx(by[r.scenario]["pressure_min_kpa"], abs=5e-7)
        assert r.max_pressure_kpa == pytest.approx(by[r.scenario]["pressure_max_kpa"], abs=5e-7)
    assert row["bends"].iloc[0] == summary["bends"]
    assert row["air_valves"].iloc[0] == sum(v for k, v in summary["valves"].items() if k != "drain")
    # the route's features in routes.gpkg (merged from the workers' Arrow parts) are those of
    # its own layers.gpkg, read back by pyogrio (an outside reader)
    import pyogrio

    for layer, _ in pyogrio.list_layers(alone / "o" / "layers.gpkg"):
        own = pyogrio.read_dataframe(alone / "o" / "layers.gpkg", layer=layer)
        every = pyogrio.read_dataframe(out / "routes.gpkg", layer=layer)
        assert list(every.columns) == ["route", *own.columns], layer
        mine_rows = every[every["route"] == name].drop(columns="route").reset_index(drop=True)
        if len(own) == 0:
            assert len(mine_rows) == 0, layer
            continue
        differ = ["geometry", *(["name"] if layer == "route" else [])]  # the project's folder
        pd.testing.assert_frame_equal(mine_rows.drop(columns=differ), own.drop(columns=differ),
                                      obj=layer)
        assert mine_rows.geometry.geom_equals_exact(own.geometry, tolerance=0).all(), layer


def test_layers_hold_every_route(routes_run):
    import pyogrio

    _, out, _, _ = routes_run
    layers = [n for n, _ in pyogrio.list_layers(out / "routes.gpkg")]
    assert "route" in layers and "pipe_pressure" in layers
    for layer in ("route", "pipe_pressure"):
        gdf = pyogrio.read_dataframe(out / "routes.gpkg", layer=layer)
        assert list(dict.fromkeys(gdf["route"])) == GOOD
    pipe = pyogrio.read_dataframe(out / "routes.gpkg", layer="route")
    # C's two features were merged into one route line
    assert (pipe["route"] == "C").sum() == 1
    # two workers wrote the layers in two files, joined into one: in the layers' own
    # order, each with its spatial index (GDAL and SQLite's own checks as the reference)
    from gisgrade.output.layers import GEOMETRY

    assert layers == [k for k in GEOMETRY if k in layers]
    for k in layers:
        assert pyogrio.read_info(out / "routes.gpkg", layer=k)["capabilities"]["fast_spatial_filter"]
    con = sqlite3.connect(out / "routes.gpkg")
    try:
        assert con.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    finally:
        con.close()


@pytest.mark.parametrize("joins", [True, False])
def test_layer_groups_joined_as_one_file(tmp_path, caplog, joins):
    """Layers written in groups (one file each) and joined read back as the
    layers written whole; where the parts cannot join (each group in its own
    CRS without an EPSG code, which GDAL numbers alike in both files), the
    layers are written whole instead. GDAL through pyogrio reads both (the
    reference)."""
    import logging

    import geopandas as gpd
    import pyogrio
    import shapely
    from pyproj import CRS

    from gisgrade.output.layers import GEOMETRY
    from gisgrade.output.layers import arrow_layer
    from gisgrade.routes import LayerPart, join_layers, layer_groups, write_layers

    local = CRS.from_proj4("+proj=tmerc +lon_0=14.1 +x_0=500000 +ellps=GRS80 +units=m +no_defs")
    other = CRS.from_proj4("+proj=tmerc +lon_0=15.3 +x_0=500000 +ellps=GRS80 +units=m +no_defs")
    sizes = {"route": 2, "pipe_pressure": 30, "crossings": 4, "valves": 7}
    groups = layer_groups({k: [LayerPart((), None, rows=n)] for k, n in sizes.items()}, 2)
    # about as many features a group, each group in the layers' order
    assert [list(g) for g in groups] == [["route", "pipe_pressure"], ["crossings", "valves"]]
    layers = {}
    for name, n in sizes.items():
        x = np.arange(float(n))
        ends = [np.stack([x, x * 0], 1), np.stack([x + 1, x * 0], 1)]
        geometry = (shapely.linestrings(np.stack(ends, 1)) if GEOMETRY[name] == "LineString"
                    else shapely.points(x, x * 0))
        crs = other if not joins and name in groups[1] else local
        gdf = gpd.GeoDataFrame({"route": ["a"] * n, "value": x}, geometry=geometry, crs=crs)
        table, kinds = arrow_layer(gdf)
        layers[name] = [LayerPart(kinds, gdf.crs, table)]
    parts = []
    for j, group in enumerate(layer_groups(layers, 2)):
        parts.append(tmp_path / f"part-{j}.gpkg")
        write_layers(group, parts[-1])
    with caplog.at_level(logging.DEBUG, logger="gisgrade"):
        join_layers(parts, layers, tmp_path / "joined.gpkg")
    assert ("do not join" in caplog.text) is not joins
    write_layers(layers, tmp_path / "whole.gpkg")
    assert not any(p.exists() for p in parts)
    names = [n for n, _ in pyogrio.list_layers(tmp_path / "joined.gpkg")]
    assert names == list(layers) == [n for n, _ in pyogrio.list_layers(tmp_path / "whole.gpkg")]
    for name in layers:
        got = pyogrio.read_dataframe(tmp_path / "joined.gpkg", layer=name)
        want = pyogrio.read_dataframe(tmp_path / "whole.gpkg", layer=name)
        pd.testing.assert_frame_equal(got.drop(columns="geometry"), want.drop(columns="geometry"))
        assert got.geometry.geom_equals_exact(want.geometry, tolerance=0).all()
        assert CRS.from_user_input(got.crs) == CRS.from_user_input(want.crs)


def test_the_figure_is_drawn_beside_the_join_on_this_machine(tmp_path, caplog):
    """On a LocalCluster (workers at loopback addresses, sharing this
    machine's cores) routes.png is drawn once the group writes of
    routes.gpkg are done, beside the join, not beside the writes that take
    every core; the result is the same as ever (common practice in
    scheduling: fill the core the serial step leaves idle)."""
    import logging

    import pyogrio

    from gisgrade.output.atomic import atomic_folder
    from gisgrade.routes import _on_this_machine, run_routes

    class Client:  # what _on_this_machine reads of a distributed Client
        def __init__(self, *addresses):
            self.info = {"workers": dict.fromkeys(addresses, {})}

        def scheduler_info(self):
            return self.info

    assert _on_this_machine(Client("tcp://127.0.0.1:40001", "tcp://127.0.0.1:40002"))
    assert not _on_this_machine(Client("tcp://127.0.0.1:40001", "tcp://10.0.0.5:8788"))
    assert not _on_this_machine(Client())
    project = make_site(tmp_path)
    with caplog.at_level(logging.DEBUG, logger="gisgrade"):
        with atomic_folder(tmp_path / "out", inputs=[project]) as tmp:
            run_routes(project, workers=2, sink=tmp)
    said = [r.getMessage() for r in caplog.records if r.getMessage().startswith("routes:")]
    groups = next(i for i, m in enumerate(said) if "groups of routes.gpkg written" in m)
    figure = next(i for i, m in enumerate(said) if "routes.png" in m)
    assert groups < figure
    assert (tmp_path / "out" / "routes.png").is_file()
    assert "pipe_pressure" in [n for n, _ in pyogrio.list_layers(tmp_path / "out" / "routes.gpkg")]


def test_the_folder_holds_only_the_result(routes_run):
    """The workers' Arrow parts and the folder of the failed route are gone; the
    manifest lists every file (written last, after the workers' own files)."""
    from gisgrade.output.atomic import verify_folder

    _, out, _, _ = routes_run
    assert sorted(p.name for p in out.iterdir() if p.name.startswith(".")) == []
    assert not (out / "D").exists()
    verify_folder(out)
    assert not list(out.parent.glob(".out.gisgrade-*"))


@pytest.mark.filterwarnings("ignore:A geometry of type MULTILINESTRING:RuntimeWarning")
def test_merged_layers_as_one_frame_of_every_route_would_be_written(tmp_path):
    """Parts whose field types differ (integers and floats; no value at all and
    text; numbers and text) and single and multi lines merge into what pyogrio's
    write_dataframe of one pandas.concat frame writes (pyogrio and pandas as
    the reference)."""
    import geopandas as gpd
    import pyogrio
    from shapely.geometry import LineString, MultiLineString

    from gisgrade.output.layers import arrow_layer
    from gisgrade.routes import LayerPart, write_layers

    a = gpd.GeoDataFrame({"n": [1, 2], "note": [None, None], "mixed": [1.5, 2.5], "route": "a"},
                         geometry=[LineString([(0, 0), (1, 1)]), LineString([(1, 1), (2, 0)])],
                         crs="EPSG:32633")
    b = gpd.GeoDataFrame({"n": [0.5], "note": ["text"], "mixed": ["x"], "route": "b"},
                         geometry=[MultiLineString([[(0, 0), (1, 0)], [(2, 0), (3, 0)]])],
                         crs="EPSG:32633")
    c = a.iloc[:0].copy()  # a route without features of this layer
    d = a.assign(route="d").to_crs("EPSG:4326")  # a route in another CRS: taken to the first's
    parts = []
    for g in (a, c, b, d):
        table, kinds = arrow_layer(g)
        parts.append(LayerPart(kinds, g.crs, table))
    write_layers({"route": parts}, tmp_path / "mine.gpkg")
    whole = pd.concat([g.to_crs(a.crs) for g in (a, c, b, d)], ignore_index=True)
    whole = whole[["route", *[k for k in whole.columns if k != "route"]]]
    whole.to_file(tmp_path / "ref.gpkg", layer="route", driver="GPKG", engine="pyogrio",
                  use_arrow=True, geometry_type="LineString")
    mine = pyogrio.read_dataframe(tmp_path / "mine.gpkg", layer="route")
    ref = pyogrio.read_dataframe(tmp_path / "ref.gpkg", layer="route")
    pd.testing.assert_frame_equal(mine.drop(columns="geometry"), ref.drop(columns="geometry"))
    assert list(mine.geom_type) == list(ref.geom_type) == ["MultiLineString"] * 5
    assert mine.geometry.geom_equals_exact(ref.geometry, tolerance=0).all()
    info = pyogrio.read_info(tmp_path / "mine.gpkg", layer="route")
    assert list(info["dtypes"]) == list(pyogrio.read_info(tmp_path / "ref.gpkg",
                                                          layer="route")["dtypes"])


def test_outputs_per_route_and_the_figure(routes_run):
    _, out, _, _ = routes_run
    assert sorted(p.name for p in out.iterdir() if p.is_dir()) == ["A", "B_north", "C"]
    # figures and each route's own layer files only when asked (routes.gpkg has the layers)
    assert not (out / "A" / "profile.png").exists() and not (out / "A" / "layers.gpkg").exists()
    assert (out / "A" / "report.html").exists() and (out / "A" / "summary.json").exists()
    import matplotlib.image as mpimg

    img = mpimg.imread(out / "routes.png")
    assert img.shape[0] > 500 and img.std() > 0.05  # drawn, not blank


def test_each_feature_a_route_without_a_field(tmp_path):
    from gisgrade.routes import run_routes

    project = make_site(tmp_path)
    (tmp_path / "project.toml").write_text(
        project.read_text().replace('route_field = "name"\n', ""))
    res = run_routes(tmp_path / "project.toml", workers=0)
    assert [o.name for o in res.outcomes] == [f"feature-{i}" for i in range(1, 6)]
    # the halves of C alone and D (off the DEM) fail or run, but each is its own row
    assert res.table["route"].nunique() == 5


def test_lines_given_in_place_of_the_layer(tmp_path):
    """Candidate lines (a GeoDataFrame with a route field) run as the layer would."""
    import geopandas as gpd
    from shapely.geometry import LineString

    from gisgrade.routes import run_routes

    project = make_site(tmp_path)
    lines = gpd.GeoDataFrame({"route": ["x", "y"]},
                             geometry=[LineString(LINES[0]), LineString(LINES[1])],
                             crs="EPSG:32633")
    res = run_routes(project, lines, workers=0)
    assert list(res.table.drop_duplicates("route")["route"]) == ["x", "y"]
    assert (res.table["status"] == "ok").all()


def test_figures_and_layers_when_asked_give_every_file_of_a_run(tmp_path):
    import geopandas as gpd
    from shapely.geometry import LineString

    import gisgrade
    from gisgrade.routes import run_routes

    project = make_site(tmp_path)
    lines = gpd.GeoDataFrame({"route": ["x"]}, geometry=[LineString(LINES[0])], crs="EPSG:32633")
    res = run_routes(project, lines, workers=0, figures=True, layers=True)
    res.write(tmp_path / "r", parquet=True)
    # the columnar copies read back by pyarrow / geopandas equal the CSV and the GeoPackage
    pd.testing.assert_frame_equal(pd.read_parquet(tmp_path / "r" / "routes.parquet"), res.table)
    pq = gpd.read_parquet(tmp_path / "r" / "parquet" / "pipe_pressure.parquet")
    gp = gpd.read_file(tmp_path / "r" / "routes.gpkg", layer="pipe_pressure")
    assert len(pq) == len(gp) and pq.crs == gp.crs
    np.testing.assert_allclose(pq["hgl_m"], gp["hgl_m"])
    project.write_text(project.read_text().replace('route_field = "name"', "where = \"name = 'A'\""))
    gisgrade.run(project, tmp_path / "alone")
    names = lambda d: sorted(str(p.relative_to(d)) for p in d.rglob("*") if p.is_file())
    assert names(tmp_path / "r" / "x") == names(tmp_path / "alone")


def test_an_existing_scheduler_by_address(tmp_path):
    """--scheduler ADDRESS runs on a cluster started elsewhere, with the same figures."""
    from distributed import LocalCluster

    from gisgrade.routes import run_routes

    project = make_site(tmp_path)
    with LocalCluster(n_workers=1, threads_per_worker=1, dashboard_address=None,
                      processes=False) as cluster:
        on = run_routes(project, scheduler=cluster.scheduler_address)
    here = run_routes(project, workers=0)
    pd.testing.assert_frame_equal(on.table, here.table)


def _cli(args, capsys):
    from gisgrade.cli import main

    status = main(args)
    return status, capsys.readouterr().err.strip().splitlines()


@pytest.mark.parametrize("case, message", [
    ("field", "has no field 'label'"),
    ("inside", "input of this project"),
    ("both", "one or the other"),
    ("scheduler", "cannot reach a Dask scheduler"),
    ("points", "routes must be lines"),
    ("nothing", "holds no line feature matching alignment.where = \"name = 'Z'\""),
    ("sql", "cannot read lines.geojson (Invalid SQL query for layer 'lines': 'nme = 1')"),
])
def test_bad_input_to_the_command(tmp_path, capsys, case, message):
    project = make_site(tmp_path)
    out = tmp_path / "o"
    args = ["routes", str(project), "-o", str(out), "--workers", "0"]
    if case == "field":
        project.write_text(project.read_text().replace('route_field = "name"', 'route_field = "label"'))
    elif case == "inside":
        args[3] = str(tmp_path)
    elif case == "both":
        args += ["--scheduler", "tcp://127.0.0.1:1"]
    elif case == "scheduler":
        args = args[:4] + ["--scheduler", "tcp://127.0.0.1:9"]
    elif case == "nothing":  # a filter that leaves no route
        project.write_text(project.read_text().replace('route_field = "name"',
                                                       'route_field = "name"\nwhere = "name = \'Z\'"'))
    elif case == "sql":  # GDAL's message, its layer name not as Python bytes
        project.write_text(project.read_text().replace('route_field = "name"',
                                                       'route_field = "name"\nwhere = "nme = 1"'))
    elif case == "points":
        (tmp_path / "lines.geojson").write_text(json.dumps({
            "type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"name": "a"},
                                                       "geometry": {"type": "Point", "coordinates": [500_100, Y0 - 1500]}}],
            "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32633"}}}))
    before = sorted(p.name for p in tmp_path.iterdir())
    status, err = _cli(args, capsys)
    assert status == 2
    assert len(err) == 1 and message in err[0], err
    assert "Traceback" not in "\n".join(err)
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # nothing written


@pytest.mark.parametrize("command", [["run", "-q"], ["profile", "-q"],
                                     ["sizes", "--candidates", "250 mm, 300 mm"]])
def test_a_single_route_command_refuses_a_layer_of_routes(tmp_path, capsys, command):
    """`gisgrade run`, `profile` and `sizes` set out one centerline: on a layer
    of several routes by route_field they say how many, which, and how to pick
    one (or run them all), in one line (`sizes` before any candidate's line),
    exit 2, nothing written (the house rule for bad input); `where` picking
    one route runs it."""
    project = make_site(tmp_path)
    before = sorted(p.name for p in tmp_path.iterdir())
    command, *more = command
    status, err = _cli([command, str(project), "-o", str(tmp_path / "o"), *more], capsys)
    assert status == 2 and len(err) == 1, err
    assert ("alignment.route_field: lines.geojson holds 4 routes by 'name' (A, B/north, C, D)"
            in err[0]), err
    assert """where = "name = 'A'\"""" in err[0] and "gisgrade routes" in err[0]
    assert sorted(p.name for p in tmp_path.iterdir()) == before
    text = project.read_text().replace('route_field = "name"', 'route_field = "name"\nwhere = "name = \'C\'"')
    project.write_text(text)
    status, err = _cli([command, str(project), "-o", str(tmp_path / "o"), *more], capsys)
    assert status == 0, err


def test_check_checks_each_route_of_a_layer_of_routes(tmp_path, capsys):
    """`gisgrade check` on a layer of routes checks each as `routes` runs it:
    the route off the DEM is named with its problem, the others pass, and
    what concerns the whole project is said once, not once a route."""
    project = make_site(tmp_path)  # a cover deeper than usual: a warning on the whole project
    project.write_text(project.read_text().replace('minimum = "1.2 m"', 'minimum = "6 m"'))
    status, err = _cli(["check", str(project)], capsys)
    assert status == 2
    errors = [e for e in err if e.startswith("gisgrade: error: ")]
    assert len(errors) == 1 and errors[0].startswith("gisgrade: error: route 'D': terrain.dem: "
                                                     "outside every DEM"), err
    # where the line and the DEM lie: grid coordinates to the metre, once (one CRS)
    assert "the DEM covers x 500000 to 503000, y 4647000 to 4650000)" in errors[0], errors[0]
    assert "e+06" not in errors[0] and "in the DEM's" not in errors[0], errors[0]
    assert not any(f"route '{n}'" in e for e in err for n in GOOD), err
    deep = [e for e in err if "cover.minimum = 6 m is deeper" in e]
    assert len(deep) == 1 and "route '" not in deep[0], err


def test_progress_bar_counts_routes():
    from gisgrade.cli.routes import RoutesBar

    class Tty:
        def __init__(self):
            self.text = ""

        def isatty(self):
            return True

        def write(self, s):
            self.text += s

        def flush(self):
            pass

    tty = Tty()
    bar = RoutesBar(stream=tty)
    for done in range(4):
        bar(done, 3)
    assert "3/3 routes" in tty.text and tty.text.endswith("\n")


def test_folder_names_stay_apart():
    from gisgrade.routes import _unique_folders

    assert _unique_folders(["a b", "a_b", "A/B", ""]) == ["a_b-2", "a_b", "A_B-3", "route"]


def test_interrupt_exits_130_and_says_the_folder_is_untouched(tmp_path, capsys, monkeypatch):
    """Ctrl-C: 128 + SIGINT (the shell's convention), not 1 ("a route failed")."""
    import gisgrade.routes
    from gisgrade.cli import main

    project = make_site(tmp_path)

    def interrupted(*a, **k):
        raise KeyboardInterrupt

    monkeypatch.setattr(gisgrade.routes, "run_routes", interrupted)
    assert main(["routes", str(project), "-o", str(tmp_path / "o"), "--workers", "0"]) == 130
    assert "interrupted" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_never_more_workers_than_routes(monkeypatch):
    import distributed

    from gisgrade import routes

    seen = {}

    class FakeCluster:
        def __init__(self, n_workers, **kw):
            seen["n"] = n_workers

    monkeypatch.setattr(distributed, "LocalCluster", FakeCluster)
    monkeypatch.setattr(distributed, "Client", lambda cluster: None)
    routes._cluster(500, None, 3)
    assert seen["n"] == 3


def _start_environ_and_faults():
    """(Run in a worker.) The malloc variables this process was started with
    (/proc/self/environ: what it got at exec, not what was set since) and the
    page faults of 200 allocations and frees of a 2 MiB array."""
    import os
    import resource

    raw = open(f"/proc/{os.getpid()}/environ", "rb").read().split(b"\0")
    start = dict(kv.decode().split("=", 1) for kv in raw if b"MALLOC_" in kv)
    before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
    for _ in range(200):
        np.ones(1 << 18).sum()
    return start, resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before


@pytest.mark.skipif(not sys.platform.startswith("linux") or platform.libc_ver()[0] != "glibc",
                    reason="glibc on Linux only")
def test_local_workers_start_with_malloc_keeping_its_heap(monkeypatch):
    """Dask starts its workers with MALLOC_TRIM_THRESHOLD_=65536, which fixes
    glibc's mmap threshold at 128 KiB: every array larger is mapped from the
    kernel and unmapped on free, its 512 pages of 4 KiB faulting in again
    each time (mallopt(3): M_MMAP_THRESHOLD, M_TRIM_THRESHOLD). The workers
    of `routes` start (before exec, as glibc reads them) with the heap kept
    and blocks to 32 MiB from it: 200 rounds of a 2 MiB array fault a few
    pages, not ~100 000."""
    from gisgrade import routes

    for k in routes.MALLOC_ENVIRONMENT:
        monkeypatch.delenv(k, raising=False)
    client, cluster = routes._cluster(1, None, 1)
    try:
        (start, faults), = client.run(_start_environ_and_faults).values()
    finally:
        client.close()
        cluster.close()
    assert start["MALLOC_MMAP_THRESHOLD_"] == str(32 << 20)
    assert start["MALLOC_TRIM_THRESHOLD_"] == str(1 << 30)
    assert faults < 200 * 512 / 20, faults


def test_routes_csv_names_each_route_folder(routes_run):
    _, out, _, _ = routes_run
    t = pd.read_csv(out / "routes.csv", keep_default_na=False)
    ok = t[t["status"] == "ok"].drop_duplicates("route")
    for r in ok.itertuples():
        assert (out / r.folder / "summary.json").exists()
    assert (t[t["route"] == "D"]["folder"] == "").all()  # a failed route has no folder


def test_a_routes_line_gives_its_worst_scenario_in_words():
    # rows of routes.csv for one route: the lowest pressure over every scenario
    # is named with its scenario, and a pressure below vapour pressure (the
    # column separates; summary.json "achievable" false) is said in words
    import pandas as pd

    from gisgrade.display import Display
    from gisgrade.routes import route_line

    rows = pd.DataFrame({"scenario": ["average day", "max day + fire"], "length_m": [5712.4] * 2,
                         "min_pressure_kpa": [189.0, -131.8], "findings": [1, 4],
                         "below_vapour": [False, True]})
    line = route_line(rows, Display())
    assert line == ("5712 m, below vapour pressure (the column separates) in max day + fire, "
                    "4 findings in the worst scenario")
    rows["below_vapour"] = False
    rows.loc[1, "min_pressure_kpa"] = 120.0
    assert "lowest pressure 120 kPa in max day + fire" in route_line(rows, Display())
    rows["findings"] = [0, 1]
    assert route_line(rows, Display()).endswith(", 1 finding in the worst scenario")


@pytest.mark.parametrize("epsg", [4326, 32632])
def test_the_plan_keeps_the_routes_shape_as_geopandas_draws_them(epsg):
    """The comparison figure's plan takes the aspect geopandas gives a layer
    in that CRS (geopandas' ``GeoSeries.plot`` as the reference: equal in a
    projected CRS, 1/cos of the middle latitude in degrees), and says its
    axes' units."""
    import geopandas as gpd
    from matplotlib.figure import Figure
    from pyproj import CRS
    from shapely.geometry import LineString

    from gisgrade.output.routes_figure import plan_aspect, plan_labels

    line = gpd.GeoSeries([LineString([(8.37, 47.03), (8.45, 47.04), (8.40, 47.10)])],
                         crs="EPSG:4326").to_crs(epsg)
    ax = Figure().add_subplot()
    line.plot(ax=ax)
    want = ax.get_aspect()
    want = 1.0 if want == "equal" else want
    y = np.asarray(line.iloc[0].coords)[:, 1]
    assert plan_aspect(CRS.from_epsg(epsg), y) == pytest.approx(want, rel=1e-12)
    assert plan_labels(CRS.from_epsg(epsg)) == (("longitude (deg)", "latitude (deg)") if epsg == 4326
                                               else ("easting (metre)", "northing (metre)"))


def test_the_comparison_draws_a_collection_a_kind_of_line_not_an_artist_a_route(monkeypatch,
                                                                               tmp_path):
    """routes.png over many routes: the plan, the ground and the HGL are one
    collection each (hundreds of routes, not hundreds of artists), each route
    in its own colour and dash in the routes' order, the named legend kept
    for a few routes (matplotlib's LineCollection: one path, colour and line
    style per line)."""
    from types import SimpleNamespace as NS

    from matplotlib.collections import LineCollection
    from matplotlib.colors import to_rgba
    from matplotlib.figure import Figure

    from gisgrade.display import Display
    from gisgrade.output import routes_figure as rf

    drawn = []
    monkeypatch.setattr(Figure, "savefig", lambda fig, *a, **k: drawn.append(fig))
    for n in (30, 3):
        st = np.linspace(0.0, 1000.0, 11)
        ok = [NS(name=f"r{i}", error=None, layers={},
                 plan=np.column_stack([500_000.0 + st, np.full(11, Y0 + 10.0 * i)]),
                 profile={"station": st, "ground": 100.0 + i + 0 * st, "hgl": 150.0 - st / 100})
              for i in range(n)]
        table = pd.DataFrame({"route": [o.name for o in ok], "status": "ok",
                              "length_m": 1000.0, "min_pressure_kpa": 300.0,
                              "max_pressure_kpa": 500.0})
        rf.draw_routes(ok, table, Display(), tmp_path / "routes.png")
        plan, prof = drawn[-1].axes[:2]
        assert not plan.lines and not prof.lines
        lines = [c for c in plan.collections if isinstance(c, LineCollection)]
        assert len(lines) == 1 and len(lines[0].get_paths()) == n
        looks = rf._looks(n)
        assert [tuple(c) for c in lines[0].get_colors()] == [to_rgba(c) for c, _ in looks]
        assert len([c for c in prof.collections if isinstance(c, LineCollection)]) == 2
        assert plan.get_xlim()[0] <= 500_000.0 and plan.get_xlim()[1] >= 501_000.0
        legend = plan.get_legend()
        assert (legend is None) == (n > rf.MAX_NAMED)
        if legend is not None:
            assert [t.get_text() for t in legend.get_texts()] == [o.name for o in ok]


def test_a_route_named_like_a_file_of_the_run_gets_a_folder_of_its_own(tmp_path, capsys):
    """Routes named "routes.csv" and "MANIFEST.json" (any case) run like the
    others, in folders beside those files ("routes.csv-2"), not over them."""
    make_site(tmp_path)
    write_lines(tmp_path / "lines.geojson", LINES[:2],
                props=[{"name": "Routes.CSV"}, {"name": "MANIFEST.json"}])
    out = tmp_path / "o"
    status, err = _cli(["routes", str(tmp_path / "project.toml"), "-o", str(out), "--workers", "0",
                        "-q"], capsys)
    assert status == 0, err
    t = pd.read_csv(out / "routes.csv", keep_default_na=False)
    assert list(dict.fromkeys(t["folder"])) == ["Routes.CSV-2", "MANIFEST.json-2"]
    assert (out / "Routes.CSV-2" / "summary.json").is_file() and (out / "MANIFEST.json").is_file()


def test_check_says_a_problem_of_several_routes_once_naming_them(tmp_path, capsys):
    """A problem found on several routes alike (here the flow's velocity in the
    pipe, the same on each) is one line naming the routes, not a line a route."""
    project = make_site(tmp_path)
    project.write_text(project.read_text().replace('flow = "50 L/s"', 'flow = "400 L/s"'))
    status, err = _cli(["check", str(project)], capsys)
    fast = [e for e in err if "m/s, beyond" in e]
    assert len(fast) == 1 and "routes 'A', 'B/north' and 'C': " in fast[0], err
    assert status == 2  # (D runs off the DEM: an error, on its own line)
    assert sum("route 'D': terrain.dem: outside every DEM" in e for e in err) == 1, err


@pytest.mark.parametrize("first", ["O'Hare Gill", "Fen\\Dyke", 'Say "when"', "Zürich Ost"])
def test_the_where_a_refusal_suggests_picks_that_route(tmp_path, first):
    """The `where` line in the several-routes refusal, pasted into the project
    file as it stands, is valid TOML (tomllib) whose SQL filter, applied by GDAL
    (pyogrio), leaves that route's features and no other's."""
    import re as re_
    import tomllib

    from gisgrade.errors import InputError
    from gisgrade.project import load

    project = make_site(tmp_path)
    write_lines(tmp_path / "lines.geojson", LINES[:3],
                props=[{"name": first}, {"name": "Brook"}, {"name": first}])
    with pytest.raises(InputError) as refused:
        from gisgrade.alignment import stage_alignment

        stage_alignment(load(project))
    line = re_.search(r'where = ".*?(?<!\\)"', str(refused.value)).group(0)
    where = tomllib.loads(line)["where"]
    project.write_text(project.read_text().replace('route_field = "name"',
                                                   'route_field = "name"\n' + line))
    from gisgrade.routes import read_routes

    picked = read_routes(load(project))
    assert [n for n, _ in picked] == [first] and len(picked[0][1]) == 2, where


def test_the_summary_counts_one_route_in_the_singular(tmp_path, capsys):
    project = make_site(tmp_path)
    project.write_text(project.read_text().replace('route_field = "name"',
                                                   'route_field = "name"\nwhere = "name = \'C\'"'))
    from gisgrade.cli import main

    assert main(["routes", str(project), "-o", str(tmp_path / "o"), "--workers", "0"]) == 0
    said = capsys.readouterr()
    assert "1 route, 1 ran, 0 failed" in said.out + said.err


def test_a_filter_leaving_part_of_a_route_is_warned(tmp_path, capsys):
    """Route C is drawn as two features; `feature` picking one of them runs
    that part only, and says so (a run of half a route under its name would
    be mistaken for the whole)."""
    project = make_site(tmp_path)
    fid = 2  # GeoJSON features are numbered from 0 by GDAL: the first part of C
    project.write_text(project.read_text().replace('route_field = "name"',
                                                   f'route_field = "name"\nfeature = {fid}'))
    status, err = _cli(["run", str(project), "-o", str(tmp_path / "o")], capsys)
    assert status == 0, err
    assert any("alignment.feature leaves 1 of the 2 features of route 'C'" in e for e in err), err
    project.write_text(project.read_text().replace(f"feature = {fid}", "where = \"name = 'C'\""))
    status, err = _cli(["run", str(project), "-o", str(tmp_path / "o2")], capsys)
    assert status == 0 and not any("leaves" in e for e in err), err


def test_routes_named_alike_but_for_case_are_not_offered_a_where_that_picks_both(tmp_path, capsys):
    """GDAL's attribute filter on a GeoJSON file compares text regardless of
    case (checked here through pyogrio: the reference), so `where = "name =
    'Moss'"` would leave 'MOSS' too and the refusal would repeat itself; it
    says to rename them instead."""
    import pyogrio

    project = make_site(tmp_path)
    write_lines(tmp_path / "lines.geojson", LINES[:3],
                props=[{"name": "Moss"}, {"name": "MOSS"}, {"name": "Brook"}])
    both = pyogrio.read_dataframe(tmp_path / "lines.geojson", where="name = 'Moss'")
    assert sorted(both["name"]) == ["MOSS", "Moss"]  # what GDAL does
    status, err = _cli(["run", str(project), "-o", str(tmp_path / "o"), "-q"], capsys)
    assert status == 2 and len(err) == 1, err
    assert "'Moss', 'MOSS' are one to a filter on .geojson" in err[0] and "where =" not in err[0]


def test_a_route_in_parts_that_do_not_meet_says_where_the_gap_is(tmp_path):
    """A route drawn as two features with a 50 m gap between them fails with
    where the gap is and how wide on the ellipsoid (pyproj's Geod between the
    two ends as the reference), and how to mend it; the others run."""
    from pyproj import Geod, Transformer

    from gisgrade.routes import run_routes

    project = make_site(tmp_path)
    a, b = (501_000.0, Y0 - 1500), (501_050.0, Y0 - 1500)
    write_lines(tmp_path / "lines.geojson", [[(500_100, Y0 - 1500), a], [b, (502_500, Y0 - 1500)],
                                             LINES[0]],
                props=[{"name": "Gap Lane"}, {"name": "Gap Lane"}, {"name": "A"}])
    t = run_routes(project, workers=0).table
    status = t.loc[t["route"] == "Gap Lane", "status"].iloc[0]
    lon, lat = Transformer.from_crs("EPSG:32633", "EPSG:4326", always_xy=True).transform(
        [a[0], b[0]], [a[1], b[1]])
    gap = Geod(ellps="WGS84").line_length(lon, lat)
    assert f"line 2 does not meet line 1 (gap of {gap:.3f} m at " in status, status
    assert "(name = 'Gap Lane'); give each route its own name or join the lines" in status
    assert set(t.loc[t["route"] == "A", "status"]) == {"ok"}


def test_a_file_of_several_layers_read_without_layer_is_warned(tmp_path, capsys):
    """A GeoPackage holding two line layers and no `layer =`: GDAL reads the
    first (pyogrio's own list of the file's layers is the reference); the run
    says which it read and which key chooses."""
    import geopandas as gpd
    import pyogrio

    project = make_site(tmp_path)
    lines = gpd.read_file(tmp_path / "lines.geojson")
    lines.iloc[[0]].to_file(tmp_path / "mains.gpkg", layer="proposed")
    lines.iloc[[1]].to_file(tmp_path / "mains.gpkg", layer="existing")
    assert [str(n) for n in pyogrio.list_layers(tmp_path / "mains.gpkg")[:, 0]] == \
        ["proposed", "existing"]
    project.write_text(project.read_text().replace('path = "lines.geojson"', 'path = "mains.gpkg"'))
    status, err = _cli(["run", str(project), "-o", str(tmp_path / "o")], capsys)
    assert status == 0, err
    said = [e for e in err if "holds 2 layers" in e]
    assert len(said) == 1 and "alignment.path: mains.gpkg holds 2 layers (proposed, existing); " \
        "the first, 'proposed', was read: name the one meant with alignment.layer" in said[0], err


def test_the_program_exits_cleanly_after_a_cluster(tmp_path):
    # `python -m gisgrade routes` as a planner runs it: the program freezes its
    # objects out of the garbage collector before it exits (gisgrade.cli.entry);
    # the cluster is closed and Dask's exit handlers run, nothing is said on stderr
    # but the routes' own warnings, the exit status is the command's (1: one route fails)
    import subprocess

    project = make_site(tmp_path)
    out = tmp_path / "out"
    proc = subprocess.run([sys.executable, "-m", "gisgrade", "routes", str(project), "-o", str(out),
                           "--workers", "1", "-q"], capture_output=True, text=True, timeout=300)
    assert proc.returncode == 1, proc.stderr[-800:]
    assert "Traceback" not in proc.stderr and "Exception ignored" not in proc.stderr, proc.stderr[-800:]
    assert "leaked" not in proc.stderr, proc.stderr[-800:]
    assert (out / "MANIFEST.json").is_file() and (out / "routes.gpkg").is_file()


@pytest.mark.skipif(platform.system() == "Windows", reason="process groups and SIGINT are POSIX")
def test_ctrl_c_at_the_terminal_stops_routes_without_the_workers_tracebacks(tmp_path):
    # a terminal's Ctrl-C sends SIGINT to every process of the group, the Dask
    # workers too: they leave it to the main process (routes.dask_setup), which
    # closes the cluster and exits 130 with its one line, the output folder as it was
    import os
    import signal
    import subprocess

    project = make_site(tmp_path)
    project.write_text(project.read_text().replace('spacing = "10 m"', 'spacing = "0.25 m"'))
    proc = subprocess.Popen([sys.executable, "-m", "gisgrade", "routes", str(project), "-o",
                             str(tmp_path / "out"), "--workers", "2", "-vv"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            start_new_session=True)
    lines = []
    for line in proc.stderr:  # -vv says when the cluster is up: the workers are running
        lines.append(line)
        if "Dask cluster" in line:
            break
    os.killpg(proc.pid, signal.SIGINT)
    _, rest = proc.communicate(timeout=120)
    err = "".join(lines) + rest
    assert proc.returncode == 130, err[-1500:]
    # (-vv shows Dask's own errors, e.g. a scatter cut short; no process's KeyboardInterrupt)
    assert "KeyboardInterrupt" not in err, err[-1500:]
    assert err.rstrip().endswith("the output folder is as it was before")
    assert not (tmp_path / "out").exists()
