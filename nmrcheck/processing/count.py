"""Proton counting: the integral of one proton found from the data, per-region H and the total with a range."""

from __future__ import annotations

from dataclasses import replace
from typing import Sequence

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.processing.results import ProtonCount, Region

__all__ = ["bounded_alternatives", "bounded_unit", "competing_units", "count_protons", "find_unit", "near_totals", "threshold_loss"]

#: Integration error model used to choose the unit: a region of n protons reads
#: n * (1 +- RELATIVE_ERROR) +- ABSOLUTE_ERROR protons. Routine 1H spectra acquired with
#: short relaxation delays show 10-25 % differences between signals (measured here on the
#: shared real recordings); 15 % + 0.15 H covers most of them.
RELATIVE_ERROR = 0.15
ABSOLUTE_ERROR = 0.15
#: Cost of each proton per region (Occam factor): with relaxation errors of 15 %, halving
#: the unit always fits about as well, so the count with fewer protons must be preferred
#: unless the larger one fits clearly better.
PARSIMONY = 0.2
#: Cost of the share of signal that a unit leaves in regions under half a proton.
MINOR_PENALTY = 4.0
#: Two units whose costs differ by less than half of one proton-per-region Occam step fit the
#: integrals "about equally": only the preference for fewer protons separated them, so the
#: count is reported as ambiguous between them.
AMBIGUITY_MARGIN = PARSIMONY / 2.0
#: High end of the range, as a multiple of the total's, when one-proton multiplets would be
#: under the detection limit (:func:`count_protons`).
HIDDEN_FACTOR = 2.0
#: Totals of other units within these multiples of the best total widen the range
#: (:func:`near_totals`); further away they are a second reading (:func:`competing_units`).
NEAR_TOTALS = (0.6, 1.6)
#: Relative integration error added to the range of the total, for baseline and
#: relaxation losses (common practice for routine, not fully quantitative, spectra).
SYSTEMATIC_FRACTION = 0.03


def _misfit(integrals: np.ndarray, unit: float, loss: np.ndarray | None = None) -> tuple[float, float, np.ndarray]:
    """(mean squared misfit in error units, share left in minor regions, integer H per major region).

    ``loss``: per region, the share of its area that may lie under the detection threshold
    (:func:`threshold_loss`); a region reading short of its integer by up to that share is not
    held against the unit, and one that could hold half a proton before that loss
    (``h >= 0.5 * (1 - loss)``) counts as a signal of its own rather than a minor one: at
    microgram signal a multiplet whose tallest line barely clears the threshold shows as a
    region with a fraction of its area. Measured on the shared recordings' noisy copies
    (bench/bench_microgram.py): at SNR 30, 42 of 45 counts in range instead of 39 (the unit of
    16485-10-2 no longer halves to give two such partial multiplets whole protons); SNR 300,
    100 and clean counts unchanged.
    """
    h = integrals / unit
    major = _signals(integrals, unit, loss)
    if not major.any():
        return np.inf, 1.0, np.zeros(0)
    n = np.maximum(np.round(h[major]), 1.0)
    sigma = RELATIVE_ERROR * n + ABSOLUTE_ERROR
    if loss is not None:
        sigma = np.where(h[major] < n, sigma + loss[major] * n, sigma)
    z = (h[major] - n) / sigma
    minor_share = float(integrals[~major].sum() / integrals.sum())
    return float(np.mean(z * z)), minor_share, n


def _signals(integrals: np.ndarray, unit: float, loss: np.ndarray | None = None) -> np.ndarray:
    """Regions that read as signals of their own at ``unit``: half a proton or more before their threshold loss."""
    h = integrals / unit
    return h >= 0.5 if loss is None else h >= 0.5 * (1.0 - loss)


