"""Isotope patterns aggregated by nominal mass, and their agreement with observed intensities.

The pattern is the isotopologue distribution summed within each nominal-mass bin (M+0, M+1,
...), with the abundance-weighted mean m/z of each bin: the envelope an instrument records
when its resolving power does not separate the fine structure inside a bin (13C vs 15N vs 2H
at M+1, 13C2 vs 18O vs 34S at M+2; a few mDa apart). That holds for time-of-flight and most
Orbitrap settings up to m/z of a few hundred and beyond. Element distributions come from
``isotopes.csv`` and are combined by convolution.

Error model for observed intensities (golden rule 3): each observed peak k (any scale) has an
independent Gaussian error with standard deviation
``sigma_k = sqrt((relative_error * I_k)**2 + (absolute_error * I_max)**2)``; the prediction is
scaled to the observation by weighted least squares; ``chi2`` has (peaks - 1) degrees of
freedom. The pattern agrees if ``chi2`` is below the 99.9 % quantile.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.stats import chi2 as chi2_distribution

from nmrcheck.chem.adducts import IonSpecies, ion_composition, parse_ion
from nmrcheck.chem.elements import electron_mass, element
from nmrcheck.chem.formula import Formula
from nmrcheck.errors import FormulaError, ParameterError

__all__ = [
    "IsotopePattern",
    "IsotopeFit",
    "isotope_pattern",
    "pattern_matrix",
    "fit_isotopes",
    "parse_intensities",
    "RELATIVE_ERROR",
    "ABSOLUTE_ERROR",
    "AGREEMENT_QUANTILE",
]

RELATIVE_ERROR = 0.05
"""Default relative error of an observed isotope intensity (2-5 % RSD is typical of
high-resolution instruments, Kind & Fiehn 2007 rule 3; the upper end, to be safe)."""
ABSOLUTE_ERROR = 0.005
"""Default absolute error floor, as a fraction of the most intense observed peak."""
AGREEMENT_QUANTILE = 0.999
"""chi2 quantile below which an observed pattern counts as agreeing."""


@dataclass(frozen=True)
class IsotopePattern:
    """Nominal-mass-binned isotope pattern of a neutral molecule or an ion.

    Attributes
    ----------
    formula : Formula
        Elemental composition (of the ion when ``charge`` is not 0).
    charge : int
        Signed charge; 0 for a neutral molecule.
    offsets : tuple of int
        Nominal offsets from the monoisotopic peak: 0, 1, 2, ...
    mz : tuple of float
        Abundance-weighted mean m/z of each bin (mass, u, when ``charge`` is 0).
    abundances : tuple of float
        Fraction of all isotopologues in each bin.
    """

    formula: Formula
    charge: int
    offsets: tuple[int, ...]
    mz: tuple[float, ...]
    abundances: tuple[float, ...]

    def relative(self) -> tuple[float, ...]:
        """Abundances scaled so that the most intense peak is 100."""
        top = max(self.abundances)
        return tuple(100.0 * a / top for a in self.abundances)


def _element_distribution(symbol: str) -> tuple[np.ndarray, np.ndarray]:
    el = element(symbol)
    width = el.mass_numbers[-1] - el.mass_numbers[0] + 1
    p = np.zeros(width)
    pm = np.zeros(width)
    for a, n, m in zip(el.abundances, el.mass_numbers, el.masses):
        p[n - el.mass_numbers[0]] += a
        pm[n - el.mass_numbers[0]] += a * m
    return p, pm


def _convolve(x, y, size):
    """Product of two binned distributions carried as (probability, probability*mass)."""
    p = np.convolve(x[0], y[0])[:size]
    pm = (np.convolve(x[1], y[0]) + np.convolve(x[0], y[1]))[:size]
    return p, pm


def isotope_pattern(
    formula: Formula,
    *,
    ion: IonSpecies | str | None = None,
    max_peaks: int = 12,
    min_abundance: float = 1e-5,
) -> IsotopePattern:
    """Isotope pattern of ``formula``, or of the ion ``ion`` made from it.

    Parameters
    ----------
    formula : Formula
        Neutral molecule.
    ion : IonSpecies or str, optional
        Ion species; the pattern is then that of the ion's composition, on the m/z scale.
    max_peaks : int
        Peaks computed at most (M+0 .. M+max_peaks-1); exact for each bin kept.
    min_abundance : float
        Trailing bins below this fraction of the most intense one are dropped.
    """
    if not isinstance(max_peaks, int) or not 1 <= max_peaks <= 200:
        raise ParameterError(f"max_peaks: a whole number from 1 to 200, got {max_peaks!r}")
    charge = 0
    composition = formula
    if ion is not None:
        species = parse_ion(ion) if isinstance(ion, str) else ion
        composition = ion_composition(formula, species)
        charge = species.charge
    if not composition:
        raise FormulaError("isotope pattern of an empty formula")
    total = (np.ones(1), np.zeros(1))
    for symbol, count in composition.counts.items():
        base = _element_distribution(symbol)
        power = (np.ones(1), np.zeros(1))
        # Binary powering keeps the work logarithmic in the atom count.
        while count:
            if count & 1:
                power = _convolve(power, base, max_peaks)
            count >>= 1
            if count:
                base = _convolve(base, base, max_peaks)
        total = _convolve(total, power, max_peaks)
    p, pm = total
    keep = np.nonzero(p >= min_abundance * p.max())[0]
    p, pm = p[: keep[-1] + 1], pm[: keep[-1] + 1]
    mass = np.divide(pm, p, out=np.zeros_like(p), where=p > 0)
    if charge:
        mz = (mass - charge * electron_mass()) / abs(charge)
    else:
        mz = mass
    return IsotopePattern(
        formula=composition,
        charge=charge,
        offsets=tuple(range(p.size)),
        mz=tuple(float(x) for x in mz),
        abundances=tuple(float(x) for x in p),
    )


def pattern_matrix(counts: np.ndarray, elements: tuple[str, ...], n_peaks: int) -> np.ndarray:
    """Binned isotope abundances M+0 .. M+n_peaks-1 for many compositions at once.

    Parameters
    ----------
    counts : numpy.ndarray, shape (n, len(elements))
        Element counts, one composition per row.
    elements : tuple of str
    n_peaks : int

    Returns
    -------
    numpy.ndarray, shape (n, n_peaks)
        Fraction of all isotopologues in each bin (rows sum to at most 1).

    Notes
    -----
    Each element's binned distribution ``a`` raised to the power n per row by J.C.P.
    Miller's recurrence for the coefficients of a power series raised to a power,
    ``c_0 = a_0**n``, ``c_m = sum_k ((n+1)k - m) a_k c_(m-k) / (m a_0)``, then multiplied
    across elements by truncated convolution.
    """
    counts = np.asarray(counts)
    rows = counts.shape[0]
    total = np.zeros((rows, n_peaks))
    total[:, 0] = 1.0
    for j, symbol in enumerate(elements):
        n = counts[:, j].astype(np.float64)
        if not n.any():
            continue
        a, _ = _element_distribution(symbol)
        if a.size == 1:
            continue
        c = np.zeros((rows, n_peaks))
        c[:, 0] = a[0] ** n
        for m in range(1, n_peaks):
            acc = np.zeros(rows)
            for k in range(1, min(m, a.size - 1) + 1):
                if a[k]:
                    acc += ((n + 1.0) * k - m) * a[k] * c[:, m - k]
            c[:, m] = acc / (m * a[0])
        # Rounding in the recurrence can leave tiny negative values where the exact one is 0.
        np.maximum(c, 0.0, out=c)
        out = np.zeros((rows, n_peaks))
        for m in range(n_peaks):
            out[:, m:] += total[:, m : m + 1] * c[:, : n_peaks - m]
        total = out
    return total


@dataclass(frozen=True)
class IsotopeFit:
    """Agreement of a predicted pattern with the observed one.

    Attributes
    ----------
    observed : tuple of float
        As given (M+0 first).
    predicted : tuple of float
        Prediction scaled to the observation (same scale and length).
    chi2 : float
    dof : int
        Degrees of freedom (peaks - 1).
    agrees : bool
        ``chi2`` below the :data:`AGREEMENT_QUANTILE` quantile.
    """

    observed: tuple[float, ...]
    predicted: tuple[float, ...]
    chi2: float
    dof: int
    agrees: bool


def parse_intensities(values) -> tuple[float, ...]:
    """Observed isotope intensities (M+0, M+1, ...) from a sequence or a text like ``'100,16.8,2.3'``."""
    if isinstance(values, str):
        parts = [v for v in values.replace(";", ",").replace(" ", ",").split(",") if v]
        try:
            values = [float(v) for v in parts]
        except ValueError:
            raise ParameterError(
                f"isotopes: {values!r} is not a comma-separated list of intensities such as '100,16.8,2.3'"
            ) from None
    try:
        out = tuple(float(v) for v in values)
    except (TypeError, ValueError):
        raise ParameterError(f"isotopes: not a list of numbers: {values!r}") from None
    if len(out) < 2:
        raise ParameterError("isotopes: give at least M+0 and M+1 intensities, e.g. '100,16.8'")
    if len(out) > 20:
        raise ParameterError(f"isotopes: {len(out)} peaks given; at most 20 are used")
    if any(not np.isfinite(v) or v < 0 for v in out):
        raise ParameterError(f"isotopes: intensities must be finite and >= 0, got {values!r}")
    if out[0] <= 0:
        raise ParameterError("isotopes: the first value (M+0) must be positive")
    return out


def fit_isotopes(
    observed,
    predicted: np.ndarray,
    *,
    relative_error: float = RELATIVE_ERROR,
    absolute_error: float = ABSOLUTE_ERROR,
) -> tuple[np.ndarray, np.ndarray, int]:
    """chi2 of observed intensities against predicted patterns (one per row).

    Parameters
    ----------
    observed : sequence of float
        M+0, M+1, ... in any scale.
    predicted : numpy.ndarray, shape (n, K) or (K,)
        Patterns, K = len(observed), in any scale.
    relative_error, absolute_error : float
        Error model (see the module docstring).

    Returns
    -------
    chi2 : numpy.ndarray, shape (n,)
    scaled : numpy.ndarray, shape (n, K)
        Predictions scaled to the observation.
    dof : int
    """
    obs = np.asarray(parse_intensities(observed))
    if not 0 <= relative_error < 1 or not 0 <= absolute_error < 1:
        raise ParameterError("isotope errors: relative and absolute error must be in [0, 1)")
    if relative_error == 0 and absolute_error == 0:
        raise ParameterError("isotope errors: relative and absolute error cannot both be 0")
    pred = np.atleast_2d(np.asarray(predicted, dtype=np.float64))
    if pred.shape[1] != obs.size:
        raise ParameterError(f"isotopes: {obs.size} observed peaks but {pred.shape[1]} predicted")
    sigma = np.sqrt((relative_error * obs) ** 2 + (absolute_error * obs.max()) ** 2)
    w = 1.0 / sigma**2
    num = pred @ (w * obs)
    den = (pred**2) @ w
    scale = np.divide(num, den, out=np.zeros_like(num), where=den > 0)
    scaled = pred * scale[:, None]
    chi2 = (((obs[None, :] - scaled) ** 2) * w[None, :]).sum(axis=1)
    return chi2, scaled, obs.size - 1


def agreement_limit(dof: int) -> float:
    """chi2 below which a pattern with ``dof`` degrees of freedom agrees."""
    return float(chi2_distribution.ppf(AGREEMENT_QUANTILE, dof))
