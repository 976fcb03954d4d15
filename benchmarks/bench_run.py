"""Benchmark: a whole run against reading the terrain, and many routes on Dask.

Two cases over the tiled DEM of ``bench_ground_profile.py`` (16000 x 16000
one-metre cells, float32, 256 x 256 tiles; generated once into
benchmarks/_data/, git-ignored):

``long``
    ``gisgrade run`` (every stage, every table and layer, no figures unless
    ``--figures``) of a 20 km line at 0.5 m stations with a pipe and a
    design flow, against a process that only samples the same 40 001
    stations with rasterio (``DatasetReader.sample``). Each in a fresh
    process, wall time from start to exit (imports included) and peak RSS
    (VmHWM), medians of ``--repeat`` runs. Target: the run within 2.5x the
    sampling process and under 400 MB.

``routes``
    ``--routes`` straight routes of 2 to 10 km (default 200) at
    ``--spacing`` (default 2 m) through ``gisgrade routes`` with 1 and 2
    workers, in ``--repeat`` pairs run one after the other (so that a busy
    spell of a shared machine hits both of a pair; the ratio is the median of
    the pairs'), printing routes per second and CPU seconds (the ratio that
    both cores busy all the time would give with those CPU seconds shows
    whether 2 workers lose time to idle cores or to extra work); beside it the naive baseline
    measured in the same run: one ``gisgrade run`` process per route, over
    the first ``--naive`` routes (default 10), as seconds a route. Targets:
    the time a route in ``routes`` at most a third of a standalone run; 2
    workers at most 0.6x the time of 1 (this machine has 2 cores). Before and
    after, it times two CPU-bound processes run at once against one alone:
    a figure above 1.00 says the two cores were not both free (other work,
    shared host), which no change to ``routes`` can win back.

Run from the repository root::

    python benchmarks/bench_run.py                       # both cases
    python benchmarks/bench_run.py --case long --repeat 7
    python benchmarks/bench_run.py --case routes --routes 40
    python benchmarks/bench_run.py --case routes --repeat 5   # 5 pairs

gisgrade's modules are byte-compiled first (into ``__pycache__``, as pip
leaves an installed package). It prints the figures; it asserts nothing.
"""
from __future__ import annotations

import argparse
import compileall
import json
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))
import bench_ground_profile as ground  # noqa: E402  (the DEM and its generator)

PIPE = """
[pipe]
inside_diameter = "600 mm"
outside_diameter = "635 mm"
friction = "darcy-weisbach"
roughness = "0.1 mm"

[cover]
minimum = "1.2 m"

[hydraulics]
source_head = "{head} m"
flow = "300 L/s"
temperature = "15 degC"
"""


def project(folder: Path, lines, spacing: float, names=None) -> Path:
    """A project file in ``folder`` over the benchmark DEM with ``lines`` as routes."""
    feats = [{"type": "Feature", "properties": {"name": (names or [f"r{i}" for i in range(len(lines))])[i]},
              "geometry": {"type": "LineString", "coordinates": [list(map(float, p)) for p in ln]}}
             for i, ln in enumerate(lines)]
    (folder / "routes.geojson").write_text(json.dumps({
        "type": "FeatureCollection", "features": feats,
        "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32633"}}}))
    path = folder / "project.toml"
    path.write_text(f'[alignment]\npath = "routes.geojson"\nspacing = "{spacing} m"\n'
                    f'route_field = "name"\n\n[terrain]\ndem = "{ground.DEM}"\n'
                    f'vertical_accuracy = "lidar"\n' + PIPE.format(head=420))
    return path


def timed(cmd, cwd=ROOT) -> tuple[float, float, float]:
    """Wall seconds, peak RSS (MiB, of the process tree's largest) and CPU
    seconds (user + system, the process and the children it waited for) of ``cmd``."""
    t0 = time.perf_counter()
    proc = subprocess.run(["/usr/bin/time", "-f", "%M %U %S", *cmd], capture_output=True,
                          text=True, cwd=cwd)
    dt = time.perf_counter() - t0
    if proc.returncode not in (0, 1):
        raise SystemExit(f"{cmd[:3]} failed ({proc.returncode}): {proc.stderr[-800:]}")
    peak, user, system = map(float, proc.stderr.strip().splitlines()[-1].split())
    return dt, peak / 1024.0, user + system


