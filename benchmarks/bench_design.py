"""Benchmark the pipe-profile designer, and count what makes a profile buildable.

Run from the repository root:  python benchmarks/bench_design.py [n ...]

Prints, per case (each in a fresh process): stations, wall time of the design
call, the process's peak resident memory, linear solves, fittings,
relaxations and excavation; then, for the demo and a
long synthetic lidar-like route, the count of high points and grade breaks of
the least-excavation profile that follows every ripple ("before": every
station free, no grade-break cost, no tolerance) and of the buildable profile
("after": straight pipe between joints, the default grade-break cost, high
points less prominent than the DEM's 95 % band designed out). No assertions:
timing depends on the machine.
"""
from __future__ import annotations

import multiprocessing
import resource
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from gisgrade.design import Crossing, DesignRules, design_profile  # noqa: E402
from gisgrade.design import profile as engine  # noqa: E402
from gisgrade.design.points import turning_points  # noqa: E402
from gisgrade.project import DesignConfig  # noqa: E402

JOINT = DesignConfig.joint_length
#: The buildable profile's defaults, as the design stage sets them (per radian).
BUILDABLE = dict(grade_break_cost=DesignConfig.grade_break_cost / 0.01)


def terrain(n: int, spacing: float, seed: int = 0, roughness: float = 0.02):
    """Rolling hills plus a smoothed random walk and a few sharp ditches."""
    rng = np.random.default_rng(seed)
    s = np.arange(n) * spacing
    walk = np.cumsum(rng.normal(0.0, roughness, n))
    kernel = np.ones(25) / 25
    walk = np.convolve(walk, kernel, mode="same")
    z = 120 + 8 * np.sin(s / 900.0) + 3 * np.sin(s / 170.0 + 1.0) + walk
    for c in rng.uniform(s[0] + 50, s[-1] - 50, max(1, n // 5000)):  # ditches 1.5 m deep, 8 m wide
        z -= 1.5 * np.clip(1 - np.abs(s - c) / 4.0, 0, None)
    return s, z


def lidar_route(length: float = 6000.0, seed: int = 3):
    """A 1 m lidar-like route over a ridge and a valley: smooth terrain plus a
    ripple of about 0.1-0.3 m correlated over some 15 m."""
    rng = np.random.default_rng(seed)
    s = np.arange(0.0, length + 1e-9, 1.0)
    z = (150 + 25 * np.exp(-((s - 2500) / 700) ** 2) - 10 * np.exp(-((s - 4600) / 300) ** 2)
         + 4 * np.sin(s / 400))
    k = np.exp(-0.5 * (np.arange(-45, 46) / 12.0) ** 2)
    ripple = np.convolve(rng.normal(0, 1, len(s)), k / np.sqrt((k ** 2).sum()), mode="same")
    return s, z + 0.2 * ripple


def crossings(s, z, count: int, seed: int = 1):
    rng = np.random.default_rng(seed)
    idx = np.sort(rng.choice(np.arange(50, len(s) - 50), count, replace=False))
    return [Crossing(station=float(s[i]), limit=float(z[i] - rng.uniform(1.5, 3.0)), clearance=0.3,
                     name=f"X{k}") for k, i in enumerate(idx)]


def joints(s):
    """A joint every joint length (the stage adds them as stations; here the
    nearest station to each)."""
    knots = np.zeros(len(s), bool)
    knots[np.unique(np.searchsorted(s, np.arange(s[0], s[-1], JOINT)))] = True
    return knots


def timed(s, z, cx, rules):
    count = {"solves": 0}
    real = engine.solve_lp

    def counted(*a, **k):
        count["solves"] += 1
        return real(*a, **k)

    engine.solve_lp = counted
    t0 = time.perf_counter()
    try:
        p = design_profile(s, z, cx, rules)
    finally:
        dt = time.perf_counter() - t0
        engine.solve_lp = real
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux
    return p, dt, peak, count["solves"]


def run(n: int, spacing: float, buildable: bool = True, **kw):
    """One case in a fresh process, so its peak memory is its own."""
    ctx = multiprocessing.get_context("spawn")
    with ctx.Pool(1) as pool:
        print(pool.apply(_case, (n, spacing, buildable), kw), flush=True)


def _case(n: int, spacing: float, buildable: bool, **kw) -> str:
    s, z = terrain(n, spacing)
    cx = crossings(s, z, max(2, n // 2000))
    extra = dict(knots=joints(s), high_point_tolerance=0.294, **BUILDABLE) if buildable else {}
    p, dt, peak, solves = timed(s, z, cx, DesignRules(min_cover=1.2, **kw, **extra))
    label = ", ".join(f"{k}={v}" for k, v in kw.items()) or "cover only"
    return (f"{'buildable' if buildable else 'least exc':9s} n={n:>7d} spacing={spacing:g} m "
            f"crossings={len(cx):>3d} [{label}]: {dt:6.2f} s, peak RSS {peak:5.0f} MiB, {solves} "
            f"LP solves, {len(p.bends)} fittings, {len(p.relaxations)} relaxations, excavation "
            f"{p.excavation_volume:,.0f} m3")


def counts(name, s, z, top_before, top_after, knots=None):
    def line(top, label):
        highs, lows = turning_points(s, top)
        inner = [h for h in highs if 0 < h < len(s) - 1]
        grade = np.diff(top) / np.diff(s)
        breaks = int((np.abs(np.diff(grade)) > 1.7e-4).sum())  # 0.01 deg
        print(f"  {name:28s} {label}: {len(inner):4d} high points, {breaks:6d} grade breaks")

    line(top_before, "before")
    line(top_after, "after ")


def demo_counts():
    import gisgrade
    from gisgrade.cli.demo import demo_project

    r = gisgrade.compute(demo_project())
    t = r.table
    before = design_profile(t["station_m"], t["ground_m"], rules=DesignRules(
        min_cover=t["min_cover_m"].to_numpy(), outside_diameter=0.326))
    counts("demo (Sallow Creek)", t["station_m"].to_numpy(), t["ground_m"].to_numpy(),
           before.top, r.table["top_m"].to_numpy())


def lidar_counts():
    s, z = lidar_route()
    before = design_profile(s, z, rules=DesignRules(min_cover=1.2))
    after, dt, peak, solves = timed(s, z, [], DesignRules(
        min_cover=1.2, knots=joints(s), high_point_tolerance=1.96 * 0.15, **BUILDABLE))
    counts("lidar-like 6 km, 1 m", s, z, before.top, after.top)
    print(f"  {'':28s} buildable: {dt:.2f} s, {solves} LP solves; excavation "
          f"{before.excavation_volume:,.0f} -> {after.excavation_volume:,.0f} m3 below the "
          f"cover line, trench {before.trench_volume:,.0f} -> {after.trench_volume:,.0f} m3")


if __name__ == "__main__":
    sizes = [int(a) for a in sys.argv[1:]] or [1_000, 10_000, 100_000]
    for n in sizes:
        run(n, 1.0, buildable=False)
        run(n, 1.0)
    n = sizes[-1]
    run(n, 1.0, buildable=False, max_cover=3.0)
    run(n, 1.0, max_cover=3.0)
    run(n, 1.0, max_cover=3.0, min_grade=0.001)
    run(n, 5.0, max_cover=3.0)
    print("high points and grade breaks, before (least excavation) and after (buildable):")
    demo_counts()
    lidar_counts()
