"""The project file: units, required keys, unknown keys with a hint, its JSON Schema.

Unit conversions are checked against definitions published outside the
project: the international foot (0.3048 m exactly) and the US survey foot
(1200/3937 m) from NIST SP 811 (2008) App. B; the US gallon (3.785411784 L
exactly) from NIST Handbook 44 App. C; degC to K offset 273.15 (SI Brochure,
9th ed., 2019). The JSON Schema is checked by the jsonschema library against
the JSON Schema 2020-12 specification, and against the keys and defaults the
README's project-file block documents.
"""
import copy
import json
import math
import re
import tomllib
from dataclasses import MISSING, fields
from pathlib import Path

import jsonschema
import pytest

from conftest import BASE, CROSSING_X, DEMO, PROJECT
from gisgrade import project as pj
from gisgrade.errors import InputError
from gisgrade.project import load, project_schema
from gisgrade.units import parse_quantity


@pytest.mark.parametrize("text, kind, expected", [
    ("12 in", "length", 12 * 0.0254),                 # NIST SP 811: 1 in = 0.0254 m exactly
    ("4 ft", "length", 4 * 0.3048),                   # NIST SP 811: 1 ft = 0.3048 m exactly
    ("1 survey_foot", "length", 1200 / 3937),         # NIST SP 811: US survey foot
    ("1200 gpm", "flow", 1200 * 3.785411784e-3 / 60),  # NIST HB 44: 1 gal = 3.785411784 L
    ("80 L/s", "flow", 0.080),
    ("15 degC", "temperature", 288.15),               # SI Brochure: T/K = t/degC + 273.15
    ("20 psi", "pressure", 20 * 6894.757293168361),   # NIST SP 811: 1 psi = 6.894757 kPa
])
def test_quantities_convert_to_si(text, kind, expected):
    assert math.isclose(parse_quantity(text, kind, "k"), expected, rel_tol=1e-12)


def replace(path, old, new):
    text = path.read_text()
    assert old in text
    path.write_text(text.replace(old, new))


@pytest.mark.parametrize("old, new, words", [
    ('spacing = "10 m"', "spacing = 10", ["alignment.spacing", "units"]),
    ('minimum = "1.2 m"', 'minimum = "1.2 furlongz"', ["cover.minimum", "furlongz"]),
    ('flow = "50 L/s"', 'flow = "50 m"', ["hydraulics.flow", "flow"]),
    ('roughness = "0.1 mm"', 'roughnes = "0.1 mm"', ["pipe.roughnes", "roughness"]),
    ('inside_diameter = "300 mm"\n', "", ["pipe.inside_diameter", "missing"]),
    ('temperature = "15 degC"', 'temperature = "90 degC"', ["hydraulics.temperature", "0-40"]),
    ('outside_diameter = "320 mm"', 'outside_diameter = "200 mm"', ["pipe.outside_diameter"]),
    ('friction = "darcy-weisbach"', 'friction = "manning"', ["pipe.friction", "manning"]),
    ('dem = "dem.tif"', 'dem = "nowhere.tif"', ["terrain.dem", "nowhere.tif"]),
    ("[cover]", "[covers]", ["covers", "cover"]),
])
def test_bad_keys_name_the_culprit(flat_project, old, new, words):
    replace(flat_project, old, new)
    with pytest.raises(InputError) as err:
        load(flat_project)
    message = str(err.value)
    assert "\n" not in message
    for w in words:
        assert w in message


def test_paths_resolve_against_the_project_folder(flat_project, monkeypatch, tmp_path_factory):
    monkeypatch.chdir(tmp_path_factory.mktemp("elsewhere"))
    project = load(flat_project)
    assert project.terrain.dem[0] == flat_project.parent / "dem.tif"
    assert project.pipe.inside_diameter == pytest.approx(0.3)


# --------------------------------------------------------------------------
# The project file's JSON Schema, checked by an independent validator: the
# jsonschema library (Draft202012Validator) against the JSON Schema 2020-12
# specification and its meta-schema. The documented keys and defaults come
# from the README's project-file block.
# --------------------------------------------------------------------------

