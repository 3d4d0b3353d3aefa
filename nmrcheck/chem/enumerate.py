"""Exhaustive enumeration of elemental compositions within a mass window, over per-element ranges.

Method: meet in the middle. The elements are split in two groups; every composition of the
first group (always carbon and hydrogen, plus as many others as keep the table below a few
million rows) is tabulated once, sorted by mass, binned by mass (one bin per part per
million of the mass range, each bin's first row kept), and cached; for each composition of
the second group a lookup in the bins finds the first-group compositions that complete it
to a mass inside the window. With carbon and hydrogen in the sorted table, the hydrogen (and
carbon) count is solved by the mass window rather than looped over. A proton bound restricts
the first group to its rows with enough hydrogens before pairing. The result is exact: every
composition inside the ranges and the window, and no other (``tests/chem/test_enumerate.py``
checks it against brute force).
"""

from __future__ import annotations

import hashlib
import math
import re
import time
from collections.abc import Mapping
from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np

from nmrcheck.chem.elements import element, hill_sort_key, known_elements
from nmrcheck.chem.formula import Formula
from nmrcheck.errors import FormulaError, ParameterError

__all__ = [
    "FormulaTable",
    "ElementRanges",
    "parse_element_ranges",
    "check_element_ranges",
    "enumerate_formulas",
    "Pruning",
    "DEFAULT_ELEMENTS",
    "MAX_COUNT",
]

MAX_COUNT = 1000
"""Largest element count accepted in a range."""

DEFAULT_ELEMENTS = "C H N O P S"
"""Default element set (ranges from the mass and, with the golden rules, their rule 1)."""

