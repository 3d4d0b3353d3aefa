"""One run per output folder: a second run refuses with one line naming the folder and the holder; a dead holder's lock is taken over."""

from __future__ import annotations

import os
import subprocess
import sys
import time

import pytest
from click.testing import CliRunner

from nmrcheck.cli import main
from nmrcheck.errors import OutputError
from nmrcheck.plate import ResultsStore, read_manifest, run_plate
from nmrcheck.plate.lock import LOCK_NAME, OutputLock
from nmrcheck.plate.runner import InlineExecutor

WELLS = tuple(f"{r}{c}" for r in "AB" for c in range(1, 7))


def test_second_lock_on_a_folder_is_refused(tmp_path):
    with OutputLock(tmp_path):
        with pytest.raises(OutputError, match=f"pid {os.getpid()}") as info:
            OutputLock(tmp_path).acquire()
    assert str(tmp_path) in str(info.value) and "\n" not in str(info.value)
    # Released: the folder can be taken again.
    with OutputLock(tmp_path):
        pass


def test_lock_left_by_a_dead_process_is_taken_over(small_plate, tmp_path):
    manifest = read_manifest(small_plate(("A1",)))
    out = tmp_path / "out"
    out.mkdir()
    # What a killed run leaves: the lock file with its pid, no process holding it.
    (out / LOCK_NAME).write_text("pid 999999 on elsewhere since 2020-01-01 00:00:00\n")
    summary = run_plate(manifest, out, executor=InlineExecutor())
    assert summary.status == "complete"


@pytest.mark.slow
def test_two_runs_on_one_folder(small_plate, tmp_path):
    """A second run while the first is going refuses at once; the first finishes every well exactly once."""
    manifest = small_plate(WELLS, points=8192)
    out = tmp_path / "out"
    first = subprocess.Popen(
        [sys.executable, "-m", "nmrcheck", "plate", "run", str(manifest), "--out", str(out), "--workers", "1", "--no-report"],
        stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
    )
    deadline = time.monotonic() + 60
    while first.poll() is None and time.monotonic() < deadline:
        lock = out / LOCK_NAME
        if lock.exists() and f"pid {first.pid}" in lock.read_text():
            break
        time.sleep(0.02)
    assert first.poll() is None, "the first run ended before the second could start"
    result = CliRunner().invoke(main, ["plate", "run", str(manifest), "--out", str(out), "--no-report"])
    _, err = first.communicate(timeout=120)
    assert first.returncode == 0, err
    assert result.exit_code == 2
    message = result.output.strip()
    assert message.count("\n") == 0, message
    assert str(out) in message and f"pid {first.pid}" in message
    with ResultsStore(out) as store:
        assert store.count_history() == len(WELLS)
        assert [r.status for r in store.runs()] == ["complete"]

