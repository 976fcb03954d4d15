"""Benchmark the pipe-profile designer on long synthetic routes.

Run from the repository root:  python benchmarks/bench_design.py [n ...]
Prints stations, wall time, linear solves, bends and relaxations per case.
No assertions: timing depends on the machine.
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from gisgrade.design import Crossing, DesignRules, design_profile  # noqa: E402
from gisgrade.design import profile as engine  # noqa: E402


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


def crossings(s, z, count: int, seed: int = 1):
    rng = np.random.default_rng(seed)
    idx = np.sort(rng.choice(np.arange(50, len(s) - 50), count, replace=False))
    return [Crossing(station=float(s[i]), limit=float(z[i] - rng.uniform(1.5, 3.0)), clearance=0.3,
                     name=f"X{k}") for k, i in enumerate(idx)]


def run(n: int, spacing: float, **kw):
    s, z = terrain(n, spacing)
    cx = crossings(s, z, max(2, n // 2000))
    rules = DesignRules(min_cover=1.2, **kw)
    count = {"solves": 0}
    real = engine.linprog

    def counted(*a, **k):
        count["solves"] += 1
        return real(*a, **k)

    engine.linprog = counted
    t0 = time.perf_counter()
    p = design_profile(s, z, cx, rules)
    dt = time.perf_counter() - t0
    engine.linprog = real
    label = ", ".join(f"{k}={v}" for k, v in kw.items()) or "defaults"
    print(f"n={n:>7d} spacing={spacing:g} m crossings={len(cx):>3d} [{label}]: {dt:6.2f} s, "
          f"{count['solves']} LP solves, {len(p.bends)} fittings, {len(p.relaxations)} relaxations, "
          f"excavation {p.excavation_volume:,.0f} m3")


if __name__ == "__main__":
    sizes = [int(a) for a in sys.argv[1:]] or [1_000, 10_000, 100_000]
    for n in sizes:
        run(n, 1.0)
    n = sizes[-1]
    run(n, 1.0, max_cover=3.0)
    run(n, 1.0, max_cover=3.0, min_grade=0.001)
    run(n, 5.0, max_cover=3.0)
