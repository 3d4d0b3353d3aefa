"""Known-compound library benchmark: indexing and look-up times at 10k, 100k and 500k entries.

Run: ``python bench/bench_library.py [--sizes 10000 100000 500000] [--structures 20000]``. Prints

1. per library size (built in code: random CHNOS formulas with invented InChIKey blocks and
   taxa, as open natural-product exports ship formula and InChIKey columns): the time to
   index it into SQLite, and the mean time of a well's look-up ([M+H]+, 3 ppm, genus and
   family given) against the peer in the same run, a plain linear numpy scan of every
   mass in memory (which must find the same entries);
2. the structure path: a library of SMILES only (built in code from random fragments to
   natural-product size, about 33 heavy atoms on average, with stereocentres, heteroaromatic
   rings, zwitterions and 1 % unreadable rows), so that RDKit works out every formula and
   InChIKey, with 1 and 2 worker processes (``--workers``); its rate projects the time for 500,000 entries.
   The peer, run on the first ``--peer-entries`` rows in the same run, is the plain loop
   (fully sanitised ``MolFromSmiles``, formula parsed per row, standard ``MolToInchiKey``,
   one process); every indexed row is compared with it (formula, charge, mass, key block).

Nothing is asserted: timings are for reading, not for tests.
"""

from __future__ import annotations

import argparse
import csv
import resource
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from nmrcheck.chem import ion_mz, parse_formula
import nmrcheck.ms.library as library_module
from nmrcheck.ms.library import KnownCompoundLibrary, index_library

GENERA = [f"Genus{k}" for k in range(400)]
FAMILIES = [f"Family{k}" for k in range(60)]
FRAGMENTS = [
    "C", "CC", "O", "N", "C(=O)", "c1ccc(O)cc1", "C(O)", "[C@@H](O)", "[C@H](C)", "C1CCC(CC1)", "c1ccncc1", "c1cc[nH]c1",
    "C(=O)O", "OC", "C=C", "C/C=C/C", "C(C)(C)", "S", "C(Cl)", "C1OC(CO)C(O)C1O", "c1ccc2occc2c1", "C(=O)N", "OC(=O)",
]


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


