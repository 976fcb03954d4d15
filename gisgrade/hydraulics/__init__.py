"""Hydraulics: water properties, pipe friction, minor losses and grade lines.

Pure, vectorized numpy functions in SI units. See docs/hydraulics.md for the
equations, sources, defaults and limits.
"""

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
from gisgrade.hydraulics.water import (
    density,
    dynamic_viscosity,
    kinematic_viscosity,
    vapour_pressure,
)

__all__ = [
    "G",
    "colebrook",
    "darcy_head_loss",
    "density",
    "dynamic_viscosity",
    "friction_factor",
    "hazen_williams_head_loss",
    "hazen_williams_psi_per_ft",
    "kinematic_viscosity",
    "reynolds",
    "swamee_jain",
    "vapour_pressure",
    "velocity_head",
]