def _keeps_signals(integrals: np.ndarray, unit: float, signals: np.ndarray, loss: np.ndarray | None) -> bool:
    """True when every region in ``signals`` still reads as a signal at ``unit``.

    A second reading of the count (n or 2n protons) divides every signal alike. A unit at which a
    counted signal falls under half a proton instead calls that signal an impurity (three methyl
    singlets and a one-proton singlet, 3:3:3:1, read as 1:1:1 and a third of a proton): a question
    for the purity check, not another count of the same compound.
    """
    return not np.any(signals & ~_signals(integrals, unit, loss))


def _cost(integrals: np.ndarray, unit: float, parsimony: float = PARSIMONY, loss: np.ndarray | None = None) -> float:
    """Misfit of region integrals to whole protons at ``unit``, plus the Occam and minor-signal terms."""
    return float(_costs(integrals, np.array([unit]), loss, parsimony)[0])


def _costs(integrals: np.ndarray, units: np.ndarray, loss: np.ndarray | None = None, parsimony: float = PARSIMONY) -> np.ndarray:
    """:func:`_cost` of many units at once (one row of regions per unit; inf where no region is a signal): the
    mean squared misfit of :func:`_misfit`, ``parsimony`` per proton per signal, and the minor-signal share."""
    h = integrals[None, :] / np.asarray(units, float)[:, None]
    major = h >= 0.5 if loss is None else h >= 0.5 * (1.0 - loss)[None, :]
    n = np.maximum(np.round(h), 1.0)
    sigma = RELATIVE_ERROR * n + ABSOLUTE_ERROR
    if loss is not None:
        sigma = np.where(h < n, sigma + loss[None, :] * n, sigma)
    signals = major.sum(axis=1)
    per = np.maximum(signals, 1)
    misfit = np.where(major, ((h - n) / sigma) ** 2, 0.0).sum(axis=1) / per
    occam = parsimony * np.where(major, n, 0.0).sum(axis=1) / per
    minor = MINOR_PENALTY * np.where(major, 0.0, integrals[None, :]).sum(axis=1) / integrals.sum()
    return np.where(signals > 0, misfit + occam + minor, np.inf)


def _positive(integrals: Sequence[float], loss: Sequence[float] | None) -> tuple[np.ndarray, np.ndarray | None]:
    """The positive integrals, and the threshold losses of the same regions (None when not given)."""
    values = np.asarray(integrals, float)
    keep = values > 0
    if loss is None:
        return values[keep], None
    share = np.asarray(loss, float)
    if share.shape != values.shape:
        raise ParameterError(f"loss: one share per region is needed ({values.size}), got {share.size}")
    return values[keep], np.clip(share[keep], 0.0, 1.0)


def threshold_loss(peak_over_threshold: float) -> float:
    """Share of a region's area that may lie under the detection threshold, from its tallest point.

    A region is found where the spectrum stands above the threshold, so a multiplet's weaker outer
    lines and the far tails of its lines fall outside it when its tallest line is not well clear of
    the threshold. Measured on the shared recordings' noisy copies (SNR 300, 100 and 30 against
    their clean twins, bench/bench_microgram.py's copies): regions whose tallest point stands 1-2,
    2-4, 4-8, 8-16 and 16-50 times the threshold kept a median 66, 77, 92, 93 and 98 % of their
    clean area; half the threshold-to-peak ratio follows that (33, 17, 8, 4 and 2 % lost).
    """
    if not peak_over_threshold > 0:
        return 0.5
    return float(min(0.5, 0.5 / peak_over_threshold))


def _candidate_units(arr: np.ndarray, max_h_per_region: int) -> np.ndarray:
    """Each of the 16 largest integrals over 1..``max_h_per_region``, and each of those refined (:func:`_polish`)."""
    top = np.sort(arr)[::-1][:16]
    cands = np.unique(top[:, None] / np.arange(1, max_h_per_region + 1)[None, :])
    cands = cands[cands >= arr.max() / (3 * max_h_per_region)]
    h = np.maximum(np.round(arr[None, :] / cands[:, None]), 0.0)
    den = (h * h).sum(axis=1)
    polished = np.where(den > 0, (arr[None, :] * h).sum(axis=1) / np.where(den > 0, den, 1.0), cands)
    return np.unique(np.concatenate([cands, polished]))


