"""The operations stage: surge screening, pumping energy and pressure-management
suggestions on a run's grade lines (after hydraulics, before findings).

Each part is a pure function of the hydraulics package
(:func:`~gisgrade.hydraulics.surge.stage_surge`,
:func:`~gisgrade.hydraulics.energy.stage_energy`,
:func:`~gisgrade.hydraulics.elements.suggest_elements`); this module calls
them and gathers :class:`Operations`. Suggestions are proposals with reasons:
nothing here changes the grade lines.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .display import display_of
from .hydraulics.atmosphere import vapour_floor
from .hydraulics.elements import suggest_elements
from .hydraulics.energy import stage_energy
from .hydraulics.stage import project_elements
from .hydraulics.surge import stage_surge


@dataclass(frozen=True, eq=False)
class Operations:
    """What the operations stage found."""

    surge: object = None  #: hydraulics.surge.SurgeSet, or None (no wave speed)
    energy: object = None  #: hydraulics.energy.Energy
    suggestions: object = None  #: hydraulics.elements.Proposal
    notes: list = field(default_factory=list)


def stage_operations(project, table, grades) -> Operations:
    """Surge envelope, pumping energy and the fewest elements that bring every
    station of every scenario within ``[checks]`` min and max pressure."""
    surge, notes = stage_surge(project, table, grades)
    from .display import token
    for k in np.flatnonzero(~grades.minimum_applies):  # a pumped main at rest
        head = float(grades.cases["source_head_m"].iloc[k])
        notes = [*notes, f"{grades.names[k]}: pumps off behind a check valve; the line at "
                         f"rest stands at the supply's own head {token(head, 'head')}; the "
                         "minimum pressure is owed with the pumps running, so it is not "
                         "checked at rest (the maximum and the rating are)"]
    energy = stage_energy(project, grades)
    checks = project.checks
    own = grades.elements
    resets = (sorted(set(np.searchsorted(grades.station, own.loc[own["kind"] != "booster",
                                                               "station_m"].to_numpy())))
              if len(own) else [])
    proposal = suggest_elements(grades.station, grades.axis, grades.hgl, grades.hgl_upstream,
                                grades.egl, grades.flow.any(axis=1), grades.names,
                                checks.min_pressure, checks.max_pressure, grades.density,
                                display=display_of(project), resets=[int(r) for r in resets],
                                check_min=grades.minimum_applies, base=grades.plain,
                                own=project_elements(project, table) if len(own) else (),
                                p_floor=vapour_floor(grades.axis, project.hydraulics.temperature))
    return Operations(surge, energy, proposal, notes)
