"""Shared fixtures: a small synthetic project made in a temporary folder.

The data here are invented for the tests (a plane or gentle valley in a UTM
zone); checks compare against outside sources named in each test.
"""
from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pytest

DEMO = Path(__file__).resolve().parents[1] / "gisgrade" / "data" / "demo"

UTM = "EPSG:32633"


def write_dem(path, z, x0=500_000.0, y0=4_650_000.0, cell=10.0, crs=UTM, nodata=None,
              dtype="float32", scale=None, offset=None):
    """Write grid ``z`` (row 0 = north edge) as a GeoTIFF with top-left corner (x0, y0)."""
    import rasterio
    from rasterio.transform import from_origin

    profile = dict(driver="GTiff", width=z.shape[1], height=z.shape[0], count=1, dtype=dtype,
                   crs=crs, transform=from_origin(x0, y0, cell, cell), nodata=nodata)
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(z.astype(dtype), 1)
        if scale is not None or offset is not None:
            dst.scales = (scale or 1.0,)
            dst.offsets = (offset or 0.0,)
    return path


def write_lines(path, lines, crs=UTM, props=None):
    """Write LineString features (lists of (x, y)) as GeoJSON with a named CRS."""
    feats = []
    for i, coords in enumerate(lines):
        feats.append({"type": "Feature", "properties": (props or [{}] * len(lines))[i],
                      "geometry": {"type": "LineString", "coordinates": [list(c) for c in coords]}})
    doc = {"type": "FeatureCollection", "features": feats}
    if crs != "EPSG:4326":
        epsg = crs.split(":")[1]
        doc["crs"] = {"type": "name", "properties": {"name": f"urn:ogc:def:crs:EPSG::{epsg}"}}
    Path(path).write_text(json.dumps(doc))
    return path


PROJECT = """\
[alignment]
path = "line.geojson"
spacing = "10 m"

[terrain]
dem = "dem.tif"

[pipe]
inside_diameter = "300 mm"
outside_diameter = "320 mm"
friction = "darcy-weisbach"
roughness = "0.1 mm"

[cover]
minimum = "1.2 m"

[hydraulics]
source_head = "200 m"
flow = "50 L/s"
temperature = "15 degC"
"""


@pytest.fixture
def flat_project(tmp_path):
    """A 1 km straight line over flat ground at 100 m (grid 200 x 200 cells of 10 m)."""
    z = np.full((200, 200), 100.0)
    write_dem(tmp_path / "dem.tif", z)
    write_lines(tmp_path / "line.geojson", [[(500_100.0, 4_649_000.0), (501_100.0, 4_649_000.0)]])
    (tmp_path / "project.toml").write_text(PROJECT)
    return tmp_path / "project.toml"


@pytest.fixture
def demo_copy(tmp_path):
    """A writable copy of the bundled demo project."""
    dst = tmp_path / "demo"
    shutil.copytree(DEMO, dst)
    return dst / "project.toml"


#: The flat test site: a 1 km line east along y = Y from X0 over flat ground at 100 m.
BASE = PROJECT.replace('spacing = "10 m"', 'spacing = "5 m"')

X0, Y = 500_100.0, 4_649_000.0  # the line runs east along y = Y from X0 for 1 km


def flat_site(folder, extra="", crossings=None, zones=None):
    write_dem(folder / "dem.tif", np.full((200, 200), 100.0))
    write_lines(folder / "line.geojson", [[(X0, Y), (X0 + 1000.0, Y)]])
    if crossings is not None:
        write_lines(folder / "x.geojson", [c[0] for c in crossings],
                    props=[c[1] for c in crossings])
    if zones is not None:
        feats = [{"type": "Feature", "properties": p,
                  "geometry": {"type": "Polygon", "coordinates": [ring]}} for ring, p in zones]
        (folder / "zones.geojson").write_text(json.dumps({
            "type": "FeatureCollection", "features": feats,
            "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32633"}}}))
    (folder / "project.toml").write_text(BASE + extra)
    return folder / "project.toml"


def box(x0, x1):
    return [[x0, Y - 50], [x1, Y - 50], [x1, Y + 50], [x0, Y + 50], [x0, Y - 50]]


#: A crossing layer x.geojson whose features give their bottom elevation.
CROSSING_X = """
[[crossings]]
path = "x.geojson"
bottom_field = "bottom"
clearance = "0.3 m"
"""


def _demo_run(folder, extra=""):
    """The bundled demo copied to ``folder``, ``extra`` appended to its project
    file, run once by the command line; returns (project file, output folder)."""
    from gisgrade.cli import main

    dst = folder / "demo"
    shutil.copytree(DEMO, dst)
    project = dst / "project.toml"
    project.write_text(project.read_text() + extra)
    out = folder / "out"
    assert main(["run", str(project), "-o", str(out), "-q"]) == 0
    return project, out


@pytest.fixture(scope="session")
def demo_si(tmp_path_factory):
    """The demo written once for the session in SI display units: (project, outdir)."""
    return _demo_run(tmp_path_factory.mktemp("demo-si"))


@pytest.fixture(scope="session")
def demo_us(tmp_path_factory):
    """The demo written once for the session with ``[output] units = "US"``."""
    return _demo_run(tmp_path_factory.mktemp("demo-us"), '\n[output]\nunits = "US"\n')
