"""Local workers: a time and a memory limit per well, a lost worker's well retried once, each well committed on arrival.

The misbehaving wells are made by replacing the recording reader with one that hangs,
allocates or dies: the workers are forked from the test process, so they run the
replacement exactly where a broken recording would hang, allocate or crash the reader.
"""

from __future__ import annotations

import os
import signal
import time

import numpy as np
import pytest

import nmrcheck.io
from nmrcheck.errors import ParameterError
from nmrcheck.plate import ResultsStore, read_manifest, run_plate
from nmrcheck.plate.progress import Progress
from nmrcheck.plate.workers import WellLimits, parse_duration, parse_memory

WELLS = ("A1", "A2", "A3", "A4")


def _misbehave_on(monkeypatch, well, action):
    real = nmrcheck.io.read_any

    def reader(path, *args, **kwargs):
        if os.path.basename(str(path).rstrip("/")) == well:
            action(path)
        return real(path, *args, **kwargs)

    monkeypatch.setattr(nmrcheck.io, "read_any", reader)


def _stored(out):
    with ResultsStore(out) as store:
        return store.current(with_trace=False), store.count_history()


def test_a_hanging_well_is_stopped_and_the_plate_goes_on(small_plate, tmp_path, monkeypatch):
    _misbehave_on(monkeypatch, "A2", lambda path: time.sleep(3600))
    manifest = read_manifest(small_plate(WELLS))
    t0 = time.monotonic()
    summary = run_plate(manifest, tmp_path / "out", workers=2, limits=WellLimits(time_s=2.0))
    assert time.monotonic() - t0 < 60
    current, history = _stored(tmp_path / "out")
    assert summary.status == "complete" and history == 4
    assert current["A2"].status == "error"
    assert current["A2"].error.startswith("took longer than 2 s")
    assert all(current[w].status == "done" for w in ("A1", "A3", "A4"))


def test_a_well_asking_for_too_much_memory_is_stopped(small_plate, tmp_path, monkeypatch):
    # 8 GB of float64 against a 2 GB address-space limit.
    _misbehave_on(monkeypatch, "A3", lambda path: np.ones(10**9))
    manifest = read_manifest(small_plate(WELLS))
    run_plate(manifest, tmp_path / "out", workers=1, limits=WellLimits(memory_gb=2.0))
    current, history = _stored(tmp_path / "out")
    assert history == 4
    assert current["A3"].status == "error"
    assert "memory limit" in current["A3"].error and "2 GB" in current["A3"].error
    assert all(current[w].status == "done" for w in ("A1", "A2", "A4"))


def test_a_worker_killed_once_is_replaced_and_its_well_retried(small_plate, tmp_path, monkeypatch):
    marker = tmp_path / "killed-once"

    def die_once(path):
        if not marker.exists():
            marker.write_text("x")
            os.kill(os.getpid(), signal.SIGKILL)

    _misbehave_on(monkeypatch, "A2", die_once)
    manifest = read_manifest(small_plate(WELLS))
    run_plate(manifest, tmp_path / "out", workers=2)
    current, history = _stored(tmp_path / "out")
    assert marker.exists()
    assert history == 4 and all(r.status == "done" for r in current.values())


def test_a_well_that_always_kills_its_worker_is_recorded(small_plate, tmp_path, monkeypatch):
    _misbehave_on(monkeypatch, "A1", lambda path: os.kill(os.getpid(), signal.SIGKILL))
    manifest = read_manifest(small_plate(WELLS))
    run_plate(manifest, tmp_path / "out", workers=2)
    current, history = _stored(tmp_path / "out")
    assert history == 4
    assert current["A1"].status == "error" and "SIGKILL" in current["A1"].error
    assert all(current[w].status == "done" for w in ("A2", "A3", "A4"))


class _CountingProgress(Progress):
    """After each well: how many results another connection already sees in the database."""

    def __init__(self, out):
        self.out = out
        self.seen = []

    def result(self, result, *, done, total):
        with ResultsStore(self.out) as other:
            self.seen.append((done, other.count_history()))


@pytest.mark.parametrize("workers", [1, 2])
def test_each_well_is_committed_as_it_finishes(small_plate, tmp_path, workers):
    manifest = read_manifest(small_plate(WELLS))
    out = tmp_path / "out"
    progress = _CountingProgress(out)
    run_plate(manifest, out, workers=workers, progress=progress)
    assert progress.seen == [(k, k) for k in range(1, 5)]


@pytest.mark.parametrize(
    ("text", "seconds"),
    [("120", 120.0), ("90s", 90.0), ("2min", 120.0), ("2 min", 120.0), ("1.5h", 5400.0), (45, 45.0)],
)
def test_durations(text, seconds):
    assert parse_duration(text) == seconds


@pytest.mark.parametrize(("text", "gb"), [("4", 4.0), ("4GB", 4.0), ("512MB", 0.512), ("16 gb", 16.0)])
def test_memory_amounts(text, gb):
    assert parse_memory(text) == pytest.approx(gb)


@pytest.mark.parametrize("text", ["nan", "inf", "0", "-5s", "2 days", "1e9h", ""])
def test_bad_durations(text):
    with pytest.raises(ParameterError, match="--well-timeout"):
        parse_duration(text)


@pytest.mark.parametrize("text", ["nan", "0.01", "1e6", "4TB", "lots"])
def test_bad_memory_amounts(text):
    with pytest.raises(ParameterError, match="--well-memory"):
        parse_memory(text)