# Size of the sorted first-group table the split aims for: large enough that few
# second-group compositions remain to be searched (a query's work grows with them), small
# enough to build in about a second (then read from the disk cache in a tenth of that) and to
# keep in memory for the next query.
_FIRST_GROUP_SIZE = 2_500_000
_SECOND_GROUP_TARGET = 20_000
_SECOND_GROUP_CHUNK = 200_000
_MAX_ROWS = 40_000_000

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
    even_valence : bool
        Skip compositions whose sum of valences is odd (no closed-shell neutral).
    probability_groups : tuple of (int, tuple of (str, int))
        Element-probability groups: when every element of a group occurs more than the
        given number of times, each must stay below its limit.
    visible_h : (int, int, int) or None
        Proton-count bound (see the attribute).
    """

    rdbe_nonnegative: bool = False
    carbon_ratio_max: tuple[tuple[str, float], ...] = ()
    hydrogen_carbon_min: float | None = None
    even_valence: bool = False
    probability_groups: tuple[tuple[int, tuple[tuple[str, int], ...]], ...] = ()
    visible_h: tuple[int, int, int] | None = None
    """(low, high, offset): skip compositions whose H + offset hydrogens cannot show between
    low and high protons when any of their exchangeable H (one per O and S, two per N) may
    be hidden."""

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
        In no particular order.
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


def _table_pruning(pruning: Pruning) -> Pruning:
    """The part of ``pruning`` the cached group tables depend on (the proton bound changes per query)."""
    return replace(pruning, visible_h=None) if pruning.visible_h is not None else pruning


def _mass_cap(high_mass: float) -> float:
    """A round mass at or above ``high_mass``, so that cached tables serve nearby queries."""
    for cap in (100.0, 250.0, 500.0, 750.0, 1000.0, 1250.0, 1500.0, 2000.0, 2500.0, 3000.0, 4000.0):
        if high_mass <= cap:
            return cap
    return float(math.ceil(high_mass / 1000.0) * 1000.0)


def _empty(elements: tuple[str, ...]) -> FormulaTable:
    return FormulaTable(elements, np.zeros((0, len(elements)), dtype=np.int32), np.zeros(0))


def _cross(counts: np.ndarray, lo: int, hi: int) -> np.ndarray:
    """Every row of ``counts`` extended by every count ``lo..hi`` of one more element."""
    values = np.arange(lo, hi + 1, dtype=np.int16)
    left = np.repeat(counts, values.size, axis=0)
    right = np.tile(values, counts.shape[0])[:, None]
    return np.concatenate([left, right], axis=1)


def _prune(counts, symbols, bounds_rest, pruning: Pruning, cap: float) -> np.ndarray:
    """Rows of a partial composition (columns ``symbols``) that can still be completed.

    ``bounds_rest`` are the (symbol, lo, hi) of the elements not yet in ``counts``: they
    give the best case the rest of the composition can reach.
    """
    keep = np.ones(counts.shape[0], dtype=bool)
    if not counts.shape[1]:
        return keep
    mass = counts @ np.array([element(s).monoisotopic_mass for s in symbols])
    rest_min_mass = sum(lo * element(s).monoisotopic_mass for s, lo, _ in bounds_rest)
    keep &= mass + rest_min_mass <= cap + 1e-6
    if pruning.rdbe_nonnegative:
        w = np.array([element(s).valence - 2 for s in symbols], dtype=np.int64)
        best_rest = sum(max(lo * (element(s).valence - 2), hi * (element(s).valence - 2)) for s, lo, hi in bounds_rest)
        keep &= counts.astype(np.int64) @ w + best_rest >= -2
    if "C" in symbols:
        c = counts[:, symbols.index("C")].astype(np.float64)
        if pruning.needs_carbon:
            keep &= c >= 1
        for symbol, rmax in pruning.carbon_ratio_max:
            if symbol in symbols:
                keep &= counts[:, symbols.index(symbol)] <= rmax * c + 1e-9
        if pruning.hydrogen_carbon_min is not None and "H" in symbols:
            keep &= counts[:, symbols.index("H")] >= pruning.hydrogen_carbon_min * c - 1e-9
    for group_more_than, group_limits in pruning.probability_groups:
        if not all(s in symbols for s, _ in group_limits):
            continue
        applies = np.ones(counts.shape[0], dtype=bool)
        within = np.ones(counts.shape[0], dtype=bool)
        for s, below in group_limits:
            x = counts[:, symbols.index(s)]
            applies &= x > group_more_than
            within &= x < below
        keep &= ~applies | within
    return keep


@dataclass(frozen=True, eq=False)
class _Bins:
    """Where each mass bin starts in one parity segment of a group: a lookup in constant time.

    Row ``i`` of the segment lies in bin ``floor((mass_i - origin) * per_u)``; rows of bin k
    are ``[start[k], start[k+1])``. Keys are binned by the same arithmetic, which is monotone,
    so every row with a mass in ``[x, y]`` lies in the bins of ``x`` to ``y``.
    """

    origin: float
    per_u: float
    start: np.ndarray  # int32, one more entry than bins

    def rows(self, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """First and one-past-last segment rows that can have a mass in ``[x, y]`` (a superset, by whole bins)."""
        last = self.start.size - 1
        # Truncation equals the rows' floor for keys at or above the origin; keys below it
        # are clipped to the first bin either way.
        lo = ((x - self.origin) * self.per_u).astype(np.intp)
        hi = ((y - self.origin) * self.per_u).astype(np.intp)
        hi += 1
        np.clip(lo, 0, last, out=lo)
        np.clip(hi, 0, last, out=hi)
        return self.start[lo], self.start[hi]


# Bins of one part per million of the mass cap: a few per mass window at any tolerance this
# engine accepts, and a million int32 entries (4 MB) at most per segment; a small table gets
# about four bins per row instead (wider bins, each still holding few rows).
_BINS_PER_CAP = 1_000_000


def _bins(masses: np.ndarray, cap: float) -> _Bins:
    per_u = max(1024, min(_BINS_PER_CAP, 4 * masses.size)) / cap
    if masses.size == 0:
        return _Bins(0.0, per_u, np.zeros(1, dtype=np.int32))
    origin = float(masses[0])
    row_bin = ((masses - origin) * per_u).astype(np.intp)
    n_bins = int(row_bin[-1]) + 1
    start = np.searchsorted(row_bin, np.arange(n_bins + 1), side="left").astype(np.int32)
    start.setflags(write=False)
    return _Bins(origin, per_u, start)


@dataclass(frozen=True, eq=False)
class _Group:
    """Compositions of a group of elements, sorted by (valence parity, mass)."""

    columns: tuple[int, ...]
    counts: np.ndarray
    masses: np.ndarray
    parity_start: tuple[int, int, int]  # rows [start[p], start[p+1]) have parity p
    weights: np.ndarray  # sum of (valence - 2) * count per row: 2 RDBE - 2 of the part
    bins: tuple[_Bins, _Bins] | None  # of each parity segment (the tabulated group only)
    lightest_with_h: tuple[np.ndarray, np.ndarray] | None
    """Per parity segment, the smallest mass of a row with at least h hydrogens, by h (inf
    beyond the largest count); None when hydrogen is not in the group."""
    least_complete: np.ndarray | None
    """Searched group: mass of each row plus the carbon its element/C ratio maxima need."""


def _sorted_group(columns, counts, bounds, cap, indexed, pruning) -> _Group:
    symbols = [bounds[i][0] for i in columns]
    masses = counts @ np.array([element(s).monoisotopic_mass for s in symbols]) if columns else np.zeros(counts.shape[0])
    odd = np.array([(element(s).valence - 2) % 2 for s in symbols], dtype=np.int64)
    parity = (counts.astype(np.int64) @ odd) % 2 if columns else np.zeros(counts.shape[0], dtype=np.int64)
    order = np.lexsort((masses, parity))
    counts = np.ascontiguousarray(counts[order])
    n_even = int(np.count_nonzero(parity == 0))
    return _group_of_sorted(tuple(columns), counts, bounds, (0, n_even, counts.shape[0]), cap, indexed, pruning)


def _group_of_sorted(columns, counts, bounds, parity_start, cap, indexed, pruning: Pruning) -> _Group:
    """A group from counts already sorted by (parity, mass); masses and weights recomputed exactly as when sorting.

    ``indexed``: the group is the tabulated one, looked up by mass (bins and lightest masses by H count).
    """
    symbols = [bounds[i][0] for i in columns]
    masses = counts @ np.array([element(s).monoisotopic_mass for s in symbols]) if columns else np.zeros(counts.shape[0])
    masses = np.ascontiguousarray(masses)
    valence = np.array([element(s).valence - 2 for s in symbols], dtype=np.int32)
    weights = counts.astype(np.int32) @ valence if columns else np.zeros(counts.shape[0], dtype=np.int32)
    # Cached and shared between queries: nobody may write into them.
    for array in (counts, masses, weights):
        array.setflags(write=False)
    segments = [slice(parity_start[p], parity_start[p + 1]) for p in (0, 1)]
    bins = tuple(_bins(masses[seg], cap) for seg in segments) if indexed else None
    lightest = None
    if indexed and "H" in symbols:
        h = counts[:, symbols.index("H")].astype(np.intp)
        lightest = []
        for seg in segments:
            least = np.full(int(h.max(initial=0)) + 2, np.inf)
            np.minimum.at(least, h[seg], masses[seg])
            least = np.minimum.accumulate(least[::-1])[::-1]
            least.setflags(write=False)
            lightest.append(least)
        lightest = tuple(lightest)
    least = None
    if not indexed and pruning.needs_carbon and any(s == "C" for s, _, _ in bounds) and "C" not in symbols:
        c_min = np.ones(counts.shape[0])
        for symbol, rmax in pruning.carbon_ratio_max:
            if symbol in symbols and rmax > 0:
                c_min = np.maximum(c_min, np.ceil(counts[:, symbols.index(symbol)] / rmax - 1e-9))
        least = masses + c_min * element("C").monoisotopic_mass
        least.setflags(write=False)
    return _Group(tuple(columns), counts, masses, tuple(parity_start), weights, bins, lightest, least)


_TABLE_FORMAT = "3"
_SAVE_AFTER_S = 0.1  # tables that build faster than this are not worth a file


# A few tens of MB each: enough entries for the mass ranges of a plate, not more.
@lru_cache(maxsize=8)
def _groups(bounds, pruning: Pruning, cap: float) -> tuple[_Group, _Group]:
    """The sorted group tables: from memory, else from the user's disk cache, else built (and cached on disk).

    Building the tables of a large mass range takes about a second; loading them a tenth of
    that. The cache file is named by a hash of everything the tables depend on (element
    ranges and masses, pruning, mass cap, file format), written to a temporary file and
    moved into place, and rebuilt whenever it cannot be read.
    """
    folder = _table_cache()
    path = None
    if folder is not None:
        masses = tuple(element(s).monoisotopic_mass for s, _, _ in bounds)
        key = repr((_TABLE_FORMAT, bounds, masses, pruning, cap, _FIRST_GROUP_SIZE, _SECOND_GROUP_TARGET))
        path = folder / f"{hashlib.sha256(key.encode()).hexdigest()[:24]}.npz"
        loaded = _load_groups(path, bounds, cap, pruning)
        if loaded is not None:
            return loaded
    started = time.perf_counter()
    groups = _build_groups(bounds, pruning, cap)
    if path is not None and time.perf_counter() - started > _SAVE_AFTER_S:
        _save_groups(path, groups)
    return groups


def _table_cache():
    from nmrcheck.cache import user_cache_dir

    return user_cache_dir("formula-tables")


def _load_groups(path, bounds, cap, pruning) -> tuple[_Group, _Group] | None:
    try:
        with np.load(path) as data:
            out = []
            for g, indexed in (("a", True), ("b", False)):
                columns = tuple(int(c) for c in data[f"{g}_columns"])
                counts = np.ascontiguousarray(data[f"{g}_counts"])
                parity = tuple(int(x) for x in data[f"{g}_parity"])
                if counts.ndim != 2 or counts.shape[1] != len(columns) or parity[2] != counts.shape[0]:
                    return None
                out.append(_group_of_sorted(columns, counts, bounds, parity, cap, indexed, pruning))
            return out[0], out[1]
    except (OSError, KeyError, ValueError, EOFError):
        return None


def _save_groups(path, groups) -> None:
    import os
    import tempfile

    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=path.stem, suffix=".part", dir=path.parent)
        with os.fdopen(fd, "wb") as fh:
            np.savez(fh, **{f"{g}_{k}": v for g, grp in zip("ab", groups)
                            for k, v in (("columns", np.array(grp.columns, dtype=np.int64)), ("counts", grp.counts),
                                         ("parity", np.array(grp.parity_start, dtype=np.int64)))})
        os.replace(tmp, path)
    except OSError:
        # A read-only or full disk only costs the next process the build time.
        return


def _extended_size(counts, symbols, bound, pruning: Pruning, cap: float) -> int:
    """Upper bound on the rows of ``counts`` extended by one more element, from the mass cap and
    the element's ratio to carbon (the cheap part of :func:`_prune`)."""
    symbol, lo, hi = bound
    mass = counts @ np.array([element(s).monoisotopic_mass for s in symbols]) if symbols else np.zeros(counts.shape[0])
    most = np.floor((cap + 1e-6 - mass) / element(symbol).monoisotopic_mass)
    most = np.minimum(most, hi)
    if "C" in symbols:
        for s, rmax in pruning.carbon_ratio_max:
            if s == symbol:
                most = np.minimum(most, np.floor(rmax * counts[:, symbols.index("C")] + 1e-9))
    return int(np.clip(most - lo + 1, 0, None).sum())


