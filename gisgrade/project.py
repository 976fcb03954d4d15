"""The project file: one TOML file that drives a whole run.

This is the first stage. It reads the TOML, checks every key, converts every
dimensional value (a pint quantity string) to SI and resolves relative paths
against the project file's folder. Later stages receive the frozen
:class:`Project` and never see raw TOML or unit strings.

Each section is a frozen dataclass whose fields declare its keys once with
:func:`key`; :func:`read_table` reads any section from them and
:func:`project_schema` makes the file's JSON Schema from them. A rule between
keys is the dataclass's ``_rules`` (``_one_of``: exactly one of two keys);
rules across sections are in :func:`_check_hydraulic_cases`. A table reports
its first problem: each key in declaration order, then exactly-one-of, then
the rules, then an unknown key.
"""
from __future__ import annotations

import math
import sys
from dataclasses import MISSING, dataclass, field, fields, replace
from pathlib import Path

from . import names
from .errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

#: Kinds read as a quantity string and converted to SI (``units.SI_UNITS``).
QUANTITIES = ("length", "flow", "velocity", "pressure", "temperature", "angle", "dimensionless",
              "volume", "time", "per_energy", "per_length", "mass_per_energy")
FRICTION_METHODS = ("darcy-weisbach", "hazen-williams")
BOUNDARIES = ("source-head", "two-heads", "min-pressure")
#: The largest station magnitude taken (m): a quarter of the Earth's circumference.
MAX_STATION = 1.0e7
#: Shortest and longest pipe joint taken (m; common practice: 6-13 m joints, 20 m strings).
JOINT_LENGTH_RANGE = (1.0, 50.0)
#: Hazen-Williams C outside this range cannot be a pipe (common practice: 60-150 in service).
HW_C_RANGE = (20.0, 200.0)
#: Least cover beyond this along the whole line is refused (m; common practice: 0.8-2 m).
MAX_MIN_COVER = 10.0


def key(kind: str, doc: str, default=MISSING, shown=None, *, toml=None, choices=(),
        required=None):
    """A project-file key: a dataclass field whose metadata says how to read it.

    ``kind``: a dimension in :data:`QUANTITIES` (read to SI), ``number``,
    ``text`` (with ``choices``: one of them, any case), ``bool``, ``file``
    (must exist), ``dir`` or a special kind of :func:`_value`; ``>0`` or
    ``>=0`` after it bounds the value. ``default``: the SI value (none: the
    key is required, or ``required=True`` in its shape of the table);
    ``shown``: the default as the file writes it (``"6 m"``); ``toml``: the
    key's name where it is not the field's. (A table's own ``key`` field, its
    name in messages, comes after its keys: it hides this function.)
    """
    kind, _, bound = kind.partition(">")
    meta = dict(kind=kind, sign={"0": ">0", "=0": ">=0"}.get(bound), doc=doc, shown=shown,
                toml=toml, choices=choices,
                required=default is MISSING if required is None else required)
    return field(default=default, metadata=meta)


# --------------------------------------------------------------------------
# Section configs (SI floats, resolved paths)
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class AlignmentConfig:
    """[alignment]: the centerline and how it is stationed."""

    path: Path = key("file", "the centerline: GeoJSON or GeoPackage")
    spacing: float = key("length>0", "station spacing (plus every vertex, crossing, zone edge, "
                         "fitting and offtake)")
    layer: str | None = key("text", "layer of the file to read", None)
    reverse: bool = key("bool", "true when flow runs against the digitized direction", False)
    where: str | None = key("text", "attribute filter picking one route (OGR SQL WHERE)", None)
    feature: int | None = key("feature", "feature id (FID) picking one route", None)
    start_station: float = key("length", "station of the first point", 0.0, "0 m")
    route_field: str | None = key("text", "attribute naming each feature's route for "
                                  "`gisgrade routes` (each feature a route when unset); "
                                  "`run` then needs `where` picking one route", None)

    def _rules(self, t: _Table) -> AlignmentConfig:
        if self.where is not None and self.feature is not None:
            raise InputError(f"{t.file.name}: {t.key('where')} and {t.key('feature')} both pick "
                             "the route; give one of them (an attribute filter or a feature id)")
        if abs(self.start_station) > MAX_STATION:
            raise InputError(f"{t.say('start_station')}: beyond any real line (more than "
                             f"{MAX_STATION / 1e3:.0f} km); give the station of the first point")
        return self


@dataclass(frozen=True)
class TerrainConfig:
    """[terrain]: the DEM the ground is sampled from."""

    dem: tuple[Path, ...] = key("dem", "a DEM file, a list of them (first wins where they "
                                "overlap), a folder or a glob")
    vertical_unit: str = key("vertical_unit", "unit of the DEM's elevations", "m")
    method: str = key("text", "interpolation between DEM cells", "bilinear",
                      choices=("bilinear", "bicubic"))
    max_gap: float | None = key("length>=0", "longest nodata run bridged (default: 3 cells)",
                                None)
    vertical_accuracy: float | None = key("accuracy", "the DEM's RMSE or kind, shown as a 95 % "
                                          "band (default: from the cell size)", None)


@dataclass(frozen=True)
class PipeConfig:
    """[pipe]: the pipe along the whole line."""

    inside_diameter: float = key("length>0", "inside diameter")
    outside_diameter: float = key("length>0", "outside diameter")
    friction: str = key("text", "friction formula", "darcy-weisbach", choices=FRICTION_METHODS)
    roughness: float | None = key("length>=0", "absolute roughness (Darcy-Weisbach)", None)
    hazen_williams_c: float | None = key("number>0", "Hazen-Williams C", None)
    material: str | None = key("material", "a pipe material giving roughness and C", None)
    pressure_rating: float | None = key("pressure>0", "rated working pressure", None)
    wall_thickness: float | None = key("length>0", "wall thickness for the wave speed (default: "
                                       "half the outside less the inside diameter)", None)
    elastic_modulus: float | None = key("pressure>0", "Young's modulus of the wall (default: the "
                                        "material's)", None)
    poisson_ratio: float | None = key("number>=0", "Poisson's ratio of the wall (default: the "
                                      "material's)", None)
    wave_speed: float | None = key("velocity>0", "pressure wave speed, given directly (wins over "
                                   "the modulus)", None)
    surge_allowance: float | None = key("pressure>=0", "pressure a transient may reach above the "
                                        "rating (default: none)", None)

    def _rules(self, t: _Table) -> PipeConfig:
        cfg = _pipe_data(self, t)
        if cfg.friction == "darcy-weisbach" and cfg.roughness is None:
            raise InputError(f"{t.file.name}: missing required key {t.key('roughness')} (needed "
                             "for friction = \"darcy-weisbach\"), e.g. roughness = \"0.1 mm\" or "
                             "material = \"ductile-iron-cement-lined\"")
        if cfg.friction == "hazen-williams" and cfg.hazen_williams_c is None:
            raise InputError(f"{t.file.name}: missing required key {t.key('hazen_williams_c')} "
                             "(needed for friction = \"hazen-williams\"), e.g. hazen_williams_c = "
                             "130 or material = \"pvc\"")
        return cfg


