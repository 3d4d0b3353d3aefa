"""Processing at microgram signal: every shared recording degraded to SNR 300, 100 and 30.

Usage: python bench/bench_microgram.py [--refdata DIR] [--levels 300,100,30] [--seeds 0,1,2]
                                        [--cache DIR] [--no-acme] [--only NAME,...] [--details]

Noisy copies come from the shared tool tools/add_noise.py (calibrated white noise added to the
real FID; a clean twin written the same way). Per copy:

* phase: the corrections nmrcheck chose on the noisy copy, applied to the clean twin processed
  on the instrument's grid (its SI and LB), scored with tools/phase_vs_instrument.py (largest
  error at the instrument spectrum's 12 strongest peaks) -- the procedure the tool's header
  prescribes. nmrglue's ACME (autops 'acme') is scored the same way on the same noisy spectra.
* count: the structure.mol H count (RDKit) inside the reported range [low, high] (carbon-bound H
  up to all H, since OH/NH may be broad or missing); an 'ambiguous' count is in range only when
  both offered totals bracket the truth.
* ambiguous: how many of those counts offer n or 2n protons instead of one figure;
* reference: the noisy copy's axis within 0.01 ppm of the axis nmrcheck sets on the clean twin,
  or honestly unreferenced (kind 'none').
* time: nmrcheck's process() per noisy spectrum.
* plate p1: the same copies phased as wells of a plate. A recording's copies at every level stand for
  the wells of one plate recorded with one parameter set; the plate's survey
  (nmrcheck.processing.shared_phase) finds the first-order phase its strong copies agree on, and each
  copy is processed again with it (copies of recordings without a shared value keep their own phase).
  Phase within 3 and 5 deg, and count in range, as above.

Noisy copies are cached (default: a folder in the system temp directory), so reruns are fast.
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import os
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np

warnings.filterwarnings("ignore")


def _tool_module(refdata: Path, name: str):
    path = refdata.parent / "tools" / f"{name}.py"
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _recordings(refdata: Path, only: set[str] | None):
    out = []
    for d in sorted((refdata / "jcamp-fid").iterdir()):
        if (d / "1h.fid.dx").exists():
            out.append(d)
    for d in sorted((refdata / "bruker-raw").iterdir()):
        if (d / "fid").exists():
            out.append(d)
    return [d for d in out if only is None or d.name in only]


def _noisy_copy(refdata: Path, rec: Path, snr: float, seed: int, cache: Path) -> Path | None:
    out = cache / f"{rec.name}-snr{snr:g}-seed{seed}"
    if not (out / "noise.json").exists():
        if out.exists():
            import shutil

            shutil.rmtree(out)
        res = subprocess.run([sys.executable, str(refdata.parent / "tools" / "add_noise.py"), str(rec), "--snr", f"{snr:g}",
                              "--seed", str(seed), "--out", str(out)], capture_output=True, text=True)
        if res.returncode != 0:
            return None
    return out


def _judging_rules():
    """The structure's H count and the count rule the real-recording tests judge by (tests/recordings.py)."""
    path = Path(__file__).resolve().parents[1] / "tests" / "recordings.py"
    spec = importlib.util.spec_from_file_location("recordings", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


_RULES = _judging_rules()
#: (carbon-bound H, exchangeable H) of a molfile (RDKit).
_structure_h = _RULES.structure_h
#: The issue's rule: range overlaps [carbon-bound H, all H]; ambiguous needs its totals to bracket it.
count_in_range = _RULES.count_holds


def _acme(spec_data: np.ndarray) -> tuple[float, float]:
    import nmrglue as ng

    _, (a0, a1) = ng.proc_autophase.autops(spec_data, "acme", disp=False, return_phases=True)
    # nmrglue rotates by exp(+i(p0 + p1 x)); nmrcheck's apply_phase by exp(-i(p0 + p1 x)).
    return -float(a0), -float(a1)


def _references(tool, rec: Path):
    """(the instrument's spectrum with its SI and LB, or None; the structure's (C-H, exchangeable) H or None)."""
    try:
        instrument = tool.instrument_spectrum(str(rec))
    except SystemExit:
        instrument = None
    mol = rec / "structure.mol"
    return instrument, (_structure_h(mol) if mol.exists() else None)


def _phase_error(tool, copy: Path, instrument, p0_deg: float, p1_deg: float, pivot_ppm: float | None = None) -> float:
    """Largest phase error at the instrument spectrum's strongest peaks when (p0, p1) is applied to the clean twin."""
    from nmrcheck.io import read_fid
    from nmrcheck.processing.phase import apply_phase
    from nmrcheck.processing.transform import fourier_transform

    spectrum, si, lb = instrument
    clean = fourier_transform(read_fid(copy / "clean"), lb_hz=lb, size=si)
    ours = apply_phase(clean, p0_deg=p0_deg, p1_deg=p1_deg, pivot_ppm=pivot_ppm)
    return float(np.abs(tool.phase_errors(ours.data, spectrum, ppm=ours.ppm)[1]).max())


def _plate_pass(rows, refdata: Path, levels, seeds, cache: Path, tool, only) -> None:
    """Each recording's copies as one plate: survey the shared first-order phase, process again with it."""
    from nmrcheck.io import read_fid
    from nmrcheck.processing import process
    from nmrcheck.processing.pipeline import phase_reading
    from nmrcheck.processing.shared_phase import STRONG_THIRD_GROUP_SNR, shared_first_order

    for rec in _recordings(refdata, only):
        mine = [r for r in rows if r["recording"] == rec.name and "skipped" not in r]
        paths = {(r["snr"], r["seed"]): cache / f"{rec.name}-snr{r['snr']:g}-seed{r['seed']}" for r in mine}
        readings = [phase_reading(read_fid(p / "noisy"), skip_below_snr=STRONG_THIRD_GROUP_SNR) for p in paths.values()]
        shared = next(iter(shared_first_order(readings).values()), None)
        instrument, truth = _references(tool, rec)
        for r in mine:
            if shared is None:
                for key in ("phase_err", "count_ok"):
                    if key in r:
                        r["plate_" + key] = r[key]
                continue
            copy = paths[(r["snr"], r["seed"])]
            p = process(copy / "noisy", shared_p1=(shared.p1_deg, shared.scale_deg))
            if instrument is not None:
                r["plate_phase_err"] = _phase_error(tool, copy, instrument, p.phase.p0_deg, p.phase.p1_deg, p.phase.pivot_ppm)
            if truth is not None:
                r["plate_count_ok"] = count_in_range(p.count, *truth)


def main() -> None:
    from nmrcheck.io import read_fid
    from nmrcheck.processing import process
    from nmrcheck.processing.transform import fourier_transform

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--refdata", default=os.environ.get("NMRCHECK_REFDATA", str(Path(__file__).resolve().parents[2] / "shared" / "refdata")))
    ap.add_argument("--levels", default="300,100,30")
    ap.add_argument("--seeds", default="0,1,2")
    ap.add_argument("--cache", default=str(Path(tempfile.gettempdir()) / "nmrcheck-microgram-copies"))
    ap.add_argument("--no-acme", action="store_true")
    ap.add_argument("--only", default=None)
    ap.add_argument("--details", action="store_true", help="one line per noisy copy")
    ap.add_argument("--json", default=None, help="write every row to this file")
    args = ap.parse_args()
    refdata = Path(args.refdata)
    if not refdata.is_dir():
        print(f"no shared recordings at {refdata}: set --refdata or NMRCHECK_REFDATA")
        return
    cache = Path(args.cache)
    cache.mkdir(parents=True, exist_ok=True)
    tool = _tool_module(refdata, "phase_vs_instrument")
    levels = [float(x) for x in args.levels.split(",")]
    seeds = [int(x) for x in args.seeds.split(",")]
    only = set(args.only.split(",")) if args.only else None
    rows = []
    clean_axis: dict[str, tuple[float, str]] = {}
    for rec in _recordings(refdata, only):
        instrument, truth = _references(tool, rec)
        for snr in levels:
            for seed in seeds:
                copy = _noisy_copy(refdata, rec, snr, seed, cache)
                if copy is None:
                    rows.append({"recording": rec.name, "snr": snr, "seed": seed, "skipped": "SNR above what add_noise allows"})
                    continue
                if rec.name not in clean_axis:
                    pc = process(copy / "clean")
                    clean_axis[rec.name] = (pc.spectrum.first_ppm, pc.reference.kind)
                t0 = time.perf_counter()
                p = process(copy / "noisy")
                elapsed = time.perf_counter() - t0
                row = {"recording": rec.name, "snr": snr, "seed": seed, "time_s": elapsed,
                       "p0": p.phase.p0_deg, "p1": p.phase.p1_deg, "phase_method": p.phase.method,
                       "reference": p.reference.kind, "reference_name": p.reference.name}
                if instrument is not None:
                    row["phase_err"] = _phase_error(tool, copy, instrument, p.phase.p0_deg, p.phase.p1_deg, p.phase.pivot_ppm)
                    if not args.no_acme:
                        noisy_spec = fourier_transform(read_fid(copy / "noisy"), lb_hz=0.3)
                        a0, a1 = _acme(noisy_spec.data)
                        row["acme_err"] = _phase_error(tool, copy, instrument, a0, a1)
                if truth is not None:
                    row["count_ok"] = count_in_range(p.count, *truth)
                    row["ambiguous"] = bool(getattr(p.count, "ambiguous", False))
                    row["truth"] = f"{truth[0]}+{truth[1]}"
                    if p.count is not None:
                        row["count"] = f"{p.count.total_h:.1f} ({p.count.total_h_low:.1f}-{p.count.total_h_high:.1f})"
                        if getattr(p.count, "ambiguous", False):
                            row["count"] += " ambiguous " + "/".join(f"{t:.0f}" for t in p.count.alternative_totals)
                ref_first, ref_kind = clean_axis[rec.name]
                row["reference_ok"] = p.reference.kind == "none" or abs(p.spectrum.first_ppm - ref_first) <= 0.01
                row["reference_shift"] = p.spectrum.first_ppm - ref_first
                rows.append(row)
                if args.details:
                    print(json.dumps({k: (round(v, 3) if isinstance(v, float) else v) for k, v in row.items()}), flush=True)
    _plate_pass(rows, refdata, levels, seeds, cache, tool, only)
    if args.json:
        Path(args.json).write_text(json.dumps(rows, indent=1))
    print(f"\n{'SNR':>5s} {'phase<=3':>9s} {'<=5':>7s} {'>20':>5s} {'ACME<=3':>9s} {'count ok':>9s} {'ambig.':>7s} {'ref ok':>8s} {'s/spectrum':>10s}"
          f" | {'plate p1 <=3':>12s} {'<=5':>7s} {'count ok':>9s}")
    for snr in levels:
        sel = [r for r in rows if r["snr"] == snr and "skipped" not in r]
        ph = np.array([r["phase_err"] for r in sel if "phase_err" in r])
        ac = np.array([r["acme_err"] for r in sel if "acme_err" in r])
        cnt = [r["count_ok"] for r in sel if "count_ok" in r]
        amb = [r["ambiguous"] for r in sel if "ambiguous" in r]
        ref = [r["reference_ok"] for r in sel]
        tm = np.median([r["time_s"] for r in sel]) if sel else float("nan")
        acme_txt = f"{np.sum(ac <= 3)}/{ac.size}" if ac.size else "-"
        pp = np.array([r["plate_phase_err"] for r in sel if "plate_phase_err" in r])
        pc = [r["plate_count_ok"] for r in sel if "plate_count_ok" in r]
        print(f"{snr:5g} {np.sum(ph <= 3):>5d}/{ph.size:<3d} {np.sum(ph <= 5):>3d}/{ph.size:<3d} {np.sum(ph > 20):>5d} "
              f"{acme_txt:>9s} {sum(cnt):>5d}/{len(cnt):<3d} {sum(amb):>3d}/{len(amb):<3d} {sum(ref):>4d}/{len(ref):<3d} {tm:10.3f}"
              f" | {np.sum(pp <= 3):>8d}/{pp.size:<3d} {np.sum(pp <= 5):>3d}/{pp.size:<3d} {sum(pc):>5d}/{len(pc):<3d}")
    skipped = [r for r in rows if "skipped" in r]
    if skipped:
        print(f"({len(skipped)} copies refused by add_noise: target above two thirds of the clean SNR)")


if __name__ == "__main__":
    main()
