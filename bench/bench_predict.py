"""Shift predictors side by side on assigned 1H shifts, and the per-class tolerances the assignment check uses.

Run: ``NMRCHECK_REFDATA=/path/to/refdata python bench/bench_predict.py [--tolerances]``.

For every predictor installed (the additive increments always; the learned model with
``pip install 'nmrcheck[learned-shifts]'``) it prints, over the carbon-bound H assigned in the
NMReDATA records ``jcamp-fid/*/assignments.nmredata.sdf``, the mean absolute error per shift class,
the 95th percentile of the absolute error per class, the same percentile left-one-compound-out
(the tolerance a compound would get had it not been in the calibration), the worst error and
the time per molecule against the increments as peer.

With ``--tolerances`` it prints the CSV rows of ``nmrcheck/data/assignment_tolerances.csv``:
per predictor and class the 95th percentile of |error| (classes with fewer than 6 H take the
pooled value of all classes), never below 0.10 ppm.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from collections import defaultdict
from pathlib import Path

import numpy as np

from nmrcheck.io.nmredata import read_nmredata
from nmrcheck.predict.predictors import available_predictors

#: Classes whose tolerance is calibrated separately; the rest share the pooled value.
MIN_PER_CLASS = 6
FLOOR_PPM = 0.10


def paired_errors(record, predictor, solvent):
    """(class, signed error predicted - observed) for every assigned carbon-bound H of an NMReDATA record."""
    preds = defaultdict(list)
    for p in predictor.predict(record.mol, solvent):
        preds[p.atom_index].append(p)
    observed = defaultdict(list)
    for a in record.hydrogen_assignments:
        for i in a.atoms:
            observed[i].append(a.shift_ppm)
    out = []
    for i, values in observed.items():
        if record.mol.GetAtomWithIdx(i).GetAtomicNum() != 6 or not preds[i]:
            continue
        sites = preds[i]
        if len(sites) == len(values) > 1:
            pairs = zip(sorted(p.ppm for p in sites), sorted(values))
        else:
            mean = sum(p.ppm * p.n_h for p in sites) / sum(p.n_h for p in sites)
            pairs = ((mean, v) for v in values)
        out += [(sites[0].shift_class, pr - ob) for pr, ob in pairs]
    return out


def _solvent_of(folder: Path) -> str | None:
    """The FID header's solvent (the NMReDATA tag can disagree; the header is trusted)."""
    from nmrcheck.io.readers import read_fid
    from nmrcheck.processing.solvents import normalise_solvent

    try:
        return normalise_solvent(read_fid(folder / "1h.fid.dx").acquisition.solvent)
    except Exception:  # a reader problem only loses the solvent hint
        return None


def p95(values) -> float:
    return float(np.percentile(np.abs(values), 95)) if len(values) else float("nan")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--tolerances", action="store_true", help="print the CSV rows of the calibrated tolerances")
    args = ap.parse_args()
    root = os.environ.get("NMRCHECK_REFDATA")
    if not root:
        print("set NMRCHECK_REFDATA to the shared reference data folder", file=sys.stderr)
        return 2
    files = sorted((Path(root) / "jcamp-fid").glob("*/assignments.nmredata.sdf"))
    records = [(f.parent.name, read_nmredata(f), _solvent_of(f.parent)) for f in files]
    rows = []
    peer_time = None
    for predictor in available_predictors():
        t0 = time.perf_counter()
        per = {name: paired_errors(rec, predictor, solvent) for name, rec, solvent in records}
        dt = (time.perf_counter() - t0) / max(1, len(records))
        peer_time = peer_time or dt
        by_class = defaultdict(list)
        for errs in per.values():
            for cls, e in errs:
                by_class[cls].append(e)
        pooled = [e for v in by_class.values() for e in v]
        print(f"\n{predictor.name}: {len(pooled)} assigned C-H in {len(records)} records; {dt * 1e3:.1f} ms per molecule ({dt / peer_time:.1f}x the increments)")
        print(f"{'class':28s} {'n':>4s} {'MAE':>7s} {'p95':>7s} {'p95 LOO':>8s} {'worst':>7s}")
        for cls in sorted(by_class) + ["all"]:
            v = pooled if cls == "all" else by_class[cls]
            loo = []
            for name in per:
                rest = [e for n2, errs in per.items() if n2 != name for c, e in errs if cls == "all" or c == cls]
                loo.append(p95(rest))
            print(f"{cls:28s} {len(v):4d} {statistics.mean(map(abs, v)):7.3f} {p95(v):7.3f} {min(loo):5.2f}-{max(loo):4.2f} {max(map(abs, v)):7.2f}")
            if cls != "all":
                tol = p95(v) if len(v) >= MIN_PER_CLASS else p95(pooled)
                how = "95th percentile of |error|" if len(v) >= MIN_PER_CLASS else f"pooled 95th percentile (only {len(v)} H of this class)"
                rows.append((predictor.name, cls, max(FLOOR_PPM, tol), len(v), how))
        worst = max(((n, c, e) for n, errs in per.items() for c, e in errs), key=lambda t: abs(t[2]))
        print(f"worst: {worst[0]} {worst[1]} {worst[2]:+.2f} ppm")
    if args.tolerances:
        print("\npredictor,shift_class,tolerance_ppm,n,source")
        for name, cls, tol, n, how in rows:
            print(f'{name},{cls},{tol:.2f},{n},"{how} over the assigned C-H of the NMReDATA records of cheminfo/nmr-dataset1 (bench/bench_predict.py --tolerances)"')
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
