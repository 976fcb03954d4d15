"""Display units: every figure a person reads goes through :class:`Display`.

The stages compute in SI; what a reader sees (console, summary text,
messages, plots) is formatted here, in SI or US customary units
(``[output] units``). Conversion factors are exact definitions (NIST SP 811,
2008, App. B; NIST Handbook 44, App. C): 1 ft = 0.3048 m, 1 psi =
6894.757293168361 Pa, 1 US gal = 3.785411784 L.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

FT = 0.3048  #: international foot, m (NIST SP 811)
PSI = 6894.757293168361  #: pound-force per square inch, Pa (NIST SP 811)
GALLON = 3.785411784e-3  #: US liquid gallon, m3 (NIST Handbook 44)
ATMOSPHERE = 101325.0  #: standard atmosphere, Pa (ISO 2533)

#: Per system and kind of quantity: (unit label, (multiplier, divisor) from SI, decimals);
#: a display value is ``si * multiplier / divisor``.
UNITS = {
    "SI": {
        "length": ("m", (1.0, 1.0), 2), "elevation": ("m", (1.0, 1.0), 2),
        "pressure": ("kPa", (1.0, 1e3), 0), "flow": ("L/s", (1e3, 1.0), 1),
        "velocity": ("m/s", (1.0, 1.0), 2), "volume": ("m3", (1.0, 1.0), 0),
        "head": ("m", (1.0, 1.0), 2),
    },
    "US": {
        "length": ("ft", (1.0, FT), 1), "elevation": ("ft", (1.0, FT), 2),
        "pressure": ("psi", (1.0, PSI), 1), "flow": ("gpm", (60.0, GALLON), 0),
        "velocity": ("ft/s", (1.0, FT), 2), "volume": ("yd3", (1.0, (3 * FT) ** 3), 0),
        "head": ("ft", (1.0, FT), 2),
    },
}


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


def display_of(project) -> Display:
    """The :class:`Display` a project asks for (``[output] units``)."""
    return Display(project.output.units)
