"""GeoPackages joined at the SQLite level (:mod:`gisgrade.output.geopackage`).

The reference is GDAL itself, through pyogrio (an outside writer and
reader): the files joined are written by GDAL, and every layer of the
joined file must read back as GDAL wrote it, with its spatial index, feature
count, extent and description, and must go on taking features through GDAL.
The structure is checked with SQLite's own ``PRAGMA integrity_check`` and
``rtreecheck()`` (sqlite.org/rtree.html, "Integrity check"). The features
are invented for the tests.
"""
from __future__ import annotations

import hashlib
import sqlite3

import geopandas as gpd
from geopandas.testing import assert_geodataframe_equal
import numpy as np
import pyogrio
import pytest
import shapely
from pyproj import CRS

from gisgrade.output.geopackage import join_geopackages, layer_names

UTM = "EPSG:32633"


def frames(seed: int, crs=UTM):
    """Three layers of invented features: points with mixed fields, lines, none."""
    rng = np.random.default_rng(seed)
    n = 2_000
    xy = rng.uniform([500_000, 4_600_000], [510_000, 4_610_000], size=(n, 2))
    points = gpd.GeoDataFrame({"name": [f"p{i}" for i in range(n)], "value": rng.normal(size=n),
                               "count": rng.integers(0, 9, n), "flag": rng.random(n) > 0.5},
                              geometry=shapely.points(xy), crs=crs)
    ends = xy + rng.uniform(-50, 50, size=(n, 2))
    lines = gpd.GeoDataFrame({"grade_pct": rng.normal(size=n)},
                             geometry=shapely.linestrings(np.stack([xy, ends], axis=1)), crs=crs)
    empty = gpd.GeoDataFrame({"angle_deg": np.array([], dtype=float)},
                             geometry=gpd.GeoSeries([], crs=crs), crs=crs)
    return points, lines, empty


def write(path, layers: dict, geometry_types: dict):
    for i, (name, gdf) in enumerate(layers.items()):
        gdf.to_file(path, layer=name, driver="GPKG", engine="pyogrio", mode="a" if i else "w",
                    geometry_type=geometry_types[name], layer_metadata={"DESCRIPTION": f"about {name}"})


@pytest.fixture
def two_files(tmp_path):
    pa, la, ea = frames(1)
    pb, lb, _ = frames(2)
    first = {"pts_a": pa, "lines_a": la, "empty": ea}
    second = {"lines_b": lb, "pts_b": pb}
    types = {"pts_a": "Point", "pts_b": "Point", "lines_a": "LineString", "lines_b": "LineString",
             "empty": "Point"}
    a, b = tmp_path / "a.gpkg", tmp_path / "b.gpkg"
    write(a, first, types)
    write(b, second, types)
    return a, b, {**first, **second}


def digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_every_layer_reads_back_as_gdal_wrote_it(two_files):
    a, b, originals = two_files
    info_before = {n: pyogrio.read_info(a if n in ("pts_a", "lines_a", "empty") else b, layer=n)
                   for n in originals}
    b_before = digest(b)
    order = ["lines_b", "pts_a", "empty", "pts_b", "lines_a"]
    assert join_geopackages(a, [b], order=order)
    assert digest(b) == b_before  # the other file is left as it was
    assert [n for n, _ in pyogrio.list_layers(a)] == order
    assert layer_names(a) == order
    for name, gdf in originals.items():
        back = pyogrio.read_dataframe(a, layer=name, fid_as_index=True)
        assert len(back) == len(gdf), name
        if len(gdf):
            assert list(back.index) == list(range(1, len(gdf) + 1)), name  # feature ids kept
            assert_geodataframe_equal(back.reset_index(drop=True), gdf, check_dtype=False)
        info = pyogrio.read_info(a, layer=name)
        for key in ("features", "total_bounds", "layer_metadata", "crs", "geometry_type",
                    "capabilities"):
            assert info[key] == info_before[name][key], (name, key)
        assert info["capabilities"]["fast_spatial_filter"], name  # GDAL sees the index


def test_the_spatial_index_is_the_one_gdal_built(two_files):
    a, b, originals = two_files
    assert join_geopackages(a, [b])
    con = sqlite3.connect(a)
    try:
        assert con.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        for name in ("pts_a", "lines_a", "lines_b", "pts_b", "empty"):
            assert con.execute(f"SELECT rtreecheck('rtree_{name}_geom')").fetchall() == [("ok",)]
        # every feature's box holds its geometry (R*Tree boxes are 32-bit, rounded outward)
        box = np.array(con.execute("SELECT minx, maxx, miny, maxy FROM rtree_lines_b_geom "
                                   "ORDER BY id").fetchall())
    finally:
        con.close()
    lo = shapely.bounds(originals["lines_b"].geometry.values)
    assert (box[:, 0] <= lo[:, 0]).all() and (box[:, 1] >= lo[:, 2]).all()
    assert (box[:, 2] <= lo[:, 1]).all() and (box[:, 3] >= lo[:, 3]).all()
    # a window read through the index (GDAL's spatial filter) finds exactly what intersects it
    window = (503_000.0, 4_603_000.0, 505_000.0, 4_605_500.0)
    for name in ("pts_b", "lines_b", "pts_a"):
        got = pyogrio.read_dataframe(a, layer=name, bbox=window)
        want = originals[name][shapely.intersects(originals[name].geometry.values,
                                                  shapely.box(*window))]
        assert sorted(got.geometry.to_wkb()) == sorted(want.geometry.to_wkb()), name


