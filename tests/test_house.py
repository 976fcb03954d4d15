"""The house's seams: compute apart from writing, the registries of checks and
writers, display units, stage timings, figures without pyplot state.

Unit factors are checked against their published definitions (NIST SP 811,
2008, App. B: 1 ft = 0.3048 m, 1 psi = 6.894757 kPa; NIST Handbook 44 App. C:
1 US gallon = 3.785411784 L).
"""
import io
import sys
import threading

import numpy as np
import pytest

import gisgrade
from gisgrade import findings, output
from gisgrade.cli import main
from gisgrade.display import Display

from conftest import flat_site


def tree(folder):
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


def test_compute_writes_nothing(tmp_path, monkeypatch):
    project = flat_site(tmp_path)
    monkeypatch.chdir(tmp_path)
    before = tree(tmp_path)
    result = gisgrade.compute(project)
    assert tree(tmp_path) == before  # not beside the project, not in the working folder
    assert result.grades is not None
    assert set(np.arange(0.0, 1000.1, 5.0)) <= set(result.table["station_m"])
    written = result.write(tmp_path / "out", figures=False)  # writing is its own, explicit step
    assert {p.name for p in written} >= {"profile.csv", "gradelines.csv", "summary.json"}


def test_importing_the_outputs_leaves_pyplot_alone():
    # matplotlib's object API only: no pyplot module state is created by gisgrade
    import subprocess

    code = ("import sys, gisgrade.output.plot, gisgrade.output.layers, gisgrade.pipeline; "
            "print('matplotlib.pyplot' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_listing_the_outputs_leaves_matplotlib_unloaded():
    # the figure writers import matplotlib when they draw, not when registered
    import subprocess

    code = ("import sys, gisgrade.output as o, gisgrade.pipeline; o.output_names(); "
            "print('matplotlib' in sys.modules, 'scipy.signal' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False False"


def test_a_run_without_figures_leaves_scipy_optimize_unloaded(tmp_path):
    # the design's linear programs go to HiGHS through highspy: importing
    # scipy.optimize (most of SciPy) would be half a second of every run's start
    import subprocess

    project = flat_site(tmp_path)
    code = ("import sys, gisgrade; r = gisgrade.run(sys.argv[1], sys.argv[2], figures=False); "
            "print(r.grades is not None, 'scipy.optimize' in sys.modules, 'scipy.sparse' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code, str(project), str(tmp_path / "out")],
                         capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "True False False"


def test_profile_figures_drawn_in_threads_match_one_drawn_alone(tmp_path):
    from gisgrade.output.plot import plot_profile

    result = gisgrade.compute(flat_site(tmp_path))
    plot_profile(result, tmp_path / "alone.png")
    threads = [threading.Thread(target=plot_profile, args=(result, tmp_path / f"t{i}.png"))
               for i in range(3)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    alone = (tmp_path / "alone.png").read_bytes()
    assert all((tmp_path / f"t{i}.png").read_bytes() == alone for i in range(3))


def test_a_new_check_is_one_registered_function(tmp_path):
    result = gisgrade.compute(flat_site(tmp_path))
    before = len(findings.REGISTRY)

    @findings.check("test-deep-pipe", scope="line")
    def deep(inputs):  # a made-up check: cover over 1 m, everywhere on the flat site
        cover = inputs.column("cover_m")
        return findings.ranges(inputs.station, cover, cover > 1.0, code="test-deep-pipe",
                               check="deep pipe", severity="note", unit="m", limit=1.0,
                               scenario="design", worst="max")

    try:
        found = findings.stage_findings(result.project, result.table, result.grades)
        rows = found[found["code"] == "test-deep-pipe"]
        # flat ground at 100 m, minimum cover 1.2 m: one run over the whole line
        assert len(rows) == 1 and rows["from_station_m"].iloc[0] == 0.0
        assert rows["to_station_m"].iloc[0] == 1000.0
        assert rows["worst_value"].iloc[0] == pytest.approx(1.2, abs=1e-9)
    finally:
        findings.REGISTRY[:] = [c for c in findings.REGISTRY if c.code != "test-deep-pipe"]
    assert len(findings.REGISTRY) == before


def test_a_new_writer_is_one_registered_function(tmp_path):
    result = gisgrade.compute(flat_site(tmp_path))
    output.output_names()  # every built-in writer loaded

    @output.writer("stations.txt")
    def stations(result, folder, display):
        (folder / "stations.txt").write_text("\n".join(display.station(result.table["station_m"])))

    @output.writer("sketch.txt", figure=True)  # a figure writer: left out with figures=False
    def sketch(result, folder, display):
        (folder / "sketch.txt").write_text("a figure")

    try:
        written = result.write(tmp_path / "out", figures=False)
        assert (tmp_path / "out" / "stations.txt") in written
        assert (tmp_path / "out" / "stations.txt").read_text().splitlines()[-1] == "1+000.00"
        assert not (tmp_path / "out" / "sketch.txt").exists()
        assert not (tmp_path / "out" / "profile.png").exists()
    finally:
        output.WRITERS[:] = [w for w in output.WRITERS if w.files not in (("stations.txt",),
                                                                          ("sketch.txt",))]


def test_findings_table_order_follows_the_scopes(tmp_path):
    # the laid pipe first, then each scenario in turn, then the design rules
    r = gisgrade.compute(flat_site(tmp_path, '\n[checks]\nmin_pressure = "50 kPa"\n'
                                           'max_pressure = "100 kPa"\n'))
    scen = [s for s in r.findings["scenario"] if s != "design"]
    assert scen == sorted(scen, key=r.grades.names.index)


@pytest.mark.parametrize("system, kind, si, expected", [
    ("US", "pressure", 6894.757293168361, 1.0),          # NIST SP 811: psi
    ("US", "length", 0.3048, 1.0),                        # NIST SP 811: international foot
    ("US", "flow", 3.785411784e-3 / 60, 1.0),             # NIST HB 44: US gallon per minute
    ("US", "velocity", 0.3048, 1.0),
    ("US", "volume", 0.764554857984, 1.0),                # NIST SP 811: cubic yard
    ("SI", "pressure", 140e3, 140.0), ("SI", "flow", 0.08, 80.0),
])
def test_display_units_against_their_definitions(system, kind, si, expected):
    assert Display(system).value(si, kind) == pytest.approx(expected, rel=1e-12)


def test_verbose_prints_stage_timings(tmp_path, capsys):
    project = flat_site(tmp_path)
    assert main(["-v", "run", str(project), "-o", str(tmp_path / "o")]) == 0
    err = capsys.readouterr().err
    for stage in ("alignment", "terrain", "pipe", "design", "hydraulics", "findings"):
        assert f"stage {stage}" in err
    assert main(["run", str(project), "-o", str(tmp_path / "o"), "-q"]) == 0
    assert capsys.readouterr().err == ""  # quiet by default in a pipe: no timings, no bar


def test_progress_bar_only_on_a_terminal():
    from gisgrade.cli.common import Progress

    class Tty(io.StringIO):
        def isatty(self):
            return True

    pipe, tty = io.StringIO(), Tty()
    for stream in (pipe, tty):
        bar = Progress(stream)
        bar("design", 3, 7)
        bar(None, 7, 7)
    assert pipe.getvalue() == ""
    assert "design" in tty.getvalue() and "#" in tty.getvalue()


def test_grade_set_rows_are_the_long_table(tmp_path):
    r = gisgrade.compute(flat_site(tmp_path))
    g, frame = r.grades, r.gradelines
    assert list(dict.fromkeys(frame["scenario"])) == list(g.names)
    i = g.index("design")
    rows = frame[frame["scenario"] == "design"]
    np.testing.assert_array_equal(rows["hgl_m"].to_numpy(), g.hgl[i])
    np.testing.assert_array_equal(rows["pressure_kpa"].to_numpy(), g.pressure[i] / 1e3)


def test_schema_command_prints_a_schema_the_demo_project_keeps(capsys):
    # the printed JSON Schema, checked by an independent validator (jsonschema,
    # JSON Schema 2020-12) against the bundled demo project file
    import json
    import tomllib

    import jsonschema

    from gisgrade.cli.demo import demo_project

    assert main(["schema"]) == 0
    schema = json.loads(capsys.readouterr().out)
    jsonschema.Draft202012Validator.check_schema(schema)
    jsonschema.validate(tomllib.loads(demo_project().read_text()), schema)


@pytest.mark.parametrize("damage", [b"garbage", b""])
def test_a_damaged_unit_cache_never_stops_a_command(tmp_path, flat_project, damage):
    # pint's definition cache (in the user's cache folder) damaged or emptied,
    # as a run killed while writing it, or two runs at once, leave it: the
    # command still reads the project file (exit 0, nothing on stderr)
    import os
    import subprocess

    env = dict(os.environ, XDG_CACHE_HOME=str(tmp_path / "cache"))
    check = [sys.executable, "-m", "gisgrade", "check", str(flat_project)]
    subprocess.run(check, env=env, capture_output=True, check=True)  # builds the cache
    files = [p for p in (tmp_path / "cache").rglob("*") if p.is_file()]
    assert files
    for p in files:
        p.write_bytes(damage)
    out = subprocess.run(check, env=env, capture_output=True, text=True)
    assert out.returncode == 0 and out.stderr == "", out.stderr[-500:]
