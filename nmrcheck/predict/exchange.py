"""Which hydrogens of a structure exchange with the solvent, and how many H a spectrum should show.

O-H, N-H and S-H are classed (alcohol, phenol, carboxylic acid, amide, ...); ``solvent_exchange.csv``
says for each solvent whether each class is seen (yes / maybe / no). For a bare molecular formula
the number of exchangeable H is only bounded: at most one per O and S and two per N.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from types import MappingProxyType
from typing import NamedTuple

from rdkit import Chem

from nmrcheck.data import load_table
from nmrcheck.errors import CandidateError, FormulaError, TableError
from nmrcheck.predict import _tables
from nmrcheck.predict._perceive import MolView, exchange_class
from nmrcheck.processing.solvents import known_solvents, require_solvent

__all__ = [
    "SOLVENTS",
    "ExchangeRule",
    "ExchangeableSite",
    "VisibleHydrogens",
    "exchangeable_bound",
    "exchangeable_hydrogens",
    "expected_visible_h",
    "solvent_exchange_rules",
]

_VISIBILITY = ("yes", "maybe", "no")


@dataclass(frozen=True)
class ExchangeableSite:
    """Exchangeable hydrogens on one heteroatom."""

    atom_index: int
    element: str
    n_h: int
    h_class: str
    fast_exchange: bool
    """True for classes that exchange fast at room temperature (broadened or averaged with water)."""


@dataclass(frozen=True)
class ExchangeRule:
    """Whether one class of exchangeable H is seen in one solvent, and where."""

    solvent: str
    h_class: str
    visible: str
    """'yes', 'maybe' or 'no'."""
    low_ppm: float | None
    high_ppm: float | None
    note: str
    source: str


class VisibleHydrogens(NamedTuple):
    """Hydrogens a 1H spectrum should integrate to, in a given solvent.

    For a structure every field is exact. For a bare formula the split is unknown:
    ``exchangeable_h`` is the upper bound of exchangeable H and ``carbon_bound_h`` the matching
    lower bound of non-exchangeable H (total H minus that bound).
    """

    min_h: int
    max_h: int
    carbon_bound_h: int
    """H on carbon (and on other atoms whose H do not exchange, e.g. Si, B, P)."""
    exchangeable_h: int


# ---------------------------------------------------------------------------- solvents
@lru_cache(maxsize=None)
def _rules() -> dict[str, dict[str, ExchangeRule]]:
    out: dict[str, dict[str, ExchangeRule]] = {}
    classes = _tables.exchangeable_classes()
    for row in load_table("solvent_exchange"):
        solvent, h_class, visible = row["solvent"], row["h_class"], row["visible"].lower()
        if solvent not in known_solvents():
            raise TableError(f"solvent_exchange.csv: solvent {solvent!r} is not a solvent of solvents.csv")
        if h_class not in classes:
            raise TableError(f"solvent_exchange.csv: unknown h_class {h_class!r} for {solvent}")
        if visible not in _VISIBILITY:
            raise TableError(f"solvent_exchange.csv: visible={visible!r} for {solvent}/{h_class} is not yes/maybe/no")
        try:
            low = float(row["low_ppm"]) if row["low_ppm"] else None
            high = float(row["high_ppm"]) if row["high_ppm"] else None
        except ValueError:
            raise TableError(f"solvent_exchange.csv: non-numeric shift window for {solvent}/{h_class}") from None
        if visible != "no" and (low is None or high is None or not low < high):
            raise TableError(f"solvent_exchange.csv: {solvent}/{h_class} is seen but has no valid shift window")
        rule = ExchangeRule(solvent, h_class, visible, low, high, row["note"], row["source"])
        out.setdefault(solvent, {})[h_class] = rule
    for solvent, rules in out.items():
        absent = set(classes) - set(rules)
        if absent:
            raise TableError(f"solvent_exchange.csv: {solvent} has no row for {', '.join(sorted(absent))}")
    return out


SOLVENTS: tuple[str, ...] = tuple(sorted(_rules()))
"""Canonical names of the solvents the exchange table covers."""


def _solvent(name: str) -> str:
    """Canonical name of ``name`` (the package's one solvent vocabulary), which must be one of :data:`SOLVENTS`."""
    return require_solvent(name, among=SOLVENTS)


def solvent_exchange_rules(solvent: str) -> Mapping[str, ExchangeRule]:
    """The exchange rule of every exchangeable-H class in ``solvent`` (read-only mapping by class name)."""
    return MappingProxyType(_rules()[_solvent(solvent)])


# ---------------------------------------------------------------------------- structures
def _checked(mol: object) -> Chem.Mol:
    if mol is None:
        raise CandidateError("no structure: got None (an RDKit parser returns None for a structure it cannot read)")
    if not isinstance(mol, Chem.Mol):
        raise CandidateError(f"structure must be an RDKit Mol, got {type(mol).__name__}")
    copy = Chem.Mol(mol)
    try:
        Chem.SanitizeMol(copy)
    except Exception as exc:  # RDKit raises several sanitization exception types
        raise CandidateError(f"structure is not chemically valid: {exc}") from None
    return copy


def exchangeable_hydrogens(mol: Chem.Mol) -> tuple[ExchangeableSite, ...]:
    """The exchangeable hydrogens of ``mol``: every O-H, N-H and S-H, classed.

    Raises
    ------
    CandidateError
        If ``mol`` is not a valid RDKit molecule.
    """
    mol = _checked(mol)
    view = MolView(mol)
    classes = _tables.exchangeable_classes()
    sites = []
    for atom in mol.GetAtoms():
        i = atom.GetIdx()
        if view.z[i] not in (7, 8, 16) or view.h_count[i] == 0:
            continue
        h_class = exchange_class(view, i)
        if h_class is None:
            continue
        sites.append(ExchangeableSite(i, atom.GetSymbol(), view.h_count[i], h_class, classes[h_class].fast_exchange))
    return tuple(sites)


# ---------------------------------------------------------------------------- formulas
_FORMULA = re.compile(r"([A-Z][a-z]?)(\d*)")


def _element_counts(formula: str | Mapping[str, int]) -> dict[str, int]:
    table = Chem.GetPeriodicTable()
    if isinstance(formula, Mapping):
        counts = {}
        for el, n in formula.items():
            if not isinstance(el, str) or isinstance(n, bool) or not isinstance(n, int) or n < 0:
                raise FormulaError(f"formula mapping entry {el!r}: {n!r} must map an element symbol to a count >= 0")
            counts[el] = counts.get(el, 0) + n
    else:
        text = formula.strip()
        if not text or _FORMULA.sub("", text):
            raise FormulaError(f"formula {formula!r} is not a plain element-count formula such as 'C6H12O6'")
        counts = {}
        for el, n in _FORMULA.findall(text):
            counts[el] = counts.get(el, 0) + (int(n) if n else 1)
    for el in counts:
        if el in ("D", "T"):
            continue
        try:
            if table.GetAtomicNumber(el) <= 0:
                raise ValueError
        except (RuntimeError, ValueError):
            raise FormulaError(f"formula {formula!r}: {el!r} is not an element symbol") from None
    return counts


def exchangeable_bound(formula: str | Mapping[str, int]) -> int:
    """Upper bound on the exchangeable H of a formula: min(H, 2 N + O + S).

    Each O and S carries at most one exchangeable H and each N at most two in a neutral organic
    molecule (OH, SH, NH2); P-OH and B-OH are counted through their O.
    """
    counts = _element_counts(formula)
    return min(counts.get("H", 0), 2 * counts.get("N", 0) + counts.get("O", 0) + counts.get("S", 0))


def expected_visible_h(mol_or_formula: Chem.Mol | str | Mapping[str, int], solvent: str | None) -> VisibleHydrogens:
    """How many H the 1H spectrum of a structure (or formula) should integrate to in ``solvent``.

    Parameters
    ----------
    mol_or_formula : rdkit.Chem.Mol, str or mapping
        A structure, or a molecular formula as a string ('C6H12O6') or element counts.
    solvent : str or None
        Any spelling :func:`nmrcheck.processing.solvents.normalise_solvent` accepts, of a solvent in :data:`SOLVENTS`;
        None for a solvent not known, where every exchangeable H may or may not be seen.

    Returns
    -------
    VisibleHydrogens
        ``(min_h, max_h, carbon_bound_h, exchangeable_h)``. For a structure, exchangeable H whose class
        is seen ('yes') count in both bounds, 'maybe' classes only in ``max_h``. For a formula,
        ``min_h`` assumes every possibly exchangeable H is missing and ``max_h`` that all H are seen.

    Examples
    --------
    >>> expected_visible_h("C6H12O6", "D2O")
    VisibleHydrogens(min_h=6, max_h=12, carbon_bound_h=6, exchangeable_h=6)
    """
    rules = _rules()[_solvent(solvent)] if solvent is not None else None
    if isinstance(mol_or_formula, (str, Mapping)):
        counts = _element_counts(mol_or_formula)
        total = counts.get("H", 0)
        bound = exchangeable_bound(counts)
        return VisibleHydrogens(total - bound, total, total - bound, bound)
    mol = _checked(mol_or_formula)
    view = MolView(mol)
    total = sum(view.h_count)
    sites = exchangeable_hydrogens(mol)
    exchangeable = sum(s.n_h for s in sites)
    fixed = total - exchangeable
    if rules is None:
        return VisibleHydrogens(fixed, total, fixed, exchangeable)
    seen = sum(s.n_h for s in sites if rules[s.h_class].visible == "yes")
    maybe = sum(s.n_h for s in sites if rules[s.h_class].visible == "maybe")
    return VisibleHydrogens(fixed + seen, fixed + seen + maybe, fixed, exchangeable)
