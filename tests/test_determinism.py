"""Deterministic outputs: the same inputs give byte-identical tables and layer attributes.

Two separate runs (each in its own process, so no cache is shared) of one
project with a crossing, written without figures, must give the same bytes
in every CSV and the same attributes and geometry (as WKB) in every layer of
layers.gpkg; the manifests then list the same SHA-256 for each CSV.
"""
from __future__ import annotations

import json
import subprocess
import sys

import pyogrio

from catalogue import make_site

RUN = "import sys, gisgrade; gisgrade.run(sys.argv[1], sys.argv[2], figures=False)"


def test_two_runs_give_identical_tables_and_layers(tmp_path):
    project = make_site(tmp_path)
    outs = [tmp_path / "a", tmp_path / "b"]
    for out in outs:
        subprocess.run([sys.executable, "-c", RUN, str(project), str(out)], check=True,
                       capture_output=True, text=True)
    a, b = outs
    csvs = sorted(p.name for p in a.glob("*.csv"))
    assert {"profile.csv", "gradelines.csv", "findings.csv"} <= set(csvs)
    assert csvs == sorted(p.name for p in b.glob("*.csv"))
    for name in csvs:
        assert (a / name).read_bytes() == (b / name).read_bytes(), name
    layers = [row[0] for row in pyogrio.list_layers(a / "layers.gpkg")]
    assert layers == [row[0] for row in pyogrio.list_layers(b / "layers.gpkg")]
    for layer in layers:
        fa = pyogrio.read_dataframe(a / "layers.gpkg", layer=layer)
        fb = pyogrio.read_dataframe(b / "layers.gpkg", layer=layer)
        assert fa.drop(columns="geometry").equals(fb.drop(columns="geometry")), layer
        assert list(fa.geometry.to_wkb()) == list(fb.geometry.to_wkb()), layer
    sums = [{e["path"]: e["sha256"] for e in json.loads((o / "MANIFEST.json").read_text())["files"]}
            for o in outs]
    assert all(sums[0][n] == sums[1][n] for n in csvs)
