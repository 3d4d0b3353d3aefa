"""Known-compound library benchmark: indexing and look-up times at 10k, 100k and 500k entries.

Run: ``python bench/bench_library.py [--sizes 10000 100000 500000] [--structures 10000]``. Prints

1. per library size (built in code: random CHNOS formulas with invented InChIKey blocks and
   taxa, as open natural-product exports ship formula and InChIKey columns): the time to
   index it into SQLite, and the mean time of a well's look-up ([M+H]+, 3 ppm, genus and
   family given) against the peer in the same run, a plain linear numpy scan of every
   mass in memory (which must find the same entries);
2. the structure path: a library of SMILES only (built in code from random fragments), so
   that RDKit parses every structure for its formula and InChIKey, with 1 and 2 worker
   processes; its rate projects the time for 500,000 entries.

Nothing is asserted: timings are for reading, not for tests.
"""

from __future__ import annotations

import argparse
import csv
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from nmrcheck.chem import ion_mz, parse_formula
from nmrcheck.ms.library import KnownCompoundLibrary, index_library

GENERA = [f"Genus{k}" for k in range(400)]
FAMILIES = [f"Family{k}" for k in range(60)]
FRAGMENTS = ["C", "CC", "O", "N", "C(=O)", "c1ccccc1", "C(O)", "CN", "C=C", "S", "C(C)C", "OC"]


def _formula_library(path: Path, n: int, rng) -> np.ndarray:
    """CSV of n entries with formula and InChIKey columns; returns their masses."""
    c = rng.integers(5, 70, n)
    h = np.maximum(2, (c * rng.uniform(0.8, 2.0, n)).astype(int))
    nn = rng.integers(0, 5, n)
    o = rng.integers(0, 20, n)
    s = (rng.random(n) < 0.05).astype(int)
    letters = np.array(list("ABCDEFGHIJKLMNOPQRSTUVWXYZ"))
    keys = ["".join(k) for k in letters[rng.integers(0, 26, (n, 14))]]
    masses = np.empty(n)
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["name", "smiles", "formula", "inchikey", "genus", "family"])
        for i in range(n):
            text = f"C{c[i]}H{h[i]}" + (f"N{nn[i]}" if nn[i] else "") + (f"O{o[i]}" if o[i] else "") + ("S" if s[i] else "")
            masses[i] = parse_formula(text).monoisotopic_mass
            w.writerow([f"compound {i}", "C", text, f"{keys[i]}-UHFFFAOYSA-N", GENERA[i % len(GENERA)], FAMILIES[i % len(FAMILIES)]])
    return masses


def _smiles_library(path: Path, n: int, rng) -> None:
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["name", "smiles", "genus", "family"])
        for i in range(n):
            smiles = "".join(rng.choice(FRAGMENTS, size=int(rng.integers(3, 14))))
            w.writerow([f"compound {i}", smiles, GENERA[i % len(GENERA)], FAMILIES[i % len(FAMILIES)]])


def _peer_scan(masses: np.ndarray, low: float, high: float) -> np.ndarray:
    return np.nonzero((masses >= low) & (masses <= high))[0]


def sizes(sizes: list[int], lookups: int) -> None:
    print("library index and look-up; entries with formula and InChIKey columns (no structure parsing)")
    print(f"{'entries':>8} {'index s':>8} {'look-up ms':>11} {'matches':>8} | {'peer scan ms':>12} {'peer/look-up':>12}")
    rng = np.random.default_rng(11)
    with tempfile.TemporaryDirectory() as tmp:
        for n in sizes:
            src = Path(tmp) / f"lib{n}.csv"
            masses = _formula_library(src, n, rng)
            info = index_library(src, Path(tmp) / f"lib{n}.sqlite")
            queries = rng.choice(masses, lookups) * (1 + rng.uniform(-2e-6, 2e-6, lookups))
            with KnownCompoundLibrary(info.database) as lib:
                times, found = [], []
                for m in queries:
                    t0 = time.perf_counter()
                    r = lib.lookup([(ion_mz(m, "[M+H]+"), "[M+H]+")], ppm=3, genus="Genus7", family="Family3")
                    times.append(time.perf_counter() - t0)
                    found.append(len(r.matches))
                peer_times = []
                for m, k in zip(queries, found):
                    t0 = time.perf_counter()
                    tol = 3e-6 * ion_mz(m, "[M+H]+")
                    hit = _peer_scan(masses, m - tol, m + tol)
                    peer_times.append(time.perf_counter() - t0)
                    if hit.size < k:
                        print(f"  peer found {hit.size} where the index found {k} at M {m:.5f}")
            look, peer = statistics.fmean(times) * 1e3, statistics.fmean(peer_times) * 1e3
            print(f"{n:>8} {info.seconds:>8.1f} {look:>11.3f} {statistics.fmean(found):>8.1f} | {peer:>12.3f} {peer / look:>12.1f}")


def structures(n: int) -> None:
    print()
    print(f"structure path: {n} entries with SMILES only (RDKit formula and InChIKey for each)")
    rng = np.random.default_rng(12)
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "smiles.csv"
        _smiles_library(src, n, rng)
        for workers in (1, 2):
            info = index_library(src, Path(tmp) / f"s{workers}.sqlite", workers=workers)
            rate = info.entries / info.seconds
            print(f"  workers {workers}: {info.seconds:.1f} s for {info.entries} entries ({info.skipped} unreadable): "
                  f"{1e6 / rate:.0f} us per entry, 500,000 entries in about {500_000 / rate:.0f} s")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[10_000, 100_000, 500_000])
    parser.add_argument("--lookups", type=int, default=500)
    parser.add_argument("--structures", type=int, default=10_000, help="entries of the SMILES-only library (0: skip)")
    args = parser.parse_args(argv)
    sizes(args.sizes, args.lookups)
    if args.structures:
        structures(args.structures)
    return 0


if __name__ == "__main__":
    sys.exit(main())
