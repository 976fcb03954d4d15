"""Mutation trial: does the test suite catch one-line mistakes in the code?

Each mutation changes one line of gisgrade (a constant, a side of a point
loss, a term of a formula), runs the tests that cover that part, and puts
the line back. A mutation the tests let through is a *survivor*: a mistake
nothing would notice. The trial prints each mutation's fate and the
survivors, and exits 1 if any survived.

    python tools/mutation_trial.py            # every mutation
    python tools/mutation_trial.py --list     # what would be tried
    python tools/mutation_trial.py butterfly  # only those whose name holds the word

First each set of tests runs on the unmutated code and must pass (else a
"caught" would mean nothing). The source files are restored after each
mutation (and on Ctrl-C); the trial refuses to start on a worktree with
uncommitted changes to gisgrade/, so a restore can never lose work.
"""
from __future__ import annotations

import argparse
import subprocess
import sys
import time
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


@dataclass(frozen=True)
class Mutation:
    name: str
    file: str  #: under gisgrade/
    old: str  #: the text replaced (must occur exactly once)
    new: str
    tests: tuple  #: pytest arguments: the tests that should catch it


MUTATIONS = [
    Mutation("butterfly valve K 0.45 -> 0.30", "hydraulics/minor.py",
             '"butterfly_valve_open": NamedK(0.45,', '"butterfly_valve_open": NamedK(0.30,',
             ("tests/test_minor_losses.py", "tests/test_strength.py")),
    Mutation("vapour pressure fixed at one temperature", "findings/vapour.py",
             "vapour_pressure(inputs.project.hydraulics.temperature)", "vapour_pressure(288.15)",
             ("tests/test_findings.py", "tests/test_strength.py")),
    Mutation("low-pressure finding ignores the upstream side of point losses", "findings/pressure.py",
             "p = g.pressure_low[i]", "p = g.pressure[i]", ("tests/test_findings.py", "tests/test_strength.py")),
    Mutation("sub-atmospheric finding ignores the upstream side", "findings/pressure.py",
             "hgl = g.hgl_low[i]", "hgl = g.hgl[i]", ("tests/test_findings.py", "tests/test_strength.py")),
    Mutation("rating check on the low side", "findings/rating.py",
             "g.pressure_high[i], inputs.column", "g.pressure_low[i], inputs.column",
             ("tests/test_findings.py", "tests/test_strength.py")),
    Mutation("high-pressure finding on the low side", "findings/pressure.py",
             "p = g.pressure_high[i]", "p = g.pressure_low[i]", ("tests/test_findings.py", "tests/test_strength.py")),
    Mutation("tank entrance kind ignored", "hydraulics/stage.py",
             'minor.NAMED_K[f"entrance_{hyd.entrance}"].k', 'minor.NAMED_K["entrance_sharp"].k',
             ("tests/test_scenarios.py", "tests/test_strength.py", "-k", "entrance or tank")),
    Mutation("tank exit loss dropped", "hydraulics/stage.py",
             'base_k[-1] += minor.NAMED_K["exit"].k', "base_k[-1] += 0.0",
             ("tests/test_scenarios.py", "tests/test_strength.py", "-k", "tank or exit")),
    Mutation("standard gravity 9.80665 -> 9.81", "hydraulics/friction.py",
             "G = 9.80665", "G = 9.81", ("tests/test_friction.py", "gisgrade/hydraulics/friction.py", "tests/test_strength.py")),
    Mutation("velocity head V^2/g", "hydraulics/gradelines.py",
             "hv = v_after * v_after / (2.0 * G)", "hv = v_after * v_after / G",
             ("tests/test_gradelines.py", "tests/test_strength.py")),
    Mutation("Colebrook 2.51 -> 2.5", "hydraulics/friction.py",
             "s = rel_roughness / 3.7 + 2.51 * x / Re", "s = rel_roughness / 3.7 + 2.5 * x / Re",
             ("tests/test_friction.py", "tests/test_strength.py")),
    Mutation("Hazen-Williams exponent 1.852 -> 1.85", "hydraulics/friction.py",
             "np.abs(Q) ** 1.852 / (C**1.852", "np.abs(Q) ** 1.85 / (C**1.852",
             ("tests/test_friction.py", "tests/test_strength.py")),
    Mutation("Joukowsky head halved", "hydraulics/surge.py",
             "np.asarray(velocity_change, float) / G)", "np.asarray(velocity_change, float) / (2 * G))",
             ("tests/test_operations.py", "tests/test_strength.py")),
    Mutation("95 % band 1.96 -> 2 RMSE", "terrain.py",
             "return round(1.96 * rmse, 12)", "return round(2.0 * rmse, 12)",
             ("tests/test_terrain.py", "tests/test_strength.py")),
    Mutation("pressure from a fixed density", "hydraulics/gradeset.py",
             "return self.density * G * (self.hgl - self.axis)", "return 1000.0 * G * (self.hgl - self.axis)",
             ("tests/test_gradelines.py", "tests/test_findings.py", "tests/test_strength.py")),
    Mutation("cover finding lets 5 cm short pass", "findings/cover.py",
             "cover < min_cover - COVER_TOLERANCE", "cover < min_cover - 0.05",
             ("tests/test_findings.py", "tests/test_strength.py")),
]


