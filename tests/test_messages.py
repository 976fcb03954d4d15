"""Messages a person reads: finding texts as sentences, examples that fit
the key, an empty crossing layer said aloud, contradictory keys refused.

Outside references: the field notes' 140 kPa minimum (common practice);
hydrostatics p = rho g (H - z) for the pressures the texts quote; the rest
is the project's own contract for input (one line naming the key, exit
status 2, nothing written) and plain English usage.
"""
from __future__ import annotations

import json
import re

import pytest

from conftest import CROSSING_X, flat_site
from gisgrade.cli import main
from gisgrade.errors import InputError
from gisgrade.units import parse_quantity


@pytest.mark.parametrize("key, want", [("scenarios[0].hours_per_year", '"50 h"'),
                                       ("energy.period", '"30 years"'),
                                       ("surge.closure_time", '"60 s"')])
def test_time_examples_fit_the_key(key, want):
    # a bare number for a time: the example shows the kind of time the key
    # means (hours a year, years, seconds), never a 2 s closure, which would
    # read as the fast closure the screening assumes anyway
    with pytest.raises(InputError) as e:
        parse_quantity("5", "time", key)
    assert want in str(e.value) and '"2 s"' not in str(e.value)


def test_low_and_high_pressure_texts_read_as_sentences(tmp_path):
    # flat ground at 100 m, source head 110 m: about 98 kPa (rho g 10 m) at
    # the start, under the 140 kPa minimum
    from gisgrade.pipeline import compute

    p = flat_site(tmp_path)
    p.write_text(p.read_text().replace('source_head = "200 m"', 'source_head = "110 m"'))
    r = compute(p)
    low = r.findings[r.findings["code"] == "low-pressure"]["message"].tolist()
    assert low and all(re.fullmatch(r"pressure down to \d+ kPa, below the 140 kPa minimum", m)
                       for m in low), low
    (tmp_path / "h").mkdir()
    high = compute(flat_site(tmp_path / "h"))  # 200 m over 100 m: about 980 kPa, over 550 kPa
    msgs = high.findings[high.findings["code"] == "high-pressure"]["message"].tolist()
    assert msgs and all(re.fullmatch(r"pressure up to \d+ kPa, above the 550 kPa maximum", m)
                        for m in msgs), msgs


def test_an_empty_crossing_layer_is_said_not_silently_dropped(tmp_path, capsys):
    p = flat_site(tmp_path, CROSSING_X)
    (tmp_path / "x.geojson").write_text(json.dumps({
        "type": "FeatureCollection", "features": [],
        "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32633"}}}))
    out = tmp_path / "out"
    assert main(["run", str(p), "-o", str(out)]) == 0
    captured = capsys.readouterr()
    assert "warning: crossings[0]: x.geojson holds no features" in captured.err
    assert "()" not in captured.err + captured.out
    notes = json.loads((out / "summary.json").read_text())["notes"]
    assert any("x.geojson holds no features" in n for n in notes)


def test_where_and_feature_together_are_refused_in_one_line(tmp_path, capsys):
    p = flat_site(tmp_path)
    p.write_text(p.read_text().replace('path = "line.geojson"\n',
                                       'path = "line.geojson"\nwhere = "id = 1"\nfeature = 0\n', 1))
    before = p.read_text()
    out = tmp_path / "out"
    assert main(["run", str(p), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "alignment.where" in err and "alignment.feature" in err
    assert "Traceback" not in err and not out.exists() and p.read_text() == before


def test_pressures_below_vapour_are_flagged_in_csv_and_never_printed_as_numbers(tmp_path):
    # 100 mm carrying 50 L/s over 1 km loses far more head than the 100 m the source
    # holds above the flat ground: the computed pressure falls under the lowest gauge
    # pressure water holds (IAPWS-IF97 vapour pressure at 15 degC less the US Standard
    # Atmosphere 1976 at the pipe; iapws and fluids). gradelines.csv keeps the computed
    # value and flags it; summary.txt and report.html say so in words, no number there.
    import pandas as pd
    from fluids.atmosphere import ATMOSPHERE_1976
    from iapws.iapws97 import _PSat_T

    p = flat_site(tmp_path)
    p.write_text(p.read_text().replace('"300 mm"', '"100 mm"').replace('"320 mm"', '"120 mm"'))
    out = tmp_path / "out"
    assert main(["run", str(p), "-o", str(out), "-q", "--no-figures"]) == 0
    g = pd.read_csv(out / "gradelines.csv")
    assert list(g.columns)[-1] == "below_vapour"
    floor_kpa = (_PSat_T(288.15) * 1e6 - ATMOSPHERE_1976(100.0 - 1.25).P) / 1e3
    far = (g["pressure_kpa"] < floor_kpa - 1.0) | (g["pressure_kpa"] > floor_kpa + 1.0)
    assert (g["below_vapour"] == (g["pressure_kpa"] < floor_kpa))[far].all()
    assert g["below_vapour"].any() and not g["below_vapour"].all()
    text = (out / "summary.txt").read_text() + (out / "report.html").read_text()
    assert "below vapour pressure (the column separates)" in text
    shown = [float(v) for v in re.findall(r"(-?\d+(?:\.\d+)?) kPa", text)]
    assert shown and min(shown) >= floor_kpa - 0.05, min(shown)


def test_report_tables_read_in_us_units_without_python_reprs(tmp_path):
    # 200 m of source head over flat ground at 100 m is about 980 kPa (142 psi), above
    # the 80 psi default maximum, so a PRV is suggested: the report's energy and
    # pressure-management tables must read in psi, ft and hp (1 psi = 6894.757 Pa,
    # 1 ft = 0.3048 m: NIST SP 811), with no SI heading and no Python dict, None or True.
    import html as html_lib
    import json

    p = flat_site(tmp_path, '\n[output]\nunits = "US"\n')
    out = tmp_path / "out"
    assert main(["run", str(p), "-o", str(out), "-q", "--no-figures"]) == 0
    page = (out / "report.html").read_text()
    text = html_lib.unescape(re.sub(r"<[^>]+>", " ", re.sub(r"data:image[^\"]+", "", page)))
    for bad in ("{'", "None", "True", "False", " kpa", " kw", "step m", "setting kpa", "station m"):
        assert bad not in text, bad
    pm = page.split("<h2>Pressure management</h2>")[1].split("</table>")[0]
    heads = re.findall(r"<th>([^<]*)</th>", pm)
    assert heads == ["kind", "station", "setting", "step", "applied"], heads
    s = json.loads((out / "summary.json").read_text())
    first = s["pressure_management"][0]
    assert f"{first['setting_kpa'] * 1e3 / 6894.757293168361:.1f} psi" in pm
    step = next(iter(first["step_m"].items()))
    assert f"{step[0]}: {step[1] / 0.3048:.2f} ft" in pm
    energy = page.split("<h2>Energy</h2>")[1].split("</table>")[0]
    assert "<th>pump head</th>" in energy and " ft<" in energy and " hp<" in energy