def competing_units(integrals: Sequence[float], best_unit: float, *, margin: float = AMBIGUITY_MARGIN,
                    detection_limit: float | None = None, loss: Sequence[float] | None = None,
                    max_h_per_region: int = 12) -> list[float]:
    """Second readings of the count: units giving two or three times (or a half or a third of) the best
    count at nearly its cost, or, on a side where none does, the best-fitting unit further away.

    Relaxation weighting, overlap and a few missing or extra protons can make the
    integrals fit n and 2n protons about equally: every 2 H signal reading as 1 H,
    or every 1 H as 2 H. Each such multiple of ``best_unit`` is refined on its own
    integer assignment; those whose cost (misfit, Occam and minor-signal terms,
    :func:`find_unit`) lies within ``margin`` of the best unit's cost are returned,
    fewest protons first. Only the Occam term chose between them and the best. A unit at which a
    signal of the best count falls under half a proton is no second reading of the count
    (:func:`_keeps_signals`) and is not returned.

    The Occam term rests on every signal being seen, and the one-proton signals that
    would tell n from 2n protons are the first to vanish in the noise. So when the
    unit of twice the best count lies under ``detection_limit`` (the smallest integral
    a one-proton multiplet needs to be detected), that count is compared with the
    best on misfit and minor-signal terms alone.

    A second reading need not be a multiple: with the error model's 30 % allowance at one proton,
    signals of 2 and 3 H (2:3:2:3:3) can read as five singlets of one proton, and 4.8 H fits about
    as well as 13. So on a side (more protons, fewer) where no multiple fits, the candidate unit of
    :func:`find_unit` that fits best is offered when it fits within ``margin`` and its total lies
    beyond the reach of :func:`near_totals` (under 0.6 or over 1.6 times the best total).
    """
    arr, share = _positive(integrals, loss)
    best_total = _misfit(arr, best_unit, share)[2].sum()
    signals = _signals(arr, best_unit, share)
    out: dict[int, float] = {}
    for factor in (3.0, 2.0, 0.5, 1.0 / 3.0):
        u = _polish(arr, best_unit * factor)
        misfit, _, n = _misfit(arr, u, share)
        if not np.isfinite(misfit) or not _keeps_signals(arr, u, signals, share):
            continue
        hidden = factor == 0.5 and detection_limit is not None and u < detection_limit
        parsimony = 0.0 if hidden else PARSIMONY
        if _cost(arr, u, parsimony, share) > _cost(arr, best_unit, parsimony, share) + margin:
            continue
        total = int(n.sum())
        if abs(total - best_total) >= 0.25 * best_total:
            out[total] = float(u)
    # On a side where no multiple fits, the best-fitting unit of any size beyond near_totals' reach.
    units = _candidate_units(arr, max_h_per_region)
    costs = _costs(arr, units, share)
    totals = arr.sum() / units
    reach = arr.sum() / best_unit * np.array(NEAR_TOTALS)
    fit = (costs <= _cost(arr, best_unit, loss=share) + margin) & ((totals < reach[0]) | (totals > reach[1]))
    far = [(float(c), float(u)) for c, u in zip(costs[fit], units[fit]) if _keeps_signals(arr, u, signals, share)]
    for side in (-1, 1):
        if not any((t - best_total) * side > 0 for t in out):
            fits = [(c, u) for c, u in far if (arr.sum() / u - best_total) * side > 0]
            if fits:
                u = min(fits)[1]
                out[int(_misfit(arr, u, share)[2].sum())] = u
    return [out[t] for t in sorted(out)]


