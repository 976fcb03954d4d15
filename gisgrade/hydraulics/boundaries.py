"""Boundary conditions: what is known at the ends, and what is solved.

One function per condition, each ``(line, case, ends, earlier) -> Solved``:

- ``source-head``: the head at the start is given; the flow is the case's.
- ``two-heads``: heads at both ends are given; the inflow is solved
  (:func:`~gisgrade.hydraulics.gradelines.solve_flow`), bend losses following
  the flow found.
- ``min-pressure``: the least source head that keeps a required pressure
  (everywhere or at the end) is solved; with an available head given, the
  shortfall is the pump head.

:data:`BOUNDARIES` maps each name to its function; a new condition is one
function and one entry.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .friction import G
from .gradelines import required_source_head, solve_flow

#: Rounds of solving the two-heads inflow with the bend K of the last flow.
TWO_HEAD_ROUNDS = 3


@dataclass(frozen=True)
class Ends:
    """What the project says about the ends of the line (SI)."""

    source_head: float | None  #: m, HGL at the start (a tank level when the line starts in one)
    end_head: float | None  #: m, two heads: HGL at the end (a free outlet: the axis there)
    required_pressure: float  #: Pa, min-pressure: the pressure to keep
    required_where: np.ndarray | None  #: (n,) bool, where it applies (None: everywhere)
    supply_head: float | None = None  #: m, the HGL a pumped source draws from ([energy] suction_head)


@dataclass(frozen=True)
class Solved:
    """One case's boundary values and the flows and point losses found."""

    inflow: float  #: m3/s entering at the start
    head: float  #: m, source head used
    flows: np.ndarray  #: (n-1,) m3/s per segment
    point_k: np.ndarray  #: (n,) K per station
    required_head: float | None = None  #: m, min-pressure: the head needed
    pump_head: float | None = None  #: m, min-pressure: needed beyond the available head
    end_head: float | None = None  #: m, two heads: the end's head
    pumps_off: bool = False  #: no flow with the pumps off behind a check valve (no minimum pressure)


def ends(project, line) -> Ends:
    """The :class:`Ends` of a project on ``line`` (defaults filled in)."""
    hyd = project.hydraulics
    where = None
    if hyd.required_at == "end":
        where = np.zeros(line.n, dtype=bool)
        where[-1] = True
    end_head = hyd.end_head
    if hyd.boundary == "two-heads" and end_head is None:  # free outlet: atmospheric at the axis
        end_head = float(line.axis[-1])
    p_req = hyd.required_pressure if hyd.required_pressure is not None else project.checks.min_pressure
    return Ends(hyd.source_head, end_head, p_req, where, project.energy.suction_head)


def source_head(line, case, e: Ends, earlier=()) -> Solved:
    """The head at the start given; the case's own inflow."""
    flows = line.flows(case, case.inflow)
    return Solved(case.inflow, e.source_head, flows, line.point_k(flows))


def two_heads(line, case, e: Ends, earlier=()) -> Solved:
    """Heads at both ends given; the inflow solved (bend K follow the flow)."""
    out_at, out_q = line.demands(case)
    inflow = case.inflow if case.inflow is not None else float(np.sum(out_q))
    if case.inflow is None:
        for _ in range(TWO_HEAD_ROUNDS):
            k = line.point_k(line.flows(case, inflow))
            try:
                inflow = solve_flow(line.station, line.axis, head_start=e.source_head,
                                    head_end=e.end_head, offtake_station=out_at,
                                    offtake_flow=out_q, point_k=k, **line.engine())
            except ValueError as exc:
                raise InputError(f"hydraulics.end_head: {exc}") from None
    flows = line.flows(case, inflow)
    return Solved(inflow, e.source_head, flows, line.point_k(flows),
                  end_head=e.end_head if inflow > 0 else None)


def min_pressure(line, case, e: Ends, earlier=()) -> Solved:
    """The least source head keeping the required pressure; the pump head is
    what it needs beyond an available source head.

    The static case is the line at rest with the pumps off behind a check
    valve: level at the head the source has without a pump, the available
    ``source_head``, else the HGL it is pumped from (``[energy]
    suction_head``); a source with neither is taken to hold the highest head
    a flowing case needed (a tank at that level). Where a flowing case needed
    more than that head, a pump runs in it and the static case is
    ``pumps_off``: no service pressure is owed then, so the minimum pressure
    is not checked in it (the maximum and the rating are)."""
    flows = line.flows(case, case.inflow)
    k = line.point_k(flows)
    required = pump = None
    head = e.source_head
    if case.inflow > 0:
        required = required_source_head(line.station, line.axis, min_pressure=e.required_pressure,
                                        flow=flows, point_k=k, where=e.required_where,
                                        **line.engine())
        head = required if e.source_head is None else max(required, e.source_head)
        pump = None if e.source_head is None else max(0.0, required - e.source_head)
    else:  # at rest, pumps off: the supply's own head
        flowing = [s.head for s in earlier if s.inflow > 0]
        if head is None:
            head = e.supply_head
        if head is None:
            head = (max(flowing) if flowing
                    else float(np.max(line.axis)) + e.required_pressure / (line.density * G))
        off = bool(flowing) and max(flowing) > head + 1e-9
        return Solved(case.inflow, head, flows, k, pumps_off=off)
    return Solved(case.inflow, head, flows, k, required_head=required, pump_head=pump)


#: Each boundary condition's solver, by its project-file name.
BOUNDARIES = {"source-head": source_head, "two-heads": two_heads, "min-pressure": min_pressure}