README = Path(__file__).resolve().parents[1] / "README.md"

#: Every key today's reader accepts, by section, as the README's project-file
#: block sets or names them in its comments (layer, feature, hazen_williams_c,
#: material, minimum_field, ...). crossings.width and the roughness,
#: hazen_williams_c and pressure_rating of [[sections]] are read too, though
#: the block does not spell them out.
TODAY = {
    "alignment": "path spacing layer reverse where feature start_station route_field",
    "terrain": "dem vertical_unit method max_gap vertical_accuracy",
    "pipe": "inside_diameter outside_diameter friction roughness hazen_williams_c material "
            "pressure_rating wall_thickness elastic_modulus poisson_ratio wave_speed surge_allowance",
    "cover": "minimum maximum",
    "cover_zones": "path layer minimum maximum minimum_field maximum_field field_unit",
    "crossings": "path bottom_field depth_field size_field size clearance side width_field width "
                 "field_unit layer",
    "design": "joint_length max_joint_deflection bend_angles min_grade max_grade trench_width "
              "grade_break_cost high_point_tolerance curve_joints",
    "valves": "interval grade_change flat_grade flat_run hgl_margin merge_distance slope_window",
    "hydraulics": "source_head flow temperature start entrance end boundary end_head "
                  "required_pressure required_at",
    "scenarios": "name multiplier flow show_egl fire_flow fire_station hours_per_year",
    "sections": "from to inside_diameter outside_diameter material roughness hazen_williams_c "
                "pressure_rating wall_thickness elastic_modulus poisson_ratio wave_speed "
                "surge_allowance",
    "surge": "restraint velocity_change closure_time bulk_modulus",
    "pressure_elements": "kind station setting head level",
    "energy": "efficiency tariff currency emission_factor suction_head period discount_rate",
    "size_candidates": "name inside_diameter outside_diameter material roughness pressure_rating "
                       "cost",
    "fittings": "station kind k",
    "offtakes": "station flow path flow_field flow_unit layer",
    "checks": "min_pressure max_pressure min_velocity max_velocity",
    "output": "dir units name crs sheet_length sheet_overlap paper",
    "corridors": "no_go preferred preferred_width preferred_factor crossing_cost steep_slope "
                 "steepness_weight roughness_window roughness_weight hgl_weight resolution "
                 "max_cells margin k separation separation_factor max_shared simplify_tolerance",
}

#: Defaults the README's project-file block states: those it calls the
#: default, and the [design] and [checks] values it gives as the (common
#: practice) defaults.
README_DEFAULTS = {
    ("cover_zones", "field_unit"): "m", ("hydraulics", "start"): "main",
    ("hydraulics", "end"): "open", ("design", "joint_length"): "6 m",
    ("design", "max_joint_deflection"): "3 deg",
    ("design", "bend_angles"): ["11.25 deg", "22.5 deg", "45 deg", "90 deg"],
    ("checks", "min_pressure"): "140 kPa", ("checks", "max_pressure"): "550 kPa",
    ("checks", "min_velocity"): "0 m/s", ("checks", "max_velocity"): "3 m/s",
    ("design", "grade_break_cost"): "10 m3", ("design", "curve_joints"): 3,
    ("valves", "interval"): "500 m", ("valves", "grade_change"): "1 %",
    ("valves", "flat_grade"): "0.1 %", ("valves", "flat_run"): "100 m",
    ("valves", "hgl_margin"): "5 m", ("valves", "merge_distance"): "20 m",
    ("valves", "slope_window"): "50 m",
    ("surge", "restraint"): "anchored", ("energy", "efficiency"): 0.7,
    ("output", "units"): "SI", ("output", "sheet_overlap"): "50 m", ("output", "paper"): "A3",
    ("corridors", "preferred_width"): "20 m", ("corridors", "preferred_factor"): 0.5,
    ("corridors", "crossing_cost"): "200 m", ("corridors", "steep_slope"): "15 %",
    ("corridors", "steepness_weight"): 20, ("corridors", "roughness_window"): "30 m",
    ("corridors", "roughness_weight"): "0.5 / m", ("corridors", "hgl_weight"): "1 / m",
    ("corridors", "max_cells"): 4000000, ("corridors", "k"): 3,
    ("corridors", "separation"): "200 m", ("corridors", "separation_factor"): 4,
    ("corridors", "max_shared"): "50 %",
}

