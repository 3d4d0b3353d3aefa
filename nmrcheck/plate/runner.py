"""Run a plate: screen every well in parallel, store each result as it arrives, resume after a kill.

By default the wells run on supervised local worker processes (:mod:`nmrcheck.plate.workers`:
a time and memory limit per well, no worker outliving the run). Any
:class:`concurrent.futures.Executor` can do the work instead, e.g. Dask distributed's
``Client(address).get_executor()`` to spread many plates over a cluster
(:func:`run_plates`). One run per output folder at a time (:mod:`nmrcheck.plate.lock`);
SIGTERM or SIGINT stops the run cleanly (workers killed, the run marked interrupted).
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import dataclasses
import logging
import math
import os
import signal
import threading
import time
from collections import Counter, deque
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable

from nmrcheck import __version__
from nmrcheck.errors import NmrcheckError, OutputError, ParameterError, human_message
from nmrcheck.io.completeness import expected_size_reached, has_end_marker, recording_fingerprint
from nmrcheck.plate.lock import OutputLock
from nmrcheck.plate.manifest import Manifest, WellSpec, resolve_spectrum
from nmrcheck.plate.phase_survey import PhaseSurvey
from nmrcheck.plate.progress import Progress
from nmrcheck.plate.results import WellResult
from nmrcheck.plate.screen import ScreenOptions, failure_result, screen_well, well_options_hash
from nmrcheck.plate.store import ABSENT, ResultsStore
from nmrcheck.processing.shared_phase import SharedPhase
from nmrcheck.plate.workers import LocalPool, WellLimits

__all__ = ["RunSummary", "RunInterrupted", "run_plate", "run_plates", "InlineExecutor", "default_workers", "DEFAULT_QUIET_S"]

DEFAULT_QUIET_S = 30.0
"""Watch mode: seconds a complete-sized recording must stay unchanged before it is read. Longer
than the pause between two scans being added to a FID on a 1H experiment (a few seconds),
short beside an overnight queue."""

log = logging.getLogger("nmrcheck")


@dataclass(frozen=True)
class RunSummary:
    """What one invocation of :func:`run_plate` did."""

    run_id: str
    out_dir: str
    wells: int
    """Wells in the manifest."""
    screened: int
    """Wells screened by this run."""
    skipped: int
    """Wells with a result from an earlier run for the same options (not redone)."""
    pending: tuple[str, ...]
    """Wells still without a result (watch mode stopped on its time limit)."""
    status: str
    """'complete' or 'stopped'."""
    verdicts: dict[str, int] = field(default_factory=dict)
    """Verdict counts over every well with a current result."""
    wall_s: float = 0.0

    def describe(self) -> str:
        counts = ", ".join(f"{v} {k}" for k, v in sorted(self.verdicts.items()))
        tail = f"; {len(self.pending)} pending: {' '.join(self.pending[:12])}{' ...' if len(self.pending) > 12 else ''}" if self.pending else ""
        return f"run {self.run_id} {self.status}: {self.screened} screened, {self.skipped} already done, in {self.wall_s:.1f} s ({counts}){tail}"


class RunInterrupted(NmrcheckError):
    """The run was stopped by a signal (SIGTERM, SIGINT, SIGHUP); ``signum`` is the signal."""

    def __init__(self, signum: int, message: str | None = None) -> None:
        self.signum = signum
        super().__init__(message or f"stopped by {signal.Signals(signum).name}")


class InlineExecutor(cf.Executor):
    """Runs each task at submission in the calling process (one worker, no pickling; no time or memory limit)."""

    def submit(self, fn, /, *args, **kwargs):  # noqa: D102 - Executor API
        fut: cf.Future = cf.Future()
        try:
            fut.set_result(fn(*args, **kwargs))
        except BaseException as exc:  # noqa: BLE001 - delivered through the future like a pool would
            fut.set_exception(exc)
        return fut


def default_workers() -> int:
    """Local cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not Linux
        return max(1, os.cpu_count() or 1)


