"""End to end: a 24-well synthetic plate screened, resumed, redone, and run on another executor."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.plate import ResultsStore, read_manifest, run_plate
from nmrcheck.plate.runner import InlineExecutor


def test_every_well_gets_one_result(screened_plate):
    manifest, out, summary = screened_plate
    assert summary.status == "complete"
    assert summary.wells == summary.screened == 24
    with ResultsStore(out) as store:
        current = store.current()
        assert set(current) == {w.well for w in manifest.wells}
        assert store.count_history() == 24


def test_failures_are_results_not_exceptions(screened_plate):
    """B11 holds noise only and C12 a truncated fid: by construction in nmrcheck.demo."""
    _, out, _ = screened_plate
    with ResultsStore(out) as store:
        current = store.current()
    assert current["B11"].status == "empty" and current["B11"].verdict == "empty"
    assert current["C12"].status == "unreadable"
    assert "truncated" in current["C12"].error


def test_deliberate_contradiction_is_called_inconsistent(screened_plate):
    """A7: spectrum of thymol, manifest and MS claim methyl cinnamate (by construction in nmrcheck.demo)."""
    _, out, _ = screened_plate
    with ResultsStore(out) as store:
        a7 = store.current()["A7"]
    assert a7.verdict == "inconsistent"
    assert any(c["verdict"] == "inconsistent" for c in a7.checks)


def test_matching_wells_are_not_called_inconsistent(screened_plate):
    """Wells whose manifest names what the spectrum was built from (nmrcheck.demo) must not contradict it."""
    from nmrcheck.demo import demo_wells

    truthful = {w.well for w in demo_wells() if w.content and w.content == w.claimed and not w.corrupt}
    _, out, _ = screened_plate
    with ResultsStore(out) as store:
        current = store.current()
    called = {w: current[w].verdict for w in current if w in truthful}
    assert called, "the plate has truthful wells"
    assert all(v in ("consistent", "doubtful", "undecided") for v in called.values()), called
    assert sum(v == "consistent" for v in called.values()) >= len(called) // 2


def test_results_carry_their_evidence(screened_plate):
    _, out, _ = screened_plate
    with ResultsStore(out) as store:
        r = store.current()["A1"]
    assert r.software_version and r.options_hash
    assert r.processing["options"]["lb_hz"] == 0.3  # the ProcessingOptions default
    assert r.regions and r.count["total_h"] > 0
    assert r.trace is not None and r.trace.values.size > 100
    assert set(r.timings) >= {"read", "process"}
    assert r.candidates and r.checks


def test_rerun_resumes_and_redo_keeps_history(screened_plate, tmp_path):
    manifest, out, _ = screened_plate
    again = run_plate(manifest, out, workers=1)
    assert again.screened == 0 and again.skipped == 24
    import shutil

    copy = tmp_path / "copy"
    shutil.copytree(out, copy)
    first = {w: r.verdict for w, r in ResultsStore(copy).current().items()}
    sub = read_manifest(manifest.path)
    redo = run_plate(sub, copy, workers=1, redo=True)
    assert redo.screened == 24
    with ResultsStore(copy) as store:
        assert store.count_history() == 48
        assert len(store.history("A1")) == 2
        assert {w: r.verdict for w, r in store.current().items()} == first


def test_other_executor_gives_the_same_verdicts(screened_plate, tmp_path):
    """Pluggable executor: any concurrent.futures.Executor (a thread pool stands in for Dask's)."""
    manifest, out, _ = screened_plate
    with ResultsStore(out) as store:
        reference = {w: r.verdict for w, r in store.current().items()}
    with ThreadPoolExecutor(max_workers=2) as pool:
        summary = run_plate(manifest, tmp_path / "threads", executor=pool)
    assert summary.screened == 24
    with ResultsStore(tmp_path / "threads") as store:
        assert {w: r.verdict for w, r in store.current().items()} == reference


def test_missing_recording_is_unreadable(tmp_path):
    (tmp_path / "m.csv").write_text("well,spectrum\nA1,nowhere/1\n")
    summary = run_plate(read_manifest(tmp_path / "m.csv"), tmp_path / "out", executor=InlineExecutor())
    assert summary.verdicts == {"unreadable": 1}


def test_bad_run_parameters(tmp_path):
    (tmp_path / "m.csv").write_text("well,spectrum\nA1,x\n")
    m = read_manifest(tmp_path / "m.csv")
    with pytest.raises(ParameterError, match="workers"):
        run_plate(m, tmp_path / "o", workers=0)
    with pytest.raises(ParameterError, match="time_limit_s"):
        run_plate(m, tmp_path / "o", time_limit_s=0, executor=InlineExecutor())
