"""Benchmark: ground profile of a 20 km route over a 16000 x 16000 DEM.

Generates once (cached in benchmarks/_data/, git-ignored) a tiled float32
GeoTIFF of 16000 x 16000 one-metre cells (1 GiB of values; internal tiles
256 x 256), written in strips so generation itself stays low-memory. The
route is a straight diagonal of 20 km with stations every 0.5 m (40 001
stations).

Each measurement runs in a fresh subprocess and reports wall time and peak
resident memory (VmHWM of /proc/self/status, which restarts at exec, unlike
``getrusage``'s ru_maxrss), next to the resident memory just after imports and
route set-up (the baseline):

* ``sample_ground`` bilinear and bicubic (gisgrade.terrain);
* naive per-point sampling of the same stations with rasterio's
  ``DatasetReader.sample`` (nearest cell, one small read per point);
* the whole run: ``gisgrade profile`` on a project file for the same route
  (reading the centerline, stationing, sampling, writing profile.csv,
  layers.gpkg, profile.png and the summary).

Each subprocess's wall time from start to exit (imports included) is printed
too: the target is the whole run within 4x of the naive sampling process, and
its peak RSS under 600 MB.

Run from the repository root::

    python benchmarks/bench_ground_profile.py            # all
    python benchmarks/bench_ground_profile.py --regenerate

It prints the figures; it asserts nothing.
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "_data"
DEM = DATA / "dem_16000_tiled256_f32.tif"
CRS = "EPSG:32633"  # UTM zone 33N
SIZE = 16000
CELL = 1.0
X0, Y0 = 400000.0, 4516000.0  # top-left corner
ROUTE_M = 20000.0
SPACING = 0.5


def surface(x, y):
    """Invented smooth terrain [m]: a tilt, rolling hills and a valley."""
    u = (x - X0) / 1000.0
    v = (Y0 - y) / 1000.0
    return (
        180.0 + 2.0 * u - 1.5 * v
        + 25.0 * np.sin(u / 1.7) * np.cos(v / 2.3)
        + 6.0 * np.sin(u * 1.9 + v * 0.7)
        - 30.0 * np.exp(-(((u - v) / 0.8) ** 2))
    )


def generate(path: Path) -> float:
    import rasterio
    from rasterio.transform import from_origin
    from rasterio.windows import Window

    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_suffix(".partial.tif")
    t0 = time.perf_counter()
    profile = dict(
        driver="GTiff", width=SIZE, height=SIZE, count=1, dtype="float32", crs=CRS,
        transform=from_origin(X0, Y0, CELL, CELL), tiled=True, blockxsize=256, blockysize=256,
        compress="deflate", zlevel=1, predictor=3, num_threads="ALL_CPUS", BIGTIFF="IF_SAFER",
    )
    xs = X0 + (np.arange(SIZE) + 0.5) * CELL
    with rasterio.open(tmp, "w", **profile) as dst:
        for r0 in range(0, SIZE, 256):
            h = min(256, SIZE - r0)
            ys = Y0 - (np.arange(r0, r0 + h) + 0.5) * CELL
            block = surface(xs[None, :], ys[:, None]).astype("float32")
            dst.write(block, 1, window=Window(0, r0, SIZE, h))
    os.replace(tmp, path)
    return time.perf_counter() - t0


def route():
    """A straight 20 km diagonal, stations every 0.5 m, starting 1 km in."""
    station = np.arange(0.0, ROUTE_M + SPACING / 2, SPACING)
    d = station / np.sqrt(2.0)
    return station, X0 + 1000.0 + d, Y0 - 1000.0 - d


def _status_mb(field: str) -> float:
    """A memory line of /proc/self/status (Linux) in MiB."""
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith(field + ":"):
                return int(line.split()[1]) / 1024.0
    return float("nan")


def rss_mb() -> float:
    return _status_mb("VmRSS")


def peak_rss_mb() -> float:
    """Peak RSS of this process image. VmHWM restarts at exec; getrusage's
    ru_maxrss does not (it keeps the parent's peak across fork + exec), so it
    is only a fallback off Linux."""
    peak = _status_mb("VmHWM")
    if peak == peak:
        return peak
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def child(kind: str, out: str) -> None:
    import pyproj  # noqa: F401  (imports count in the baseline)
    import rasterio

    sys.path.insert(0, str(ROOT))
    from gisgrade.terrain import sample_ground

    station, x, y = route()
    base = rss_mb()
    t0 = time.perf_counter()
    if kind == "whole":
        from gisgrade.cli import main as cli

        project = write_project(Path(out).parent)
        assert cli(["profile", str(project), "-o", str(Path(out).parent / "run"), "-q"]) == 0
        import pandas as pd

        z = pd.read_csv(Path(out).parent / "run" / "profile.csv")["ground_m"].to_numpy()
    elif kind == "naive":
        with rasterio.open(DEM) as src:
            z = np.array([v[0] for v in src.sample(zip(x, y))], dtype=float)
    else:
        z = sample_ground([DEM], x, y, CRS, station=station, method=kind).z
    dt = time.perf_counter() - t0
    peak = peak_rss_mb()
    np.save(out, z)
    print(json.dumps({"kind": kind, "seconds": dt, "baseline_mb": base, "peak_mb": peak}))


def write_project(folder: Path) -> Path:
    """The benchmark route as a GeoJSON centerline and a ground-only project file."""
    station, x, y = route()
    ends = [[float(x[0]), float(y[0])], [float(x[-1]), float(y[-1])]]
    (folder / "route.geojson").write_text(json.dumps({
        "type": "FeatureCollection",
        "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32633"}},
        "features": [{"type": "Feature", "properties": {},
                      "geometry": {"type": "LineString", "coordinates": ends}}]}))
    project = folder / "project.toml"
    project.write_text(f'[alignment]\npath = "route.geojson"\nspacing = "{SPACING} m"\n\n'
                       f'[terrain]\ndem = "{DEM}"\nvertical_accuracy = "lidar"\n')
    return project


def run_child(kind: str, out: str, script: str = __file__) -> dict:
    """Run ``script --child kind --out out`` in a fresh process; its JSON line
    and the process's wall time."""
    t0 = time.perf_counter()
    proc = subprocess.run(
        [sys.executable, script, "--child", kind, "--out", out],
        capture_output=True, text=True, check=True, cwd=ROOT,
    )
    result = json.loads(proc.stdout.strip().splitlines()[-1])
    result["process_seconds"] = time.perf_counter() - t0
    return result


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
    station, x, y = route()
    print(f"DEM {SIZE}x{SIZE} float32 ({SIZE * SIZE * 4 / 2**30:.2f} GiB of values), tiles 256x256, "
          f"deflate; route {ROUTE_M / 1000:.0f} km diagonal, {station.size} stations at {SPACING} m")
    results = {}
    with tempfile.TemporaryDirectory() as tmp:
        for kind in ("bilinear", "bicubic", "naive", "whole"):
            folder = Path(tmp) / kind
            folder.mkdir()
            out = str(folder / f"{kind}.npy")
            r = run_child(kind, out)
            r["z"] = np.load(out)
            results[kind] = r
    print(f"{'method':<28}{'time s':>9}{'process s':>11}{'baseline MB':>13}{'peak RSS MB':>13}")
    label = {"bilinear": "sample_ground bilinear", "bicubic": "sample_ground bicubic",
             "naive": "rasterio sample (nearest)", "whole": "whole run (gisgrade profile)"}
    for kind, r in results.items():
        print(f"{label[kind]:<28}{r['seconds']:>9.2f}{r['process_seconds']:>11.2f}"
              f"{r['baseline_mb']:>13.0f}{r['peak_mb']:>13.0f}")
    exact = surface(x, y)
    for kind, r in results.items():
        err = np.abs(r["z"] - exact).max() * 1000.0
        print(f"max |z - surface|, {label[kind]:<28}{err:10.3f} mm")
    ratio = results["bilinear"]["seconds"] / results["naive"]["seconds"]
    print(f"bilinear time / naive time: {ratio:.2f}")
    whole = results["whole"]["process_seconds"] / results["naive"]["process_seconds"]
    print(f"whole-run process / naive sampling process: {whole:.2f} (target <= 4); "
          f"whole-run peak RSS {results['whole']['peak_mb']:.0f} MB (target < 600 MB)")


if __name__ == "__main__":
    main()