#: A table for every section (two where a section has two shapes or an
#: "exactly one of"), together setting every key; the paths exist in the
#: flat_project folder.
FULL = {
    "alignment": [{"path": "line.geojson", "spacing": "10 m", "layer": "L", "reverse": False,
                   "where": "name = 'A'", "start_station": "5 m", "route_field": "name"},
                  {"path": "line.geojson", "spacing": "10 m", "feature": 0}],  # one of the two
    "terrain": [{"dem": ["dem.tif"], "vertical_unit": "ft", "method": "bicubic",
                 "max_gap": "30 m", "vertical_accuracy": "lidar"}],
    "pipe": [{"inside_diameter": "300 mm", "outside_diameter": "320 mm",
              "friction": "hazen-williams", "roughness": "0.1 mm", "hazen_williams_c": 130,
              "material": "pvc", "pressure_rating": "1.6 MPa", "wall_thickness": "10 mm",
              "elastic_modulus": "3 GPa", "poisson_ratio": 0.4, "wave_speed": "450 m/s",
              "surge_allowance": "0.5 MPa"}],
    "cover": [{"minimum": "1.2 m", "maximum": "4 m"}],
    "cover_zones": [{"path": "line.geojson", "layer": "z", "minimum": "1.8 m", "maximum": "5 m",
                     "minimum_field": "a", "maximum_field": "b", "field_unit": "ft"}],
    "crossings": [{"path": "line.geojson", "bottom_field": "b", "clearance": "0.3 m",
                   "size_field": "s", "size": "0.5 m", "side": "over", "width_field": "w",
                   "width": "2 m", "field_unit": "ft", "layer": "c"},
                  {"path": "line.geojson", "depth_field": "d", "clearance": "18 in"}],
    "design": [{"joint_length": "5.5 m", "max_joint_deflection": "4 deg",
                "bend_angles": ["45 deg", "90 deg"], "min_grade": "0.1 %", "max_grade": "25 %",
                "trench_width": "0.9 m", "grade_break_cost": "5 m3", "high_point_tolerance": "0.5 m",
                "curve_joints": 2}],
    "valves": [{"interval": "0.25 mi", "grade_change": "2 %", "flat_grade": "0.2 %",
                "flat_run": "300 ft", "hgl_margin": "3 m", "merge_distance": "10 m",
                "slope_window": "40 m"}],
    "hydraulics": [{"source_head": "185 m", "flow": "60 L/s", "temperature": "12 degC",
                    "start": "tank", "entrance": "rounded", "end": "tank",
                    "boundary": "min-pressure", "required_pressure": "200 kPa",
                    "required_at": "end"},
                   {"source_head": "185 m", "boundary": "two-heads", "end": "tank",
                    "end_head": "150 m"}],  # end_head only with two heads (and no scenarios)
    "scenarios": [{"name": "fire", "multiplier": 1.5, "show_egl": False, "fire_flow": "63 L/s",
                   "fire_station": "500 m", "hours_per_year": "10 h"},
                  {"name": "peak", "flow": "95 L/s"}],
    "sections": [{"from": "300 m", "to": "580 m", "inside_diameter": "250 mm",
                  "outside_diameter": "274 mm", "roughness": "0.05 mm", "hazen_williams_c": 140,
                  "pressure_rating": "1 MPa", "material": "hdpe", "wall_thickness": "12 mm",
                  "elastic_modulus": "1 GPa", "poisson_ratio": 0.46, "wave_speed": "300 m/s",
                  "surge_allowance": "0.3 MPa"}],
    "surge": [{"restraint": "expansion-joints", "velocity_change": "1 m/s",
               "closure_time": "30 s", "bulk_modulus": "2.2 GPa"}],
    "pressure_elements": [{"kind": "prv", "station": "400 m", "setting": "300 kPa"},
                          {"kind": "booster", "station": "600 m", "head": "10 m"},
                          {"kind": "break-tank", "station": "700 m", "level": "150 m"}],
    "energy": [{"efficiency": "72 %", "tariff": "0.15 / kWh", "currency": "EUR",
                "emission_factor": "0.4 kg/kWh", "suction_head": "120 m", "period": "30 years",
                "discount_rate": "5 %"}],
    "size_candidates": [{"name": "DN250", "inside_diameter": "250 mm",
                         "outside_diameter": "274 mm", "material": "pvc", "roughness": "0.01 mm",
                         "pressure_rating": "1 MPa", "cost": "300 / m"}],
    "fittings": [{"station": "100 m", "kind": "gate_valve_open"}, {"station": "200 m", "k": 0.3}],
    "offtakes": [{"station": "250 m", "flow": "10 L/s"},
                 {"path": "line.geojson", "flow_field": "q", "flow_unit": "gpm", "layer": "p"}],
    "checks": [{"min_pressure": "20 psi", "max_pressure": "80 psi", "min_velocity": "0.3 m/s",
                "max_velocity": "10 ft/s"}],
    "output": [{"dir": "out", "units": "US", "name": "Test main", "crs": "EPSG:2229",
                "sheet_length": "2000 ft", "sheet_overlap": "100 ft", "paper": "tabloid"}],
    "corridors": [{"no_go": ["line.geojson"], "preferred": ["line.geojson"],
                   "preferred_width": "10 m", "preferred_factor": 0.6,
                   "crossing_cost": ["100 m", "50 m"], "steep_slope": "20 %",
                   "steepness_weight": 10, "roughness_window": "40 m",
                   "roughness_weight": "1 / m", "hgl_weight": "2 / m", "resolution": "20 m",
                   "max_cells": 1000000, "margin": "1 km", "k": 4, "separation": "150 m",
                   "separation_factor": 3, "max_shared": "40 %", "simplify_tolerance": "5 m"}],
}

