"""Fuzz at the command line: bad options and bad files give one line and a non-zero exit, never a traceback or a hang.

Options are tried in-process (click's test runner); the cases whose failure mode was a hang
or a runaway allocation run as real subprocesses under a time limit and an address-space
limit, so a regression fails instead of stalling the suite or the machine.
"""

from __future__ import annotations

import errno
import os
import resource
import subprocess
import sys

import pytest
from click.testing import CliRunner
from fuzz_catalogue import PROCESS_OPTIONS, judge_options, set_param, write_synthetic_bruker

from nmrcheck.cli import main


@pytest.fixture(scope="module")
def experiment(tmp_path_factory):
    return write_synthetic_bruker(tmp_path_factory.mktemp("cli-fuzz") / "exp" / "1")


def _one_line_error(result, status=2):
    assert result.exit_code == status, result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    message = result.output.strip()
    assert "Traceback" not in message
    assert len(message.splitlines()) == 1, message
    return message


@pytest.mark.parametrize("kind, args, fragment", PROCESS_OPTIONS, ids=[f"{k}: {' '.join(a)}" for k, a, _ in PROCESS_OPTIONS])
def test_bad_process_options(experiment, kind, args, fragment):
    verdict, detail = judge_options(experiment, args, fragment)
    assert verdict == "ok", f"{kind}: {detail}"


@pytest.mark.parametrize("option", ["--plot", "--save-spectrum"])
def test_output_into_a_missing_folder(experiment, tmp_path, option):
    message = _one_line_error(CliRunner().invoke(main, ["process", str(experiment), option, str(tmp_path / "no" / "such" / "x.png")]))
    assert option in message and "does not exist" in message


def test_check_plot_into_a_missing_folder(experiment, tmp_path):
    message = _one_line_error(CliRunner().invoke(main, ["check", str(experiment), "--formula", "C10H12O", "--plot", str(tmp_path / "none" / "x.png")]))
    assert "--plot" in message


@pytest.mark.parametrize("args", [["--mz", "nan", "--ion", "[M+H]+"], ["--ppm", "nan", "--formula", "C10H12O"], ["--ppm", "inf", "--formula", "C10H12O"]])
def test_check_numbers_must_be_finite(experiment, args):
    result = CliRunner().invoke(main, ["check", str(experiment), *args])
    assert result.exit_code == 2 and "Traceback" not in result.output
    assert "finite" in result.output


@pytest.mark.parametrize("args", [["nan", "--ion", "[M+H]+"], ["inf", "--ion", "[M+H]+"], ["179.07", "--ion", "[M+H]+", "--ppm", "nan"], ["179.07", "--ion", "[M+H]+", "--max", "1e9"]])
def test_formulas_numbers_must_be_finite(args):
    result = CliRunner().invoke(main, ["formulas", *args])
    assert result.exit_code == 2 and "Traceback" not in result.output


def test_huge_smiles_is_refused_by_size(experiment):
    """A 100,000-atom SMILES: refused by the documented heavy-atom limit, named in the message."""
    from nmrcheck.io.structures import MAX_HEAVY_ATOMS

    result = CliRunner().invoke(main, ["check", str(experiment), "--smiles", "C" * 100_000])
    assert result.exit_code == 2 and "Traceback" not in result.output
    assert str(MAX_HEAVY_ATOMS) in result.output


def test_workers_are_bounded(tmp_path):
    result = CliRunner().invoke(main, ["demo", "--out", str(tmp_path / "d"), "--workers", "1000000000"])
    assert result.exit_code == 2 and "--workers" in result.output


# --- the top-level guard --------------------------------------------------------------------


def _raise_in_process(monkeypatch, exc):
    import nmrcheck.processing as processing

    def boom(*args, **kwargs):
        raise exc

    monkeypatch.setattr(processing, "process", boom)


def test_unexpected_failure_is_one_line_with_status_3(experiment, monkeypatch):
    import numpy as np

    _raise_in_process(monkeypatch, np.linalg.LinAlgError("Singular matrix"))
    message = _one_line_error(CliRunner().invoke(main, ["process", str(experiment)]), status=3)
    assert message.startswith("nmrcheck: internal error") and "--debug" in message
    assert "LinAlgError" not in message


def test_debug_flag_shows_the_traceback(experiment, monkeypatch):
    _raise_in_process(monkeypatch, KeyError("SFO1"))
    result = CliRunner().invoke(main, ["--debug", "process", str(experiment)])
    assert isinstance(result.exception, KeyError)