def _preload() -> None:
    """Import what screening a well needs, once, before the pool starts.

    Forked workers inherit the parent's imported modules, so each worker does not
    pay the second or so that numerical and chemistry libraries take to import.
    """
    import importlib

    for name in ("nmrglue", "pybaselines.classification", "rdkit.Chem", "nmrcheck.processing",
                 "nmrcheck.validate", "nmrcheck.quant", "nmrcheck.chem", "nmrcheck.predict.shifts"):
        try:
            importlib.import_module(name)
        except ImportError:  # pragma: no cover - optional pieces
            continue


_CLUSTER_GRACE = 1.25
"""A stuck well's cluster worker is ended after this many times the time limit, plus a second."""


def screen_well_on_cluster(spec: WellSpec, directory: str, options: ScreenOptions, stop_after_s: float | None) -> WellResult:
    """:func:`screen_well` in a cluster worker process, with a watchdog for wells that never return.

    A thread cannot be stopped, so a well still running ``stop_after_s`` after it started ends
    its worker process; the cluster's nanny starts a fresh one. By then the run has recorded
    the well as stopped and cancelled it, so it is not tried again.
    """
    done = threading.Event()
    if stop_after_s:

        def watchdog() -> None:
            if not done.wait(stop_after_s):
                log.error("well %s: still running after %.0f s; ending this worker process so that it is replaced", spec.well, stop_after_s)
                os._exit(70)

        threading.Thread(target=watchdog, name=f"nmrcheck-watchdog-{spec.well}", daemon=True).start()
    try:
        return screen_well(spec, directory, options)
    finally:
        done.set()


def _is_cluster(executor: cf.Executor) -> bool:
    """True for Dask distributed's executor: its tasks run in worker processes a nanny replaces."""
    return type(executor).__module__.split(".")[0] == "distributed"


class _ExecutorBackend:
    """Wells on any concurrent.futures executor, at most ``slots`` in flight.

    The time limit counts from submission: the well is recorded as stopped and its future
    cancelled. On a Dask cluster a well that still runs a little later ends its worker
    process, which the nanny replaces (:func:`screen_well_on_cluster`); on other executors
    the task runs on. The executor's own memory limits apply. Only as many wells as the executor has
    workers are submitted at once, so a well waits little in its queue and an in-process
    executor commits each well before it starts the next.
    """

    def __init__(self, executor: cf.Executor, directory: str, options: ScreenOptions, limits: WellLimits, slots: int, failure) -> None:
        self._executor = executor
        self._directory = directory
        self._options = options
        self._limits = limits
        self._slots = max(1, slots)
        self._failure = failure
        self._in_flight: dict[cf.Future, tuple[WellSpec, float]] = {}

    def set_options(self, options: ScreenOptions) -> None:
        """Options for the wells submitted from now on."""
        self._options = options

    def free(self) -> int:
        return max(0, self._slots - len(self._in_flight))

    def busy(self) -> int:
        return len(self._in_flight)

    def submit(self, spec: WellSpec) -> None:
        if _is_cluster(self._executor):
            stop_after = self._limits.time_s * _CLUSTER_GRACE + 1.0 if self._limits.time_s else None
            fut = self._executor.submit(screen_well_on_cluster, spec, self._directory, self._options, stop_after)
        else:
            fut = self._executor.submit(screen_well, spec, self._directory, self._options)
        self._in_flight[fut] = (spec, time.monotonic())

    def poll(self, timeout: float) -> list[tuple[WellSpec, WellResult]]:
        if not self._in_flight:
            time.sleep(max(0.0, timeout))
            return []
        wait_s = max(0.0, timeout)
        if self._limits.time_s:
            first = min(t for _, t in self._in_flight.values())
            wait_s = min(wait_s, max(0.0, first + self._limits.time_s - time.monotonic()))
        finished, _ = cf.wait(list(self._in_flight), timeout=wait_s, return_when=cf.FIRST_COMPLETED)
        out = []
        for fut in finished:
            spec, _ = self._in_flight.pop(fut)
            out.append((spec, _result_of(fut, spec, self._failure)))
        if self._limits.time_s:
            now = time.monotonic()
            for fut, (spec, t) in list(self._in_flight.items()):
                if now - t >= self._limits.time_s:
                    fut.cancel()
                    del self._in_flight[fut]
                    out.append((spec, self._failure(spec, f"took longer than {self._limits.timeout_text()} (the per-well time limit, --well-timeout); stopped")))
        return out

    def close(self) -> None:
        for fut in self._in_flight:
            fut.cancel()
        self._in_flight.clear()

    kill = close


