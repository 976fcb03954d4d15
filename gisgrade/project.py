"""The project file: one TOML file that drives a whole run.

This is the first stage. It reads the TOML, checks every key, converts every
dimensional value (a pint quantity string) to SI and resolves relative paths
against the project file's folder. Later stages receive the frozen
:class:`Project` and never see raw TOML or unit strings.

Where a new key goes: add it to the section's ``_read_*`` function below (read it
with :class:`Section`, which records the key as known, so an unknown-key check
and its "did you mean" hint come for free), then to the section's dataclass.
"""
from __future__ import annotations

import difflib
import math
import sys
from dataclasses import dataclass, field
from pathlib import Path

from .errors import InputError
from .units import parse_quantity

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib


# --------------------------------------------------------------------------
# Section configs (SI floats, resolved paths)
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class ChecksConfig:
    """Planning checks (defaults: common practice, see docs/hydraulics.md)."""

    min_pressure: float = 140e3  # Pa: 20 psi floor under all demands (common practice)
    max_pressure: float = 550e3  # Pa: upper end of normal working pressure, 80 psi (common practice)
    min_velocity: float = 0.0  # m/s: 0 disables the check
    max_velocity: float = 3.0  # m/s: upper end even in fire flow (common practice)


Thresholds = ChecksConfig


@dataclass(frozen=True)
class AlignmentConfig:
    path: Path
    spacing: float  # m
    layer: str | None = None
    reverse: bool = False
    where: str | None = None  # attribute filter (OGR SQL WHERE clause)
    feature: int | None = None  # feature id (FID) when a layer holds several routes
    start_station: float = 0.0  # m, station of the first point


@dataclass(frozen=True)
class TerrainConfig:
    dem: tuple[Path, ...]
    vertical_unit: str = "m"
    method: str = "bilinear"
    max_gap: float | None = None  # m; None: 3 cells of the finest DEM
    vertical_accuracy: float | None = None  # m RMSE; None: a default from the DEM's cell size


@dataclass(frozen=True)
class PipeConfig:
    inside_diameter: float  # m
    outside_diameter: float  # m
    friction: str  # "darcy-weisbach" | "hazen-williams"
    roughness: float | None = None  # m (Darcy-Weisbach)
    hazen_williams_c: float | None = None  # plain number (Hazen-Williams)
    material: str | None = None  # a name in hydraulics.materials.MATERIALS
    pressure_rating: float | None = None  # Pa, the pipe's rated working pressure


@dataclass(frozen=True)
class PipeSectionConfig:
    """One [[sections]] table: pipe data over a station range (None: as [pipe])."""

    start: float  # m, station where the section begins
    end: float  # m, station where it ends
    inside_diameter: float | None = None  # m
    outside_diameter: float | None = None  # m
    roughness: float | None = None  # m
    hazen_williams_c: float | None = None
    pressure_rating: float | None = None  # Pa
    key: str = "sections[0]"


@dataclass(frozen=True)
class FittingConfig:
    """One [[fittings]] table: a point loss K at a station."""

    station: float  # m
    k: float  # loss coefficient on the downstream velocity head
    kind: str | None = None  # the named kind, if given
    key: str = "fittings[0]"


@dataclass(frozen=True)
class OfftakeConfig:
    """One [[offtakes]] table: a flow leaving at a station, or a point layer of them."""

    station: float | None = None  # m (a single offtake)
    flow: float | None = None  # m3/s (a single offtake)
    path: Path | None = None  # a point layer instead
    flow_field: str | None = None
    flow_unit: str = "L/s"  # unit of the layer's flow values (as written)
    flow_factor: float = 1e-3  # m3/s per one flow_unit (parsed at load)
    layer: str | None = None
    key: str = "offtakes[0]"


