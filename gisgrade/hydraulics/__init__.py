"""Hydraulics: water properties, pipe friction, minor losses and grade lines.

Pure, vectorized numpy functions in SI units. See docs/hydraulics.md for the
equations, sources, defaults and limits.
"""

from gisgrade.hydraulics.atmosphere import atmospheric_pressure
from gisgrade.hydraulics.friction import (
    G,
    colebrook,
    darcy_head_loss,
    friction_factor,
    hazen_williams_head_loss,
    hazen_williams_psi_per_ft,
    reynolds,
    swamee_jain,
    velocity_head,
)
from gisgrade.hydraulics.gradelines import (
    GradeLines,
    grade_lines,
    required_source_head,
    segment_flows,
    solve_flow,
)
from gisgrade.hydraulics.minor import (
    NAMED_K,
    bend_k,
    k_for,
    sudden_contraction_k,
    sudden_expansion_k,
)
from gisgrade.hydraulics.water import (
    density,
    dynamic_viscosity,
    kinematic_viscosity,
    vapour_pressure,
)

__all__ = [
    "G",
    "GradeLines",
    "NAMED_K",
    "atmospheric_pressure",
    "bend_k",
    "colebrook",
    "darcy_head_loss",
    "density",
    "dynamic_viscosity",
    "friction_factor",
    "grade_lines",
    "hazen_williams_head_loss",
    "hazen_williams_psi_per_ft",
    "k_for",
    "kinematic_viscosity",
    "required_source_head",
    "reynolds",
    "segment_flows",
    "solve_flow",
    "sudden_contraction_k",
    "sudden_expansion_k",
    "swamee_jain",
    "vapour_pressure",
    "velocity_head",
]
