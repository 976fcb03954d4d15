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

from .layers import write_layers
from .plot import plot_profile
from .summary import summarize, summary_text, write_summary
from .tables import write_tables

__all__ = ["write_all", "summarize", "summary_text"]


def write_all(result, outdir) -> list[Path]:
    """Write every output of ``result`` into ``outdir``; return the paths."""
    outdir = Path(outdir)
    parent = outdir.parent if str(outdir.parent) else Path(".")
    parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{outdir.name}-", dir=parent))
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
        return written
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
