"""Structure perception for the shift rules: which rings are aromatic, what group a neighbour starts.

The increment tables speak of substituents ("OR", "COOR", "aryl", ...); this module turns an RDKit
molecule into those words. Aromaticity follows the chemist's sense, not RDKit's: a ring that carries
an exocyclic C=O (2-pyranones, coumarins, pyridones) is treated as a ring of ordinary double bonds.
"""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

from nmrcheck.errors import CandidateError

__all__ = ["Group", "MolView", "exchange_class", "perceive"]

HALOGENS = {9: "F", 17: "Cl", 35: "Br", 53: "I"}
HETERO = {7, 8, 16, 9, 17, 35, 53}


@dataclass(frozen=True)
class Group:
    """A substituent as the tables name it, seen from the atom it is attached to.

    ``kind`` is the coarse class (a key that most tables have); ``fine`` a finer class where
    some tables distinguish more (benzene: NH2/NHR/NR2; alkenes: CH2O, CH2Ar, ...);
    ``degree`` is CH3/CH2R/CHR2/CR3 for sp3 carbon groups.
    """

    kind: str
    fine: str
    root: int
    degree: str | None = None
    conjugated: bool = False
    """The group's own pi system continues beyond its first multiple bond."""

    @property
    def keys(self) -> tuple[str, ...]:
        """Table keys to try, most specific first."""
        out = [self.fine]
        if self.degree and self.degree not in out:
            out.append(self.degree)
        if self.kind not in out:
            out.append(self.kind)
        return tuple(out)


class MolView:
    """A molecule prepared for the shift rules: heavy-atom graph, Kekule bond orders, aromatic atoms.

    Atom indices are those of the molecule given (explicit hydrogens, if any, stay in place and are
    counted as hydrogens of their heavy atom).
    """

    def __init__(self, mol: Chem.Mol) -> None:
        self.mol = mol
        n = mol.GetNumAtoms()
        self.z = [a.GetAtomicNum() for a in mol.GetAtoms()]
        self.charge = [a.GetFormalCharge() for a in mol.GetAtoms()]
        self.h_count = [0] * n
        self.nbrs: list[tuple[int, ...]] = []
        for a in mol.GetAtoms():
            protium = 0
            heavy = []
            for nb in a.GetNeighbors():
                if nb.GetAtomicNum() == 1:
                    # deuterium and tritium give no 1H signal
                    if nb.GetIsotope() in (0, 1):
                        protium += 1
                else:
                    heavy.append(nb.GetIdx())
            if a.GetAtomicNum() == 1:
                self.h_count[a.GetIdx()] = 0
            else:
                self.h_count[a.GetIdx()] = a.GetTotalNumHs(includeNeighbors=False) + protium
            self.nbrs.append(tuple(heavy))
        kek = Chem.RWMol(mol)
        try:
            Chem.Kekulize(kek, clearAromaticFlags=True)
        except Exception as exc:  # RDKit raises its own KekulizeException
            raise CandidateError(f"structure cannot be kekulized: {exc}") from None
        self._order: dict[tuple[int, int], float] = {}
        for b in kek.GetBonds():
            i, j = b.GetBeginAtomIdx(), b.GetEndAtomIdx()
            self._order[(min(i, j), max(i, j))] = b.GetBondTypeAsDouble()
        self.ring_info = mol.GetRingInfo()
        self.aromatic_rings = self._true_aromatic_rings()
        self.aromatic = frozenset(i for ring in self.aromatic_rings for i in ring)
        for ring in self.aromatic_rings:
            for k, i in enumerate(ring):
                j = ring[(k + 1) % len(ring)]
                self._order[(min(i, j), max(i, j))] = 1.5

    def _true_aromatic_rings(self) -> tuple[tuple[int, ...], ...]:
        rings = []
        for ring in self.ring_info.AtomRings():
            if len(ring) not in (5, 6):
                continue
            members = set(ring)
            ok = True
            for k, i in enumerate(ring):
                j = ring[(k + 1) % len(ring)]
                bond = self.mol.GetBondBetweenAtoms(i, j)
                if bond is None or not bond.GetIsAromatic():
                    ok = False
                    break
                for nb in self.nbrs[i]:
                    if nb in members:
                        continue
                    ext = self.mol.GetBondBetweenAtoms(i, nb)
                    # an exocyclic C=O (or C=S, C=N) makes a pyranone/pyridone, not an aromatic ring
                    if not ext.GetIsAromatic() and self.order(i, nb) == 2.0:
                        ok = False
                        break
                if not ok:
                    break
            if ok:
                rings.append(tuple(ring))
        return tuple(rings)

    # ------------------------------------------------------------------ bonds
    def order(self, i: int, j: int) -> float:
        """Bond order between ``i`` and ``j``: 1, 2, 3, or 1.5 inside an aromatic ring; 0 if not bonded."""
        return self._order.get((min(i, j), max(i, j)), 0.0)

    def multiple_partners(self, i: int, order: float) -> list[int]:
        """Heavy neighbours of ``i`` joined by a non-aromatic bond of ``order``."""
        return [j for j in self.nbrs[i] if self.order(i, j) == order]

    def is_carbonyl_carbon(self, i: int) -> bool:
        return self.z[i] == 6 and i not in self.aromatic and any(self.z[j] == 8 for j in self.multiple_partners(i, 2.0))

    def carbonyl_oxygen(self, i: int) -> int | None:
        for j in self.multiple_partners(i, 2.0):
            if self.z[j] == 8:
                return j
        return None

    def is_unsaturated(self, i: int) -> bool:
        """True for an atom in an aromatic ring or carrying a non-aromatic double or triple bond."""
        if i in self.aromatic:
            return True
        return any(self.order(i, j) in (2.0, 3.0) for j in self.nbrs[i])

    def is_sp3_carbon(self, i: int) -> bool:
        return self.z[i] == 6 and i not in self.aromatic and all(self.order(i, j) == 1.0 for j in self.nbrs[i])

    def smallest_ring_with(self, atoms: tuple[int, ...], max_size: int = 7) -> frozenset[int] | None:
        """Atoms of the smallest ring (up to ``max_size``) containing all of ``atoms``."""
        best = None
        for ring in self.ring_info.AtomRings():
            if len(ring) <= max_size and all(a in ring for a in atoms):
                if best is None or len(ring) < len(best):
                    best = ring
        return frozenset(best) if best is not None else None