@dataclass(frozen=True)
class PipeSectionConfig:
    """[[sections]]: pipe data over a station range (a key not given: as [pipe])."""

    start: float = key("length", "station where the section begins", toml="from")
    end: float = key("length", "station where it ends", toml="to")
    inside_diameter: float | None = key("length>0", "inside diameter", None)
    outside_diameter: float | None = key("length>0", "outside diameter", None)
    roughness: float | None = key("length>=0", "absolute roughness", None)
    hazen_williams_c: float | None = key("number>0", "Hazen-Williams C", None)
    pressure_rating: float | None = key("pressure>0", "rated working pressure", None)
    material: str | None = key("material", "a pipe material giving roughness and C", None)
    wall_thickness: float | None = key("length>0", "wall thickness for the wave speed", None)
    elastic_modulus: float | None = key("pressure>0", "Young's modulus of the wall", None)
    poisson_ratio: float | None = key("number>=0", "Poisson's ratio of the wall", None)
    wave_speed: float | None = key("velocity>0", "pressure wave speed, given directly", None)
    surge_allowance: float | None = key("pressure>=0", "pressure a transient may reach above the "
                                        "rating", None)
    key: str = "sections[0]"

    def _rules(self, t: _Table) -> PipeSectionConfig:
        if self.end <= self.start:
            raise InputError(f"{t.say('to')}: must be beyond {t.say('from')}")
        return _pipe_data(self, t)


def _pipe_data(cfg, t: _Table):
    """Check the diameters' order; fill roughness, C, modulus and Poisson's
    ratio from the material (an explicit value wins over the material's)."""
    inside, outside = cfg.inside_diameter, cfg.outside_diameter
    if inside is not None and outside is not None and outside < inside:
        raise InputError(f"{t.say('outside_diameter')}: smaller than {t.say('inside_diameter')}")
    if cfg.poisson_ratio is not None and cfg.poisson_ratio >= 0.5:
        raise InputError(f"{t.say('poisson_ratio')}: must be below 0.5")
    c = cfg.hazen_williams_c
    if c is not None and not HW_C_RANGE[0] <= c <= HW_C_RANGE[1]:
        raise InputError(f"{t.say('hazen_williams_c')}: outside {HW_C_RANGE[0]:g}-"
                         f"{HW_C_RANGE[1]:g}, not a pipe (60-150 is usual)")
    if cfg.roughness is not None and inside is not None and cfg.roughness >= inside:
        raise InputError(f"{t.say('roughness')}: at or above {t.key('inside_diameter')}; absolute "
                         "roughness is the wall's bumps (0.0015-3 mm), not a size")
    if cfg.material is None:
        return cfg
    from .hydraulics.materials import material
    mat = material(cfg.material)
    given = lambda name: getattr(cfg, name) if getattr(cfg, name) is not None else getattr(mat, name)  # noqa: E731
    return replace(cfg, **{name: given(name) for name in ("roughness", "hazen_williams_c",
                                                          "elastic_modulus", "poisson_ratio")})


@dataclass(frozen=True)
class FittingConfig:
    """[[fittings]]: a point loss K at a station."""

    station: float = key("length", "station of the fitting")
    k: float | None = key("number>=0", "loss coefficient on the downstream velocity head", None)
    kind: str | None = key("fitting", "a named fitting, giving its K", None)
    key: str = "fittings[0]"
    _one_of = (("kind", "a named fitting"), ("k", "a loss coefficient"))

    def _rules(self, t: _Table) -> FittingConfig:
        if self.kind is None:
            return self
        from .hydraulics.minor import k_for
        try:
            return replace(self, k=k_for(self.kind))
        except InputError as exc:
            raise InputError(f"{t.key('kind')}: {exc}") from None


@dataclass(frozen=True)
class OfftakeConfig:
    """[[offtakes]]: a flow leaving at a station, or a point layer of them."""

    station: float | None = key("length", "station of a single offtake", None, required=True)
    flow: float | None = key("flow>=0", "its flow", None, required=True)
    path: Path | None = key("file", "or a point layer of offtakes, snapped to the line", None,
                            required=True)
    flow_field: str | None = key("text", "the layer's flow attribute", None, required=True)
    flow_unit: str = key("flow_unit", "unit of the layer's flow values", "L/s")
    flow_factor: float = 1e-3  # m3/s per one flow_unit (parsed at load)
    layer: str | None = key("text", "layer of the file to read", None)
    key: str = "offtakes[0]"
    #: The shapes, each with its keys in reading order: the first whose key is given, else the last.
    _variants = (("path", ("flow_unit", "path", "flow_field", "layer")),
                 (None, ("station", "flow")))

    def _rules(self, t: _Table) -> OfftakeConfig:
        if self.path is None:
            return self
        from .units import parse_quantity
        factor = parse_quantity(f"1 {self.flow_unit}", "flow", t.key("flow_unit"))
        return replace(self, flow_factor=factor)


@dataclass(frozen=True)
class ScenarioConfig:
    """[[scenarios]]: a named flow case.

    The base case ([hydraulics] flow and every offtake) times ``multiplier``
    (given ``flow``: flow / hydraulics.flow), plus ``fire_flow``, not scaled,
    entering at the start and leaving at ``fire_station``.
    """

    name: str = key("text", "the scenario's name in the outputs")
    flow: float | None = key("flow>=0", "the whole flow entering at the start", None)
    multiplier: float | None = key("number>=0", "times hydraulics.flow (offtakes too)", None)
    show_egl: bool = key("bool", "draw the EGL on the profile sheet", True)
    fire_flow: float = key("flow>=0", "extra demand, not scaled (with multiplier)", 0.0, "0 L/s")
    fire_station: float | None = key("length", "where the fire flow leaves (default: the last "
                                     "station)", None)
    hours_per_year: float | None = key("time>=0", "hours a year the scenario runs, for the energy "
                                       "(default: 0; the one design case without [[scenarios]]: "
                                       "the whole year)", None)
    key: str = "scenarios[0]"
    _one_of = (("flow", "entering at the start"), ("multiplier", "x hydraulics.flow"))

    def _rules(self, t: _Table) -> ScenarioConfig:
        if self.name.lower() == "static":
            raise InputError(f"{t.key('name')} = {self.name!r}: the static case is always "
                             "computed; choose another name")
        if "fire_flow" in t.raw and self.flow is not None:
            raise InputError(f"{t.key('fire_flow')}: give it with {t.key('multiplier')}, not "
                             f"with {t.key('flow')} (flow is already the whole inflow)")
        if self.fire_station is not None and "fire_flow" not in t.raw:
            raise InputError(f"{t.key('fire_station')}: only used with {t.key('fire_flow')}")
        return self


@dataclass(frozen=True)
class CoverConfig:
    """[cover]: cover, ground to top of pipe."""

    minimum: float = key("length>=0", "least cover")
    maximum: float | None = key("length>=0", "greatest cover (default: no limit)", None)

    def _rules(self, t: _Table) -> CoverConfig:
        if self.maximum is not None and self.maximum < self.minimum:
            raise InputError(f"{t.say('maximum')}: less than {t.say('minimum')}")
        if self.minimum > MAX_MIN_COVER:
            raise InputError(f"{t.say('minimum')}: more than {MAX_MIN_COVER:g} m of cover along "
                             "the whole line is a tunnel, not a trench (a unit slip? \"1.2 m\", "
                             "\"4 ft\"); deep stretches go in [[cover_zones]]")
        return self


