"""The bad-input catalogue (tests/catalogue.py) against the contract.

Error cases: ``gisgrade run`` (or the command the case names) exits 2 with
exactly one line on stderr, ``gisgrade: error: ...`` holding the case's
words, no traceback, no output folder or hidden temporary folder made, and
every input file byte for byte as it was (SHA-256, FIPS 180-4, by hashlib);
``gisgrade check`` on the same input exits 2 and names the same fault.
Warning cases: ``gisgrade check`` exits 0 with one warning line holding the
words, and a run prints the same warning.
"""
from __future__ import annotations

import hashlib

import pytest

from catalogue import CASES, SITE, make_site
from gisgrade.cli import main


def digest(folder):
    return {p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def test_the_catalogue_covers_every_class():
    classes = {c.cls for c in CASES}
    assert len(CASES) >= 60
    assert {"crashes", "cannot be right", "routes", "attributes", "unitless numbers", "units",
            "messages", "CRS", "DEM", "output paths", "contradictory", "warnings"} <= classes
    assert len({c.name for c in CASES}) == len(CASES)


def test_the_site_itself_is_clean(tmp_path, capsys):
    project = make_site(tmp_path)
    assert main(["check", str(project)]) == 0
    captured = capsys.readouterr()
    assert captured.err == "" and "no problems found" in captured.out


def _args(case, folder):
    out = case.outdir(folder) if case.outdir else str(folder / "out")
    return [*case.command, str(folder / "project.toml"), "-o", out]


def _case_site(case, tmp_path):
    """The valid site in tmp_path/site with ``case``'s change made; its digest before the command."""
    folder = tmp_path / "site"
    folder.mkdir()
    make_site(folder)
    case.setup(folder)
    return folder, digest(folder)


@pytest.mark.parametrize("case", [c for c in CASES if c.level == "error"], ids=lambda c: c.name)
def test_bad_input_is_refused_in_one_line(case, tmp_path, capsys):
    folder, before = _case_site(case, tmp_path)
    entries = sorted(p.name for p in folder.iterdir())
    status = main(_args(case, folder))
    err = capsys.readouterr().err
    assert status == 2, err
    assert err.startswith("gisgrade: error: ") and err.count("\n") == 1, err
    assert "Traceback" not in err
    for w in case.words:
        assert w in err, (w, err)
    assert digest(folder) == before  # inputs never modified
    assert sorted(p.name for p in folder.iterdir()) == entries  # nothing written, nothing hidden
    assert not [p for p in tmp_path.iterdir() if p.name != "site"]
    if case.command[0] == "run" and case.cls != "output paths":
        # check finds the same fault, and exits 2
        assert main(["check", str(folder / "project.toml"), "-q"]) == 2
        err = capsys.readouterr().err
        assert "Traceback" not in err and all(w in err for w in case.words), err
        assert digest(folder) == before


@pytest.mark.parametrize("case", [c for c in CASES if c.level == "warning"], ids=lambda c: c.name)
def test_suspicious_input_is_warned_and_passes(case, tmp_path, capsys):
    folder, before = _case_site(case, tmp_path)
    assert main(["check", str(folder / "project.toml")]) == 0
    captured = capsys.readouterr()
    lines = captured.err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("gisgrade: warning: "), captured.err
    for w in case.words:
        assert w in lines[0], (w, lines[0])
    assert "1 warning" in captured.out
    assert digest(folder) == before


def test_a_run_prints_the_same_warning_on_stderr(tmp_path, capsys):
    project = make_site(tmp_path)
    project.write_text(SITE.replace('source_head = "200 m"', 'source_head = "90 m"'))
    assert main(["run", str(project), "-o", str(tmp_path / "o")]) == 0
    err = capsys.readouterr().err.splitlines()
    assert err == [l for l in err if l.startswith("gisgrade: warning: ")] and len(err) == 1
    assert "hydraulics.source_head" in err[0] and "below the ground" in err[0]


def test_check_reports_every_problem_at_once(tmp_path, capsys):
    project = make_site(tmp_path)
    project.write_text(SITE.replace('spacing = "10 m"', 'spacng = "10 m"')
                       .replace('minimum = "1.2 m"', 'minimum = "1.2 m 5"')
                       .replace('flow = "50 L/s"', 'flow = "50 cumecs"')
                       + '\n[design]\njoint_length = "5 km"\n')
    assert main(["check", str(project)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert all(l.startswith("gisgrade: error: ") for l in err)
    text = "\n".join(err)
    for w in ("alignment.spacng", "cover.minimum", "hydraulics.flow", "design.joint_length"):
        assert w in text, (w, text)


@pytest.mark.parametrize("flow, temp, q_m3_s, t_k", [
    # NIST SP 811 (2008) Appendix B: 1 ft = 0.3048 m; 1 US gallon = 3.785411784 L;
    # t/degC = (t/degF - 32) / 1.8, T/K = t/degC + 273.15.
    ('"1 cfs"', '"60 F"', 0.3048 ** 3, (60 - 32) / 1.8 + 273.15),
    ('"500 GPM"', '"60 degF"', 500 * 3.785411784e-3 / 60, (60 - 32) / 1.8 + 273.15),
    ('"500 gpm"', '"15 degC"', 500 * 3.785411784e-3 / 60, 288.15),
    ('"1 MGD"', '"15 C"', 1e6 * 3.785411784e-3 / 86400, 288.15),
    ('"40 lps"', '"15 degC"', 0.040, 288.15),
    ('"40 L/s"', '"288.15 K"', 0.040, 288.15),
])
def test_common_flow_and_temperature_spellings_are_accepted(tmp_path, flow, temp, q_m3_s, t_k):
    from gisgrade.project import load

    project = make_site(tmp_path)
    project.write_text(SITE.replace('flow = "50 L/s"', f"flow = {flow}")
                       .replace('temperature = "15 degC"', f"temperature = {temp}"))
    p = load(project)
    assert p.hydraulics.flow == pytest.approx(q_m3_s, rel=1e-12)
    assert p.hydraulics.temperature == pytest.approx(t_k, rel=1e-12)


def test_verbosity_levels_differ(tmp_path, capsys):
    # -v: each stage's time, writing too; -vv: each writer's time as well
    project = make_site(tmp_path)
    assert main(["-v", "run", str(project), "-o", str(tmp_path / "a")]) == 0
    one = capsys.readouterr().err
    assert "stage write" in one and "writer " not in one
    assert main(["-vv", "run", str(project), "-o", str(tmp_path / "b")]) == 0
    two = capsys.readouterr().err
    assert "stage write" in two and "writer profile.csv" in two


def test_vv_shows_the_libraries_warnings_not_their_debug_records():
    # `--help`: "-vv: each writer's time and the libraries' warnings"; their debug
    # records (matplotlib's font search alone is hundreds of lines) stay off
    import logging

    from gisgrade.cli import setup_logging

    for verbose, warns in ((0, False), (2, True)):
        setup_logging(verbose, False)
        for name in ("matplotlib.font_manager", "rasterio._env", "pyogrio"):
            lib = logging.getLogger(name)
            assert lib.isEnabledFor(logging.WARNING) is warns, (verbose, name)
            assert not lib.isEnabledFor(logging.DEBUG), (verbose, name)
    setup_logging(0, False)


def test_library_warnings_never_precede_the_one_line_error(tmp_path, capsys, monkeypatch):
    # A library warning raised on the way to a refusal stays off stderr (logged at -vv).
    import warnings

    import gisgrade.project as pj

    project = make_site(tmp_path)
    real = pj.load

    def noisy(*a, **k):
        warnings.warn("a library's deprecation", DeprecationWarning)
        warnings.warn("shapely: invalid value encountered", RuntimeWarning)
        return real(*a, **k)

    monkeypatch.setattr(pj, "load", noisy)
    project.write_text(SITE.replace('minimum = "1.2 m"', 'minimum = "30 m"'))
    capsys.readouterr()  # what making the site logged (an earlier -vv in this process)
    assert main(["run", str(project), "-o", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("gisgrade: error: cover.minimum") and err.count("\n") == 1, err
