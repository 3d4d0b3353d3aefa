"""Run a plate: screen every well in parallel, store each result as it arrives, resume after a kill.

The executor is pluggable: by default a local process pool on the machine's cores; any
:class:`concurrent.futures.Executor` works, e.g. Dask distributed's
``Client(address).get_executor()`` to spread many plates over a cluster.
"""

from __future__ import annotations

import concurrent.futures as cf
import logging
import os
import time
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from nmrcheck import __version__
from nmrcheck.errors import ParameterError
from nmrcheck.io.completeness import expected_size_reached, file_signature
from nmrcheck.plate.manifest import Manifest, WellSpec, resolve_spectrum
from nmrcheck.plate.progress import Progress
from nmrcheck.plate.results import WellResult
from nmrcheck.plate.screen import ScreenOptions, screen_well, well_options_hash
from nmrcheck.plate.store import ResultsStore

__all__ = ["RunSummary", "run_plate", "InlineExecutor", "default_workers"]

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


class InlineExecutor(cf.Executor):
    """Runs each task at submission in the calling process (one worker, no pickling)."""

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


def _make_executor(workers: int | None) -> cf.Executor:
    n = default_workers() if workers is None else workers
    if n < 1:
        raise ParameterError(f"workers: must be >= 1, got {workers}")
    if n == 1:
        return InlineExecutor()
    _preload()
    return cf.ProcessPoolExecutor(max_workers=n, initializer=_one_thread_per_worker)


def _one_thread_per_worker() -> None:
    """Keep each worker's BLAS/OpenMP pools to one thread: workers already fill the cores,
    and nested thread pools on top of them halve the throughput (measured: 5.8 s against
    3.3 s for a 96-well plate on 2 cores)."""
    from threadpoolctl import threadpool_limits

    threadpool_limits(1)


def run_plate(
    manifest: Manifest,
    out_dir: str | os.PathLike,
    *,
    options: ScreenOptions | None = None,
    workers: int | None = None,
    executor: cf.Executor | None = None,
    redo: bool = False,
    watch: bool = False,
    time_limit_s: float | None = None,
    poll_s: float = 5.0,
    progress: Progress | None = None,
) -> RunSummary:
    """Screen the wells of ``manifest`` and store their results in ``out_dir/results.sqlite``.

    Parameters
    ----------
    manifest
        A validated manifest (:func:`nmrcheck.plate.manifest.read_manifest`).
    out_dir
        Output folder; an earlier run's database there is resumed.
    options
        Processing and search options; results are keyed by their hash with the manifest row.
    workers
        Local processes (default: every core this process may use; 1 runs in-process).
        Ignored when ``executor`` is given.
    executor
        Any :class:`concurrent.futures.Executor` (e.g. a Dask distributed client's
        ``get_executor()``); the caller owns it and shuts it down.
    redo
        Screen wells again even when a result for the same options exists (history is kept).
    watch
        Keep running and pick up recordings as they become complete; stop when every well
        has a result or after ``time_limit_s``.
    time_limit_s
        Stop waiting after this many seconds (watch mode); wells still incomplete stay pending.
    poll_s
        Seconds between looks at the plate folder in watch mode. A recording is taken when
        it has its full size and that size was the same at the previous look.
    progress
        Receives start, per-well and finish events (:mod:`nmrcheck.plate.progress`).
    """
    options = options or ScreenOptions()
    progress = progress or Progress()
    if time_limit_s is not None and time_limit_s <= 0:
        raise ParameterError(f"time_limit_s: must be positive, got {time_limit_s}")
    if poll_s <= 0:
        raise ParameterError(f"poll_s: must be positive, got {poll_s}")
    started = time.monotonic()
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    own_executor = executor is None
    pool = executor or _make_executor(workers)
    run_options: dict[str, Any] = {
        "screen": options.as_dict(),
        "workers": workers,
        "watch": watch,
        "redo": redo,
        "layout": manifest.layout.name,
        "wells": [s.well for s in manifest.wells],
    }
    with ResultsStore(out) as store:
        run_id = store.start_run(manifest=manifest.path, options=run_options, software_version=__version__)
        finished = store.finished()
        todo: list[WellSpec] = [
            s for s in manifest.wells if redo or (s.well, well_options_hash(s, options)) not in finished
        ]
        skipped = len(manifest.wells) - len(todo)
        progress.start(total=len(todo), skipped=skipped, watch=watch)
        status = "complete"
        done = 0
        try:
            if watch:
                done, remaining = _run_watching(pool, store, run_id, manifest, todo, options, progress, started, time_limit_s, poll_s)
                status = "complete" if not remaining else "stopped"
            else:
                futures = {pool.submit(screen_well, s, manifest.directory, options): s for s in todo}
                for fut in cf.as_completed(futures):
                    done += 1
                    result = _result_of(fut, futures[fut], options)
                    store.save(run_id, result)
                    progress.result(result, done=done, total=len(todo))
        except BaseException:
            store.finish_run(run_id, "interrupted")
            if own_executor:
                pool.shutdown(wait=False, cancel_futures=True)
            raise
        if own_executor:
            pool.shutdown(wait=True)
        # Plate-level step: the retention fit needs every well's result.
        from nmrcheck.plate.retention_pass import retention_pass

        retention_pass(store, run_id, {s.well for s in manifest.wells}, calibration=options.retention_calibration)
        current = store.current(with_trace=False)
        hashes = {s.well: well_options_hash(s, options) for s in manifest.wells}
        have = {w for w, r in current.items() if w in hashes}
        pending = tuple(s.well for s in manifest.wells if s.well not in have)
        if pending:
            status = "stopped"
        store.finish_run(run_id, status)
        verdicts = Counter(r.verdict for w, r in current.items() if w in hashes)
    summary = RunSummary(
        run_id=run_id,
        out_dir=str(out),
        wells=len(manifest.wells),
        screened=done,
        skipped=skipped,
        pending=pending,
        status=status,
        verdicts=dict(verdicts),
        wall_s=time.monotonic() - started,
    )
    progress.finish(summary)
    log.info("%s", summary.describe())
    return summary