@dataclass(frozen=True)
class ScenarioConfig:
    """One [[scenarios]] table: a named flow case.

    The base case ([hydraulics] flow and every offtake) times ``multiplier``
    (a scenario given by ``flow`` has multiplier flow / [hydraulics] flow),
    plus ``fire_flow``, which is not scaled: it enters at the start and
    leaves at ``fire_station`` (None: the last station).
    """

    name: str
    flow: float | None = None  # m3/s entering at the start
    multiplier: float | None = None  # times [hydraulics] flow
    show_egl: bool = True
    fire_flow: float = 0.0  # m3/s, an extra demand that is not scaled
    fire_station: float | None = None  # m, where it leaves (None: the last station)
    key: str = "scenarios[0]"


@dataclass(frozen=True)
class CoverConfig:
    minimum: float  # m, ground to top of pipe
    maximum: float | None = None  # m; None: no limit


@dataclass(frozen=True)
class CoverZoneConfig:
    """A polygon layer whose zones override the cover limits inside them."""

    path: Path
    layer: str | None = None
    minimum: float | None = None  # m, for every zone of the layer
    maximum: float | None = None
    minimum_field: str | None = None  # attribute, in field_unit (wins over minimum)
    maximum_field: str | None = None
    field_factor: float = 1.0  # m per attribute unit
    key: str = "cover_zones[0]"


@dataclass(frozen=True)
class CrossingLayerConfig:
    path: Path
    clearance: float  # m
    bottom_field: str | None = None  # the feature's bottom elevation
    depth_field: str | None = None  # or: depth from ground to the feature's top
    size_field: str | None = None  # the feature's outside height (attribute) ...
    size: float | None = None  # ... or one value for the layer, m
    side: str = "under"  # "under" or "over"
    width_field: str | None = None  # the feature's plan width (attribute) ...
    width: float | None = None  # ... or one value; default: its size (a round pipe)
    field_factor: float | None = None  # m per attribute unit (None: the DEM's vertical unit)
    layer: str | None = None
    key: str = "crossings[0]"  # where it sits in the project file, for messages


@dataclass(frozen=True)
class DesignConfig:
    """How the pipe may be laid (defaults: common practice, docs/design.md)."""

    joint_length: float = 6.0  # m
    max_joint_deflection: float = math.radians(3.0)  # rad per joint (maker's table governs)
    bend_angles: tuple = tuple(math.radians(a) for a in (11.25, 22.5, 45.0, 90.0))
    min_grade: float | None = None  # m/m
    max_grade: float | None = None  # m/m
    trench_width: float | None = None  # m; None: outside diameter + 0.6 m


@dataclass(frozen=True)
class HydraulicsConfig:
    source_head: float | None  # m, HGL at the first station (a tank level if start = "tank")
    flow: float | None  # m3/s, the base flow entering at the first station
    temperature: float  # K
    boundary: str = "source-head"  # | "two-heads" | "min-pressure"
    end_head: float | None = None  # m (two-heads)
    start: str = "main"  # | "tank"
    end: str = "open"  # | "tank" | "main"
    entrance: str = "sharp"  # entrance kind when start = "tank"
    required_pressure: float | None = None  # Pa (min-pressure); None: [checks] min_pressure
    required_at: str = "everywhere"  # | "end"


@dataclass(frozen=True)
class OutputConfig:
    dir: Path | None = None
    units: str = "SI"  # display units: "SI" or "US"


@dataclass(frozen=True)
class Project:
    path: Path
    alignment: AlignmentConfig
    terrain: TerrainConfig
    pipe: PipeConfig | None
    cover: CoverConfig | None
    hydraulics: HydraulicsConfig | None
    crossings: tuple[CrossingLayerConfig, ...] = ()
    cover_zones: tuple[CoverZoneConfig, ...] = ()
    design: DesignConfig = field(default_factory=DesignConfig)
    checks: Thresholds = field(default_factory=Thresholds)
    sections: tuple[PipeSectionConfig, ...] = ()
    fittings: tuple[FittingConfig, ...] = ()
    offtakes: tuple[OfftakeConfig, ...] = ()
    scenarios: tuple[ScenarioConfig, ...] = ()
    output: OutputConfig = field(default_factory=OutputConfig)

    @property
    def base_dir(self) -> Path:
        return self.path.parent

    def input_paths(self) -> list[Path]:
        """Every local file this project reads (for the never-overwrite check)."""
        layers = [*self.crossings, *self.cover_zones, *self.offtakes]
        paths = [self.path, self.alignment.path, *(c.path for c in layers if c.path)]
        return paths + [d for d in self.terrain.dem if isinstance(d, Path)]


