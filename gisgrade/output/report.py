"""``report.html``: the whole job in one self-contained file.

One HTML page, figures inline (PNG as ``data:`` URIs, the ones this run
drew), no script or style fetched from anywhere: the job summary, the
figures, key numbers per scenario, the findings, crossings, valves, sizes,
energy, surge and pressure management when the run has them, the inputs
and their sources, every project-file value in force (the defaults marked,
with what each means) and the model's fixed assumptions with their
sources, and the cautions. Every figure is in the display units. A small
inline script marks, once the page has loaded, how many figures loaded
(``data-figures-loaded`` on ``<body>``), so a headless browser can check it.
"""
from __future__ import annotations

import base64
import datetime
import html
from dataclasses import MISSING, fields
from pathlib import Path

import numpy as np

from .. import __version__
from ..cautions import CAUTIONS
from ..display import Display
from ..hydraulics.elements import VAPOUR
from . import writer

#: Fixed assumptions of the model and their sources (docs/ has the detail).
ASSUMPTIONS = [
    ("standard gravity", "9.80665 m/s2", "CGPM 1901 (exact)"),
    ("water density, viscosity, vapour pressure at the project temperature",
     "correlations", "Tanaka et al. 2001; Kestin et al. 1978; Wagner & Pruss 1993 "
                     "(docs/hydraulics.md, checked against IAPWS in the tests)"),
    ("atmospheric pressure at the pipe's elevation (column separation)",
     "standard atmosphere", "ISO 2533:1975; U.S. Standard Atmosphere 1976"),
    ("friction factor (Darcy-Weisbach)", "Colebrook-White, solved explicitly",
     "Colebrook 1939; Clamond 2009"),
    ("bend loss coefficients", "rounded-bend K", "Rennels & Hudson 2012"),
    ("DEM accuracy shown as a 95 % band", "1.96 x RMSE", "NSSDA, FGDC-STD-007.3-1998"),
    ("unit conversions", "exact definitions", "NIST SP 811 (2008) App. B; NIST Handbook 44 App. C"),
    ("air valve and drain siting rules", "as recalled", "AWWA Manual M51 (from memory; "
                                                        "confirm against the current edition)"),
    ("pressure colours", "cividis, classed at the limits", "Nunez, Anderton & Renslow 2018"),
]

CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:2rem auto;
max-width:72rem;color:#1f1f1f;line-height:1.4;padding:0 1rem}
h1{margin-bottom:.1rem}h2{border-bottom:2px solid #1f3350;padding-bottom:.15rem;margin-top:2rem}
.sub{color:#555}.caution{border-left:6px solid #d55e00;background:#fff4ec;padding:.6rem 1rem}
table{border-collapse:collapse;margin:.5rem 0;font-size:.88rem}
th,td{border:1px solid #c8c8c8;padding:.25rem .5rem;text-align:left;vertical-align:top}
th{background:#eef1f5}td.num{text-align:right;font-variant-numeric:tabular-nums}
.critical{color:#8e2c6a;font-weight:600}.warning{color:#9a5b00;font-weight:600}
figure{margin:1rem 0}figure img{max-width:100%;border:1px solid #ddd}
figcaption{color:#555;font-size:.85rem}dl{display:grid;grid-template-columns:max-content 1fr;
gap:.2rem 1rem}dt{font-weight:600}dd{margin:0}.default{color:#777}
@media print{body{margin:0;max-width:none}h2{break-after:avoid}figure{break-inside:avoid}}
"""

SCRIPT = """
window.addEventListener('load', function () {
  var imgs = Array.prototype.slice.call(document.images);
  var ok = imgs.filter(function (i) { return i.complete && i.naturalWidth > 0; }).length;
  document.body.setAttribute('data-figures-loaded', ok + '/' + imgs.length);
});
"""

#: The project's quantity kinds shown through the display, by key kind.
KINDS = {"length": "length", "flow": "flow", "velocity": "velocity", "pressure": "pressure",
         "volume": "volume"}


def e(text) -> str:
    return html.escape(str(text))


def table(header, rows, numeric=()) -> str:
    """An HTML table; columns named in ``numeric`` are right-aligned."""
    head = "".join(f"<th>{e(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(
        f"<td class=\"num\">{e(v)}</td>" if h in numeric else f"<td>{v}</td>"
        for h, v in zip(header, row)) + "</tr>" for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


#: Key endings of another stage's summary entries (SI in the names): the kind
#: of quantity and the factor to SI base units, longest first; a key that ends
#: in none of them is shown as it is.
KEY_UNITS = (("station_m", "station", 1.0), ("_m3_s", "flow", 1.0), ("_m_s", "velocity", 1.0),
             ("_kpa", "pressure", 1e3), ("_kwh", "kWh", 1.0), ("_kw", "power", 1e3),
             ("_kg", "t", 1e-3), ("_m3", "volume", 1.0), ("diameter_m", "diameter", 1.0),
             ("_m", "head", 1.0), ("_s", "s", 1.0))

#: Keys left out of the tables (each suggestion's reason and TOML are under Suggestions).
HIDDEN_KEYS = ("toml", "reason")


def plain_table(records, d: Display | None = None) -> str:
    """A list of plain dicts (another stage's summary entries, SI in the key
    names) as a table in the reader's units: headings without the SI suffix,
    each value with its display unit, a per-scenario mapping as
    "peak: 80.6 ft; static: 0.00 ft", nothing for a value not given.

    >>> html = plain_table([{"station_m": 304.8, "setting_kpa": 500.0,
    ...                      "step_m": {"peak": -3.048}, "cost": None}], Display("US"))
    >>> "<th>setting</th>" in html and "10+00.00" in html and "72.5 psi" in html
    True
    >>> "peak: -10.00 ft" in html and "None" not in html and "{" not in html
    True
    """
    d = d or Display()
    keys = [k for k in dict.fromkeys(k for r in records for k in r) if k not in HIDDEN_KEYS]
    rows = [[e(_shown_value(k, r.get(k), d, r)) for k in keys] for r in records]
    return table([_heading(k) for k in keys], rows)


def _unit_of(key: str):
    return next(((kind, base, end) for end, kind, base in KEY_UNITS if key.endswith(end)),
                (None, 1.0, ""))


def _heading(key: str) -> str:
    kind, _, end = _unit_of(key)
    if kind in ("station", "diameter"):  # "pressure_min_station_m": "pressure min station"
        end = "_m"
    name = key[: len(key) - len(end)] if end else key
    return name.replace("_", " ").strip() or key


def _shown_value(key: str, v, d: Display, record=None) -> str:
    if v is None or (isinstance(v, float) and not np.isfinite(v)):
        return ""
    if isinstance(v, dict):
        return "; ".join(f"{n}: {_shown_value(key, x, d)}" for n, x in v.items())
    if isinstance(v, (list, tuple)):
        return ", ".join(_shown_value(key, x, d) for x in v)
    if isinstance(v, bool):
        return "yes" if v else "no"
    if not isinstance(v, (int, float)):
        return str(v)
    kind, base, _ = _unit_of(key)
    if kind == "pressure" and record is not None and record.get("column_separates") \
            and key.startswith("pressure_min"):
        return VAPOUR
    if kind == "station":
        return d.station([v])[0]
    if kind in ("kWh", "t", "s"):
        return f"{_number(v * base)} {kind}"
    if kind is not None:
        return d.text(v * base, kind)
    return _number(v)


def _number(v) -> str:
    """A plain number as read: 4 significant digits, whole thousands grouped.

    >>> _number(0.012345), _number(1234567.8), _number(3)
    ('0.01235', '1,234,568', '3')
    """
    return f"{v:,.0f}" if abs(v) >= 1000 else f"{v:.4g}"


def figure_tag(folder: Path, name: str, caption: str) -> str:
    path = folder / name
    if not path.is_file():
        return f"<p class=\"sub\">({e(name)} was not drawn in this run.)</p>"
    data = base64.b64encode(path.read_bytes()).decode("ascii")
    return (f"<figure><img alt=\"{e(caption)}\" src=\"data:image/png;base64,{data}\">"
            f"<figcaption>{e(caption)}</figcaption></figure>")


def scenario_rows(summary, d: Display):
    at = lambda s: d.station([s])[0]  # noqa: E731
    separated = set(summary.get("column_separation", []))
    rows = []
    for sc in summary["scenarios"]:
        low = (VAPOUR if sc["scenario"] in separated
               else d.text(sc["pressure_min_kpa"] * 1e3, "pressure"))
        rows.append([e(sc["scenario"]), d.text(sc["flow_m3_s"], "flow"),
                     f"{e(low)} at {at(sc['pressure_min_station_m'])}",
                     f"{d.text(sc['pressure_max_kpa'] * 1e3, 'pressure')} at "
                     f"{at(sc['pressure_max_station_m'])}",
                     d.text(sc["velocity_max_m_s"], "velocity"),
                     d.text(sc["hgl_start_m"], "head"), d.text(sc["hgl_end_m"], "head"),
                     "yes" if sc["achievable"] else "<b>no</b>"])
    return rows


def inputs_section(result, d: Display) -> str:
    """The files read and what was taken from each."""
    p, line, t = result.project, result.alignment, result.table

    def about(path):
        path = Path(str(path))
        if not path.is_file():
            return e(path)
        st = path.stat()
        when = datetime.datetime.fromtimestamp(st.st_mtime).date().isoformat()
        size = f"{st.st_size / 1e6:.2f} MB" if st.st_size >= 1e5 else f"{st.st_size / 1e3:.1f} kB"
        return f"{e(path)} <span class=\"sub\">({size}, modified {when})</span>"

    rows = [["project file", about(p.path), "every setting below"],
            ["centerline", about(p.alignment.path),
             e(f"{line.source_crs.name}; stationed in {line.crs.name}")]]
    if "ground_source" in t:
        used = t["ground_source"].value_counts()
        for dem in p.terrain.dem:
            n = int(used.get(Path(str(dem)).name, 0))
            rows.append(["DEM", about(dem), e(f"ground at {n} of {len(t)} stations; vertical unit "
                                              f"{p.terrain.vertical_unit}, {p.terrain.method}")])
    for c in p.crossings:
        hit = int((result.crossings.layer == c.key).sum())
        rows.append([e(c.key), about(c.path), e(f"{hit} crossings located on the line")])
    for z in p.cover_zones:
        rows.append([e(z.key), about(z.path), "cover zones"])
    for o in p.offtakes:
        if o.path is not None:
            rows.append([e(o.key), about(o.path), "offtake points"])
    return table(["input", "file", "what it gave"], rows)


def settings_rows(project, d: Display):
    """Every declared project-file value in force: section.key, value, default?, meaning."""
    rows = []
    for sec in fields(project):
        if "cls" not in sec.metadata:
            continue
        value = getattr(project, sec.name)
        tables = value if isinstance(value, tuple) else (value,)
        for i, tbl in enumerate(tables):
            if tbl is None:
                continue
            name = sec.name + (f"[{i}]" if isinstance(value, tuple) else "")
            for f in fields(tbl):
                if "kind" not in f.metadata:
                    continue
                v = getattr(tbl, f.name)
                if v is None and f.default is None:
                    continue  # an optional key not given: nothing in force
                default = f.default is not MISSING and _same(v, f.default)
                rows.append([e(f"{name}.{f.metadata['toml'] or f.name}"), e(_shown(v, f, d)),
                             "<span class=\"default\">default</span>" if default else "given",
                             e(d.render(f.metadata["doc"]))])  # its quantities in d's units
    return rows


def _same(a, b) -> bool:
    try:
        return bool(np.all(np.asarray(a) == np.asarray(b)))
    except (TypeError, ValueError):
        return a == b


def _shown(v, f, d: Display) -> str:
    """A value in force as a person reads it (display units; radians as
    degrees, ratios as percent, kelvin as degC, unit factors as metres)."""
    kind = f.metadata["kind"]
    if isinstance(v, (tuple, list)):
        return ", ".join(_shown(x, f, d) for x in v)
    if isinstance(v, bool):
        return "true" if v else "false"  # as the project file writes it
    if not isinstance(v, (int, float)):
        return str(v)
    if kind == "length" and "diameter" in f.name:
        return d.text(v, "diameter")
    if kind == "length" and abs(v) < 0.05 and v:  # roughness and the like: mm or in
        return f"{d.value(v, 'diameter'):.4g} {d.unit('diameter')}"
    if kind in KINDS:
        return d.text(v, KINDS[kind])
    if kind in ("angle", "angles"):
        return f"{np.degrees(v):.4g} deg"
    if kind == "dimensionless":
        return f"{100 * v:.4g} %"
    if kind == "temperature":
        return f"{v - 273.15:.4g} degC"
    if kind == "accuracy":
        return f"{d.text(v, 'length')} RMSE"
    if kind == "unit":
        return f"1 unit = {v:g} m"
    return f"{v:g}"


def report_html(result, folder: Path, d: Display) -> str:
    """The report of ``result`` (figures taken from ``folder`` where drawn)."""
    from .layers import result_name
    from .summary import findings_list

    s = result.summary
    name = result_name(result)
    at = lambda st: d.station([st])[0]  # noqa: E731
    parts = [f"<h1>{e(name)}</h1>",
             f"<p class=\"sub\">Water main planning results from gisgrade {e(__version__)}, "
             f"{datetime.date.today().isoformat()}; units {e(d.system)}.</p>",
             f"<p class=\"caution\"><b>Caution.</b> {e(CAUTIONS)}</p>", "<h2>The job</h2><dl>"]
    facts = [("route", f"{d.text(s['length_m'], 'length')} along the centerline "
                       f"({d.text(s['geodesic_length_m'], 'length')} geodesic), {s['stations']} "
                       f"stations, {at(s['first_station_m'])} to {at(s['last_station_m'])}"),
             ("working CRS", s["working_crs"]),
             ("ground", f"{d.text(s['ground_min_m'], 'elevation')} to "
                        f"{d.text(s['ground_max_m'], 'elevation')}")]
    if "cover_min_m" in s:
        facts.append(("cover", f"{d.text(s['cover_min_m'], 'length')} to "
                               f"{d.text(s['cover_max_m'], 'length')}"))
    pipe = result.project.pipe
    if pipe is not None:
        facts.append(("pipe", f"inside {d.text(pipe.inside_diameter, 'diameter')}, outside "
                              f"{d.text(pipe.outside_diameter, 'diameter')}, {pipe.friction}"
                              + (f", {pipe.material}" if pipe.material else "")))
    if "trench_volume_m3" in s:
        facts.append(("earthwork", f"trench {d.text(s['trench_volume_m3'], 'volume')}; pipe "
                                   f"length (3D) {d.text(s['pipe_length_3d_m'], 'length')}"))
    if "valves" in s:
        v = s["valves"]
        facts.append(("valves", f"{v['combination']} combination, {v['air-release']} air-release, "
                                f"{v['air-vacuum']} air-vacuum; {v['drain']} drains"))
    if "findings_list" in s:
        counts = {}
        for f in s["findings_list"]:
            counts[f["severity"]] = counts.get(f["severity"], 0) + 1
        facts.append(("findings", ", ".join(f"{n} {k}" for k, n in counts.items()) or "none"))
    parts += [f"<dt>{e(k)}</dt><dd>{e(v)}</dd>" for k, v in facts] + ["</dl>"]
    parts.append("<h2>Figures</h2>")
    parts.append(figure_tag(folder, "profile.png", "Profile: ground, pipe, grade lines, "
                            "crossings, valves and the pressure strip"))
    parts.append(figure_tag(folder, "map.png", "Plan over the DEM's hillshade, the pipe coloured "
                            "by its governing pressure"))
    if (folder / "sheets").is_dir():
        parts.append("<p>Printable profile sheets at stated scales: <code>sheets/profile_sheets.pdf"
                     "</code> (and one SVG per sheet).</p>")
    if s.get("scenarios"):
        parts.append("<h2>Key numbers per scenario</h2>")
        parts.append(table(["scenario", "flow entering", "lowest pressure", "highest pressure",
                            "highest velocity", "HGL at start", "HGL at end", "achievable"],
                           scenario_rows(s, d)))
    if result.findings is not None:
        parts.append("<h2>Findings</h2>")
        rows = [[f"<span class=\"{e(f['severity'])}\">{e(f['severity'])}</span>", e(f["scenario"]),
                 e(f["check"]), f"{at(f['from_station_m'])} to {at(f['to_station_m'])}",
                 e(d.render(f["template"]))] for f in findings_list(result.findings)]
        parts.append(table(["severity", "scenario", "check", "stations", "what"], rows)
                     if rows else "<p>No check failed.</p>")
    if len(result.crossings):
        c = result.crossings
        ach = result.clearances.achieved if result.clearances is not None else [np.nan] * len(c)
        order = np.argsort(c.station, kind="stable")
        rows = [[e(c.name[i]), at(c.station[i]), e(c.side[i]), d.text(c.clearance[i], "length"),
                 d.text(ach[i], "length") if np.isfinite(ach[i]) else ""] for i in order]
        parts += ["<h2>Crossings</h2>", table(["feature", "station", "passed", "required clearance",
                                                "achieved clearance"], rows)]
    if result.valves is not None and len(result.valves):
        rows = [[at(r.station_m), e(r.kind), e(d.render(r.reason))]
                for r in result.valves.itertuples()]
        parts += ["<h2>Air valves and drains</h2>", table(["station", "kind", "why"], rows)]
    parts += _others(result, s, d)
    parts += ["<h2>Inputs and their sources</h2>", inputs_section(result, d)]
    if s.get("notes"):
        notes = s.get("note_templates", s["notes"])
        parts.append("<ul>" + "".join(f"<li>{e(d.render(n))}</li>" for n in notes) + "</ul>")
    parts += ["<h2>Settings in force</h2>",
              "<p>Every project-file value the run used; <i>default</i> marks the values gisgrade "
              "supplied (common practice unless the meaning names a source). Local codes and the "
              "utility's standards govern.</p>",
              table(["key", "value", "", "meaning"], settings_rows(result.project, d)),
              "<h2>Assumptions of the model</h2>",
              table(["what", "taken as", "source"], [[e(a), e(b), e(c)] for a, b, c in ASSUMPTIONS]),
              "<h2>Cautions</h2>", f"<p class=\"caution\">{e(CAUTIONS)}</p>"]
    if getattr(result, "surge", None) is not None or s.get("surge"):
        parts.append("<p class=\"caution\">Surge results are screening only: a full transient "
                     "analysis is a specialist's job.</p>")
    body = "\n".join(parts)
    return (f"<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{e(name)}: gisgrade report</title><style>{CSS}</style>"
            f"<script>{SCRIPT}</script></head><body>\n{body}\n</body></html>\n")


def _others(result, s, d: Display) -> list[str]:
    """Sizes, energy, surge and pressure management, when another stage put them there."""
    out = []
    sections = [("sizes", "Pipe sizes compared"), ("energy", "Energy"), ("surge", "Surge screening"),
                ("pressure_management", "Pressure management")]
    for key, title in sections:
        records = s.get(key)
        frame = getattr(result, key, None) if key == "sizes" else None
        if frame is not None and hasattr(frame, "to_dict"):
            records = frame.to_dict("records")
        if isinstance(records, dict):
            records = [records]
        if records:
            out += [f"<h2>{e(title)}</h2>", plain_table(records, d)]
    proposal = getattr(result, "suggestions", None)
    items = list(getattr(proposal, "suggestions", ()) or ())
    if items:
        out += ["<h2>Suggestions</h2>", "<ul>" + "".join(
            f"<li>{e(x.reason)}<pre>{e(x.toml)}</pre></li>" for x in items) + "</ul>"]
    left = [u["reason"] for u in s.get("pressure_management_unfixable", [])]
    if left:
        out += ["<p>Left out of limits (no PRV or booster mends it):</p>",
                "<ul>" + "".join(f"<li>{e(r)}</li>" for r in left) + "</ul>"]
    return out


@writer("report.html")
def write_report(result, folder: Path, display: Display) -> None:
    (folder / "report.html").write_text(report_html(result, folder, display), encoding="utf-8")
