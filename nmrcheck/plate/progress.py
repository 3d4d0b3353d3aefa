"""Progress of a plate run: a one-line bar on a terminal, plain log lines otherwise (cron, nohup, CI)."""

from __future__ import annotations

import logging
import sys
import time
from typing import TextIO

from nmrcheck.plate.results import WellResult

__all__ = ["Progress", "LogProgress", "BarProgress", "progress_for"]

log = logging.getLogger("nmrcheck")


class Progress:
    """Receives the run's events; the base class ignores them (library use without output)."""

    def start(self, *, total: int, skipped: int, watch: bool) -> None:
        """``total`` wells to screen in this run, ``skipped`` already done by an earlier run."""

    def waiting(self, pending: int) -> None:
        """Watch mode: ``pending`` recordings are not complete yet."""

    def note(self, text: str) -> None:
        """Something the run learned that concerns every well (e.g. the plate's shared first-order phase)."""

    def result(self, result: WellResult, *, done: int, total: int) -> None:
        """One well finished (``done`` of ``total``)."""

    def finish(self, summary) -> None:
        """The run ended (summary of :func:`nmrcheck.plate.runner.run_plate`)."""


class LogProgress(Progress):
    """One plain line per well, for logs that are not a terminal."""

    def __init__(self, stream: TextIO) -> None:
        self.stream = stream
        self._last_wait = 0.0

    def _line(self, text: str) -> None:
        try:
            self.stream.write(time.strftime("%Y-%m-%d %H:%M:%S ") + text + "\n")
            self.stream.flush()
        except (OSError, ValueError):
            pass  # a full disk or closed log must not stop the plate: the results database is the record

    def start(self, *, total: int, skipped: int, watch: bool) -> None:
        mode = "watching for recordings" if watch else "screening"
        self._line(f"{mode}: {total} well(s) to do, {skipped} already done")

    def waiting(self, pending: int) -> None:
        # Once a minute is enough for a log read in the morning.
        if time.monotonic() - self._last_wait > 60:
            self._last_wait = time.monotonic()
            self._line(f"waiting for {pending} recording(s) to be complete")

    def note(self, text: str) -> None:
        self._line(text)

    def result(self, result: WellResult, *, done: int, total: int) -> None:
        extra = f" ({result.error.splitlines()[0]})" if result.error else ""
        self._line(f"[{done}/{total}] {result.well}: {result.verdict}{extra}")

    def finish(self, summary) -> None:
        self._line(summary.describe())


class BarProgress(Progress):
    """A bar redrawn in place on a terminal."""

    def __init__(self, stream: TextIO, width: int = 30) -> None:
        self.stream = stream
        self.width = width
        self._started = time.monotonic()
        self._pending = 0
        self._total = 0
        self._done = 0
        self._last = ""

    def _draw(self) -> None:
        total = max(self._total, 1)
        filled = int(self.width * self._done / total)
        elapsed = time.monotonic() - self._started
        wait = f", waiting for {self._pending}" if self._pending else ""
        text = f"\r[{'#' * filled}{'.' * (self.width - filled)}] {self._done}/{self._total} wells, {elapsed:.0f} s{wait} {self._last}"
        self._write(text.ljust(100)[:120])

    def _write(self, text: str) -> None:
        try:
            self.stream.write(text)
            self.stream.flush()
        except (OSError, ValueError):
            pass  # a closed terminal must not stop the plate

    def start(self, *, total: int, skipped: int, watch: bool) -> None:
        self._total = total
        if skipped:
            self._write(f"{skipped} well(s) already done; resuming\n")
        self._draw()

    def waiting(self, pending: int) -> None:
        self._pending = pending
        self._draw()

    def note(self, text: str) -> None:
        self._write("\r" + text.ljust(100) + "\n")
        self._draw()

    def result(self, result: WellResult, *, done: int, total: int) -> None:
        self._done, self._total = done, total
        self._last = f"{result.well}: {result.verdict}"
        self._draw()

    def finish(self, summary) -> None:
        self._write("\n" + summary.describe() + "\n")


def progress_for(stream: TextIO | None = None) -> Progress:
    """A bar when ``stream`` (default stderr) is a terminal, plain lines otherwise."""
    stream = stream or sys.stderr
    isatty = getattr(stream, "isatty", None)
    return BarProgress(stream) if isatty is not None and isatty() else LogProgress(stream)