# ---------------------------------------------------------------------------- perception
def perceive(view: MolView, attach: int, root: int) -> Group:
    """Name the group that starts at ``root``, as a substituent of ``attach``."""
    z = view.z[root]
    if z == 6:
        return _carbon(view, attach, root)
    if z == 8:
        return _oxygen(view, attach, root)
    if z == 7:
        return _nitrogen(view, attach, root)
    if z == 16:
        return _sulfur(view, attach, root)
    if z in HALOGENS:
        return Group(HALOGENS[z], HALOGENS[z], root)
    if z == 14:
        return Group("SiR3", "SiR3", root)
    if z == 15:
        return Group("P", "P", root)
    return Group("other", Chem.GetPeriodicTable().GetElementSymbol(z), root)


def _carbon(view: MolView, attach: int, r: int) -> Group:
    if r in view.aromatic:
        return Group("aryl", "aryl", r, conjugated=True)
    others = [j for j in view.nbrs[r] if j != attach]
    oxo = view.carbonyl_oxygen(r)
    if oxo is not None:
        rest = [j for j in others if j != oxo]
        if view.h_count[r] >= 1 or not rest:
            return Group("CHO", "CHO", r)
        y = rest[0]
        zy = view.z[y]
        if zy == 8:
            if view.h_count[y] >= 1 or view.charge[y] < 0:
                return Group("COOH", "COOH", r)
            return Group("COOR", "COOR", r)
        if zy == 7:
            return Group("C(=O)N", "C(=O)N", r)
        if zy in (17, 35, 53, 9):
            return Group("C(=O)Cl", "C(=O)Cl", r)
        if zy == 6 and y in view.aromatic:
            return Group("C(=O)Ar", "C(=O)Ar", r, conjugated=True)
        return Group("C(=O)R", "C(=O)R", r, conjugated=zy == 6 and view.is_unsaturated(y))
    triple = view.multiple_partners(r, 3.0)
    if triple:
        t = triple[0]
        if view.z[t] == 7:
            return Group("C#N", "C#N", r)
        further = any(view.is_unsaturated(j) for j in view.nbrs[t] if j != r)
        return Group("C#C", "C#C", r, conjugated=further)
    double = view.multiple_partners(r, 2.0)
    if double:
        d = double[0]
        if view.z[d] == 6:
            further = any(view.is_unsaturated(j) for j in others if j != d) or any(
                view.is_unsaturated(j) for j in view.nbrs[d] if j != r
            )
            return Group("C=C", "C=C", r, conjugated=further)
        # imine carbon (C=N) and thiocarbonyl: counted as a ketone-like carbonyl
        return Group("C(=O)R", "C=N" if view.z[d] == 7 else "C=S", r)
    # sp3 carbon: fine class by the first heteroatom or unsaturation it carries
    zs = [view.z[j] for j in others]
    carbons = sum(1 for zz in zs if zz == 6)
    degree = ("CH3", "CH2R", "CHR2", "CR3")[min(carbons, 3)]
    fine = degree
    if zs.count(9) >= 3:
        fine = "CF3"
    elif zs.count(17) >= 3:
        fine = "CCl3"
    elif any(zz in HALOGENS for zz in zs):
        fine = "CH2O" if 53 in zs and not any(zz in (17, 35) for zz in zs) else "CH2Hal"
    elif 8 in zs:
        fine = "CH2O"
    elif 7 in zs:
        fine = "CH2N"
    elif 16 in zs:
        fine = "CH2S"
    elif any(j in view.aromatic for j in others):
        fine = "CH2Ar"
    elif any(view.is_carbonyl_carbon(j) or view.multiple_partners(j, 3.0) for j in others if view.z[j] == 6):
        fine = "CH2C=O"
    return Group("alkyl", fine, r, degree=degree)


