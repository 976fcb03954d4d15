"""Benchmark the writers: seconds (wall and CPU) each output of the demo takes.

Run from the repository root:  python benchmarks/bench_outputs.py [US]
Prints one line per writer, marking the figure writers (those a batch run may
skip). No assertions: timing depends on the machine.
"""
from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import gisgrade  # noqa: E402
from gisgrade import output  # noqa: E402
from gisgrade.display import Display  # noqa: E402

DEMO = Path(__file__).resolve().parents[1] / "gisgrade" / "data" / "demo" / "project.toml"


def main(system: str = "SI") -> None:
    t0 = time.perf_counter()
    result = gisgrade.compute(DEMO)
    print(f"compute                      {time.perf_counter() - t0:6.2f} s")
    output.output_names()  # every writer registered
    display = Display(system)
    total = 0.0
    with tempfile.TemporaryDirectory() as tmp:
        for w in output.WRITERS:
            if not w.applies(result):
                continue
            wall, cpu = time.perf_counter(), time.process_time()
            w.write(result, Path(tmp), display)
            wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
            total += wall
            print(f"{', '.join(w.files):28s} {wall:6.2f} s wall {cpu:6.2f} s CPU"
                  f"{'  (figure)' if w.figure else ''}")
    print(f"{'all writers':28s} {total:6.2f} s wall")


if __name__ == "__main__":
    main(*(sys.argv[1:2] or ["SI"]))
