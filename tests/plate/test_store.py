"""The SQLite results store: one current row per (well, options), history kept, runs recorded."""

from __future__ import annotations

import numpy as np

from nmrcheck.plate import ResultsStore, SpectrumTrace, WellResult


def _result(well, verdict="consistent", h="abc"):
    trace = SpectrumTrace(10.0, -1.0, np.arange(8, dtype=np.float32))
    return WellResult(well=well, status="done", verdict=verdict, options_hash=h, count={"total_h": 7.0}, regions=({"h": 2.0},), trace=trace)


def test_save_current_and_history(tmp_path):
    with ResultsStore(tmp_path) as store:
        run = store.start_run(manifest="m.csv", options={"a": 1}, software_version="0")
        store.save(run, _result("A1"))
        store.save(run, _result("A1", "doubtful"))  # same options: replaces the current row
        store.save(run, _result("A1", "inconsistent", h="other"))  # other options: a second current row
        store.save(run, _result("B2"))
        store.finish_run(run, "complete")
    with ResultsStore(tmp_path / "results.sqlite") as store:
        assert store.finished() == {("A1", "abc"), ("A1", "other"), ("B2", "abc")}
        current = store.current()
        assert current["A1"].verdict == "inconsistent"  # the latest recorded
        assert [h["verdict"] for h in store.history("A1")] == ["consistent", "doubtful", "inconsistent"]
        assert np.array_equal(current["B2"].trace.values, np.arange(8, dtype=np.float32))
        assert current["B2"].count == {"total_h": 7.0} and current["B2"].regions == ({"h": 2.0},)
        assert store.runs()[0].status == "complete"


def test_unfinished_run_is_marked_interrupted(tmp_path):
    with ResultsStore(tmp_path) as store:
        store.start_run(manifest="m", options={}, software_version="0")
    with ResultsStore(tmp_path) as store:
        store.start_run(manifest="m", options={}, software_version="0")
        assert [r.status for r in store.runs()] == ["interrupted", "running"]


def test_database_uses_write_ahead_logging_while_open(tmp_path):
    """WAL while a run writes (readers never block it); a rollback journal once closed, so a
    read-only reader needs no shared-memory file (SQLite documentation, 'WAL mode'; from memory)."""
    import sqlite3

    with ResultsStore(tmp_path):
        with sqlite3.connect(tmp_path / "results.sqlite") as other:
            assert other.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        other.close()
    with sqlite3.connect(tmp_path / "results.sqlite") as other:
        assert other.execute("PRAGMA journal_mode").fetchone()[0] == "delete"
    other.close()


def test_read_only_store_reads_without_writing(tmp_path):
    with ResultsStore(tmp_path) as store:
        run = store.start_run(manifest="m.csv", options={}, software_version="0")
        store.save(run, _result("A1"), fingerprint="f1")
    before = sorted(p.name for p in tmp_path.iterdir())
    with ResultsStore(tmp_path, readonly=True) as store:
        assert store.current()["A1"].verdict == "consistent"
        assert store.fingerprints() == {("A1", "abc"): ("done", "f1")}
    assert sorted(p.name for p in tmp_path.iterdir()) == before


def test_amend_replaces_the_current_record_without_new_history(tmp_path):
    import dataclasses

    with ResultsStore(tmp_path) as store:
        run = store.start_run(manifest="m.csv", options={}, software_version="t")
        store.save(run, _result("A1"))
        amended = dataclasses.replace(_result("A1"), notes=("retention: added later",))
        store.amend(amended)
        assert store.count_history() == 1
        current = store.current()["A1"]
        assert current.notes == ("retention: added later",) and current.trace is not None
        assert store.history("A1")[0]["result"]["notes"] == ["retention: added later"]
