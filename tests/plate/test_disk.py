"""A full disk or a read-only folder: one-line errors, a database that stays consistent, exports and report never half-written.

Run on a small tmpfs mounted for the test (needs root and permission to mount; skipped otherwise).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import uuid

import pytest
from click.testing import CliRunner

from nmrcheck.cli import main
from nmrcheck.errors import OutputError
from nmrcheck.plate import ResultsStore, read_manifest, run_plate
from nmrcheck.plate.runner import InlineExecutor
from nmrcheck.report.plate_report import write_plate_report

WELLS = tuple(f"A{c}" for c in range(1, 9))


def _mount_tmpfs(path, size_kb):
    path.mkdir(parents=True, exist_ok=True)
    if os.geteuid() != 0 or shutil.which("mount") is None:
        pytest.skip("disk-full tests need root to mount a small tmpfs")
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={size_kb}k", f"nmrcheck-test-{uuid.uuid4().hex[:8]}", str(path)], capture_output=True, text=True)
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {done.stderr.strip()}")


@pytest.fixture
def small_disk(tmp_path):
    disk = tmp_path / "disk"
    _mount_tmpfs(disk, 1024)
    yield disk
    subprocess.run(["umount", "-l", str(disk)], check=False)


def _fill(disk, leave_bytes):
    """A filler file taking all but ``leave_bytes`` of the disk."""
    st = os.statvfs(disk)
    free = st.f_bavail * st.f_frsize
    filler = disk / "filler"
    with open(filler, "wb") as fh:
        try:
            fh.write(b"\0" * max(0, free - leave_bytes))
        except OSError:
            pass
    return filler


def test_disk_full_during_the_run(small_plate, small_disk):
    manifest = read_manifest(small_plate(WELLS))
    out = small_disk / "out"
    out.mkdir()
    filler = _fill(small_disk, 96 * 1024)
    with pytest.raises(OutputError) as info:
        run_plate(manifest, out, executor=InlineExecutor())
    message = str(info.value)
    assert "\n" not in message and "disk is full" in message and str(out) in message
    filler.unlink()
    with ResultsStore(out) as store:
        assert store.integrity_ok()
        kept = store.count_history()
    assert kept < len(WELLS)
    # With room again, the rerun completes every well exactly once.
    run_plate(manifest, out, executor=InlineExecutor())
    with ResultsStore(out) as store:
        assert store.integrity_ok()
        assert store.count_history() == len(WELLS) and len(store.current()) == len(WELLS)


def test_disk_full_while_writing_the_report_keeps_the_old_one(small_plate, small_disk):
    manifest = read_manifest(small_plate(WELLS))
    out = small_disk / "out"
    run_plate(manifest, out, executor=InlineExecutor())
    write_plate_report(out)
    before = {name: (out / name).read_bytes() for name in ("report.html", "results.csv", "results.json")}
    assert all(before.values())
    _fill(small_disk, 0)
    with pytest.raises(OutputError, match="disk is full") as info:
        write_plate_report(out, title="a new title")
    assert "\n" not in str(info.value)
    assert {name: (out / name).read_bytes() for name in before} == before
    assert not [p.name for p in out.iterdir() if p.name.endswith(".tmp")]


def test_read_only_folder_gives_one_line(small_plate, small_disk):
    manifest = small_plate(WELLS[:2])
    out = small_disk / "out"
    run_plate(read_manifest(manifest), out, executor=InlineExecutor())
    subprocess.run(["mount", "-o", "remount,ro", str(small_disk)], check=True)
    for args in (["plate", "run", str(manifest), "--out", str(out), "--redo"], ["plate", "run", str(manifest), "--out", str(small_disk / "new")], ["plate", "report", str(out)], ["demo", "--out", str(small_disk / "demo")]):
        result = CliRunner().invoke(main, args)
        assert result.exit_code == 2, (args, result.output)
        assert result.output.startswith("nmrcheck: ") and result.output.count("\n") == 1, result.output
        assert "read-only" in result.output
