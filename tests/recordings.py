"""What the real-recording tests judge a result by: the structure's H count and the issue's count rule."""

from __future__ import annotations

from pathlib import Path


def structure_h(path: Path) -> tuple[int, int]:
    """(carbon-bound H, exchangeable H) of a molfile, counted with RDKit (the ground truth of a count)."""
    from rdkit import Chem

    mol = Chem.AddHs(Chem.MolFromMolFile(str(path), removeHs=False))
    carbon = exch = 0
    for atom in mol.GetAtoms():
        if atom.GetSymbol() != "H":
            continue
        if atom.GetNeighbors()[0].GetSymbol() == "C":
            carbon += 1
        else:
            exch += 1
    return carbon, exch


def count_holds(count, carbon: int, exch: int) -> bool:
    """The count holds the structure's H: its range overlaps [carbon-bound H, all H] (OH/NH/SH may be
    broad or missing, so they widen the allowance: common practice); an ambiguous count holds it only
    when its offered totals bracket it."""
    if count is None:
        return False
    if count.ambiguous:
        return min(count.alternative_totals) <= carbon + exch + 0.5 and max(count.alternative_totals) >= carbon - 0.5
    return count.total_h_low <= carbon + exch and count.total_h_high >= carbon
