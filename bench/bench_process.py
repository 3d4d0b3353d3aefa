"""Time per spectrum of each processing stage, against a plain nmrglue pipeline in the same run.

Usage: python bench/bench_process.py [--refdata DIR] [--repeat N]

Stages timed for nmrcheck: read, transform (digital filter, apodization, zero-fill, FFT),
phase, baseline + reference + integrate + count. The peer is what a user would write with
nmrglue alone: read, remove the digital filter, zero-fill, FFT, ACME autophase. Printed as
seconds per spectrum and as peer / nmrcheck ratios (higher is faster for nmrcheck).
"""

from __future__ import annotations

import argparse
import os
import time
import warnings
from pathlib import Path

import numpy as np

warnings.filterwarnings("ignore")


def _nmrcheck_stages(path_or_fid):
    from nmrcheck.io import read_fid
    from nmrcheck.processing.baseline import correct_baseline
    from nmrcheck.processing.count import count_protons
    from nmrcheck.processing.noise import noise_level
    from nmrcheck.processing.phase import auto_phase
    from nmrcheck.processing.reference import reference_axis
    from nmrcheck.processing.regions import find_regions
    from nmrcheck.processing.transform import fourier_transform

    t = [time.perf_counter()]
    fid = read_fid(path_or_fid) if isinstance(path_or_fid, (str, Path)) else path_or_fid
    t.append(time.perf_counter())
    spec = fourier_transform(fid, lb_hz=0.3)
    t.append(time.perf_counter())
    spec, _ = auto_phase(spec)
    t.append(time.perf_counter())
    spec = correct_baseline(spec)
    spec, _ = reference_axis(spec)
    regions = find_regions(spec, noise=noise_level(spec.data.real))
    if any(r.counted for r in regions):
        count_protons(regions)
    t.append(time.perf_counter())
    return np.diff(t)


def _peer(path_or_fid):
    import nmrglue as ng

    t0 = time.perf_counter()
    if isinstance(path_or_fid, (str, Path)):
        p = Path(path_or_fid)
        if p.is_dir():
            dic, data = ng.bruker.read(str(p))
            data = ng.bruker.remove_digital_filter(dic, data)
        else:
            dic, raw = ng.jcampdx.read(str(p))
            data = np.asarray(raw[0]) + 1j * np.asarray(raw[1])
            decim = float(dic["$DECIM"][0])
            dspfvs = float(dic["$DSPFVS"][0])
            grpdly = float(dic.get("$GRPDLY", ["-1"])[0])
            data = ng.bruker.rm_dig_filter(data, decim, dspfvs, grpdly if grpdly > 0 else 0)
    else:
        data = path_or_fid.data
    data = ng.proc_base.zf_size(data, 2 * len(data))
    data = ng.proc_base.fft(data)
    ng.proc_autophase.autops(data, "acme", disp=False)
    return time.perf_counter() - t0


def _synthetic(points: int):
    from nmrcheck.synth import Line, simulate_fid

    lines = [Line(7.8, 1, 1, (8,)), Line(6.9, 1, 1, (8,)), Line(5.4, 1, 1.2, (7, 7)), Line(3.85, 3, 1),
             Line(2.6, 2, 1, (7.2, 7.2)), Line(1.2, 6, 1, (6.8,)), Line(7.26, 0.05, 0.8)]
    return simulate_fid(lines, points=points, noise=0.0005, p0_deg=40, p1_deg=15, group_delay_points=67.98)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--refdata", default=os.environ.get("NMRCHECK_REFDATA", str(Path(__file__).resolve().parents[2] / "shared" / "refdata")))
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    cases: list[tuple[str, object]] = [("synthetic 64k", _synthetic(65536)), ("synthetic 16k", _synthetic(16384))]
    ref = Path(args.refdata)
    if ref.is_dir():
        cases += [(d.name, d / "1h.fid.dx") for d in sorted((ref / "jcamp-fid").iterdir()) if (d / "1h.fid.dx").exists()]
        cases += [(d.name, d) for d in sorted((ref / "bruker-raw").iterdir()) if (d / "fid").exists()]
    # Warm up: first imports (pybaselines, nmrglue's autophase) are not per-spectrum costs.
    _nmrcheck_stages(_synthetic(4096))
    _peer(_synthetic(4096))
    print(f"{'recording':24s} {'read':>7s} {'ft':>7s} {'phase':>7s} {'rest':>7s} {'total':>7s} {'peer':>7s} {'peer/ours':>9s}")
    totals, peers = [], []
    for name, src in cases:
        ours = np.min([_nmrcheck_stages(src) for _ in range(args.repeat)], axis=0)
        peer = min(_peer(src) for _ in range(max(1, args.repeat // 2)))
        totals.append(ours.sum())
        peers.append(peer)
        print(f"{name:24s} " + " ".join(f"{x:7.3f}" for x in ours) + f" {ours.sum():7.3f} {peer:7.3f} {peer / ours.sum():9.1f}")
    print(f"\nmedian seconds per spectrum: nmrcheck {np.median(totals):.3f}, peer {np.median(peers):.3f}, "
          f"ratio {np.median(np.array(peers) / np.array(totals)):.1f}x")


if __name__ == "__main__":
    main()