ARRAYS = {"cover_zones", "crossings", "scenarios", "sections", "fittings", "offtakes",
          "pressure_elements", "size_candidates"}


def validator(**kw):
    return jsonschema.Draft202012Validator(project_schema(**kw))


def full_project():
    """FULL as one project file's data (the first table of a one-table section)."""
    return {name: copy.deepcopy(tables if name in ARRAYS else tables[0])
            for name, tables in FULL.items()}


def readme_block() -> dict:
    text = README.read_text()
    return tomllib.loads(re.search(r"```toml\n(.*?)```", text, re.S).group(1))


def schema_tables(schema):
    """(section, table schema) for each section of the project schema."""
    for name, prop in schema["properties"].items():
        yield name, prop.get("items", prop)


def schema_keys(table) -> set:
    """The keys a table schema allows, over all its shapes."""
    keys = set(table.get("properties", {}))
    for shape in table.get("oneOf", []):
        keys |= set(shape.get("properties", {}))
    return keys


def declared_classes():
    return {f.name: f.metadata["cls"] for f in fields(pj.Project) if "cls" in f.metadata}


def test_schema_is_a_valid_2020_12_schema():
    # The meta-schema of JSON Schema draft 2020-12, as shipped with jsonschema.
    schema = project_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    jsonschema.Draft202012Validator.check_schema(schema)
    jsonschema.Draft202012Validator.check_schema(project_schema(ground_only=True))


