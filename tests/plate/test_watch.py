"""Watch mode: a recording is read only when complete, a changed one is read again, and a rerun picks up what appeared since."""

from __future__ import annotations

import threading
import time

import pytest

from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.plate import ResultsStore, ScreenOptions, read_manifest, run_plate, screen_well
from nmrcheck.plate.runner import InlineExecutor

FORMULA = "C8H10O"  # the compound of the small synthetic FIDs (tests/plate/conftest.py)


def _wells(out):
    # Read-only, as a report would: a writer's connection would set up the schema and journal mode
    # and could hold the database while the run itself is opening it.
    try:
        with ResultsStore(out, readonly=True) as store:
            return store.current(with_trace=False)
    except Exception:  # noqa: BLE001 - the database may not exist yet
        return {}


def _history(out, well):
    try:
        with ResultsStore(out, readonly=True) as store:
            return store.history(well)
    except Exception:  # noqa: BLE001 - the database may not exist yet
        return []


def _watch_in_thread(manifest, out, **kwargs):
    holder = {}
    runner = threading.Thread(target=lambda: holder.setdefault("summary", run_plate(manifest, out, **kwargs)), daemon=True)
    runner.start()
    return runner, holder


def _reference(directory, well, manifest):
    """The well screened directly from its complete recording."""
    return screen_well(manifest.well(well), str(directory), ScreenOptions())


def _same_result(a, b):
    return a.status == b.status and a.verdict == b.verdict and a.count == b.count and a.regions == b.regions


