"""Progress output never stops a run: a log on a full disk or a closed terminal only loses lines."""

from __future__ import annotations

from nmrcheck.plate import read_manifest, run_plate
from nmrcheck.plate.runner import InlineExecutor


def test_progress_to_a_full_log_does_not_stop_the_run(small_plate, tmp_path):
    """A log file on a full disk (nohup into a full /var) loses lines, not the plate."""
    from nmrcheck.plate.progress import BarProgress, LogProgress

    class FullDisk:
        def write(self, text):
            raise OSError(28, "No space left on device")

        def flush(self):
            raise OSError(28, "No space left on device")

        def isatty(self):
            return False

    manifest = read_manifest(small_plate(("A1", "A2")))
    for k, progress in enumerate((LogProgress(FullDisk()), BarProgress(FullDisk()))):
        summary = run_plate(manifest, tmp_path / f"out{k}", executor=InlineExecutor(), progress=progress)
        assert summary.status == "complete" and summary.screened == 2
