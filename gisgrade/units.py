"""Quantity strings in, SI floats out.

Every dimensional input in a project file is a string read by pint
("300 mm", "12 in", "80 L/s", "1200 gpm", "15 degC"). This module is the one
place that turns such a string into a plain SI float, so the stages compute
with numpy arrays only. A bare number, an unknown unit or a wrong dimension is
an :class:`~gisgrade.errors.InputError` naming the key.
"""
from __future__ import annotations

import functools

import pint

from .errors import InputError, first_line

#: SI unit each physical dimension is converted to.
SI_UNITS = {
    "length": "m",
    "flow": "m**3/s",
    "velocity": "m/s",
    "pressure": "Pa",
    "temperature": "K",
    "angle": "radian",
    "dimensionless": "",
    "volume": "m**3",
    "time": "s",
    "per_energy": "1/J",  # a price per unit of energy (a tariff, currency per J)
    "per_length": "1/m",  # a price per unit of length (currency per m)
    "mass_per_energy": "kg/J",  # an emission factor
}

#: pint dimensionality strings of the dimensions above.
_DIMENSIONALITY = {
    "length": "[length]",
    "flow": "[length] ** 3 / [time]",
    "velocity": "[length] / [time]",
    "pressure": "[mass] / [length] / [time] ** 2",
    "temperature": "[temperature]",
    "angle": "",
    "dimensionless": "",
    "volume": "[length] ** 3",
    "time": "[time]",
    "per_energy": "[time] ** 2 / [mass] / [length] ** 2",
    "per_length": "1 / [length]",
    "mass_per_energy": "[time] ** 2 / [length] ** 2",
}

#: Example strings shown in error messages.
_EXAMPLES = {
    "length": '"300 mm"',
    "flow": '"80 L/s"',
    "velocity": '"1.5 m/s"',
    "pressure": '"140 kPa"',
    "temperature": '"15 degC"',
    "angle": '"22.5 deg"',
    "dimensionless": '"0.5 %"',
    "volume": '"10 m3"',
    "time": '"60 s"',
    "per_energy": '"0.15 / kWh"',
    "per_length": '"450 / m"',
    "mass_per_energy": '"0.4 kg/kWh"',
}


#: Examples for time keys by what they mean (a closure of 2 s would be the
#: fast closure a surge screening assumes anyway; hours and years are not seconds).
_TIME_EXAMPLES = {"hours_per_year": '"50 h"', "period": '"30 years"',
                  "closure_time": '"60 s"'}


def example(kind: str, key: str) -> str:
    """An example value for ``key`` of ``kind`` in an error message.

    >>> example("time", "scenarios[0].hours_per_year"), example("time", "energy.period")
    ('"50 h"', '"30 years"')
    >>> example("length", "pipe.inside_diameter")
    '"300 mm"'
    """
    if kind == "time":
        return _TIME_EXAMPLES.get(str(key).rsplit(".", 1)[-1], _EXAMPLES[kind])
    return _EXAMPLES[kind]


@functools.lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """The package's unit registry, with a few trade units pint lacks."""
    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.define("gallon_per_minute = gallon / minute = gpm")
    ureg.define("million_gallons_per_day = 1e6 gallon / day = mgd = MGD")
    ureg.define("megalitre_per_day = megaliter / day = MLD = MLd")
    ureg.define("cubic_metre_ = meter ** 3 = m3")  # the trade writes volumes m3, yd3, ft3
    ureg.define("cubic_yard_ = yard ** 3 = yd3")
    ureg.define("cubic_foot_ = foot ** 3 = ft3")
    return ureg


def parse_quantity(value, kind: str, key: str) -> float:
    """Read ``value`` (a quantity string) as ``kind`` and return it in SI.

    ``kind`` is one of :data:`SI_UNITS`. ``key`` names the project-file key
    for the error message, e.g. ``"pipe.inside_diameter"``.

    >>> parse_quantity("300 mm", "length", "pipe.inside_diameter")
    0.3
    >>> round(parse_quantity("15 degC", "temperature", "hydraulics.temperature"), 2)
    288.15
    """
    example_ = example(kind, key)
    if isinstance(value, bool) or not isinstance(value, str):
        if kind == "dimensionless" and isinstance(value, (int, float)) and not isinstance(value, bool):
            return float(value)
        raise InputError(
            f"{key} = {value!r}: give a quantity with units as a string, e.g. {key} = {example_}"
        )
    ureg = registry()
    try:
        q = ureg.Quantity(value.strip())
    except Exception as exc:  # pint raises many kinds on malformed text
        raise InputError(f"{key} = {value!r}: cannot read it as a quantity ({first_line(exc)})") from None
    if not isinstance(q, ureg.Quantity):
        q = ureg.Quantity(q)
    if q.dimensionless and kind not in ("angle", "dimensionless"):
        raise InputError(
            f"{key} = {value!r}: a unit is required, e.g. {key} = {example_}"
        )
    want = _DIMENSIONALITY[kind]
    if want and not q.check(want):
        raise InputError(
            f"{key} = {value!r}: expected a {kind} (e.g. {example_}), got units of {q.dimensionality}"
        )
    if kind in ("angle", "dimensionless"):
        if not q.dimensionless:
            raise InputError(f"{key} = {value!r}: expected a {kind} (e.g. {example_})")
        return float(q.to(SI_UNITS[kind]).magnitude) if kind == "angle" else float(q.to("").magnitude)
    magnitude = q.to(SI_UNITS[kind]).magnitude
    try:
        return float(magnitude)
    except TypeError:
        raise InputError(f"{key} = {value!r}: expected a single value") from None
