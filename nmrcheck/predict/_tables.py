"""Typed, cached access to the packaged shift-increment and exchange tables (CSV files in ``nmrcheck/data``)."""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from nmrcheck.data import load_table
from nmrcheck.errors import TableError

__all__ = [
    "BaseValue",
    "ExchangeClass",
    "HeteroaromaticRow",
    "alkene_increments",
    "base_value",
    "base_values",
    "benzene_increments",
    "class_tolerance",
    "exchangeable_classes",
    "heteroaromatic_rows",
    "shoolery_constants",
    "sp3_increments",
    "tolerance_widening",
]


def _number(table: str, row: dict[str, str], column: str) -> float:
    text = row.get(column, "")
    try:
        return float(text)
    except ValueError:
        raise TableError(f"{table}.csv: {column}={text!r} is not a number (row {row})") from None


def _yes_no(table: str, row: dict[str, str], column: str) -> bool:
    text = row.get(column, "").lower()
    if text not in ("yes", "no"):
        raise TableError(f"{table}.csv: {column}={text!r} must be 'yes' or 'no' (row {row})")
    return text == "yes"


def _triples(table: str, key: str, columns: tuple[str, str, str]) -> dict[str, tuple[float, float, float]]:
    out: dict[str, tuple[float, float, float]] = {}
    for row in load_table(table):
        name = row[key]
        if name in out:
            raise TableError(f"{table}.csv: {key} {name!r} appears twice")
        out[name] = tuple(_number(table, row, c) for c in columns)  # type: ignore[assignment]
    return out


@lru_cache(maxsize=None)
def sp3_increments() -> dict[str, tuple[float, float, float]]:
    """Alpha, beta and gamma increments (ppm) for sp3 C-H, keyed by substituent class."""
    return _triples("sp3_increments", "substituent", ("alpha", "beta", "gamma"))


@lru_cache(maxsize=None)
def alkene_increments() -> dict[str, tuple[float, float, float]]:
    """Pascual-Meier-Simon Z(gem), Z(cis), Z(trans) (ppm), keyed by substituent class."""
    return _triples("alkene_increments", "substituent", ("z_gem", "z_cis", "z_trans"))


@lru_cache(maxsize=None)
def benzene_increments() -> dict[str, tuple[float, float, float]]:
    """Benzene Z(ortho), Z(meta), Z(para) (ppm), keyed by substituent class."""
    return _triples("benzene_increments", "substituent", ("z_ortho", "z_meta", "z_para"))


@lru_cache(maxsize=None)
def shoolery_constants() -> dict[str, float]:
    """Shoolery sigma constants (ppm), keyed by substituent class."""
    return {r["substituent"]: _number("shoolery_constants", r, "sigma") for r in load_table("shoolery_constants")}


@dataclass(frozen=True)
class BaseValue:
    """A base or class shift: where an additive rule starts, or the value for a class no rule covers."""

    key: str
    ppm: float
    shift_class: str


@lru_cache(maxsize=None)
def base_values() -> dict[str, BaseValue]:
    """Every row of ``shift_base_values.csv``, keyed by its ``key``."""
    out = {}
    for r in load_table("shift_base_values"):
        out[r["key"]] = BaseValue(r["key"], _number("shift_base_values", r, "ppm"), r["shift_class"])
    return out


def base_value(key: str) -> BaseValue:
    """One base value; a missing key is a table error, not a user error."""
    try:
        return base_values()[key]
    except KeyError:
        raise TableError(f"shift_base_values.csv: no row with key {key!r}") from None


@dataclass(frozen=True, eq=False)
class HeteroaromaticRow:
    """A parent heteroaromatic ring position: SMARTS with the H-bearing carbon mapped as ``:1``."""

    ring: str
    position: str
    smarts: str
    ppm: float
    pattern: object
    mapped_index: int
    """Index, within the pattern, of the atom mapped ``:1``."""
    ring_indices: tuple[int, ...]
    """Indices, within the pattern, of its aromatic atoms (the ring that must be truly aromatic)."""


@lru_cache(maxsize=None)
def heteroaromatic_rows() -> tuple[HeteroaromaticRow, ...]:
    """Rows of ``heteroaromatic_shifts.csv`` with their SMARTS compiled, in table order."""
    from rdkit import Chem

    rows = []
    for r in load_table("heteroaromatic_shifts"):
        pattern = Chem.MolFromSmarts(r["smarts"])
        if pattern is None:
            raise TableError(f"heteroaromatic_shifts.csv: SMARTS {r['smarts']!r} does not parse")
        mapped = [a.GetIdx() for a in pattern.GetAtoms() if a.GetAtomMapNum() == 1]
        if len(mapped) != 1:
            raise TableError(f"heteroaromatic_shifts.csv: SMARTS {r['smarts']!r} must map exactly one atom as :1")
        ring = tuple(a.GetIdx() for a in pattern.GetAtoms() if a.GetIsAromatic())
        ppm = _number("heteroaromatic_shifts", r, "ppm")
        rows.append(HeteroaromaticRow(r["ring"], r["position"], r["smarts"], ppm, pattern, mapped[0], ring))
    return tuple(rows)


@lru_cache(maxsize=None)
def _class_tolerances() -> dict[str, float]:
    return {r["shift_class"]: _number("shift_classes", r, "tolerance_ppm") for r in load_table("shift_classes")}


def class_tolerance(shift_class: str) -> float:
    """Tolerance (ppm) of a non-exchangeable shift class."""
    try:
        return _class_tolerances()[shift_class]
    except KeyError:
        raise TableError(f"shift_classes.csv: no tolerance for class {shift_class!r}") from None


@lru_cache(maxsize=None)
def _widening() -> dict[str, float]:
    rows = load_table("shift_tolerance_widening")
    return {r["condition"]: _number("shift_tolerance_widening", r, "add_ppm") for r in rows}


def tolerance_widening(condition: str) -> float:
    """Extra tolerance (ppm) for a prediction made under ``condition``."""
    try:
        return _widening()[condition]
    except KeyError:
        raise TableError(f"shift_tolerance_widening.csv: no row for {condition!r}") from None


@dataclass(frozen=True)
class ExchangeClass:
    """A class of exchangeable hydrogen with the shift window it usually occupies."""

    h_class: str
    low_ppm: float
    high_ppm: float
    fast_exchange: bool


@lru_cache(maxsize=None)
def exchangeable_classes() -> dict[str, ExchangeClass]:
    """Rows of ``exchangeable_classes.csv`` keyed by class name."""
    out = {}
    for r in load_table("exchangeable_classes"):
        low = _number("exchangeable_classes", r, "low_ppm")
        high = _number("exchangeable_classes", r, "high_ppm")
        if not low < high:
            raise TableError(f"exchangeable_classes.csv: {r['h_class']!r} has low_ppm >= high_ppm")
        out[r["h_class"]] = ExchangeClass(r["h_class"], low, high, _yes_no("exchangeable_classes", r, "fast_exchange"))
    return out