def _result_of(fut: cf.Future, spec: WellSpec, options: ScreenOptions) -> WellResult:
    """The future's result; a worker that died still yields a result (an error) for its well."""
    try:
        return fut.result()
    except Exception as exc:  # noqa: BLE001 - e.g. BrokenProcessPool: the well is recorded as an error
        return WellResult(
            well=spec.well,
            status="error",
            verdict="error",
            error=f"{type(exc).__name__}: {exc}",
            software_version=__version__,
            options_hash=well_options_hash(spec, options),
            spec=spec.as_dict(),
        )


def _ready(spec: WellSpec, directory: str, last_seen: dict[str, Any], settle_s: float) -> bool:
    """True when the well's recording is complete and has kept the same size and time for ``settle_s``."""
    matches = resolve_spectrum(spec, directory)
    if len(matches) != 1:
        last_seen.pop(spec.well, None)
        return False
    path = matches[0]
    signature = file_signature(path)
    if signature is None or not expected_size_reached(path):
        last_seen.pop(spec.well, None)
        return False
    now = time.monotonic()
    seen = last_seen.get(spec.well)
    if seen is None or seen[0] != signature:
        last_seen[spec.well] = (signature, now)
        return False
    return now - seen[1] >= settle_s


def _run_watching(pool, store, run_id, manifest, todo, options, progress, started, time_limit_s, poll_s):
    waiting = {s.well: s for s in todo}
    in_flight: dict[cf.Future, WellSpec] = {}
    last_seen: dict[str, Any] = {}
    done = 0
    while waiting or in_flight:
        for well, spec in list(waiting.items()):
            if _ready(spec, manifest.directory, last_seen, poll_s):
                in_flight[pool.submit(screen_well, spec, manifest.directory, options)] = spec
                del waiting[well]
        if waiting:
            progress.waiting(len(waiting))
        if in_flight:
            finished, _ = cf.wait(in_flight, timeout=poll_s, return_when=cf.FIRST_COMPLETED)
            for fut in finished:
                spec = in_flight.pop(fut)
                done += 1
                result = _result_of(fut, spec, options)
                store.save(run_id, result)
                progress.result(result, done=done, total=len(todo))
        elif waiting:
            if time_limit_s is not None and time.monotonic() - started >= time_limit_s:
                break
            time.sleep(poll_s)
        if time_limit_s is not None and time.monotonic() - started >= time_limit_s and not in_flight:
            break
    return done, tuple(waiting)
