"""Output: tables, map layers, the profile plot and the run summary.

:func:`write_all` writes every file into a temporary folder beside OUTDIR and
moves them into place only when all are written, so a failed run leaves
nothing behind and a good run never leaves a half-written file.
"""
from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

from ..errors import InputError
from .layers import write_layers
from .plot import plot_profile
from .summary import summarize, summary_text, write_summary
from .tables import write_tables

__all__ = ["write_all", "summarize", "summary_text"]


#: Every file name a run may write; a name this run did not write is removed
#: from OUTDIR so no stale table from an earlier run sits beside new ones.
OUTPUT_NAMES = ("profile.csv", "gradelines.csv", "findings.csv", "fittings.csv", "layers.gpkg",
                "profile.png", "summary.json", "summary.txt")


def write_all(result, outdir) -> list[Path]:
    """Write every output of ``result`` into ``outdir``; return the paths.

    Refuses (InputError, nothing written) an OUTDIR that is a file, cannot be
    made, or holds an input under an output's name.
    """
    outdir = Path(outdir)
    if outdir.exists() and not outdir.is_dir():
        raise InputError(f"output folder {outdir} is a file; give -o a folder")
    inputs = {p.resolve() for p in result.project.input_paths()}
    clash = [n for n in OUTPUT_NAMES if (outdir / n).resolve() in inputs]
    if clash:
        raise InputError(f"output folder {outdir}: writing {clash[0]} there would replace an "
                         "input of this project; choose another -o or output.dir")
    parent = outdir.parent if str(outdir.parent) else Path(".")
    try:
        parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{outdir.name}-", dir=parent))
    except OSError as exc:
        raise InputError(f"output folder {outdir}: cannot write there ({exc.strerror})") from None
    try:
        write_tables(result, tmp)
        write_layers(result, tmp)
        plot_profile(result, tmp / "profile.png")
        write_summary(result, tmp)
        outdir.mkdir(exist_ok=True)
        written = []
        for f in sorted(tmp.iterdir()):
            os.replace(f, outdir / f.name)
            written.append(outdir / f.name)
        for name in OUTPUT_NAMES:
            stale = outdir / name
            if stale not in written and stale.is_file():
                stale.unlink()
        return written
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