def _oxygen(view: MolView, attach: int, r: int) -> Group:
    others = [j for j in view.nbrs[r] if j != attach]
    if view.h_count[r] >= 1 or view.charge[r] < 0 or not others:
        return Group("OH", "OH", r)
    x = others[0]
    zx = view.z[x]
    if zx == 6:
        if x in view.aromatic:
            return Group("OAr", "OAr", r, conjugated=True)
        if view.is_carbonyl_carbon(x):
            oxo = view.carbonyl_oxygen(x)
            acyl = [j for j in view.nbrs[x] if j not in (r, oxo)]
            if acyl and acyl[0] in view.aromatic:
                return Group("OC(=O)R", "OC(=O)Ar", r)
            return Group("OC(=O)R", "OC(=O)R", r)
        if any(view.z[j] == 6 for j in view.multiple_partners(x, 2.0)):
            return Group("O-vinyl", "O-vinyl", r, conjugated=True)
        return Group("OR", "OR", r)
    if zx == 16 and len([j for j in view.multiple_partners(x, 2.0) if view.z[j] == 8]) >= 2:
        return Group("OSO2R", "OSO2R", r)
    if zx == 15:
        # phosphate esters: closest tabulated analogue is the acyloxy group
        return Group("OC(=O)R", "OP", r)
    return Group("OR", "OR", r)


