"""Estimate the 1H chemical shift of every hydrogen of a structure from published additive increments.

The rules applied, by hydrogen type:

- sp3 C-H: Beauchamp & Marquez alpha/beta/gamma increments; Shoolery's rule for X-CH2-Y where both
  X and Y are functional groups; class values for acetal/anomeric O-CH-O.
- olefinic C=C-H: Pascual, Meier & Simon (gem/cis/trans), with E/Z taken from the ring, the bond
  stereo flag or the coordinates; unknown geometry uses the mean of cis and trans.
- benzene ring H: benzene increments (ortho/meta/para), fused rings counted as substituents.
- heteroaromatic H: base values of the parent rings (pyridine, furan, thiophene, pyrrole, indole, ...).
- aldehyde, formyl, alkyne, imine H: class base values.
- O-H, N-H, S-H: exchangeable; the prediction is the middle of the class's usual window.

Every value and its source is in the CSV tables of ``nmrcheck/data`` (see ``increments``).
"""

from __future__ import annotations

import heapq
import logging
from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
from rdkit import Chem

from nmrcheck.errors import CandidateError
from nmrcheck.predict import _tables
from nmrcheck.predict._perceive import HETERO, Group, MolView, exchange_class, perceive

__all__ = ["Environment", "PredictedShift", "group_environments", "predict_shifts"]

log = logging.getLogger("nmrcheck")

_CARBONYL_KINDS = {"CHO", "C(=O)R", "C(=O)Ar", "COOH", "COOR", "C(=O)N", "C(=O)Cl"}
_SP3_BASE_KEY = {3: "methyl", 2: "methylene", 1: "methine"}

# How perceived groups map onto rows of a table that lacks the finer name.
_ALKENE_ALIASES = {
    "OH": "OR",
    "OAr": "OR conj",
    "O-vinyl": "OR conj",
    "OSO2R": "OC(=O)R",
    "N-aryl": "NR2 conj",
    "N-aromatic": "NR2 conj",
    "N-vinyl": "NR2 conj",
    "C(=O)Ar": "C(=O)R conj",
}
_BENZENE_ALIASES = {"O-vinyl": "OAr", "N-vinyl": "NR2"}
# the sp3 and Shoolery tables are keyed by the perceived classes themselves
_NO_ALIASES: dict[str, str] = {}


@dataclass(frozen=True)
class PredictedShift:
    """The estimated shift of the hydrogens on one heavy atom (or of one of two geminal sites on it)."""

    atom_index: int
    """Index of the heavy atom carrying the hydrogens, in the molecule given."""
    n_h: int
    ppm: float
    shift_class: str
    """'aliphatic', 'heteroatom-substituted sp3', 'anomeric', 'olefinic', 'aromatic', 'aldehyde',
    'formyl', 'alkyne', 'imine' or 'exchangeable'."""
    tolerance_ppm: float
    """Half-width of the window an observed signal should fall in to be consistent with this estimate."""
    exchangeable: bool
    environment: int
    """Symmetry class of the heavy atom (RDKit canonical rank without tie breaking)."""
    rule: str
    """Which increments were added, in short."""
    hydrogen_site: int | None = None
    """None when all hydrogens of the atom share one estimate; for the two H of a =CH2 that the rules
    tell apart, the environment of the partner-carbon substituent this H is cis to (-1: cis to H)."""
    h_class: str | None = None
    """For exchangeable hydrogens, their class (e.g. 'alcohol OH', 'amide NH')."""


@dataclass(frozen=True)
class Environment:
    """Symmetry-equivalent hydrogens merged: one expected signal."""

    environment: int
    atom_indices: tuple[int, ...]
    n_h: int
    ppm: float
    shift_class: str
    tolerance_ppm: float
    exchangeable: bool
    rule: str
    hydrogen_site: int | None = None
    h_class: str | None = None


@dataclass(frozen=True)
class _Estimate:
    ppm: float
    n_h: int
    shift_class: str
    tolerance_ppm: float
    rule: str
    site: int | None = None