def _clean() -> bool:
    out = subprocess.run(["git", "status", "--porcelain", "--", "gisgrade"], cwd=ROOT,
                         capture_output=True, text=True, check=True).stdout
    return out.strip() == ""


def trial(m: Mutation, timeout: float) -> tuple[str, float]:
    path = ROOT / "gisgrade" / m.file
    text = path.read_text()
    if text.count(m.old) != 1:
        return f"not applied ({text.count(m.old)} matches of the line)", 0.0
    t0 = time.perf_counter()
    try:
        path.write_text(text.replace(m.old, m.new))
        try:
            proc = subprocess.run([sys.executable, "-m", "pytest", "-q", "-x", "-p", "no:cacheprovider",
                                   *m.tests], cwd=ROOT, capture_output=True, text=True, timeout=timeout)
            fate = "caught" if proc.returncode != 0 else "SURVIVED"
        except subprocess.TimeoutExpired:
            fate = "caught (timeout)"
    finally:
        path.write_text(text)
    return fate, time.perf_counter() - t0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("words", nargs="*", help="only mutations whose name holds one of these")
    ap.add_argument("--list", action="store_true", help="list the mutations and exit")
    ap.add_argument("--timeout", type=float, default=600.0, help="seconds per mutation's tests")
    args = ap.parse_args(argv)
    chosen = [m for m in MUTATIONS if not args.words or any(w in m.name for w in args.words)]
    if args.list:
        for m in chosen:
            print(f"{m.name}: gisgrade/{m.file}: {m.old!r} -> {m.new!r}; tests {' '.join(m.tests)}")
        return 0
    if not _clean():
        print("mutation_trial: gisgrade/ has uncommitted changes; commit them first", file=sys.stderr)
        return 2
    for tests in dict.fromkeys(m.tests for m in chosen):  # the tests must pass unmutated
        proc = subprocess.run([sys.executable, "-m", "pytest", "-q", "-x", "-p", "no:cacheprovider",
                               *tests], cwd=ROOT, capture_output=True, text=True)
        if proc.returncode != 0:
            print(f"mutation_trial: the unmutated code fails {' '.join(tests)}; fix that first",
                  file=sys.stderr)
            return 2
    print(f"baseline: the {len(set(m.tests for m in chosen))} test sets pass unmutated", flush=True)
    survivors, applied = [], 0
    for m in chosen:
        fate, dt = trial(m, args.timeout)
        applied += not fate.startswith("not applied")
        print(f"{fate:<22} {dt:6.1f} s  {m.name}", flush=True)
        if fate == "SURVIVED" or fate.startswith("not applied"):
            survivors.append(m.name)
    print(f"\n{applied} mutations applied, {len(survivors)} survivors"
          + ("".join(f"\n  {s}" for s in survivors) if survivors else ""))
    return 1 if survivors else 0


if __name__ == "__main__":
    sys.exit(main())