def near_totals(integrals: Sequence[float], best_unit: float, *, margin: float = AMBIGUITY_MARGIN,
                max_h_per_region: int = 12, loss: Sequence[float] | None = None) -> list[float]:
    """Totals (H) of the other candidate units that fit about as well as ``best_unit``.

    Crowded spectra (overlapping methyls, a multiplet cut differently by the noise) can be
    fitted by units a few protons apart at nearly the same cost. Each candidate unit of
    :func:`find_unit` whose cost lies within ``margin`` of the best unit's gives its total;
    only totals within :data:`NEAR_TOTALS` (0.6-1.6) times the best one are returned (those further
    away are :func:`competing_units`' business).
    """
    arr, share = _positive(integrals, loss)
    best_cost = _cost(arr, best_unit, loss=share)
    best_total = arr.sum() / best_unit
    units = _candidate_units(arr, max_h_per_region)
    totals = arr.sum() / units
    near = (NEAR_TOTALS[0] * best_total <= totals) & (totals <= NEAR_TOTALS[1] * best_total)
    out = {round(float(t), 2) for t in totals[near & (_costs(arr, units, share) <= best_cost + margin)]}
    return sorted(out)


def find_unit(integrals: Sequence[float], *, max_h_per_region: int = 12, loss: Sequence[float] | None = None) -> tuple[float, float]:
    """(integral of one proton, its cost) from a set of region integrals.

    Candidate units are each region's integral divided by 1..``max_h_per_region``,
    each refined by least squares on its own integer assignment. The unit with the
    lowest cost wins: the mean squared misfit in units of the expected integration
    error (``RELATIVE_ERROR``, ``ABSOLUTE_ERROR``), plus ``PARSIMONY`` per proton per
    region (a unit half as large fits about as well and doubles every count), plus
    ``MINOR_PENALTY`` times the share of signal left in regions under half a proton.
    """
    arr, share = _positive(integrals, loss)
    if arr.size == 0:
        raise ParameterError("integrals: no positive region to count protons from")
    units = _candidate_units(arr, max_h_per_region)
    costs = _costs(arr, units, share)
    if not np.isfinite(costs).any():
        return float(arr.max()), np.inf
    # The smallest unit among those that fit best (ties within rounding).
    best = int(np.flatnonzero(costs <= costs.min() + 1e-12)[0])
    return float(units[best]), float(costs[best])


def _bounded_fits(arr: np.ndarray, share: np.ndarray | None, allowed_totals: Sequence[int]) -> list[tuple[float, float, int]]:
    """(cost, unit, total) of the best fit for each allowed total, fewest protons first.

    For each allowed total N the unit starts at the summed integral over N and is refined by
    least squares on its own integer assignment; a total whose integer assignment strays more
    than one proton from N does not fit.
    """
    fits = []
    for total in sorted({int(t) for t in allowed_totals if int(t) > 0}):
        best: tuple[float, float, int] | None = None
        for u in (arr.sum() / total, _polish(arr, arr.sum() / total)):
            misfit, _, n = _misfit(arr, u, share)
            if not np.isfinite(misfit) or abs(n.sum() - total) > 1:
                continue
            c = _cost(arr, u, loss=share)
            if best is None or c < best[0]:
                best = (c, float(u), total)
        if best is not None:
            fits.append(best)
    return fits


def bounded_unit(integrals: Sequence[float], allowed_totals: Sequence[int], *, loss: Sequence[float] | None = None) -> tuple[float, int]:
    """(unit, total) among whole-proton totals a caller allows (e.g. candidate formulas' visible H).

    For each allowed total N the unit starts at the summed integral over N and is
    refined by least squares on its own integer assignment; the pair with the
    lowest cost whose integer total stays within one proton of N wins (the fewer
    protons on a tie).
    """
    arr, share = _positive(integrals, loss)
    if arr.size == 0:
        raise ParameterError("integrals: no positive region to count protons from")
    fits = _bounded_fits(arr, share, allowed_totals)
    if not fits:
        raise ParameterError(f"candidate_h_counts: no allowed total ({', '.join(map(str, allowed_totals))}) fits the integrals")
    _, unit, total = min(fits, key=lambda fit: fit[0])
    return unit, total