def _build_groups(bounds, pruning: Pruning, cap: float) -> tuple[_Group, _Group]:
    """Split the elements into a tabulated and a searched group and build both (cached).

    Carbon and hydrogen go first into the tabulated group; then, widest range first, every
    other element whose addition keeps the pruned table below ``_FIRST_GROUP_SIZE`` rows
    (judged from a bound on its size before the table is built). A query's work grows with
    the searched group, so the tabulated one is filled as far as the size allows.
    """
    symbols = [s for s, _, _ in bounds]
    order = [i for i, s in enumerate(symbols) if s == "C"] + [i for i, s in enumerate(symbols) if s == "H"]
    order += sorted((i for i in range(len(bounds)) if i not in order), key=lambda i: bounds[i][1] - bounds[i][2])
    sizes = {i: bounds[i][2] - bounds[i][1] + 1 for i in range(len(bounds))}
    first: list[int] = []
    counts = np.zeros((1, 0), dtype=np.int16)
    for i in order:
        essential = symbols[i] in ("C", "H") or not first
        if not essential:
            if math.prod(sizes[j] for j in order if j not in first) <= _SECOND_GROUP_TARGET:
                break
            if _extended_size(counts, [symbols[j] for j in first], bounds[i], pruning, cap) > _FIRST_GROUP_SIZE:
                continue
        trial = _cross(counts, bounds[i][1], bounds[i][2])
        cols = first + [i]
        rest = [bounds[j] for j in range(len(bounds)) if j not in cols]
        trial = trial[_prune(trial, [symbols[j] for j in cols], rest, pruning, cap)]
        if not essential and trial.shape[0] > _FIRST_GROUP_SIZE:
            continue
        first, counts = cols, trial
    second = [i for i in order if i not in first]
    b_counts = np.zeros((1, 0), dtype=np.int16)
    done: list[int] = []
    for i in second:
        if b_counts.shape[0] * sizes[i] > _MAX_ROWS:
            raise ParameterError(
                "element ranges: the search space is too large "
                f"(over {_MAX_ROWS:,} partial compositions of {', '.join(symbols[j] for j in second)}); "
                "narrow the element ranges, e.g. 'C0-200 H0-400 N0-20 O0-80 S0-4'"
            )
        b_counts = _cross(b_counts, bounds[i][1], bounds[i][2])
        done.append(i)
        rest = [bounds[j] for j in range(len(bounds)) if j not in done]
        b_counts = b_counts[_prune(b_counts, [symbols[j] for j in done], rest, pruning, cap)]
    # Columns in ascending index order, as _search expects.
    a_order = np.argsort(first)
    b_order = np.argsort(done) if done else np.zeros(0, dtype=np.int64)
    a = _sorted_group(tuple(sorted(first)), counts[:, a_order], bounds, cap, True, pruning)
    b = _sorted_group(tuple(sorted(done)), b_counts[:, b_order], bounds, cap, False, pruning)
    return a, b


