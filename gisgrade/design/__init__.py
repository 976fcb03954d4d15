"""Pipe profile design: cover, crossings, joints, bends, least excavation.

``design_profile(station, ground, crossings, rules) -> PipeProfile`` is the
engine; :mod:`~gisgrade.design.crossings` settles the side the pipe passes
each crossing and measures the clearance a profile achieves;
``stage_design`` runs it on the station table. See docs/design.md.
"""
from .crossings import Clearances, choose_sides, clearances, design_crossings
from .fittings import fittings_table, standard_combination
from .profile import REASONS, design_profile
from .rules import (PRIORITY, STANDARD_BEND_ANGLES, TRENCH_SIDE_ROOM, Crossing, DesignRules,
                    PipeProfile, Relaxation, trench_width)
from .stage import Design, bends_frame, knots_of, rules_for, stage_design

__all__ = [
    "Clearances", "Crossing", "Design", "knots_of", "DesignRules", "PipeProfile", "Relaxation", "PRIORITY", "REASONS",
    "STANDARD_BEND_ANGLES", "TRENCH_SIDE_ROOM", "bends_frame", "choose_sides", "clearances",
    "design_crossings", "design_profile", "fittings_table", "rules_for", "stage_design",
    "standard_combination", "trench_width",
]