def bounded_alternatives(integrals: Sequence[float], allowed_totals: Sequence[int], best_unit: float, *,
                         margin: float = AMBIGUITY_MARGIN, loss: Sequence[float] | None = None) -> tuple[list[float], list[float]]:
    """(competing units, neighbouring totals) among the allowed totals that fit about as well as ``best_unit``.

    The candidate formulas bound the count but need not settle it: the totals they allow can span a
    factor of two or more (the formulas of M and of a 2M ion read as M; a formula alone, whose N-H and
    O-H may or may not show), and the integrals may fit two of them, as they fit n and 2n protons
    without formulas (:func:`competing_units`).
    Allowed totals whose cost lies within ``margin`` of the best unit's, and at whose unit every signal
    of the best count stays a signal (:func:`_keeps_signals`), are returned: units of totals at least
    a quarter away from the best one (reported as ``ambiguous``), and the totals of those nearer
    (which only widen the range, as :func:`near_totals` does).
    """
    arr, share = _positive(integrals, loss)
    best_cost = _cost(arr, best_unit, loss=share)
    best_total = arr.sum() / best_unit
    signals = _signals(arr, best_unit, share)
    competing: list[tuple[float, float]] = []
    near: list[float] = []
    for cost, unit, _ in _bounded_fits(arr, share, allowed_totals):
        total = float(arr.sum() / unit)
        if cost > best_cost + margin or abs(unit - best_unit) <= 1e-9 * best_unit:
            continue
        if not _keeps_signals(arr, unit, signals, share):
            continue
        if abs(total - best_total) >= 0.25 * best_total:
            competing.append((cost, unit))
        else:
            near.append(round(total, 2))
    # Two allowed totals can settle on about the same unit (10 and 11 H both read as 10.0-10.1 H):
    # that is one reading, the better-fitting one.
    kept: list[float] = []
    for _, unit in sorted(competing):
        if all(abs(arr.sum() / unit - arr.sum() / other) >= 0.5 for other in kept):
            kept.append(unit)
    return kept, near


def _polish(arr: np.ndarray, unit: float) -> float:
    """Least-squares unit given the integer assignment found with ``unit``."""
    h = np.maximum(np.round(arr / unit), 0)
    keep = h >= 1
    if not keep.any():
        return unit
    return float(np.sum(arr[keep] * h[keep]) / np.sum(h[keep] ** 2))


