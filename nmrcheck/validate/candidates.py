"""Turn formulas, SMILES, structure files and the formula engine's output into candidates.

Every entry that cannot be used becomes a :class:`CandidateProblem` with its reason;
the others are returned and checked.
"""

from __future__ import annotations

import os
from collections.abc import Iterable

from nmrcheck.chem.formula import Formula, parse_formula
from nmrcheck.errors import FormulaError, NmrcheckError
from nmrcheck.io.structures import StructureEntry, mol_from_smiles, read_structures
from nmrcheck.validate.records import Candidate, CandidateProblem, MsFeature

__all__ = ["candidates_from_strings", "candidates_from_file", "candidates_from_entries", "candidates_from_ms", "formula_of_mol"]


def formula_of_mol(mol) -> Formula:
    """Neutral formula of an RDKit structure, implicit H included."""
    counts: dict[str, int] = {}
    for atom in mol.GetAtoms():
        counts[atom.GetSymbol()] = counts.get(atom.GetSymbol(), 0) + 1
        h = atom.GetTotalNumHs()
        if h:
            counts["H"] = counts.get("H", 0) + h
    return Formula(counts)


def _from_mol(label: str, mol, origin: str) -> Candidate | CandidateProblem:
    if sum(a.GetFormalCharge() for a in mol.GetAtoms()) != 0:
        return CandidateProblem(label, origin, "structure carries a net charge; give the neutral molecule")
    if any(a.GetNumRadicalElectrons() for a in mol.GetAtoms()):
        return CandidateProblem(label, origin, "structure has radical centres (check valences and hydrogens)")
    try:
        formula = formula_of_mol(mol)
    except FormulaError as exc:
        return CandidateProblem(label, origin, str(exc))
    return Candidate(label, formula, mol, origin)


def candidates_from_strings(formulas: Iterable[str] = (), smiles: Iterable[str] = ()) -> tuple[tuple[Candidate, ...], tuple[CandidateProblem, ...]]:
    """Candidates from formula texts (``'C10H12O'``) and SMILES; ``(candidates, problems)``.

    A SMILES may carry a name after a space (``'COc1ccc(CC=C)cc1 estragole'``).
    """
    good: list[Candidate] = []
    bad: list[CandidateProblem] = []
    for text in formulas:
        try:
            f = parse_formula(text)
        except FormulaError as exc:
            bad.append(CandidateProblem(str(text), "formula", str(exc)))
            continue
        if f.count("C") == 0 or f.count("H") == 0:
            bad.append(CandidateProblem(str(text), "formula", f"formula {text!r}: needs carbon and hydrogen to be checked against a 1H spectrum"))
            continue
        good.append(Candidate(f.hill, f, None, "formula"))
    for text in smiles:
        parts = str(text).strip().split(None, 1)
        smi = parts[0] if parts else ""
        label = parts[1] if len(parts) > 1 else smi
        mol, problem = mol_from_smiles(smi)
        item = CandidateProblem(label, "smiles", problem) if problem else _from_mol(label, mol, "smiles")
        (bad if isinstance(item, CandidateProblem) else good).append(item)
    return tuple(good), tuple(bad)


def candidates_from_entries(entries: Iterable[StructureEntry]) -> tuple[tuple[Candidate, ...], tuple[CandidateProblem, ...]]:
    """Candidates from entries read by :func:`nmrcheck.io.structures.read_structures`."""
    good: list[Candidate] = []
    bad: list[CandidateProblem] = []
    for e in entries:
        if not e.ok:
            bad.append(CandidateProblem(e.label, e.origin, e.problem or "unreadable"))
            continue
        if e.mol is not None:
            item = _from_mol(e.label, e.mol, e.origin)
            if isinstance(item, Candidate) and e.formula:
                try:
                    given = parse_formula(e.formula)
                except FormulaError as exc:
                    item = CandidateProblem(e.label, e.origin, str(exc))
                else:
                    if given != item.formula:
                        item = CandidateProblem(e.label, e.origin, f"formula column {given.hill} disagrees with the structure ({item.formula.hill})")
        else:
            try:
                f = parse_formula(e.formula or "")
                item = Candidate(e.label, f, None, e.origin)
            except FormulaError as exc:
                item = CandidateProblem(e.label, e.origin, str(exc))
        (bad if isinstance(item, CandidateProblem) else good).append(item)
    return tuple(good), tuple(bad)


def candidates_from_file(path: str | os.PathLike) -> tuple[tuple[Candidate, ...], tuple[CandidateProblem, ...]]:
    """Candidates from a SMILES, MOL, SDF or CSV file; a file that holds none is one problem."""
    try:
        entries = read_structures(path)
    except NmrcheckError as exc:
        return (), (CandidateProblem(os.fspath(path), os.fspath(path), str(exc)),)
    return candidates_from_entries(entries)


def candidates_from_ms(ms: MsFeature, *, max_candidates: int = 10, elements=None) -> tuple[Candidate, ...]:
    """Formulas the formula engine proposes for ``ms``, best first (label ``'<hill> (engine #n)'``)."""
    from nmrcheck.chem.candidates import formula_candidates

    found = formula_candidates(list(ms.ions), ppm=ms.ppm, isotopes=ms.isotopes, elements=elements, max_candidates=max_candidates)
    return tuple(Candidate(f"{c.formula.hill}", c.formula, None, f"formula engine #{c.rank}") for c in found)
