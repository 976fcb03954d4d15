"""Display units: every figure a person reads goes through :class:`Display`.

The stages compute in SI; what a reader sees (console, summary text,
messages, plots) is formatted here, in SI or US customary units
(``[output] units``). Conversion factors are exact definitions (NIST SP 811,
2008, App. B; NIST Handbook 44, App. C): 1 ft = 0.3048 m, 1 psi =
6894.757293168361 Pa, 1 US gal = 3.785411784 L.
"""
from __future__ import annotations

import contextvars
import re
from contextlib import contextmanager
from dataclasses import dataclass

import numpy as np

FT = 0.3048  #: international foot, m (NIST SP 811)
PSI = 6894.757293168361  #: pound-force per square inch, Pa (NIST SP 811)
GALLON = 3.785411784e-3  #: US liquid gallon, m3 (NIST Handbook 44)
HP = 745.69987158227022  #: horsepower (550 ft lbf/s), W (NIST SP 811)
ATMOSPHERE = 101325.0  #: standard atmosphere, Pa (ISO 2533)

#: Per system and kind of quantity: (unit label, (multiplier, divisor) from SI, decimals);
#: a display value is ``si * multiplier / divisor``.
UNITS = {
    "SI": {
        "length": ("m", (1.0, 1.0), 2), "elevation": ("m", (1.0, 1.0), 2),
        "pressure": ("kPa", (1.0, 1e3), 0), "flow": ("L/s", (1e3, 1.0), 1),
        "velocity": ("m/s", (1.0, 1.0), 2), "volume": ("m3", (1.0, 1.0), 0),
        "head": ("m", (1.0, 1.0), 2), "diameter": ("mm", (1e3, 1.0), 0),
        "angle": ("deg", (1.0, 1.0), 2), "grade": ("%", (1.0, 1.0), 2),
        "power": ("kW", (1.0, 1e3), 1), "energy": ("MWh", (1.0, 3.6e9), 1),
    },
    "US": {
        "length": ("ft", (1.0, FT), 1), "elevation": ("ft", (1.0, FT), 2),
        "pressure": ("psi", (1.0, PSI), 1), "flow": ("gpm", (60.0, GALLON), 0),
        "velocity": ("ft/s", (1.0, FT), 2), "volume": ("yd3", (1.0, (3 * FT) ** 3), 0),
        "head": ("ft", (1.0, FT), 2), "diameter": ("in", (1.0, 0.0254), 1),
        "angle": ("deg", (1.0, 1.0), 2), "grade": ("%", (1.0, 1.0), 2),
        "power": ("hp", (1.0, HP), 1), "energy": ("MWh", (1.0, 3.6e9), 1),
    },
}

#: The unit labels the tables and findings use for SI values, with the kind
#: of quantity and the factor to SI base units (``kPa`` values are Pa / 1e3).
SI_LABELS = {"m": ("length", 1.0), "kPa": ("pressure", 1e3), "Pa": ("pressure", 1.0),
             "m/s": ("velocity", 1.0), "m3/s": ("flow", 1.0), "L/s": ("flow", 1e-3),
             "m3": ("volume", 1.0), "deg": ("angle", 1.0), "%": ("grade", 1.0)}

#: Column-name suffixes of SI columns in the CSV tables, their kind, the
#: factor to SI base units and the suffix of the US column beside them.
SUFFIXES = {"_kpa": ("pressure", 1e3, "_psi"), "_m3_s": ("flow", 1.0, "_gpm"),
            "_m_s": ("velocity", 1.0, "_ft_s"), "_m3": ("volume", 1.0, "_yd3"),
            "_m": ("length", 1.0, "_ft")}

#: A quantity token in a message template: ``{kind:si}``, ``{kind.decimals:si}``
#: or ``{kind~:si}`` (a rule of thumb: a round figure in either system),
#: ``{station:1250.0}`` for a station label; see :meth:`Display.render`.
TOKEN = re.compile(r"\{([a-z]+)(?:\.(\d)|(~))?:([-+0-9.eEinfa]+)\}")


def round_figure(x: float, digits: int = 2) -> str:
    """``x`` to ``digits`` significant figures, written without an exponent:
    how a rule of thumb reads once converted (400 m is "1300 ft", not
    "1312 ft").

    >>> round_figure(1312.3), round_figure(137.9), round_figure(0.0463), round_figure(20.0)
    ('1300', '140', '0.046', '20')
    """
    if x == 0 or not np.isfinite(x):
        return f"{x:g}"
    places = digits - 1 - int(np.floor(np.log10(abs(x))))
    return f"{round(x, places):.{max(places, 0)}f}"


def token(si: float, kind: str, decimals: int | None = None) -> str:
    """A quantity in a message template, rendered later in the reader's units.

    >>> token(140e3, "pressure")
    '{pressure:140000.0}'
    >>> Display("US").render("pressure " + token(96527.0, "pressure") + " at " + token(381.0, "station"))
    'pressure 14.0 psi at 12+50.00'
    """
    d = "" if decimals is None else f".{decimals}"
    return f"{{{kind}{d}:{float(si)!r}}}"