# --------------------------------------------------------------------------
# Reading helpers
# --------------------------------------------------------------------------

_MISSING = object()


class Section:
    """Typed access to one TOML table, remembering which keys were read.

    Every getter names the key as ``section.key`` in its error messages;
    :meth:`finish` rejects keys nobody read, suggesting the nearest known one.
    """

    def __init__(self, table, name: str, base_dir: Path, file: Path):
        if not isinstance(table, dict):
            raise InputError(f"{file.name}: [{name}] must be a table of keys")
        self.table = table
        self.name = name
        self.base_dir = base_dir
        self.file = file
        self.known: set[str] = set()

    def key(self, key: str) -> str:
        return f"{self.name}.{key}"

    def _get(self, key: str, default):
        self.known.add(key)
        if key in self.table:
            return self.table[key]
        if default is _MISSING:
            close = difflib.get_close_matches(key, [str(k) for k in self.table], n=1, cutoff=0.6)
            hint = f" (is {self.key(close[0])} a typo for it?)" if close else ""
            raise InputError(f"{self.file.name}: missing required key {self.key(key)}{hint}")
        return default

    def quantity(self, key: str, kind: str, default=_MISSING, *, positive=False, minimum=None):
        value = self._get(key, default)
        if value is None:
            return None
        out = parse_quantity(value, kind, self.key(key))
        if not math.isfinite(out):
            raise InputError(f"{self.key(key)} = {value!r}: must be finite")
        if positive and out <= 0:
            raise InputError(f"{self.key(key)} = {value!r}: must be greater than zero")
        if minimum is not None and out < minimum:
            raise InputError(f"{self.key(key)} = {value!r}: must not be negative")
        return out

    def number(self, key: str, default=_MISSING, *, positive=False):
        value = self._get(key, default)
        if value is None:
            return None
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise InputError(f"{self.key(key)} = {value!r}: expected a plain number")
        if not math.isfinite(value) or (positive and value <= 0):
            raise InputError(f"{self.key(key)} = {value!r}: must be a finite number above zero")
        return float(value)

    def string(self, key: str, default=_MISSING, *, choices=None):
        value = self._get(key, default)
        if value is None:
            return None
        if not isinstance(value, str) or not value.strip():
            raise InputError(f"{self.key(key)} = {value!r}: expected a text value")
        if choices is not None:
            norm = value.strip().lower()
            if norm not in choices:
                hint = _suggest(norm, choices)
                raise InputError(
                    f"{self.key(key)} = {value!r}: expected one of {', '.join(choices)}{hint}"
                )
            return norm
        return value.strip()

    def boolean(self, key: str, default=_MISSING) -> bool:
        value = self._get(key, default)
        if not isinstance(value, bool):
            raise InputError(f"{self.key(key)} = {value!r}: expected true or false")
        return value

    def path(self, key: str, default=_MISSING, *, must_exist=True) -> Path | None:
        value = self._get(key, default)
        if value is None:
            return None
        return self._one_path(key, value, must_exist)

    def _one_path(self, key: str, value, must_exist: bool) -> Path:
        if not isinstance(value, str) or not value.strip():
            raise InputError(f"{self.key(key)} = {value!r}: expected a file path as text")
        p = Path(value).expanduser()
        if not p.is_absolute():
            p = self.base_dir / p
        if must_exist and not p.exists():
            raise InputError(f"{self.key(key)} = {value!r}: file not found ({p})")
        return p

    def finish(self) -> None:
        unknown = sorted(set(self.table) - self.known)
        if unknown:
            bad = unknown[0]
            hint = _suggest(bad, sorted(self.known))
            raise InputError(f"{self.file.name}: unknown key {self.key(bad)}{hint}")