@pytest.mark.parametrize("code, words", [(errno.ENOSPC, "the disk is full"), (errno.EROFS, "read-only"), (errno.EACCES, "permission denied")])
def test_disk_errors_are_one_line(experiment, tmp_path, monkeypatch, code, words):
    import nmrcheck.io.arrays as arrays

    target = tmp_path / "s.npz"

    def full(path, **kwargs):
        raise OSError(code, os.strerror(code), str(path))

    monkeypatch.setattr(arrays, "save_spectrum_npz", full)
    message = _one_line_error(CliRunner().invoke(main, ["process", str(experiment), "--save-spectrum", str(target)]))
    assert str(target) in message and words in message


@pytest.mark.skipif(not os.path.exists("/dev/full"), reason="no /dev/full (a device whose writes always fail with 'no space left') on this system")
def test_really_full_disk_is_one_line(experiment):
    """Writing the plot to /dev/full fails as a full disk does (ENOSPC), for real."""
    message = _one_line_error(CliRunner().invoke(main, ["process", str(experiment), "--plot", "/dev/full"]))
    assert message == "nmrcheck: /dev/full: the disk is full"


def test_export_name_checked_before_processing(experiment, tmp_path, monkeypatch):
    _raise_in_process(monkeypatch, AssertionError("processing must not start"))
    message = _one_line_error(CliRunner().invoke(main, ["process", str(experiment), "--save-spectrum", str(tmp_path / "s.txt")]))
    assert "--save-spectrum" in message and ".npz" in message


def test_full_disk_under_the_results_database_is_one_line(experiment, monkeypatch):
    import sqlite3

    _raise_in_process(monkeypatch, sqlite3.OperationalError("database or disk is full"))
    message = _one_line_error(CliRunner().invoke(main, ["process", str(experiment)]))
    assert message == "nmrcheck: the disk is full (results database)"


def test_closed_output_pipe_is_quiet(tmp_path, experiment):
    """`nmrcheck process ... --json | head -1`: the broken pipe ends the run quietly, without a traceback."""
    proc = subprocess.run(f"{sys.executable} -m nmrcheck process {experiment} --json | head -c 1", shell=True, capture_output=True, text=True, timeout=60)
    assert "Traceback" not in proc.stderr and "Error" not in proc.stderr, proc.stderr


# --- hangs and runaway memory: real subprocesses under limits --------------------------------

_LIMIT_BYTES = 4 * 1024**3


def _limited():
    resource.setrlimit(resource.RLIMIT_AS, (_LIMIT_BYTES, _LIMIT_BYTES))


def _run(*args, timeout=60):
    env = {**os.environ, "PYTHONWARNINGS": "ignore"}
    env.pop("NMRCHECK_DEBUG", None)
    try:
        proc = subprocess.run([sys.executable, "-m", "nmrcheck", *args], capture_output=True, text=True, timeout=timeout, preexec_fn=_limited, env=env)
    except subprocess.TimeoutExpired:
        pytest.fail(f"nmrcheck {' '.join(args)[:80]}: no answer within {timeout} s (hang)")
    assert "Traceback" not in proc.stderr, proc.stderr[-2000:]
    return proc


def test_subprocess_truncated_acqus_string(experiment, tmp_path):
    import shutil

    d = tmp_path / "cut"
    shutil.copytree(experiment, d)
    raw = (d / "acqus").read_bytes()
    (d / "acqus").write_bytes(raw[: raw.index(b"##$PULPROG= <") + 14])
    proc = _run("process", str(d))
    assert proc.returncode == 2 and "PULPROG" in proc.stderr and len(proc.stderr.strip().splitlines()) == 1


def test_subprocess_fifo_named_like_a_data_file(tmp_path):
    fifo = tmp_path / "x.dx"
    os.mkfifo(fifo)
    proc = _run("process", str(fifo))
    assert proc.returncode == 2 and "FIFO" in proc.stderr


def test_subprocess_absurd_base_frequency_and_size(experiment, tmp_path):
    import shutil

    d = tmp_path / "bf1"
    shutil.copytree(experiment, d)
    set_param(d, "BF1", "99999999999")
    proc = _run("process", str(d))
    assert proc.returncode == 2 and "BF1" in proc.stderr
    proc = _run("process", str(experiment), "--size", str(2**31))
    assert proc.returncode == 2 and "--size" in proc.stderr


def test_subprocess_huge_smiles(experiment):
    from nmrcheck.io.structures import MAX_HEAVY_ATOMS

    proc = _run("check", str(experiment), "--smiles", "C" * 100_000, timeout=60)
    assert proc.returncode == 2 and str(MAX_HEAVY_ATOMS) in proc.stderr
