"""The plate's survey of a shared first-order phase, end to end through run_plate.

Check values: phase errors built into synthetic FIDs (nmrcheck.synth); that recordings made
back to back with one parameter set share their first-order phase is common practice.
"""

from __future__ import annotations

import pytest

from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.plate import ResultsStore, read_manifest, run_plate
from nmrcheck.plate.phase_survey import survey_shared_phase
from nmrcheck.plate.runner import InlineExecutor
from nmrcheck.processing import ProcessingOptions
from nmrcheck.synth import Line, simulate_fid

# An invented compound spread over the width, and what is left of it in a weak well.
LINES = [Line(9.5, 1, 1.0), Line(7.3, 5, 1.0), Line(5.1, 1, 1.0, (7.0,)), Line(3.7, 3, 1.0), Line(2.1, 3, 1.0),
         Line(0.9, 3, 1.0, (7.0,))]
FORMULA = "C15H16O2"
P1 = 20.0


def _plate(folder, p1_of_strong, *, weak=("B1", "B2"), broken=()):
    folder.mkdir(parents=True)
    rows = ["well,spectrum,formulas"]
    for k, (well, p1) in enumerate(p1_of_strong.items()):
        write_bruker_fid(simulate_fid(LINES, p0_deg=25.0 * k, p1_deg=p1, noise=2e-3, points=8192, seed=k), folder / well)
        rows.append(f"{well},{well},{FORMULA}")
    for k, well in enumerate(weak):
        fid = simulate_fid(LINES[1:5:3], p0_deg=-60.0 + 40.0 * k, p1_deg=P1, noise=3e-2, points=8192, seed=50 + k)
        write_bruker_fid(fid, folder / well)
        rows.append(f"{well},{well},{FORMULA}")
    for well in broken:
        (folder / well).mkdir()
        (folder / well / "fid").write_bytes(b"\x00" * 100)
        (folder / well / "acqus").write_text("not a parameter file\n")
        rows.append(f"{well},{well},{FORMULA}")
    (folder / "manifest.csv").write_text("\n".join(rows) + "\n")
    return read_manifest(folder / "manifest.csv")


def test_weak_wells_are_phased_with_the_plate_value(tmp_path):
    """Four strong wells with p1 = 20 deg built in: the run finds it within 2 deg; the weak wells
    (two lines, too few for a first-order term of their own) hold it, and say so."""
    manifest = _plate(tmp_path / "plate", {f"A{i}": P1 for i in range(1, 5)}, broken=("C1",))
    out = tmp_path / "out"
    summary = run_plate(manifest, out, executor=InlineExecutor())
    assert summary.screened == 7
    with ResultsStore(out) as store:
        (run,) = store.runs()
        current = store.current(with_trace=False)
    (text,) = run.options["shared_phase"]
    assert "shared by 4 strong recordings" in text
    for well in ("B1", "B2"):
        shared = current[well].processing["options"]["shared_p1"]
        assert shared[0] == pytest.approx(P1, abs=2.0) and shared[1] == 10.0
        assert "held at the shared" in current[well].processing["phase"]["method"]
        assert current[well].processing["phase"]["p1_deg"] == pytest.approx(P1, abs=2.0)
        assert any("plate's first-order phase" in n for n in current[well].notes)
    assert current["C1"].status in ("unreadable", "error")


def test_the_shared_value_does_not_change_result_keys(tmp_path):
    """A resumed run surveys again but finds every result current: nothing is screened twice."""
    manifest = _plate(tmp_path / "plate", {f"A{i}": P1 for i in range(1, 5)})
    out = tmp_path / "out"
    run_plate(manifest, out, executor=InlineExecutor())
    again = run_plate(manifest, out, executor=InlineExecutor())
    assert again.screened == 0 and again.skipped == 6


def test_strong_wells_that_disagree_share_nothing(tmp_path):
    """Built-in p1 of 0, 30, 60 and 90 deg is not one acquisition's phase: every well is phased on its own."""
    manifest = _plate(tmp_path / "plate", {"A1": 0.0, "A2": 30.0, "A3": 60.0, "A4": 90.0})
    assert survey_shared_phase(manifest.wells, manifest.directory, ProcessingOptions()) == ()
    out = tmp_path / "out"
    run_plate(manifest, out, executor=InlineExecutor())
    with ResultsStore(out) as store:
        current = store.current(with_trace=False)
    assert all(r.processing["options"]["shared_p1"] is None for r in current.values())
    assert not any("plate's first-order phase" in n for r in current.values() for n in r.notes)


