"""Quantity strings in, SI floats out.

Every dimensional input in a project file is a string read by pint
("300 mm", "12 in", "80 L/s", "1200 gpm", "15 degC"). This module is the one
place that turns such a string into a plain SI float, so the stages compute
with numpy arrays only. A bare number, an unknown unit or a wrong dimension is
an :class:`~gisgrade.errors.InputError` naming the key.
"""
from __future__ import annotations

import functools
import re

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
    """The package's unit registry, with a few trade units pint lacks.

    pint's parsed definitions are cached in the user's cache folder
    (``cache_folder=":auto:"``, pint's own cache: a start a fifth of a second
    sooner); where that folder cannot be written, or its files cannot be
    read (damaged, or half-written by another run), the registry is built
    without it."""
    try:
        ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True, cache_folder=":auto:")
    except Exception:  # noqa: BLE001 - the cache is an optimisation: unwritable, damaged,
        # or half-written by a run starting at the same moment; never a reason to fail
        ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.define("gallon_per_minute = gallon / minute = gpm = GPM")
    ureg.define("million_gallons_per_day = 1e6 gallon / day = mgd = MGD")
    ureg.define("cubic_foot_per_second = foot ** 3 / second = cfs = CFS")
    ureg.define("litre_per_second_ = liter / second = lps = LPS")
    ureg.define("megalitre_per_day = megaliter / day = MLD = MLd")
    ureg.define("cubic_metre_ = meter ** 3 = m3")  # the trade writes volumes m3, yd3, ft3
    ureg.define("cubic_yard_ = yard ** 3 = yd3")
    ureg.define("cubic_foot_ = foot ** 3 = ft3")
    return ureg


#: Spellings offered in the hint for an unknown unit, per dimension.
SPELLINGS = {
    "length": ("m", "mm", "cm", "km", "ft", "in", "yd", "mi"),
    "flow": ("L/s", "m3/s", "m3/h", "L/min", "gpm", "cfs", "MGD", "MLD"),
    "velocity": ("m/s", "ft/s"),
    "pressure": ("kPa", "MPa", "bar", "psi", "Pa"),
    "temperature": ("degC", "degF", "K"),
    "angle": ("deg", "rad"),
    "dimensionless": ("%", "m/m", "percent"),
    "volume": ("m3", "L", "ft3", "yd3", "gallon"),
    "time": ("s", "min", "h", "day", "year"),
}

#: A temperature written with the bare letter of its scale ("60 F" is 60 farad to pint).
_SCALES = {"F": "degF", "C": "degC", "°F": "degF", "°C": "degC"}

_LEADING = re.compile(r"^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?")


def _split(text: str) -> tuple[str, str]:
    """(number, unit) of a quantity string ("300 mm" -> ("300", "mm")); ("", text) if it
    does not start with a number."""
    m = _LEADING.match(text)
    return (m.group(0).strip(), text[m.end():].strip()) if m else ("", text.strip())


def parse_quantity(value, kind: str, key: str) -> float:
    """Read ``value`` (a quantity string) as ``kind`` and return it in SI.

    ``kind`` is one of :data:`SI_UNITS`. ``key`` names the project-file key
    for the error message, e.g. ``"pipe.inside_diameter"``. The number must
    come first and the unit after it, with nothing else ("300 mm 5" is
    refused, not read as 1.5 m); an angle needs its unit (a bare number
    would be radians), and so does a fraction written as text ("0.5" as a
    string: write 0.5 or "50 %"). "60 F" is a temperature in degF, and
    "cfs", "GPM", "gpm", "MGD", "L/s", "lps" are flows.

    >>> parse_quantity("300 mm", "length", "pipe.inside_diameter")
    0.3
    >>> round(parse_quantity("15 degC", "temperature", "hydraulics.temperature"), 2)
    288.15
    >>> round(parse_quantity("60 F", "temperature", "hydraulics.temperature"), 3)
    288.706
    >>> round(parse_quantity("1 cfs", "flow", "hydraulics.flow"), 6)
    0.028317
    """
    example_ = example(kind, key)
    if isinstance(value, bool) or not isinstance(value, str):
        if kind == "dimensionless" and isinstance(value, (int, float)) and not isinstance(value, bool):
            return float(value)
        raise InputError(
            f"{key} = {value!r}: give a quantity with units as a string, e.g. {key} = {example_}"
        )
    ureg = registry()
    number, unit = _split(value)
    if kind == "temperature" and unit in _SCALES:
        unit = _SCALES[unit]
    text = f"{number} {unit}".strip()
    if number and unit:
        try:
            rest = ureg.parse_expression(unit)
        except Exception:
            rest = None
        if isinstance(rest, ureg.Quantity) and rest.magnitude != 1:
            raise InputError(f"{key} = {value!r}: something follows the unit (a number "
                             f"{rest.magnitude:g} in {unit!r}); give one number and its unit, "
                             f"e.g. {example_}")
    try:
        q = ureg.Quantity(text)
    except pint.UndefinedUnitError as exc:
        known = SPELLINGS.get(kind, ())
        from .names import suggest

        hint = suggest(unit, known) or (f" (known: {', '.join(known)})" if known else "")
        if kind == "temperature" and unit.lower() in ("f", "c"):
            hint = " (did you mean 'degF' or 'degC'?)"
        raise InputError(f"{key} = {value!r}: unknown unit {unit!r}{hint}") from None
    except Exception as exc:  # pint raises many kinds on malformed text
        raise InputError(f"{key} = {value!r}: cannot read it as a quantity ({first_line(exc)})") from None
    if not isinstance(q, ureg.Quantity):
        q = ureg.Quantity(q)
    if not unit and kind == "angle":
        raise InputError(f"{key} = {value!r}: a unit is required, e.g. {key} = {example_} (a bare "
                         "number would be read as radians)")
    if not unit and kind == "dimensionless":
        raise InputError(f"{key} = {value!r}: a number in quotes needs a unit, e.g. {example_}; "
                         f"or write it unquoted as a fraction ({key} = {number or value})")
    if q.dimensionless and kind not in ("angle", "dimensionless") and unit:
        raise InputError(f"{key} = {value!r}: expected a {kind} (e.g. {example_}); {unit!r} is "
                         "an angle or a plain ratio, not a unit of it")
    if q.dimensionless and kind not in ("angle", "dimensionless"):
        raise InputError(
            f"{key} = {value!r}: a unit is required, e.g. {key} = {example_}"
        )
    want = _DIMENSIONALITY[kind]
    if want and not q.check(want):
        hint = (" ('F' is farad: did you mean 'degF'?)" if kind == "temperature"
                and q.check("[current] ** 2 * [time] ** 4 / [mass] / [length] ** 2") else "")
        raise InputError(
            f"{key} = {value!r}: expected a {kind} (e.g. {example_}), got units of "
            f"{q.dimensionality}{hint}"
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
