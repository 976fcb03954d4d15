"""Pressure: sub-atmospheric, low and high pressure per scenario.

The checks see the lowest and highest pressure at each station over both
sides of any point loss there (:attr:`GradeSet.pressure_low`,
:attr:`GradeSet.pressure_high`). Sub-atmospheric means the HGL is below the
top of the pipe (air entry, contamination, column separation); a station
that is sub-atmospheric is not also reported as low pressure.

The static case of a pumped main (pumps off behind a check valve,
``GradeSet.minimum_applies`` false) owes no service pressure: it is not
checked against the minimum, and a stretch where its line falls below the
pipe is a note (the main there drains or draws air when the pumps stop
unless the check valve and air valves hold it), not a failure.
"""
from __future__ import annotations

from . import PRESSURE_TOLERANCE, check, ranges


@check("sub-atmospheric")
def sub_atmospheric(inputs, i):
    g, top = inputs.grades, inputs.top
    hgl = g.hgl_low[i]
    if not g.minimum_applies[i]:
        return ranges(inputs.station, top - hgl, hgl < top, code="drains-at-rest",
                      check="drains with the pumps off", severity="note", unit="m", limit=0.0,
                      scenario=g.names[i], worst="max",
                      text="HGL up to {value} below the top of pipe with the pumps off (the "
                           "main drains or draws air here when the pumps stop, unless the "
                           "check valve and air valves hold it)")
    return ranges(inputs.station, top - hgl, hgl < top, code="sub-atmospheric",
                  check="sub-atmospheric", severity="critical", unit="m", limit=0.0,
                  scenario=g.names[i], worst="max", text="HGL up to {value} below the top of pipe")


@check("low-pressure")
def low_pressure(inputs, i):
    g, limit = inputs.grades, inputs.project.checks.min_pressure
    if not g.minimum_applies[i]:
        return []
    p = g.pressure_low[i]
    low = (p < limit - PRESSURE_TOLERANCE) & (g.hgl_low[i] >= inputs.top)
    return ranges(inputs.station, p / 1e3, low, code="low-pressure", check="low pressure",
                  severity="warning", unit="kPa", limit=limit / 1e3, scenario=g.names[i],
                  text="pressure down to {value}, below the {limit} minimum")


@check("high-pressure")
def high_pressure(inputs, i):
    g, limit = inputs.grades, inputs.project.checks.max_pressure
    p = g.pressure_high[i]
    return ranges(inputs.station, p / 1e3, p > limit + PRESSURE_TOLERANCE, code="high-pressure",
                  check="high pressure", severity="warning", unit="kPa", limit=limit / 1e3,
                  scenario=g.names[i], worst="max",
                  text="pressure up to {value}, above the {limit} maximum")