def _slots_of(executor: cf.Executor) -> int:
    if isinstance(executor, InlineExecutor):
        return 1
    n = getattr(executor, "_max_workers", None)
    if isinstance(n, int) and n > 0:
        return n
    client = getattr(executor, "_client", None)  # Dask distributed's ClientExecutor
    if client is not None:
        try:
            return max(1, sum(client.nthreads().values()))
        except Exception:  # noqa: BLE001 - a scheduler that does not answer: fall back
            pass
    return 2 * default_workers()


@contextlib.contextmanager
def _stop_on_signals():
    """In the main thread: SIGTERM, SIGINT (and SIGHUP unless ignored, e.g. under nohup) raise RunInterrupted once."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    fired = []

    def handler(signum, frame):  # noqa: ARG001 - signal API
        if fired:
            return  # already stopping: let the clean-up finish
        fired.append(signum)
        raise RunInterrupted(signum)

    wanted = [signal.SIGTERM, signal.SIGINT]
    if hasattr(signal, "SIGHUP") and signal.getsignal(signal.SIGHUP) == signal.SIG_DFL:
        wanted.append(signal.SIGHUP)
    old = {s: signal.signal(s, handler) for s in wanted}
    try:
        yield
    finally:
        for s, h in old.items():
            signal.signal(s, h)


def _resolve_one(spec: WellSpec, directory: str) -> Path | None:
    try:
        matches = resolve_spectrum(spec, directory)
    except OSError:
        return None
    return matches[0] if len(matches) == 1 else None


def _fingerprint_of(spec: WellSpec, directory: str) -> str | None:
    path = _resolve_one(spec, directory)
    return None if path is None else recording_fingerprint(path)


def _needs_screening(spec: WellSpec, key: tuple[str, str], stored: dict, directory: str) -> bool:
    """A well is screened again when it has no result for these options or its recording changed since."""
    if key not in stored:
        return True
    status, fingerprint = stored[key]
    now = _fingerprint_of(spec, directory) or ABSENT
    if fingerprint is None:
        # Stored before fingerprints were kept: redo only what could not be read.
        return status == "unreadable" and now != ABSENT
    return now != fingerprint


def run_plate(
    manifest: Manifest,
    out_dir: str | os.PathLike,
    *,
    options: ScreenOptions | None = None,
    workers: int | None = None,
    executor: cf.Executor | None = None,
    executor_slots: int | None = None,
    limits: WellLimits | None = None,
    redo: bool = False,
    watch: bool = False,
    time_limit_s: float | None = None,
    poll_s: float = 5.0,
    quiet_s: float = DEFAULT_QUIET_S,
    progress: Progress | None = None,
) -> RunSummary:
    """Screen the wells of ``manifest`` and store their results in ``out_dir/results.sqlite``.

    Parameters
    ----------
    manifest
        A validated manifest (:func:`nmrcheck.plate.manifest.read_manifest`).
    out_dir
        Output folder; an earlier run's database there is resumed. One run per folder at a
        time: another live run on it makes this one raise :class:`OutputError`.
    options
        Processing and search options; results are keyed by their hash with the manifest row.
    workers
        Local worker processes (default: every core this process may use). Ignored when
        ``executor`` is given.
    executor
        Any :class:`concurrent.futures.Executor` (e.g. a Dask distributed client's
        ``get_executor()``); the caller owns it and shuts it down.
    executor_slots
        Wells in flight on ``executor`` at once (default: its worker count).
    limits
        Time and memory limit of one well (:class:`WellLimits`; default 120 s and 4 GB).
        A well past one is recorded as stopped and the plate goes on. On an external
        executor the time counts from submission and the memory limit is the executor's.
    redo
        Screen wells again even when a result for the same options and recording exists
        (history is kept). Without it, wells whose recording changed or appeared since
        their result are screened again.
    watch
        Keep running and pick up recordings as they become complete; stop when every well
        has a result for its current recording, or after ``time_limit_s``.
    time_limit_s
        Stop waiting after this many seconds (watch mode); wells still incomplete stay pending.
    poll_s
        Seconds between looks at the plate folder in watch mode.
    quiet_s
        Watch mode: a recording with the size its header announces is read once it has not
        changed for this many seconds (a JCAMP-DX file closed by its ``##END=`` at once).
    progress
        Receives start, per-well and finish events (:mod:`nmrcheck.plate.progress`).

    Raises
    ------
    OutputError
        The folder is in use by another run, or cannot be written (full disk, read-only).
    RunInterrupted
        SIGTERM/SIGINT/SIGHUP arrived; workers are stopped and the run is marked interrupted.
    """
    options = options or ScreenOptions()
    limits = limits or WellLimits()
    progress = progress or Progress()
    if time_limit_s is not None and not (math.isfinite(time_limit_s) and time_limit_s > 0):
        raise ParameterError(f"time_limit_s: must be positive, got {time_limit_s}")
    if not (math.isfinite(poll_s) and poll_s > 0):
        raise ParameterError(f"poll_s: must be positive, got {poll_s}")
    if not (math.isfinite(quiet_s) and quiet_s >= 0):
        raise ParameterError(f"quiet_s: must be >= 0 s, got {quiet_s}")
    if executor is None and workers is not None and workers < 1:
        raise ParameterError(f"workers: must be >= 1, got {workers}")
    started = time.monotonic()
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        from nmrcheck.io.atomic import describe_os_error

        raise OutputError(f"{out}: cannot create the output folder ({describe_os_error(exc)})") from None
    run_options: dict[str, Any] = {
        "screen": options.as_dict(),
        "workers": workers,
        "watch": watch,
        "redo": redo,
        "limits": {"well_timeout_s": limits.time_s, "well_memory_gb": limits.memory_gb},
        "layout": manifest.layout.name,
        "wells": [s.well for s in manifest.wells],
    }
    directory = manifest.directory

    def failure(spec: WellSpec, message: str) -> WellResult:
        return failure_result(spec, options, message)

    with OutputLock(out) as lock, ResultsStore(out) as store, _stop_on_signals():
        keys = {s.well: (s.well, well_options_hash(s, options)) for s in manifest.wells}
        stored = store.fingerprints()
        todo = [s for s in manifest.wells if redo or _needs_screening(s, keys[s.well], stored, directory)]
        skipped = len(manifest.wells) - len(todo)
        survey = PhaseSurvey(directory, options.processing)
        if todo and not options.shared_phase and not watch:
            # Every complete recording informs the shared first-order phase, screened before or not.
            options = dataclasses.replace(options, shared_phase=survey.read(manifest.wells))
            run_options["shared_phase"] = [s.describe() for s in options.shared_phase]
            for shared in options.shared_phase:
                progress.note(f"phase: {shared.describe()}")
        run_id = store.start_run(manifest=manifest.path, options=run_options, software_version=__version__)
        progress.start(total=len(todo), skipped=skipped, watch=watch)
        if executor is None:
            _preload()
            backend: Any = LocalPool(workers or default_workers(), directory, options, limits, failure, close_fds=(lock.fd,) if lock.fd is not None else ())
        else:
            backend = _ExecutorBackend(executor, directory, options, limits, executor_slots or _slots_of(executor), failure)
        counter = {"done": 0, "total": len(todo)}

        def store_result(spec: WellSpec, result: WellResult, fingerprint: str | None) -> None:
            store.save(run_id, result, fingerprint=fingerprint)
            counter["done"] += 1
            counter["total"] = max(counter["total"], counter["done"])
            progress.result(result, done=counter["done"], total=counter["total"])

        status = "complete"
        try:
            if watch:
                remaining = _run_watching(backend, store, keys, manifest, todo, store_result, progress, started, time_limit_s, poll_s, quiet_s,
                                          survey=None if options.shared_phase else survey, options=options)
                status = "complete" if not remaining else "stopped"
            else:
                _run_all(backend, todo, directory, store_result)
        except BaseException as exc:
            backend.kill()
            with contextlib.suppress(OutputError):
                store.finish_run(run_id, "interrupted")
            if isinstance(exc, RunInterrupted):
                name = signal.Signals(exc.signum).name
                raise RunInterrupted(exc.signum, f"{out}: run stopped by {name} after {counter['done']} well(s) were stored; run the same command again to resume") from None
            raise
        backend.close()
        # Plate-level step: the retention fit needs every well's result.
        from nmrcheck.plate.retention_pass import retention_pass

        retention_pass(store, run_id, {s.well for s in manifest.wells}, calibration=options.retention_calibration)
        current = store.current(with_trace=False)
        have = {w for w, r in current.items() if w in keys}
        pending = tuple(s.well for s in manifest.wells if s.well not in have)
        if pending:
            status = "stopped"
        store.finish_run(run_id, status)
        verdicts = Counter(r.verdict for w, r in current.items() if w in keys)
    summary = RunSummary(
        run_id=run_id,
        out_dir=str(out),
        wells=len(manifest.wells),
        screened=counter["done"],
        skipped=skipped,
        pending=pending,
        status=status,
        verdicts=dict(verdicts),
        wall_s=time.monotonic() - started,
    )
    progress.finish(summary)
    log.info("%s", summary.describe())
    return summary


def _run_all(backend, todo: list[WellSpec], directory: str, store_result) -> None:
    queue = deque(todo)
    fingerprints: dict[str, str | None] = {}
    while queue or backend.busy():
        while queue and backend.free():
            spec = queue.popleft()
            # Taken before the well is read: a recording rewritten meanwhile differs at the next run.
            fingerprints[spec.well] = _fingerprint_of(spec, directory)
            backend.submit(spec)
        for spec, result in backend.poll(1.0):
            store_result(spec, result, fingerprints.pop(spec.well, None))


def _result_of(fut: cf.Future, spec: WellSpec, failure) -> WellResult:
    """The future's result; a task that failed or whose worker died still yields a result (an error) for its well."""
    try:
        return fut.result()
    except cf.CancelledError:
        return failure(spec, "the well's task was cancelled by the executor; stopped")
    except Exception as exc:  # noqa: BLE001 - e.g. Dask's KilledWorker: the well is recorded as an error
        return failure(spec, f"the executor could not screen this well: {human_message(exc)}")


def _ready(spec: WellSpec, directory: str, last_seen: dict[str, Any], quiet_s: float, now: float) -> bool:
    """True when the well's recording has all its data and has been unchanged for ``quiet_s`` (or carries its end marker)."""
    path = _resolve_one(spec, directory)
    fingerprint = None if path is None else recording_fingerprint(path)
    if fingerprint is None or not expected_size_reached(path):
        last_seen.pop(spec.well, None)
        return False
    if has_end_marker(path):
        return True
    seen = last_seen.get(spec.well)
    if seen is None or seen[0] != fingerprint:
        last_seen[spec.well] = (fingerprint, now)
        return quiet_s == 0
    return now - seen[1] >= quiet_s


def _run_watching(backend, store, keys, manifest, todo, store_result, progress, started, time_limit_s, poll_s, quiet_s, *,
                  survey: PhaseSurvey | None = None, options: ScreenOptions | None = None):
    """Screen wells as their recordings become complete; a recording that changes after its result is screened again.

    With ``survey``, each newly complete recording is read for the shared first-order phase before
    its well is screened; once one is found the wells submitted from then on carry it, and the wells
    of its acquisition set that this run screened without it are screened again with it (a well in
    a worker at that moment once its result is stored).
    """
    directory = manifest.directory
    specs = {s.well: s for s in manifest.wells}
    waiting = {s.well for s in todo}
    screened: dict[str, str | None] = {}  # well -> fingerprint of what its current result was made from
    for (well, h), (_status, fp) in store.fingerprints().items():
        if well in specs and keys[well][1] == h and well not in waiting:
            if fp == ABSENT:
                waiting.add(well)  # recorded as missing by an earlier run: watch for it now
            else:
                screened[well] = fp
    queue: deque[WellSpec] = deque()
    submitted: dict[str, str | None] = {}
    # Per well screened or submitted in this run: the acquisition sets whose shared phase it carried.
    carried: dict[str, frozenset] = {}
    again: set[str] = set()  # in a worker without the shared value: screened again once stored
    last_seen: dict[str, Any] = {}
    next_look = 0.0
    while True:
        now = time.monotonic()
        if now >= next_look:
            next_look = now + poll_s
            for well, fp in list(screened.items()):
                current = _fingerprint_of(specs[well], directory)
                if fp is not None and (current or ABSENT) != fp:
                    log.info("well %s: its recording changed since it was screened; waiting to screen it again", well)
                    del screened[well]
                    waiting.add(well)
            ready = [specs[w] for w in specs if w in waiting and _ready(specs[w], directory, last_seen, quiet_s, now)]
            for spec in ready:
                waiting.discard(spec.well)
                queue.append(spec)
            if survey is not None and options is not None and ready and not survey.done:
                shared = survey.read(ready)
                if shared != options.shared_phase:
                    known = {v.key for v in options.shared_phase}
                    options = dataclasses.replace(options, shared_phase=shared)
                    backend.set_options(options)
                    for value in shared:
                        if value.key not in known:  # said once; later strong wells only refine it
                            progress.note(f"phase: {value.describe()}")
                            redo = _screened_without(value, survey.wells_of(value), carried, screened, submitted)
                            for well in redo:
                                if well in submitted:
                                    again.add(well)
                                else:
                                    del screened[well]
                                    queue.append(specs[well])
                            if redo:
                                progress.note(f"phase: {len(redo)} well(s) screened before it was found are screened again with it")
            if waiting:
                progress.waiting(len(waiting))
        while queue and backend.free():
            spec = queue.popleft()
            submitted[spec.well] = _fingerprint_of(spec, directory)
            if options is not None:
                carried[spec.well] = frozenset(v.key for v in options.shared_phase)
            backend.submit(spec)
        if not (waiting or queue or backend.busy()):
            break
        if time_limit_s is not None and time.monotonic() - started >= time_limit_s and not backend.busy() and not queue:
            break
        wait_s = max(0.01, next_look - time.monotonic())
        for spec, result in backend.poll(wait_s):
            fp = submitted.pop(spec.well, None)
            store_result(spec, result, fp)
            if spec.well in again:
                again.discard(spec.well)
                queue.append(spec)
            else:
                screened[spec.well] = fp or ABSENT
    return tuple(w for w in specs if w in waiting)


def _screened_without(shared: SharedPhase, wells: frozenset[str], carried: dict[str, frozenset], screened: dict, submitted: dict) -> list[str]:
    """Wells of ``shared``'s acquisition set that this run screened (or is screening) without its value."""
    return sorted(w for w in wells if w in carried and shared.key not in carried[w] and (w in screened or w in submitted))


def run_plates(
    jobs: Iterable[tuple[Manifest, str | os.PathLike]],
    *,
    executor: cf.Executor,
    executor_slots: int | None = None,
    **kwargs: Any,
) -> list[RunSummary]:
    """Screen several plates at once on one executor (e.g. a Dask cluster): one thread per plate feeds it.

    ``jobs`` are (manifest, output folder) pairs, each folder its own database and lock;
    ``kwargs`` go to :func:`run_plate`. Returns the summaries in the order of ``jobs``;
    the first plate that fails raises after the others have finished.
    """
    jobs = list(jobs)
    if not jobs:
        return []
    with cf.ThreadPoolExecutor(max_workers=len(jobs), thread_name_prefix="nmrcheck-plate") as feeders:
        futures = [feeders.submit(run_plate, m, out, executor=executor, executor_slots=executor_slots, **kwargs) for m, out in jobs]
        return [f.result() for f in futures]