def _suggest(word: str, choices) -> str:
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return f" (did you mean {close[0]!r}?)" if close else ""


# --------------------------------------------------------------------------
# Sections
# --------------------------------------------------------------------------

FRICTION_METHODS = ("darcy-weisbach", "hazen-williams")
SECTIONS = ("alignment", "terrain", "pipe", "cover", "cover_zones", "crossings", "design",
            "hydraulics", "checks", "output", "sections", "fittings", "offtakes", "scenarios")
BOUNDARIES = ("source-head", "two-heads", "min-pressure")


def _read_alignment(s: Section) -> AlignmentConfig:
    feature = s._get("feature", None)
    if feature is not None and (isinstance(feature, bool) or not isinstance(feature, int)):
        raise InputError(f"{s.key('feature')} = {feature!r}: expected a whole-number feature id")
    return AlignmentConfig(
        path=s.path("path"),
        spacing=s.quantity("spacing", "length", positive=True),
        layer=s.string("layer", None),
        reverse=s.boolean("reverse", False),
        where=s.string("where", None),
        feature=feature,
        start_station=s.quantity("start_station", "length", "0 m"),
    )


def _read_terrain(s: Section) -> TerrainConfig:
    from .terrain import VERTICAL_ACCURACY_BY_KIND, resolve_dem_paths, vertical_unit_factor

    unit = s.string("vertical_unit", "m")
    vertical_unit_factor(unit, s.key("vertical_unit"))  # validate early
    accuracy = s._get("vertical_accuracy", None)
    if isinstance(accuracy, str) and accuracy.strip().lower() in VERTICAL_ACCURACY_BY_KIND:
        accuracy = VERTICAL_ACCURACY_BY_KIND[accuracy.strip().lower()]
    elif accuracy is not None:
        try:
            accuracy = s.quantity("vertical_accuracy", "length", minimum=0.0)
        except InputError as exc:
            kinds = ", ".join(VERTICAL_ACCURACY_BY_KIND)
            raise InputError(f"{exc} (or a DEM kind: {kinds})") from None
    return TerrainConfig(
        dem=tuple(resolve_dem_paths(s._get("dem", _MISSING), s.base_dir, s.key("dem"))),
        vertical_unit=unit,
        method=s.string("method", "bilinear", choices=("bilinear", "bicubic")),
        max_gap=s.quantity("max_gap", "length", None, minimum=0.0),
        vertical_accuracy=accuracy,
    )


def _read_pipe(s: Section) -> PipeConfig:
    inside = s.quantity("inside_diameter", "length", positive=True)
    outside = s.quantity("outside_diameter", "length", positive=True)
    _check_diameters(s, inside, outside)
    method = s.string("friction", "darcy-weisbach", choices=FRICTION_METHODS)
    name, roughness, c = _friction_data(s)
    if method == "darcy-weisbach" and roughness is None:
        raise InputError(f"{s.file.name}: missing required key {s.key('roughness')} "
                         f"(needed for friction = \"darcy-weisbach\"), e.g. roughness = \"0.1 mm\" "
                         f"or material = \"ductile-iron-cement-lined\"")
    if method == "hazen-williams" and c is None:
        raise InputError(f"{s.file.name}: missing required key {s.key('hazen_williams_c')} "
                         f"(needed for friction = \"hazen-williams\"), e.g. hazen_williams_c = 130 "
                         f"or material = \"pvc\"")
    rating = s.quantity("pressure_rating", "pressure", None, positive=True)
    return PipeConfig(inside, outside, method, roughness, c, name, rating)


