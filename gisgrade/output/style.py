"""The one look of every output: the pressure colour scale and the symbols.

Every output that colours the pipe by pressure (the layers' ``colour``
fields, the SLD styles, GeoJSON and KML, the profile sheets, the overview
and the map figure) takes its colours from one :class:`PressureScale`,
built from the project's limits, so a colour means the same pressure
everywhere in one run.

The scale is *classed*: below atmospheric, below the minimum, four equal
classes between the minimum and the maximum, and above the maximum. The
classes inside the limits are sampled from *cividis* [1]_, a colormap made
to be perceptually uniform and to read the same to viewers with red-green
colour-vision deficiency (its lightness rises monotonically, so it also
survives a grey-scale print). Below the minimum takes cividis' dark end and
above the maximum its light end; below atmospheric, outside the map, is near
black. The limits are the class edges, so they are marked wherever the
scale is drawn (legends, keys, rule titles).

Point symbols (valves, findings, crossings, ...) are our own: a shape per
kind and a colour from the Okabe-Ito palette [2]_, chosen to stay apart for
the common colour-vision deficiencies; the shape alone tells each kind
apart, so colour is never the only cue.

.. [1] J. R. Nuñez, C. R. Anderton, R. S. Renslow, "Optimizing colormaps
   with consideration for color vision deficiency to enable accurate
   interpretation of scientific data", PLOS ONE 13(7): e0199239, 2018.
.. [2] M. Okabe, K. Ito, "Color Universal Design (CUD): how to make figures
   and presentations that are friendly to colorblind people", J*Fly, 2008
   (the eight-colour palette).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..display import Display

#: Colour of pressure below atmospheric (outside the colormap: near black).
SUB_ATMOSPHERIC = "#1a1423"
#: The colormap the classes inside the limits are sampled from.
COLORMAP = "cividis"
#: Its samples (hex) at 0, the centres of the classes inside the limits
#: (1/8, 3/8, 5/8, 7/8) and 1, as matplotlib's ``colormaps["cividis"]`` gives
#: them (held here so that a run without figures does not import matplotlib;
#: tests/test_sharing.py checks them against matplotlib).
CLASS_COLOURS = ("#00224e", "#1a386f", "#61656f", "#9b9476", "#dec958", "#fee838")

#: Okabe-Ito palette [2].
OKABE_ITO = {"black": "#000000", "orange": "#e69f00", "sky blue": "#56b4e9",
             "bluish green": "#009e73", "yellow": "#f0e442", "blue": "#0072b2",
             "vermillion": "#d55e00", "reddish purple": "#cc79a7"}


@dataclass(frozen=True)
class Symbol:
    """A point symbol: an SLD well-known mark name, the matching matplotlib
    marker, fill colour, size (px at 96 dpi) and its legend words."""

    mark: str  #: SLD 1.0 well-known name: square, circle, triangle, star, cross, x
    marker: str  #: matplotlib marker
    fill: str
    size: float
    words: str
    rotation: float = 0.0  #: degrees clockwise (a low point: a triangle pointing down)


#: Valves and drains by kind (the ``kind`` field of the valves layer).
VALVES = {
    "combination": Symbol("star", "*", OKABE_ITO["vermillion"], 14, "combination air valve"),
    "air-release": Symbol("triangle", "^", OKABE_ITO["orange"], 11, "air-release valve"),
    "air-vacuum": Symbol("circle", "o", OKABE_ITO["sky blue"], 10, "air-vacuum valve"),
    "drain": Symbol("square", "s", OKABE_ITO["bluish green"], 10, "drain (blow-off)"),
}
#: Findings by severity (points at the worst station; line pieces over the range).
FINDINGS = {
    "critical": Symbol("x", "X", OKABE_ITO["reddish purple"], 14, "critical finding"),
    "warning": Symbol("cross", "P", OKABE_ITO["orange"], 12, "warning"),
    "note": Symbol("circle", "o", "#9a9a9a", 8, "note"),
}
#: Everything else drawn as a point.
POINTS = {
    "crossing": Symbol("square", "s", "#ffffff", 10, "crossed feature"),
    "bend": Symbol("circle", "o", "#5f5f5f", 7, "bend"),
    "fitting": Symbol("circle", "D", "#5f5f5f", 7, "fitting"),
    "offtake": Symbol("triangle", "v", OKABE_ITO["blue"], 11, "offtake", 180.0),
    "high": Symbol("triangle", "^", "#ffffff", 8, "high point"),
    "low": Symbol("triangle", "v", "#ffffff", 8, "low point", 180.0),
    "station": Symbol("circle", "o", "#bdbdbd", 3, "station"),
}
#: Lines: (stroke colour, width px, dash or None).
ROUTE = ("#3c3c3c", 5.0, None)
FINDING_LINE = {"critical": (OKABE_ITO["reddish purple"], 9.0, None),
                "warning": (OKABE_ITO["orange"], 7.0, None),
                "note": ("#9a9a9a", 5.0, "6 4")}
#: Outline of every mark.
OUTLINE = "#1f1f1f"
#: Width (px) of the pipe coloured by pressure, over the route's grey.
PIPE_WIDTH = 3.0


@dataclass(frozen=True)
class PressureScale:
    """Pressure classes (Pa) between the edges, their colours and names.

    >>> s = PressureScale.from_limits(140e3, 550e3)
    >>> s.edges.tolist()
    [-inf, 0.0, 140000.0, 242500.0, 345000.0, 447500.0, 550000.0, inf]
    >>> s.classify(np.array([-5e3, 100e3, 300e3, 900e3])).tolist()
    [0, 1, 3, 6]
    >>> s.names[:2], s.colours[0]
    (('sub-atmospheric', 'below minimum'), '#1a1423')
    """

    edges: np.ndarray  #: (k + 1,) Pa, rising, -inf and inf at the ends
    colours: tuple  #: (k,) hex
    names: tuple  #: (k,) words, also the ``pressure_class`` field's values
    min_pressure: float
    max_pressure: float

    @classmethod
    def from_limits(cls, min_pressure: float, max_pressure: float):
        """The scale of a project's limits (Pa): four classes between them,
        coloured :data:`CLASS_COLOURS`."""
        inside = len(CLASS_COLOURS) - 2
        inner = np.linspace(min_pressure, max_pressure, inside + 1)
        edges = np.r_[-np.inf, 0.0, inner, np.inf]
        names = ("sub-atmospheric", "below minimum") + tuple(
            f"within limits {i + 1} of {inside}" for i in range(inside)) + ("above maximum",)
        return cls(edges, (SUB_ATMOSPHERIC,) + CLASS_COLOURS, names, float(min_pressure),
                   float(max_pressure))

    def __len__(self) -> int:
        return len(self.colours)

    def classify(self, pressure) -> np.ndarray:
        """The class index of each pressure (Pa); an edge belongs to the class above it."""
        return np.clip(np.searchsorted(self.edges, np.asarray(pressure, float), side="right") - 1,
                       0, len(self) - 1)

    def colour(self, pressure) -> np.ndarray:
        """Hex colours of pressures (Pa)."""
        return np.asarray(self.colours, dtype=object)[self.classify(pressure)]

    def name(self, pressure) -> np.ndarray:
        return np.asarray(self.names, dtype=object)[self.classify(pressure)]

    def titles(self, display: Display) -> list[str]:
        """Each class in words and the reader's units, the limits named."""
        out = []
        for i, (lo, hi) in enumerate(zip(self.edges[:-1], self.edges[1:])):
            if i == 0:
                out.append("below atmospheric (under 0 gauge)")
            elif i == 1:
                out.append(f"0 to {display.text(hi, 'pressure')} (under the minimum)")
            elif not np.isfinite(hi):
                out.append(f"over {display.text(lo, 'pressure')} (over the maximum)")
            else:
                out.append(f"{display.number(lo, 'pressure')} to {display.text(hi, 'pressure')}")
        return out

    def matplotlib(self, display: Display, span=None):
        """``(cmap, norm)`` for matplotlib in the display's pressure unit;
        the infinite edges are put at ``span`` (display units, default the
        limits widened by their difference)."""
        from matplotlib.colors import BoundaryNorm, ListedColormap

        e = display.value(self.edges, "pressure")
        width = e[-2] - e[2]
        lo, hi = span if span is not None else (e[1] - width, e[-2] + width)
        e = e.copy()
        e[0], e[-1] = min(lo, e[1] - 1e-9), max(hi, e[-2] + 1e-9)
        return ListedColormap(list(self.colours)), BoundaryNorm(e, len(self))