def test_a_joined_layer_goes_on_taking_features(two_files):
    """The triggers came along: GDAL appends to a joined layer, and its count and index follow."""
    a, b, originals = two_files
    assert join_geopackages(a, [b])
    extra = originals["pts_b"].iloc[:5].copy()
    extra["geometry"] = shapely.points([[520_000.0 + i, 4_620_000.0] for i in range(5)])
    extra.to_file(a, layer="pts_b", driver="GPKG", engine="pyogrio", mode="a")
    assert pyogrio.read_info(a, layer="pts_b")["features"] == len(originals["pts_b"]) + 5
    got = pyogrio.read_dataframe(a, layer="pts_b", bbox=(519_999, 4_619_999, 520_010, 4_620_001))
    assert len(got) == 5
    con = sqlite3.connect(a)
    try:
        assert con.execute("SELECT feature_count FROM gpkg_ogr_contents WHERE table_name='pts_b'"
                           ).fetchone()[0] == len(originals["pts_b"]) + 5
    finally:
        con.close()


def test_several_files_join_at_once(tmp_path):
    files, everything = [], {}
    for j in range(3):
        points, _, _ = frames(10 + j)
        path = tmp_path / f"{j}.gpkg"
        write(path, {f"layer_{j}": points}, {f"layer_{j}": "Point"})
        files.append(path)
        everything[f"layer_{j}"] = points
    assert join_geopackages(files[0], files[1:], order=["layer_2", "layer_0", "layer_1"])
    assert layer_names(files[0]) == ["layer_2", "layer_0", "layer_1"]
    for name, gdf in everything.items():
        back = pyogrio.read_dataframe(files[0], layer=name)
        assert back.geometry.geom_equals_exact(gdf.geometry, tolerance=0).all()
        assert (back["name"] == gdf["name"]).all()


def test_a_layer_in_both_is_refused_and_nothing_changes(two_files):
    a, b, _ = two_files
    points, _, _ = frames(3)
    points.to_file(b, layer="pts_a", driver="GPKG", engine="pyogrio", mode="a")
    before = digest(a)
    assert join_geopackages(a, [b]) is False
    assert digest(a) == before


def test_two_systems_under_one_id_are_refused(tmp_path):
    """GDAL numbers a CRS without an EPSG code from 100000 in each file: the same
    id then names two systems, and the files do not join (the caller writes
    the layers whole instead)."""
    one = CRS.from_proj4("+proj=tmerc +lat_0=0 +lon_0=14.1 +k=1 +x_0=500000 +y_0=0 +ellps=GRS80 "
                         "+units=m +no_defs")
    two = CRS.from_proj4("+proj=tmerc +lat_0=0 +lon_0=15.3 +k=1 +x_0=500000 +y_0=0 +ellps=GRS80 "
                         "+units=m +no_defs")
    a, b = tmp_path / "a.gpkg", tmp_path / "b.gpkg"
    write(a, {"p": frames(1, crs=one)[0]}, {"p": "Point"})
    write(b, {"q": frames(2, crs=two)[0]}, {"q": "Point"})
    ids = [sqlite3.connect(f).execute("SELECT srs_id FROM gpkg_geometry_columns").fetchone()[0]
           for f in (a, b)]
    assert ids[0] == ids[1]  # the premise: GDAL gave both the same id
    before = digest(a)
    assert join_geopackages(a, [b]) is False
    assert digest(a) == before
    # the same system under the same id joins
    c = tmp_path / "c.gpkg"
    write(c, {"r": frames(3, crs=one)[0]}, {"r": "Point"})
    assert join_geopackages(a, [c])
    assert CRS.from_user_input(pyogrio.read_info(a, layer="r")["crs"]) == one


def test_a_missing_file_is_an_error_and_not_made(tmp_path, two_files):
    a, _, _ = two_files
    with pytest.raises(FileNotFoundError):
        join_geopackages(a, [tmp_path / "nothing.gpkg"])
    assert not (tmp_path / "nothing.gpkg").exists()