_H_STEP = 8


@lru_cache(maxsize=8)
def _probability_caps(a: _Group, b: _Group, symbols: tuple[str, ...], groups):
    """Element-probability groups (golden rule 6) turned into per-searched-row caps on one
    tabulated element, where that is exact.

    A group with its elements on both sides, exactly one of them X in the tabulated group,
    allows for a searched row whose own elements do not all exceed the group's threshold any
    X; whose elements all exceed it and stay below their limits, X up to the larger of the
    threshold and its limit - 1; and otherwise X up to the threshold. A group wholly inside
    one group was applied when that group's table was built.

    Returns
    -------
    caps : tuple of (numpy.ndarray, numpy.ndarray)
        Per capped element: its counts in the tabulated rows, and the cap per searched row.
    rest : tuple
        Groups left for the pair filter (more than one element on the tabulated side).
    """
    a_symbols = [symbols[i] for i in a.columns]
    b_symbols = [symbols[i] for i in b.columns]
    caps: dict[str, np.ndarray] = {}
    rest = []
    for more_than, limits in groups:
        if not all(x in symbols for x, _ in limits):
            continue  # an absent element is never "more than" anything
        on_a = [(x, below) for x, below in limits if x in a_symbols]
        on_b = [(x, below) for x, below in limits if x in b_symbols]
        if not on_a or not on_b:
            continue
        if len(on_a) > 1:
            rest.append((more_than, limits))
            continue
        (x, below_x), = on_a
        applies = np.ones(b.masses.size, dtype=bool)
        within = np.ones(b.masses.size, dtype=bool)
        for y, below in on_b:
            count = b.counts[:, b_symbols.index(y)]
            applies &= count > more_than
            within &= count < below
        cap = np.where(~applies, MAX_COUNT, np.where(within, max(more_than, below_x - 1), more_than)).astype(np.int32)
        caps[x] = np.minimum(caps[x], cap) if x in caps else cap
    out = []
    for x, cap in caps.items():
        column = np.ascontiguousarray(a.counts[:, a_symbols.index(x)])
        for array in (column, cap):
            array.setflags(write=False)
        out.append((column, cap))
    return tuple(out), tuple(rest)