# ============================================================================ public API
def predict_shifts(mol: Chem.Mol) -> tuple[PredictedShift, ...]:
    """Estimate the 1H shift of every hydrogen of ``mol``.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        The structure, with implicit or explicit hydrogens. Atom indices in the result refer to it.

    Returns
    -------
    tuple of PredictedShift
        One entry per hydrogen-bearing heavy atom (two for a =CH2 whose hydrogens differ), in atom order.

    Raises
    ------
    CandidateError
        If ``mol`` is not an RDKit molecule, is empty, or fails RDKit sanitization.
    """
    mol = _checked(mol)
    view = MolView(mol)
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    geometry = _Geometry(mol, view)
    hetero = _heteroaromatic_matches(view)
    out: list[PredictedShift] = []
    for i in range(mol.GetNumAtoms()):
        if view.z[i] == 1 or view.h_count[i] == 0:
            continue
        if view.z[i] in (7, 8, 16):
            out.append(_exchangeable(view, i, ranks[i]))
            continue
        if view.z[i] != 6:
            log.warning("no shift rule for H on %s (atom %d); not predicted", mol.GetAtomWithIdx(i).GetSymbol(), i)
            continue
        for est in _carbon_estimates(view, i, geometry, hetero, ranks):
            out.append(
                PredictedShift(
                    atom_index=i,
                    n_h=est.n_h,
                    ppm=round(est.ppm, 4),
                    shift_class=est.shift_class,
                    tolerance_ppm=round(est.tolerance_ppm, 4),
                    exchangeable=False,
                    environment=ranks[i],
                    rule=est.rule,
                    hydrogen_site=est.site,
                )
            )
    return tuple(out)


def group_environments(preds: Iterable[PredictedShift]) -> tuple[Environment, ...]:
    """Merge predictions of symmetry-equivalent hydrogens into one environment each.

    Hydrogens are equivalent when their heavy atoms share a symmetry class (and, for geminal
    olefinic H, the same site). Environments are returned in order of decreasing shift.
    """
    groups: dict[tuple, list[PredictedShift]] = defaultdict(list)
    for p in preds:
        if not isinstance(p, PredictedShift):
            raise CandidateError(f"group_environments expects PredictedShift items, got {type(p).__name__}")
        # the ppm is part of the key only as a guard: equivalent atoms get identical estimates
        groups[(p.environment, p.hydrogen_site, p.shift_class, round(p.ppm, 3))].append(p)
    envs = []
    for (env, site, cls, _), members in groups.items():
        n_h = sum(m.n_h for m in members)
        ppm = sum(m.ppm * m.n_h for m in members) / n_h
        envs.append(
            Environment(
                environment=env,
                atom_indices=tuple(sorted({m.atom_index for m in members})),
                n_h=n_h,
                ppm=round(ppm, 4),
                shift_class=cls,
                tolerance_ppm=max(m.tolerance_ppm for m in members),
                exchangeable=members[0].exchangeable,
                rule=members[0].rule,
                hydrogen_site=site,
                h_class=members[0].h_class,
            )
        )
    envs.sort(key=lambda e: (-e.ppm, e.environment))
    return tuple(envs)


# ============================================================================ input check
def _checked(mol: object) -> Chem.Mol:
    if mol is None:
        raise CandidateError("no structure: got None (an RDKit parser returns None for a structure it cannot read)")
    if not isinstance(mol, Chem.Mol):
        raise CandidateError(f"structure must be an RDKit Mol, got {type(mol).__name__}")
    if mol.GetNumAtoms() == 0:
        raise CandidateError("structure has no atoms")
    copy = Chem.Mol(mol)
    try:
        Chem.SanitizeMol(copy)
    except Exception as exc:  # RDKit raises several sanitization exception types
        raise CandidateError(f"structure is not chemically valid: {exc}") from None
    if any(a.GetNumRadicalElectrons() for a in copy.GetAtoms()):
        log.warning("structure has radical centres; shift estimates assume closed-shell valences")
    return copy


# ============================================================================ dispatch by carbon type
def _carbon_estimates(view: MolView, i: int, geometry: _Geometry, hetero: dict, ranks: list[int]) -> list[_Estimate]:
    if i in view.aromatic:
        return [_aromatic(view, i, hetero)]
    if view.multiple_partners(i, 3.0):
        return [_alkyne(view, i)]
    doubles = view.multiple_partners(i, 2.0)
    if doubles:
        partner = doubles[0]
        zp = view.z[partner]
        if zp == 8:
            return [_aldehyde(view, i, partner)]
        if zp == 6:
            return _alkene(view, i, partner, geometry, ranks)
        return [_class_value("imine", view.h_count[i], rule="imine/oxime CH=N class value")]
    return [_sp3(view, i)]