def test_manual_phase_skips_the_survey(tmp_path):
    manifest = _plate(tmp_path / "plate", {f"A{i}": P1 for i in range(1, 5)})
    assert survey_shared_phase(manifest.wells, manifest.directory, ProcessingOptions(phase=(10.0, 0.0))) == ()
    assert len(survey_shared_phase(manifest.wells, manifest.directory, ProcessingOptions())) == 1


def test_watch_run_surveys_wells_as_they_become_complete(tmp_path):
    """In watch mode the survey reads each recording once it is complete; wells submitted after the
    strong ones agree carry the shared value."""
    manifest = _plate(tmp_path / "plate", {f"A{i}": P1 for i in range(1, 5)})
    out = tmp_path / "out"
    summary = run_plate(manifest, out, executor=InlineExecutor(), watch=True, poll_s=0.1, quiet_s=0.0, time_limit_s=120)
    assert summary.status == "complete"
    with ResultsStore(out) as store:
        current = store.current(with_trace=False)
    for well in ("B1", "B2"):
        shared = current[well].processing["options"]["shared_p1"]
        assert shared is not None and shared[0] == pytest.approx(P1, abs=2.0)


def test_survey_stops_after_enough_strong_wells(tmp_path):
    """Only the first ENOUGH_STRONG strong wells are read (the survey's time stays bounded on large plates)."""
    from nmrcheck.plate.phase_survey import ENOUGH_STRONG, PhaseSurvey

    manifest = _plate(tmp_path / "plate", {f"A{i}": P1 for i in range(1, ENOUGH_STRONG + 3)}, weak=())
    survey = PhaseSurvey(manifest.directory, ProcessingOptions())
    shared = survey.read(manifest.wells)
    assert survey.done and len(shared) == 1
    assert len(shared[0].sources) == ENOUGH_STRONG


def test_the_run_says_what_first_order_phase_it_found(tmp_path):
    """The plate's log carries one line naming the shared value before the wells' lines."""
    import io

    from nmrcheck.plate.progress import LogProgress

    manifest = _plate(tmp_path / "plate", {f"A{i}": P1 for i in range(1, 5)})
    stream = io.StringIO()
    run_plate(manifest, tmp_path / "out", executor=InlineExecutor(), progress=LogProgress(stream))
    lines = stream.getvalue().splitlines()
    phase_lines = [k for k, line in enumerate(lines) if "phase: first-order phase" in line]
    assert len(phase_lines) == 1
    assert phase_lines[0] < min(k for k, line in enumerate(lines) if "] B1:" in line)


def test_watch_run_screens_again_the_wells_phased_before_the_value_was_found(tmp_path):
    """Weak wells whose recordings are complete before the strong ones are screened on their own;
    once the strong wells agree, they are screened again with the shared value (their history keeps
    both results) and the run's log says so."""
    import io
    import shutil
    import threading
    import time

    from nmrcheck.plate.progress import LogProgress

    staged = _plate(tmp_path / "staged", {f"A{i}": P1 for i in range(1, 5)})
    plate = tmp_path / "plate"
    plate.mkdir()
    shutil.copy(staged.path, plate / "manifest.csv")
    for well in ("B1", "B2"):
        shutil.move(str(tmp_path / "staged" / well), str(plate / well))
    manifest = read_manifest(plate / "manifest.csv")
    out = tmp_path / "out"
    stream = io.StringIO()
    holder = {}
    runner = threading.Thread(target=lambda: holder.setdefault("summary", run_plate(
        manifest, out, executor=InlineExecutor(), watch=True, poll_s=0.1, quiet_s=0.0, time_limit_s=120,
        progress=LogProgress(stream))), daemon=True)
    runner.start()

    def stored():
        try:
            with ResultsStore(out, readonly=True) as store:
                return store.current(with_trace=False)
        except Exception:  # noqa: BLE001 - the database may not exist yet
            return {}

    deadline = time.monotonic() + 60
    while not {"B1", "B2"} <= set(stored()) and time.monotonic() < deadline:
        time.sleep(0.1)
    first = stored()
    assert all(first[w].processing["options"]["shared_p1"] is None for w in ("B1", "B2"))
    for well in ("A1", "A2", "A3", "A4"):
        shutil.move(str(tmp_path / "staged" / well), str(plate / well))
    runner.join(timeout=120)
    assert not runner.is_alive() and holder["summary"].status == "complete"
    with ResultsStore(out) as store:
        current = store.current(with_trace=False)
        history = store.history("B1")
    for well in ("B1", "B2"):
        shared = current[well].processing["options"]["shared_p1"]
        assert shared is not None and shared[0] == pytest.approx(P1, abs=2.0)
        assert current[well].processing["phase"]["p1_deg"] == pytest.approx(P1, abs=2.0)
    assert len(history) == 2
    assert "2 well(s) screened before it was found are screened again with it" in stream.getvalue()
