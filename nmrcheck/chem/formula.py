"""Molecular formulas: parsing, Hill notation, monoisotopic mass and ring-plus-double-bond equivalents."""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

from nmrcheck.chem.elements import hill_sort_key, element
from nmrcheck.errors import FormulaError

__all__ = ["Formula", "parse_formula", "rdbe", "formula_from_counts"]

_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)|(\()|(\))(\d*)")


@dataclass(frozen=True, eq=False)
class Formula:
    """A molecular formula: element counts (all positive; zero counts are dropped).

    Compare, hash and print as the Hill string. Build with :func:`parse_formula` or
    :func:`formula_from_counts`; ``+``, ``-`` and ``* n`` combine formulas (as for ion
    compositions).
    """

    counts: Mapping[str, int] = field(default_factory=dict)

    def __post_init__(self) -> None:
        clean = {}
        for symbol, n in dict(self.counts).items():
            element(symbol)  # raises on an unknown symbol
            if not isinstance(n, int):
                if isinstance(n, float) or not hasattr(n, "__index__"):
                    raise FormulaError(f"count of {symbol} must be a whole number, got {n!r}")
                n = int(n)
            if n < 0:
                raise FormulaError(f"count of {symbol} is negative ({n})")
            if n:
                clean[symbol] = n
        ordered = dict(sorted(clean.items(), key=lambda kv: _hill_key(kv[0], "C" in clean)))
        object.__setattr__(self, "counts", MappingProxyType(ordered))

    def count(self, symbol: str) -> int:
        """Number of atoms of ``symbol`` (0 if absent)."""
        return self.counts.get(symbol, 0)

    @property
    def elements(self) -> tuple[str, ...]:
        """Symbols present, in Hill order."""
        return tuple(self.counts)

    @property
    def hill(self) -> str:
        """Hill notation: C, H, then alphabetical (alphabetical throughout without C)."""
        return "".join(f"{s}{n if n > 1 else ''}" for s, n in self.counts.items())

    @property
    def monoisotopic_mass(self) -> float:
        """Mass of the isotopologue made of each element's most abundant isotope, u."""
        return math.fsum(n * element(s).monoisotopic_mass for s, n in self.counts.items())

    @property
    def nominal_mass(self) -> int:
        """Sum of the mass numbers of the most abundant isotopes."""
        return sum(n * element(s).nominal_mass for s, n in self.counts.items())

    @property
    def rdbe(self) -> float:
        """Ring-plus-double-bond equivalents (see :func:`rdbe`)."""
        return rdbe(self)

    def __add__(self, other: Formula) -> Formula:
        if not isinstance(other, Formula):
            return NotImplemented
        out = dict(self.counts)
        for s, n in other.counts.items():
            out[s] = out.get(s, 0) + n
        return Formula(out)

    def __sub__(self, other: Formula) -> Formula:
        if not isinstance(other, Formula):
            return NotImplemented
        out = dict(self.counts)
        for s, n in other.counts.items():
            left = out.get(s, 0) - n
            if left < 0:
                raise FormulaError(f"cannot take {other.hill} from {self.hill}: too few {s}")
            out[s] = left
        return Formula(out)

    def __mul__(self, factor: int) -> Formula:
        if not isinstance(factor, int) or factor < 0:
            return NotImplemented
        return Formula({s: n * factor for s, n in self.counts.items()})

    __rmul__ = __mul__

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Formula):
            return NotImplemented
        return dict(self.counts) == dict(other.counts)

    def __hash__(self) -> int:
        return hash(tuple(self.counts.items()))

    def __bool__(self) -> bool:
        return bool(self.counts)

    def __str__(self) -> str:
        return self.hill

    def __repr__(self) -> str:
        return f"Formula({self.hill!r})"


def _hill_key(symbol: str, has_carbon: bool) -> tuple[int, str]:
    return hill_sort_key(symbol) if has_carbon else (2, symbol)


def formula_from_counts(counts: Mapping[str, int] | Iterable[tuple[str, int]]) -> Formula:
    """A :class:`Formula` from element counts (a mapping or ``(symbol, count)`` pairs)."""
    return Formula(dict(counts))


def parse_formula(text: str) -> Formula:
    """Parse a molecular formula such as ``'C15H10O5'``, ``'CH3COO'`` or ``'(CH3)3SiCl'``.

    Elements may repeat and appear in any order; parentheses with a multiplier group atoms.
    Charges, isotope labels and hydrates (``.H2O``) are not formula syntax here.

    Raises
    ------
    FormulaError
        Malformed text, or an element the engine does not know (the message names it).

    Examples
    --------
    >>> parse_formula("C6H12O6").hill
    'C6H12O6'
    >>> parse_formula("CH3COO").hill
    'C2H3O2'
    """
    if not isinstance(text, str):
        raise FormulaError(f"formula must be text, got {text!r}")
    s = text.strip()
    if not s:
        raise FormulaError("empty formula")
    stack: list[dict[str, int]] = [{}]
    pos = 0
    while pos < len(s):
        m = _TOKEN.match(s, pos)
        if m is None:
            raise FormulaError(f"formula {text!r}: unexpected {s[pos]!r} at position {pos + 1}")
        symbol, digits, opening, closing, group_digits = m.groups()
        if symbol:
            try:
                element(symbol)
            except FormulaError:
                raise FormulaError(f"formula {text!r}: unknown element {symbol!r}") from None
            n = int(digits) if digits else 1
            stack[-1][symbol] = stack[-1].get(symbol, 0) + n
        elif opening:
            stack.append({})
        else:
            if len(stack) == 1:
                raise FormulaError(f"formula {text!r}: ')' without '('")
            group = stack.pop()
            mult = int(group_digits) if group_digits else 1
            for sym, n in group.items():
                stack[-1][sym] = stack[-1].get(sym, 0) + n * mult
        pos = m.end()
    if len(stack) != 1:
        raise FormulaError(f"formula {text!r}: '(' without ')'")
    return Formula(stack[0])


def rdbe(formula: Formula) -> float:
    """Ring-plus-double-bond equivalents, ``1 + sum(n_i * (v_i - 2)) / 2``.

    With the valences of ``valences.csv`` this is the usual
    ``C + Si - (H + X)/2 + (N + P)/2 + 1``. A whole number for a closed-shell neutral
    molecule; half-integer for an even-electron ion's composition.
    """
    return 1.0 + 0.5 * sum(n * (element(s).valence - 2) for s, n in formula.counts.items())