# Up to about 18 MB each (two int32 arrays over the tabulated group).
@lru_cache(maxsize=4)
def _rows_with_h(a: _Group, h_column: int, fewest: int) -> tuple[np.ndarray, np.ndarray]:
    """Rows of the tabulated group with at least ``fewest`` hydrogens (in table order, so by
    parity and mass), and for every row index of the group its position among them."""
    h = a.counts[:, a.columns.index(h_column)]
    enough = h >= fewest
    subset = np.flatnonzero(enough).astype(np.int32)
    position = np.zeros(h.size + 1, dtype=np.int32)
    np.cumsum(enough, out=position[1:])
    for array in (subset, position):
        array.setflags(write=False)
    return position, subset


def _search(low, high, bounds, pruning: Pruning, cap: float) -> FormulaTable:
    symbols = tuple(s for s, _, _ in bounds)
    a, b = _groups(bounds, _table_pruning(pruning), cap)
    if a.masses.size == 0 or b.masses.size == 0:
        return _empty(symbols)
    # Pairs whose summed masses lie within these bounds; the exact window is applied last, on
    # the masses of the whole compositions.
    low_key, high_key = low - 1e-9, high + 1e-9
    with_h = None
    if pruning.visible_h is not None and a.lightest_with_h is not None:
        # A proton bound needs at least low - offset hydrogens, all of them in the first group:
        # only its rows with that many (rounded down to a step, so that the subset serves
        # nearby bounds too) are paired.
        fewest = max(pruning.visible_h[0] - pruning.visible_h[2], 0)
        step = fewest // _H_STEP * _H_STEP
        if step > 0:
            with_h = _rows_with_h(a, symbols.index("H"), step)
    caps, groups_left = _probability_caps(a, b, symbols, pruning.probability_groups)
    pieces_a, pieces_b = [], []
    for b_parity in (0, 1):
        b_start, b_stop = b.parity_start[b_parity], b.parity_start[b_parity + 1]
        # With even valence sums required, a second-group part of parity p only pairs with a
        # first-group part of the same parity; otherwise with either.
        a_parities = (b_parity,) if pruning.even_valence else (0, 1)
        for a_parity in a_parities:
            a_start, a_stop = a.parity_start[a_parity], a.parity_start[a_parity + 1]
            if a_start == a_stop or b_start == b_stop:
                continue
            a_lightest = a.masses[a_start]
            if pruning.visible_h is not None and a.lightest_with_h is not None:
                fewest = min(max(pruning.visible_h[0] - pruning.visible_h[2], 0), a.lightest_with_h[a_parity].size - 1)
                a_lightest = max(a_lightest, a.lightest_with_h[a_parity][fewest])
                if not np.isfinite(a_lightest):
                    continue
            b_mass = b.masses[b_start:b_stop]
            # Second-group parts that some first-group part can complete into the window.
            lo_b = np.searchsorted(b_mass, low_key - a.masses[a_stop - 1], side="left")
            hi_b = np.searchsorted(b_mass, high_key - a_lightest, side="right")
            if b.least_complete is not None:
                # Ratio maxima for elements of the second group: the carbon they need adds mass.
                fits = b.least_complete[b_start + lo_b : b_start + hi_b] <= high_key
                b_index = np.flatnonzero(fits) + (b_start + lo_b)
            else:
                b_index = np.arange(b_start + lo_b, b_start + hi_b)
            bins = a.bins[a_parity]
            for start in range(0, b_index.size, _SECOND_GROUP_CHUNK):
                chunk = b_index[start : start + _SECOND_GROUP_CHUNK]
                mb = b.masses[chunk]
                lo_i, hi_i = bins.rows(low_key - mb, high_key - mb)
                n = hi_i - lo_i
                hit = n > 0
                if not hit.any():
                    continue
                chunk, lo_i, hi_i = chunk[hit], lo_i[hit] + a_start, hi_i[hit] + a_start
                if with_h is not None:
                    # The same rows, as positions in the subset with enough hydrogens.
                    position, subset = with_h
                    lo_i, hi_i = position[lo_i], position[hi_i]
                    n = hi_i - lo_i
                    hit = n > 0
                    if not hit.any():
                        continue
                    chunk, lo_i, n = chunk[hit], lo_i[hit], n[hit]
                else:
                    n = hi_i - lo_i
                # rows (positions) lo_i[j] .. lo_i[j]+n[j]-1 may complete second-group row chunk[j]
                ends = np.cumsum(n)
                ia = np.arange(int(ends[-1]), dtype=np.intp) + np.repeat(lo_i - (ends - n), n)
                if with_h is not None:
                    ia = subset[ia]
                ib = np.repeat(chunk, n)
                total = a.masses[ia] + b.masses[ib]
                keep = (total >= low_key) & (total <= high_key)
                if pruning.rdbe_nonnegative:
                    keep &= a.weights[ia] + b.weights[ib] >= -2
                for a_count, cap in caps:
                    keep &= a_count[ia] <= cap[ib]
                pieces_a.append(ia[keep])
                pieces_b.append(ib[keep])
    if not pieces_a:
        return _empty(symbols)
    ia = np.concatenate(pieces_a)
    ib = np.concatenate(pieces_b)
    # Filters that need the whole composition, on the index pairs before the rows are built.
    keep = _pair_filter(ia, ib, a, b, symbols, pruning, groups_left)
    if keep is not None:
        ia, ib = ia[keep], ib[keep]
    # Column-major: each element's counts are written, and later read by the rules, as one block.
    counts = np.zeros((ia.size, len(symbols)), dtype=np.int32, order="F")
    for k, j in enumerate(a.columns):
        counts[:, j] = a.counts[:, k][ia]
    for k, j in enumerate(b.columns):
        counts[:, j] = b.counts[:, k][ib]
    masses = counts @ np.array([element(s).monoisotopic_mass for s in symbols])
    inside = (masses >= low) & (masses <= high)
    return FormulaTable(symbols, counts[inside], masses[inside])