SAMPLER = """
import sys, numpy as np, rasterio
sys.path.insert(0, {here!r})
import bench_ground_profile as g
station, x, y = g.route()
with rasterio.open(g.DEM) as src:
    z = np.array([v[0] for v in src.sample(zip(x, y))], dtype=float)
print(z.size)
"""


def case_long(repeat: int, figures: bool) -> None:
    station, x, y = ground.route()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        p = project(folder, [[(x[0], y[0]), (x[-1], y[-1])]], ground.SPACING, ["long"])
        text = p.read_text().replace('route_field = "name"\n', "")
        p.write_text(text)
        gis = [sys.executable, "-m", "gisgrade", "run", str(p), "-o", str(folder / "out"), "-q"]
        if not figures:
            gis.insert(-1, "--no-figures")
        sample = [sys.executable, "-c", SAMPLER.format(here=str(HERE))]
        runs = {"gisgrade run": [], "rasterio sampling": []}
        for _ in range(repeat):  # interleaved, so a busy spell hits both alike
            runs["gisgrade run"].append(timed(gis))
            runs["rasterio sampling"].append(timed(sample))
    print(f"long line: {ground.ROUTE_M / 1000:.0f} km at {ground.SPACING} m ({station.size} stations), "
          f"DEM {ground.SIZE}^2 tiled; medians of {repeat}"
          + ("" if figures else "; no figures (--no-figures)"))
    med = {k: (statistics.median(r[0] for r in v), statistics.median(r[1] for r in v))
           for k, v in runs.items()}
    for k, (t, m) in med.items():
        print(f"  {k:<18} {t:6.2f} s  {m:6.0f} MB peak")
    ratio = med["gisgrade run"][0] / med["rasterio sampling"][0]
    print(f"  ratio {ratio:.2f}x (target <= 2.5x); peak {med['gisgrade run'][1]:.0f} MB "
          "(target < 400 MB)")


def random_routes(n: int, seed: int = 7):
    """``n`` straight routes of 2 to 10 km inside the DEM (a fixed seed)."""
    rng = np.random.default_rng(seed)
    margin = 500.0
    out = []
    while len(out) < n:
        length = rng.uniform(2000.0, 10000.0)
        a = rng.uniform(0, 2 * np.pi)
        x0 = rng.uniform(ground.X0 + margin, ground.X0 + ground.SIZE - margin)
        y0 = rng.uniform(ground.Y0 - ground.SIZE + margin, ground.Y0 - margin)
        x1, y1 = x0 + length * np.cos(a), y0 + length * np.sin(a)
        if (ground.X0 + margin < x1 < ground.X0 + ground.SIZE - margin
                and ground.Y0 - ground.SIZE + margin < y1 < ground.Y0 - margin):
            out.append([(x0, y0), (x1, y1)])
    return out


SPIN = "s = 0\nfor i in range(12_000_000):\n    s += i * i\n"


def two_at_once() -> float:
    """How much longer two CPU-bound processes take when run at once than one
    alone (1.00: two full cores; more when the cores are shared with other
    work or are not whole cores): the ceiling on what 2 workers can gain."""
    spin = [sys.executable, "-S", "-c", SPIN]

    def one() -> float:
        t0 = time.perf_counter()
        subprocess.run(spin, check=True)
        return time.perf_counter() - t0

    def two() -> float:
        t0 = time.perf_counter()
        procs = [subprocess.Popen(spin) for _ in range(2)]
        for p in procs:
            p.wait()
        return time.perf_counter() - t0

    alone = min(one(), one())  # the fastest of two: the core at its best
    return min(two(), two()) / alone


