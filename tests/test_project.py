"""The project file: units, required keys, unknown keys with a hint.

Unit conversions are checked against definitions published outside the
project: the international foot (0.3048 m exactly) and the US survey foot
(1200/3937 m) from NIST SP 811 (2008) App. B; the US gallon (3.785411784 L
exactly) from NIST Handbook 44 App. C; degC to K offset 273.15 (SI Brochure,
9th ed., 2019).
"""
import math

import pytest

from gisgrade.errors import InputError
from gisgrade.project import load
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