@dataclass(frozen=True)
class CoverZoneConfig:
    """[[cover_zones]]: polygons whose cover limits replace the line's inside them."""

    path: Path = key("file", "the polygon layer")
    layer: str | None = key("text", "layer of the file to read", None)
    minimum: float | None = key("length>=0", "least cover in every zone", None)
    maximum: float | None = key("length>=0", "greatest cover in every zone", None)
    minimum_field: str | None = key("text", "attribute with a zone's least cover", None)
    maximum_field: str | None = key("text", "attribute with a zone's greatest cover", None)
    field_factor: float = key("unit", "unit of the attributes", 1.0, "m", toml="field_unit")
    key: str = "cover_zones[0]"

    def _rules(self, t: _Table) -> CoverZoneConfig:
        if (self.minimum, self.maximum, self.minimum_field, self.maximum_field) == (None,) * 4:
            raise InputError(f"{t.file.name}: [[cover_zones]] {t.name} sets no cover: give "
                             "minimum, maximum, minimum_field or maximum_field")
        return self


@dataclass(frozen=True)
class CrossingLayerConfig:
    """[[crossings]]: one layer of features the main crosses."""

    path: Path = key("file", "the layer of crossed features")
    clearance: float = key("length>=0", "clear distance kept from each feature")
    bottom_field: str | None = key("text", "attribute with a feature's bottom elevation", None)
    depth_field: str | None = key("text", "attribute with its depth, ground to its top", None)
    size_field: str | None = key("text", "attribute with its outside height", None)
    size: float | None = key("length>=0", "one outside height for the layer", None)
    side: str = key("text", "pass under or over it", "under", choices=("under", "over"))
    width_field: str | None = key("text", "attribute with its plan width (default: its size)",
                                  None)
    width: float | None = key("length>=0", "one plan width for the layer", None)
    field_factor: float | None = key("unit", "unit of the attributes (default: the DEM's "
                                     "vertical unit)", None, toml="field_unit")
    layer: str | None = key("text", "layer of the file to read", None)
    key: str = "crossings[0]"  # where it sits in the project file, for messages
    _one_of = (("bottom_field", "the feature's bottom elevation"),
               ("depth_field", "its depth below ground"))


@dataclass(frozen=True)
class DesignConfig:
    """[design]: how the pipe may be laid (defaults: common practice, docs/design.md)."""

    joint_length: float = key("length>0", "length of one pipe joint", 6.0, "6 m")
    max_joint_deflection: float = key("angle>=0", "deflection per joint", math.radians(3.0),
                                      "3 deg")
    bend_angles: tuple = key("angles", "the standard bend fittings",
                             tuple(math.radians(a) for a in (11.25, 22.5, 45.0, 90.0)),
                             ["11.25 deg", "22.5 deg", "45 deg", "90 deg"])
    min_grade: float | None = key("grade>0", "least grade, so air moves to the high points "
                                  "(with its unit: \"0.1 %\", \"0.001 m/m\")", None)
    max_grade: float | None = key("grade>0", "steepest grade (never above 45 deg)", None)
    trench_width: float | None = key("length>0", "trench width (default: outside diameter + "
                                     "{length.1:0.6})", None)
    grade_break_cost: float = key("volume>=0", "excavation a grade break of 1 % must save "
                                  "(0: least excavation, following every ripple)", 10.0, "10 m3")
    high_point_tolerance: float | None = key("length>=0", "high and low points less prominent "
                                             "than this are designed out (default: the DEM's "
                                             "95 % band, at most 0.5 m)", None)
    curve_joints: float = key("number>0", "joints a plan turn may be spread over before a bend "
                              "fitting is used", 3.0, 3)

    def _rules(self, t: _Table) -> DesignConfig:
        lo, hi = JOINT_LENGTH_RANGE
        if "joint_length" in t.raw and not lo <= self.joint_length <= hi:
            raise InputError(f"{t.say('joint_length')}: a pipe joint is {lo:g}-{hi:g} m long "
                             "(6 m is usual)")
        if self.curve_joints != int(self.curve_joints) or self.curve_joints < 1:
            raise InputError(f"{t.say('curve_joints')}: expected a whole number of joints (1 or more)")
        if self.max_joint_deflection > math.radians(15):
            raise InputError(f"{t.say('max_joint_deflection')}: more than 15 deg per joint is "
                             "not a pipe joint")
        if self.min_grade and self.max_grade and self.min_grade > self.max_grade:
            raise InputError(f"{t.say('min_grade')}: steeper than {t.say('max_grade')}")
        return self


@dataclass(frozen=True)
class HydraulicsConfig:
    """[hydraulics]: the design flow and what is known at the ends."""

    source_head: float | None = key("length", "HGL at the first station (the tank level with "
                                    "start = \"tank\")", None)
    flow: float | None = key("flow>=0", "the design flow entering at the first station", None)
    temperature: float = key("temperature", "water temperature, 0-40 degC (32-104 degF)", 288.15, "15 degC")
    boundary: str = key("text", "what is known: the source head, both heads (the flow is "
                        "solved) or a least pressure (the head is solved)", "source-head",
                        choices=BOUNDARIES)
    end_head: float | None = key("length", "HGL at the last station (two-heads)", None)
    start: str = key("text", "the line leaves a main, or a tank (entrance loss)", "main",
                     choices=("main", "tank"))
    end: str = key("text", "the line ends open, in a main, or in a tank (exit loss)", "open",
                   choices=("open", "tank", "main"))
    entrance: str = key("text", "the tank entrance (start = \"tank\")", "sharp",
                        choices=("sharp", "rounded", "projecting"))
    required_pressure: float | None = key("pressure", "least pressure for min-pressure (default: "
                                          "checks.min_pressure)", None)
    required_at: str = key("text", "where the required pressure is kept", "everywhere",
                           choices=("everywhere", "end"))

    def _rules(self, t: _Table) -> HydraulicsConfig:
        if not 273.15 <= self.temperature <= 313.15:
            raise InputError(f"{t.key('temperature')} = {t.raw.get('temperature')!r}: outside "
                             "0-40 degC, the range of the water property correlations")
        # two-heads solves the flow; min-pressure solves the head (source_head is
        # then the head available without a pump, optional). A free outlet
        # ("open") is at atmospheric pressure: its head defaults to the axis there.
        two = self.boundary == "two-heads"
        if self.source_head is None and self.boundary != "min-pressure":
            raise t.missing("source_head")
        if self.end_head is None and two and self.end != "open":
            raise t.missing("end_head")
        if self.end_head is not None and not two:
            raise InputError(f"{t.key('end_head')}: only used with {t.key('boundary')} = "
                             "\"two-heads\"")
        if two and self.end_head is not None and self.end_head > self.source_head:
            raise InputError(f"{t.say('end_head')}: above {t.key('source_head')}; the flow "
                             "would run backwards")
        return self