def _check_diameters(s: Section, inside, outside) -> None:
    if inside is not None and outside is not None and outside < inside:
        raise InputError(
            f"{s.key('outside_diameter')} = {s.table['outside_diameter']!r}: smaller than "
            f"{s.key('inside_diameter')} = {s.table['inside_diameter']!r}"
        )


def _friction_data(s: Section):
    """``material``, ``roughness`` and ``hazen_williams_c`` of a table; an
    explicit roughness or C wins over the material's value."""
    from .hydraulics.materials import material

    name = s.string("material", None)
    mat = material(name, s.key("material")) if name is not None else None
    roughness = s.quantity("roughness", "length", None, minimum=0.0)
    c = s.number("hazen_williams_c", None, positive=True)
    if mat is not None:
        roughness = mat.roughness if roughness is None else roughness
        c = mat.hazen_williams_c if c is None else c
    return name, roughness, c


def _read_pipe_section(s: Section) -> PipeSectionConfig:
    start = s.quantity("from", "length")
    end = s.quantity("to", "length")
    if end <= start:
        raise InputError(f"{s.key('to')} = {s.table['to']!r}: must be beyond "
                         f"{s.key('from')} = {s.table['from']!r}")
    inside = s.quantity("inside_diameter", "length", None, positive=True)
    outside = s.quantity("outside_diameter", "length", None, positive=True)
    _check_diameters(s, inside, outside)
    _, roughness, c = _friction_data(s)
    return PipeSectionConfig(start, end, inside, outside, roughness, c,
                             s.quantity("pressure_rating", "pressure", None, positive=True), s.name)


def _exactly_one(s: Section, a, b) -> None:
    """Require exactly one of two keys, each ``(key, value, what)``; a number must not be negative."""
    if (a[1] is None) == (b[1] is None):
        raise InputError(f"{s.file.name}: {s.name} needs exactly one of {s.key(a[0])} ({a[2]}) "
                         f"or {s.key(b[0])} ({b[2]})")
    for key, value, _ in (a, b):
        if isinstance(value, float) and value < 0:
            raise InputError(f"{s.key(key)} = {value!r}: must not be negative")


def _read_fitting(s: Section) -> FittingConfig:
    from .hydraulics.minor import k_for

    station = s.quantity("station", "length")
    kind = s.string("kind", None)
    k = s.number("k", None)
    _exactly_one(s, ("kind", kind, "a named fitting"), ("k", k, "a loss coefficient"))
    if kind is not None:
        try:
            k = k_for(kind)
        except InputError as exc:
            raise InputError(f"{s.key('kind')}: {exc}") from None
    return FittingConfig(station, k, kind, s.name)


def _read_offtake(s: Section) -> OfftakeConfig:
    if "path" in s.table:
        unit = s.string("flow_unit", "L/s")
        factor = parse_quantity(f"1 {unit}", "flow", s.key("flow_unit"))
        return OfftakeConfig(path=s.path("path"), flow_field=s.string("flow_field"),
                             flow_unit=unit, flow_factor=factor, layer=s.string("layer", None),
                             key=s.name)
    return OfftakeConfig(station=s.quantity("station", "length"),
                         flow=s.quantity("flow", "flow", minimum=0.0), key=s.name)


def _read_scenario(s: Section) -> ScenarioConfig:
    name = s.string("name")
    if name.lower() == "static":
        raise InputError(f"{s.key('name')} = {name!r}: the static case is always computed; "
                         "choose another name")
    flow = s.quantity("flow", "flow", None, minimum=0.0)
    mult = s.number("multiplier", None)
    _exactly_one(s, ("flow", flow, "entering at the start"), ("multiplier", mult, "x hydraulics.flow"))
    fire = s.quantity("fire_flow", "flow", None, minimum=0.0)
    fire_station = s.quantity("fire_station", "length", None)
    if fire is not None and flow is not None:
        raise InputError(f"{s.key('fire_flow')}: give it with {s.key('multiplier')}, not with "
                         f"{s.key('flow')} (flow is already the whole inflow)")
    if fire_station is not None and fire is None:
        raise InputError(f"{s.key('fire_station')}: only used with {s.key('fire_flow')}")
    return ScenarioConfig(name, flow, mult, s.boolean("show_egl", True),
                          fire_flow=fire or 0.0, fire_station=fire_station, key=s.name)


