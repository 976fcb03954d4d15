"""Pipe profile design: cover, crossings, joints, bends, least excavation.

``design_profile(station, ground, crossings, rules) -> PipeProfile`` is the
engine; ``fittings_table(profile)`` lists the bends for a CSV, a map layer and
the minor losses. See docs/design.md.
"""
from .fittings import fittings_table, standard_combination
from .profile import REASONS, crossing_clearances, design_profile
from .rules import PRIORITY, STANDARD_BEND_ANGLES, Crossing, DesignRules, PipeProfile, Relaxation

__all__ = [
    "Crossing", "DesignRules", "PipeProfile", "Relaxation", "PRIORITY", "REASONS",
    "STANDARD_BEND_ANGLES", "crossing_clearances", "design_profile", "fittings_table", "standard_combination",
]
