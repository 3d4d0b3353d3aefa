"""Chemical plausibility rules for neutral formulas: RDBE, nitrogen rule and the seven golden rules.

The golden rules are those of Kind & Fiehn (BMC Bioinformatics 2007, 8:105); their limits
come from the packaged tables ``golden_rules_element_limits.csv`` (their Table 1),
``golden_rules_ratios.csv`` (Table 2) and ``golden_rules_element_probability.csv``
(Table 3). Rule 3 (isotope pattern) is scored in :mod:`nmrcheck.chem.isotopes`; rule 7
(trimethylsilyl groups) concerns derivatised GC-MS samples and is not applied.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from nmrcheck.chem.elements import element
from nmrcheck.chem.enumerate import FormulaTable, Pruning
from nmrcheck.chem.formula import Formula
from nmrcheck.data import load_table
from nmrcheck.errors import ParameterError, TableError

__all__ = [
    "RULE_NAMES",
    "RULE_PRESETS",
    "RuleReport",
    "check_rules",
    "evaluate_rules",
    "filter_rules",
    "rule_mask",
    "CHEMICAL_RULES",
    "element_count_limits",
    "ratio_limits",
    "element_probability_groups",
    "rules_of_preset",
    "ratio_range_of",
    "pruning_for",
]

RULE_NAMES = (
    "rdbe",
    "nitrogen_rule",
    "lewis_senior",
    "element_counts",
    "hc_ratio",
    "heteroatom_ratios",
    "element_probability",
    "isotope_pattern",
)
"""Every rule, in the order reported.