def case_routes(n: int, spacing: float, naive: int, pairs: int) -> None:
    lines = random_routes(n)
    km = sum(float(np.hypot(*np.subtract(b, a))) for a, b in lines) / 1000.0
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        p = project(folder, lines, spacing)
        print(f"routes: {n} straight routes of 2-10 km ({km:.0f} km in all) at {spacing} m stations; "
              f"1 and 2 workers in {pairs} pairs, run one after the other (the order turned "
              "each pair), so that a busy spell of the machine hits both runs of a pair")
        before = two_at_once()
        runs = {1: [], 2: []}
        for i in range(pairs):
            for workers in ((1, 2) if i % 2 == 0 else (2, 1)):
                out = folder / f"out{workers}"
                runs[workers].append(timed([sys.executable, "-m", "gisgrade", "routes", str(p),
                                            "-o", str(out), "--workers", str(workers), "-q"]))
                shutil.rmtree(out)  # (each run writes a new folder, as a first run does)
            (w1, _, c1), (w2, _, c2) = runs[1][-1], runs[2][-1]
            print(f"  pair {i + 1}: 1 worker {w1:6.1f} s ({c1:5.1f} s CPU), "
                  f"2 workers {w2:6.1f} s ({c2:5.1f} s CPU): {w2 / w1:.2f}")
        med = {w: [statistics.median(r[k] for r in v) for k in range(3)] for w, v in runs.items()}
        for w, (t, m, c) in med.items():
            print(f"  gisgrade routes --workers {w}: {t:7.1f} s, {n / t:5.2f} routes/s, "
                  f"{t / n:5.2f} s a route, {c:6.1f} s CPU, {m:.0f} MB peak (largest process); "
                  f"medians")
        alone = []
        for i in range(min(naive, n)):
            q = folder / f"alone{i}"
            q.mkdir()
            pi = project(q, [lines[i]], spacing, [f"r{i}"])
            pi.write_text(pi.read_text().replace('route_field = "name"\n', ""))
            alone.append(timed([sys.executable, "-m", "gisgrade", "run", str(pi), "-o",
                                str(q / "out"), "-q", "--no-figures"])[0])
        base = statistics.mean(alone)
        print(f"  naive: one `gisgrade run` process a route, first {len(alone)} routes: "
              f"{base:5.2f} s a route ({1 / base:5.2f} routes/s)")
        print(f"  a route in `routes` (1 worker) / alone: {med[1][0] / n / base:.2f} "
              "(target <= 0.33)")
        ratios = sorted(b[0] / a[0] for a, b in zip(runs[1], runs[2]))
        print(f"  2 workers / 1 worker: {statistics.median(ratios):.2f}, the median of the pairs "
              f"({ratios[0]:.2f} to {ratios[-1]:.2f}) (target <= 0.6); both cores busy all the "
              f"time with the CPU seconds used would give {med[2][2] / 2 / med[1][0]:.2f}")
        print(f"  two CPU-bound processes at once / one alone: {before:.2f} before the runs, "
              f"{two_at_once():.2f} after (1.00: two whole cores free; more: the cores are "
              "shared, and 2 workers gain less)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--case", choices=("long", "routes", "both"), default="both")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--figures", action="store_true", help="the long run with its figures")
    ap.add_argument("--routes", type=int, default=200)
    ap.add_argument("--spacing", type=float, default=2.0)
    ap.add_argument("--naive", type=int, default=10)
    args = ap.parse_args()
    if not ground.DEM.exists():
        print(f"generating {ground.DEM} ...", flush=True)
        ground.generate(ground.DEM)
    # gisgrade's modules byte-compiled, as pip leaves an installed package: where
    # PYTHONDONTWRITEBYTECODE is set, an editable checkout would otherwise be
    # compiled from source at every start of every timed process (0.1-0.15 s)
    compileall.compile_dir(str(ROOT / "gisgrade"), quiet=1)
    if args.case in ("long", "both"):
        case_long(args.repeat, args.figures)
    if args.case in ("routes", "both"):
        case_routes(args.routes, args.spacing, args.naive, args.repeat)


if __name__ == "__main__":
    main()