def _class_value(key: str, n_h: int, *, rule: str, widen: float = 0.0, shift_class: str | None = None) -> _Estimate:
    bv = _tables.base_value(key)
    cls = shift_class or bv.shift_class
    return _Estimate(bv.ppm, n_h, cls, _tables.class_tolerance(cls) + widen, f"{rule}: {bv.ppm:.2f}")


def _lookup(table: dict, keys: Iterable[str], aliases: dict[str, str]) -> tuple[str, tuple] | None:
    for k in keys:
        k = aliases.get(k, k)
        if k in table:
            return k, table[k]
    return None


# ============================================================================ sp3
def _sp3(view: MolView, c0: int) -> _Estimate:
    n_h = view.h_count[c0]
    groups = [perceive(view, c0, x) for x in view.nbrs[c0]]
    hetero_alpha = any(view.z[g.root] in HETERO for g in groups)
    shift_class = "heteroatom-substituted sp3" if hetero_alpha else "aliphatic"
    if n_h == 4:
        # methane: the methyl base without substituents is the closest the tables come
        n_base = 3
    else:
        n_base = n_h
    on = [g for g in groups if view.z[g.root] in (7, 8) and g.kind not in ("NO2",)]
    if len(on) >= 2 and any(view.z[g.root] == 8 for g in on):
        shift_class = "anomeric"
        acetal = _acetal(groups, on, n_h)
        if acetal is not None:
            return _class_value(acetal, n_h, rule="acetal/anomeric class value", shift_class="anomeric")
    if n_h == 2 and len(groups) == 2 and all(g.kind != "alkyl" for g in groups):
        found = [_lookup(_tables.shoolery_constants(), g.keys, _NO_ALIASES) for g in groups]
        if all(found):
            base = _tables.base_value("shoolery").ppm
            ppm = base + found[0][1] + found[1][1]
            rule = f"Shoolery 0.23; {found[0][0]} +{found[0][1]:.2f}; {found[1][0]} +{found[1][1]:.2f}"
            return _Estimate(ppm, n_h, shift_class, _tables.class_tolerance(shift_class), rule)
    terms, missing = _beauchamp_marquez_terms(view, c0)
    terms = _saturated_hetero_terms(terms)
    base = _tables.base_value(_SP3_BASE_KEY[n_base]).ppm
    ppm = base + sum(v for _, _, v in terms)
    label = {3: "CH3", 2: "CH2", 1: "CH"}[n_base]
    parts = [f"Beauchamp-Marquez {label} {base:.2f}"]
    parts += [f"{pos} {key} {v:+.2f}" for pos, key, v in terms if v != 0.0]
    parts += [f"no increment for {m}" for m in missing]
    tol = _tables.class_tolerance(shift_class) + (_tables.tolerance_widening("missing increment") if missing else 0.0)
    return _Estimate(ppm, n_h, shift_class, tol, "; ".join(parts))


#: Substituents whose beta/gamma terms saturate once an O or N sits alpha (polyols, amino alcohols).
_HETERO_KEYS = frozenset({"OH", "OR", "O-vinyl", "OAr", "OC(=O)R", "OC(=O)Ar", "NR2", "NHC(=O)R", "N-aryl", "N-aromatic", "NR3+", "OSO2R"})


