"""Hydrogen bookkeeping for the validator: visible H per solvent and coarse shift classes.

Uses :mod:`nmrcheck.predict` when it is installed beside this package; otherwise a
small fallback (group-level shifts from ``sp3_shift_increments.csv``) so the checks
still run. The fallback is deliberately coarse and is named in every result.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from functools import lru_cache

from nmrcheck.data import load_table

log = logging.getLogger("nmrcheck")

__all__ = ["HydrogenGroup", "exchangeable_groups", "visible_h_range", "formula_visible_h_range", "predict_groups", "predictor_name"]


@dataclass(frozen=True)
class HydrogenGroup:
    """Equivalent hydrogens on one symmetry class of heavy atoms, with a predicted shift."""

    atoms: tuple[int, ...]
    n_h: int
    ppm: float
    tolerance_ppm: float
    exchangeable: bool
    kind: str
    """'CH' for carbon-bound, else the exchangeable group ('alcohol', 'phenol', 'acid', 'amine', 'amide', 'thiol', 'other')."""


def _predict_module():
    try:
        from nmrcheck.predict import shifts  # noqa: F401

        return shifts
    except Exception:  # the predict package is written in parallel; absent or incomplete means fallback
        return None


def predictor_name() -> str:
    return "nmrcheck.predict" if _predict_module() is not None else "validator fallback (group-level shifts)"


# ----------------------------------------------------------------------------- exchangeable H


def _exchange_kind(atom) -> str:
    sym = atom.GetSymbol()
    nbrs = [n for n in atom.GetNeighbors() if n.GetAtomicNum() > 1]
    if sym == "O":
        for c in nbrs:
            if c.GetIsAromatic():
                return "phenol"
            if c.GetSymbol() == "C" and any(
                b.GetBondTypeAsDouble() == 2 and b.GetOtherAtom(c).GetSymbol() == "O" for b in c.GetBonds()
            ):
                return "acid"
        return "alcohol"
    if sym == "N":
        for c in nbrs:
            if c.GetSymbol() == "C" and any(
                b.GetBondTypeAsDouble() == 2 and b.GetOtherAtom(c).GetSymbol() in ("O", "S") for b in c.GetBonds()
            ):
                return "amide"
        return "amine"
    if sym == "S":
        return "thiol"
    return "other"


def exchangeable_groups(mol) -> dict[str, int]:
    """Exchangeable H of a structure by group: {'alcohol': 2, 'amide': 1, ...}."""
    out: dict[str, int] = {}
    for atom in mol.GetAtoms():
        if atom.GetSymbol() in ("O", "N", "S", "P", "Se") and atom.GetTotalNumHs() > 0:
            k = _exchange_kind(atom)
            out[k] = out.get(k, 0) + atom.GetTotalNumHs()
    return out


@lru_cache(maxsize=None)
def _visibility(solvent: str | None) -> dict[str, tuple[float, float]]:
    rows = load_table("exchange_visibility")
    name = solvent if solvent in {r["solvent"] for r in rows} else "unknown"
    return {r["group"]: (float(r["min_fraction"]), float(r["max_fraction"])) for r in rows if r["solvent"] == name}


def visible_h_range(mol, solvent: str | None) -> tuple[int, int, int, int]:
    """(min visible H, max visible H, carbon-bound H, exchangeable H) of a structure in ``solvent``."""
    carbon_h = sum(a.GetTotalNumHs() for a in mol.GetAtoms() if a.GetSymbol() == "C")
    groups = exchangeable_groups(mol)
    vis = _visibility(solvent)
    lo = hi = float(carbon_h)
    for kind, n in groups.items():
        a, b = vis.get(kind, vis.get("any", vis.get("other", (0.0, 1.0))))
        lo += a * n
        hi += b * n
    return int(round(lo)), int(round(hi)), carbon_h, sum(groups.values())


def formula_visible_h_range(formula) -> tuple[int, int, int]:
    """(min visible H, max visible H, exchangeable upper bound) of a bare formula.

    Each O or S can carry at most one exchangeable H and each N or P two (amines,
    amides), so at most that many H may be missing from any spectrum.
    """
    h = formula.count("H")
    bound = min(h, formula.count("O") + formula.count("S") + 2 * formula.count("N") + 2 * formula.count("P"))
    return h - bound, h, bound


# ----------------------------------------------------------------------------- shift classes


@lru_cache(maxsize=None)
def _increments() -> dict[str, float]:
    return {r["substituent"]: float(r["increment_ppm"]) for r in load_table("sp3_shift_increments")}


def _is_carbonyl_c(atom) -> bool:
    return atom.GetSymbol() == "C" and any(
        b.GetBondTypeAsDouble() == 2 and b.GetOtherAtom(atom).GetSymbol() in ("O", "S") for b in atom.GetBonds()
    )


def _sp3_substituent(nbr, centre) -> str | None:
    sym = nbr.GetSymbol()
    if sym == "C":
        if _is_carbonyl_c(nbr):
            return "carbonyl"
        if nbr.GetIsAromatic():
            return "aryl"
        hyb = str(nbr.GetHybridization())
        if hyb == "SP2":
            return "alkenyl"
        if hyb == "SP":
            return "alkynyl"
        return None
    if sym == "O":
        others = [x for x in nbr.GetNeighbors() if x.GetIdx() != centre.GetIdx()]
        if any(_is_carbonyl_c(x) for x in others):
            return "ester_o"
        return "oxygen"
    if sym == "N":
        others = [x for x in nbr.GetNeighbors() if x.GetIdx() != centre.GetIdx()]
        return "amide_n" if any(_is_carbonyl_c(x) for x in others) else "nitrogen"
    return {"S": "sulfur", "F": "fluorine", "Cl": "chlorine", "Br": "bromine", "I": "iodine"}.get(sym)


def _fallback_shift(atom) -> tuple[float, float]:
    """(ppm, tolerance) of the H on ``atom`` from its group alone."""
    sym = atom.GetSymbol()
    if sym != "C":
        kind = _exchange_kind(atom)
        return {"acid": (11.5, 2.0), "phenol": (6.5, 3.0), "amide": (7.5, 1.5), "amine": (2.0, 1.5), "alcohol": (3.0, 2.5)}.get(kind, (3.0, 3.0))
    if _is_carbonyl_c(atom):
        n = [x for x in atom.GetNeighbors() if x.GetSymbol() in ("N", "O")]
        return (8.1, 0.4) if n else (9.8, 0.5)
    if atom.GetIsAromatic():
        ring_n = any(x.GetSymbol() in ("N", "S", "O") for x in atom.GetNeighbors())
        return (7.9, 0.8) if ring_n else (7.2, 0.6)
    hyb = str(atom.GetHybridization())
    if hyb == "SP2":
        hetero = any(x.GetSymbol() in ("O", "N") for x in atom.GetNeighbors())
        conj = any(_is_carbonyl_c(y) for x in atom.GetNeighbors() for y in x.GetNeighbors() if y.GetIdx() != atom.GetIdx()) or any(
            _is_carbonyl_c(x) for x in atom.GetNeighbors()
        )
        if hetero:
            return (6.5, 0.8)
        return (6.2, 0.8) if conj else (5.4, 0.7)
    if hyb == "SP":
        return (2.5, 0.6)
    base = {3: 0.86, 2: 1.37, 1: 1.50}.get(atom.GetTotalNumHs(), 1.5)
    incs = sorted((_increments()[s] for s in (_sp3_substituent(n, atom) for n in atom.GetNeighbors()) if s), reverse=True)
    shift = base + sum(v * (1.0 if i == 0 else 0.7) for i, v in enumerate(incs))
    return min(shift, 6.0), 0.5


def predict_groups(mol) -> tuple[HydrogenGroup, ...]:
    """Predicted shift of each group of equivalent hydrogens (RDKit symmetry classes)."""
    from rdkit import Chem

    shifts = _predict_module()
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    per_atom: dict[int, tuple[float, float]] = {}
    if shifts is not None:
        try:
            for p in shifts.predict_shifts(mol):
                per_atom[p.atom_index] = (float(p.ppm), float(p.tolerance_ppm))
        except Exception as exc:  # a failing predictor must not stop the other checks
            log.warning("shift prediction failed (%s); using the fallback", exc)
            per_atom = {}
    groups: dict[int, list[int]] = {}
    for atom in mol.GetAtoms():
        if atom.GetTotalNumHs() > 0:
            groups.setdefault(ranks[atom.GetIdx()], []).append(atom.GetIdx())
    out = []
    for _, atoms in sorted(groups.items()):
        a0 = mol.GetAtomWithIdx(atoms[0])
        ppm, tol = per_atom.get(atoms[0]) or _fallback_shift(a0)
        exch = a0.GetSymbol() != "C"
        out.append(
            HydrogenGroup(
                atoms=tuple(atoms),
                n_h=sum(mol.GetAtomWithIdx(i).GetTotalNumHs() for i in atoms),
                ppm=ppm,
                tolerance_ppm=tol,
                exchangeable=exch,
                kind=_exchange_kind(a0) if exch else "CH",
            )
        )
    return tuple(sorted(out, key=lambda g: -g.ppm))