@dataclass(frozen=True)
class ChecksConfig:
    """[checks]: planning checks (defaults: common practice, see docs/hydraulics.md)."""

    min_pressure: float = key("pressure", "floor under all demands (common practice: about "
                              "{pressure~:140000.0})",
                              140e3, "140 kPa")
    max_pressure: float = key("pressure", "upper end of normal working pressure (common "
                              "practice: about {pressure~:550000.0})", 550e3, "550 kPa")
    min_velocity: float = key("velocity>=0", "least velocity (0: off)", 0.0, "0 m/s")
    max_velocity: float = key("velocity>=0", "upper end even in fire flow (common practice)", 3.0,
                              "3 m/s")

    def _rules(self, t: _Table) -> ChecksConfig:
        if self.min_pressure > self.max_pressure:
            low = t.say("min_pressure") if "min_pressure" in t.raw else "checks.min_pressure (default 140 kPa)"
            high = t.say("max_pressure") if "max_pressure" in t.raw else "checks.max_pressure (default 550 kPa)"
            raise InputError(f"{t.file.name}: {low} is above {high}; no pressure could pass")
        if self.min_velocity and self.max_velocity and self.min_velocity > self.max_velocity:
            raise InputError(f"{t.say('min_velocity')}: above checks.max_velocity")
        return self


@dataclass(frozen=True)
class ValvesConfig:
    """[valves]: how air valves and drains are sited (AWWA M51 as recalled, from memory;
    common practice)."""

    interval: float = key("length>0", "longest run without an air valve ({length~:400.0} to {length~:800.0} is usual)",
                          500.0, "500 m")
    grade_change: float = key("grade>0", "a change of slope that needs a valve", 0.01, "1 %")
    flat_grade: float = key("grade>=0", "flatter runs are near-horizontal", 0.001, "0.1 %")
    flat_run: float = key("length>0", "a near-horizontal run this long gets valves at both ends",
                          100.0, "100 m")
    hgl_margin: float = key("length>=0", "the HGL this close above the pipe needs an air-vacuum "
                            "valve", 5.0, "5 m")
    merge_distance: float = key("length>=0", "valves closer than this are one", 20.0, "20 m")
    slope_window: float = key("length>=0", "grade breaks closer than this are one change of slope",
                              50.0, "50 m")


@dataclass(frozen=True)
class SurgeConfig:
    """[surge]: the surge screening (Joukowsky; a screening, not a transient analysis)."""

    restraint: str = key("text", "how the pipe is held lengthwise (Korteweg's factor): anchored "
                         "throughout (1 - nu^2), at its upstream end only (1 - nu/2) or free "
                         "(expansion joints, 1)", "anchored",
                         choices=("anchored", "upstream-anchor", "expansion-joints"))
    velocity_change: float | None = key("velocity>=0", "the velocity change of the fastest event "
                                        "(default: each scenario's flow stopped)", None)
    closure_time: float | None = key("time>=0", "how long the fastest valve closes (default: "
                                     "faster than the wave's return time 2L/a)", None)
    bulk_modulus: float | None = key("pressure>0", "water's bulk modulus (default: from the "
                                     "temperature)", None)


@dataclass(frozen=True)
class PressureElementConfig:
    """[[pressure_elements]]: a reducing valve, in-line booster or break tank at a station."""

    kind: str = key("text", "prv (pressure-reducing valve), booster or break-tank",
                    choices=("prv", "booster", "break-tank"))
    station: float = key("length", "station of the element")
    setting: float | None = key("pressure", "prv: the pressure just downstream; booster: the least "
                                "pressure it keeps downstream (its head solved)", None)
    head: float | None = key("length>=0", "booster: a fixed head added", None)
    level: float | None = key("length", "break-tank: its water level (default: the ground at the "
                              "station)", None)
    key: str = "pressure_elements[0]"

    def _rules(self, t: _Table) -> PressureElementConfig:
        given = {k for k in ("setting", "head", "level") if k in t.raw}
        allowed = {"prv": {"setting"}, "booster": {"setting", "head"}, "break-tank": {"level"}}
        extra = sorted(given - allowed[self.kind])
        if extra:
            raise InputError(f"{t.key(extra[0])}: not used with {t.key('kind')} = {self.kind!r}")
        if self.kind == "prv" and self.setting is None:
            raise t.missing("setting")
        if self.setting is not None and self.setting < 0:
            raise InputError(f"{t.say('setting')}: below atmospheric; a {self.kind} setting is a "
                             "gauge pressure above zero")
        if self.kind == "booster" and len(given) != 1:
            raise InputError(f"{t.file.name}: {t.name} needs exactly one of {t.key('head')} (a "
                             f"fixed head) or {t.key('setting')} (a pressure to keep)")
        return self


@dataclass(frozen=True)
class EnergyConfig:
    """[energy]: pumping energy, its cost and what a life-cycle comparison of sizes needs."""

    efficiency: float = key("dimensionless>0", "wire-to-water efficiency of the pumps (a fraction "
                            "or a percentage)", 0.7, 0.7)
    tariff: float | None = key("per_energy>=0", "price of energy, currency per kWh (e.g. "
                               "\"0.15 / kWh\")", None)
    currency: str = key("text", "the currency's label in the outputs", "", "")
    emission_factor: float | None = key("mass_per_energy>=0", "emissions per energy (e.g. "
                                        "\"0.4 kg/kWh\")", None)
    suction_head: float | None = key("length", "HGL on the suction side of a pump at the source "
                                     "(the source is pumped)", None)
    period: float | None = key("time>0", "the life-cycle comparison's period (e.g. \"30 years\")",
                               None)
    discount_rate: float | None = key("dimensionless>=0", "discount rate a year for the present "
                                      "value of energy (e.g. \"5 %\")", None)

    def _rules(self, t: _Table) -> EnergyConfig:
        if self.efficiency > 1:
            raise InputError(f"{t.say('efficiency')}: more than 100 %")
        if self.discount_rate is not None and self.discount_rate > 1:
            raise InputError(f"{t.say('discount_rate')}: more than 100 % a year (a bare number is "
                             "a fraction: 5 % is \"5 %\" or 0.05)")
        return self


@dataclass(frozen=True)
class SizeCandidateConfig:
    """[[size_candidates]]: a pipe size ``gisgrade sizes`` compares."""

    inside_diameter: float = key("length>0", "inside diameter")
    name: str | None = key("text", "its name in the outputs (default: the inside diameter)", None)
    outside_diameter: float | None = key("length>0", "outside diameter (default: inside + the "
                                         "project pipe's wall)", None)
    material: str | None = key("material", "pipe material (default: the project pipe's)", None)
    roughness: float | None = key("length>=0", "absolute roughness (default: the material's or "
                                  "the project pipe's)", None)
    pressure_rating: float | None = key("pressure>0", "rated working pressure (default: the "
                                        "project pipe's)", None)
    cost: float | None = key("per_length>=0", "capital cost per length laid (e.g. \"450 / m\")",
                             None)
    key: str = "size_candidates[0]"

    def _rules(self, t: _Table) -> SizeCandidateConfig:
        if self.outside_diameter is not None and self.outside_diameter < self.inside_diameter:
            raise InputError(f"{t.say('outside_diameter')}: smaller than {t.say('inside_diameter')}")
        if self.roughness is not None and self.roughness >= self.inside_diameter:
            raise InputError(f"{t.say('roughness')}: at or above {t.key('inside_diameter')}")
        return self


