"""Crash-safe output: a result folder appears whole or not at all.

:func:`atomic_folder` yields a hidden temporary folder beside OUTDIR; the
caller writes every file into it. When the block ends without an error,
``MANIFEST.json`` (every file's size and SHA-256, and the gisgrade version)
is written last, and the new folder is swapped in for OUTDIR with renames:
on Linux one atomic exchange of the two folders (``renameat2`` with
``RENAME_EXCHANGE``), elsewhere the old folder renamed aside and the new one
renamed in. Then the old one is removed. A run killed at any point leaves
OUTDIR either as the old complete folder or the new complete one, plus at
most one hidden ``.NAME.gisgrade-*`` folder, which the next run to the same
OUTDIR cleans up. Only the fallback has a gap: a kill between its two
renames leaves both complete folders hidden and OUTDIR absent; the next run
puts the old one back before it starts. An error inside the block removes
the temporary folder and leaves OUTDIR as it was.

:func:`verify_folder` checks a folder against its manifest: a folder
without a valid manifest is never taken for a result.

Refused (:class:`~gisgrade.errors.InputError`, nothing written): an empty
OUTDIR name (``-o ""``), the current folder or one above it, a file at
OUTDIR, a dangling symbolic link, a parent folder that cannot be written,
a read-only OUTDIR, an OUTDIR that is or holds one of ``inputs`` (the
project's own folder), and an existing OUTDIR holding files that no
gisgrade run wrote (not listed in its manifest), so nothing of the user's
is ever removed.
"""
from __future__ import annotations

import contextlib
import ctypes
import hashlib
import json
import os
import shutil
import tempfile
from pathlib import Path

from ..errors import InputError

__all__ = ["atomic_folder", "verify_folder", "refuse_outdir", "MANIFEST", "digest_of", "vouch"]

#: The manifest's file name, written last into every result folder.
MANIFEST = "MANIFEST.json"
_FORMAT = "gisgrade-manifest/1"
_NEW, _OLD = "gisgrade-new", "gisgrade-old"


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def digest_of(path) -> tuple[int, int, str]:
    """``(bytes, mtime_ns, sha256)`` of a file: what the process that wrote it
    (e.g. a worker) hands to :func:`vouch`, so that the manifest need not
    read it again."""
    st = os.stat(path)
    return st.st_size, st.st_mtime_ns, _sha256(Path(path))


#: folder (resolved) -> {relative path: (bytes, mtime_ns, sha256)} vouched for by their writers
_VOUCHED: dict = {}


def _vouched_key(folder) -> str:
    return str(Path(folder).resolve())


def vouch(folder, rel: str, stamp) -> None:
    """Take the :func:`digest_of` ``stamp`` of ``folder/rel`` for its manifest
    entry; taken only if the file still has that size and modification time
    when the manifest is written (else it is read again)."""
    _VOUCHED.setdefault(_vouched_key(folder), {})[rel] = tuple(stamp)


def _digest(folder: Path, rel: str, vouched: dict) -> str:
    stamp = vouched.get(rel)
    if stamp is not None:
        st = os.stat(folder / rel)
        if (st.st_size, st.st_mtime_ns) == stamp[:2]:
            return stamp[2]
    return _sha256(folder / rel)


def _files(folder: Path) -> list[str]:
    """Every file under ``folder`` as a sorted POSIX relative path (the manifest aside)."""
    return sorted(p.relative_to(folder).as_posix() for p in folder.rglob("*")
                  if p.is_file() and p.relative_to(folder).as_posix() != MANIFEST)


def _write_manifest(folder: Path) -> None:
    from .. import __version__

    vouched = _VOUCHED.pop(_vouched_key(folder), {})
    files = [{"path": rel, "bytes": (folder / rel).stat().st_size,
              "sha256": _digest(folder, rel, vouched)} for rel in _files(folder)]
    doc = {"format": _FORMAT, "gisgrade": __version__, "files": files}
    with open(folder / MANIFEST, "w", encoding="utf-8") as f:
        f.write(json.dumps(doc, indent=1, sort_keys=True) + "\n")
        f.flush()
        os.fsync(f.fileno())


