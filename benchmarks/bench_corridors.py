"""Benchmark: corridors over a 10000 x 10000 DEM between points 15 km apart.

Generates once (cached in benchmarks/_data/, git-ignored) a tiled float32
GeoTIFF of 10000 x 10000 two-metre cells (20 km square; internal tiles
256 x 256, deflate), written in strips so generation stays low-memory: an
invented valley with rolling hills and a ridge with two passes across it.

Two measurements, each in a fresh subprocess (wall time and peak resident
memory, VmHWM, as in bench_ground_profile.py):

* ``gisgrade corridors`` from a source to a destination 15 km apart, k = 3,
  the project's defaults (HGL term on): the DEM is read through one window
  around the points (plus the default margin), averaged to the coarsest
  whole number of DEM cells that keeps the grid within corridors.max_cells;
* one ``gisgrade run`` of the cheapest candidate (candidates.gpkg, route
  C1) as the centerline, the same project otherwise.

Run from the repository root::

    python benchmarks/bench_corridors.py             # all
    python benchmarks/bench_corridors.py --regenerate

It prints the figures; it asserts nothing.
"""
from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_ground_profile import peak_rss_mb, rss_mb, run_child  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "_data"
DEM = DATA / "dem_10000_2m_tiled256_f32.tif"
CRS = "EPSG:32633"
SIZE, CELL = 10000, 2.0
X0, Y0 = 600000.0, 4520000.0  # top-left corner
SOURCE = (X0 + 2500.0, Y0 - 10000.0)
DESTINATION = (X0 + 17500.0, Y0 - 10000.0)  # 15 km east


def surface(x, y):
    """Invented terrain [m]: a valley falling east, rolling hills, and a
    ridge 120 m high across the straight line at 10 km with passes 2.5 km
    north and 3 km south of it."""
    u, v = (x - X0) / 1000.0, (Y0 - y) / 1000.0
    ridge = 120.0 * np.exp(-((u - 10.0) / 0.15) ** 2)
    passes = 1 - np.exp(-((v - 7.5) / 0.4) ** 2) - np.exp(-((v - 13.0) / 0.4) ** 2)
    return (150.0 - 1.2 * u + 0.002 * (v - 10.0) ** 4 + 8.0 * np.sin(u / 0.9) * np.cos(v / 1.3)
            + 2.0 * np.sin(3.1 * u + 1.7 * v) + ridge * np.clip(passes, 0.0, 1.0))


def generate(path: Path) -> float:
    import rasterio
    from rasterio.transform import from_origin
    from rasterio.windows import Window

    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_suffix(".partial.tif")
    t0 = time.perf_counter()
    profile = dict(driver="GTiff", width=SIZE, height=SIZE, count=1, dtype="float32", crs=CRS,
                   transform=from_origin(X0, Y0, CELL, CELL), tiled=True, blockxsize=256,
                   blockysize=256, compress="deflate", zlevel=1, predictor=3,
                   num_threads="ALL_CPUS", BIGTIFF="IF_SAFER")
    xs = X0 + (np.arange(SIZE) + 0.5) * CELL
    with rasterio.open(tmp, "w", **profile) as dst:
        for r0 in range(0, SIZE, 256):
            h = min(256, SIZE - r0)
            ys = Y0 - (np.arange(r0, r0 + h) + 0.5) * CELL
            dst.write(surface(xs[None, :], ys[:, None]).astype("float32"), 1,
                      window=Window(0, r0, SIZE, h))
    os.replace(tmp, path)
    return time.perf_counter() - t0


PROJECT = """\
[alignment]
path = "{line}"
spacing = "10 m"
{where}
[terrain]
dem = "{dem}"
vertical_accuracy = "lidar"

[pipe]
inside_diameter = "305 mm"
outside_diameter = "326 mm"
roughness = "0.1 mm"

[cover]
minimum = "1.2 m"

[hydraulics]
source_head = "260 m"
flow = "60 L/s"

[checks]
max_pressure = "1200 kPa"

[corridors]
k = 3
"""


def write_project(folder: Path, line: str, where: str = "") -> Path:
    if line.endswith(".geojson"):  # a straight drawn line between the points
        (folder / line).write_text(json.dumps({
            "type": "FeatureCollection",
            "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32633"}},
            "features": [{"type": "Feature", "properties": {},
                          "geometry": {"type": "LineString",
                                       "coordinates": [list(SOURCE), list(DESTINATION)]}}]}))
    project = folder / "project.toml"
    project.write_text(PROJECT.format(line=line, where=where, dem=DEM))
    return project


def child(kind: str, folder: str) -> None:
    sys.path.insert(0, str(ROOT))
    from gisgrade.cli import main as cli

    folder = Path(folder)
    base = rss_mb()
    t0 = time.perf_counter()
    if kind == "corridors":
        project = write_project(folder, "drawn.geojson")
        code = cli(["corridors", str(project), "--from", "%f,%f" % SOURCE, "--to",
                    "%f,%f" % DESTINATION, "-o", str(folder / "corridors"), "-q"])
    else:
        project = write_project(folder, str(folder / "corridors" / "candidates.gpkg"),
                                "where = \"route = 'C1'\"\n")
        code = cli(["run", str(project), "-o", str(folder / "run"), "-q"])
    dt = time.perf_counter() - t0
    print(json.dumps({"kind": kind, "code": code, "seconds": dt, "baseline_mb": base,
                      "peak_mb": peak_rss_mb()}))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--regenerate", action="store_true")
    ap.add_argument("--child", help=argparse.SUPPRESS)
    ap.add_argument("--out", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        child(args.child, args.out)
        return
    if args.regenerate or not DEM.exists():
        print(f"generating {DEM} ...", flush=True)
        print(f"  generated in {generate(DEM):.1f} s, {DEM.stat().st_size / 2**20:.0f} MiB on disk")
    print(f"DEM {SIZE}x{SIZE} float32 at {CELL:g} m ({SIZE * SIZE * 4 / 2**20:.0f} MiB of "
          f"values), tiles 256x256; source and destination 15 km apart")
    import pandas as pd
    import rasterio

    with tempfile.TemporaryDirectory() as tmp:
        results = {kind: run_child(kind, tmp, __file__) for kind in ("corridors", "run")}
        table = pd.read_csv(Path(tmp) / "corridors" / "corridors.csv")
        with rasterio.open(Path(tmp) / "corridors" / "cost.tif") as src:
            rows, cols, cell = src.height, src.width, src.res[0]
    print(f"{'step':<34}{'time s':>9}{'process s':>11}{'baseline MB':>13}{'peak RSS MB':>13}")
    label = {"corridors": "gisgrade corridors (k = 3)", "run": "gisgrade run of candidate C1"}
    for kind, r in results.items():
        print(f"{label[kind]:<34}{r['seconds']:>9.2f}{r['process_seconds']:>11.2f}"
              f"{r['baseline_mb']:>13.0f}{r['peak_mb']:>13.0f}")
    read = rows * cols * (cell / CELL) ** 2
    print(f"DEM window read: {read / 1e6:.1f} M of {SIZE * SIZE / 1e6:.0f} M cells "
          f"({read / SIZE ** 2:.0%}), averaged to a {rows} x {cols} grid of {cell:g} m cells")
    print(table[["route", "length_m", "cost_ratio", "shared", "max_ground_m",
                 "max_head_deficit_m"]].to_string(index=False, float_format="%.2f"))


if __name__ == "__main__":
    main()
