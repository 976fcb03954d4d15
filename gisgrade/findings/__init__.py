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
# The table holds beside them the check's code and ``template``: the message
# with its quantities as SI tokens (gisgrade.display.token), rendered in the
# reader's units when written (``message`` is it rendered in SI).

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
    message: str  #: a template: quantities as SI tokens, see :meth:`Display.render`


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


class Quantity:
    """A value in the SI unit label ``unit`` that formats as a template token
    (``f"{Quantity(140, 'kPa')}"`` is ``{pressure:140000.0}``; a format spec
    such as ``.1f`` sets the decimals), so a message is written once and read
    in either system. A unit with no display kind formats as a plain number."""

    def __init__(self, value, unit: str):
        self.value, self.unit = float(value), unit

    def __format__(self, spec: str) -> str:
        from ..display import SI_LABELS, token

        decimals = int(spec[1:-1]) if spec.startswith(".") and spec.endswith("f") else None
        if self.unit not in SI_LABELS:
            return format(self.value, spec)
        kind, base = SI_LABELS[self.unit]
        return token(self.value * base, kind, decimals)


def station_token(station_m: float) -> str:
    """A station in a message template (rendered as ``1+250.00`` or ``41+01.05``)."""
    from ..display import token

    return token(station_m, "station")


def ranges(station, value, mask, *, code, check, severity, unit, limit, scenario,
           worst="min", text="{check}") -> list[Finding]:
    """One :class:`Finding` per run of ``mask``, reporting the worst ``value`` in it
    (``worst`` "min" or "max"); ``text`` is formatted with ``check``, ``value``,
    ``limit`` and ``excess`` (``|value - limit|``), the quantities as template
    tokens in ``unit`` (:class:`Quantity`; the unit is not written in ``text``).

    >>> from gisgrade.display import Display
    >>> f = ranges(np.array([0.0, 10.0, 20.0]), np.array([5.0, 2.0, 9.0]),
    ...            np.array([True, True, False]), code="x", check="low x", severity="note",
    ...            unit="m", limit=6.0, scenario="s", text="{value:.0f} below {limit:.0f}")
    >>> [(r.from_station_m, r.to_station_m, r.worst_station_m, r.message) for r in f]
    [(0.0, 10.0, 10.0, '{length.0:2.0} below {length.0:6.0}')]
    >>> Display().render(f[0].message), Display("US").render(f[0].message)
    ('2 m below 6 m', '7 ft below 20 ft')
    """
    out = []
    for a, b in runs(mask):
        seg = value[a:b + 1]
        k = a + int(np.argmin(seg) if worst == "min" else np.argmax(seg))
        out.append(Finding(
            code=code, check=check, severity=severity, scenario=scenario,
            from_station_m=float(station[a]), to_station_m=float(station[b]),
            worst_station_m=float(station[k]), worst_value=float(value[k]), unit=unit,
            limit=float(limit), message=text.format(
                check=check, value=Quantity(value[k], unit), limit=Quantity(limit, unit),
                excess=Quantity(abs(value[k] - limit), unit)),
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
    """The findings as a table: :data:`COLUMNS`, ``code`` and ``template``
    (the message with its quantities as SI tokens; ``message`` is it in SI)."""
    from ..display import Display

    rows = [asdict(f) if isinstance(f, Finding) else f for f in findings]
    out = pd.DataFrame(rows, columns=COLUMNS + ["code"])
    out["template"] = out["message"].astype(object)
    out["message"] = [Display().render(m) for m in out["template"]]
    return out


def messages(frame: pd.DataFrame, display) -> list[str]:
    """The findings' messages in ``display``'s units."""
    col = "template" if "template" in frame else "message"
    return [display.render(m) for m in frame[col]]


def by_severity(frame: pd.DataFrame) -> pd.DataFrame:
    """The findings most serious first (:data:`SEVERITIES`), in table order within each."""
    rank = frame["severity"].map({s: i for i, s in enumerate(SEVERITIES)}).fillna(len(SEVERITIES))
    return frame.assign(_rank=rank).sort_values("_rank", kind="stable").drop(columns="_rank")


def stage_findings(project, table_, grades=None, relaxations=(), surge=None) -> pd.DataFrame:
    """The findings stage: every registered check on a run's station table
    (with the laid pipe), grade set, design relaxations and surge screening,
    as a table."""
    return table(run_checks(Inputs(project, table_, grades, tuple(relaxations), surge)))


def _load() -> None:
    for name in CHECK_MODULES:
        importlib.import_module(f"{__name__}.{name}")
