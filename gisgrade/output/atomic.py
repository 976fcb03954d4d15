"""Crash-safe output folders: build beside, swap in whole.

(Placeholder of the crash-safe writer; the refusals work brings the manifest.)
"""
from __future__ import annotations

import os
import shutil
import tempfile
from contextlib import contextmanager
from pathlib import Path

from ..errors import InputError

__all__ = ["atomic_folder"]


@contextmanager
def atomic_folder(outdir, *, inputs=()):
    """Yield a fresh temporary folder beside ``outdir``; on success it replaces
    ``outdir`` whole (renames), on error it is removed and ``outdir`` is untouched.

    Refuses (InputError) an ``outdir`` that is a file, or that is or holds one of ``inputs``.
    """
    outdir = Path(outdir)
    if str(outdir) in ("", "."):
        raise InputError("output folder: give -o a folder of its own")
    if outdir.exists() and not outdir.is_dir():
        raise InputError(f"output folder {outdir} is a file; give -o a folder")
    target = outdir.resolve()
    for p in inputs:
        p = Path(p).resolve()
        if p == target or target in p.parents:
            raise InputError(f"output folder {outdir}: it holds {p.name}, an input of this "
                             "project; choose another -o")
    parent = target.parent
    try:
        parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{target.name}-new-", dir=parent))
    except OSError as exc:
        raise InputError(f"output folder {outdir}: cannot write there ({exc.strerror})") from None
    try:
        yield tmp
        old = None
        if target.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{target.name}-old-", dir=parent))
            os.replace(target, old / "x")
        os.replace(tmp, target)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
