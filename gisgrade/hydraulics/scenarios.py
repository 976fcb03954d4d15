"""Scenarios: the named flow cases a run computes, the static case last.

A scenario is the base case ([hydraulics] flow and every offtake) times its
multiplier, plus its fire flow, which is not scaled: it enters at the start
and leaves at its fire station (default: the last station). A scenario given
by its flow has multiplier flow / [hydraulics] flow, so its offtakes scale
too. Between two heads the inflow is solved (``inflow`` None here).
"""
from __future__ import annotations

from typing import NamedTuple


class FlowCase(NamedTuple):
    """One flow case of :func:`scenarios` (SI)."""

    name: str
    inflow: float | None  #: m3/s entering at the start (None: solved from two heads)
    scale: float  #: factor on every offtake of the base case
    fire_flow: float = 0.0  #: m3/s, in ``inflow``, leaving at ``fire_station``
    fire_station: float | None = None  #: m (None: the last station)
    key: str = "hydraulics"  #: the project table of the case, for messages
    inflow_key: str = "hydraulics.flow"  #: the key that sets the inflow, for messages


#: Name of the no-flow case every run computes last (the highest pressures).
STATIC = "static"


def scenarios(project) -> list[FlowCase]:
    """Named flow cases of a project, the static case last.

    Without [[scenarios]]: one case "design" at [hydraulics] flow.

    >>> from types import SimpleNamespace as NS
    >>> p = NS(hydraulics=NS(boundary="source-head", flow=0.04), scenarios=[
    ...     NS(name="max day + fire", multiplier=1.5, flow=None, fire_flow=0.063,
    ...        fire_station=None, key="scenarios[0]")])
    >>> [(c.name, round(c.inflow, 6), c.scale) for c in scenarios(p)]
    [('max day + fire', 0.123, 1.5), ('static', 0.0, 0.0)]
    """
    hyd = project.hydraulics
    if hyd.boundary == "two-heads":
        cases = [FlowCase("design", None, 1.0)]
    elif not project.scenarios:
        cases = [FlowCase("design", hyd.flow, 1.0)]
    else:
        cases = []
        for sc in project.scenarios:
            if sc.multiplier is not None:
                cases.append(FlowCase(sc.name, sc.multiplier * hyd.flow + sc.fire_flow, sc.multiplier,
                                      sc.fire_flow, sc.fire_station, sc.key,
                                      f"{sc.key}.multiplier x hydraulics.flow"))
            else:
                cases.append(FlowCase(sc.name, sc.flow, sc.flow / hyd.flow if hyd.flow else 1.0,
                                      key=sc.key, inflow_key=f"{sc.key}.flow"))
    return cases + [FlowCase(STATIC, 0.0, 0.0)]
