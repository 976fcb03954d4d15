"""Velocity: above the maximum, or below a minimum where one is set (0: off)."""
from __future__ import annotations

from . import check, ranges


@check("high-velocity")
def high_velocity(inputs, i):
    g, limit = inputs.grades, inputs.project.checks.max_velocity
    if not limit > 0:
        return []
    v = g.velocity[i]
    return ranges(inputs.station, v, v > limit, code="high-velocity", check="high velocity",
                  severity="warning", unit="m/s", limit=limit, scenario=g.names[i], worst="max",
                  text="velocity up to {value}, above the {limit} maximum")


@check("low-velocity")
def low_velocity(inputs, i):
    g, limit = inputs.grades, inputs.project.checks.min_velocity
    if not limit > 0:
        return []
    v = g.velocity[i]
    return ranges(inputs.station, v, (v < limit) & (v > 0), code="low-velocity",
                  check="low velocity", severity="note", unit="m/s", limit=limit,
                  scenario=g.names[i], text="velocity down to {value}, below the {limit} minimum")
