"""Benchmark: a 96-well plate of 64k-point synthetic FIDs screened with 1 and 2 workers, against a naive nmrglue pipeline.

The peer is what a user would write with nmrglue alone: read the Bruker folder, remove the
digital filter, Fourier transform, and phase with nmrglue's ACME autophase (no baseline,
integration, formulas or checks). Printed as ratios measured in the same run.

    python bench/bench_plate.py [--points 65536] [--peer-wells 96] [--out DIR]
"""

from __future__ import annotations

import argparse
import tempfile
import time
import warnings
from pathlib import Path


def plate_wells():
    from nmrcheck.demo import COMPOUNDS, DemoWell

    names = list(COMPOUNDS)
    wells = []
    for i, well in enumerate(f"{r}{c}" for r in "ABCDEFGH" for c in range(1, 13)):
        name = names[i % len(names)]
        wells.append(DemoWell(well, name, name, [0.3, 0.8, 1.5, 3.0][i % 4], tms=i % 5 == 0))
    return tuple(wells)


def peer(directories):
    """Naive nmrglue pipeline per well: read, digital filter, FFT, ACME autophase."""
    import nmrglue as ng

    for d in directories:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            dic, data = ng.bruker.read(str(d), read_pulseprogram=False)
            data = ng.bruker.remove_digital_filter(dic, data)
            spec = ng.proc_base.fft(data)
            ng.proc_autophase.autops(spec, "acme", disp=False)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=65536)
    ap.add_argument("--peer-wells", type=int, default=96, help="wells the peer processes (its time is scaled to 96)")
    ap.add_argument("--out", default=None)
    args = ap.parse_args()

    from nmrcheck.demo import build_demo_plate
    from nmrcheck.plate import read_manifest, run_plate

    root = Path(args.out or tempfile.mkdtemp(prefix="nmrcheck-bench-"))
    t0 = time.perf_counter()
    manifest_path = build_demo_plate(root, points=args.points, wells=plate_wells())
    print(f"plate: 96 wells x {args.points} points written in {time.perf_counter() - t0:.1f} s ({root})")
    manifest = read_manifest(manifest_path)

    times = {}
    for workers in (1, 2):
        t = time.perf_counter()
        summary = run_plate(manifest, root / f"results-{workers}", workers=workers, redo=True)
        times[workers] = time.perf_counter() - t
        print(f"nmrcheck, {workers} worker(s): {times[workers]:.1f} s for {summary.screened} wells ({summary.verdicts})")

    from nmrcheck.plate.phase_survey import survey_shared_phase
    from nmrcheck.processing import ProcessingOptions

    t = time.perf_counter()
    shared = survey_shared_phase(manifest.wells, manifest.directory, ProcessingOptions())
    survey_s = time.perf_counter() - t
    found = "; ".join(s.describe() for s in shared) or "no shared value"
    print(f"phase survey (part of each run above): {survey_s:.1f} s, {survey_s / times[2]:.0%} of the 2-worker run ({found})")

    dirs = [root / "plate" / "fids" / w.well / "1" for w in manifest.wells][: args.peer_wells]
    t = time.perf_counter()
    peer(dirs)
    peer_s = (time.perf_counter() - t) * 96 / len(dirs)
    scaled = "" if len(dirs) == 96 else f" (measured on {len(dirs)} wells, scaled to 96)"
    print(f"peer (nmrglue read + digital filter + FFT + ACME autophase, 1 process): {peer_s:.1f} s{scaled}")
    print(f"ratio peer / nmrcheck 1 worker:  {peer_s / times[1]:.1f}x")
    print(f"ratio peer / nmrcheck 2 workers: {peer_s / times[2]:.1f}x")
    print(f"speed-up 2 workers vs 1: {times[1] / times[2]:.2f}x; goal: whole plate < 30 s on 2 cores ({'met' if times[2] < 30 else 'not met'})")


if __name__ == "__main__":
    main()