def _saturated_hetero_terms(terms: list[tuple[str, str, float]]) -> list[tuple[str, str, float]]:
    """Drop beta and gamma O/N terms when an O or N is already alpha, keeping the largest single beta term.

    Additive increments over-count neighbouring oxygens: in sugars and polyols every CH(O) sits at
    3.2-3.9 ppm whatever the number of OH around it, while the sum of beta/gamma OH terms would put
    it at 4.5-4.8 (error up to 1.7 ppm on D-glucose in DMSO-d6, NMReDATA record of cheminfo/nmr-dataset1).
    The beta and gamma effects of O/N on a carbon that already bears O/N are small (Pretsch et al.,
    tables of polyols; from memory), so only the largest beta O/N term is kept, halved.
    """
    if not any(pos == "alpha" and key in _HETERO_KEYS for pos, key, _ in terms):
        return terms
    far = [t for t in terms if t[0] != "alpha" and t[1] in _HETERO_KEYS]
    if not far:
        return terms
    kept = [t for t in terms if t not in far]
    betas = [t for t in far if t[0] == "beta"]
    if betas:
        pos, key, v = max(betas, key=lambda t: t[2])
        kept.append((pos, key + " (saturated, halved)", v / 2))
    return kept


def _acetal(groups: list[Group], on: list[Group], n_h: int) -> str | None:
    oxygens = [g for g in on if g.kind.startswith("O")]
    nitrogens = [g for g in on if g not in oxygens]
    if n_h == 2 and len(oxygens) == 2 and not nitrogens:
        return "methylenedioxy" if all(g.kind == "OAr" for g in oxygens) else "acetal CH2"
    if n_h == 1:
        if len(oxygens) >= 3:
            return "orthoester CH"
        if len(oxygens) == 2 and not nitrogens:
            third = [g for g in groups if g not in on]
            if any(g.kind == "OC(=O)R" for g in oxygens):
                return "acylal CH"
            if third and third[0].kind == "aryl":
                return "acetal CH aryl"
            return "acetal CH"
        if len(oxygens) == 1 and nitrogens:
            return "N-O acetal CH"
    return None


def _beauchamp_marquez_terms(view: MolView, c0: int) -> tuple[list[tuple[str, str, float]], list[str]]:
    """Walk out from ``c0`` and collect (position, substituent, increment) terms.

    Positions count carbons: substituents on ``c0`` are alpha, on the next carbon beta, on the one
    after gamma. An ether oxygen or amine nitrogen between two carbons is not a position, as in the
    worked example of Beauchamp & Marquez.
    """
    table = _tables.sp3_increments()
    names = ("alpha", "beta", "gamma")
    terms: list[tuple[str, str, float]] = []
    missing: list[str] = []
    seen = {c0}
    frontier: list[tuple[int, int]] = [(0, c0)]
    while frontier:
        pos, x = heapq.heappop(frontier)
        for nb in view.nbrs[x]:
            if nb in seen:
                continue
            seen.add(nb)
            g = perceive(view, x, nb)
            hit = _lookup(table, g.keys, _NO_ALIASES)
            if hit is None:
                if pos == 0:
                    missing.append(g.fine)
            else:
                terms.append((names[pos], hit[0], hit[1][pos]))
            for y, q in _continuation(view, x, g, pos, seen):
                if q <= 2:
                    heapq.heappush(frontier, (q, y))
    return terms, missing


def _continuation(view: MolView, x: int, g: Group, pos: int, seen: set[int]) -> list[tuple[int, int]]:
    """Mark the atoms of group ``g`` as seen and return the carbons the walk goes on from."""
    r = g.root
    nxt: list[tuple[int, int]] = []
    if g.kind == "alkyl":
        nxt.append((r, pos + 1))
    elif g.kind == "C=C":
        partner = [j for j in view.multiple_partners(r, 2.0) if view.z[j] == 6][0]
        seen.add(partner)
        nxt += [(r, pos + 1), (partner, pos + 2)]
    elif g.kind == "C#C":
        partner = view.multiple_partners(r, 3.0)[0]
        seen.add(partner)
        nxt.append((partner, pos + 2))
    elif g.kind in _CARBONYL_KINDS or g.fine in ("C=N", "C=S"):
        for j in view.nbrs[r]:
            if j == x or j in seen:
                continue
            seen.add(j)
            if view.order(r, j) == 1.0 and view.z[j] == 6 and j not in view.aromatic:
                nxt.append((j, pos + 2))
            elif j in view.aromatic:
                _mark_aromatic_system(view, j, seen)
    elif g.kind == "aryl":
        _mark_aromatic_system(view, r, seen)
    elif g.kind == "OR" or (g.kind == "NR2" and g.fine != "N-vinyl"):
        for j in view.nbrs[r]:
            if j != x and j not in seen and view.is_sp3_carbon(j):
                seen.add(j)
                nxt.append((j, pos + 1))
    else:
        # a terminal group (ester O, amide N, nitro, halogen, ...): its atoms are not walked through
        for j in view.nbrs[r]:
            if j != x and view.z[j] != 6:
                seen.add(j)
            elif j != x and view.is_carbonyl_carbon(j):
                seen.add(j)
                oxo = view.carbonyl_oxygen(j)
                if oxo is not None:
                    seen.add(oxo)
    return nxt


