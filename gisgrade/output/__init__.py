"""Output: every file a run writes, each by one registered writer.

A writer is a function in one module of this package, registered with
:func:`writer` under the file names it writes and a test of whether the
result has what it needs. :func:`write_all` calls every writer that applies
into a temporary folder beside OUTDIR and moves the files into place only
when all are written, so a failed run leaves nothing behind and a good run
never leaves a half-written file.

A new output file is a module with a registered writer, and one line in
:data:`WRITER_MODULES`.
"""
from __future__ import annotations

import importlib
import os
import shutil
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from ..errors import InputError

__all__ = ["write_all", "writer", "output_names", "WRITERS"]


@dataclass(frozen=True)
class Writer:
    files: tuple  #: the file (and folder) names it writes
    write: Callable  #: ``write(result, folder, display)``
    applies: Callable  #: ``applies(result) -> bool``
    figure: bool = False  #: draws figures (the costly part): a batch run may skip it
    layer: bool = False  #: writes map layers (a batch run has them in one file of all routes)


#: Every registered writer, in registration order.
WRITERS: list[Writer] = []

#: The modules holding the writers, imported in this order.
WRITER_MODULES = ("profile_csv", "gradelines_csv", "findings_csv", "fittings_csv", "valves_csv",
                  "surge_csv", "layers", "geojson", "kml", "sld", "plot", "sheets", "mapfig",
                  "summary", "report")


def writer(*files: str, applies: Callable = lambda result: True, figure: bool = False,
           layer: bool = False):
    """Register the decorated ``write(result, folder, display)`` as the writer of ``files``
    (a name may be a folder it fills, e.g. ``sheets``); ``figure``: it draws figures;
    ``layer``: it writes map layers (or their styles)."""
    def register(fn):
        WRITERS[:] = ([w for w in WRITERS if w.files != files]
                      + [Writer(files, fn, applies, figure, layer)])
        return fn

    return register


def has_pipe(result) -> bool:
    """The result carries a designed pipe and grade lines (not the ground alone)."""
    return result.grades is not None


def _load() -> list[Writer]:
    for name in WRITER_MODULES:
        importlib.import_module(f"{__name__}.{name}")
    return WRITERS


def output_names() -> tuple[str, ...]:
    """Every file name a run may write; a name this run did not write is
    removed from OUTDIR so no stale table from an earlier run sits beside new ones."""
    return tuple(f for w in _load() for f in w.files)


def write_all(result, outdir, figures: bool = True, layers: bool = True) -> list[Path]:
    """Write every output of ``result`` into ``outdir``; return the paths.
    ``figures=False`` skips the writers registered with ``figure=True``,
    ``layers=False`` those with ``layer=True``.

    Refuses (InputError, nothing written) an OUTDIR that is a file, cannot be
    made, or holds an input under an output's name.
    """
    from ..display import display_of

    outdir = Path(outdir)
    names = output_names()
    if outdir.exists() and not outdir.is_dir():
        raise InputError(f"output folder {outdir} is a file; give -o a folder")
    inputs = {p.resolve() for p in result.project.input_paths()}
    clash = [n for n in names if (outdir / n).resolve() in inputs]
    if clash:
        raise InputError(f"output folder {outdir}: writing {clash[0]} there would replace an "
                         "input of this project; choose another -o or output.dir")
    parent = outdir.parent if str(outdir.parent) else Path(".")
    try:
        parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{outdir.name}-", dir=parent))
    except OSError as exc:
        raise InputError(f"output folder {outdir}: cannot write there ({exc.strerror})") from None
    display = display_of(result.project)
    try:
        for w in WRITERS:
            if w.applies(result) and (figures or not w.figure) and (layers or not w.layer):
                w.write(result, tmp, display)
        outdir.mkdir(exist_ok=True)
        written = []
        for f in sorted(tmp.iterdir()):
            if f.is_dir() and (outdir / f.name).is_dir():  # a listed folder (sheets/): replaced whole
                shutil.rmtree(outdir / f.name)
            os.replace(f, outdir / f.name)
            written.append(outdir / f.name)
        for name in names:
            stale = outdir / name
            if stale not in written and stale.is_file():
                stale.unlink()
            elif stale not in written and stale.is_dir():
                shutil.rmtree(stale)
        return written
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
