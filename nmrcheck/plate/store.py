"""The results database: one SQLite file per plate folder, one transaction per well, history kept.

Killing a run loses at most the wells in flight: a well's result is committed as soon as it
arrives, and a rerun skips wells with a current result for the same options and the same
recording (its fingerprint is stored beside the result). A well's record is one JSON
payload, so later stages add fields to it without a schema change. A full disk or a
read-only folder is an :class:`~nmrcheck.errors.OutputError` naming the database; SQLite's
own journal keeps the file consistent (the well being written is simply not there).
"""

from __future__ import annotations

import json
import logging
import os
import sqlite3
import time
import uuid
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from nmrcheck.errors import OutputError
from nmrcheck.io.atomic import describe_os_error
from nmrcheck.plate.results import SpectrumTrace, WellResult

__all__ = ["ResultsStore", "RunRecord", "DATABASE_NAME"]

log = logging.getLogger("nmrcheck")

DATABASE_NAME = "results.sqlite"
SCHEMA_VERSION = 1

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS runs (
    run_id TEXT PRIMARY KEY,
    started_utc TEXT NOT NULL,
    finished_utc TEXT,
    manifest TEXT NOT NULL,
    options_json TEXT NOT NULL,
    software_version TEXT NOT NULL,
    status TEXT NOT NULL
);
CREATE TABLE IF NOT EXISTS results (
    well TEXT NOT NULL,
    options_hash TEXT NOT NULL,
    run_id TEXT NOT NULL REFERENCES runs(run_id),
    recorded_utc TEXT NOT NULL,
    seq INTEGER NOT NULL,
    status TEXT NOT NULL,
    verdict TEXT NOT NULL,
    result_json TEXT NOT NULL,
    trace BLOB,
    PRIMARY KEY (well, options_hash)
);
CREATE TABLE IF NOT EXISTS history (
    seq INTEGER PRIMARY KEY AUTOINCREMENT,
    well TEXT NOT NULL,
    options_hash TEXT NOT NULL,
    run_id TEXT NOT NULL,
    recorded_utc TEXT NOT NULL,
    status TEXT NOT NULL,
    verdict TEXT NOT NULL,
    result_json TEXT NOT NULL
);
CREATE INDEX IF NOT EXISTS history_well ON history (well);
CREATE TABLE IF NOT EXISTS plate_records (key TEXT PRIMARY KEY, recorded_utc TEXT NOT NULL, value_json TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS recordings (
    well TEXT NOT NULL,
    options_hash TEXT NOT NULL,
    fingerprint TEXT NOT NULL,
    PRIMARY KEY (well, options_hash)
);
"""

ABSENT = "absent"
"""Fingerprint stored for a well whose recording was not there when it was screened."""


def _why(exc: sqlite3.Error) -> str:
    text = str(exc).lower()
    if "full" in text:
        return "the disk is full"
    if "readonly" in text or "read-only" in text:
        return "the folder or the database is read-only"
    if "unable to open" in text:
        return "it cannot be opened (no such folder, or no permission to write there)"
    if "not a database" in text or "malformed" in text:
        return "it is not a results database or it is damaged"
    if "locked" in text or "busy" in text:
        return "another process holds it locked"
    if "disk i/o" in text:
        return "a disk input/output error"
    return str(exc)


def _utc() -> str:
    now = time.time()
    return time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(now)) + f"{now % 1:.6f}"[1:]


@dataclass(frozen=True)
class RunRecord:
    run_id: str
    started_utc: str
    finished_utc: str | None
    manifest: str
    options: dict[str, Any]
    software_version: str
    status: str
    """'running', 'complete' (every well has a result), 'stopped' (time limit) or 'interrupted'."""


class ResultsStore:
    """The SQLite results database of one plate output folder.

    Parameters
    ----------
    path
        The database file, or an output folder (``results.sqlite`` inside it).
    """

    def __init__(self, path: str | os.PathLike, *, readonly: bool = False) -> None:
        p = Path(path)
        self.readonly = readonly
        if readonly:
            if p.is_dir():
                p = p / DATABASE_NAME
            self.path = p
            self._conn = None
            try:
                self._conn = sqlite3.connect(f"{p.resolve().as_uri()}?mode=ro", uri=True, timeout=30.0, isolation_level=None)
                self._conn.execute("SELECT COUNT(*) FROM results").fetchone()
            except sqlite3.Error as exc:
                if self._conn is not None:
                    self._conn.close()
                raise self.error(exc) from None
            return
        if p.is_dir() or not p.suffix:
            try:
                p.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise OutputError(f"{p}: cannot create the output folder ({describe_os_error(exc)})") from None
            p = p / DATABASE_NAME
        self.path = p
        self._conn = None
        try:
            # isolation_level=None: transactions are explicit, one per well.
            self._conn = sqlite3.connect(str(p), timeout=30.0, isolation_level=None)
            self._conn.execute("PRAGMA journal_mode=WAL")
            self._conn.execute("PRAGMA synchronous=NORMAL")
            self._conn.executescript(_SCHEMA)
            self._conn.execute("INSERT OR IGNORE INTO meta VALUES ('schema_version', ?)", (str(SCHEMA_VERSION),))
        except sqlite3.Error as exc:
            if self._conn is not None:
                self._conn.close()
            raise self.error(exc) from None

    def error(self, exc: sqlite3.Error) -> OutputError:
        """The one-line error for a failed database operation."""
        return OutputError(f"{self.path}: {_why(exc)}; the results stored so far are kept (rerun to resume)")

    # -- context management
    def close(self) -> None:
        if self._conn is None:
            return
        if not self.readonly:
            # Back to a rollback journal when the run is done: readers (the report) then need
            # no shared-memory file, so they work on a full disk or a read-only folder.
            try:
                self._conn.execute("PRAGMA busy_timeout=0")
                self._conn.execute("PRAGMA journal_mode=DELETE")
            except sqlite3.Error:
                pass  # another connection is open: it stays in WAL mode, which is fine
        self._conn.close()
        self._conn = None

    def __enter__(self) -> "ResultsStore":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # -- runs
    def start_run(self, *, manifest: str, options: dict[str, Any], software_version: str) -> str:
        run_id = time.strftime("%Y%m%dT%H%M%S", time.gmtime()) + "-" + uuid.uuid4().hex[:8]
        with self._transaction():
            # A run that never finished was killed: say so rather than leave it 'running'.
            self._conn.execute("UPDATE runs SET status='interrupted' WHERE status='running'")
            self._conn.execute(
                "INSERT INTO runs VALUES (?, ?, NULL, ?, ?, ?, 'running')",
                (run_id, _utc(), manifest, json.dumps(options, sort_keys=True, default=str), software_version),
            )
        return run_id

    def finish_run(self, run_id: str, status: str) -> None:
        with self._transaction():
            self._conn.execute("UPDATE runs SET finished_utc=?, status=? WHERE run_id=?", (_utc(), status, run_id))

    def runs(self) -> list[RunRecord]:
        # Insertion order: the wall clock may be stepped back between two runs.
        rows = self._conn.execute("SELECT * FROM runs ORDER BY rowid").fetchall()
        return [RunRecord(r[0], r[1], r[2], r[3], json.loads(r[4]), r[5], r[6]) for r in rows]

    # -- results
    def save(self, run_id: str, result: WellResult, *, fingerprint: str | None = None) -> None:
        """Store one well's result in its own transaction: current row replaced, history appended.

        ``fingerprint`` identifies the recording screened (:func:`nmrcheck.io.completeness.recording_fingerprint`;
        None when it was not there), so a later run notices a changed or newly written recording.
        """
        payload = result.to_json()
        blob = result.trace.to_bytes() if result.trace is not None else None
        now = _utc()
        with self._transaction():
            cur = self._conn.execute(
                "INSERT INTO history (well, options_hash, run_id, recorded_utc, status, verdict, result_json) "
                "VALUES (?, ?, ?, ?, ?, ?, ?)",
                (result.well, result.options_hash, run_id, now, result.status, result.verdict, payload),
            )
            self._conn.execute(
                "INSERT OR REPLACE INTO results VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (result.well, result.options_hash, run_id, now, cur.lastrowid, result.status, result.verdict, payload, blob),
            )
            self._conn.execute(
                "INSERT OR REPLACE INTO recordings VALUES (?, ?, ?)",
                (result.well, result.options_hash, fingerprint or ABSENT),
            )

    def amend(self, result: WellResult) -> None:
        """Replace the stored record of a well's current result in place (no new history entry).

        For plate-level steps that add to results already recorded (the retention check),
        so that resuming and history still count one result per screening.
        """
        payload = result.to_json()
        with self._transaction():
            key = (result.well, result.options_hash)
            row = self._conn.execute("SELECT seq FROM results WHERE well = ? AND options_hash = ?", key).fetchone()
            if row is None:
                raise KeyError(result.well)
            self._conn.execute("UPDATE results SET verdict = ?, result_json = ? WHERE well = ? AND options_hash = ?", (result.verdict, payload, *key))
            self._conn.execute("UPDATE history SET verdict = ?, result_json = ? WHERE seq = ?", (result.verdict, payload, row[0]))

    def finished(self) -> set[tuple[str, str]]:
        """(well, options hash) pairs that have a current result."""
        return {(w, h) for w, h in self._conn.execute("SELECT well, options_hash FROM results")}

    def fingerprints(self) -> dict[tuple[str, str], tuple[str, str | None]]:
        """(well, options hash) -> (status, fingerprint of the recording screened; None when not stored)."""
        rows = self._conn.execute(
            "SELECT r.well, r.options_hash, r.status, g.fingerprint FROM results r "
            "LEFT JOIN recordings g ON g.well = r.well AND g.options_hash = r.options_hash"
        ).fetchall()
        return {(w, h): (st, fp) for w, h, st, fp in rows}

    def current(self, *, with_trace: bool = True) -> dict[str, WellResult]:
        """The latest result of every well (whatever its options), by well name."""
        col = "trace" if with_trace else "NULL"
        rows = self._conn.execute(
            f"SELECT well, result_json, {col} FROM results r WHERE seq = "
            "(SELECT MAX(seq) FROM results WHERE well = r.well)"
        ).fetchall()
        out = {}
        for well, payload, blob in rows:
            trace = SpectrumTrace.from_bytes(blob) if blob else None
            out[well] = WellResult.from_dict(json.loads(payload), trace)
        return out

    def history(self, well: str) -> list[dict[str, Any]]:
        """Every result ever recorded for ``well``, oldest first, with run id and time."""
        rows = self._conn.execute(
            "SELECT seq, run_id, recorded_utc, options_hash, status, verdict, result_json FROM history "
            "WHERE well=? ORDER BY seq",
            (well,),
        ).fetchall()
        return [
            {"seq": r[0], "run_id": r[1], "recorded_utc": r[2], "options_hash": r[3], "status": r[4], "verdict": r[5], "result": json.loads(r[6])}
            for r in rows
        ]

    # -- plate-level records (e.g. the LC-MS run's groups of related wells)
    def save_plate_record(self, key: str, value: dict[str, Any]) -> None:
        """Store a JSON-ready record about the whole plate under ``key`` (replacing an earlier one)."""
        with self._transaction():
            self._conn.execute("INSERT OR REPLACE INTO plate_records VALUES (?, ?, ?)", (key, _utc(), json.dumps(value, sort_keys=True, default=str)))

    def plate_record(self, key: str) -> dict[str, Any] | None:
        """The plate-level record stored under ``key``, or None."""
        row = self._conn.execute("SELECT value_json FROM plate_records WHERE key=?", (key,)).fetchone()
        return json.loads(row[0]) if row else None

    def integrity_ok(self) -> bool:
        """SQLite's own full consistency check of the database file."""
        return self._conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"

    def count_history(self) -> int:
        return int(self._conn.execute("SELECT COUNT(*) FROM history").fetchone()[0])

    def _transaction(self):
        conn = self._conn
        store = self

        class _T:
            def __enter__(self_inner) -> None:
                try:
                    conn.execute("BEGIN IMMEDIATE")
                except sqlite3.Error as exc:
                    raise store.error(exc) from None

            def __exit__(self_inner, et, ev, tb) -> bool:
                if et is None:
                    try:
                        conn.execute("COMMIT")
                        return False
                    except sqlite3.Error as exc:
                        ev = exc
                try:
                    conn.execute("ROLLBACK")
                except sqlite3.Error:
                    pass
                if isinstance(ev, sqlite3.Error):
                    raise store.error(ev) from None
                return False

        return _T()