@pytest.mark.parametrize("name, data", [
    ("demo", lambda: tomllib.loads((DEMO / "project.toml").read_text())),
    ("conftest PROJECT", lambda: tomllib.loads(PROJECT)),
    ("conftest BASE + CROSSING_X", lambda: tomllib.loads(BASE + CROSSING_X)),
    ("README block", readme_block),
    ("every key", full_project),
])
def test_projects_validate_against_the_schema(name, data):
    errors = [f"{e.json_path}: {e.message}" for e in validator().iter_errors(data())]
    assert errors == [], name


def write_toml(path, data: dict) -> None:
    """Write project data as TOML (strings, numbers, booleans and lists of them)."""
    lines = []
    for name, value in data.items():
        for table in value if isinstance(value, list) else [value]:
            lines.append(f"[[{name}]]" if isinstance(value, list) else f"[{name}]")
            lines += [f"{k} = {json.dumps(v)}" for k, v in table.items()]  # JSON values are TOML
    path.write_text("\n".join(lines) + "\n")


def test_every_key_project_loads(flat_project):
    # The reader takes the project the schema takes.
    write_toml(flat_project, full_project())
    assert tomllib.loads(flat_project.read_text()) == full_project()
    project = load(flat_project)
    assert project.terrain.vertical_unit == "ft" and project.output.units == "US"
    assert project.offtakes[1].flow_factor == pytest.approx(3.785411784e-3 / 60)  # NIST HB 44


def test_ground_only_schema_leaves_pipe_cover_hydraulics_optional():
    data = tomllib.loads((DEMO / "project.toml").read_text())
    for name in ("pipe", "cover", "hydraulics"):
        del data[name]
    assert validator(ground_only=True).is_valid(data)
    missing = {e.message for e in validator().iter_errors(data)}
    assert missing == {f"{name!r} is a required property" for name in ("pipe", "cover", "hydraulics")}


@pytest.mark.parametrize("old, new", [
    ('roughness = "0.1 mm"', 'roughnes = "0.1 mm"'),            # an unknown key
    ("[cover]", "[covers]"),                                    # an unknown section
    ('inside_diameter = "300 mm"\n', ""),                       # a missing required key
    ("[cover]\nminimum = \"1.2 m\"\n", ""),                     # a missing required section
    ('spacing = "10 m"', "spacing = 10"),                       # a bare number, no unit
    ('spacing = "10 m"', 'spacing = "10"'),                     # a bare number in a string
    ('minimum = "1.2 m"', 'minimum = "-1.2 m"'),                # negative where it may not be
    ('friction = "darcy-weisbach"', 'friction = "manning"'),    # an unknown choice
    ('dem = "dem.tif"', "dem = []"),                            # an empty list of DEMs
    ('flow = "50 L/s"', 'flow = "50 L/s"\nend = "river"'),      # an unknown choice
    ('roughness = "0.1 mm"', 'roughness = "0.1 mm"\nmaterial = "bronze"'),  # an unknown name
    ("", '[[crossings]]\npath = "line.geojson"\nclearance = "0.3 m"\n'),  # neither of two keys
    ("", '[[offtakes]]\npath = "line.geojson"\nflow_field = "q"\nstation = "5 m"\n'),  # 2 shapes
])
def test_schema_and_reader_both_refuse(flat_project, old, new):
    if old:
        replace(flat_project, old, new)
    else:
        flat_project.write_text(PROJECT + new)
    data = tomllib.loads(flat_project.read_text())
    assert not validator().is_valid(data)
    with pytest.raises(InputError):
        load(flat_project)


def test_schema_and_declarations_name_the_same_keys():
    schema, classes = project_schema(), declared_classes()
    assert set(schema["properties"]) == set(classes)
    for name, table in schema_tables(schema):
        assert schema_keys(table) == {pj.toml_name(f) for f in pj.declared(classes[name])}, name


def test_no_key_vanishes():
    # The README's documented keys (TODAY), the schema's and the declarations' agree.
    schema = {name: schema_keys(table) for name, table in schema_tables(project_schema())}
    assert schema == {name: set(keys.split()) for name, keys in TODAY.items()}
    assert set(FULL) == set(TODAY)
    for name, tables in FULL.items():  # FULL sets every key
        assert set().union(*tables) == set(TODAY[name].split()), name
    for name, table in readme_block().items():  # and the README block only known ones
        for t in table if isinstance(table, list) else [table]:
            assert set(t) <= schema[name], name