def _read_manifest(folder: Path) -> dict:
    file = folder / MANIFEST
    if not file.is_file():
        raise InputError(f"{folder}: no {MANIFEST}: not a complete gisgrade result")
    try:
        doc = json.loads(file.read_text(encoding="utf-8"))
        entries = {e["path"]: (int(e["bytes"]), str(e["sha256"])) for e in doc["files"]}
    except (ValueError, KeyError, TypeError, UnicodeDecodeError):
        raise InputError(f"{folder / MANIFEST}: damaged manifest: not a gisgrade result") from None
    if doc.get("format") != _FORMAT:
        raise InputError(f"{folder / MANIFEST}: not a gisgrade manifest "
                         f"(format {doc.get('format')!r})")
    doc["entries"] = entries
    return doc


def verify_folder(path) -> dict:
    """Check the result folder ``path`` against its ``MANIFEST.json``: every
    listed file present with its size and SHA-256, and no file unlisted.
    Returns the manifest (``format``, ``gisgrade`` version, ``files``);
    raises InputError naming the first problem.

    >>> verify_folder("no-such-folder")
    Traceback (most recent call last):
    ...
    gisgrade.errors.InputError: no-such-folder: no MANIFEST.json: not a complete gisgrade result
    """
    folder = Path(path)
    doc = _read_manifest(folder)
    entries = doc.pop("entries")
    for rel, (size, digest) in sorted(entries.items()):
        f = folder / rel
        if not f.is_file():
            raise InputError(f"{folder}: {rel} is listed in {MANIFEST} but missing")
        if f.stat().st_size != size or _sha256(f) != digest:
            raise InputError(f"{folder}: {rel} differs from {MANIFEST} (changed since it was written)")
    extra = [rel for rel in _files(folder) if rel not in entries]
    if extra:
        raise InputError(f"{folder}: {extra[0]} is not listed in {MANIFEST} "
                         "(not part of the result)")
    return doc


def _exchange(a: Path, b: Path) -> bool:
    """Swap two existing paths atomically (Linux ``renameat2``); False where unsupported."""
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        renameat2 = libc.renameat2
    except (OSError, AttributeError):
        return False
    at_fdcwd, rename_exchange = -100, 2
    rc = renameat2(at_fdcwd, os.fsencode(a), at_fdcwd, os.fsencode(b), rename_exchange)
    return rc == 0


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _leftovers(parent: Path, name: str) -> list[Path]:
    """Hidden folders an earlier, killed run to ``name`` left (its process gone)."""
    found = []
    for p in parent.glob(f".{name}.gisgrade-*"):
        parts = p.name[len(name) + 2:].split("-")  # gisgrade, new|old, pid, random
        if len(parts) >= 3 and parts[2].isdigit() and _pid_alive(int(parts[2])) \
                and int(parts[2]) != os.getpid():
            continue  # another run, still going
        found.append(p)
    return found


def _clean(parent: Path, outdir: Path) -> None:
    """Remove what a killed run left; put a complete old folder back if OUTDIR is gone."""
    left = _leftovers(parent, outdir.name)
    if not outdir.exists():
        for kind in (_OLD, _NEW):
            for p in left:
                if p.name.startswith(f".{outdir.name}.{kind}-"):
                    with contextlib.suppress(InputError):
                        verify_folder(p)
                        os.rename(p, outdir)
                        left.remove(p)
                        break
            if outdir.exists():
                break
    for p in left:
        shutil.rmtree(p, ignore_errors=True)


def refuse_empty(raw) -> None:
    """Refuse an empty output folder name (``-o ""``, which would mean the current folder)."""
    if str(raw).strip() == "":
        raise InputError('output folder "": give -o a folder name')