rdbe: whole-number, non-negative RDBE (closed-shell neutral); nitrogen_rule: nominal mass
and nitrogen count have the same parity; lewis_senior: golden rule 2; element_counts: rule 1;
hc_ratio: rule 4; heteroatom_ratios: rule 5; element_probability: rule 6; isotope_pattern:
rule 3 (only with an observed pattern).
"""

RULE_PRESETS = {
    "common": ("rdbe", "nitrogen_rule", "lewis_senior", "element_counts", "hc_ratio",
               "heteroatom_ratios", "element_probability"),
    "extended": ("rdbe", "nitrogen_rule", "lewis_senior", "element_counts", "hc_ratio",
                 "heteroatom_ratios", "element_probability"),
    "valence": ("rdbe", "nitrogen_rule", "lewis_senior"),
    "none": (),
}
"""Rules each preset uses as filters. 'common' and 'extended' differ in the ratio ranges of
rules 4 and 5 (Kind & Fiehn's 99.7 % and 99.99 % ranges). The isotope-pattern rule never
removes a candidate: it is scored and reported."""

_RATIO_RANGE = {"common": "common", "extended": "extended", "valence": "common", "none": "common"}


def ratio_range_of(preset: str) -> str:
    """Ratio ranges ('common' or 'extended') that ``preset`` evaluates rules 4 and 5 with."""
    rules_of_preset(preset)
    return _RATIO_RANGE[preset]


def rules_of_preset(preset: str) -> tuple[str, ...]:
    """Filter rules of ``preset``; :class:`ParameterError` for an unknown preset."""
    try:
        return RULE_PRESETS[preset]
    except (KeyError, TypeError):
        raise ParameterError(
            f"rules: unknown preset {preset!r}; choose one of {', '.join(RULE_PRESETS)}"
        ) from None


@lru_cache(maxsize=None)
def element_count_limits() -> tuple[tuple[float, dict[str, int]], ...]:
    """Rule 1 limits: ``(mass_below, {element: max count})``, the higher of DNP and Wiley."""
    by_mass: dict[float, dict[str, int]] = {}
    for row in load_table("golden_rules_element_limits"):
        limits = by_mass.setdefault(float(row["mass_below"]), {})
        for symbol, value in row.items():
            if symbol in ("mass_below", "library", "source") or value == "":
                continue
            try:
                limits[symbol] = max(limits.get(symbol, 0), int(value))
            except ValueError:
                raise TableError(f"golden_rules_element_limits.csv: bad count {value!r} for {symbol}") from None
    return tuple(sorted(by_mass.items()))


def element_limits_for_mass(mass: float) -> dict[str, int]:
    """Rule 1 limits for a neutral mass (empty above the table's last range)."""
    for mass_below, limits in element_count_limits():
        if mass < mass_below:
            return dict(limits)
    return {}


@lru_cache(maxsize=None)
def ratio_limits(range_name: str = "common") -> dict[str, tuple[float, float]]:
    """Rules 4 and 5: element -> (min, max) ratio to carbon, for 'common' or 'extended'."""
    if range_name not in ("common", "extended"):
        raise ParameterError(f"ratio range: 'common' or 'extended', got {range_name!r}")
    return {
        row["element"]: (float(row[f"{range_name}_min"]), float(row[f"{range_name}_max"]))
        for row in load_table("golden_rules_ratios")
    }


@lru_cache(maxsize=None)
def element_probability_groups() -> tuple[tuple[str, int, dict[str, int]], ...]:
    """Rule 6: ``(group, more_than, {element: count must stay below})``."""
    out = []
    for row in load_table("golden_rules_element_probability"):
        limits = {s: int(row[s]) for s in ("N", "O", "P", "S") if row[s] != ""}
        out.append((row["group"], int(row["more_than"]), limits))
    return tuple(out)


def pruning_for(preset: str) -> Pruning:
    """Enumeration shortcuts implied by the filters of ``preset`` (they never change the result)."""
    rules = rules_of_preset(preset)
    ratio_max: tuple[tuple[str, float], ...] = ()
    hc_min = None
    if "heteroatom_ratios" in rules:
        limits = ratio_limits(_RATIO_RANGE[preset])
        ratio_max = tuple((s, hi) for s, (lo, hi) in limits.items() if s != "H")
    if "hc_ratio" in rules:
        lo, hi = ratio_limits(_RATIO_RANGE[preset])["H"]
        ratio_max = ratio_max + (("H", hi),)
        hc_min = lo
    groups: tuple = ()
    if "element_probability" in rules:
        groups = tuple((more, tuple(limits.items())) for _, more, limits in element_probability_groups())
    return Pruning(
        rdbe_nonnegative="rdbe" in rules or "lewis_senior" in rules,
        carbon_ratio_max=ratio_max,
        hydrogen_carbon_min=hc_min,
        even_valence="rdbe" in rules or "lewis_senior" in rules,
        probability_groups=groups,
    )


CHEMICAL_RULES = RULE_NAMES[:-1]
"""Rules decided by the formula alone (all but ``isotope_pattern``)."""


def _valence_vector(table: FormulaTable) -> np.ndarray:
    return np.array([element(s).valence for s in table.elements], dtype=np.int64)


def _weighted_sum(table: FormulaTable, weights) -> np.ndarray:
    """Sum over the columns of count * weight, column by column (integer products without a matrix copy)."""
    # int32: counts are at most MAX_COUNT (1000) per element, weights a few hundred at most.
    total = np.zeros(len(table), dtype=np.int32)
    for j, w in enumerate(weights):
        if w == 1:
            total += table.counts[:, j]
        elif w:
            total += table.counts[:, j] * np.int32(w)
    return total


def _rule_rdbe(table: FormulaTable, ratio_range: str) -> np.ndarray:
    weight = _weighted_sum(table, _valence_vector(table) - 2)  # 2*RDBE - 2
    return (weight % 2 == 0) & (weight >= -2)


def _rule_nitrogen(table: FormulaTable, ratio_range: str) -> np.ndarray:
    nominal = _weighted_sum(table, [element(s).nominal_mass for s in table.elements])
    return (nominal % 2) == (table.column("N") % 2)


def _rule_lewis_senior(table: FormulaTable, ratio_range: str) -> np.ndarray:
    valence = _valence_vector(table)
    valence_sum = _weighted_sum(table, valence)
    atoms = _weighted_sum(table, [1] * len(valence))
    max_valence = np.zeros(len(table), dtype=np.int32)
    for j, v in enumerate(valence):
        np.maximum(max_valence, (table.counts[:, j] > 0) * np.int32(v), out=max_valence)
    # SENIOR: (i) even sum of valences (LEWIS parity), (ii) at least twice the largest
    # valence, (iii) at least twice the number of atoms minus one.
    return (valence_sum % 2 == 0) & (valence_sum >= 2 * max_valence) & (valence_sum >= 2 * (atoms - 1))


def _rule_element_counts(table: FormulaTable, ratio_range: str) -> np.ndarray:
    ok = np.ones(len(table), dtype=bool)
    masses = table.masses
    last_bound = 0.0
    for mass_below, limits in element_count_limits():
        in_bin = (masses >= last_bound) & (masses < mass_below)
        last_bound = mass_below
        if not in_bin.any():
            continue
        for symbol, most in limits.items():
            if symbol in table.elements:
                ok &= ~in_bin | (table.column(symbol) <= most)
    return ok


def _rule_hc_ratio(table: FormulaTable, ratio_range: str) -> np.ndarray:
    carbon = table.column("C").astype(np.float64)
    lo, hi = ratio_limits(ratio_range)["H"]
    h = table.column("H")
    return (carbon >= 1) & (h >= lo * carbon - 1e-9) & (h <= hi * carbon + 1e-9)


def _rule_heteroatom_ratios(table: FormulaTable, ratio_range: str) -> np.ndarray:
    carbon = table.column("C").astype(np.float64)
    ok = carbon >= 1
    for symbol, (lo, hi) in ratio_limits(ratio_range).items():
        if symbol == "H" or symbol not in table.elements:
            continue
        x = table.column(symbol)
        ok &= (x >= lo * carbon - 1e-9) & (x <= hi * carbon + 1e-9)
    return ok


def _rule_element_probability(table: FormulaTable, ratio_range: str) -> np.ndarray:
    n = len(table)
    ok = np.ones(n, dtype=bool)
    for _group, more_than, group_limits in element_probability_groups():
        if not all(s in table.elements for s in group_limits):
            continue  # an absent element is never "more than" anything
        applies = np.ones(n, dtype=bool)
        within = np.ones(n, dtype=bool)
        for symbol, below in group_limits.items():
            x = table.column(symbol)
            applies &= x > more_than
            within &= x < below
        ok &= ~applies | within
    return ok


_RULES = {
    "rdbe": _rule_rdbe,
    "nitrogen_rule": _rule_nitrogen,
    "lewis_senior": _rule_lewis_senior,
    "element_counts": _rule_element_counts,
    "hc_ratio": _rule_hc_ratio,
    "heteroatom_ratios": _rule_heteroatom_ratios,
    "element_probability": _rule_element_probability,
}


def evaluate_rules(
    table: FormulaTable, *, ratio_range: str = "common", rules: tuple[str, ...] = CHEMICAL_RULES
) -> dict[str, np.ndarray]:
    """Pass (True) / fail of chemical rules for every row of ``table``.

    Parameters
    ----------
    table : FormulaTable
    ratio_range : {'common', 'extended'}
        Ranges of the ratio rules (4 and 5).
    rules : tuple of str
        Rules to evaluate (default: all but ``isotope_pattern``).

    Returns
    -------
    dict
        Rule name -> boolean array. Formulas without carbon fail the ratio rules (ratios to
        carbon are undefined).
    """
    ratio_limits(ratio_range)
    out = {}
    for rule in rules:
        try:
            out[rule] = _RULES[rule](table, ratio_range)
        except KeyError:
            raise ParameterError(f"rules: unknown rule {rule!r}; known: {', '.join(CHEMICAL_RULES)}") from None
    return out


def rule_mask(table: FormulaTable, rules: tuple[str, ...], *, ratio_range: str = "common") -> np.ndarray:
    """Boolean mask of the rows of ``table`` passing every rule of ``rules`` (see :func:`filter_rules`)."""
    mask = np.ones(len(table), dtype=bool)
    # Column-major counts: the rules read whole columns.
    table = FormulaTable(table.elements, np.asfortranarray(table.counts), table.masses)
    for rule in rules:
        mask &= _RULES[rule](table, ratio_range)
    return mask


def filter_rules(table: FormulaTable, rules: tuple[str, ...], *, ratio_range: str = "common") -> FormulaTable:
    """Rows of ``table`` passing every rule of ``rules`` (cheapest first, on shrinking tables)."""
    for rule in rules:
        if not len(table):
            break
        table = table.take(_RULES[rule](table, ratio_range))
    return table


@dataclass(frozen=True)
class RuleReport:
    """Which rules one formula passes and fails.

    Attributes
    ----------
    formula : Formula
    passed, failed : tuple of str
        Rule names (see :data:`RULE_NAMES`); ``isotope_pattern`` is in neither (no pattern).
    ratio_range : str
        'common' or 'extended': the ranges the ratio rules used.
    """

    formula: Formula
    passed: tuple[str, ...]
    failed: tuple[str, ...]
    ratio_range: str

    def passes(self, preset: str = "common") -> bool:
        """True if no rule of ``preset`` failed."""
        return not set(self.failed) & set(rules_of_preset(preset))


def check_rules(formula: Formula, *, rules: str = "common") -> RuleReport:
    """Evaluate every chemical rule for one neutral formula.

    Parameters
    ----------
    formula : Formula
    rules : str
        Preset whose ratio ranges apply: 'common' or 'extended' (the others use 'common').
    """
    rules_of_preset(rules)
    symbols = formula.elements or ("C",)
    table = FormulaTable(
        symbols,
        np.array([[formula.count(s) for s in symbols]], dtype=np.int32),
        np.array([formula.monoisotopic_mass]),
    )
    result = evaluate_rules(table, ratio_range=_RATIO_RANGE[rules])
    passed = tuple(r for r in RULE_NAMES if r in result and bool(result[r][0]))
    failed = tuple(r for r in RULE_NAMES if r in result and not bool(result[r][0]))
    return RuleReport(formula=formula, passed=passed, failed=failed, ratio_range=_RATIO_RANGE[rules])
