"""Findings: where the main breaks a planning check, as station ranges.

Each check is one module in this package that registers a function with
:func:`check`. A function takes the :class:`Inputs` of a run (and, for a
per-scenario check, the scenario's row in the grade set) and returns
:class:`Finding` records: one contiguous run of stations that fails the
check, with its worst value and station. :func:`stage_findings` runs every
registered check and tabulates the records; the table's rows come in the
order of :data:`SCOPES` (the laid pipe, then each scenario, then the design
rules that gave way) and, within a scope, the order of registration.

A new check is a module with a registered function, and one line in
:data:`CHECK_MODULES`.
"""
from __future__ import annotations

import importlib
from dataclasses import asdict, dataclass
from functools import cached_property
from typing import Callable

import numpy as np
import pandas as pd

from ..arrays import runs

#: Pressures within this much (Pa) of a limit meet it (a solved head meets a
#: required pressure to rounding error, not one pascal short).
PRESSURE_TOLERANCE = 1e-3

#: Columns of the findings table written to ``findings.csv``.
COLUMNS = ["scenario", "check", "severity", "from_station_m", "to_station_m",
           "worst_station_m", "worst_value", "unit", "limit", "message"]

#: When a check runs, in table order: once on the laid pipe, once per
#: scenario, once on the design rules.
SCOPES = ("line", "scenario", "rules")

#: Severities, most serious first.
SEVERITIES = ("critical", "warning", "note")


@dataclass(frozen=True)
class Finding:
    """One run of stations failing one check in one scenario."""

    code: str  #: the check's identifier, e.g. "low-pressure"
    check: str  #: the check in words, e.g. "low pressure"
    severity: str  #: one of SEVERITIES
    scenario: str  #: scenario name, or "design" for the laid pipe
    from_station_m: float
    to_station_m: float
    worst_station_m: float
    worst_value: float  #: in ``unit``
    unit: str
    limit: float  #: in ``unit``
    message: str


@dataclass(frozen=True)
class Check:
    code: str
    scope: str
    run: Callable


#: Every registered check, in registration order.
REGISTRY: list[Check] = []

#: The modules holding the checks, imported in this order (registration order).
CHECK_MODULES = ("cover", "pressure", "velocity", "rating", "vapour", "surge", "relaxed")


def check(code: str, scope: str = "scenario"):
    """Register the decorated function as check ``code`` in ``scope`` (:data:`SCOPES`).

    A "scenario" check is called as ``fn(inputs, i)`` with ``i`` the
    scenario's row in ``inputs.grades``; the others as ``fn(inputs)``.
    """
    if scope not in SCOPES:
        raise ValueError(f"scope {scope!r} is not one of {SCOPES}")

    def register(fn):
        REGISTRY[:] = [c for c in REGISTRY if c.code != code] + [Check(code, scope, fn)]
        return fn

    return register


@dataclass(frozen=True, eq=False)
class Inputs:
    """What the checks read: the project, the station table with the laid
    pipe, the grade set (None before hydraulics) and the design's relaxations."""

    project: object
    table: pd.DataFrame
    grades: object = None  #: hydraulics.GradeSet
    relaxations: tuple = ()
    surge: object = None  #: hydraulics.surge.SurgeSet (None: not screened)

    def column(self, name: str, default=np.nan) -> np.ndarray:
        t = self.table
        return t[name].to_numpy(dtype=float) if name in t else np.full(len(t), float(default))

    @cached_property
    def station(self) -> np.ndarray:
        return self.column("station_m")

    @cached_property
    def top(self) -> np.ndarray:
        return self.column("top_m")


def ranges(station, value, mask, *, code, check, severity, unit, limit, scenario,
           worst="min", text="{check}") -> list[Finding]:
    """One :class:`Finding` per run of ``mask``, reporting the worst ``value`` in it
    (``worst`` "min" or "max"); ``text`` is formatted with ``check``, ``value`` and ``limit``.

    >>> f = ranges(np.array([0.0, 10.0, 20.0]), np.array([5.0, 2.0, 9.0]),
    ...            np.array([True, True, False]), code="x", check="low x", severity="note",
    ...            unit="m", limit=6.0, scenario="s", text="{value:.0f} below {limit:.0f}")
    >>> [(r.from_station_m, r.to_station_m, r.worst_station_m, r.message) for r in f]
    [(0.0, 10.0, 10.0, '2 below 6')]
    """
    out = []
    for a, b in runs(mask):
        seg = value[a:b + 1]
        k = a + int(np.argmin(seg) if worst == "min" else np.argmax(seg))
        out.append(Finding(
            code=code, check=check, severity=severity, scenario=scenario,
            from_station_m=float(station[a]), to_station_m=float(station[b]),
            worst_station_m=float(station[k]), worst_value=float(value[k]), unit=unit,
            limit=float(limit), message=text.format(check=check, value=value[k], limit=limit),
        ))
    return out


def run_checks(inputs: Inputs) -> list[Finding]:
    """Every registered check's findings, in table order (see :data:`SCOPES`)."""
    _load()
    out: list[Finding] = []
    for scope in SCOPES:
        checks = [c for c in REGISTRY if c.scope == scope]
        if scope != "scenario":
            for c in checks:
                out += c.run(inputs)
        elif inputs.grades is not None:
            for i in range(len(inputs.grades)):
                for c in checks:
                    out += c.run(inputs, i)
    return out


def table(findings) -> pd.DataFrame:
    """The findings as a table: :data:`COLUMNS` and ``code``."""
    rows = [asdict(f) if isinstance(f, Finding) else f for f in findings]
    return pd.DataFrame(rows, columns=COLUMNS + ["code"])


def stage_findings(project, table_, grades=None, relaxations=(), surge=None) -> pd.DataFrame:
    """The findings stage: every registered check on a run's station table
    (with the laid pipe), grade set, design relaxations and surge screening,
    as a table."""
    return table(run_checks(Inputs(project, table_, grades, tuple(relaxations), surge)))


def _load() -> None:
    for name in CHECK_MODULES:
        importlib.import_module(f"{__name__}.{name}")