@dataclass(frozen=True)
class Display:
    """Formats SI values for a reader in ``system`` ("SI" or "US").

    >>> Display("US").text(140e3, "pressure")
    '20.3 psi'
    >>> Display().text(0.0631, "flow"), Display("US").text(0.0631, "flow")
    ('63.1 L/s', '1000 gpm')
    >>> Display("US").station([381.0]).tolist()
    ['12+50.00']
    """

    system: str = "SI"

    def __post_init__(self):
        object.__setattr__(self, "system", str(self.system).upper())
        if self.system not in UNITS:
            raise ValueError(f"display units {self.system!r}: expected SI or US")

    @property
    def us(self) -> bool:
        return self.system == "US"

    def unit(self, kind: str) -> str:
        """The unit label of ``kind`` (e.g. "kPa" or "psi")."""
        return UNITS[self.system][kind][0]

    def factor(self, kind: str) -> float:
        """Display units per SI unit of ``kind``."""
        mul, div = UNITS[self.system][kind][1]
        return mul / div

    def value(self, si, kind: str):
        """``si`` (a number or an array) in display units."""
        mul, div = UNITS[self.system][kind][1]
        return si * mul / div

    def number(self, si, kind: str, decimals: int | None = None) -> str:
        """``si`` in display units as text, without the unit."""
        d = UNITS[self.system][kind][2] if decimals is None else decimals
        return f"{self.value(si, kind):.{d}f}"

    def text(self, si, kind: str, decimals: int | None = None) -> str:
        """``si`` in display units with its unit, e.g. "140 kPa"."""
        return f"{self.number(si, kind, decimals)} {self.unit(kind)}"

    def station(self, station_m, decimals: int = 2) -> np.ndarray:
        """Station labels in the trade's format of the system (``1+250.00``
        in km + m, ``12+50.00`` in hundreds of feet + feet)."""
        from .alignment import format_station

        return format_station(station_m, self.system, decimals)

    def station_name(self) -> str:
        return "hundreds ft + ft" if self.us else "km + m"

    def si_unit(self, kind: str) -> str:
        """The SI unit label of ``kind`` (what the CSV columns hold)."""
        return UNITS["SI"][kind][0]

    def render(self, template: str) -> str:
        """A message template with its quantity tokens (:func:`token`) in
        display units: ``{pressure:140000.0}`` becomes "140 kPa" or "20.3 psi".

        >>> Display().render("cover {length:1.0}, short of {length.1:1.2}")
        'cover 1.00 m, short of 1.2 m'
        >>> Display("US").render("{length~:400.0} to {length~:800.0} is usual")
        '1300 ft to 2600 ft is usual'
        """
        def one(m):
            kind, decimals, rough, si = m.group(1), m.group(2), m.group(3), float(m.group(4))
            if kind == "station":
                return self.station([si])[0]
            if rough:
                return f"{round_figure(self.value(si, kind))} {self.unit(kind)}"
            return self.text(si, kind, None if decimals is None else int(decimals))

        return TOKEN.sub(one, str(template))

    def label(self, kind: str, name: str) -> str:
        """An axis or column heading with its unit: "Pressure (psi)"."""
        return f"{name} ({self.unit(kind)})"

    def dual(self, frame, columns=None):
        """``frame`` with a US column beside each SI column (``pressure_kpa`` ->
        ``pressure_psi``, ``_m`` -> ``_ft``, ``_m3_s`` -> ``_gpm``, ``_m_s`` ->
        ``_ft_s``) when the display is US; unchanged in SI. ``columns``: the
        SI columns to convert (default: every column with such a suffix).

        >>> import pandas as pd
        >>> Display("US").dual(pd.DataFrame({"cover_m": [0.3048]})).round(6).to_dict("list")
        {'cover_m': [0.3048], 'cover_ft': [1.0]}
        """
        if not self.us:
            return frame
        out = {}
        for col in frame.columns:
            out[col] = frame[col]
            hit = next((s for s in SUFFIXES if str(col).endswith(s)), None)
            if hit and (columns is None or col in columns):
                kind, base, us = SUFFIXES[hit]
                out[col[: -len(hit)] + us] = self.value(frame[col] * base, kind)
        import pandas as pd

        return pd.DataFrame(out, index=frame.index)

    def of_label(self, value, label: str):
        """``value`` given in the SI unit ``label`` (:data:`SI_LABELS`) as
        ``(display value, display unit)``; a label not listed is kept as is."""
        if label not in SI_LABELS:
            return value, label
        kind, base = SI_LABELS[label]
        return self.value(value * base, kind), self.unit(kind)


_CURRENT = contextvars.ContextVar("gisgrade_display", default=None)


def current() -> "Display":
    """The display of the run in progress (SI outside a run): for messages,
    such as input errors, raised where no :class:`Display` is passed."""
    return _CURRENT.get() or Display()


@contextmanager
def using(display: "Display"):
    """Make ``display`` the :func:`current` one inside the block."""
    reset = _CURRENT.set(display)
    try:
        yield display
    finally:
        _CURRENT.reset(reset)


def display_of(project) -> Display:
    """The :class:`Display` a project asks for (``[output] units``)."""
    return Display(project.output.units)