def _mark_aromatic_system(view: MolView, start: int, seen: set[int]) -> None:
    stack = [start]
    while stack:
        a = stack.pop()
        seen.add(a)
        for j in view.nbrs[a]:
            if j in view.aromatic and j not in seen and view.order(a, j) == 1.5:
                stack.append(j)


# ============================================================================ olefinic
class _Geometry:
    """Decides whether two substituents across a double bond are cis or trans."""

    def __init__(self, mol: Chem.Mol, view: MolView) -> None:
        self.mol = mol
        self.view = view
        self._coords: np.ndarray | None = None
        self._coords_tried = False

    def _positions(self) -> np.ndarray | None:
        if not self._coords_tried:
            self._coords_tried = True
            if self.mol.GetNumConformers():
                self._coords = np.asarray(self.mol.GetConformer().GetPositions(), dtype=float)
            else:
                from rdkit.Chem import rdDepictor

                # 2D depiction honours the E/Z flags that the structure carries
                copy = Chem.Mol(self.mol)
                rdDepictor.Compute2DCoords(copy)
                self._coords = np.asarray(copy.GetConformer().GetPositions(), dtype=float)
        return self._coords

    def relation(self, a: int, b: int, g: int, s: int) -> str | None:
        """'cis' or 'trans' for ``g`` on ``a`` and ``s`` on ``b`` across the double bond a=b; None if unknown."""
        bond = self.mol.GetBondBetweenAtoms(a, b)
        ri = self.view.ring_info
        small = [ring for ring in ri.BondRings() if bond.GetIdx() in ring and len(ring) <= 7]
        if small:
            ring_bonds = min(small, key=len)
            ring_atoms = set()
            for bi in ring_bonds:
                rb = self.mol.GetBondWithIdx(bi)
                ring_atoms.update((rb.GetBeginAtomIdx(), rb.GetEndAtomIdx()))
            return "cis" if (g in ring_atoms) == (s in ring_atoms) else "trans"
        stereo = bond.GetStereo()
        if stereo == Chem.BondStereo.STEREOANY:
            return None
        if not self.mol.GetNumConformers() and stereo == Chem.BondStereo.STEREONONE:
            return None
        pos = self._positions()
        if pos is None:
            return None
        axis = pos[b] - pos[a]
        norm = np.linalg.norm(axis)
        if norm < 1e-6:
            return None
        axis = axis / norm
        u = pos[g] - pos[a]
        w = pos[s] - pos[b]
        u = u - np.dot(u, axis) * axis
        w = w - np.dot(w, axis) * axis
        nu, nw = np.linalg.norm(u), np.linalg.norm(w)
        if nu < 1e-3 or nw < 1e-3:
            return None
        cos = float(np.dot(u, w) / (nu * nw))
        if abs(cos) < 0.2:
            return None
        return "cis" if cos > 0 else "trans"