def _read_cover(s: Section) -> CoverConfig:
    minimum = s.quantity("minimum", "length", minimum=0.0)
    maximum = s.quantity("maximum", "length", None, minimum=0.0)
    if maximum is not None and maximum < minimum:
        raise InputError(f"{s.key('maximum')} = {s.table['maximum']!r}: less than "
                         f"{s.key('minimum')} = {s.table['minimum']!r}")
    return CoverConfig(minimum=minimum, maximum=maximum)


def _field_unit(s: Section, default=None):
    """``field_unit``: the unit attribute values are in, as metres per unit."""
    unit = s.string("field_unit", None)
    if unit is None:
        return None if default is None else default
    try:
        return parse_quantity(f"1 {unit}", "length", s.key("field_unit"))
    except InputError:
        raise InputError(f"{s.key('field_unit')} = {unit!r}: expected a length unit, e.g. \"m\" "
                         "or \"ft\"") from None


def _read_cover_zone(s: Section) -> CoverZoneConfig:
    cfg = CoverZoneConfig(
        path=s.path("path"),
        layer=s.string("layer", None),
        minimum=s.quantity("minimum", "length", None, minimum=0.0),
        maximum=s.quantity("maximum", "length", None, minimum=0.0),
        minimum_field=s.string("minimum_field", None),
        maximum_field=s.string("maximum_field", None),
        field_factor=_field_unit(s, 1.0),
        key=s.name,
    )
    if all(v is None for v in (cfg.minimum, cfg.maximum, cfg.minimum_field, cfg.maximum_field)):
        raise InputError(f"{s.file.name}: [[{s.name.split('[')[0]}]] {s.name} sets no cover: give "
                         "minimum, maximum, minimum_field or maximum_field")
    return cfg


def _read_crossing(s: Section) -> CrossingLayerConfig:
    bottom = s.string("bottom_field", None)
    depth = s.string("depth_field", None)
    if (bottom is None) == (depth is None):
        raise InputError(f"{s.file.name}: {s.name} needs exactly one of {s.key('bottom_field')} "
                         f"(the feature's bottom elevation) or {s.key('depth_field')} (its depth "
                         "below ground)")
    return CrossingLayerConfig(
        path=s.path("path"),
        clearance=s.quantity("clearance", "length", minimum=0.0),
        bottom_field=bottom,
        depth_field=depth,
        size_field=s.string("size_field", None),
        size=s.quantity("size", "length", None, minimum=0.0),
        side=s.string("side", "under", choices=("under", "over")),
        width_field=s.string("width_field", None),
        width=s.quantity("width", "length", None, minimum=0.0),
        field_factor=_field_unit(s),
        layer=s.string("layer", None),
        key=s.name,
    )