def test_feature_ids_are_not_reused_after_the_join(two_files):
    """SQLite's AUTOINCREMENT keeps one ``sqlite_sequence`` row per table, the
    largest id it ever gave (sqlite.org/autoinc.html): a feature GDAL adds to
    a joined layer takes the id it would take in the file alone, even where
    the last features were deleted (their ids are not given again)."""
    a, b, originals = two_files
    con = sqlite3.connect(b)
    try:
        con.execute("DELETE FROM pts_b WHERE fid > 1990")  # GDAL's own triggers follow
        con.commit()
    finally:
        con.close()
    alone = b.with_name("alone.gpkg")
    alone.write_bytes(b.read_bytes())
    assert join_geopackages(a, [b])
    extra = originals["pts_b"].iloc[:2]
    for path in (a, alone):
        extra.to_file(path, layer="pts_b", driver="GPKG", engine="pyogrio", mode="a")
    ids = [list(pyogrio.read_dataframe(p, layer="pts_b", fid_as_index=True).index[-2:])
           for p in (a, alone)]
    assert ids[0] == ids[1] == [2001, 2002]
    con = sqlite3.connect(a)
    try:
        assert con.execute("SELECT name, count(*) FROM sqlite_sequence GROUP BY name "
                           "HAVING count(*) > 1").fetchall() == []
    finally:
        con.close()


@pytest.mark.parametrize("without", [("a",), ("b",), ("a", "b")])
def test_layers_without_a_spatial_index_join(tmp_path, without):
    """GDAL writes a layer without its R*Tree when asked (``SPATIAL_INDEX=NO``)
    and then makes no ``gpkg_extensions`` table where no layer has an
    extension: such files join as the others do, and GDAL reads each layer
    back as it wrote it, with an index exactly where it built one."""
    points, lines, _ = frames(4)
    files = {}
    for name, gdf, kind in (("a", points, "Point"), ("b", lines, "LineString")):
        files[name] = tmp_path / f"{name}.gpkg"
        gdf.to_file(files[name], layer=name, driver="GPKG", engine="pyogrio", geometry_type=kind,
                    SPATIAL_INDEX="NO" if name in without else "YES")
    info_before = {n: pyogrio.read_info(f, layer=n) for n, f in files.items()}
    assert join_geopackages(files["a"], [files["b"]])
    for name, gdf in (("a", points), ("b", lines)):
        back = pyogrio.read_dataframe(files["a"], layer=name)
        assert_geodataframe_equal(back, gdf, check_dtype=False)
        info = pyogrio.read_info(files["a"], layer=name)
        for key in ("features", "total_bounds", "crs", "capabilities"):
            assert info[key] == info_before[name][key], (name, key)
        assert info["capabilities"]["fast_spatial_filter"] is (name not in without)
    con = sqlite3.connect(files["a"])
    try:
        assert con.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        assert con.execute("PRAGMA foreign_key_check").fetchall() == []
    finally:
        con.close()


@pytest.mark.parametrize("which", ["target", "other"])
def test_a_file_that_is_not_a_database_is_refused(two_files, which):
    """A file SQLite does not open as a database ("file is not a database",
    SQLite's own check of the header) joins nothing: ``False``, and the target
    as it was."""
    a, b, _ = two_files
    junk = a.with_name("notes.gpkg")
    junk.write_text("not a GeoPackage\n" * 100)
    target, others = (junk, [b]) if which == "target" else (a, [b, junk])
    before = digest(target)
    assert join_geopackages(target, others) is False
    assert digest(target) == before


def test_ten_others_join_at_once_and_eleven_are_too_many(tmp_path):
    """SQLite attaches ten databases besides ``main`` (SQLITE_MAX_ATTACHED,
    sqlite.org/limits.html, what this sqlite3 reports): ten others join, and
    GDAL reads every layer back; eleven are an error before anything is read."""
    limit = sqlite3.connect(":memory:").getlimit(sqlite3.SQLITE_LIMIT_ATTACHED) \
        if hasattr(sqlite3, "SQLITE_LIMIT_ATTACHED") else 10
    assert limit == 10  # the premise
    files = []
    for j in range(12):
        path = tmp_path / f"{j}.gpkg"
        gdf = gpd.GeoDataFrame({"k": [j, j + 1]}, geometry=shapely.points([[j, 0.0], [j, 1.0]]),
                               crs=UTM)
        gdf.to_file(path, layer=f"layer_{j}", driver="GPKG", engine="pyogrio")
        files.append(path)
    with pytest.raises(ValueError):
        join_geopackages(files[0], files[1:])
    assert join_geopackages(files[0], files[1:11])
    assert [n for n, _ in pyogrio.list_layers(files[0])] == [f"layer_{j}" for j in range(11)]
    assert [pyogrio.read_info(files[0], layer=f"layer_{j}")["features"] for j in range(11)] == [2] * 11