def _alkene(view: MolView, a: int, b: int, geometry: _Geometry, ranks: list[int]) -> list[_Estimate]:
    table = _tables.alkene_increments()
    base = _tables.base_value("ethylene").ppm
    gem = [x for x in view.nbrs[a] if x != b]
    across = [x for x in view.nbrs[b] if x != a]
    ring = None
    bond = view.mol.GetBondBetweenAtoms(a, b)
    rings = [r for r in view.ring_info.BondRings() if bond.GetIdx() in r]
    if rings:
        ring_atoms: set[int] = set()
        for bi in min(rings, key=len):
            rb = view.mol.GetBondWithIdx(bi)
            ring_atoms.update((rb.GetBeginAtomIdx(), rb.GetEndAtomIdx()))
        ring = ring_atoms
    all_subs = [(a, x) for x in gem] + [(b, x) for x in across]

    def z_of(owner: int, x: int) -> tuple[str, tuple[float, float, float]] | None:
        g = perceive(view, owner, x)
        conj = g.conjugated or any(view.is_unsaturated(y) for o, y in all_subs if y != x)
        keys = list(g.keys)
        if g.kind == "alkyl" and ring is not None and x in ring:
            keys.insert(keys.index("alkyl"), "alkyl-ring")
        if conj:
            keys = [k + " conj" for k in keys] + keys
        return _lookup(table, keys, _ALKENE_ALIASES)

    notes: list[str] = []
    missing = False
    zs: dict[int, tuple[str, tuple[float, float, float]] | None] = {}
    for owner, x in all_subs:
        zs[x] = z_of(owner, x)
        if zs[x] is None:
            missing = True
            notes.append(f"no increment for {perceive(view, owner, x).fine}")

    def term(x: int, which: str) -> tuple[float, str]:
        hit = zs[x]
        if hit is None:
            return 0.0, ""
        key, (zg, zc, zt) = hit
        if which == "gem":
            return zg, f"gem {key} {zg:+.2f}"
        if which == "cis":
            return zc, f"cis {key} {zc:+.2f}"
        if which == "trans":
            return zt, f"trans {key} {zt:+.2f}"
        mean = (zc + zt) / 2
        return mean, f"cis/trans {key} {mean:+.2f}"

    tol = _tables.class_tolerance("olefinic")
    if missing:
        tol += _tables.tolerance_widening("missing increment")
    n_h = view.h_count[a]

    def estimate(parts: list[tuple[float, str]], n: int, site: int | None, unknown: bool) -> _Estimate:
        ppm = base + sum(v for v, _ in parts)
        text = "; ".join([f"Pascual-Meier-Simon {base:.2f}"] + [t for _, t in parts if t] + notes)
        extra = _tables.tolerance_widening("unknown double-bond geometry") if unknown else 0.0
        if unknown:
            text += "; E/Z unknown: mean of cis and trans"
        return _Estimate(ppm, n, "olefinic", tol + extra, text, site)

    if n_h == 1 and gem:
        g = gem[0]
        parts = [term(g, "gem")]
        unknown = False
        for s in across:
            rel = geometry.relation(a, b, g, s)
            if rel is None:
                unknown = True
                parts.append(term(s, "mean"))
            else:
                # the H sits opposite the gem substituent
                parts.append(term(s, "trans" if rel == "cis" else "cis"))
        return [estimate(parts, 1, None, unknown)]
    if n_h == 1:
        parts = [term(s, "mean") for s in across]
        return [estimate(parts, 1, None, bool(across))]
    # =CH2 (or H2C=CH2): one H is cis to each substituent across the bond
    if not across:
        return [estimate([], n_h, None, False)]
    if len(across) == 1:
        s = across[0]
        first = estimate([term(s, "cis")], 1, ranks[s], False)
        second = estimate([term(s, "trans")], 1, -1, False)
    else:
        s1, s2 = across[0], across[1]
        first = estimate([term(s1, "cis"), term(s2, "trans")], 1, ranks[s1], False)
        second = estimate([term(s2, "cis"), term(s1, "trans")], 1, ranks[s2], False)
    if abs(first.ppm - second.ppm) < 1e-9:
        return [_Estimate(first.ppm, 2, first.shift_class, first.tolerance_ppm, first.rule, None)]
    return [first, second]


# ============================================================================ aromatic
def _heteroaromatic_matches(view: MolView) -> dict[int, _tables.HeteroaromaticRow]:
    found: dict[int, _tables.HeteroaromaticRow] = {}
    for row in _tables.heteroaromatic_rows():
        for match in view.mol.GetSubstructMatches(row.pattern, uniquify=False):
            atom = match[row.mapped_index]
            if atom in found or not all(match[k] in view.aromatic for k in row.ring_indices):
                continue
            found[atom] = row
    return found


