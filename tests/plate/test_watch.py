"""Watch mode: a recording still being written is not read until it is complete."""

from __future__ import annotations

import threading
import time

from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.plate import ResultsStore, read_manifest, run_plate
from nmrcheck.synth import Line, simulate_fid


def _fid(seed):
    return simulate_fid([Line(3.8, 3, 1.0), Line(7.2, 2, 1.0, (8.0,)), Line(6.9, 2, 1.0, (8.0,))], points=4096, noise=0.01, seed=seed)


def _wells(out):
    try:
        with ResultsStore(out) as store:
            return store.current(with_trace=False)
    except Exception:  # noqa: BLE001 - the database may not exist yet
        return {}


def test_half_written_fid_waits_until_complete(tmp_path):
    plate = tmp_path / "plate"
    write_bruker_fid(_fid(1), plate / "A1")
    a2 = write_bruker_fid(_fid(2), plate / "A2")
    full = (a2 / "fid").read_bytes()
    (a2 / "fid").write_bytes(full[: len(full) // 2])
    (plate / "manifest.csv").write_text("well,spectrum,formulas\nA1,A1,C8H10O\nA2,A2,C8H10O\nA3,A3,C8H10O\n")
    manifest = read_manifest(plate / "manifest.csv")
    out = tmp_path / "out"
    holder = {}
    runner = threading.Thread(
        target=lambda: holder.setdefault("summary", run_plate(manifest, out, workers=1, watch=True, poll_s=0.1, time_limit_s=60)),
        daemon=True,
    )
    runner.start()
    deadline = time.monotonic() + 30
    while "A1" not in _wells(out) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert "A1" in _wells(out)
    time.sleep(1.0)
    assert "A2" not in _wells(out), "a half-written FID was processed"
    # The FID grows to its full size; A3 appears complete from the start.
    with open(a2 / "fid", "ab") as fh:
        fh.write(full[len(full) // 2 :])
    write_bruker_fid(_fid(3), plate / "A3")
    runner.join(timeout=60)
    assert not runner.is_alive()
    summary = holder["summary"]
    assert summary.status == "complete" and summary.pending == ()
    with ResultsStore(out) as store:
        assert [h["status"] for h in store.history("A2")] == ["done"]
        assert store.current()["A3"].status == "done"


def test_time_limit_leaves_missing_wells_pending(tmp_path):
    write_bruker_fid(_fid(1), tmp_path / "A1")
    (tmp_path / "manifest.csv").write_text("well,spectrum\nA1,A1\nB1,B1\n")
    summary = run_plate(read_manifest(tmp_path / "manifest.csv"), tmp_path / "out", workers=1, watch=True, poll_s=0.1, time_limit_s=1.5)
    assert summary.status == "stopped"
    assert summary.pending == ("B1",)
    assert summary.screened == 1