def scale_of(result) -> PressureScale:
    """The pressure scale of a run: its project's ``[checks]`` limits."""
    c = result.project.checks
    return PressureScale.from_limits(c.min_pressure, c.max_pressure)


def governing_pressure(low, high, scale: PressureScale) -> np.ndarray:
    """Per piece, the pressure (Pa) that colours it: the high one where it is
    over the maximum and the low one is within it, else the low one, so a
    piece shows its worst side.

    >>> s = PressureScale.from_limits(140e3, 550e3)
    >>> governing_pressure(np.array([100e3, 200e3, 200e3]), np.array([150e3, 300e3, 600e3]), s).tolist()
    [100000.0, 200000.0, 600000.0]
    """
    low, high = np.asarray(low, float), np.asarray(high, float)
    return np.where((high > scale.max_pressure) & (low >= scale.min_pressure), high, low)


def kml_colour(hex_colour: str, opacity: float = 1.0) -> str:
    """A ``#rrggbb`` colour as KML's ``aabbggrr`` (OGC KML 2.2, kml:color).

    >>> kml_colour("#d55e00", 0.5)
    '80005ed5'
    """
    h = hex_colour.lstrip("#")
    return f"{int(round(opacity * 255)):02x}{h[4:6]}{h[2:4]}{h[0:2]}"
