"""Benchmark: from a generated 10-minute LC-MS run (mzML) and a 96-well timetable to the plate manifest.

Times the whole LC-MS-to-plate step (read the run, find every well's features, MS/MS of each
feature, the groups of related wells, write and re-read the manifest) and, in the same run,
two peers that only read the file: pyteomics.mzml and pymzml decoding every spectrum. Printed
as times and ratios.

    python bench/bench_lcms_plate.py [--scan-interval 0.2] [--noise-peaks 100] [--repeat 3]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np


def scenario(scan_interval_s: float, noise_peaks: int, seed: int = 3):
    """96 wells of 0.09 min from 1.0 min, one compound eluting in each (2.5 s wide; a second one in every eighth well),
    30 weak background compounds."""
    from nmrcheck.io.timetable import FractionWindow
    from nmrcheck.ms.simulate import SimulatedCompound, simulate_run

    rng = np.random.default_rng(seed)
    wells = [f"{r}{c}" for r in "ABCDEFGH" for c in range(1, 13)]
    width, first, delay = 0.09, 1.0, 0.12
    windows = [FractionWindow(w, first + k * width, first + (k + 1) * width) for k, w in enumerate(wells)]
    compounds = []
    for k, w in enumerate(windows):
        n_c = int(rng.integers(8, 35))
        formula = f"C{n_c}H{2 * n_c - int(rng.integers(0, n_c // 2)) * 2}O{int(rng.integers(1, 12))}"
        rt = (w.start_min + w.end_min) / 2 - delay
        frags = tuple((f"C{j + 3}H{j + 3}O", 100.0 / (j + 1)) for j in range(5))
        compounds.append(SimulatedCompound(w.well, formula, rt, float(10 ** rng.uniform(4.5, 6.3)),
                                           (("[M+H]+", 1.0), ("[M+Na]+", 0.3), ("[M+NH4]+", 0.2)), 2.5, frags))
        if k % 8 == 0:
            compounds.append(SimulatedCompound(w.well + "b", f"C{n_c + 2}H{2 * n_c}O{int(rng.integers(2, 10))}", rt + 0.01,
                                               float(10 ** rng.uniform(5.0, 6.0)), (("[M+H]+", 1.0), ("[M+Na]+", 0.4)), 2.5))
    for j in range(30):
        compounds.append(SimulatedCompound(f"bg{j}", f"C{int(rng.integers(10, 30))}H{2 * int(rng.integers(6, 20))}O{int(rng.integers(1, 8))}",
                                           float(rng.uniform(0.5, 9.8)), float(10 ** rng.uniform(3.5, 4.5)), (("[M+H]+", 1.0),), 6.0))
    scans = simulate_run(compounds, duration_min=10.0, scan_interval_s=scan_interval_s, noise_peaks=noise_peaks, top_n=3, seed=seed)
    return scans, windows, delay


def lcms_to_plate(run, table, delay, out):
    from nmrcheck.plate import read_manifest
    from nmrcheck.plate.lcms import analyse_run, manifest_rows, write_manifest

    t0 = time.perf_counter()
    lcms = analyse_run(run, table, collector_delay_min=delay)
    manifest = read_manifest(write_manifest(out, manifest_rows(lcms)))
    return time.perf_counter() - t0, lcms, manifest


def peer_pyteomics(path):
    from pyteomics import mzml

    with mzml.MzML(str(path), use_index=False, read_schema=False, decode_binary=True) as reader:
        for spec in reader:
            spec["m/z array"], spec["intensity array"], spec["scanList"]["scan"][0]["scan start time"]


def peer_pymzml(path):
    import logging
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ImportWarning)
        import pymzml.run
    logging.getLogger("pymzml").setLevel(logging.ERROR)
    for spec in pymzml.run.Reader(str(path)):
        spec.mz, spec.i, spec.scan_time


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--scan-interval", type=float, default=0.2, help="survey scan interval, s")
    ap.add_argument("--noise-peaks", type=int, default=100, help="chemical-noise centroids per survey scan")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()

    from nmrcheck.io.mzml import read_mzml, write_mzml
    from nmrcheck.io.timetable import write_timetable
    from nmrcheck.ms.features import plate_features

    root = Path(tempfile.mkdtemp(prefix="nmrcheck-lcms-"))
    scans, windows, delay = scenario(args.scan_interval, args.noise_peaks)
    run = write_mzml(root / "run.mzML", scans)
    table = write_timetable(root / "timetable.csv", windows)
    n_ms2 = sum(s.ms_level == 2 for s in scans)
    print(f"run: 10 min, {len(scans)} spectra ({n_ms2} MS/MS), {sum(s.mz.size for s in scans)} peaks, {run.stat().st_size / 1e6:.1f} MB; 96 wells")

    best = {"nmrcheck LC-MS to plate": float("inf"), "pyteomics read only": float("inf"), "pymzml read only": float("inf")}
    for _ in range(args.repeat):
        # Interleaved so that load on the shared machine hits all three alike.
        t, lcms, manifest = lcms_to_plate(run, table, delay, root / "manifest.csv")
        best["nmrcheck LC-MS to plate"] = min(best["nmrcheck LC-MS to plate"], t)
        for name, fn in (("pyteomics read only", peer_pyteomics), ("pymzml read only", peer_pymzml)):
            t0 = time.perf_counter()
            fn(run)
            best[name] = min(best[name], time.perf_counter() - t0)
    t0 = time.perf_counter()
    parsed = read_mzml(run)
    t_read = time.perf_counter() - t0
    from nmrcheck.io.timetable import read_timetable

    tt = read_timetable(table)
    t0 = time.perf_counter()
    plate_features(parsed, tt, collector_delay_min=delay)
    t_feat = time.perf_counter() - t0
    for name, t in best.items():
        print(f"{name:>26}: {t:.2f} s (best of {args.repeat})")
    print(f"{'of which read_mzml':>26}: {t_read:.2f} s; features of 96 wells: {t_feat:.2f} s ({1000 * t_feat / 96:.1f} ms per well)")
    found = sum(1 for m in lcms.wells.values() if m.features)
    planted = {w.well for k, w in enumerate(windows) if k % 8 == 0}
    mixtures = {w for w, m in lcms.wells.items() if len(m.major_features) > 1}
    print(f"wells with features: {found}/96; several major features: {len(mixtures & planted)} of the 12 planted mixtures, "
          f"{len(mixtures - planted)} other wells (a background compound or a neighbour's tail above 10 %); MS/MS groups: {len(lcms.groups)}")
    print(f"ratio nmrcheck LC-MS to plate / pyteomics read only: {best['nmrcheck LC-MS to plate'] / best['pyteomics read only']:.2f}")
    print(f"ratio nmrcheck LC-MS to plate / pymzml read only: {best['nmrcheck LC-MS to plate'] / best['pymzml read only']:.2f}")


if __name__ == "__main__":
    main()
