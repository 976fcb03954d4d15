"""Pipe materials: default absolute roughness, Hazen-Williams C, and the
wall's elastic modulus and Poisson ratio (for the wave speed of surge screening).

A small table for planning. Each value is a typical figure for new pipe (or
aged pipe where the name says so); the maker's data, the utility's records or
a field test governs. An explicit ``roughness``, ``hazen_williams_c``,
``elastic_modulus`` or ``poisson_ratio`` in the project file always wins over
the material's value. The moduli and Poisson ratios are **from memory** of
the tables cited ([5]-[7]), within the field notes' ranges.

References
----------
.. [1] Moody, L. F. (1944). "Friction factors for pipe flow." Trans. ASME 66,
   671-684 (roughness of commercial steel 0.045 mm, cast iron 0.26 mm).
.. [2] Williams, G. S., Hazen, A. (1920). *Hydraulic Tables*, 3rd ed. Wiley
   (C values by material and age).
.. [3] AWWA Manual M41, *Ductile-Iron Pipe and Fittings* (C = 140 for
   cement-lined ductile iron; from memory).
.. [4] Field notes of this project (common practice ranges: PVC/PE 0.0015-
   0.007 mm, cement-lined DI 0.03-0.3 mm, old cast iron 0.25-1 mm; C: PVC
   140-150, new cement-lined DI 130-140, aged cast iron 80-100; from memory).
.. [5] Wylie, E. B., Streeter, V. L. (1993). *Fluid Transients in Systems*.
   Prentice Hall, table 2.1 (moduli and Poisson ratios of pipe materials;
   from memory).
.. [6] AWWA Manual M23, *PVC Pipe - Design and Installation*, and AWWA C900
   (PVC E = 400 000 psi = 2.76 GPa in the surge formula; from memory).
.. [7] AWWA C150/C151 and DIPRA's thickness design of ductile-iron pipe
   (E = 24 x 10^6 psi = 165 GPa; from memory); AWWA Manual M11, *Steel
   Pipe* (E = 30 x 10^6 psi = 207 GPa; from memory).
"""
from __future__ import annotations

from typing import NamedTuple

from gisgrade.errors import InputError
from gisgrade.names import normalise, suggest


class Material(NamedTuple):
    """Default friction data of a pipe material (SI)."""

    roughness: float  #: m, absolute roughness (Darcy-Weisbach)
    hazen_williams_c: float  #: -, Hazen-Williams C
    source: str  #: where the values come from
    elastic_modulus: float = float("nan")  #: Pa, Young's modulus of the wall
    poisson_ratio: float = float("nan")  #: -, Poisson's ratio of the wall


#: Named materials. Keys are lower case with hyphens.
MATERIALS: dict[str, Material] = {
    "pvc": Material(0.0015e-3, 150.0, "roughness Moody smooth-pipe end / C Hazen-Williams tables; from memory [2][4]",
                          2.76e9, 0.45),
    "hdpe": Material(0.007e-3, 150.0, "upper end of the PE range; common practice, from memory [4]",
                          1.0e9, 0.46),
    "ductile-iron-cement-lined": Material(0.1e-3, 140.0, "mid of 0.03-0.3 mm; C 140 per AWWA M41, from memory [3][4]",
                          165e9, 0.28),
    "ductile-iron-unlined": Material(0.26e-3, 130.0, "Moody's cast iron 0.26 mm; C common practice, from memory [1][4]",
                          165e9, 0.28),
    "steel-cement-lined": Material(0.1e-3, 140.0, "as cement-lined ductile iron; common practice, from memory [4]",
                          207e9, 0.30),
    "steel": Material(0.045e-3, 120.0, "Moody's commercial steel 0.045 mm; C common practice, from memory [1][4]",
                          207e9, 0.30),
    "cast-iron-new": Material(0.26e-3, 130.0, "Moody's cast iron; C Hazen-Williams tables, from memory [1][2]",
                          100e9, 0.25),
    "cast-iron-old": Material(1.0e-3, 90.0, "aged, tuberculated: 0.25-1 mm, C 80-100; common practice, from memory [4]",
                          100e9, 0.25),
    "concrete": Material(0.3e-3, 130.0, "smooth concrete 0.3-3 mm (Moody) at the smooth end; C common practice, from memory [1]",
                          30e9, 0.20),
}


def material(name: str, key: str = "material") -> Material:
    """Look up a material by name (case-insensitive; spaces or underscores read as hyphens).

    Parameters
    ----------
    name : str
        Material name, e.g. ``"ductile-iron-cement-lined"``.
    key : str
        Project-file key, for the error message.

    Returns
    -------
    Material
        roughness [m], hazen_williams_c [-], source, elastic_modulus [Pa],
        poisson_ratio [-].

    Raises
    ------
    InputError
        Unknown name; the message names the key and suggests the nearest.

    Examples
    --------
    >>> material("PVC").hazen_williams_c
    150.0
    >>> material("ductile iron cement lined").roughness
    0.0001
    >>> material("steel").elastic_modulus, material("steel").poisson_ratio
    (207000000000.0, 0.3)
    """
    norm = normalise(name, "-")
    if norm in MATERIALS:
        return MATERIALS[norm]
    raise InputError(f"{key} = {name!r}: unknown material{suggest(norm, MATERIALS)}; "
                     f"known: {', '.join(MATERIALS)}")
