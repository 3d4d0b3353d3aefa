"""Local worker processes for a plate run: each well under a time and memory limit, and no worker outliving the run.

Each worker is a forked process that screens one well at a time. The parent watches every
worker: a well past its time limit has its worker killed and replaced (the well is
recorded as stopped and the plate goes on); a worker that dies (a crash, the kernel's
out-of-memory killer, a stray ``kill``) has its well tried once more on a new worker, then
recorded. The memory limit is the worker's address space (``RLIMIT_AS``), so an absurd
allocation fails inside the well as a MemoryError instead of exhausting the machine.

A worker ends when its parent does: on Linux the kernel sends it SIGKILL when the parent
dies (``prctl(PR_SET_PDEATHSIG)``), and everywhere it checks its parent's pid while idle.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import logging
import math
import multiprocessing
import multiprocessing.connection
import os
import re
import signal
import sys
import time
from dataclasses import dataclass, replace
from typing import Any

from nmrcheck.errors import ParameterError
from nmrcheck.plate.manifest import WellSpec
from nmrcheck.plate.results import WellResult

__all__ = [
    "DEFAULT_WELL_MEMORY_GB",
    "DEFAULT_WELL_TIMEOUT_S",
    "LocalPool",
    "WellLimits",
    "die_with_parent",
    "parse_duration",
    "parse_memory",
]

log = logging.getLogger("nmrcheck")

DEFAULT_WELL_TIMEOUT_S = 120.0
"""Seconds one well may take. A 64k-point 1H well takes about a second on one core; 120 s
leaves room for a slow shared machine and a large candidate list, and bounds what one
stuck well costs an overnight plate."""
DEFAULT_WELL_MEMORY_GB = 4.0
"""Address space of one worker, GB. A worker with every library loaded maps about 0.4 GB
and screening a 64k-point well adds little; 4 GB leaves room for 256k-point FIDs while a
header asking for tens of GB fails at once."""

_PR_SET_PDEATHSIG = 1
_RETRIES_AFTER_DEATH = 1


def parse_duration(text: str | float | int, *, name: str = "--well-timeout") -> float:
    """Seconds from ``'120'``, ``'90 s'``, ``'2 min'`` or ``'1.5 h'`` (a bare number is seconds)."""
    if isinstance(text, (int, float)):
        value, unit = float(text), "s"
    else:
        m = re.fullmatch(r"\s*([0-9]*\.?[0-9]+(?:[eE][+-]?\d+)?)\s*(s|sec|min|m|h)?\s*", str(text))
        if m is None:
            raise ParameterError(f"{name}: {text!r} is not a duration such as '120', '90s', '2min' or '1h'")
        value, unit = float(m.group(1)), m.group(2) or "s"
    seconds = value * {"s": 1, "sec": 1, "min": 60, "m": 60, "h": 3600}[unit]
    if not math.isfinite(seconds) or not 0 < seconds <= 7 * 24 * 3600:
        raise ParameterError(f"{name}: {text!r} is outside 0 s .. 7 days")
    return seconds


def parse_memory(text: str | float | int, *, name: str = "--well-memory") -> float:
    """Gigabytes from ``'4'``, ``'4GB'``, ``'512MB'`` (a bare number is GB; 1 GB = 10^9 bytes)."""
    if isinstance(text, (int, float)):
        value, unit = float(text), "gb"
    else:
        m = re.fullmatch(r"\s*([0-9]*\.?[0-9]+(?:[eE][+-]?\d+)?)\s*([gGmM][bB]?)?\s*", str(text))
        if m is None:
            raise ParameterError(f"{name}: {text!r} is not an amount of memory such as '4GB' or '512MB'")
        value, unit = float(m.group(1)), (m.group(2) or "gb").lower()
    gb = value / 1000 if unit.startswith("m") else value
    if not math.isfinite(gb) or not 0.25 <= gb <= 4096:
        raise ParameterError(f"{name}: {text!r} is outside 0.25 GB .. 4096 GB")
    return gb


@dataclass(frozen=True)
class WellLimits:
    """What one well may use; None switches a limit off."""

    time_s: float | None = DEFAULT_WELL_TIMEOUT_S
    memory_gb: float | None = DEFAULT_WELL_MEMORY_GB

    def __post_init__(self) -> None:
        if self.time_s is not None:
            parse_duration(self.time_s, name="time_s")
        if self.memory_gb is not None:
            parse_memory(self.memory_gb, name="memory_gb")

    def timeout_text(self) -> str:
        t = self.time_s or 0.0
        return f"{t:g} s" if t < 120 or t % 60 else f"{t / 60:g} min"

    def memory_text(self) -> str:
        return f"{self.memory_gb:g} GB"


def die_with_parent(parent_pid: int) -> None:
    """Ask the kernel to kill this process when its parent dies (Linux); exit now if it already has."""
    if sys.platform.startswith("linux"):
        try:
            libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6", use_errno=True)
            libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0)
        except (OSError, AttributeError):  # pragma: no cover - no prctl: the pid check below remains
            pass
    if os.getppid() != parent_pid:
        os._exit(0)


def _worker_main(conn, parent_pid: int, memory_bytes: int | None, close_fds: tuple[int, ...]) -> None:
    """Screen wells sent by the parent until told to stop, the pipe closes or the parent is gone."""
    # Ctrl-C reaches the whole terminal's process group: the parent decides, the workers do not.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    if hasattr(signal, "SIGHUP"):
        signal.signal(signal.SIGHUP, signal.SIG_DFL)
    die_with_parent(parent_pid)
    for fd in close_fds:
        # The parent's folder lock must not outlive it in a child.
        try:
            os.close(fd)
        except OSError:
            pass
    if memory_bytes:
        import resource

        soft, hard = resource.getrlimit(resource.RLIMIT_AS)
        limit = memory_bytes if hard == resource.RLIM_INFINITY else min(memory_bytes, hard)
        resource.setrlimit(resource.RLIMIT_AS, (limit, hard))
    try:
        from threadpoolctl import threadpool_limits

        # Workers already fill the cores; nested BLAS threads on top of them halve the throughput.
        threadpool_limits(1)
    except ImportError:  # pragma: no cover - a dependency
        pass
    from nmrcheck.errors import human_message
    from nmrcheck.plate.screen import screen_well

    out_of_memory = human_message(MemoryError())
    while True:
        try:
            if not conn.poll(1.0):
                if os.getppid() != parent_pid:
                    os._exit(0)
                continue
            task = conn.recv()
        except (EOFError, OSError):
            os._exit(0)
        if task is None:
            os._exit(0)
        spec, directory, options, memory_text = task
        result = screen_well(spec, directory, options)
        if result.error == out_of_memory:
            result = replace(result, error=f"needed more than the {memory_text} memory limit of a well (--well-memory); stopped")
        try:
            conn.send(result)
        except (OSError, ValueError):
            os._exit(0)


@dataclass
class _Slot:
    process: Any = None
    conn: Any = None
    spec: WellSpec | None = None
    started: float = 0.0
    deaths: int = 0


class LocalPool:
    """``workers`` supervised processes screening wells of one plate (see the module docstring).

    ``failure`` builds the well's record for a well that was stopped or whose worker died:
    ``failure(spec, message) -> WellResult``.
    """

    def __init__(self, workers: int, directory: str, options, limits: WellLimits, failure, *, close_fds: tuple[int, ...] = ()) -> None:
        if workers < 1:
            raise ParameterError(f"workers: must be >= 1, got {workers}")
        methods = multiprocessing.get_all_start_methods()
        # fork: workers start at once with every library the parent already imported.
        self._ctx = multiprocessing.get_context("fork" if "fork" in methods else None)
        self._slots = [_Slot() for _ in range(workers)]
        self._directory = directory
        self._options = options
        self._limits = limits
        self._failure = failure
        self._close_fds = tuple(close_fds)
        self._memory_bytes = int(limits.memory_gb * 1e9) if limits.memory_gb else None

    # -- workers
    def _start(self, slot: _Slot) -> None:
        parent, child = self._ctx.Pipe(duplex=True)
        proc = self._ctx.Process(
            target=_worker_main,
            args=(child, os.getpid(), self._memory_bytes, self._close_fds),
            name="nmrcheck-well-worker",
            daemon=True,
        )
        proc.start()
        child.close()
        slot.process, slot.conn = proc, parent

    def _stop(self, slot: _Slot, *, kill: bool) -> None:
        proc, conn = slot.process, slot.conn
        slot.process = slot.conn = None
        if proc is None:
            return
        if not kill:
            try:
                conn.send(None)
            except (OSError, ValueError):
                kill = True
        if kill and proc.is_alive():
            try:
                os.kill(proc.pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
        proc.join(timeout=None if kill else 5.0)
        if proc.is_alive():
            os.kill(proc.pid, signal.SIGKILL)
            proc.join()
        conn.close()

    def _send(self, slot: _Slot, spec: WellSpec) -> None:
        if slot.process is None or not slot.process.is_alive():
            if slot.process is not None:
                self._stop(slot, kill=True)
            self._start(slot)
        slot.spec, slot.started = spec, time.monotonic()
        slot.conn.send((spec, self._directory, self._options, self._limits.memory_text() if self._limits.memory_gb else ""))

    # -- the executor-like surface used by the runner
    def set_options(self, options) -> None:
        """Options for the wells submitted from now on (each well's task carries them)."""
        self._options = options

    def free(self) -> int:
        return sum(s.spec is None for s in self._slots)

    def busy(self) -> int:
        return len(self._slots) - self.free()

    def submit(self, spec: WellSpec) -> None:
        slot = next(s for s in self._slots if s.spec is None)
        slot.deaths = 0
        self._send(slot, spec)

    def poll(self, timeout: float) -> list[tuple[WellSpec, WellResult]]:
        """Wait up to ``timeout`` s for wells to finish; return the finished ones (stopped and failed included)."""
        busy = [s for s in self._slots if s.spec is not None]
        if not busy:
            time.sleep(max(0.0, timeout))
            return []
        now = time.monotonic()
        wait_s = max(0.0, timeout)
        if self._limits.time_s:
            wait_s = min(wait_s, max(0.0, min(s.started + self._limits.time_s for s in busy) - now))
        waitables = [s.conn for s in busy] + [s.process.sentinel for s in busy]
        multiprocessing.connection.wait(waitables, timeout=wait_s)
        out: list[tuple[WellSpec, WellResult]] = []
        now = time.monotonic()
        for slot in busy:
            spec = slot.spec
            result = None
            try:
                if slot.conn.poll(0):
                    result = slot.conn.recv()
            except (EOFError, OSError):
                result = None
            if result is not None:
                slot.spec = None
                out.append((spec, result))
                continue
            if not slot.process.is_alive():
                code = slot.process.exitcode
                self._stop(slot, kill=True)
                slot.deaths += 1
                how = f"was killed by {signal.Signals(-code).name}" if code is not None and code < 0 else f"exited with status {code}"
                if slot.deaths <= _RETRIES_AFTER_DEATH:
                    log.warning("well %s: its worker process %s; trying the well again", spec.well, how)
                    self._send(slot, spec)
                    continue
                slot.spec = None
                hint = " (out of memory?)" if code == -signal.SIGKILL else ""
                out.append((spec, self._failure(spec, f"the worker process screening this well {how}{hint}, twice; stopped")))
                continue
            if self._limits.time_s and now - slot.started >= self._limits.time_s:
                self._stop(slot, kill=True)
                slot.spec = None
                log.warning("well %s: took longer than %s; stopped", spec.well, self._limits.timeout_text())
                out.append((spec, self._failure(spec, f"took longer than {self._limits.timeout_text()} (the per-well time limit, --well-timeout); stopped")))
        return out

    def close(self) -> None:
        """Let idle workers exit; kill any still busy."""
        for slot in self._slots:
            self._stop(slot, kill=slot.spec is not None)
            slot.spec = None

    def kill(self) -> None:
        """Kill every worker now (run interrupted)."""
        for slot in self._slots:
            self._stop(slot, kill=True)
            slot.spec = None

    def pids(self) -> list[int]:
        return [s.process.pid for s in self._slots if s.process is not None]