def _read_design(s: Section) -> DesignConfig:
    d = DesignConfig()
    angles = s._get("bend_angles", None)
    if angles is None:
        bend_angles = d.bend_angles
    elif isinstance(angles, list) and angles:
        bend_angles = tuple(sorted(parse_quantity(a, "angle", s.key("bend_angles")) for a in angles))
        if not all(0 < a <= math.pi / 2 + 1e-12 for a in bend_angles):
            raise InputError(f"{s.key('bend_angles')} = {angles!r}: each angle must be above 0 "
                             "and at most 90 deg")
    else:
        raise InputError(f"{s.key('bend_angles')} = {angles!r}: expected a list such as "
                         "[\"11.25 deg\", \"22.5 deg\", \"45 deg\", \"90 deg\"]")
    deflection = s.quantity("max_joint_deflection", "angle", "3 deg", minimum=0.0)
    if deflection > math.radians(15):
        raise InputError(f"{s.key('max_joint_deflection')} = {s.table['max_joint_deflection']!r}: "
                         "more than 15 deg per joint is not a pipe joint")
    cfg = DesignConfig(
        joint_length=s.quantity("joint_length", "length", "6 m", positive=True),
        max_joint_deflection=deflection,
        bend_angles=bend_angles,
        min_grade=s.quantity("min_grade", "dimensionless", None, positive=True),
        max_grade=s.quantity("max_grade", "dimensionless", None, positive=True),
        trench_width=s.quantity("trench_width", "length", None, positive=True),
    )
    if cfg.min_grade and cfg.max_grade and cfg.min_grade > cfg.max_grade:
        raise InputError(f"{s.key('min_grade')} = {s.table['min_grade']!r}: steeper than "
                         f"{s.key('max_grade')} = {s.table['max_grade']!r}")
    return cfg


def _read_hydraulics(s: Section) -> HydraulicsConfig:
    temperature = s.quantity("temperature", "temperature", "15 degC")
    if not 273.15 <= temperature <= 313.15:
        raise InputError(
            f"{s.key('temperature')} = {s.table.get('temperature')!r}: outside 0-40 degC, "
            "the range of the water property correlations"
        )
    boundary = s.string("boundary", "source-head", choices=BOUNDARIES)
    # two-heads solves the flow; min-pressure solves the head (source_head is
    # then the head available without a pump, optional).
    source_head = s.quantity("source_head", "length", None if boundary == "min-pressure" else _MISSING)
    flow = s.quantity("flow", "flow", None, minimum=0.0)
    end = s.string("end", "open", choices=("open", "tank", "main"))
    # A free outlet ("open") is at atmospheric pressure: its head defaults to the axis there.
    end_head = s.quantity("end_head", "length",
                          _MISSING if boundary == "two-heads" and end != "open" else None)
    if boundary != "two-heads" and end_head is not None:
        raise InputError(f"{s.key('end_head')}: only used with {s.key('boundary')} = \"two-heads\"")
    if boundary == "two-heads" and end_head is not None and end_head > source_head:
        raise InputError(f"{s.key('end_head')} = {s.table['end_head']!r}: above "
                         f"{s.key('source_head')}; the flow would run backwards")
    return HydraulicsConfig(
        source_head=source_head,
        flow=flow,
        temperature=temperature,
        boundary=boundary,
        end_head=end_head,
        start=s.string("start", "main", choices=("main", "tank")),
        end=end,
        entrance=s.string("entrance", "sharp", choices=("sharp", "rounded", "projecting")),
        required_pressure=s.quantity("required_pressure", "pressure", None),
        required_at=s.string("required_at", "everywhere", choices=("everywhere", "end")),
    )


def _read_checks(s: Section) -> Thresholds:
    d = Thresholds()
    return Thresholds(
        min_pressure=s.quantity("min_pressure", "pressure", f"{d.min_pressure} Pa"),
        max_pressure=s.quantity("max_pressure", "pressure", f"{d.max_pressure} Pa"),
        min_velocity=s.quantity("min_velocity", "velocity", f"{d.min_velocity} m/s", minimum=0.0),
        max_velocity=s.quantity("max_velocity", "velocity", f"{d.max_velocity} m/s", minimum=0.0),
    )


def _read_output(s: Section) -> OutputConfig:
    return OutputConfig(
        dir=s.path("dir", None, must_exist=False),
        units=s.string("units", "si", choices=("si", "us")).upper(),
    )