@dataclass(frozen=True)
class OutputConfig:
    """[output]: where and how results are written."""

    dir: Path | None = key("dir", "output folder (-o on the command line wins)", None)
    units: str = key("text", "units of what a person reads (console, summary, messages, "
                     "figures, report): SI, or US (psi, ft, gpm, ft/s)", "SI", choices=("SI", "US"))
    name: str | None = key("text", "project name for titles, sheets and the report (default: "
                           "the project file's folder and name)", None)
    crs: str | None = key("text", "CRS of the map layers, e.g. \"EPSG:2229\" (default: the "
                          "centerline's; GeoJSON and KML are always WGS 84)", None)
    sheet_length: float | None = key("length>0", "length of line on one profile sheet (default: "
                                     "what the paper holds at 1:5000, or 1 in = 400 ft in US)", None)
    sheet_overlap: float = key("length>=0", "line repeated from the sheet before", 50.0, "50 m")
    paper: str = key("text", "profile sheet paper, landscape", "A3",
                     choices=("A3", "A4", "A1", "tabloid", "letter", "arch-d"))

    def _rules(self, t: _Table) -> OutputConfig:
        if self.crs is not None:
            import pyproj

            try:
                pyproj.CRS.from_user_input(self.crs)
            except pyproj.exceptions.CRSError:
                raise InputError(f"{t.say('crs')}: not a coordinate reference system pyproj "
                                 "knows (e.g. \"EPSG:2229\")") from None
        if self.sheet_length is not None and self.sheet_overlap >= self.sheet_length / 2:
            raise InputError(f"{t.say('sheet_overlap')}: must be less than half of "
                             f"output.sheet_length")
        return self


@dataclass(frozen=True)
class CorridorsConfig:
    """[corridors]: the cost of a route cell by cell, for ``gisgrade corridors`` (docs/corridors.md).

    Costs are in metres of route: a step costs its length times (1 + the terms
    of the cells it joins); a crossing costs a length once. Defaults: common
    practice for screening, to be tuned to the place.
    """

    no_go: tuple = key("files", "polygon layers no route may enter", (), [])
    preferred: tuple = key("files", "road, easement or corridor layers a route may follow at a "
                           "discount (lines are widened by preferred_width)", (), [])
    preferred_width: float = key("length>0", "width of a preferred line's corridor", 20.0, "20 m")
    preferred_factor: float = key("dimensionless>0", "cost of a step inside a preferred corridor, "
                                  "times its cost elsewhere (at most 1)", 0.5, 0.5)
    crossing_cost: tuple = key("lengths", "cost of each crossing of a [[crossings]] layer's "
                               "feature, as route length: one for every layer, or a list with "
                               "one per [[crossings]] table", (200.0,), "200 m")
    steep_slope: float = key("dimensionless>=0", "ground slope a route crosses at no extra cost "
                             "(steeper: the pipe cannot follow the grade, or the trench runs "
                             "across a side slope)", 0.15, "15 %")
    steepness_weight: float = key("number>=0", "extra cost per metre for each 100 % of slope "
                                  "above steep_slope", 20.0, 20)
    roughness_window: float = key("length>0", "width of the window the ground's roughness is "
                                  "measured over", 30.0, "30 m")
    roughness_weight: float = key("per_length>=0", "extra cost per metre for each metre of "
                                  "roughness (expected excavation through bumps)", 0.5, "0.5 / m")
    hgl_weight: float = key("per_length>=0", "extra cost per metre for each metre of head the "
                            "flow from the source lacks for the minimum pressure (0: off)", 1.0,
                            "1 / m")
    resolution: float | None = key("length>0", "cell size of the cost grid (default: the "
                                   "DEM's, coarser when the window exceeds max_cells)", None)
    max_cells: float = key("number>0", "most cells in the cost grid", 4e6, 4000000)
    margin: float | None = key("length>=0", "DEM read around the points (default: half the "
                               "longest straight leg between them, at least {length.0:500.0})", None)
    k: float = key("number>0", "how many distinct candidate routes", 3.0, 3)
    separation: float = key("length>0", "routes closer than this share their length", 200.0,
                            "200 m")
    separation_factor: float = key("number>0", "cost near an earlier route, times its cost "
                                   "(at least 1)", 4.0, 4)
    max_shared: float = key("dimensionless>=0", "most of a route's length within separation of "
                            "an earlier route (the distinctness measure)", 0.5, "50 %")
    simplify_tolerance: float | None = key("length>=0", "Douglas-Peucker tolerance of the "
                                           "polylines (default: twice the cell size)", None)

    def _rules(self, t: _Table) -> CorridorsConfig:
        if self.preferred_factor > 1:
            raise InputError(f"{t.say('preferred_factor')}: a discount is at most 1")
        if self.separation_factor < 1:
            raise InputError(f"{t.say('separation_factor')}: must be at least 1")
        if self.max_shared > 1:
            raise InputError(f"{t.say('max_shared')}: a share is at most 100 %")
        if self.k != int(self.k):
            raise InputError(f"{t.say('k')}: expected a whole number of routes")
        if self.max_cells < 100:
            raise InputError(f"{t.say('max_cells')}: too few cells for a route")
        return self


def _section(cls, need: str = "optional", array: bool = False):
    """A [table] (or [[array of tables]]) of :class:`Project`: ``need`` ``always``,
    ``run`` (not for the ground profile alone) or ``optional`` (absent: the defaults)."""
    meta, default = dict(cls=cls, need=need, array=array), () if array else MISSING
    if need == "optional" and not array:
        return field(default_factory=cls, metadata=meta)
    return field(default=default, metadata=meta)


