"""First-order multiplicity of each H environment from its three-bond neighbours (the n+1 rule).

Couplings counted: H-C-C-H (vicinal, 3J) to H of other symmetry classes, and H-F. Not counted: H on O, N
and S (fast exchange decouples them in routine spectra), H of the same symmetry class (equivalent
H do not split each other), and long-range couplings (4J and beyond are mostly below the line width
of routine spectra). Typical 3J values (common practice, Pretsch et al.): freely rotating sp3-sp3
7 Hz, aromatic ortho 8 Hz, olefinic cis 10 Hz and trans 16 Hz (mean 13 Hz when the geometry is
unknown), vinyl-to-sp3 7 Hz, aldehyde to alpha-H 2 Hz.
"""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

from nmrcheck.predict.shifts import Environment

__all__ = ["Multiplet", "multiplets"]

_NAMES = {1: "singlet", 2: "doublet", 3: "triplet", 4: "quartet", 5: "quintet", 6: "sextet", 7: "septet"}


@dataclass(frozen=True)
class Multiplet:
    """The first-order pattern expected for one environment."""

    name: str
    """'singlet', 'doublet', ..., 'doublet of triplets', or 'multiplet' for more than two kinds of neighbours."""
    lines: int
    """Number of lines with the n+1 rule applied per kind of neighbour (at most 64)."""
    width_hz: float
    """Distance between the outer lines, Hz (the sum of n J over the neighbours)."""
    neighbours: tuple[tuple[int, float], ...]
    """(H count, J in Hz) per coupled neighbour environment."""


def _j_hz(mol: Chem.Mol, a: int, b: int) -> float:
    """Typical 3J between H on atoms ``a`` and ``b`` (bonded)."""
    bond = mol.GetBondBetweenAtoms(a, b)
    if bond.GetIsAromatic():
        return 8.0
    if bond.GetBondTypeAsDouble() == 2.0:
        # H on the two ends of a C=C: cis or trans; the ring forces cis
        return 10.0 if bond.IsInRing() else 13.0
    atom_a, atom_b = mol.GetAtomWithIdx(a), mol.GetAtomWithIdx(b)
    for x, y in ((atom_a, atom_b), (atom_b, atom_a)):
        if any(nb.GetAtomicNum() == 8 and mol.GetBondBetweenAtoms(x.GetIdx(), nb.GetIdx()).GetBondTypeAsDouble() == 2.0 for nb in x.GetNeighbors()):
            return 2.0  # aldehyde H to the alpha H
    return 7.0


def multiplets(mol: Chem.Mol, environments: tuple[Environment, ...]) -> dict[int, Multiplet]:
    """The expected multiplet of each environment of ``mol`` (keyed by its position in ``environments``)."""
    env_of_atom: dict[int, int] = {}
    for k, e in enumerate(environments):
        if not e.exchangeable:
            for i in e.atom_indices:
                env_of_atom.setdefault(i, k)
    h_on = {i: mol.GetAtomWithIdx(i).GetTotalNumHs() for i in env_of_atom}
    out: dict[int, Multiplet] = {}
    for k, e in enumerate(environments):
        if e.exchangeable:
            out[k] = Multiplet("singlet", 1, 0.0, ())
            continue
        # neighbours of one representative atom of the class
        i = e.atom_indices[0]
        per_env: dict[int, list[float]] = {}
        for nb in mol.GetAtomWithIdx(i).GetNeighbors():
            j = nb.GetIdx()
            if j not in env_of_atom or env_of_atom[j] == k:
                continue
            if environments[env_of_atom[j]].environment == e.environment:
                continue
            per_env.setdefault(env_of_atom[j], []).extend([_j_hz(mol, i, j)] * h_on[j])
        # 19F couples like a proton (spin 1/2, 100 % abundant): 2J(H,F) about 47 Hz, 3J about 20 Hz on sp3
        # carbon, 8 Hz ortho and 5 Hz meta on a benzene ring (common practice)
        atom = mol.GetAtomWithIdx(i)
        fluorines: list[float] = []
        for nb in atom.GetNeighbors():
            if nb.GetAtomicNum() == 9:
                fluorines.append(47.0)
            for nb2 in nb.GetNeighbors():
                if nb2.GetIdx() == i:
                    continue
                if nb2.GetAtomicNum() == 9:
                    fluorines.append(8.0 if atom.GetIsAromatic() else 20.0)
                elif atom.GetIsAromatic() and nb2.GetIsAromatic():
                    fluorines += [5.0 for nb3 in nb2.GetNeighbors() if nb3.GetAtomicNum() == 9 and nb3.GetIdx() != nb.GetIdx()]
        if fluorines:
            per_env[-1] = fluorines
        neighbours = tuple((len(js), sum(js) / len(js)) for js in per_env.values())
        # equal couplings merge (n+1 over the sum); otherwise multiply
        merged: dict[float, int] = {}
        for n, j in neighbours:
            merged[round(j)] = merged.get(round(j), 0) + n
        lines = 1
        for n in merged.values():
            lines *= n + 1
        width = sum(n * j for n, j in neighbours)
        if len(merged) == 0:
            name = "singlet"
        elif len(merged) == 1:
            name = _NAMES.get(next(iter(merged.values())) + 1, "multiplet")
        elif len(merged) == 2:
            parts = sorted(merged.items(), key=lambda t: -t[0])
            a, b = (_NAMES.get(n + 1, "multiplet") for _, n in parts)
            name = f"{a} of {b}s" if "multiplet" not in (a, b) else "multiplet"
        else:
            name = "multiplet"
        out[k] = Multiplet(name, min(lines, 64), width, neighbours)
    return out