def count_protons(
    regions: Sequence[Region],
    *,
    integral_sigma: Sequence[float] | None = None,
    anchor_h: int | None = None,
    candidate_h_counts: Sequence[int] | None = None,
    one_proton_detection_limit: float | None = None,
    threshold_losses: Sequence[float] | None = None,
) -> tuple[tuple[Region, ...], ProtonCount]:
    """Protons per counted region and in total.

    Parameters
    ----------
    regions
        From :func:`nmrcheck.processing.regions.find_regions`; flagged regions are
        passed through uncounted.
    integral_sigma
        Noise standard deviation of each region's integral (same order), for the range.
    anchor_h
        A known number of observable protons: the unit becomes the counted total over
        this number, and the residuals say how well the regions fit integers.
    candidate_h_counts
        Whole-proton totals the candidate formulas allow (visible H); the unit is then
        chosen among them (:func:`bounded_unit`), not from the integrals alone; allowed totals
        the integrals fit about as well are offered beside it (:func:`bounded_alternatives`).
    one_proton_detection_limit
        Smallest integral a one-proton multiplet needs to be detected (same units as the
        integrals). Where twice the count would put one proton under it, one-proton
        signals may be missing, and that count is offered as an alternative
        (``ambiguous``) unless the integrals themselves rule it out (:func:`competing_units`).
    threshold_losses
        Per region (same order as ``regions``), the share of its area that may lie under the
        detection threshold (:func:`threshold_loss`); regions reading short by up to it are not
        held against a unit, and the high end of the range reaches what the regions would hold
        with that share restored.
    """
    counted_idx = [i for i, r in enumerate(regions) if r.counted and r.integral > 0]
    if not counted_idx:
        raise ParameterError("regions: no analyte signal to count")
    integrals = np.array([regions[i].integral for i in counted_idx])
    loss = None if threshold_losses is None else np.asarray(threshold_losses, float)[counted_idx]
    sig = np.zeros(len(regions)) if integral_sigma is None else np.asarray(integral_sigma, float)
    alternatives: list[float] = []
    neighbours: list[float] = []
    bounded: tuple[int, ...] | None = None
    if anchor_h is not None:
        if anchor_h <= 0:
            raise ParameterError(f"anchor_h: must be a positive number of protons, got {anchor_h}")
        unit = float(integrals.sum() / anchor_h)
        method = "anchored"
    elif candidate_h_counts:
        bounded = tuple(sorted({int(t) for t in candidate_h_counts}))
        unit, _ = bounded_unit(integrals, bounded, loss=loss)
        method = "bounded by candidate formulas"
        alternatives, neighbours = bounded_alternatives(integrals, bounded, unit, loss=loss)
    else:
        unit, _ = find_unit(integrals, loss=loss)
        method = "self-consistent"
        alternatives = competing_units(integrals, unit, detection_limit=one_proton_detection_limit, loss=loss)
        neighbours = near_totals(integrals, unit, loss=loss)
    out = list(regions)
    hs = integrals / unit
    for i, h in zip(counted_idx, hs):
        out[i] = replace(regions[i], h=float(h))
    total = float(hs.sum())
    integer = int(np.sum(np.round(hs[hs >= 0.5])))
    noise_h = float(np.sqrt(np.sum((sig[counted_idx] / unit) ** 2))) if sig.size else 0.0
    half = 2.0 * noise_h + SYSTEMATIC_FRACTION * total + 0.3
    # Minor regions (under half a proton each) may be impurities rather than the analyte:
    # the low end of the range is what the major regions alone hold.
    low = min(total - half, integer - 2.0 * noise_h - 0.3)
    high = total + half
    # A region found above the threshold may have left up to its threshold loss of its area under it
    # (:func:`threshold_loss`): what the regions may hold beyond what they show belongs to the range.
    if loss is not None:
        high += float(np.sum(np.clip(hs, 0.0, None) * loss / (1.0 - np.clip(loss, 0.0, 0.5))))
    # Units a few protons apart that fit about as well widen the range to their totals.
    if neighbours:
        low = min(low, min(neighbours) - 0.3)
        high = max(high, max(neighbours) + 0.3)
    # Where a one-proton multiplet of this unit would not be detected, the visible signals say
    # nothing of how many such protons are missing: the total is a lower bound, and the range
    # reaches as many protons again (a convention: the formula's H count is what settles it).
    lower_bound = bool(method == "self-consistent" and one_proton_detection_limit is not None
                       and one_proton_detection_limit >= unit)
    if lower_bound:
        high = max(high, HIDDEN_FACTOR * (total + half))
    residuals = tuple(float(h - np.round(h)) for h in hs)
    totals: tuple[float, ...] = ()
    if alternatives:
        totals = tuple(sorted({round(total, 2)} | {round(float(integrals.sum() / u), 2) for u in alternatives}))
        scale = [t / total for t in totals]
        low = min(low, low * min(scale))
        high = max(high, (total + half) * max(scale))
    count = ProtonCount(
        unit_integral=unit,
        total_h=total,
        total_h_low=max(0.0, low),
        total_h_high=high,
        integer_h=integer,
        method=method,
        anchored_to=anchor_h,
        residuals=residuals,
        ambiguous=bool(alternatives),
        alternative_totals=totals,
        bounded_by=bounded,
        lower_bound=lower_bound,
    )
    return tuple(out), count