def _aromatic(view: MolView, i: int, hetero: dict) -> _Estimate:
    n_h = view.h_count[i]
    tol = _tables.class_tolerance("aromatic")
    if i in hetero:
        row = hetero[i]
        return _Estimate(
            row.ppm,
            n_h,
            "aromatic",
            tol + _tables.tolerance_widening("heteroaromatic base value"),
            f"heteroaromatic base value: {row.ring} H-{row.position} {row.ppm:.2f}",
        )
    ring = next(
        (r for r in view.aromatic_rings if i in r and len(r) == 6 and all(view.z[k] == 6 for k in r)),
        None,
    )
    if ring is None:
        return _class_value(
            "heteroaromatic",
            n_h,
            rule="aromatic CH in an untabulated ring",
            widen=_tables.tolerance_widening("heteroaromatic base value")
            + _tables.tolerance_widening("missing increment"),
        )
    table = _tables.benzene_increments()
    base = _tables.base_value("benzene").ppm
    members = set(ring)
    k0 = ring.index(i)
    total = base
    parts = [f"benzene {base:.2f}"]
    missing = False
    for k, r in enumerate(ring):
        if r == i:
            continue
        d = abs(k - k0)
        d = min(d, 6 - d)
        pos = ("", "ortho", "meta", "para")[d]
        for x in view.nbrs[r]:
            if x in members:
                continue
            g = perceive(view, r, x)
            hit = _lookup(table, g.keys, _BENZENE_ALIASES)
            if hit is None:
                missing = True
                parts.append(f"no increment for {pos} {g.fine}")
                continue
            v = hit[1][d - 1]
            total += v
            parts.append(f"{pos} {hit[0]} {v:+.2f}")
    if missing:
        tol += _tables.tolerance_widening("missing increment")
    return _Estimate(total, n_h, "aromatic", tol, "; ".join(parts))


# ============================================================================ class values
def _aldehyde(view: MolView, i: int, oxo: int) -> _Estimate:
    n_h = view.h_count[i]
    others = [j for j in view.nbrs[i] if j != oxo]
    if not others:
        return _class_value("formaldehyde", n_h, rule="formaldehyde")
    x = others[0]
    if view.z[x] == 8:
        return _class_value("formate", n_h, rule="formyl H of a formate or formic acid")
    if view.z[x] == 7:
        return _class_value("formamide", n_h, rule="formyl H of a formamide")
    if x in view.aromatic:
        return _class_value("aldehyde aromatic", n_h, rule="aromatic aldehyde")
    if view.z[x] == 6 and (view.multiple_partners(x, 2.0) or view.multiple_partners(x, 3.0)):
        return _class_value("aldehyde unsaturated", n_h, rule="alpha,beta-unsaturated aldehyde")
    return _class_value("aldehyde aliphatic", n_h, rule="aliphatic aldehyde")


def _alkyne(view: MolView, i: int) -> _Estimate:
    n_h = view.h_count[i]
    partner = view.multiple_partners(i, 3.0)[0]
    beyond = [j for j in view.nbrs[partner] if j != i]
    if not beyond:
        return _class_value("alkyne", n_h, rule="terminal alkyne")
    y = beyond[0]
    if y in view.aromatic:
        return _class_value("alkyne aryl", n_h, rule="aryl alkyne")
    if view.is_carbonyl_carbon(y):
        return _class_value("alkyne carbonyl", n_h, rule="alkynyl carbonyl")
    if view.is_unsaturated(y):
        return _class_value("alkyne conjugated", n_h, rule="conjugated alkyne")
    if view.z[y] == 6 and any(view.z[j] in HETERO for j in view.nbrs[y]):
        return _class_value("alkyne propargylic heteroatom", n_h, rule="propargylic heteroatom alkyne")
    return _class_value("alkyne", n_h, rule="alkyl alkyne")


def _exchangeable(view: MolView, i: int, env: int) -> PredictedShift:
    h_class = exchange_class(view, i)
    ec = _tables.exchangeable_classes()[h_class]
    mid = (ec.low_ppm + ec.high_ppm) / 2
    return PredictedShift(
        atom_index=i,
        n_h=view.h_count[i],
        ppm=round(mid, 4),
        shift_class="exchangeable",
        tolerance_ppm=round((ec.high_ppm - ec.low_ppm) / 2, 4),
        exchangeable=True,
        environment=env,
        rule=f"exchangeable {h_class}: usually {ec.low_ppm:g}-{ec.high_ppm:g} ppm",
        h_class=h_class,
    )
