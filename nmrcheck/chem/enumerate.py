"""Exhaustive enumeration of elemental compositions within a mass window, over per-element ranges.

Method: meet in the middle. The elements are split in two groups; every composition of the
first group (always carbon and hydrogen, plus as many others as keep the table small) is
tabulated once, sorted by mass, and cached; for each composition of the second group a
binary search finds the first-group compositions that complete it to a mass inside the
window. With carbon and hydrogen in the sorted table, the hydrogen (and carbon) count is
solved by the mass window rather than looped over. The result is exact: every composition
inside the ranges and the window, and no other (``tests/chem/test_enumerate.py`` checks it
against brute force).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from nmrcheck.chem.elements import element, hill_sort_key, known_elements
from nmrcheck.chem.formula import Formula
from nmrcheck.errors import FormulaError, ParameterError

__all__ = [
    "FormulaTable",
    "ElementRanges",
    "parse_element_ranges",
    "enumerate_formulas",
    "DEFAULT_ELEMENTS",
    "MAX_COUNT",
]

MAX_COUNT = 1000
"""Largest element count accepted in a range."""

DEFAULT_ELEMENTS = "C H N O P S"
"""Default element set (ranges from the mass and, with the golden rules, their rule 1)."""

# Size of the sorted first-group table the split aims for: large enough that few
# second-group compositions remain to be searched, small enough to sort in well under a
# second and to keep in memory for the next query.
_FIRST_GROUP_SIZE = 2_500_000
_SECOND_GROUP_CHUNK = 200_000

ElementRanges = Mapping[str, tuple[int, int | None]]
"""Element -> (minimum, maximum) count; maximum ``None``: limited only by the mass."""

_RANGE_TOKEN = re.compile(r"^([A-Z][a-z]?)(?:(\d+)-(\d+))?$")


@dataclass(frozen=True, eq=False)
class FormulaTable:
    """Compositions as a count matrix: one row per formula, one column per element.

    Attributes
    ----------
    elements : tuple of str
        Column symbols, Hill order.
    counts : numpy.ndarray, shape (n, len(elements)), int32
    masses : numpy.ndarray, shape (n,), float64
        Monoisotopic masses, u.
    """

    elements: tuple[str, ...]
    counts: np.ndarray
    masses: np.ndarray

    def __len__(self) -> int:
        return int(self.masses.shape[0])

    def column(self, symbol: str) -> np.ndarray:
        """Counts of ``symbol`` (zeros if it is not a column)."""
        if symbol in self.elements:
            return self.counts[:, self.elements.index(symbol)]
        return np.zeros(len(self), dtype=np.int32)

    def formula(self, i: int) -> Formula:
        """Row ``i`` as a :class:`Formula`."""
        return Formula({s: int(n) for s, n in zip(self.elements, self.counts[i])})

    def formulas(self) -> tuple[Formula, ...]:
        """Every row as a :class:`Formula` (slow for large tables; for tests and reports)."""
        return tuple(self.formula(i) for i in range(len(self)))

    def take(self, index: np.ndarray) -> FormulaTable:
        """Rows selected by a boolean mask or index array."""
        return FormulaTable(self.elements, self.counts[index], self.masses[index])


def parse_element_ranges(text: str) -> dict[str, tuple[int, int | None]]:
    """Parse an element-range specification such as ``'C0-80 H0-150 N0-10 O0-40 S0-3 Cl0-2'``.

    Tokens are separated by spaces or commas. ``El`` alone means 0 up to what the mass (and
    the golden rules' element limits) allow; ``ElA-B`` means A to B atoms.

    Raises
    ------
    FormulaError
        A malformed token, an unknown element, a repeated element, or A > B; the message
        names the token.
    """
    if not isinstance(text, str) or not text.strip():
        raise FormulaError("element ranges: empty; give e.g. 'C0-80 H0-150 N0-10 O0-40'")
    out: dict[str, tuple[int, int | None]] = {}
    for token in re.split(r"[\s,]+", text.strip()):
        m = _RANGE_TOKEN.match(token)
        if m is None:
            raise FormulaError(
                f"element range {token!r}: write an element symbol, optionally with min-max, e.g. 'Cl0-2'"
            )
        symbol, low, high = m.groups()
        try:
            element(symbol)
        except FormulaError:
            raise FormulaError(
                f"element range {token!r}: unknown element {symbol!r} (known: {', '.join(known_elements())})"
            ) from None
        if symbol in out:
            raise FormulaError(f"element range {token!r}: {symbol} given twice")
        if low is None:
            out[symbol] = (0, None)
            continue
        lo, hi = int(low), int(high)
        if lo > hi:
            raise FormulaError(f"element range {token!r}: minimum {lo} is above maximum {hi}")
        if hi > MAX_COUNT:
            raise FormulaError(f"element range {token!r}: maximum {hi} is beyond {MAX_COUNT}")
        out[symbol] = (lo, hi)
    return out


def check_element_ranges(ranges: ElementRanges) -> dict[str, tuple[int, int | None]]:
    """Validate a mapping of element ranges (as :func:`parse_element_ranges` returns)."""
    if isinstance(ranges, str):
        return parse_element_ranges(ranges)
    out: dict[str, tuple[int, int | None]] = {}
    if not ranges:
        raise FormulaError("element ranges: no element given")
    for symbol, bounds in ranges.items():
        element(symbol)
        try:
            lo, hi = bounds
        except (TypeError, ValueError):
            raise FormulaError(f"element range of {symbol}: need (min, max), got {bounds!r}") from None
        if not isinstance(lo, (int, np.integer)) or lo < 0:
            raise FormulaError(f"element range of {symbol}: minimum must be a count >= 0, got {lo!r}")
        if hi is not None:
            if not isinstance(hi, (int, np.integer)) or hi < lo:
                raise FormulaError(f"element range of {symbol}: maximum {hi!r} is below minimum {lo}")
            if hi > MAX_COUNT:
                raise FormulaError(f"element range of {symbol}: maximum {hi} is beyond {MAX_COUNT}")
        out[symbol] = (int(lo), None if hi is None else int(hi))
    return out


@dataclass(frozen=True)
class Pruning:
    """Constraints the enumeration may use to skip compositions early.

    Each one must be implied by a filter applied afterwards anyway, so that pruning changes
    speed, never the result.

    Attributes
    ----------
    rdbe_nonnegative : bool
        Skip compositions whose RDBE (with the table valences) is negative.
    carbon_ratio_max : tuple of (str, float)
        Element/C ratio maxima; implies at least one carbon.
    hydrogen_carbon_min : float or None
        H/C minimum.
    """

    rdbe_nonnegative: bool = False
    carbon_ratio_max: tuple[tuple[str, float], ...] = ()
    hydrogen_carbon_min: float | None = None

    @property
    def needs_carbon(self) -> bool:
        return bool(self.carbon_ratio_max) or self.hydrogen_carbon_min is not None


def enumerate_formulas(
    low_mass: float,
    high_mass: float,
    ranges: ElementRanges | str,
    *,
    pruning: Pruning | None = None,
) -> FormulaTable:
    """Every composition with monoisotopic mass in ``[low_mass, high_mass]`` within ``ranges``.

    Parameters
    ----------
    low_mass, high_mass : float
        Mass window, u.
    ranges : mapping or str
        Element -> (min, max); max ``None`` means up to ``high_mass`` allows. A string is
        parsed by :func:`parse_element_ranges`.
    pruning : Pruning, optional
        Constraints to skip compositions early (see :class:`Pruning`); ``None``: none, the
        result is every composition in the window.

    Returns
    -------
    FormulaTable
        Sorted by mass.
    """
    ranges = check_element_ranges(ranges)
    if not (np.isfinite(low_mass) and np.isfinite(high_mass)) or low_mass > high_mass:
        raise ParameterError(f"mass window: need low <= high, got [{low_mass}, {high_mass}]")
    if high_mass <= 0:
        raise ParameterError(f"mass window: must reach positive masses, got [{low_mass}, {high_mass}]")
    cap = _mass_cap(high_mass)
    bounds = []
    for symbol in sorted(ranges, key=hill_sort_key):
        lo, hi = ranges[symbol]
        most = int(math.floor(cap / element(symbol).monoisotopic_mass + 1e-9))
        hi = most if hi is None else min(hi, most)
        if lo > hi:
            return _empty(tuple(sorted(ranges, key=hill_sort_key)))
        bounds.append((symbol, lo, hi))
    return _search(float(low_mass), float(high_mass), tuple(bounds), pruning or Pruning(), cap)


def _mass_cap(high_mass: float) -> float:
    """A round mass at or above ``high_mass``, so that cached tables serve nearby queries."""
    for cap in (100.0, 250.0, 500.0, 750.0, 1000.0, 1250.0, 1500.0, 2000.0, 2500.0, 3000.0, 4000.0):
        if high_mass <= cap:
            return cap
    return float(math.ceil(high_mass / 1000.0) * 1000.0)


def _empty(elements: tuple[str, ...]) -> FormulaTable:
    return FormulaTable(elements, np.zeros((0, len(elements)), dtype=np.int32), np.zeros(0))


def _split(bounds: tuple[tuple[str, int, int], ...]) -> tuple[tuple[int, ...], tuple[int, ...]]:
    """Column indices of the tabulated (first) and searched (second) element groups."""
    sizes = [hi - lo + 1 for _, lo, hi in bounds]
    symbols = [s for s, _, _ in bounds]
    first = [i for i, s in enumerate(symbols) if s in ("C", "H")]
    rest = sorted((i for i in range(len(bounds)) if i not in first), key=lambda i: -sizes[i])
    size = math.prod(sizes[i] for i in first) if first else 1
    if not first and rest:
        first.append(rest.pop(0))
        size = sizes[first[0]]
    while rest and size * sizes[rest[0]] <= _FIRST_GROUP_SIZE:
        i = rest.pop(0)
        first.append(i)
        size *= sizes[i]
    return tuple(sorted(first)), tuple(sorted(rest))


def _other_side_rdbe_max(bounds, columns) -> float:
    """Largest sum of n*(v-2) the given columns can contribute."""
    total = 0.0
    for i in columns:
        symbol, lo, hi = bounds[i]
        w = element(symbol).valence - 2
        total += max(lo * w, hi * w)
    return total


@lru_cache(maxsize=16)
def _group_table(bounds, columns, other, pruning: Pruning, cap: float):
    """All compositions of the ``columns`` group, pruned, sorted by mass (cached)."""
    grids = [np.arange(bounds[i][1], bounds[i][2] + 1, dtype=np.int32) for i in columns]
    masses_el = np.array([element(bounds[i][0]).monoisotopic_mass for i in columns])
    if grids:
        mesh = np.meshgrid(*grids, indexing="ij")
        counts = np.stack([g.ravel() for g in mesh], axis=1)
    else:
        counts = np.zeros((1, 0), dtype=np.int32)
    mass = counts @ masses_el if columns else np.zeros(1)
    keep = mass <= cap + 1e-6
    symbols = [bounds[i][0] for i in columns]
    if pruning.rdbe_nonnegative:
        w = np.array([element(s).valence - 2 for s in symbols], dtype=np.int64)
        part = counts @ w if columns else np.zeros(1)
        keep &= part + _other_side_rdbe_max(bounds, other) >= -2
    if "C" in symbols:
        c = counts[:, symbols.index("C")]
        if pruning.needs_carbon:
            keep &= c >= 1
        for symbol, rmax in pruning.carbon_ratio_max:
            if symbol in symbols:
                keep &= counts[:, symbols.index(symbol)] <= rmax * c + 1e-9
        if pruning.hydrogen_carbon_min is not None and "H" in symbols:
            keep &= counts[:, symbols.index("H")] >= pruning.hydrogen_carbon_min * c - 1e-9
    counts = counts[keep]
    mass = mass[keep]
    order = np.argsort(mass, kind="stable")
    counts = np.ascontiguousarray(counts[order])
    mass = np.ascontiguousarray(mass[order])
    # Cached and shared between queries: nobody may write into them.
    counts.setflags(write=False)
    mass.setflags(write=False)
    return counts, mass


def _search(low, high, bounds, pruning: Pruning, cap: float) -> FormulaTable:
    symbols = tuple(s for s, _, _ in bounds)
    first, second = _split(bounds)
    a_counts, a_mass = _group_table(bounds, first, second, pruning, cap)
    b_counts, b_mass = _group_table(bounds, second, first, pruning, cap)
    if a_mass.size == 0 or b_mass.size == 0:
        return _empty(symbols)
    # Second-group compositions that some first-group one can complete into the window.
    b_lo = np.searchsorted(b_mass, low - a_mass[-1] - 1e-9, side="left")
    b_hi = np.searchsorted(b_mass, high - a_mass[0] + 1e-9, side="right")
    b_index = np.arange(b_lo, b_hi)
    if pruning.needs_carbon and "C" in [symbols[i] for i in first] and b_index.size:
        # Ratio maxima with carbon in the other group: the carbon they need adds mass.
        second_symbols = [symbols[i] for i in second]
        c_min = np.ones(b_index.size)
        for symbol, rmax in pruning.carbon_ratio_max:
            if symbol in second_symbols and rmax > 0:
                c_min = np.maximum(c_min, np.ceil(b_counts[b_index, second_symbols.index(symbol)] / rmax - 1e-9))
        b_index = b_index[b_mass[b_index] + c_min * element("C").monoisotopic_mass <= high + 1e-9]
    pieces_a, pieces_b = [], []
    for start in range(0, b_index.size, _SECOND_GROUP_CHUNK):
        chunk = b_index[start : start + _SECOND_GROUP_CHUNK]
        mb = b_mass[chunk]
        lo_i = np.searchsorted(a_mass, low - mb - 1e-9, side="left")
        hi_i = np.searchsorted(a_mass, high - mb + 1e-9, side="right")
        n = hi_i - lo_i
        hit = n > 0
        if not hit.any():
            continue
        chunk, lo_i, n = chunk[hit], lo_i[hit], n[hit]
        total = int(n.sum())
        rep_b = np.repeat(chunk, n)
        # a index runs lo_i[j] .. lo_i[j]+n[j]-1 for each b chunk entry j.
        offsets = np.arange(total) - np.repeat(np.cumsum(n) - n, n)
        rep_a = np.repeat(lo_i, n) + offsets
        pieces_a.append(rep_a)
        pieces_b.append(rep_b)
    if not pieces_a:
        return _empty(symbols)
    ia = np.concatenate(pieces_a)
    ib = np.concatenate(pieces_b)
    counts = np.zeros((ia.size, len(symbols)), dtype=np.int32)
    counts[:, list(first)] = a_counts[ia]
    if second:
        counts[:, list(second)] = b_counts[ib]
    masses = counts @ np.array([element(s).monoisotopic_mass for s in symbols])
    inside = (masses >= low) & (masses <= high)
    counts, masses = counts[inside], masses[inside]
    order = np.argsort(masses, kind="stable")
    return FormulaTable(symbols, counts[order], masses[order])
