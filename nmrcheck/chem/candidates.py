"""Ranked candidate molecular formulas for one high-resolution MS feature.

A feature is one or more observed m/z values, each with its ion species (the same compound
as [M+H]+ and [M+Na]+, say), optionally with the isotope intensities of the first one. The
neutral formulas whose ions fall within the mass tolerance of every m/z are enumerated
exhaustively, filtered by the chosen chemical rules, scored and ranked.

Score (a log-likelihood plus log prior, 0 at best, higher is better) = mass part + isotope
part + prior part (+ proton part with a proton bound):

* mass: ``-0.5 * zbar**4``, ``zbar`` the mean over the observed ions of error / tolerance
  (weighted as the neutral mass is). The tolerance is the accuracy the instrument is stated
  to hold, not a standard deviation: every error within it is about equally likely (a
  flat-topped exponential-power distribution of shape 2 with the tolerance as its scale,
  0.61 of its peak at the tolerance), so a formula 0.5 ppm off is not preferred to one 2.5
  ppm off on the mass alone. The ions of one feature share the spectrum's calibration
  error, so their mean is bounded by the tolerance like each one;
* isotopes: ``-0.5 * chi2`` of the observed pattern against the predicted one
  (:mod:`nmrcheck.chem.isotopes` states the error model);
* prior ('natural_products'): log prior probability that a natural product contains each
  heteroatom the formula has (``element_priors.csv``), plus the element ratios to carbon
  of golden rules 4 and 5 (Kind & Fiehn 2007, Table 2), whose 'common' range holds 99.7 %
  of the library formulas: read as mean +- 3 standard deviations of a normal distribution
  (H/C, range 0.2-3.1) or, for ranges from 0, as 3 standard deviations of a half-normal one
  (N/C, O/C, S/C, ...), each ratio adds its log density ``-0.5 * ((ratio - mean) / sd)**2``.

Each candidate's ``score_parts`` says what each part contributed.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from functools import lru_cache
from types import MappingProxyType

import numpy as np

from nmrcheck.chem._envelope import infer_heavy_elements
from nmrcheck.chem.adducts import IonSpecies, neutral_mass, parse_ion
from nmrcheck.chem.elements import element, hill_sort_key
from nmrcheck.chem.enumerate import (
    DEFAULT_ELEMENTS,
    MAX_COUNT,
    FormulaTable,
    check_element_ranges,
    enumerate_formulas,
    parse_element_ranges,
)
from nmrcheck.chem.formula import Formula
from nmrcheck.chem.isotopes import (
    ABSOLUTE_ERROR,
    RELATIVE_ERROR,
    IsotopeFit,
    agreement_limit,
    fit_isotopes,
    parse_intensities,
    pattern_matrix,
)
from nmrcheck.chem.rules import (
    RULE_NAMES,
    element_count_limits,
    evaluate_rules,
    pruning_for,
    ratio_limits,
    ratio_range_of,
    rule_mask,
    rules_of_preset,
)
from nmrcheck.data import load_table
from nmrcheck.errors import FormulaError, ParameterError, TableError
from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM

__all__ = [
    "IonMatch",
    "FormulaCandidate",
    "FormulaSearch",
    "formula_candidates",
    "formula_search",
    "MAX_PPM",
    "MAX_MDA",
    "DEFAULT_TOLERANCE_PPM",
]

log = logging.getLogger("nmrcheck")

MAX_PPM = 50.0
"""Largest ppm tolerance accepted: beyond it the data are not high-resolution."""
MAX_MDA = 50.0
"""Largest absolute tolerance accepted, mDa."""
MASS_ERROR_SHAPE = 2.0
"""Shape of the exponential-power distribution of the mass error: log density
``-0.5 * |error / tolerance| ** (2 * shape)``; 1 would be a normal distribution with the
tolerance as its standard deviation, 2 is flat across most of the tolerance."""


def _mass_log_likelihood(relative: np.ndarray) -> np.ndarray:
    """Mass part per candidate from its mean error over the tolerance (see the module docstring)."""
    return -0.5 * np.abs(relative) ** (2.0 * MASS_ERROR_SHAPE)


@dataclass(frozen=True)
class IonMatch:
    """How one observed ion fits a candidate.

    Attributes
    ----------
    ion : str
        Ion species, bracket notation.
    mz_observed, mz_calculated : float
    error_ppm : float
        (observed - calculated) / calculated * 1e6.
    error_mda : float
        observed - calculated, mDa.
    ion_formula : str
        Elemental composition of the ion, Hill notation.
    ion_rdbe : float
        RDBE of the ion's composition: half-integer for an even-electron ion.
    electrons : str
        'even' or 'odd'.
    """

    ion: str
    mz_observed: float
    mz_calculated: float
    error_ppm: float
    error_mda: float
    ion_formula: str
    ion_rdbe: float
    electrons: str


@dataclass(frozen=True)
class FormulaCandidate:
    """One candidate neutral formula for a feature.

    Attributes
    ----------
    formula : Formula
    neutral_mass : float
        Monoisotopic mass of the formula, u.
    error_ppm : float
        Mass error, ppm (observed - calculated), the tolerance-weighted mean over the ions.
    rdbe : float
        Ring-plus-double-bond equivalents of the neutral.
    score : float
        Log-likelihood, sum of ``score_parts``; higher is better.
    rank : int
        1 = best.
    rules_passed, rules_failed : tuple of str
        Rule names (:data:`nmrcheck.chem.rules.RULE_NAMES`) evaluated for this candidate.
    score_parts : Mapping[str, float]
        'mass' and, with observed isotopes, 'isotopes'.
    ions : tuple of IonMatch
        One per observed m/z.
    isotope_fit : IsotopeFit or None
    charge : int
        0 for a neutral molecule; the charge of a permanently charged molecule (``[M]+``),
        whose ``formula`` is then the ion's composition (neutral-atom basis, half-integer RDBE).
    """

    formula: Formula
    neutral_mass: float
    error_ppm: float
    rdbe: float
    score: float
    rank: int
    rules_passed: tuple[str, ...]
    rules_failed: tuple[str, ...]
    score_parts: Mapping[str, float] = field(default_factory=dict)
    ions: tuple[IonMatch, ...] = ()
    isotope_fit: IsotopeFit | None = None
    charge: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "score_parts", MappingProxyType(dict(self.score_parts)))

    @property
    def label(self) -> str:
        """Hill formula with the charge of a charged molecule (``'C20H18NO4+'``)."""
        if not self.charge:
            return self.formula.hill
        z = abs(self.charge)
        return f"{self.formula.hill}{z if z > 1 else ''}{'+' if self.charge > 0 else '-'}"


@dataclass(frozen=True)
class FormulaSearch:
    """Everything :func:`formula_search` found.

    Attributes
    ----------
    candidates : tuple of FormulaCandidate
        Best first, at most ``max_candidates``.
    features : tuple of (float, str)
        Observed m/z and ion species, as given (canonical notation).
    neutral_mass : float
        Tolerance-weighted mean neutral mass from the observed ions, u.
    mass_window : (float, float)
        Neutral masses consistent with every ion, u.
    elements : Mapping[str, tuple[int, int]]
        Element ranges searched (after the mass and rule-1 limits).
    rules : str
        Preset used as filter.
    n_in_window : int
        Compositions within tolerance of every ion that the enumeration examined: all of
        them with rules 'none'; with a preset, those its valence and ratio limits did not
        already exclude while enumerating.
    n_passed : int
        Of those, how many pass the preset's rules (and the proton bound, when given) and are ranked.
    notes : tuple of str
        What the search inferred or changed on its own (elements added because the isotope
        envelope demands them, a proton bound applied).
    h_range : (float, float) or None
        Visible proton count range used as a bound, as given.
    """

    candidates: tuple[FormulaCandidate, ...]
    features: tuple[tuple[float, str], ...]
    neutral_mass: float
    mass_window: tuple[float, float]
    elements: Mapping[str, tuple[int, int]]
    rules: str
    n_in_window: int
    n_passed: int
    ppm: float | None
    mda: float | None
    isotopes: tuple[float, ...] | None
    notes: tuple[str, ...] = ()
    h_range: tuple[float, float | None] | None = None


def _tolerance(mz: float, ppm: float | None, mda: float | None) -> float:
    """Tolerance on the m/z axis: the larger of the ppm and the mDa limits."""
    tol = 0.0
    if ppm:
        tol = max(tol, ppm * 1e-6 * mz)
    if mda:
        tol = max(tol, mda * 1e-3)
    return tol


def _check_tolerances(ppm, mda) -> tuple[float | None, float | None]:
    for name, value, top in (("ppm", ppm, MAX_PPM), ("mda", mda, MAX_MDA)):
        if value is None:
            continue
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
            raise ParameterError(f"{name}: must be a number, got {value!r}")
        if value < 0:
            raise ParameterError(f"{name}: must be positive, got {value!r}")
        if value > top:
            raise ParameterError(f"{name}: {value:g} is beyond the {top:g} this engine accepts (not high-resolution data)")
    if not ppm and not mda:
        raise ParameterError("tolerance: give ppm or mda (both are missing or zero)")
    return (float(ppm) if ppm else None), (float(mda) if mda else None)


def _parse_features(features) -> list[tuple[float, IonSpecies]]:
    if isinstance(features, tuple) and len(features) == 2 and isinstance(features[1], str):
        features = [features]
    try:
        items = list(features)
    except TypeError:
        raise ParameterError(f"features: need a sequence of (m/z, ion) pairs, got {features!r}") from None
    if not items:
        raise ParameterError("features: no m/z given")
    out = []
    for item in items:
        try:
            mz, ion = item
        except (TypeError, ValueError):
            raise ParameterError(f"features: each entry must be (m/z, ion species), got {item!r}") from None
        species = ion if isinstance(ion, IonSpecies) else parse_ion(ion)
        neutral_mass(mz, species)  # validates m/z and that a positive neutral mass is left
        out.append((float(mz), species))
    return out


def _search_ranges(
    elements, window: tuple[float, float], preset: str, ions: list[IonSpecies]
) -> dict[str, tuple[int, int]]:
    """Element ranges after the mass, rule-1 and ion (losses need atoms) limits."""
    if elements is None:
        ranges = parse_element_ranges(DEFAULT_ELEMENTS)
    elif isinstance(elements, str):
        ranges = parse_element_ranges(elements)
    else:
        ranges = check_element_ranges(elements)
    low, high = window
    rule1: dict[str, int] = {}
    if "element_counts" in rules_of_preset(preset):
        # Limits grow with mass; take those of every mass range the window touches.
        last = 0.0
        for mass_below, limits in element_count_limits():
            if high >= last and low < mass_below:
                for s, v in limits.items():
                    rule1[s] = max(rule1.get(s, 0), v)
            last = mass_below
        if high >= last:
            rule1 = {}
    out = {}
    for symbol in sorted(ranges, key=hill_sort_key):
        lo, hi = ranges[symbol]
        most = min(MAX_COUNT, int(math.floor(high / element(symbol).monoisotopic_mass)))
        hi = most if hi is None else min(hi, most)
        if symbol in rule1:
            hi = min(hi, rule1[symbol])
        out[symbol] = (lo, hi)
    for species in ions:
        for symbol, n_lost in species.loss.counts.items():
            need = math.ceil((n_lost - species.gain.count(symbol)) / species.molecules)
            if need <= 0:
                continue
            lo, hi = out.get(symbol, (0, 0))
            if need > hi:
                raise FormulaError(
                    f"ion {species.notation}: the molecule needs at least {need} {symbol}, "
                    f"but the element ranges allow {symbol}{lo}-{hi}"
                )
            out[symbol] = (max(lo, need), hi)
    return out


def formula_search(
    features: Sequence[tuple[float, str]],
    *,
    ppm: float | None = DEFAULT_TOLERANCE_PPM,
    mda: float | None = None,
    isotopes: Sequence[float] | str | None = None,
    elements: Mapping[str, tuple[int, int | None]] | str | None = None,
    rules: str = "common",
    max_candidates: int = 20,
    prior: str | None = "natural_products",
    h_range: tuple[float, float] | None = None,
    isotope_relative_error: float = RELATIVE_ERROR,
    isotope_absolute_error: float = ABSOLUTE_ERROR,
) -> FormulaSearch:
    """Enumerate, filter, score and rank neutral formulas for one MS feature.

    Parameters
    ----------
    features : sequence of (float, str)
        Observed m/z and ion species in bracket notation, e.g.
        ``[(301.1410, '[M+H]+'), (323.1230, '[M+Na]+')]``. All must agree on one neutral
        mass within tolerance. ``[M]+`` (alone) is a permanently charged molecule: the
        candidates are then even-electron cations (``charge`` 1), judged by the rules as
        the neutral that has lost a proton.
    ppm, mda : float, optional
        Mass tolerance per ion, ppm of m/z and/or mDa; with both, the larger applies.
        Default :data:`DEFAULT_TOLERANCE_PPM`.
    isotopes : sequence of float or str, optional
        Observed intensities of M+0, M+1, M+2, ... of the *first* ion (any scale).
    elements : mapping or str, optional
        Element ranges (``'C0-80 H0-150 N0-10 O0-40 S0-3 Cl0-2'``); default CHNOPS, each up
        to what the mass and, with rule 1, the golden rules allow, widened by Cl and Br when
        the observed M+2 and M+4 demand them (said in the search's ``notes``). F, Cl, Br,
        I, Si (and Na, K) are available on request.
    rules : {'common', 'extended', 'valence', 'none'}
        Filter preset (:data:`nmrcheck.chem.rules.RULE_PRESETS`); every rule is evaluated
        and reported whatever the preset.
    max_candidates : int
        Candidates returned at most.
    prior : {'natural_products', None}
        Add the log prior of the formula for a natural product as the score part 'prior':
        that it contains each heteroatom it has (``element_priors.csv``), and its element
        ratios to carbon (golden rules 4 and 5; see the module docstring); None: no prior.
    h_range : (float, float or None), optional
        Protons the 1H spectrum shows (the proton count's range; high None: at least low). A formula with H
        hydrogens, E of which could be exchangeable (one per O and S, two per N), can show
        H-E to H of them; formulas that cannot show any count in the range are cut, and the
        others score ``log(share of their 0..E hidden-H cases that fit)`` as the part
        'protons' (every number of hidden exchangeable H taken as equally likely).
    isotope_relative_error, isotope_absolute_error : float
        Isotope error model (see :mod:`nmrcheck.chem.isotopes`).

    Raises
    ------
    ParameterError
        Bad m/z, tolerance, intensities, proton range, or m/z values that disagree on the
        neutral mass.
    FormulaError
        Unknown ion species or element, malformed element range.
    """
    parsed = _parse_features(features)
    h_bounds = _check_h_range(h_range)
    intrinsic = [s for _, s in parsed if s.intrinsic]
    if not intrinsic:
        return _search(parsed, ppm, mda, isotopes, elements, rules, max_candidates, prior, h_bounds, h_range, 0,
                       isotope_relative_error, isotope_absolute_error)
    if len(parsed) > 1:
        raise ParameterError(
            f"features: {intrinsic[0].notation} (a permanently charged molecule) cannot be combined with other ions in one feature"
        )
    (mz, species), = parsed
    z = species.charge
    # The cation X observed as [X]+ has the m/z of [M+H]+ of the neutral M = X - H: search
    # for M, then report X (and likewise X - H for an anion).
    stand_in = parse_ion({1: "[M+H]+", 2: "[M+2H]2+", 3: "[M+3H]3+", -1: "[M-H]-", -2: "[M-2H]2-", -3: "[M-3H]3-"}[z])
    inner = _search([(mz, stand_in)], ppm, mda, isotopes, elements, rules, max_candidates, prior, h_bounds, h_range, z,
                    isotope_relative_error, isotope_absolute_error)
    shift = Formula({"H": abs(z)})
    h_mass = shift.monoisotopic_mass * (1 if z > 0 else -1)
    candidates = []
    for c in inner.candidates:
        ion_formula = c.formula + shift if z > 0 else c.formula - shift
        match = replace(c.ions[0], ion=species.notation)
        candidates.append(replace(c, formula=ion_formula, neutral_mass=c.neutral_mass + h_mass, rdbe=ion_formula.rdbe,
                                  ions=(match,), charge=z))
    low, high = inner.mass_window
    return replace(
        inner,
        candidates=tuple(candidates),
        features=((mz, species.notation),),
        neutral_mass=inner.neutral_mass + h_mass,
        mass_window=(low + h_mass, high + h_mass),
        notes=inner.notes + (
            f"{species.notation}: candidates are charged molecules; the rules judge each as the neutral "
            f"{'less' if z > 0 else 'plus'} {abs(z)} H+",
        ),
    )


def _check_h_range(h_range) -> tuple[int, int] | None:
    """Whole proton counts the visible range allows: [ceil(low), floor(high)], or the nearest whole number."""
    if h_range is None:
        return None
    try:
        low, high = h_range
        low, high = float(low), (math.inf if high is None else float(high))
    except (TypeError, ValueError):
        raise ParameterError(f"h_range: need (low, high) proton counts, got {h_range!r}") from None
    if math.isinf(high) and math.isfinite(low) and low >= 0:
        return math.ceil(low - 1e-6), MAX_COUNT
    if not (math.isfinite(low) and math.isfinite(high)) or low < 0 or high < low:
        raise ParameterError(f"h_range: need 0 <= low <= high, got {h_range!r}")
    lo, hi = math.ceil(low - 1e-6), math.floor(high + 1e-6)
    if lo > hi:
        lo = hi = round((low + high) / 2)
    return lo, hi


def _proton_part(table: FormulaTable, bounds: tuple[int, int], h_offset: int) -> np.ndarray:
    """log of the share of hidden-exchangeable-H cases (0..E equally likely) that leave a visible count in ``bounds``."""
    h = table.column("H").astype(np.int64) + h_offset
    exchangeable = table.column("O").astype(np.int64) + 2 * table.column("N") + table.column("S")
    lo, hi = bounds
    fitting = np.minimum(h, hi) - np.maximum(h - exchangeable, lo) + 1
    share = np.clip(fitting, 0, None) / (exchangeable + 1.0)
    with np.errstate(divide="ignore"):
        return np.log(share)


def _search(parsed, ppm, mda, isotopes, elements, rules, max_candidates, prior, h_bounds, h_range, h_offset,
            isotope_relative_error, isotope_absolute_error) -> FormulaSearch:
    ppm, mda = _check_tolerances(ppm, mda)
    rules_of_preset(rules)
    if prior is not None and prior not in PRIORS:
        raise ParameterError(f"prior: unknown {prior!r}; choose one of {', '.join(PRIORS)} or None")
    if not isinstance(max_candidates, int) or isinstance(max_candidates, bool) or max_candidates < 1:
        raise ParameterError(f"max_candidates: a whole number >= 1, got {max_candidates!r}")
    observed = parse_intensities(isotopes) if isotopes is not None else None
    notes: list[str] = []

    # Neutral-mass window allowed by each ion; they must overlap.
    windows, centres, sigmas, tolerances = [], [], [], []
    for mz, species in parsed:
        tol = _tolerance(mz, ppm, mda)
        tolerances.append(tol)
        z, n = abs(species.charge), species.molecules
        lo = max(0.0, ((mz - tol) * z - species.mass_shift) / n)
        hi = ((mz + tol) * z - species.mass_shift) / n
        windows.append((lo, hi))
        centres.append(neutral_mass(mz, species))
        sigmas.append(tol * z / n / 2.0)
    low = max(w[0] for w in windows)
    high = min(w[1] for w in windows)
    weights = np.array([1.0 / s**2 for s in sigmas])
    centre = float(np.dot(weights, centres) / weights.sum())
    if low > high:
        i_lo = int(np.argmax([w[0] for w in windows]))
        i_hi = int(np.argmin([w[1] for w in windows]))
        apart = (centres[i_lo] - centres[i_hi]) / centre * 1e6
        raise ParameterError(
            f"the m/z values disagree on the neutral mass: {parsed[i_lo][0]:.5f} as "
            f"{parsed[i_lo][1].notation} gives M = {centres[i_lo]:.5f}, {parsed[i_hi][0]:.5f} as "
            f"{parsed[i_hi][1].notation} gives M = {centres[i_hi]:.5f} ({apart:+.1f} ppm apart, "
            f"beyond the tolerance)"
        )

    if elements is None and observed is not None:
        inferred = infer_heavy_elements(
            observed, parsed[0][1], relative_error=isotope_relative_error, absolute_error=isotope_absolute_error
        )
        if inferred is not None and inferred.note:
            notes.append(inferred.note)
        if inferred is not None and inferred.demanded:
            elements = parse_element_ranges(DEFAULT_ELEMENTS)
            elements.update(inferred.ranges)
    ranges = _search_ranges(elements, (low, high), rules, [s for _, s in parsed])
    # The window is the intersection over the ions, and losses have set minimum counts, so
    # every composition found forms every ion within tolerance.
    pruning = pruning_for(rules)
    if h_bounds is not None:
        pruning = replace(pruning, visible_h=(h_bounds[0], h_bounds[1], h_offset))
    table = enumerate_formulas(low, high, ranges, pruning=pruning)
    n_in_window = len(table)

    proton_part = None
    if h_bounds is not None:
        proton_part = _proton_part(table, h_bounds, h_offset)
        shown = f"{h_bounds[0]}-{h_bounds[1]}" if h_bounds[1] < MAX_COUNT else f"at least {h_bounds[0]}"
        notes.append(
            f"proton bound: {shown} H seen in the 1H spectrum, plus up to one exchangeable H per O and S and two per N"
        )
    # Column-major counts from here on: rules, prior and protons read whole columns.
    table = FormulaTable(table.elements, np.asfortranarray(table.counts), table.masses)
    passing = rule_mask(table, rules_of_preset(rules), ratio_range=ratio_range_of(rules))
    table = table.take(passing)
    table = FormulaTable(table.elements, np.asfortranarray(table.counts), table.masses)
    if proton_part is not None:
        proton_part = proton_part[passing]
    n_passed = len(table)

    masses = table.masses
    errors_ppm, errors_da, mz_calc, relative = [], [], [], []
    for (mz, species), tol in zip(parsed, tolerances):
        calc = (species.molecules * masses + species.mass_shift) / abs(species.charge)
        err_da = mz - calc
        mz_calc.append(calc)
        errors_da.append(err_da)
        errors_ppm.append(err_da / calc * 1e6)
        relative.append(err_da / tol)
    w_ion = weights / weights.sum()
    mass_part = _mass_log_likelihood(sum(w * r for w, r in zip(w_ion, relative)) if len(table) else np.zeros(0))
    mean_ppm = sum(w * e for w, e in zip(w_ion, errors_ppm)) if len(table) else np.zeros(0)

    prior_part = _prior_part(table, prior)
    base = mass_part.copy()
    if prior_part is not None:
        base = base + prior_part
    if proton_part is not None:
        base = base + proton_part

    iso_part = None
    chi2 = scaled = None
    dof = 0
    if observed is not None and len(table):
        iso_part, chi2, scaled, dof = _isotope_parts(
            table, parsed[0][1], observed, base, max_candidates, isotope_relative_error, isotope_absolute_error
        )
        isotope_agrees = chi2 <= agreement_limit(dof)

    score = base + (iso_part if iso_part is not None else 0.0)
    # Best score first; ties by smaller mass error, then formula mass. Only the rows scoring at
    # least the max_candidates-th best score can be shown: sort those.
    shown = np.arange(len(table))
    if len(table) > max_candidates:
        # Rows whose isotope pattern was not computed score -inf; the rest decide the threshold.
        finite = score[np.isfinite(score)]
        pool = finite if finite.size >= max_candidates else score
        kth = np.partition(pool, pool.size - max_candidates)[pool.size - max_candidates]
        shown = np.flatnonzero(score >= kth)
    order = shown[np.lexsort((masses[shown], np.abs(mean_ppm[shown]), -score[shown]))][:max_candidates]
    # Every rule is reported for the candidates shown, whether the preset filters on it or not.
    verdicts = evaluate_rules(table.take(order), ratio_range=ratio_range_of(rules))
    if iso_part is not None:
        verdicts["isotope_pattern"] = isotope_agrees[order]

    candidates = []
    for rank, (row, i) in enumerate(zip(range(len(order)), order), start=1):
        formula = table.formula(int(i))
        passed = tuple(r for r in RULE_NAMES if r in verdicts and bool(verdicts[r][row]))
        failed = tuple(r for r in RULE_NAMES if r in verdicts and not bool(verdicts[r][row]))
        parts = {"mass": float(mass_part[i])}
        if prior_part is not None:
            parts["prior"] = float(prior_part[i])
        if proton_part is not None:
            parts["protons"] = float(proton_part[i])
        fit = None
        if iso_part is not None:
            parts["isotopes"] = float(iso_part[i])
            fit = IsotopeFit(
                observed=tuple(observed),
                predicted=tuple(float(x) for x in scaled[i]),
                chi2=float(chi2[i]),
                dof=dof,
                agrees=bool(isotope_agrees[i]),
            )
        matches = []
        for k, (mz, species) in enumerate(parsed):
            composition = formula * species.molecules + species.gain - species.loss
            matches.append(
                IonMatch(
                    ion=species.notation,
                    mz_observed=mz,
                    mz_calculated=float(mz_calc[k][i]),
                    error_ppm=float(errors_ppm[k][i]),
                    error_mda=float(errors_da[k][i] * 1e3),
                    ion_formula=composition.hill,
                    ion_rdbe=composition.rdbe,
                    electrons=species.electrons,
                )
            )
        candidates.append(
            FormulaCandidate(
                formula=formula,
                neutral_mass=float(masses[i]),
                error_ppm=float(mean_ppm[i]),
                rdbe=formula.rdbe,
                score=float(score[i]),
                rank=rank,
                rules_passed=passed,
                rules_failed=failed,
                score_parts=parts,
                ions=tuple(matches),
                isotope_fit=fit,
            )
        )
    log.debug(
        "formula search M=%.5f window [%.5f, %.5f]: %d in window, %d pass %r",
        centre, low, high, n_in_window, n_passed, rules,
    )
    return FormulaSearch(
        candidates=tuple(candidates),
        features=tuple((mz, s.notation) for mz, s in parsed),
        neutral_mass=centre,
        mass_window=(low, high),
        elements=MappingProxyType(ranges),
        rules=rules,
        n_in_window=n_in_window,
        n_passed=n_passed,
        ppm=ppm,
        mda=mda,
        isotopes=observed,
        notes=tuple(notes),
        h_range=None if h_range is None else (float(h_range[0]), None if h_range[1] is None else float(h_range[1])),
    )


def _isotope_parts(table, species, observed, base, max_candidates, relative_error, absolute_error):
    """Isotope score, chi2 and scaled predictions, computed only where they can matter.

    The isotope part is never positive, so a candidate whose other parts (``base``) already
    fall below the ``max_candidates``-th best full score cannot be shown: its pattern is
    not computed (its chi2 stays infinite). The patterns of the best ``base`` values are
    computed first; they set that score, and the rest is computed only where ``base``
    reaches it.
    """
    n = len(table)
    k = len(observed)
    iso = np.full(n, -np.inf)
    chi2 = np.full(n, np.inf)
    scaled = np.zeros((n, k))

    def compute(rows):
        ion_counts, ion_elements = _ion_counts(table.take(rows), species)
        predicted = pattern_matrix(ion_counts, ion_elements, k)
        c2, sc, dof = fit_isotopes(observed, predicted, relative_error=relative_error, absolute_error=absolute_error)
        chi2[rows], scaled[rows], iso[rows] = c2, sc, -0.5 * c2
        return dof

    first = max(256, 8 * max_candidates)
    if n <= 2 * first:
        return iso, chi2, scaled, compute(np.arange(n))
    head = np.argpartition(-base, first)[:first]
    dof = compute(head)
    kth = -np.partition(-(base[head] + iso[head]), max_candidates - 1)[max_candidates - 1]
    rest = np.flatnonzero((base >= kth) & np.isinf(chi2))
    if rest.size:
        compute(rest)
    return iso, chi2, scaled, dof


PRIORS = ("natural_products",)
"""Named element priors (columns of ``element_priors.csv``)."""


@lru_cache(maxsize=None)
def _element_priors(name: str) -> dict[str, float]:
    out = {}
    for row in load_table("element_priors"):
        p = float(row[name])
        if not 0 < p < 1:
            raise TableError(f"element_priors.csv: {row['element']}: probability {p} not in (0, 1)")
        out[row["element"]] = p
    return out


def _prior_part(table: FormulaTable, prior: str | None) -> np.ndarray | None:
    """Log prior of each row: over the tabled elements, log p (present) or log(1-p) (absent),
    less the same for a formula with none of them; plus the element ratios' log densities."""
    if prior is None:
        return None
    part = np.zeros(len(table))
    for symbol, p in _element_priors(prior).items():
        if symbol in table.elements:
            part += (table.column(symbol) > 0) * (math.log(p) - math.log1p(-p))
    return part + _ratio_prior(table)


_EDGE_SD = 3.0
"""The golden rules' 'common' ratio ranges hold 99.7 % of the library formulas: 3 standard deviations."""


def _ratio_prior(table: FormulaTable) -> np.ndarray:
    """Log density of each element ratio to carbon (see the module docstring); a formula without
    carbon is taken as at the range's edge for each element it has."""
    n = len(table)
    carbon = table.column("C")
    has_carbon = carbon > 0
    inverse = np.divide(1.0, carbon, out=np.zeros(n), where=has_carbon)
    part = np.zeros(n)
    edge = np.zeros(n)  # for the rows without carbon
    for symbol, (low, high) in ratio_limits("common").items():
        if symbol not in table.elements:
            continue
        count = table.column(symbol)
        if low > 0:
            mean, sd = (low + high) / 2.0, (high - low) / (2.0 * _EDGE_SD)
            edge -= 0.5 * _EDGE_SD**2
        else:
            mean, sd = 0.0, high / _EDGE_SD
            edge -= 0.5 * _EDGE_SD**2 * (count > 0)
        z = count * inverse
        if mean:
            z -= mean
        z *= 1.0 / sd
        part -= 0.5 * z * z
    if not has_carbon.all():
        part = np.where(has_carbon, part, edge)
    return part


def _ion_counts(table: FormulaTable, species: IonSpecies) -> tuple[np.ndarray, tuple[str, ...]]:
    """Count matrix of the ion compositions of every row."""
    elements = tuple(sorted(set(table.elements) | set(species.gain.counts) | set(species.loss.counts), key=hill_sort_key))
    counts = np.zeros((len(table), len(elements)), dtype=np.int64)
    for j, symbol in enumerate(elements):
        counts[:, j] = (
            table.column(symbol).astype(np.int64) * species.molecules
            + species.gain.count(symbol)
            - species.loss.count(symbol)
        )
    return counts, elements


def formula_candidates(
    features: Sequence[tuple[float, str]],
    *,
    ppm: float | None = DEFAULT_TOLERANCE_PPM,
    mda: float | None = None,
    isotopes: Sequence[float] | str | None = None,
    elements: Mapping[str, tuple[int, int | None]] | str | None = None,
    rules: str = "common",
    max_candidates: int = 20,
    prior: str | None = "natural_products",
    h_range: tuple[float, float] | None = None,
) -> tuple[FormulaCandidate, ...]:
    """Ranked candidate neutral formulas for one MS feature (see :func:`formula_search`).

    Examples
    --------
    >>> best = formula_candidates([(195.08765, "[M+H]+")], ppm=3, isotopes=[100, 10.2, 0.7])[0]
    >>> best.formula.hill
    'C8H10N4O2'
    """
    return formula_search(
        features,
        ppm=ppm,
        mda=mda,
        isotopes=isotopes,
        elements=elements,
        rules=rules,
        max_candidates=max_candidates,
        prior=prior,
        h_range=h_range,
    ).candidates
