"""Which heavy-isotope elements (Cl, Br, S) an observed isotope envelope demands.

Chlorine (37Cl, 32 % of 35Cl) and bromine (81Br, 97 % of 79Br) add a large M+2 and, two
or more of them, a large M+4; sulfur adds 4.5 % per atom at M+2. Carbon, hydrogen,
nitrogen and oxygen alone give an M+2 of about half the square of M+1 plus 0.2 % per
oxygen. The observed M+1 fixes the carbon number roughly; for every small combination
of S, Cl and Br the M+2 and M+4 predicted over the plausible range of carbon and oxygen
numbers is fitted to the observed envelope (chi2 under the isotope error model of
:mod:`nmrcheck.chem.isotopes`, agreement at its 99.9 % quantile). When no halogen-free combination fits, the envelope
demands halogens, and the counts of the combinations that fit bound the search.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from nmrcheck.chem.adducts import IonSpecies
from nmrcheck.chem.isotopes import agreement_limit, fit_isotopes, pattern_matrix

__all__ = ["EnvelopeInference", "infer_heavy_elements"]

# M+1 per carbon of a typical natural product (H/C 1.5, N/C 0.05, O/C 0.3; IUPAC 2013 isotope
# abundances: 13C 1.07 %, 2H 0.0115 %, 15N 0.364 %, 17O 0.038 %), relative to M+0.
_M1_PER_CARBON = 0.01082 + 1.5 * 0.000115 + 0.05 * 0.00369 + 0.3 * 0.00038
# Oxygen per carbon at most (golden rules' common O/C range, Kind & Fiehn 2007 Table 2).
_MAX_O_PER_C = 1.2
_SIGMAS = 4.0
_MAX_S, _MAX_CL, _MAX_BR = 4, 6, 4


@dataclass(frozen=True)
class EnvelopeInference:
    """What the envelope says about heavy-isotope elements.

    Attributes
    ----------
    demanded : bool
        No combination without Cl and Br explains M+2 (and M+4).
    ranges : dict
        Cl and Br count ranges of the combinations that fit (empty when not demanded).
    note : str
        One sentence for the search's notes.
    """

    demanded: bool
    ranges: dict
    note: str


def _ratio_sigma(observed: np.ndarray, k: int, relative_error: float, absolute_error: float) -> float:
    """Standard deviation of I_k / I_0 under the isotope error model."""
    sig = np.sqrt((relative_error * observed) ** 2 + (absolute_error * observed.max()) ** 2)
    r = observed[k] / observed[0]
    return float(np.hypot(sig[k] / observed[0], r * sig[0] / observed[0]))


def infer_heavy_elements(
    observed, species: IonSpecies, *, relative_error: float, absolute_error: float
) -> EnvelopeInference | None:
    """Cl/Br demanded by observed intensities M+0, M+1, M+2 (, M+3, M+4) of ``species``; None with fewer than 3 peaks."""
    obs = np.asarray(observed, dtype=np.float64)
    if obs.size < 3 or obs[0] <= 0:
        return None
    r1, r2 = obs[1] / obs[0], obs[2] / obs[0]
    s1 = _ratio_sigma(obs, 1, relative_error, absolute_error)
    has4 = obs.size >= 5
    r4 = obs[4] / obs[0] if has4 else None
    n = species.molecules
    # Carbon number per molecule from M+1, over its uncertainty; oxygen from none to the most
    # the golden rules allow. Each S/Cl/Br combination gets its best chi2 over that grid.
    c_lo = max(1.0, (r1 - _SIGMAS * s1) / _M1_PER_CARBON / n)
    c_hi = max(c_lo + 1.0, (r1 + _SIGMAS * s1) / _M1_PER_CARBON / n)
    carbons = np.linspace(c_lo, c_hi, 8)
    o_per_c = np.linspace(0.0, _MAX_O_PER_C, 4)
    k = min(obs.size, 6)
    free = [(s, 0, 0) for s in range(_MAX_S + 1)]
    if _fitting(free, carbons, o_per_c, n, species, obs[:k], relative_error, absolute_error):
        # The usual case, settled by the halogen-free combinations alone.
        return EnvelopeInference(False, {}, "")
    combos = [(s, cl, br) for s in range(_MAX_S + 1) for cl in range(_MAX_CL + 1) for br in range(_MAX_BR + 1) if cl or br]
    ok = _fitting(combos, carbons, o_per_c, n, species, obs[:k], relative_error, absolute_error)
    what = f"M+2 at {100 * r2:.1f} %" + (f" and M+4 at {100 * r4:.1f} %" if has4 else "") + " of M+0"
    if not ok:
        return EnvelopeInference(
            False, {}, f"isotope envelope: {what} fits no combination of up to {_MAX_S} S, {_MAX_CL} Cl and "
            f"{_MAX_BR} Br; elements not widened"
        )
    cl = (min(c for _, c, _ in ok), max(c for _, c, _ in ok))
    br = (min(b for _, _, b in ok), max(b for _, _, b in ok))
    ranges = {}
    if cl[1] > 0:
        ranges["Cl"] = cl
    if br[1] > 0:
        ranges["Br"] = br
    added = " ".join(f"{s}{lo}-{hi}" for s, (lo, hi) in ranges.items())
    return EnvelopeInference(
        True, ranges,
        f"isotope envelope: {what} cannot come from C, H, N, O and S alone; {added} added to the elements searched",
    )


_SYMBOLS = ("C", "H", "O", "S", "Cl", "Br", "K")


def _fitting(combos, carbons, o_per_c, n, species, observed, relative_error, absolute_error) -> list:
    """The (S, Cl, Br) combinations whose best pattern over the carbon and oxygen grid agrees with ``observed``."""
    grid = np.array([(c, 1.5 * c, o * c) for c in carbons for o in o_per_c])
    rows = np.zeros((len(combos), grid.shape[0], len(_SYMBOLS)))
    rows[:, :, :3] = grid[None, :, :] * n
    rows[:, :, 3:6] = np.array(combos, dtype=np.float64)[:, None, :] * n
    for j, sym in enumerate(_SYMBOLS):
        rows[:, :, j] += species.gain.count(sym) - species.loss.count(sym)
    predicted = pattern_matrix(np.clip(rows.reshape(-1, len(_SYMBOLS)), 0, None), _SYMBOLS, observed.size)
    chi2, _, dof = fit_isotopes(observed, predicted, relative_error=relative_error, absolute_error=absolute_error)
    best = chi2.reshape(len(combos), grid.shape[0]).min(axis=1)
    return [c for c, fits in zip(combos, best <= agreement_limit(dof)) if fits]