@dataclass(frozen=True)
class Project:
    path: Path
    alignment: AlignmentConfig = _section(AlignmentConfig, "always")
    terrain: TerrainConfig = _section(TerrainConfig, "always")
    pipe: PipeConfig | None = _section(PipeConfig, "run")
    cover: CoverConfig | None = _section(CoverConfig, "run")
    hydraulics: HydraulicsConfig | None = _section(HydraulicsConfig, "run")
    crossings: tuple[CrossingLayerConfig, ...] = _section(CrossingLayerConfig, array=True)
    cover_zones: tuple[CoverZoneConfig, ...] = _section(CoverZoneConfig, array=True)
    design: DesignConfig = _section(DesignConfig)
    checks: ChecksConfig = _section(ChecksConfig)
    valves: ValvesConfig = _section(ValvesConfig)
    sections: tuple[PipeSectionConfig, ...] = _section(PipeSectionConfig, array=True)
    fittings: tuple[FittingConfig, ...] = _section(FittingConfig, array=True)
    offtakes: tuple[OfftakeConfig, ...] = _section(OfftakeConfig, array=True)
    scenarios: tuple[ScenarioConfig, ...] = _section(ScenarioConfig, array=True)
    surge: SurgeConfig = _section(SurgeConfig)
    pressure_elements: tuple[PressureElementConfig, ...] = _section(PressureElementConfig,
                                                                     array=True)
    energy: EnergyConfig = _section(EnergyConfig)
    size_candidates: tuple[SizeCandidateConfig, ...] = _section(SizeCandidateConfig, array=True)
    output: OutputConfig = _section(OutputConfig)
    corridors: CorridorsConfig = _section(CorridorsConfig)

    @property
    def base_dir(self) -> Path:
        return self.path.parent

    def input_paths(self) -> list[Path]:
        """Every local file this project reads (for the never-overwrite check)."""
        layers = [*self.crossings, *self.cover_zones, *self.offtakes]
        paths = [self.path, self.alignment.path, *(c.path for c in layers if c.path)]
        paths += [*self.corridors.no_go, *self.corridors.preferred]
        return paths + [d for d in self.terrain.dem if isinstance(d, Path)]


# --------------------------------------------------------------------------
# The reader
# --------------------------------------------------------------------------


def load(path, *, ground_only: bool = False, problems: list | None = None) -> Project | None:
    """Read and check a project file; every error names the file and key.

    With ``ground_only`` (the ``profile`` command) the pipe, cover and
    hydraulics sections may be absent; if present they are still checked.
    With a list ``problems`` (``gisgrade check``), every problem is appended
    to it as an InputError instead of the first being raised: each bad key,
    each table's rules and unknown keys; returns None when the project
    cannot be built.

    >>> load("no-such-project.toml")
    Traceback (most recent call last):
    ...
    gisgrade.errors.InputError: no-such-project.toml: project file not found
    """
    file = Path(path)
    data = _read_toml(file)
    file = file.resolve()
    sections = {f.name: f.metadata for f in fields(Project) if "cls" in f.metadata}
    collect = _Collector(problems)
    for k in data:
        if k in sections:
            continue
        if not isinstance(data[k], (dict, list)):
            owner = next((f"[{n}]" for n, m in sections.items()
                          if k in [toml_name(f) for f in declared(m["cls"])]), "its table")
            collect.add(InputError(f"{file.name}: key {k} = {data[k]!r} sits above the first "
                                   f"[table], so it belongs to no section; move it under {owner}"))
        else:
            collect.add(InputError(f"{file.name}: unknown section [{k}]"
                                   f"{names.suggest(k, sections)}"))
    values = {}
    for name, m in sections.items():
        try:
            values[name] = _read_section(m, data, name, file, ground_only, collect)
        except (InputError, _Skip) as exc:
            collect.add(exc)
            values[name] = _Skip
    if any(v is _Skip for v in values.values()) or collect.seen:
        return None
    project = Project(path=file, **values)
    try:
        _check_hydraulic_cases(project)
    except InputError as exc:
        collect.add(exc)
    return project


class _Skip(Exception):
    """A table whose problems are already collected: leave it out."""


class _Collector:
    """Raises the first problem, or (given a list) gathers them all."""

    def __init__(self, problems):
        self.problems, self.seen = problems, 0

    def add(self, exc):
        if isinstance(exc, _Skip):
            return
        if self.problems is None:
            raise exc
        self.problems.append(exc)
        self.seen += 1


#: What a byte-order mark at the start of a file is.
_BOM = b"\xef\xbb\xbf"


def _read_toml(file: Path) -> dict:
    """The TOML of ``file``; a byte-order mark or bad TOML said plainly."""
    if not file.is_file():
        raise InputError(f"{file}: project file not found")
    try:
        raw = file.read_bytes()
    except OSError as exc:
        raise InputError(f"{file.name}: cannot read ({exc})") from None
    if raw.startswith(_BOM):
        raise InputError(f"{file.name}: starts with a UTF-8 byte-order mark (BOM), which TOML does "
                         "not allow; save the file as UTF-8 without BOM")
    try:
        return tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError as exc:
        raise InputError(f"{file.name}: not UTF-8 text (byte {exc.start}); save it as UTF-8") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{file.name}: not valid TOML ({exc})") from None


def _read_section(m: dict, data: dict, name: str, file: Path, ground_only: bool, collect=None):
    """Section ``name`` of ``data``, a table or an array of tables (``m``: its field's metadata)."""
    collect = collect or _Collector(None)
    if m["array"]:
        raw = data.get(name, [])
        raw = [raw] if isinstance(raw, dict) else raw
        if not isinstance(raw, list):
            raise InputError(f"{file.name}: [[{name}]] must be a list of tables")
        out, bad = [], False
        for i, tab in enumerate(raw):
            try:
                out.append(read_table(m["cls"], tab, f"{name}[{i}]", file, collect))
            except (InputError, _Skip) as exc:
                collect.add(exc)
                bad = True
        if bad:
            raise _Skip()
        return tuple(out)
    if name in data:
        return read_table(m["cls"], data[name], name, file, collect)
    if m["need"] == "always" or (m["need"] == "run" and not ground_only):
        raise InputError(f"{file.name}: missing required section [{name}]")
    return None if m["need"] == "run" else m["cls"]()


class _Table:
    """One TOML table being read: its name (``pipe``, ``crossings[0]``), raw values and file."""

    def __init__(self, raw: dict, name: str, file: Path):
        self.raw, self.name, self.file = raw, name, file

    def key(self, key: str) -> str:
        return f"{self.name}.{key}"

    def say(self, key: str) -> str:
        """The key as written, for messages: ``pipe.outside_diameter = '200 mm'``."""
        return f"{self.key(key)} = {self.raw[key]!r}"

    def missing(self, key: str) -> InputError:
        near = names.closest(key, self.raw)
        hint = f" (is {self.key(near)} a typo for it?)" if near else ""
        return InputError(f"{self.file.name}: missing required key {self.key(key)}{hint}")


def declared(cls, raw=None) -> list:
    """The fields of ``cls`` that are project-file keys: all of them, or those
    of the shape table ``raw`` has, in reading order."""
    keys = {f.name: f for f in fields(cls) if "kind" in f.metadata}
    for selector, shape in getattr(cls, "_variants", ()) if raw is not None else ():
        if selector is None or selector in raw:
            return [keys[name] for name in shape]
    return list(keys.values())


def toml_name(f) -> str:
    """A declared field's key in the project file."""
    return f.metadata["toml"] or f.name


