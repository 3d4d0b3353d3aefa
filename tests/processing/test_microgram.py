"""The processor at microgram signal: every shared recording degraded to SNR 100 and 30 (seeds 0-2).

The copies come from the shared tool tools/add_noise.py beside the recordings (calibrated white noise
added to the real FID, with a clean twin written the same way) and are judged as its header
prescribes: the phase chosen on the noisy copy is applied to the clean twin on the instrument's grid
and measured with tools/phase_vs_instrument.py (largest error at the instrument spectrum's 12
strongest peaks); counts against the structure's H count (structure.mol, RDKit); the axis against
the one set on the clean twin. The goals are the processing issue's: at SNR 100, 95 % of phases
within 3 deg and of counts in range; at SNR 30, 90 % of phases within 5 deg, none beyond 20 deg, and
90 % of counts in range. bench/bench_microgram.py prints the same figures with SNR 300 and nmrglue's
ACME beside them.
"""

from __future__ import annotations

import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

from nmrcheck.io import read_fid
from nmrcheck.processing import process
from nmrcheck.processing.phase import apply_phase
from nmrcheck.processing.transform import fourier_transform

from recordings import count_holds, structure_h

pytestmark = [pytest.mark.refdata, pytest.mark.slow]

LEVELS = (100.0, 30.0)
SEEDS = (0, 1, 2)


@dataclass(frozen=True)
class Copy:
    """One noisy copy's figures: phase error (deg, None when the instrument spectrum cannot be measured),
    count holds the structure (None without a structure), axis where the clean twin's is (or unreferenced)."""

    recording: str
    snr: float
    seed: int
    phase_error_deg: float | None
    count_ok: bool | None
    axis_ok: bool


def _recordings(refdata: Path) -> list[Path]:
    jcamp = sorted(d for d in (refdata / "jcamp-fid").iterdir() if (d / "1h.fid.dx").exists())
    bruker = sorted(d for d in (refdata / "bruker-raw").iterdir() if (d / "fid").exists())
    return jcamp + bruker


def _make_copy(tool: Path, recording: Path, snr: float, seed: int, out: Path) -> Path | None:
    """The tool's noisy copy and clean twin in ``out``, or None when it refuses the target SNR (above two
    thirds of the recording's own)."""
    done = subprocess.run([sys.executable, str(tool), str(recording), "--snr", f"{snr:g}", "--seed", str(seed),
                           "--out", str(out)], capture_output=True, text=True)
    return out if done.returncode == 0 else None


def _phase_error(phase_tool, instrument, copy: Path, p0: float, p1: float, pivot: float) -> float:
    spectrum, si, lb = instrument
    clean = fourier_transform(read_fid(copy / "clean"), lb_hz=lb, size=si)
    ours = apply_phase(clean, p0_deg=p0, p1_deg=p1, pivot_ppm=pivot)
    return float(np.abs(phase_tool.phase_errors(ours.data, spectrum, ppm=ours.ppm)[1]).max())


@pytest.fixture(scope="session")
def microgram(refdata, phase_tool, tmp_path_factory) -> list[Copy]:
    tool = refdata.parent / "tools" / "add_noise.py"
    if not tool.is_file():
        pytest.skip(f"noise tool not found at {tool}")
    root = tmp_path_factory.mktemp("microgram")
    jobs = [(rec, snr, seed) for rec in _recordings(refdata) for snr in LEVELS for seed in SEEDS]
    # Each copy is a separate process of the tool; two at a time (the machines CI runs on have two cores).
    with ThreadPoolExecutor(max_workers=2) as pool:
        made = list(pool.map(lambda j: _make_copy(tool, j[0], j[1], j[2], root / f"{j[0].name}-{j[1]:g}-{j[2]}"), jobs))
    copies = []
    by_recording: dict[str, tuple] = {}
    for (rec, snr, seed), copy in zip(jobs, made):
        if copy is None:
            continue
        if rec.name not in by_recording:
            try:
                instrument = phase_tool.instrument_spectrum(str(rec))
            except SystemExit:  # the tool's own refusal: no imaginary part to measure against
                instrument = None
            mol = rec / "structure.mol"
            by_recording[rec.name] = (instrument, structure_h(mol) if mol.exists() else None,
                                      process(copy / "clean").spectrum.first_ppm)
        instrument, truth, clean_axis = by_recording[rec.name]
        p = process(copy / "noisy")
        error = None if instrument is None else _phase_error(phase_tool, instrument, copy, p.phase.p0_deg,
                                                              p.phase.p1_deg, p.phase.pivot_ppm)
        copies.append(Copy(rec.name, snr, seed, error,
                           None if truth is None else count_holds(p.count, *truth),
                           p.reference.kind == "none" or abs(p.spectrum.first_ppm - clean_axis) <= 0.01))
    if not copies:
        pytest.skip("the noise tool made no copy")
    return copies


def _phases(copies, snr):
    return np.array([c.phase_error_deg for c in copies if c.snr == snr and c.phase_error_deg is not None])


def _counts(copies, snr):
    return [c.count_ok for c in copies if c.snr == snr and c.count_ok is not None]


def _misses(copies, snr, test):
    return [f"{c.recording} seed {c.seed}" for c in copies if c.snr == snr and test(c)]


def test_snr_100_counts_hold_the_structure(microgram):
    """Goal 95 %; measured 44 of 45 (2759-55-9 seed 0 reads 6.8 H, 6.0-7.6, for 12 C-H + 1 N-H)."""
    counts = _counts(microgram, 100.0)
    assert sum(counts) >= 0.95 * len(counts), _misses(microgram, 100.0, lambda c: c.count_ok is False)


@pytest.mark.xfail(strict=True, reason="goal not met: 45 of 51 within 3 deg measured (88 %); the six misses (3.5-4.6 deg: "
                   "1047626-52-7 twice, 2216-51-5, 2591-86-8, 517920-70-6, aminoacid-mix-undried-1) carry a first-order "
                   "term the noise pulled 3-9 deg from the clean twin's (docs/processing.md)")
def test_snr_100_phases_within_3_deg(microgram):
    """Goal 95 %. With each recording's first-order phase taken from the instrument and only the zero
    order fitted, 146 of 153 copies (seeds 0-8) are within 3 deg: the goal asks for a first-order phase
    as good as the instrument's own."""
    errors = _phases(microgram, 100.0)
    assert np.sum(errors <= 3.0) >= 0.95 * errors.size


def test_snr_100_axis_does_not_move_with_the_noise(microgram):
    """The axis set on a noisy copy is the clean twin's within 0.01 ppm, or honestly unreferenced;
    measured 54 of 54."""
    assert not _misses(microgram, 100.0, lambda c: not c.axis_ok)


def test_snr_30_phases_within_5_deg_and_none_beyond_20(microgram):
    """Goals 90 % within 5 deg and none beyond 20 deg; measured 51 of 54 and none."""
    errors = _phases(microgram, 30.0)
    assert np.sum(errors <= 5.0) >= 0.90 * errors.size, _misses(microgram, 30.0, lambda c: (c.phase_error_deg or 0) > 5)
    assert not np.any(errors > 20.0)


def test_snr_30_counts_hold_the_structure(microgram):
    """Goal 90 %; measured 42 of 45."""
    counts = _counts(microgram, 30.0)
    assert sum(counts) >= 0.90 * len(counts), _misses(microgram, 30.0, lambda c: c.count_ok is False)
