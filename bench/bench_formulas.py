"""Formula engine benchmark: time per query, and ranking of known natural products.

Run: ``python bench/bench_formulas.py [--seeds N]``. Prints

1. time per query at m/z 300, 700, 1000, 1500 ([M+H]+, elements CHNOPS + Cl + Br with the
   golden rules' element limits, three isotope peaks of a plausible natural product of that
   mass) at 3 and 10 ppm: the first query of a mass range (which builds the sorted
   composition tables, or reads them from the disk cache), the mean of later ones, and the
   mean with a proton bound (the 1H spectrum shows 7.5 H per 100 u, +-1); and, as the peer
   in the same run, the textbook nested-loop enumeration (H solved from the mass) against
   the engine without rules, which must find the same number of formulas;
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
from nmrcheck.chem.elements import element

ROOT = Path(__file__).resolve().parents[1]
ELEMENTS = "C H N O P S Cl Br"


def _load_products():
    spec = importlib.util.spec_from_file_location("natural_products", ROOT / "tests" / "chem" / "natural_products.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _peer_nested_loops(low: float, high: float, ranges) -> tuple[float, int]:
    """The textbook enumeration: nested loops over every element but C, H and N, numpy over
    C and N, hydrogen solved from the mass window. Returns (seconds, compositions found)."""
    symbols = [s for s in ranges if s not in ("C", "H", "N")]
    mass = {s: element(s).monoisotopic_mass for s in ranges}
    c = np.arange(ranges["C"][0], ranges["C"][1] + 1)[:, None]
    n = np.arange(ranges.get("N", (0, 0))[0], ranges.get("N", (0, 0))[1] + 1)[None, :]
    cn_mass = c * mass["C"] + n * mass.get("N", 0.0)
    h_lo, h_hi = ranges["H"]
    start = time.perf_counter()
    found = 0
    for combo in itertools.product(*(range(ranges[s][0], ranges[s][1] + 1) for s in symbols)):
        rest = sum(k * mass[s] for k, s in zip(combo, symbols))
        if rest > high:
            continue
        left_lo = low - rest - cn_mass
        left_hi = high - rest - cn_mass
        h_min = np.maximum(np.ceil(left_lo / mass["H"]), h_lo)
        h_max = np.minimum(np.floor(left_hi / mass["H"]), h_hi)
        found += int(np.clip(h_max - h_min + 1, 0, None).sum())
    return time.perf_counter() - start, found


def _query(mz, ppm, elements=ELEMENTS, **kwargs):
    t0 = time.perf_counter()
    search = formula_search([(mz, "[M+H]+")], ppm=ppm, elements=elements, **kwargs)
    return time.perf_counter() - t0, search


def _plausible_isotopes(mz: float) -> list[float]:
    """M+0..M+2 (relative) of C_n H_1.6n O_0.35n at about ``mz``: what a natural product there shows."""
    from nmrcheck.chem.isotopes import isotope_pattern

    n = max(1, round(mz / 19.2))
    formula = parse_formula(f"C{n}H{round(1.6 * n)}O{max(1, round(0.35 * n))}")
    return [round(x, 2) for x in isotope_pattern(formula, ion="[M+H]+").relative()[:3]]


def timings(repeats: int = 20, peer_up_to: float = 1000.0) -> None:
    print("time per query, [M+H]+, elements", ELEMENTS, "within the golden rules' element limits")
    print("  engine: rules 'common', 3 isotope peaks; first query of a mass range builds (or reads from the disk cache)")
    print("  the tables; 'H-bound': visible protons 7.5 per 100 u +-1 given as h_range")
    print("  peer:   nested loops (numpy over C and N, H solved), no rules; compared with the engine with rules 'none'"
          " over the same element ranges")
    print(
        f"{'m/z':>6} {'ppm':>4} {'first ms':>9} {'mean ms':>8} {'H-bound':>8} {'pass':>7} {'w/ H':>6} | {'none ms':>8} {'found':>8} "
        f"{'peer ms':>9} {'found':>8} {'peer/none':>9}"
    )
    for mz in (300.0, 700.0, 1000.0, 1500.0):
        iso = _plausible_isotopes(mz)
        visible = 0.075 * mz
        for ppm in (3.0, 10.0):
            base = mz + 0.1234
            first, search = _query(base, ppm, isotopes=iso)
            times = [_query(base + 0.0037 * (k + 1), ppm, isotopes=iso)[0] for k in range(repeats)]
            mean = statistics.fmean(times)
            bounded = [_query(base + 0.0037 * (k + 1), ppm, isotopes=iso, h_range=(visible - 1, visible + 1)) for k in range(repeats)]
            h_mean = statistics.fmean(t for t, _ in bounded)
            same = dict(search.elements)  # the golden rules' limits, so that both search the same ranges
            _query(base, ppm, same, rules="none", prior=None)
            none_times, none_search = zip(*(_query(base, ppm, same, rules="none", prior=None) for _ in range(3)))
            none = min(none_times)
            row = (f"{mz:>6.0f} {ppm:>4.0f} {first * 1e3:>9.1f} {mean * 1e3:>8.2f} {h_mean * 1e3:>8.2f} {search.n_passed:>7} "
                   f"{bounded[0][1].n_passed:>6} | {none * 1e3:>8.1f} {none_search[0].n_in_window:>8}")
            if mz <= peer_up_to:
                low, high = none_search[0].mass_window
                peer, found = _peer_nested_loops(low, high, dict(none_search[0].elements))
                row += f" {peer * 1e3:>9.0f} {found:>8} {peer / none:>9.1f}"
            else:
                row += f" {'(skipped)':>9}"
            print(row)
    print("found: the two enumerations must agree (same ranges, same window, no rules)")


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
    print(f"natural products ({len(products.NATURAL_PRODUCTS)} + {len(products.CHARGED_NATURAL_PRODUCTS)} cations as [M]+), 3 ppm, "
          f"isotopes, default elements (Cl, Br added when the envelope demands), {seeds} noise draws")
    ranks: dict[tuple[str, ...], list[int]] = {s: [] for s in (*ION_SETS, ("[M]+",))}
    misses = []
    cases = [(p, ION_SETS) for p in products.NATURAL_PRODUCTS] + [(p, (("[M]+",),)) for p in products.CHARGED_NATURAL_PRODUCTS]
    for seed in range(seeds):
        rng = np.random.default_rng(seed)
        for (name, _cls, smiles, _f), ion_sets in cases:
            formula = parse_formula(CalcMolFormula(Chem.MolFromSmiles(smiles)).rstrip("+-"))
            for ions in ion_sets:
                features, intensities = products.simulated_feature(formula, ions, rng)
                # Default elements: CHNOPS, widened by Cl and Br where the envelope demands them.
                search = formula_search(features, ppm=3.0, isotopes=intensities, max_candidates=50)
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
    parser.add_argument("--peer-up-to", type=float, default=1000.0, help="largest m/z for the (slow) peer loop")
    args = parser.parse_args(argv)
    timings(peer_up_to=args.peer_up_to)
    if not args.skip_ranking:
        ranking(args.seeds)
    return 0


if __name__ == "__main__":
    sys.exit(main())
