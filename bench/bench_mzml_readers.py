"""Benchmark: reading a generated 10-minute LC-MS run (mzML) with pyteomics and with pymzml.

Both readers decode every spectrum's m/z and intensity arrays, its retention time, MS level
and precursor; the faster one is what ``nmrcheck.io.mzml`` uses. Printed as times and a ratio
measured in the same run.

Chosen: pymzml. On the shared 2-core machine its time was 0.28 to 0.67 of pyteomics' over
several runs of this script (1,500 to 3,300 spectra); both are pure-Python XML readers with
NumPy decoding, pymzml's lighter per-spectrum bookkeeping is what tells.

    python bench/bench_mzml_readers.py [--compounds 96] [--scan-interval 0.5] [--repeat 3]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np


def read_pyteomics(path):
    from pyteomics import mzml

    out = []
    with mzml.MzML(str(path), use_index=False, read_schema=False, decode_binary=True) as reader:
        for spec in reader:
            rt = float(spec["scanList"]["scan"][0]["scan start time"])
            prec = spec.get("precursorList")
            pmz = float(prec["precursor"][0]["selectedIonList"]["selectedIon"][0]["selected ion m/z"]) if prec else None
            out.append((rt, int(spec["ms level"]), pmz, np.asarray(spec["m/z array"]), np.asarray(spec["intensity array"])))
    return out


def read_pymzml(path):
    import logging
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ImportWarning)
        import pymzml.run
    logging.getLogger("pymzml").setLevel(logging.ERROR)

    out = []
    run = pymzml.run.Reader(str(path), build_index_from_scratch=False)
    for spec in run:
        rt = float(spec.scan_time_in_minutes())
        pmz = spec.selected_precursors[0]["mz"] if spec.ms_level == 2 and spec.selected_precursors else None
        out.append((rt, int(spec.ms_level), pmz, np.asarray(spec.mz), np.asarray(spec.i)))
    return out


def generated_run(n_compounds: int, scan_interval_s: float, seed: int = 1):
    from nmrcheck.ms.simulate import SimulatedCompound, simulate_run

    rng = np.random.default_rng(seed)
    compounds = []
    for i in range(n_compounds):
        c, h, o = int(rng.integers(8, 40)), 0, int(rng.integers(1, 12))
        h = 2 * c - int(rng.integers(0, 12)) // 2 * 2
        compounds.append(SimulatedCompound(f"c{i}", f"C{c}H{h}O{o}", float(rng.uniform(0.5, 9.5)), float(10 ** rng.uniform(4, 6.5)),
                                           (("[M+H]+", 1.0), ("[M+Na]+", 0.4)), fragments=(("C2H3O", 50.0),)))
    return simulate_run(compounds, duration_min=10.0, scan_interval_s=scan_interval_s, seed=seed)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--compounds", type=int, default=96)
    ap.add_argument("--scan-interval", type=float, default=0.5, help="survey scan interval, s")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()

    from nmrcheck.io.mzml import read_mzml, write_mzml

    scans = generated_run(args.compounds, args.scan_interval)
    path = Path(tempfile.mkdtemp(prefix="nmrcheck-mzml-")) / "run.mzML"
    write_mzml(path, scans)
    peaks = sum(s.mz.size for s in scans)
    print(f"run: {len(scans)} spectra, {peaks} peaks, {path.stat().st_size / 1e6:.1f} MB ({path})")
    times = {}
    for name, fn in (("pyteomics", read_pyteomics), ("pymzml", read_pymzml), ("nmrcheck.io.read_mzml", read_mzml)):
        best = float("inf")
        for _ in range(args.repeat):
            t0 = time.perf_counter()
            fn(path)
            best = min(best, time.perf_counter() - t0)
        times[name] = best
        print(f"{name:>22}: {best:.3f} s (best of {args.repeat})")
    print(f"pymzml / pyteomics time ratio: {times['pymzml'] / times['pyteomics']:.2f} (faster: {min(('pyteomics', 'pymzml'), key=times.get)})")
    print(f"read_mzml (pymzml + records) / pymzml: {times['nmrcheck.io.read_mzml'] / times['pymzml']:.2f}")


if __name__ == "__main__":
    main()
