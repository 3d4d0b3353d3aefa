"""A run killed (SIGKILL) at random points and resumed gives one result per well and the uninterrupted verdicts."""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import time

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


def _command(manifest, out):
    return [sys.executable, "-m", "nmrcheck", "plate", "run", str(manifest), "--out", str(out), "--workers", "2", "--no-report"]


@pytest.mark.slow
def test_killed_runs_resume_to_the_same_verdicts(plate_manifest, screened_plate, tmp_path):
    _, reference_out, _ = screened_plate
    with ResultsStore(reference_out) as store:
        reference = {w: r.verdict for w, r in store.current().items()}
    out = tmp_path / "killed"
    seed = random.randrange(1_000_000)
    rng = random.Random(seed)
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    kills = 0
    # Kill points: after 1-5 more wells are stored (so every kill lands mid-plate), plus a random delay.
    for _ in range(3):
        target = min(_stored(out) + rng.randint(1, 5), len(reference) - 1)
        # New session: the kill reaches the run and its worker processes, and nothing else.
        proc = subprocess.Popen(_command(plate_manifest, out), stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True, env=env)
        deadline = time.monotonic() + 60
        while proc.poll() is None and _stored(out) < target and time.monotonic() < deadline:
            time.sleep(0.02)
        time.sleep(rng.uniform(0.0, 0.15))
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
            kills += 1
        proc.wait(timeout=30)
    final = subprocess.run(_command(plate_manifest, out), capture_output=True, text=True, timeout=300, env=env)
    assert final.returncode == 0, final.stderr
    with ResultsStore(out) as store:
        current = store.current()
        history = store.count_history()
        runs = store.runs()
    assert set(current) == set(reference), f"seed {seed}"
    # One transaction per well and resume skipping finished wells: no well is screened twice.
    assert history == len(reference), f"seed {seed}: {history} results recorded for {len(reference)} wells"
    assert {w: r.verdict for w, r in current.items()} == reference, f"seed {seed}"
    assert runs[-1].status == "complete"
    assert kills >= 2, f"seed {seed}: only {kills} run(s) were still going when killed"
    assert sum(r.status == "interrupted" for r in runs) == kills, f"seed {seed}"