def read_table(cls, raw, name: str, file: Path, collect=None):
    """Read one TOML table ``raw`` (``name`` in messages) into ``cls`` from its
    declared keys: each value checked and converted, then its rules.
    ``collect`` (a :class:`_Collector` gathering every problem): each bad key
    and unknown key is added to it, and the table left out."""
    collect = collect or _Collector(None)
    if not isinstance(raw, dict):
        raise InputError(f"{file.name}: [{name}] must be a table of keys")
    t, keys, values, bad = _Table(raw, name, file), declared(cls, raw), {}, 0
    known = [toml_name(f) for f in keys]
    for f in keys:
        try:
            if toml_name(f) in raw:
                values[f.name] = _value(f.metadata, raw[toml_name(f)], t.key(toml_name(f)),
                                        file.parent)
            elif f.metadata["required"]:
                raise t.missing(toml_name(f))
        except InputError as exc:
            collect.add(exc)
            bad += 1
    if bad:
        for k in sorted(set(raw) - set(known)):
            collect.add(InputError(f"{file.name}: unknown key {t.key(k)}{names.suggest(k, known)}"))
        raise _Skip()
    one_of = getattr(cls, "_one_of", None)
    if one_of and (one_of[0][0] in raw) == (one_of[1][0] in raw):
        (a, what_a), (b, what_b) = one_of
        raise InputError(f"{file.name}: {name} needs exactly one of {t.key(a)} ({what_a}) or "
                         f"{t.key(b)} ({what_b})")
    cfg = cls(**values, **({"key": name} if "key" in cls.__dataclass_fields__ else {}))
    try:
        cfg = cfg._rules(t) if hasattr(cfg, "_rules") else cfg
    except InputError as exc:
        collect.add(exc)
        bad += 1
    for k in sorted(set(raw) - set(known)):
        collect.add(InputError(f"{file.name}: unknown key {t.key(k)}{names.suggest(k, known)}"))
        bad += 1
    if bad:
        raise _Skip()
    return cfg


def _value(m: dict, value, key: str, base: Path):
    """One key's ``value`` read as its declaration ``m`` says (:func:`key`);
    ``key`` is its full name for messages, ``base`` the folder paths are read from.

    Besides the kinds of :func:`key`: ``feature`` (a whole number), ``dem``
    and ``accuracy`` (:func:`_terrain`), ``angles`` (:func:`_angles`), ``unit``
    (a length unit, as metres per unit) and the names ``flow_unit``,
    ``vertical_unit``, ``material`` and ``fitting`` (:func:`_text`).
    """
    kind, sign = m["kind"], m["sign"]
    if kind in QUANTITIES:
        return _quantity(value, kind, key, sign)
    if kind == "grade":
        return _grade(value, key, sign)
    if kind == "number":
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise InputError(f"{key} = {value!r}: expected a plain number")
        if not math.isfinite(value) or (sign == ">0" and value <= 0):
            raise InputError(f"{key} = {value!r}: must be a finite number above zero")
        if sign == ">=0" and value < 0:
            raise InputError(f"{key} = {float(value)!r}: must not be negative")
        return float(value)
    if kind == "bool" and not isinstance(value, bool):
        raise InputError(f"{key} = {value!r}: expected true or false")
    if kind == "feature" and (isinstance(value, bool) or not isinstance(value, int)):
        raise InputError(f"{key} = {value!r}: expected a whole-number feature id")
    if kind in ("bool", "feature"):
        return value
    if kind in ("file", "dir"):
        return _path(value, key, base, must_exist=kind == "file")
    if kind in ("dem", "accuracy"):
        return _terrain(kind, value, key, base)
    if kind in ("files", "lengths"):
        return _list(kind, value, key, base)
    return _angles(value, key) if kind == "angles" else _text(kind, value, key, m["choices"])


def _quantity(value, kind: str, key: str, sign=None) -> float:
    """A quantity string in SI, finite and within ``sign`` (``>0``, ``>=0``)."""
    from .units import parse_quantity
    out = parse_quantity(value, kind, key)
    if not math.isfinite(out):
        raise InputError(f"{key} = {value!r}: must be finite")
    if sign == ">0" and out <= 0:
        raise InputError(f"{key} = {value!r}: must be greater than zero")
    if sign == ">=0" and out < 0:
        raise InputError(f"{key} = {value!r}: must not be negative")
    return out


def _grade(value, key: str, sign=None) -> float:
    """A grade or slope with its unit ("0.5 %", "0.005 m/m", "2 percent"), as a
    fraction, at most 100 % (a bare number is refused: 0.5 could mean 0.5 %)."""
    if isinstance(value, bool) or not isinstance(value, str):
        raise InputError(f"{key} = {value!r}: a grade needs its unit, e.g. {key} = \"0.5 %\" "
                         "or \"0.005 m/m\" (a bare number could be a fraction or a percentage)")
    out = _quantity(value, "dimensionless", key, sign)
    if out > 1.0:
        raise InputError(f"{key} = {value!r}: a grade above 100 % (45 deg) is not a pipe grade")
    return out


def _path(value, key: str, base: Path, must_exist: bool) -> Path:
    """A path; a relative one is read from ``base``, the project file's folder."""
    if not isinstance(value, str) or not value.strip():
        raise InputError(f"{key} = {value!r}: expected a file path as text")
    path = Path(value).expanduser()
    path = path if path.is_absolute() else base / path
    if must_exist and not path.exists():
        raise InputError(f"{key} = {value!r}: file not found ({path})")
    return path


def _terrain(kind: str, value, key: str, base: Path):
    """terrain.dem: the DEM files, in overlap priority; terrain.vertical_accuracy:
    m RMSE, a length or the typical RMSE of a DEM kind."""
    from . import terrain
    if kind == "dem":
        return tuple(terrain.resolve_dem_paths(value, base, key))
    kinds = terrain.VERTICAL_ACCURACY_BY_KIND
    if isinstance(value, str) and value.strip().lower() in kinds:
        return kinds[value.strip().lower()]
    try:
        return _quantity(value, "length", key, ">=0")
    except InputError as exc:
        raise InputError(f"{exc} (or a DEM kind: {', '.join(kinds)})") from None


def _list(kind: str, value, key: str, base: Path) -> tuple:
    """``files``: a list of existing paths (one path alone is a list of one);
    ``lengths``: a length, or a list of lengths (each >= 0), in m."""
    items = value if isinstance(value, list) else [value]
    if kind == "files":
        return tuple(_path(v, f"{key}[{i}]" if isinstance(value, list) else key, base, True)
                     for i, v in enumerate(items))
    if not items:
        raise InputError(f"{key} = {value!r}: expected a length or a list of them")
    return tuple(_quantity(v, "length", key, ">=0") for v in items)


def _angles(value, key: str) -> tuple:
    """design.bend_angles: angles above 0 and at most 90 deg, in rad, sorted."""
    from .units import parse_quantity
    if not isinstance(value, list) or not value:
        raise InputError(f"{key} = {value!r}: expected a list such as "
                         "[\"11.25 deg\", \"22.5 deg\", \"45 deg\", \"90 deg\"]")
    angles = tuple(sorted(parse_quantity(a, "angle", key) for a in value))
    if not all(0 < a <= math.pi / 2 + 1e-12 for a in angles):
        raise InputError(f"{key} = {value!r}: each angle must be above 0 and at most 90 deg")
    return angles