def _nitrogen(view: MolView, attach: int, r: int) -> Group:
    others = [j for j in view.nbrs[r] if j != attach]
    oxygens = [j for j in view.nbrs[r] if view.z[j] == 8]
    if len(oxygens) >= 2 and (view.charge[r] > 0 or view.multiple_partners(r, 2.0)):
        return Group("NO2", "NO2", r)
    if r in view.aromatic:
        return Group("N-aromatic", "N-aromatic", r, conjugated=True)
    if view.charge[r] > 0:
        return Group("NR3+", "NR3+", r)
    if view.multiple_partners(r, 2.0) or view.multiple_partners(r, 3.0):
        return Group("N=X", "N=X", r, conjugated=True)
    for j in others:
        thioacyl = view.z[j] == 6 and any(view.z[k] == 16 for k in view.multiple_partners(j, 2.0))
        acyl = view.is_carbonyl_carbon(j) or thioacyl
        sulfonyl = view.z[j] == 16 and len([k for k in view.multiple_partners(j, 2.0) if view.z[k] == 8]) >= 2
        if acyl or sulfonyl:
            fine = "NHC(=O)R" if view.h_count[r] >= 1 else "NRC(=O)R"
            return Group("NHC(=O)R", fine, r)
    if attach not in view.aromatic and any(j in view.aromatic for j in others):
        return Group("N-aryl", "N-aryl", r, conjugated=True)
    if any(view.z[j] == 6 and view.multiple_partners(j, 2.0) for j in others):
        return Group("NR2", "N-vinyl", r, conjugated=True)
    fine = {0: "NR2", 1: "NHR"}.get(view.h_count[r], "NH2")
    return Group("NR2", fine, r)


def _sulfur(view: MolView, attach: int, r: int) -> Group:
    others = [j for j in view.nbrs[r] if j != attach]
    oxo = [j for j in view.nbrs[r] if view.z[j] == 8 and (view.order(r, j) == 2.0 or view.charge[j] < 0)]
    if view.h_count[r] >= 1:
        return Group("SH", "SH", r)
    if len(oxo) >= 2:
        rest = [j for j in others if j not in oxo]
        if any(view.z[j] in (7, 8, 17) for j in rest):
            return Group("S(=O)2R", "S(=O)2X", r)
        return Group("S(=O)2R", "S(=O)2R", r)
    if len(oxo) == 1:
        return Group("S(=O)R", "S(=O)R", r)
    if any(j in view.aromatic for j in others):
        return Group("SR", "SAr", r, conjugated=True)
    return Group("SR", "SR", r)


# ---------------------------------------------------------------------------- exchangeable H
def exchange_class(view: MolView, i: int) -> str | None:
    """Class of the exchangeable hydrogens on atom ``i`` (a name from exchangeable_classes.csv), or None."""
    if view.h_count[i] == 0:
        return None
    z = view.z[i]
    if z == 8:
        if not view.nbrs[i]:
            return "alcohol OH"
        x = view.nbrs[i][0]
        zx = view.z[x]
        if zx == 6:
            if view.is_carbonyl_carbon(x):
                return "carboxylic acid OH"
            if x in view.aromatic:
                return "enol/chelated OH" if _ortho_carbonyl(view, x, i) else "phenol OH"
            if any(view.z[j] == 6 for j in view.multiple_partners(x, 2.0)):
                return "enol/chelated OH" if _ortho_carbonyl(view, x, i) else "phenol OH"
            return "alcohol OH"
        if zx == 7:
            return "phenol OH"
        if zx in (15, 16):
            return "carboxylic acid OH"
        return "alcohol OH"
    if z == 7:
        if view.charge[i] > 0:
            return "ammonium NH"
        if i in view.aromatic or (view.mol.GetAtomWithIdx(i).GetIsAromatic()):
            return "heteroaromatic NH"
        for j in view.nbrs[i]:
            if view.is_carbonyl_carbon(j):
                return "amide NH"
            if view.z[j] == 6 and any(view.z[k] in (16, 7) for k in view.multiple_partners(j, 2.0)):
                return "amide NH"
            if view.z[j] == 16 and any(view.z[k] == 8 for k in view.multiple_partners(j, 2.0)):
                return "amide NH"
        if any(j in view.aromatic for j in view.nbrs[i]):
            return "aniline NH"
        return "amine NH"
    if z == 16:
        return "thiol SH"
    return None


def _ortho_carbonyl(view: MolView, x: int, oxygen: int) -> bool:
    """True when the OH on sp2 carbon ``x`` can form a six-membered hydrogen-bonded ring to a C=O."""
    # H-O-C(x)=C(y)-C(w)=O: the six-membered chelate of salicyl carbonyls, 5-OH flavones, beta-diketone enols
    for y in view.nbrs[x]:
        if y == oxygen or view.order(x, y) == 1.0:
            continue
        for w in view.nbrs[y]:
            if w != x and view.is_carbonyl_carbon(w):
                return True
    return False