def _smiles_library(path: Path, n: int, rng, repeats: float = 0.0) -> list[str]:
    smiles_all = []
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["name", "smiles", "genus", "family"])
        for i in range(n):
            if repeats and smiles_all and rng.random() < repeats:
                # the same compound reported from another organism
                smiles_all.append(smiles_all[int(rng.integers(0, len(smiles_all)))])
                w.writerow([f"compound {i}", smiles_all[-1], GENERA[i % len(GENERA)], FAMILIES[i % len(FAMILIES)]])
                continue
            smiles = "".join(rng.choice(FRAGMENTS, size=int(rng.integers(4, 16))))
            if rng.random() < 0.05:
                smiles = "[NH3+]" + smiles
            if rng.random() < 0.05:
                smiles += "C(=O)[O-]"
            if rng.random() < 0.01:
                smiles = smiles[: len(smiles) // 2] + "C1CC("
            smiles_all.append(smiles)
            w.writerow([f"compound {i}", smiles, GENERA[i % len(GENERA)], FAMILIES[i % len(FAMILIES)]])
    return smiles_all


def _cpu_seconds() -> float:
    """User and system CPU seconds of this process and of its finished children (the worker processes)."""
    own, children = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + children.ru_utime + children.ru_stime


def _peer_structures(smiles_all: list[str]) -> tuple[dict[int, tuple], float]:
    """The plain loop: {line: (formula, charge, mass, key block)} and its seconds."""
    from rdkit import Chem, RDLogger
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    from nmrcheck.ms.library import _CHARGE

    RDLogger.DisableLog("rdApp.*")
    t0 = time.perf_counter()
    out = {}
    for line, smiles in enumerate(smiles_all, start=2):
        mol = Chem.MolFromSmiles(smiles)
        if mol is None:
            continue
        text = CalcMolFormula(mol)
        m = _CHARGE.match(text)
        charge = 0
        if m is not None and m.group(1):
            text, sign, digits = m.groups()
            charge = (int(digits) if digits else 1) * (1 if sign == "+" else -1)
        f = parse_formula(text)
        out[line] = (f.hill, charge, f.monoisotopic_mass, Chem.MolToInchiKey(mol)[:14])
    return out, time.perf_counter() - t0


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


def structures(n: int, peer_entries: int, worker_counts: list[int], repeats: float) -> None:
    import sqlite3

    print()
    print(f"structure path: {n} entries with SMILES only (RDKit formula and InChIKey for each; "
          f"{repeats:.0%} of rows repeat an earlier structure)")
    rng = np.random.default_rng(12)
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "smiles.csv"
        smiles_all = _smiles_library(src, n, rng, repeats)
        cpu0 = _cpu_seconds()
        peer, peer_s = _peer_structures(smiles_all[:peer_entries])
        peer_cpu_us = 1e6 * (_cpu_seconds() - cpu0) / min(n, peer_entries)
        peer_us = 1e6 * peer_s / min(n, peer_entries)
        print(f"  peer (plain loop, 1 process) on {min(n, peer_entries)} entries: {peer_us:.0f} us per entry, "
              f"500,000 entries in about {500_000 * peer_us / 1e6:.0f} s")
        for workers in worker_counts:
            # each run starts cold: worker processes are forked and would inherit what an earlier run cached
            library_module.structure_formula_and_key.cache_clear()
            library_module._formula_and_charge.cache_clear()
            cpu0 = _cpu_seconds()
            info = index_library(src, Path(tmp) / f"s{workers}.sqlite", workers=workers)
            cpu = _cpu_seconds() - cpu0
            us = 1e6 * info.seconds / n
            con = sqlite3.connect(info.database)
            stored = {line: (f, c, m, k) for line, f, c, m, k in con.execute("SELECT line, formula, charge, mass, key14 FROM compounds")}
            con.close()
            differ = sum(1 for line, want in peer.items() if stored.get(line) is None or stored[line][:2] != want[:2]
                         or abs(stored[line][2] - want[2]) > 1e-9 or stored[line][3] != want[3])
            extra = sum(1 for line in stored if line <= len(smiles_all[:peer_entries]) + 1 and line not in peer)
            print(f"  workers {workers}: {info.seconds:.1f} s for {info.entries} entries ({info.skipped} unreadable): "
                  f"{us:.0f} us per entry, 500,000 entries in about {500_000 * us / 1e6:.0f} s; "
                  f"peer/index {peer_us / us:.2f}; rows differing from the peer {differ + extra} of {len(peer)}")
            # CPU time is what a shared machine cannot take away: on free cores the wall time is about
            # the CPU time over the processes that share it.
            cpu_us = 1e6 * cpu / n
            print(f"    CPU (this process and its workers) {cpu_us:.0f} us per entry: on {workers} free core(s) "
                  f"500,000 entries in about {500_000 * cpu_us / 1e6 / workers:.0f} s; peer CPU/index CPU {peer_cpu_us / cpu_us:.2f}")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[10_000, 100_000, 500_000])
    parser.add_argument("--lookups", type=int, default=500)
    parser.add_argument("--structures", type=int, default=20_000, help="entries of the SMILES-only library (0: skip)")
    parser.add_argument("--peer-entries", type=int, default=20_000, help="rows the structure path's peer loop runs on")
    parser.add_argument("--workers", type=int, nargs="+", default=[1, 2], help="worker processes of the structure path's runs")
    parser.add_argument("--repeats", type=float, default=0.0,
                        help="share of SMILES-only rows that repeat an earlier structure (an export with one row per compound and organism)")
    args = parser.parse_args(argv)
    sizes(args.sizes, args.lookups)
    if args.structures:
        structures(args.structures, args.peer_entries, args.workers, args.repeats)
    return 0


if __name__ == "__main__":
    sys.exit(main())