def _pair_filter(ia, ib, a: _Group, b: _Group, symbols, pruning: Pruning, groups) -> np.ndarray | None:
    """Mask of the (first-group row, second-group row) pairs that pass the whole-composition
    constraints of ``pruning`` (the element-probability groups ``groups``, proton bound); None: all."""

    gathered: dict[str, np.ndarray | None] = {}

    def column(symbol):
        if symbol not in gathered:
            if symbol not in symbols:
                gathered[symbol] = None
            else:
                j = symbols.index(symbol)
                if j in a.columns:
                    gathered[symbol] = a.counts[:, a.columns.index(j)][ia].astype(np.int32)
                else:
                    gathered[symbol] = b.counts[:, b.columns.index(j)][ib].astype(np.int32)
        return gathered[symbol]

    keep = None  # RDBE >= 0 and the capped groups are applied while the pairs are found
    for group_more_than, group_limits in groups:
        cols = [column(s) for s, _ in group_limits]
        if any(c is None for c in cols):
            continue
        applies = np.ones(ia.size, dtype=bool)
        within = np.ones(ia.size, dtype=bool)
        for x, (_, below) in zip(cols, group_limits):
            applies &= x > group_more_than
            within &= x < below
        ok = ~applies | within
        keep = ok if keep is None else keep & ok
    if pruning.visible_h is not None:
        low, high, offset = pruning.visible_h
        h = column("H")
        h = np.full(ia.size, offset, dtype=np.int32) if h is None else h + offset
        exchangeable = np.zeros(ia.size, dtype=np.int32)
        for symbol, per_atom in (("O", 1), ("N", 2), ("S", 1)):
            x = column(symbol)
            if x is not None:
                exchangeable += per_atom * x
        ok = (h >= low) & (h - exchangeable <= high)
        keep = ok if keep is None else keep & ok
    return keep