def _refuse(outdir: Path, raw, inputs) -> tuple[Path, Path]:
    """The checks before anything is written; returns (outdir, parent) resolved."""
    refuse_empty(raw)
    if outdir.is_symlink() and not outdir.exists():
        raise InputError(f"output folder {raw} is a symbolic link to {os.readlink(outdir)}, "
                         "which does not exist; give -o a folder")
    target = outdir.resolve()
    if target.exists() and not target.is_dir():
        raise InputError(f"output folder {raw} is a file; give -o a folder")
    here = Path.cwd().resolve()
    if target == here or target in here.parents or target.parent == target:
        raise InputError(f"output folder {raw} is the current folder or holds it; "
                         "give -o a folder of its own")
    for p in inputs:
        p = Path(p).resolve()
        if p == target or target in p.parents:
            raise InputError(f"output folder {raw} holds {p.name}, an input of this project "
                             "(the folder is replaced whole); choose another -o or output.dir")
    parent = target.parent
    existing = parent
    while not existing.exists():
        existing = existing.parent
    if not existing.is_dir():
        raise InputError(f"output folder {raw}: cannot make {parent} ({existing} is a file)")
    if not os.access(existing, os.W_OK | os.X_OK):
        raise InputError(f"output folder {raw}: cannot write in {existing} (permission denied)")
    if target.is_dir():
        if not os.access(target, os.W_OK | os.X_OK):
            raise InputError(f"output folder {raw} is read-only; choose another -o")
        present = _files(target)
        if present or (target / MANIFEST).exists():
            try:
                listed = _read_manifest(target)["entries"]
            except InputError:
                listed = {}
            foreign = [rel for rel in present if rel not in listed]
            if foreign:
                why = (f"not in its {MANIFEST}" if listed else
                       f"the folder has no {MANIFEST}: not a gisgrade result, or one written "
                       "before results carried a manifest")
                raise InputError(f"output folder {raw} holds {foreign[0]}, which no gisgrade run "
                                 f"recorded ({why}); the folder is replaced whole, so move it "
                                 "or choose another -o")
    return target, parent


def refuse_outdir(outdir, *, inputs=()) -> None:
    """The refusals of :func:`atomic_folder`, checked early (before a long
    computation); raises InputError, writes nothing (the parent folder aside)."""
    _refuse(Path(outdir), outdir, inputs)


@contextlib.contextmanager
def atomic_folder(outdir, *, inputs=()):
    """Yield a temporary folder beside ``outdir`` to write a result into; on
    success write ``MANIFEST.json`` last and swap the folder in for
    ``outdir`` whole (see the module text). ``inputs``: the paths the run
    read; an ``outdir`` that is or holds one is refused.

    >>> import tempfile, pathlib
    >>> base = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_folder(base / "out") as tmp:
    ...     _ = (tmp / "a.csv").write_text("x\\n")
    >>> sorted(p.name for p in (base / "out").iterdir())
    ['MANIFEST.json', 'a.csv']
    >>> verify_folder(base / "out")["files"][0]["bytes"]
    2
    """
    raw = outdir
    target, parent = _refuse(Path(outdir), raw, inputs)
    try:
        parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"output folder {raw}: cannot make {parent} ({exc.strerror})") from None
    _clean(parent, target)
    pid = os.getpid()
    try:
        tmp = Path(tempfile.mkdtemp(prefix=f".{target.name}.{_NEW}-{pid}-", dir=parent))
    except OSError as exc:
        raise InputError(f"output folder {raw}: cannot write there ({exc.strerror})") from None
    try:
        yield tmp
        _write_manifest(tmp)
        if target.exists():
            if _exchange(tmp, target):  # tmp now holds the old folder
                shutil.rmtree(tmp, ignore_errors=True)
                return
            old = Path(tempfile.mkdtemp(prefix=f".{target.name}.{_OLD}-{pid}-", dir=parent))
            os.replace(target, old)  # old is an empty folder: replaced by the old result
            os.rename(tmp, target)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.rename(tmp, target)
    finally:
        _VOUCHED.pop(_vouched_key(tmp), None)
        if tmp.exists():
            shutil.rmtree(tmp, ignore_errors=True)
