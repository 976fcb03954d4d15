"""``gisgrade sizes``: one run per candidate size, compared.

Head loss is checked against Darcy-Weisbach with the ``fluids`` package's
friction factor (Clamond's Colebrook solution) and IAPWS-95 water; the
present-worth factor against the engineering-economy formula
(1 - (1 + i)^-n) / i; the rest is the command's contract (columns, all or
nothing, exit status 2 on bad input) and the demo's story as
sample_data/README.md tells it.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from conftest import flat_site
from gisgrade.cli import main
from gisgrade.output.atomic import verify_folder
from gisgrade.sizes import COLUMNS

G = 9.80665
#: 200 m of source head over flat ground at 100 m: about 980 kPa, within this
CHECKS = '\n[checks]\nmax_pressure = "1.2 MPa"\n'

COSTS = """
[energy]
tariff = "0.2 / kWh"
currency = "EUR"
period = "30 years"
discount_rate = "5 %"

[[size_candidates]]
name = "small"
inside_diameter = "150 mm"
outside_diameter = "170 mm"
cost = "200 / m"

[[size_candidates]]
name = "medium"
inside_diameter = "250 mm"
cost = "300 / m"

[[size_candidates]]
name = "large"
inside_diameter = "400 mm"
material = "pvc"
cost = "500 / m"
"""


def test_candidates_from_the_command_line(tmp_path, capsys):
    import fluids
    from iapws import IAPWS95

    p = flat_site(tmp_path, CHECKS)
    out = tmp_path / "sizes"
    assert main(["sizes", str(p), "--candidates", "200 mm, 300 mm, 400 mm", "-o", str(out)]) == 0
    table = pd.read_csv(out / "sizes.csv")
    assert list(table.columns[:len(COLUMNS)]) == COLUMNS
    assert len(table) == 3 * 2  # candidates x (design, static)
    assert {p.name for p in out.iterdir()} == {"sizes.csv", "sizes.png", "sizes.txt", "MANIFEST.json"}
    verify_folder(out)  # written whole, checksums last
    w = IAPWS95(T=288.15, P=0.101325)
    design = table[table["scenario"] == "design"]
    for d, loss in zip(design["inside_diameter_m"], design["head_loss_m"]):
        v = 0.05 / (np.pi * d ** 2 / 4)
        f = fluids.friction.friction_factor(Re=w.rho * v * d / w.mu, eD=0.1e-3 / d)
        assert loss == pytest.approx(f * 1000.0 / d * v ** 2 / (2 * G), rel=2e-4)  # 6.1e-5 measured
    assert np.all(np.diff(design["head_loss_m"]) < 0)  # a bigger pipe loses less head
    text = (out / "sizes.txt").read_text()
    assert "screening" in text and "licensed professional engineer" in text
    assert "smallest size that passes" in capsys.readouterr().out


def test_size_candidates_with_costs_name_the_cheapest_that_passes(tmp_path):
    p = flat_site(tmp_path, COSTS + CHECKS)
    # 140 kPa floor at 200 m source head over flat ground at 100 m: every size
    # passes; nothing is pumped, so the life-cycle cost is the capital cost,
    # cost per metre x the pipe's 3D length
    p.write_text(p.read_text().replace('[cover]', 'pressure_rating = "1.6 MPa"\n\n[cover]'))
    out = tmp_path / "sizes"
    assert main(["sizes", str(p), "-o", str(out), "-q"]) == 0
    table = pd.read_csv(out / "sizes.csv")
    assert {"capital_cost", "life_cycle_cost"} <= set(table.columns)
    first = table.drop_duplicates("candidate").set_index("candidate")
    assert first.loc["medium", "capital_cost"] == pytest.approx(300 * 1000.0, rel=1e-3)
    assert first.loc["large", "capital_cost"] == pytest.approx(500 * 1000.0, rel=1e-3)
    text = (out / "sizes.txt").read_text()
    passing = table.groupby("candidate")["passes"].all()
    best = min((n for n in passing.index if passing[n]), key=lambda n: first.loc[n, "life_cycle_cost"])
    assert f"cheapest size that passes every check, by life-cycle cost" in text
    assert f": {best} (" in text


def test_bad_candidates_exit_2_and_write_nothing(tmp_path, capsys):
    p = flat_site(tmp_path)
    out = tmp_path / "sizes"
    assert main(["sizes", str(p), "--candidates", "200, 300 mm", "-o", str(out)]) == 2
    assert "--candidates" in capsys.readouterr().err
    assert main(["sizes", str(p), "-o", str(out)]) == 2  # no candidates at all
    assert "size_candidates" in capsys.readouterr().err
    assert not out.exists()
    assert not [q for q in tmp_path.iterdir() if q.name.startswith(".")]


def test_the_demo_story_dn400_carries_the_fire_flow(demo_copy, tmp_path, capsys):
    # sample_data/README.md: DN300 fails peak hour and the fire flow, DN350
    # carries peak hour but not the fire flow, DN400 carries every scenario.
    out = tmp_path / "sizes"
    assert main(["sizes", str(demo_copy), "-o", str(out), "-q"]) == 0
    table = pd.read_csv(out / "sizes.csv")
    ok = table.set_index(["candidate", "scenario"])["passes"]
    assert not ok["DN300", "peak hour"] and not ok["DN300", "max day + fire"]
    assert ok["DN350", "peak hour"] and not ok["DN350", "max day + fire"]
    assert table[table["candidate"] == "DN400"]["passes"].all()
    assert "max day + fire: carried within every check by DN400" in (out / "sizes.txt").read_text()
    # what fails a size is said: nothing where it passes; where its least
    # pressure is under the project's minimum, "low pressure" among the checks
    from gisgrade.project import load

    fails = table["fails"].fillna("")
    assert (fails[table["passes"]] == "").all() and (fails[~table["passes"]] != "").all()
    low = table["min_pressure_kpa"] < load(demo_copy).checks.min_pressure / 1e3
    assert low.any() and fails[low].str.contains("low pressure").all()


def test_two_heads_sizes_report_the_flow_and_us_columns(tmp_path, capsys):
    # Two heads (200 m at the start, 190 m at an end tank, flat 1 km): the flow
    # is the result, so sizes.csv gives it per candidate, and it is the
    # Darcy-Weisbach flow for 10 m of head (fluids' friction factor, IAPWS-95
    # water; entrance and exit losses K = 0.5 and 1, Crane TP-410) within 1 %,
    # growing with the size. With a US display every SI column has its US twin
    # (1 ft = 0.3048 m, 1 psi = 6894.757 Pa, 1 gal = 3.785411784 L: NIST SP 811 /
    # Handbook 44), the names read in inches, and no label has empty parentheses.
    import fluids
    from iapws import IAPWS95
    from scipy.optimize import brentq

    p = flat_site(tmp_path, CHECKS + '\n[output]\nunits = "US"\n')
    p.write_text(p.read_text().replace('flow = "50 L/s"\n', 'boundary = "two-heads"\nend = "tank"\n'
                                       'start = "tank"\nend_head = "190 m"\n'))
    out = tmp_path / "sizes"
    assert main(["sizes", str(p), "--candidates", "10 in, 12 in", "-o", str(out)]) == 0
    table = pd.read_csv(out / "sizes.csv")
    design = table[table["scenario"] == "design"].set_index("candidate")
    assert list(design.index) == ["10 in", "12 in"]
    w = IAPWS95(T=288.15, P=0.101325)
    for name, d in (("10 in", 0.254), ("12 in", 0.3048)):
        area = np.pi * d ** 2 / 4

        def loss(q):
            v = q / area
            f = fluids.friction.friction_factor(Re=w.rho * v * d / w.mu, eD=0.1e-3 / d)
            return (f * 1000.0 / d + 1.5) * v ** 2 / (2 * G) - 10.0
        assert design.loc[name, "inflow_m3_s"] == pytest.approx(brentq(loss, 1e-4, 2.0), rel=1e-2)
        assert design.loc[name, "inflow_gpm"] == pytest.approx(
            design.loc[name, "inflow_m3_s"] / 3.785411784e-3 * 60, rel=1e-4)  # 6 decimals written
        assert design.loc[name, "min_pressure_psi"] == pytest.approx(
            design.loc[name, "min_pressure_kpa"] * 1e3 / 6894.757293168361, rel=1e-6)
        assert design.loc[name, "head_loss_ft"] == pytest.approx(
            design.loc[name, "head_loss_m"] / 0.3048, rel=1e-6)
    assert design.loc["12 in", "inflow_m3_s"] > design.loc["10 in", "inflow_m3_s"]
    text = (out / "sizes.txt").read_text()
    assert "design: the heads drive" in text and "gpm through 10 in" in text
    assert "()" not in text and "( " not in text
    # the figure: the flow in place of the head loss, every label with a unit
    from gisgrade.pipeline import compute
    from gisgrade.project import load
    from gisgrade.sizes import candidate_project, candidates_from_text, compare, comparison_figure

    project = load(p)
    cands = candidates_from_text(project, "10 in, 12 in")
    table2, lines = compare(project, cands, [compute(candidate_project(project, c)) for c in cands])
    fig = comparison_figure(table2, project, lines)
    labels = [t for ax in fig.axes for t in (ax.get_xlabel(), ax.get_ylabel())]
    assert "flow the heads drive (gpm)" in labels
    assert not any("()" in t or "( )" in t for t in labels + [fig.texts[0].get_text()]), labels


def test_partly_given_costs_get_a_note_and_absurd_sizes_a_one_line_error(tmp_path, capsys):
    p = flat_site(tmp_path, CHECKS + COSTS.replace('cost = "300 / m"\n', ""))
    out = tmp_path / "sizes"
    assert main(["sizes", str(p), "-o", str(out), "-q"]) == 0
    text = (out / "sizes.txt").read_text()
    assert "costs are given for 2 of 3 candidates (small, large): no cost comparison" in text
    assert "()" not in text
    for bad, word in (("inf mm", "finite"), ("nan mm", "finite"), ("25 m", "larger than any pipe"),
                      ("-200 mm", "greater than zero")):
        out2 = tmp_path / "bad"
        assert main(["sizes", str(p), "--candidates", f"200 mm, {bad}", "-o", str(out2)]) == 2
        err = capsys.readouterr().err.strip()
        assert len(err.splitlines()) == 1 and "--candidates" in err and word in err, err
        assert "Traceback" not in err and not out2.exists()


def test_candidates_keep_the_names_typed_and_flag_pressures_below_vapour(tmp_path, capsys):
    # A US display shows "100 mm" as typed (its inches in inside_diameter_in beside
    # it; 1 in = 25.4 mm, NIST SP 811). 100 mm carrying 50 L/s over 1 km loses more
    # head than the 100 m above the flat ground (Darcy-Weisbach with fluids' friction
    # factor, IAPWS-95 water), so its computed least pressure is under the lowest
    # gauge pressure water holds (IAPWS-IF97 vapour pressure less the US Standard
    # Atmosphere 1976, both from the reference libraries): below_vapour flags it.
    import fluids
    from fluids.atmosphere import ATMOSPHERE_1976
    from iapws import IAPWS95
    from iapws.iapws97 import _PSat_T

    p = flat_site(tmp_path, CHECKS + '\n[output]\nunits = "US"\n')
    out = tmp_path / "sizes"
    assert main(["sizes", str(p), "--candidates", "100 mm, 12 in", "-o", str(out), "-q"]) == 0
    table = pd.read_csv(out / "sizes.csv")
    design = table[table["scenario"] == "design"].set_index("candidate")
    assert list(design.index) == ["100 mm", "12 in"]
    assert design.loc["100 mm", "inside_diameter_in"] == pytest.approx(100 / 25.4, rel=1e-6)
    w, d, q = IAPWS95(T=288.15, P=0.101325), 0.1, 0.05
    v = q / (np.pi * d ** 2 / 4)
    loss = fluids.friction.friction_factor(Re=w.rho * v * d / w.mu, eD=1e-3) * 1000 / d * v ** 2 / (2 * G)
    assert loss > 200.0 - 100.0 + 10.4  # the source head cannot push it: below vapour
    floor = _PSat_T(288.15) * 1e6 - ATMOSPHERE_1976(100.0).P
    assert design.loc["100 mm", "min_pressure_kpa"] * 1e3 < floor
    assert bool(design.loc["100 mm", "below_vapour"]) and not bool(design.loc["12 in", "below_vapour"])
    # sizes.png draws no least pressure under the sea-level vapour floor (in psi)
    from gisgrade.pipeline import compute
    from gisgrade.project import load
    from gisgrade.sizes import candidate_project, candidates_from_text, compare, comparison_figure

    project = load(p)
    cands = candidates_from_text(project, "100 mm, 12 in")
    table2, lines = compare(project, cands, [compute(candidate_project(project, c)) for c in cands])
    ax = comparison_figure(table2, project, lines).axes[0]
    drawn = np.concatenate([line.get_ydata() for line in ax.get_lines()])
    sea_floor_psi = (_PSat_T(288.15) * 1e6 - 101325.0) / 6894.757293168361
    assert drawn.min() == pytest.approx(sea_floor_psi, rel=1e-3)
    assert any("below vapour pressure" in t.get_text() for t in ax.get_legend().get_texts())
    # one size typed twice in two spellings: one line naming both as typed, exit 2
    out2 = tmp_path / "dup"
    assert main(["sizes", str(p), "--candidates", "250 mm, 0.25 m", "-o", str(out2)]) == 2
    err = capsys.readouterr().err.strip()
    assert "'0.25 m' is the same inside diameter as '250 mm'" in err and len(err.splitlines()) == 1
    assert not out2.exists()