def load(path, *, ground_only: bool = False) -> Project:
    """Read and check a project file; every error names the file and key.

    With ``ground_only`` (the ``profile`` command) the pipe, cover and
    hydraulics sections may be absent; if present they are still checked.

    >>> load("no-such-project.toml")
    Traceback (most recent call last):
    ...
    gisgrade.errors.InputError: no-such-project.toml: project file not found
    """
    file = Path(path)
    if not file.is_file():
        raise InputError(f"{file}: project file not found")
    try:
        with open(file, "rb") as fh:
            data = tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{file.name}: not valid TOML ({exc})") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{file.name}: cannot read ({exc})") from None

    file = file.resolve()
    base = file.parent

    unknown = [k for k in data if k not in SECTIONS]
    if unknown:
        raise InputError(f"{file.name}: unknown section [{unknown[0]}]{_suggest(unknown[0], SECTIONS)}")

    def section(name: str, reader, required=True):
        if name not in data:
            if not required:
                try:
                    return reader(Section({}, name, base, file))
                except InputError:  # an optional section with required keys
                    return None
            raise InputError(f"{file.name}: missing required section [{name}]")
        sec = Section(data[name], name, base, file)
        out = reader(sec)
        sec.finish()
        return out

    def tables(name: str, reader) -> tuple:
        raw = data.get(name, [])
        if isinstance(raw, dict):
            raw = [raw]
        if not isinstance(raw, list):
            raise InputError(f"{file.name}: [[{name}]] must be a list of tables")
        out = []
        for i, table in enumerate(raw):
            sec = Section(table, f"{name}[{i}]", base, file)
            out.append(reader(sec))
            sec.finish()
        return tuple(out)

    project = Project(
        path=file,
        alignment=section("alignment", _read_alignment),
        terrain=section("terrain", _read_terrain),
        pipe=section("pipe", _read_pipe, required=not ground_only),
        cover=section("cover", _read_cover, required=not ground_only),
        hydraulics=section("hydraulics", _read_hydraulics, required=not ground_only),
        crossings=tables("crossings", _read_crossing),
        cover_zones=tables("cover_zones", _read_cover_zone),
        design=section("design", _read_design, required=False),
        checks=section("checks", _read_checks, required=False),
        output=section("output", _read_output, required=False),
        sections=tables("sections", _read_pipe_section),
        fittings=tables("fittings", _read_fitting),
        offtakes=tables("offtakes", _read_offtake),
        scenarios=tables("scenarios", _read_scenario),
    )
    _check_hydraulic_cases(project)
    return project


def _check_hydraulic_cases(p: Project) -> None:
    """Cross-section rules of the hydraulic keys (one line naming the key)."""
    names = [sc.name for sc in p.scenarios]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise InputError(f"{p.path.name}: scenario name {dup[0]!r} given twice in [[scenarios]]")
    hyd = p.hydraulics
    if hyd is None:
        return
    if hyd.boundary == "two-heads":
        if p.scenarios:
            raise InputError(f"{p.path.name}: [[scenarios]] cannot be used with hydraulics.boundary "
                             "= \"two-heads\": the flow is solved from the two heads")
        if hyd.flow is not None:
            raise InputError(f"{p.path.name}: hydraulics.flow is not used with hydraulics.boundary "
                             "= \"two-heads\" (the flow is solved); remove it")
        return
    # The base flow is needed by the default "design" case, by multipliers, and to
    # scale the offtakes of a scenario given by its flow.
    needs_flow = (not p.scenarios or bool(p.offtakes)
                  or any(sc.multiplier is not None for sc in p.scenarios))
    if hyd.flow is None and needs_flow:
        why = ("scenarios scale the offtakes by flow / hydraulics.flow" if p.offtakes and p.scenarios
               else "the design flow or a scenario's multiplier needs it")
        raise InputError(f"{p.path.name}: missing required key hydraulics.flow ({why})")
    if hyd.flow == 0 and p.scenarios and p.offtakes:
        raise InputError("hydraulics.flow = 0: scenarios with offtakes need a base flow above zero")