def test_half_written_fid_waits_until_complete(tmp_path, make_fid):
    plate = tmp_path / "plate"
    write_bruker_fid(make_fid(1), plate / "A1")
    a2 = write_bruker_fid(make_fid(2), plate / "A2")
    full = (a2 / "fid").read_bytes()
    (a2 / "fid").write_bytes(full[: len(full) // 2])
    (plate / "manifest.csv").write_text(f"well,spectrum,formulas\nA1,A1,{FORMULA}\nA2,A2,{FORMULA}\nA3,A3,{FORMULA}\n")
    manifest = read_manifest(plate / "manifest.csv")
    out = tmp_path / "out"
    runner, holder = _watch_in_thread(manifest, out, workers=1, watch=True, poll_s=0.1, quiet_s=0.3, time_limit_s=60)
    deadline = time.monotonic() + 30
    while "A1" not in _wells(out) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert "A1" in _wells(out)
    time.sleep(1.0)
    assert "A2" not in _wells(out), "a half-written FID was processed"
    # The FID grows to its full size; A3 appears complete from the start.
    with open(a2 / "fid", "ab") as fh:
        fh.write(full[len(full) // 2 :])
    write_bruker_fid(make_fid(3), plate / "A3")
    runner.join(timeout=60)
    assert not runner.is_alive()
    summary = holder["summary"]
    assert summary.status == "complete" and summary.pending == ()
    with ResultsStore(out) as store:
        history = store.history("A2")
        assert store.current()["A3"].status == "done"
    assert [h["status"] for h in history] in (["done"], ["done", "done"])
    if len(history) == 2:
        # Screened once on its own and again when the plate's shared first-order phase was found
        # (A3 completing in a later look than A2 makes the third strong well); never twice without it.
        assert history[0]["result"]["processing"]["options"]["shared_p1"] is None
        assert history[1]["result"]["processing"]["options"]["shared_p1"] is not None


def _fill_in_blocks(fid_path, data, blocks, pause_s, *, long_pause_after=None, long_pause_s=0.0):
    """Write ``data`` over a file already at full size, block by block, as an acquisition adding scans would."""
    step = -(-len(data) // blocks)
    with open(fid_path, "r+b") as fh:
        for k in range(blocks):
            fh.seek(k * step)
            fh.write(data[k * step : (k + 1) * step])
            fh.flush()
            time.sleep(long_pause_s if long_pause_after == k else pause_s)


def test_full_size_fid_filled_in_blocks_is_read_once_filled(tmp_path, make_fid):
    """Created at its final size (zeros), then filled: the size check alone would read it empty."""
    plate = tmp_path / "plate"
    a1 = write_bruker_fid(make_fid(1), plate / "A1")
    (plate / "manifest.csv").write_text(f"well,spectrum,formulas\nA1,A1,{FORMULA}\n")
    manifest = read_manifest(plate / "manifest.csv")
    reference = _reference(plate, "A1", manifest)
    data = (a1 / "fid").read_bytes()
    (a1 / "fid").write_bytes(bytes(len(data)))
    runner, holder = _watch_in_thread(manifest, tmp_path / "out", workers=1, watch=True, poll_s=0.1, quiet_s=1.0, time_limit_s=60)
    _fill_in_blocks(a1 / "fid", data, blocks=6, pause_s=0.3)
    runner.join(timeout=60)
    assert holder["summary"].status == "complete"
    with ResultsStore(tmp_path / "out") as store:
        history = store.history("A1")
        current = store.current()["A1"]
    assert len(history) == 1, [h["status"] for h in history]
    assert _same_result(current, reference)


def test_recording_changed_after_it_was_read_is_read_again(tmp_path, make_fid):
    """The writer pauses longer than the quiet period half-way: the half-filled FID is read, then read again once filled."""
    plate = tmp_path / "plate"
    a1 = write_bruker_fid(make_fid(1), plate / "A1")
    (plate / "manifest.csv").write_text(f"well,spectrum,formulas\nA1,A1,{FORMULA}\nA2,A2,{FORMULA}\n")
    manifest = read_manifest(plate / "manifest.csv")
    reference = _reference(plate, "A1", manifest)
    data = (a1 / "fid").read_bytes()
    (a1 / "fid").write_bytes(bytes(len(data)))
    out = tmp_path / "out"
    runner, holder = _watch_in_thread(manifest, out, workers=1, watch=True, poll_s=0.1, quiet_s=0.4, time_limit_s=60)
    _fill_in_blocks(a1 / "fid", data, blocks=4, pause_s=0.05, long_pause_after=1, long_pause_s=2.5)
    deadline = time.monotonic() + 30
    while len(_history(out, "A1")) < 2 and time.monotonic() < deadline:
        time.sleep(0.1)
    write_bruker_fid(make_fid(2), plate / "A2")
    runner.join(timeout=60)
    assert holder["summary"].status == "complete"
    with ResultsStore(out) as store:
        assert len(store.history("A1")) == 2
        assert _same_result(store.current()["A1"], reference)


def test_jcamp_paused_after_an_audit_trail_end_is_not_finished(refdata, tmp_path):
    """A real JCAMP-DX FID whose audit trail holds '$$ ##END=': a writer paused right after it has not finished."""
    source = next(p for p in sorted((refdata / "jcamp-fid").glob("*/1h.fid.dx")) if b"$$ ##END=" in p.read_bytes())
    text = source.read_bytes()
    cut = text.index(b"$$ ##END=")
    cut = text.index(b"\n", cut) + 1
    plate = tmp_path / "plate"
    plate.mkdir()
    (plate / "manifest.csv").write_text("well,spectrum\nA1,a1.dx\n")
    target = plate / "a1.dx"
    target.write_bytes(text[:cut])
    manifest = read_manifest(plate / "manifest.csv")
    out = tmp_path / "out"
    # A long quiet period: only the file's own closing ##END= can make it count as finished.
    runner, holder = _watch_in_thread(manifest, out, workers=1, watch=True, poll_s=0.1, quiet_s=600, time_limit_s=120)
    time.sleep(1.5)
    assert "A1" not in _wells(out), "a JCAMP-DX file cut after its audit trail was read"
    with open(target, "ab") as fh:
        fh.write(text[cut:])
    t0 = time.monotonic()
    runner.join(timeout=120)
    assert time.monotonic() - t0 < 60
    assert holder["summary"].status == "complete"
    assert _wells(out)["A1"].status == "done"


def test_time_limit_leaves_missing_wells_pending(tmp_path, make_fid):
    write_bruker_fid(make_fid(1), tmp_path / "A1")
    (tmp_path / "manifest.csv").write_text("well,spectrum\nA1,A1\nB1,B1\n")
    summary = run_plate(read_manifest(tmp_path / "manifest.csv"), tmp_path / "out", workers=1, watch=True, poll_s=0.1, quiet_s=0.2, time_limit_s=1.5)
    assert summary.status == "stopped"
    assert summary.pending == ("B1",)
    assert summary.screened == 1


def test_rerun_picks_up_new_and_changed_recordings(tmp_path, make_fid):
    """Without --redo: a recording that was missing, and one rewritten since, are screened again; the rest are not."""
    plate = tmp_path / "plate"
    for k, well in enumerate(("A1", "A2")):
        write_bruker_fid(make_fid(k + 1), plate / well)
    (plate / "manifest.csv").write_text(f"well,spectrum,formulas\nA1,A1,{FORMULA}\nA2,A2,{FORMULA}\nA3,A3,{FORMULA}\n")
    manifest = read_manifest(plate / "manifest.csv")
    out = tmp_path / "out"
    first = run_plate(manifest, out, executor=InlineExecutor())
    assert first.verdicts.get("unreadable") == 1
    again = run_plate(manifest, out, executor=InlineExecutor())
    assert again.screened == 0, "nothing changed: nothing to screen"
    write_bruker_fid(make_fid(3), plate / "A3")
    write_bruker_fid(make_fid(9), plate / "A2", overwrite=True)
    third = run_plate(manifest, out, executor=InlineExecutor())
    assert third.screened == 2 and third.skipped == 1
    with ResultsStore(out) as store:
        assert [h["status"] for h in store.history("A3")] == ["unreadable", "done"]
        assert len(store.history("A2")) == 2 and len(store.history("A1")) == 1


@pytest.mark.parametrize("bad", [float("nan"), -1.0])
def test_bad_quiet_period(tmp_path, bad):
    from nmrcheck.errors import ParameterError

    (tmp_path / "m.csv").write_text("well,spectrum\nA1,x\n")
    with pytest.raises(ParameterError, match="quiet_s"):
        run_plate(read_manifest(tmp_path / "m.csv"), tmp_path / "o", quiet_s=bad, executor=InlineExecutor())
