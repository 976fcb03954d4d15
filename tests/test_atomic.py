"""Crash-safe output (gisgrade.output.atomic): a result folder is whole or absent.

The kill tests run a writer in a child process that dies (``os._exit``, no
clean-up runs, as under ``kill -9``) at each step of the swap, then check
what is left against the rule: OUTDIR is the old complete folder or the new
complete one (its manifest verifies), plus at most one hidden folder, which
the next run removes. SHA-256 is checked against Python's ``hashlib``
(FIPS 180-4).
"""
from __future__ import annotations

import hashlib
import json
import os
import subprocess
import sys
import textwrap

import pytest

from gisgrade.errors import InputError
from gisgrade.output import atomic
from gisgrade.output.atomic import MANIFEST, atomic_folder, verify_folder


def fill(folder, tag):
    with atomic_folder(folder) as tmp:
        (tmp / "a.csv").write_text(f"{tag}\n")
        (tmp / "sheets").mkdir()
        (tmp / "sheets" / "s1.png").write_bytes(tag.encode() * 3)


def hidden(base):
    return sorted(p.name for p in base.iterdir() if p.name.startswith("."))


def test_a_new_folder_gets_a_manifest_written_last_and_it_verifies(tmp_path):
    out = tmp_path / "out"
    fill(out, "one")
    doc = json.loads((out / MANIFEST).read_text())
    listed = {e["path"]: e for e in doc["files"]}
    assert set(listed) == {"a.csv", "sheets/s1.png"}
    assert listed["a.csv"]["sha256"] == hashlib.sha256(b"one\n").hexdigest()
    assert listed["sheets/s1.png"]["bytes"] == 9
    assert doc["gisgrade"] and verify_folder(out)["gisgrade"] == doc["gisgrade"]
    assert hidden(tmp_path) == []


def test_a_second_run_replaces_the_folder_whole(tmp_path):
    out = tmp_path / "out"
    fill(out, "one")
    with atomic_folder(out) as tmp:
        (tmp / "b.csv").write_text("two\n")
    assert sorted(p.name for p in out.iterdir()) == [MANIFEST, "b.csv"]  # no stale a.csv
    verify_folder(out)
    assert hidden(tmp_path) == []


def test_an_error_while_writing_leaves_the_old_result_and_no_hidden_folder(tmp_path):
    out = tmp_path / "out"
    fill(out, "one")
    with pytest.raises(RuntimeError):
        with atomic_folder(out) as tmp:
            (tmp / "a.csv").write_text("half")
            raise RuntimeError("writer failed")
    assert (out / "a.csv").read_text() == "one\n"
    verify_folder(out)
    assert hidden(tmp_path) == []


@pytest.mark.parametrize("change, words", [
    (lambda out: (out / "a.csv").write_text("edited\n"), "a.csv differs"),
    (lambda out: (out / "a.csv").unlink(), "a.csv is listed"),
    (lambda out: (out / "extra.txt").write_text("x"), "extra.txt is not listed"),
    (lambda out: (out / MANIFEST).write_text("{"), "damaged manifest"),
    (lambda out: (out / MANIFEST).unlink(), "no MANIFEST.json"),
])
def test_verify_names_what_is_wrong(tmp_path, change, words):
    out = tmp_path / "out"
    fill(out, "one")
    change(out)
    with pytest.raises(InputError, match=words):
        verify_folder(out)


def refused(outdir, words, inputs=()):
    with pytest.raises(InputError, match=words) as info:
        with atomic_folder(outdir, inputs=inputs) as tmp:
            (tmp / "a.csv").write_text("x")
    assert "\n" not in str(info.value)


