"""Formula engine benchmark: time per query, and ranking of known natural products.

Run: ``python bench/bench_formulas.py [--seeds N]``. Prints

1. time per query at m/z 300, 700, 1000, 1500 ([M+H]+, elements CHNOPS + Cl + Br with the
   golden rules' element limits, isotopes given) at 3 and 10 ppm: the first query of a mass
   range (which builds and caches the sorted composition tables) and the mean of later ones,
   with the ratio of each to the time of one brute-force pass over the same compositions'
   count of C and H alone (the peer: a plain nested loop solving H for every C, N, O, P,
   S, Cl, Br combination would take longer still);
2. rank-1 and top-5 rates of the true formula for the natural products of
   ``tests/chem/natural_products.py`` over several noise draws, per ion set.

Nothing is asserted: timings are for reading, not for tests.
"""

from __future__ import annotations

import argparse
import importlib.util
import itertools
import statistics
import sys
import time
from pathlib import Path

import numpy as np

from nmrcheck.chem import formula_search, parse_formula

ROOT = Path(__file__).resolve().parents[1]
ELEMENTS = "C H N O P S Cl Br"


def _load_products():
    spec = importlib.util.spec_from_file_location("natural_products", ROOT / "tests" / "chem" / "natural_products.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _peer_loop(mass: float, ppm: float, ranges) -> float:
    """Seconds for a pure-Python nested loop over C, N, O (H solved), the textbook method."""
    m = {"C": 12.0, "H": 1.00782503223, "N": 14.00307400443, "O": 15.99491461957}
    tol = mass * ppm * 1e-6
    start = time.perf_counter()
    found = 0
    for c, n, o in itertools.product(range(ranges["C"][1] + 1), range(ranges["N"][1] + 1), range(ranges["O"][1] + 1)):
        rest = mass - c * m["C"] - n * m["N"] - o * m["O"]
        if rest < -tol:
            continue
        h = round(rest / m["H"])
        if 0 <= h <= ranges["H"][1] and abs(rest - h * m["H"]) <= tol:
            found += 1
    return time.perf_counter() - start


def timings(repeats: int = 20) -> None:
    print("time per query, [M+H]+, elements", ELEMENTS, "(golden-rule limits), 3 isotope peaks")
    print(f"{'m/z':>6} {'ppm':>4} {'first ms':>9} {'mean ms':>8} {'in window':>9} {'pass':>6} {'CHNO loop ms':>12} {'ratio':>6}")
    for mz in (300.0, 700.0, 1000.0, 1500.0):
        for ppm in (3.0, 10.0):
            base = mz + 0.1234
            t0 = time.perf_counter()
            search = formula_search([(base, "[M+H]+")], ppm=ppm, elements=ELEMENTS, isotopes=[100, 40, 10])
            first = time.perf_counter() - t0
            times = []
            for k in range(repeats):
                t0 = time.perf_counter()
                formula_search([(base + 0.0037 * (k + 1), "[M+H]+")], ppm=ppm, elements=ELEMENTS, isotopes=[100, 40, 10])
                times.append(time.perf_counter() - t0)
            mean = statistics.fmean(times)
            peer = _peer_loop(base - 1.007276, ppm, dict(search.elements))
            print(
                f"{mz:>6.0f} {ppm:>4.0f} {first * 1e3:>9.1f} {mean * 1e3:>8.2f} {search.n_in_window:>9} "
                f"{search.n_passed:>6} {peer * 1e3:>12.1f} {peer / mean:>6.1f}"
            )
    print("ratio: CHNO-only pure-Python loop time / engine time (engine searches all 8 elements)")


ION_SETS = (
    ("[M+H]+", "[M+Na]+", "[M+NH4]+"),
    ("[M-H]-", "[M+HCOO]-"),
    ("[M+H]+",),
)


def ranking(seeds: int) -> None:
    from rdkit import Chem
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    products = _load_products()
    print()
    print(f"natural products ({len(products.NATURAL_PRODUCTS)}), 3 ppm, isotopes, elements {ELEMENTS}, {seeds} noise draws")
    ranks: dict[tuple[str, ...], list[int]] = {s: [] for s in ION_SETS}
    misses = []
    for seed in range(seeds):
        rng = np.random.default_rng(seed)
        for name, _cls, smiles, _f in products.NATURAL_PRODUCTS:
            formula = parse_formula(CalcMolFormula(Chem.MolFromSmiles(smiles)))
            for ions in ION_SETS:
                features, intensities = products.simulated_feature(formula, ions, rng)
                search = formula_search(features, ppm=3.0, isotopes=intensities, elements=ELEMENTS, max_candidates=50)
                hills = [c.formula.hill for c in search.candidates]
                rank = hills.index(formula.hill) + 1 if formula.hill in hills else 999
                ranks[ions].append(rank)
                if rank > 5:
                    misses.append((seed, name, ions, rank, search.n_passed))
    for ions, values in ranks.items():
        v = np.array(values)
        print(f"  {' '.join(ions):<30} rank-1 {np.mean(v == 1):6.1%}   top-5 {np.mean(v <= 5):6.1%}   (n={v.size})")
    for seed, name, ions, rank, n in misses:
        print(f"  not in top 5: seed {seed} {name} {' '.join(ions)}: rank {rank if rank < 999 else '>50'} of {n}")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=5, help="noise draws for the ranking part")
    parser.add_argument("--skip-ranking", action="store_true")
    args = parser.parse_args(argv)
    timings()
    if not args.skip_ranking:
        ranking(args.seeds)
    return 0


if __name__ == "__main__":
    sys.exit(main())