def test_every_schema_key_is_read(flat_project):
    # Each key the schema allows gets a value error naming it from the reader,
    # never "unknown key", when given a value of the wrong type.
    classes, file = declared_classes(), flat_project
    for name, table in schema_tables(project_schema()):
        for key in schema_keys(table):
            full = next(t for t in FULL[name] if key in t)
            where = f"{name}[0]" if name in ARRAYS else name
            with pytest.raises(InputError) as err:
                pj.read_table(classes[name], {**full, key: {}}, where, file)
            assert f"{where}.{key} = {{}}" in str(err.value), (name, key, str(err.value))
            assert "unknown key" not in str(err.value)


def test_defaults_round_trip():
    # The schema's default, read back by parse_quantity (or as text), is the
    # dataclass default; every key with a default shows it; and the defaults
    # the README documents are the schema's.
    schema = dict(schema_tables(project_schema()))
    for name, cls in declared_classes().items():
        for f in pj.declared(cls):
            kind, prop = f.metadata["kind"], schema[name]
            prop = {**prop.get("properties", {}), **{k: v for s in prop.get("oneOf", [])
                                                     for k, v in s.get("properties", {}).items()}}
            shown = prop[pj.toml_name(f)].get("default", MISSING)
            if f.default in (None, MISSING):
                assert shown is MISSING, (name, f.name)
            elif kind in pj.QUANTITIES or kind == "grade":
                unit_kind = "dimensionless" if kind == "grade" else kind
                assert parse_quantity(shown, unit_kind, f.name) == pytest.approx(f.default, rel=1e-15)
            elif kind == "angles":
                back = tuple(sorted(parse_quantity(a, "angle", f.name) for a in shown))
                assert back == pytest.approx(f.default, rel=1e-15)
            elif kind == "unit":
                assert parse_quantity(f"1 {shown}", "length", f.name) == f.default
            elif kind == "files":
                assert tuple(shown) == f.default, (name, f.name)
            elif kind == "lengths":
                assert (parse_quantity(shown, "length", f.name),) == f.default
            else:
                assert shown == f.default, (name, f.name)
    for (name, key), value in README_DEFAULTS.items():
        table = schema[name]
        props = table.get("properties") or {k: v for s in table["oneOf"]
                                            for k, v in s.get("properties", {}).items()}
        assert props[key]["default"] == value, (name, key)


@pytest.mark.parametrize("text, kind, ok", [
    # The README: "Every dimensional value is a string with its unit" ("300 mm",
    # "12 in", "80 L/s", "1200 gpm", "15 degC", "4 ft"); a bare number is refused.
    ("300 mm", "length", True), ("12 in", "length", True), ("80 L/s", "flow", True),
    ("1200 gpm", "flow", True), ("15 degC", "temperature", True), ("4 ft", "length", True),
    ("1.6 MPa", "pressure", True), ("1e3 m", "length", True), (".5 m", "length", True),
    ("300mm", "length", True), ("-5 m", "length", True), ("0.5 m**3/s", "flow", True),
    ("300", "length", False), (" 300 ", "length", False), ("1e3", "length", False),
    ("", "length", False), ("-", "length", False),
    ("mm", None, False),  # a unit alone: pint reads 1 mm, the schema asks for the number
])
def test_quantity_pattern_demands_a_number_and_a_unit(text, kind, ok):
    # alignment.start_station: a length with no sign rule. What the pattern
    # takes the reader takes; what it refuses (a bare number) the reader refuses.
    start = project_schema()["properties"]["alignment"]["properties"]["start_station"]
    assert jsonschema.Draft202012Validator(start).is_valid(text) == ok
    if ok:
        parse_quantity(text, kind, "k")
    elif kind:
        with pytest.raises(InputError):
            parse_quantity(text, kind, "k")