def test_refusals(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    refused("", 'output folder ""')
    refused(".", "current folder")
    refused(tmp_path.parent, "current folder")
    (tmp_path / "file").write_text("x")
    refused(tmp_path / "file", "is a file")
    (tmp_path / "dangling").symlink_to(tmp_path / "nowhere")
    refused(tmp_path / "dangling", "symbolic link .* does not exist")
    (tmp_path / "proj").mkdir()
    (tmp_path / "proj" / "project.toml").write_text("x")
    refused(tmp_path / "proj", "holds project.toml, an input", inputs=[tmp_path / "proj" / "project.toml"])
    refused(tmp_path / "proj" / "project.toml", "is a file")
    (tmp_path / "mine").mkdir()
    (tmp_path / "mine" / "notes.txt").write_text("keep me")
    refused(tmp_path / "mine", "holds notes.txt, which no gisgrade run recorded")
    assert (tmp_path / "mine" / "notes.txt").read_text() == "keep me"
    assert (tmp_path / "proj" / "project.toml").read_text() == "x"
    assert not (tmp_path / "nowhere").exists()
    assert hidden(tmp_path) == []


def test_an_unwritable_parent_or_read_only_folder_is_refused(tmp_path, monkeypatch):
    # The tests may run as root, which the permission bits do not stop, so the
    # answer of os.access is what is simulated here (the check is ours, not the kernel's).
    fill(tmp_path / "out", "one")
    real = os.access
    monkeypatch.setattr(atomic.os, "access", lambda p, mode: False if str(p) == str(tmp_path) else real(p, mode))
    refused(tmp_path / "new", "cannot write in")
    monkeypatch.setattr(atomic.os, "access",
                        lambda p, mode: False if str(p) == str(tmp_path / "out") else real(p, mode))
    refused(tmp_path / "out", "read-only")
    assert (tmp_path / "out" / "a.csv").read_text() == "one\n"


def test_a_live_symlink_is_followed(tmp_path):
    (tmp_path / "real").mkdir()
    (tmp_path / "link").symlink_to(tmp_path / "real")
    fill(tmp_path / "link", "one")
    assert (tmp_path / "link").is_symlink()
    verify_folder(tmp_path / "real")


CHILD = textwrap.dedent("""
    import os, sys
    from pathlib import Path
    from gisgrade.output import atomic
    out, step, exchange = Path(sys.argv[1]), sys.argv[2], sys.argv[3] == "1"
    if not exchange:
        atomic._exchange = lambda a, b: False
    real_rename, real_replace, real_rmtree = os.rename, os.replace, atomic.shutil.rmtree
    real_manifest, real_exchange = atomic._write_manifest, atomic._exchange
    def die(name, real):
        def f(*a, **k):
            if step == name:
                os._exit(9)
            return real(*a, **k)
        return f
    atomic._write_manifest = die("manifest", real_manifest)
    atomic._exchange = die("exchange", real_exchange)
    atomic.os.rename = die("rename", real_rename)
    def after_replace(*a, **k):
        real_replace(*a, **k)
        if step == "between":
            os._exit(9)
    atomic.os.replace = after_replace
    def after_swap(*a, **k):
        if step == "cleanup":
            os._exit(9)
        return real_rmtree(*a, **k)
    atomic.shutil.rmtree = after_swap
    with atomic.atomic_folder(out) as tmp:
        (tmp / "a.csv").write_text("two\\n")
        if step == "writing":
            os._exit(9)
""")


STEPS = [(s, True) for s in ("writing", "manifest", "exchange", "cleanup")] + \
        [(s, False) for s in ("writing", "manifest", "between", "rename", "cleanup")]


def exchange_works(tmp_path):
    (tmp_path / "p").mkdir()
    (tmp_path / "q").mkdir()
    (tmp_path / "p" / "mark").write_text("")
    ok = atomic._exchange(tmp_path / "p", tmp_path / "q") and (tmp_path / "q" / "mark").exists()
    for name in "pq":
        atomic.shutil.rmtree(tmp_path / name)
    return ok


@pytest.mark.parametrize("step, exchange", STEPS, ids=[f"{s}-{'exchange' if e else 'renames'}" for s, e in STEPS])
def test_a_kill_at_any_step_leaves_one_complete_folder(tmp_path, step, exchange):
    if exchange and not exchange_works(tmp_path):
        pytest.skip("renameat2(RENAME_EXCHANGE) is not available on this system")
    out = tmp_path / "out"
    fill(out, "one")
    proc = subprocess.run([sys.executable, "-c", CHILD, str(out), step, "1" if exchange else "0"],
                          capture_output=True, text=True)
    assert proc.returncode == 9, proc.stderr
    left = hidden(tmp_path)
    if out.exists():
        assert len(left) <= 1, left
        verify_folder(out)
        assert (out / "a.csv").read_text() in ("one\n", "two\n")
    else:
        # Only the two-rename fallback (no renameat2) has this gap: both complete
        # folders are hidden, and the next run puts the old one back.
        assert not exchange and step in ("between", "rename") and len(left) == 2
    with atomic_folder(out) as tmp:  # the next run cleans up and writes
        (tmp / "a.csv").write_text("three\n")
    assert (out / "a.csv").read_text() == "three\n" and hidden(tmp_path) == []


def test_the_gap_between_two_renames_is_repaired_by_the_next_run(tmp_path):
    out = tmp_path / "out"
    fill(out, "one")
    subprocess.run([sys.executable, "-c", CHILD, str(out), "between", "0"], check=False)
    assert not out.exists()
    atomic._clean(tmp_path, out)  # what the next run does first
    assert (out / "a.csv").read_text() == "one\n" and hidden(tmp_path) == []
    verify_folder(out)


def test_a_vouched_digest_is_taken_only_for_the_file_as_it_was(tmp_path):
    """A writer's digest_of stamp stands in for reading the file again, but only
    while the file keeps that size and modification time; SHA-256 by hashlib
    (the standard library's) is the reference."""
    from gisgrade.output.atomic import digest_of, vouch

    with atomic_folder(tmp_path / "out") as tmp:
        (tmp / "big.bin").write_bytes(b"x" * 1000)
        size, mtime, digest = digest_of(tmp / "big.bin")
        assert digest == hashlib.sha256(b"x" * 1000).hexdigest() and size == 1000
        vouch(tmp, "big.bin", (size, mtime, "0" * 64))  # a stand-in: shows it was taken
        (tmp / "late.bin").write_bytes(b"a")
        stamp = digest_of(tmp / "late.bin")
        (tmp / "late.bin").write_bytes(b"bb")  # changed after its stamp: read again
        vouch(tmp, "late.bin", stamp)
    doc = json.loads((tmp_path / "out" / MANIFEST).read_text())
    got = {e["path"]: e["sha256"] for e in doc["files"]}
    assert got == {"big.bin": "0" * 64, "late.bin": hashlib.sha256(b"bb").hexdigest()}