def _text(kind: str, value, key: str, choices=()):
    """Text, stripped: with ``choices``, the one it names in any letter case; a
    ``unit`` as metres per unit; a known name of the kind it is."""
    from .units import parse_quantity
    if not isinstance(value, str) or not value.strip():
        raise InputError(f"{key} = {value!r}: expected a text value")
    text, low = value.strip(), [c.lower() for c in choices]
    if choices and text.lower() not in low:
        raise InputError(f"{key} = {value!r}: expected one of {', '.join(low)}"
                         f"{names.suggest(text.lower(), low)}")
    if choices:
        return choices[low.index(text.lower())]
    if kind == "unit":
        try:
            return parse_quantity(f"1 {text}", "length", key)
        except InputError:
            raise InputError(f"{key} = {text!r}: expected a length unit, e.g. \"m\" or "
                             "\"ft\"") from None
    if kind == "flow_unit":
        parse_quantity(f"1 {text}", "flow", key)
    elif kind == "vertical_unit":
        from .terrain import vertical_unit_factor
        vertical_unit_factor(text, key)
    elif kind == "material":
        from .hydraulics.materials import material
        material(text, key)
    return text


def _check_hydraulic_cases(p: Project) -> None:
    """Cross-section rules of the hydraulic keys (one line naming the key)."""
    scenario_names = [sc.name for sc in p.scenarios]
    dup = sorted({n for n in scenario_names if scenario_names.count(n) > 1})
    if dup:
        raise InputError(f"{p.path.name}: scenario name {dup[0]!r} given twice in [[scenarios]]")
    hyd = p.hydraulics
    if hyd is None:
        return
    hours = sum(sc.hours_per_year or 0.0 for sc in p.scenarios)
    if hours > 8766 * 3600 * (1 + 1e-9):  # a year of 365.25 days
        raise InputError(f"{p.path.name}: the scenarios' hours_per_year add up to "
                         f"{hours / 3600:.0f} h, more than a year")
    if hyd.boundary == "two-heads":
        if p.pressure_elements:
            raise InputError(f"{p.path.name}: [[pressure_elements]] cannot be used with "
                             "hydraulics.boundary = \"two-heads\" (the flow would depend on them)")
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


# --------------------------------------------------------------------------
# The JSON Schema
# --------------------------------------------------------------------------

_NUMBER = r"(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?(?![eE][-+]?\d)"  # "1e3" has no unit
_UNIT = r"[A-Za-z%°µ/][A-Za-z0-9_%°µ*/^.() -]*"  # "/" first: a price, "0.15 / kWh"
_TEXT = {"type": "string", "pattern": r"\S"}


def project_schema(*, ground_only: bool = False) -> dict:
    """The project file's JSON Schema (draft 2020-12), made from the declarations.

    Each section's keys and no others, the required ones, each key's doc and
    its default as written. A quantity is a number then a unit; a name is in
    its documented spelling (the reader also takes other cases). Rules
    between keys are the reader's alone. ``ground_only`` as for :func:`load`.

    >>> design = project_schema()["properties"]["design"]["properties"]
    >>> design["joint_length"]["default"], design["joint_length"]["description"]
    ('6 m', 'length of one pipe joint')
    """
    props, required = {}, []
    for f in fields(Project):
        if "cls" in f.metadata:
            m, table = f.metadata, _table_schema(f.metadata["cls"])
            props[f.name] = ({"type": "array", "description": table["description"],
                              "items": table} if m["array"] else table)
            if m["need"] == "always" or (m["need"] == "run" and not ground_only):
                required.append(f.name)
    return {"$schema": "https://json-schema.org/draft/2020-12/schema",
            "$id": "urn:gisgrade:project-file" + (":ground" if ground_only else ""),
            "title": "gisgrade project file",
            "description": "One TOML file that drives a gisgrade run. Every dimensional value is "
                           "a string with its unit; relative paths are read from its folder.",
            "type": "object", "properties": props, "required": required,
            "additionalProperties": False}


def _table_schema(cls) -> dict:
    """One section's schema: its declared keys, the required ones, no others."""
    def shape(keys) -> dict:
        return {"properties": {toml_name(f): _key_schema(f) for f in keys},
                "required": [toml_name(f) for f in keys if f.metadata["required"]],
                "additionalProperties": False}

    out = {"type": "object", "description": cls.__doc__.strip().splitlines()[0]}
    if hasattr(cls, "_variants"):  # one shape or the other
        out["oneOf"] = [shape(declared(cls, [sel] if sel else ())) for sel, _ in cls._variants]
    else:
        out.update(shape(declared(cls)))
    if hasattr(cls, "_one_of"):
        out["oneOf"] = [{"required": [name]} for name, _ in cls._one_of]
    return out


def _key_schema(f) -> dict:
    """One key's schema: its doc, its value's form and its default as written."""
    default = f.default if f.metadata["shown"] is None else f.metadata["shown"]
    shown = {} if default is None or default is MISSING else {"default": default}
    from .display import Display

    return {"description": Display().render(f.metadata["doc"]), **_value_schema(f.metadata),
            **shown}


def _quantity_schema(sign=None, unit: str = "") -> dict:
    """A number (no minus where it may not be negative), then a unit (``unit="?"``: optional)."""
    lead = r"\+?" if sign else "[-+]?"
    return {"type": "string", "pattern": rf"^\s*{lead}{_NUMBER}\s*({_UNIT}){unit}$"}


def _value_schema(m: dict) -> dict:
    """The schema of one key's value, from its declaration ``m``."""
    from .hydraulics.materials import MATERIALS
    from .hydraulics.minor import NAMED_K
    from .terrain import VERTICAL_ACCURACY_BY_KIND, VERTICAL_UNITS
    kind, sign = m["kind"], m["sign"]
    bound = {">0": {"exclusiveMinimum": 0}, ">=0": {"minimum": 0}}.get(sign, {})
    if kind == "dimensionless":  # a plain number, or a number and an optional unit ("0.1 %")
        return {**_quantity_schema(sign, "?"), "type": ["number", "string"], **bound}
    if kind == "grade":  # a number and its unit ("0.1 %", "0.001 m/m")
        return _quantity_schema(sign)
    if kind in QUANTITIES:
        return _quantity_schema(sign)
    if kind in ("number", "bool", "feature"):
        return {"type": {"bool": "boolean", "feature": "integer"}.get(kind, "number"), **bound}
    if kind == "dem":
        return {"anyOf": [_TEXT, {"type": "array", "minItems": 1, "items": _TEXT}]}
    if kind == "angles":
        return {"type": "array", "minItems": 1, "items": _quantity_schema(">0")}
    if kind == "files":
        return {"anyOf": [_TEXT, {"type": "array", "items": _TEXT}]}
    if kind == "lengths":
        return {"anyOf": [_quantity_schema(">=0"),
                          {"type": "array", "minItems": 1, "items": _quantity_schema(">=0")}]}
    if kind == "accuracy":
        return {"anyOf": [_quantity_schema(">=0"), {"enum": list(VERTICAL_ACCURACY_BY_KIND)}]}
    if kind in ("unit", "flow_unit"):
        return {"type": "string", "pattern": rf"^\s*{_UNIT}$"}
    known = {"vertical_unit": VERTICAL_UNITS, "material": MATERIALS, "fitting": NAMED_K}
    choices = m["choices"] or sorted(known.get(kind, ()))
    return {"type": "string", "enum": list(choices)} if choices else dict(_TEXT)
