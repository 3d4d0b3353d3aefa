"""A run killed (SIGKILL) or stopped (SIGTERM) at random points and resumed: nothing lost, nothing duplicated, nothing left running."""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

from nmrcheck.plate import ResultsStore


def _stored(out) -> int:
    """Wells with a stored result so far (0 before the database exists)."""
    if not (out / "results.sqlite").exists():
        return 0
    try:
        with ResultsStore(out) as store:
            return len(store.finished())
    except Exception:  # noqa: BLE001 - the run may be creating the database right now
        return 0


def _command(manifest, out, workers):
    return [sys.executable, "-m", "nmrcheck", "plate", "run", str(manifest), "--out", str(out), "--workers", str(workers), "--no-report"]


def _alive_with_tag(tag: str) -> list[int]:
    """Processes (not zombies) whose environment carries ``NMRCHECK_TEST_TAG=tag``: the run and everything it started."""
    needle = f"NMRCHECK_TEST_TAG={tag}".encode()
    found = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            env = Path(f"/proc/{entry}/environ").read_bytes()
            state = Path(f"/proc/{entry}/stat").read_text().rsplit(")", 1)[1].split()[0]
        except OSError:
            continue
        if needle in env.split(b"\0") and state != "Z":
            found.append(int(entry))
    return found


def _left_behind(tag: str, wait_s: float = 5.0) -> list[int]:
    deadline = time.monotonic() + wait_s
    while (alive := _alive_with_tag(tag)) and time.monotonic() < deadline:
        time.sleep(0.05)
    return alive


WELLS = tuple(f"{r}{c}" for r in "AB" for c in range(1, 7))


@pytest.fixture
def plate(small_plate, tmp_path):
    """(manifest path, verdicts of an uninterrupted in-process run) for a 12-well plate of short FIDs."""
    from nmrcheck.plate import read_manifest, run_plate
    from nmrcheck.plate.runner import InlineExecutor

    manifest = small_plate(WELLS, points=8192)
    run_plate(read_manifest(manifest), tmp_path / "reference", executor=InlineExecutor())
    with ResultsStore(tmp_path / "reference") as store:
        return manifest, {w: r.verdict for w, r in store.current().items()}


def _start(manifest, out, workers, tag):
    env = dict(os.environ, PYTHONUNBUFFERED="1", NMRCHECK_TEST_TAG=tag)
    return subprocess.Popen(_command(manifest, out, workers), stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, start_new_session=True, env=env, text=True)


def _runs(out) -> int:
    """Runs recorded in the results database so far (0 before it exists)."""
    if not (out / "results.sqlite").exists():
        return 0
    try:
        with ResultsStore(out) as store:
            return len(store.runs())
    except Exception:  # noqa: BLE001 - the run may be creating the database right now
        return 0


def _wait_for(proc, out, target, timeout_s=60.0, runs_before=None):
    """Until ``target`` wells are stored and (with ``runs_before``) the new run has registered itself:
    a run killed before it wrote its run record cannot be marked interrupted later."""
    deadline = time.monotonic() + timeout_s
    while proc.poll() is None and time.monotonic() < deadline and (
            _stored(out) < target or (runs_before is not None and _runs(out) <= runs_before)):
        time.sleep(0.02)


pytestmark = pytest.mark.skipif(not Path("/proc/self/environ").exists(), reason="needs /proc to find processes left behind")


@pytest.mark.slow
@pytest.mark.parametrize("workers", [1, 2])
def test_killed_run_leaves_nothing_running_and_resumes(plate, tmp_path, workers):
    """SIGKILL to the run alone (its workers must go with it), then to the whole process group; then a rerun."""
    plate_manifest, reference = plate
    out = tmp_path / "killed"
    seed = random.randrange(1_000_000)
    rng = random.Random(seed)
    kills = 0
    cut_short = 0  # kills that left wells unscreened (the run cannot have finished)
    for trial in range(2):
        tag = uuid.uuid4().hex
        # At least four wells left when the kill is sent, and a short random delay: on a loaded
        # machine a longer one let the run finish the plate before the kill arrived.
        target = min(_stored(out) + rng.randint(1, 3), len(reference) - 4)
        runs_before = _runs(out)
        proc = _start(plate_manifest, out, workers, tag)
        _wait_for(proc, out, target, runs_before=runs_before)
        time.sleep(rng.uniform(0.0, 0.05))
        if proc.poll() is None:
            if trial == 0:
                os.kill(proc.pid, signal.SIGKILL)
            else:
                os.killpg(proc.pid, signal.SIGKILL)
            kills += 1
        proc.wait(timeout=30)
        proc.stderr.close()
        cut_short += _stored(out) < len(reference)
        assert _left_behind(tag) == [], f"seed {seed}, trial {trial}: processes left behind"
    from nmrcheck.plate import read_manifest, run_plate

    run_plate(read_manifest(plate_manifest), out, workers=workers)
    with ResultsStore(out) as store:
        current = store.current()
        history = store.count_history()
        runs = store.runs()
    assert set(current) == set(reference), f"seed {seed}: wells lost"
    # One transaction per well and resume skipping finished wells: no well is screened twice.
    assert history == len(reference), f"seed {seed}: {history} results recorded for {len(reference)} wells"
    assert {w: r.verdict for w, r in current.items()} == reference, f"seed {seed}"
    assert runs[-1].status == "complete"
    assert kills == 2, f"seed {seed}: only {kills} run(s) were still going when killed"
    # A killed run is marked interrupted by the next run; one that stored its last well in the
    # instant before the kill arrived is rightly 'complete' (its results are all there).
    assert all(r.status in ("interrupted", "complete") for r in runs[:-1]), f"seed {seed}"
    # On a loaded machine the 0-0.15 s before a kill can be enough to finish the plate; every run
    # killed with wells still unscreened must have been marked interrupted.
    assert sum(r.status == "interrupted" for r in runs) >= cut_short, f"seed {seed}: {cut_short} run(s) killed with wells left"
    with ResultsStore(out) as store:
        assert store.integrity_ok()


@pytest.mark.slow
@pytest.mark.parametrize("signum", [signal.SIGTERM])
def test_a_stop_signal_ends_the_run_cleanly(plate, tmp_path, signum):
    plate_manifest, _ = plate
    out = tmp_path / "stopped"
    tag = uuid.uuid4().hex
    proc = _start(plate_manifest, out, 1, tag)
    _wait_for(proc, out, 2)
    assert proc.poll() is None, "the run ended before it could be stopped"
    os.kill(proc.pid, signum)
    _, err = proc.communicate(timeout=30)
    assert proc.returncode == 128 + signum
    lines = [ln for ln in err.splitlines() if ln.startswith("nmrcheck:")]
    assert len(lines) == 1 and signal.Signals(signum).name in lines[0] and str(out) in lines[0], err
    assert "Traceback" not in err
    assert _left_behind(tag) == []
    with ResultsStore(out) as store:
        assert store.runs()[-1].status == "interrupted"
        assert store.count_history() == len(store.finished()) >= 2
