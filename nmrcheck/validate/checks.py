"""The individual checks of a candidate against the evidence; each is a pure function returning a CheckResult.

The proton count is re-derived for every candidate: the spectrum's integrals are
anchored to each H number the candidate can show in this solvent, and the
hypothesis holds only if the integrals then come out as whole numbers of protons
summing to that number. The processor's own (self-found) unit is reported beside
it but not trusted, since on real spectra it can be off by a whole factor.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from nmrcheck.data import load_table
from nmrcheck.errors import CandidateError
from nmrcheck.predict import (
    SHIFT_REGIONS,
    SOLVENTS as EXCHANGE_SOLVENTS,
    Environment,
    VisibleHydrogens,
    exchangeable_hydrogens,
    expected_visible_h,
    group_environments,
    predict_shifts,
    region_of,
    solvent_exchange_rules,
)
from nmrcheck.validate.records import Candidate, CheckResult, Evidence

__all__ = [
    "MIN_SNR",
    "CountFit",
    "fit_count",
    "expected_visible",
    "visible_h",
    "h_environments",
    "check_mass",
    "check_isotopes",
    "check_proton_count",
    "check_unsaturation",
    "check_shift_regions",
    "check_signal_count",
    "check_assignment",
    "register_check",
    "CHECKS",
    "all_checks",
]

#: Below this SNR integrals are too noisy to count protons (common practice for routine 1H work).
MIN_SNR = 10.0
#: A region holding less than half a proton at the candidate's unit cannot be one of its signals: impurity or baseline.
MINOR_H = 0.5
#: Allowed deviation of a region from its whole number of H: TOL_FLOOR + TOL_PER_H * n. Routine
#: (not fully relaxed) spectra integrate to about 10 % per signal plus a baseline floor (common practice).
TOL_FLOOR = 0.2
TOL_PER_H = 0.1
#: Largest share of the total integral that small unassigned regions may hold before a warning.
MINOR_SHARE_WARN = 0.15
#: Earth-mover distance per H between predicted and observed shift distributions, ppm: pass / warn
#: limits. Additive-increment predictions miss by 0.2-0.3 ppm on average (from memory), so twice that passes.
EMD_PASS_PPM = 0.5
EMD_WARN_PPM = 0.9

WEIGHTS = {"mass": 3.0, "isotopes": 1.5, "proton count": 3.0, "unsaturation": 2.0, "shift regions": 2.0, "signal count": 0.5}


def _na(name: str, why: str) -> CheckResult:
    return CheckResult(name, "not-applicable", "-", "-", why, WEIGHTS[name])


# ----------------------------------------------------------------------------- hydrogens (nmrcheck.predict)


def _exchange_solvent(evidence: Evidence) -> str | None:
    """The evidence's solvent when the exchange table covers it; None means 'any exchangeable H may or may not be seen'."""
    return evidence.solvent if evidence.solvent in EXCHANGE_SOLVENTS else None


def visible_h(candidate: Candidate, evidence: Evidence) -> VisibleHydrogens:
    """(min, max, carbon-bound, exchangeable) H the candidate's structure or formula shows in the evidence's solvent."""
    target = candidate.mol if candidate.mol is not None else dict(candidate.formula.counts)
    return expected_visible_h(target, _exchange_solvent(evidence))


def h_environments(candidate: Candidate) -> tuple[Environment, ...]:
    """Predicted shift of each environment of equivalent hydrogens of the candidate's structure (empty for a formula).

    Raises
    ------
    CandidateError
        When the structure cannot be perceived by the shift rules.
    """
    if candidate.mol is None:
        return ()
    return group_environments(predict_shifts(candidate.mol))


def _surely_seen(env: Environment, solvent: str | None) -> bool:
    """True for carbon-bound H, and for exchangeable H whose class is always seen in ``solvent``."""
    if not env.exchangeable:
        return True
    if solvent is None or env.h_class is None:
        return False
    return solvent_exchange_rules(solvent)[env.h_class].visible == "yes"


def nmr_usable(evidence: Evidence) -> str | None:
    """Why the spectrum cannot be used for counting, or None when it can."""
    if not evidence.regions:
        return "no analyte signal above the noise threshold"
    if evidence.snr < MIN_SNR:
        return f"SNR {evidence.snr:.1f} is below {MIN_SNR:g}, too low to count protons"
    return None


# ----------------------------------------------------------------------------- mass


def check_mass(candidate: Candidate, evidence: Evidence) -> CheckResult:
    """Monoisotopic mass of the candidate against the MS feature's neutral mass (ppm)."""
    ms = evidence.ms
    if ms is None:
        return _na("mass", "no MS feature given, so the mass cannot be checked")
    calc = candidate.formula.monoisotopic_mass
    err = (ms.neutral_mass - calc) / calc * 1e6
    status = "pass" if abs(err) <= ms.ppm else "warn" if abs(err) <= 2 * ms.ppm else "fail"
    verb = {"pass": "within", "warn": "outside but within twice", "fail": "far outside"}[status]
    return CheckResult(
        "mass",
        status,
        f"M = {ms.neutral_mass:.5f} u",
        f"{calc:.5f} u +/- {ms.ppm:g} ppm",
        f"monoisotopic mass {calc:.5f} u differs from the MS feature by {err:+.1f} ppm, {verb} the {ms.ppm:g} ppm tolerance",
        WEIGHTS["mass"],
        {"error_ppm": err},
    )


def check_isotopes(candidate: Candidate, evidence: Evidence) -> CheckResult:
    """Observed isotope intensities of the first ion against the candidate's pattern (chi-squared)."""
    ms = evidence.ms
    if ms is None or not ms.isotopes:
        return _na("isotopes", "no isotope intensities given")
    from nmrcheck.chem.isotopes import agreement_limit, fit_isotopes, isotope_pattern

    k = len(ms.isotopes)
    pattern = isotope_pattern(candidate.formula, ion=ms.ions[0][1], max_peaks=max(k, 2), min_abundance=0.0)
    pred = list(pattern.relative())[:k] + [0.0] * max(0, k - len(pattern.abundances))
    chi2, scaled, dof = fit_isotopes(ms.isotopes, np.asarray(pred))
    limit = agreement_limit(dof)
    status = "pass" if chi2[0] <= limit else "fail"
    shown = ", ".join(f"{v:.1f}" for v in scaled[0])
    return CheckResult(
        "isotopes",
        status,
        ", ".join(f"{v:g}" for v in ms.isotopes),
        shown,
        f"isotope pattern chi-squared {chi2[0]:.1f} against a limit of {limit:.1f} ({dof} degrees of freedom)",
        WEIGHTS["isotopes"],
    )


# ----------------------------------------------------------------------------- proton count


@dataclass(frozen=True)
class CountFit:
    """The integrals anchored to ``n`` visible protons."""

    n: int
    unit: float
    h: tuple[float, ...]
    """Per counted region (same order as the evidence), H at this unit."""
    whole: tuple[int, ...]
    """Nearest whole number of H per region (0 for minor regions)."""
    worst_z: float
    """Largest |h - whole| / tolerance over the major regions."""
    worst_region: int
    rms_z: float
    minor_share: float

    @property
    def integer_sum(self) -> int:
        return int(sum(self.whole))

    @property
    def fits(self) -> bool:
        return self.worst_z <= 1.0 and self.integer_sum == self.n

    @property
    def marginal(self) -> bool:
        return self.worst_z <= 1.6 and self.integer_sum == self.n

    @property
    def badness(self) -> float:
        return self.rms_z + 0.5 * self.worst_z + abs(self.integer_sum - self.n)


def fit_count(integrals, n: int) -> CountFit:
    """Anchor region ``integrals`` to ``n`` protons and measure how far they are from whole numbers."""
    arr = np.asarray(integrals, float)
    total = arr.sum()
    unit = total / n
    major = arr / unit >= MINOR_H
    # Small impurity or baseline regions would dilute the unit; anchor on the signals that hold protons.
    if major.any():
        unit = arr[major].sum() / n
        major = arr / unit >= MINOR_H
    h = arr / unit
    whole = np.where(major, np.maximum(1, np.round(h)), 0).astype(int)
    tol = TOL_FLOOR + TOL_PER_H * np.maximum(whole, 1)
    z = np.where(major, np.abs(h - whole) / tol, 0.0)
    worst = int(np.argmax(z)) if z.size else 0
    rms = float(np.sqrt(np.sum(arr[major] * z[major] ** 2) / arr[major].sum())) if major.any() else 9.9
    return CountFit(n, float(unit), tuple(map(float, h)), tuple(map(int, whole)), float(z.max()) if z.size else 9.9, worst, rms, float(arr[~major].sum() / total))


def _hidden_under_flagged(candidate: Candidate, evidence: Evidence) -> int:
    """Carbon-bound H a structure predicts inside solvent/water/standard regions (they are not counted)."""
    if candidate.mol is None or not evidence.flagged:
        return 0
    try:
        envs = h_environments(candidate)
    except CandidateError:
        return 0
    n = 0
    for g in envs:
        if g.exchangeable:
            continue
        for start, end, _ in evidence.flagged:
            if end - 0.15 <= g.ppm <= start + 0.15:
                n += g.n_h
                break
    return n


#: Solvents that exchange O-H/N-H for D (or average them with the suppressed water): every exchangeable H may be unseen.
EXCHANGING_SOLVENTS = frozenset({"D2O", "CD3OD", "H2O/D2O"})
#: In an aprotic solvent, exchangeable H that are not seen at all: at most this many (one broad OH, NH or COOH
#: lost in the baseline or merged with the water line is common; the others show as lines, sharp in
#: DMSO-d6 and acetone-d6, broad in CDCl3; common practice).
MAX_UNSEEN_APROTIC = 1


def unseen_exchangeable(bound: int, evidence: Evidence) -> int:
    """How many of a bare formula's (up to ``bound``) exchangeable H may go unseen in this spectrum's solvent."""
    if evidence.solvent is None or evidence.solvent in EXCHANGING_SOLVENTS:
        return bound
    return min(bound, MAX_UNSEEN_APROTIC)


def expected_visible(candidate: Candidate, evidence: Evidence) -> tuple[int, int, str]:
    """(least, most) H the candidate should show in this spectrum, and a phrase saying why."""
    solvent = evidence.solvent or "unknown"
    if candidate.mol is not None:
        lo, hi, ch, xh = visible_h(candidate, evidence)
        hidden = _hidden_under_flagged(candidate, evidence)
        why = f"{ch} carbon-bound H"
        if xh:
            why += f" + {lo - ch}-{hi - ch} of {xh} exchangeable in {solvent}" if hi > lo else f" + {hi - ch} of {xh} exchangeable in {solvent}"
        if hidden:
            why += f"; up to {hidden} may hide under the solvent/water signal"
        return max(1, lo - hidden), hi, why
    lo, hi, _, bound = visible_h(candidate, evidence)
    unseen = unseen_exchangeable(bound, evidence)
    why = f"{hi} H in the formula, of which up to {bound} could be exchangeable (from its heteroatoms)"
    if unseen < bound:
        why += f"; in {evidence.solvent} at most {unseen} of them can go unseen"
    return max(1, hi - unseen), hi, why


def _fmt_range(lo: float, hi: float, digits: int = 0) -> str:
    return f"{lo:.{digits}f}" if lo == hi else f"{lo:.{digits}f}-{hi:.{digits}f}"


def best_fit(candidate: Candidate, evidence: Evidence) -> CountFit | None:
    """The anchored count within the candidate's visible range that fits the integrals best."""
    if nmr_usable(evidence):
        return None
    lo, hi, _ = expected_visible(candidate, evidence)
    integrals = [r.integral for r in evidence.regions]
    fits = [fit_count(integrals, n) for n in range(lo, hi + 1)]
    if candidate.mol is None:
        # a formula's H may also sit under a water line the processing set aside (analyte multiplets
        # there are flagged with it): fewer counted H are allowed, by what that line holds at the unit
        for n in range(max(1, lo - 4), lo):
            f = fit_count(integrals, n)
            if n + water_capacity(evidence, f.unit) >= lo:
                fits.append(f)
    return min(fits, key=lambda f: (not f.fits, f.badness))


def water_capacity(evidence: Evidence, unit: float) -> int:
    """Whole protons the flagged water lines hold at ``unit`` (analyte H may lie under them)."""
    if not evidence.flagged_integrals or unit <= 0:
        return 0
    total = 0
    for (_, _, label), integral in zip(evidence.flagged, evidence.flagged_integrals):
        if label in ("H2O", "HOD", "HDO") and integral > 0:
            total += int(round(integral / unit))
    return total


def check_proton_count(candidate: Candidate, evidence: Evidence) -> CheckResult:
    """Visible H the candidate should show against the integrals anchored to that number."""
    covered = _covered("proton count", candidate)
    if covered is not None:
        return covered
    why = nmr_usable(evidence)
    if why:
        return _na("proton count", why)
    lo, hi, phrase = expected_visible(candidate, evidence)
    fit = best_fit(candidate, evidence)
    if fit is None:  # pragma: no cover - nmr_usable above already said why
        return _na("proton count", "no count")
    reg = evidence.regions[fit.worst_region]
    selfc = ""
    if evidence.total_h is not None:
        selfc = f"; the spectrum's own count is {evidence.total_h:.1f} H (range {evidence.total_h_low:.1f}-{evidence.total_h_high:.1f})"
    observed = f"anchored to {fit.n} H the signals hold {fit.integer_sum} whole H (worst: {fit.h[fit.worst_region]:.2f} H at {reg.peak_ppm:.2f} ppm){selfc}"
    expected = f"{_fmt_range(lo, hi)} visible H ({phrase})"
    worst_txt = f"the {reg.peak_ppm:.2f} ppm signal comes out as {fit.h[fit.worst_region]:.2f} H"
    if fit.fits:
        status = "pass"
        text = f"expects {_fmt_range(lo, hi)} visible H; anchored to {fit.n} H every signal is a whole number of protons (largest deviation: {worst_txt})"
    elif fit.marginal:
        status = "warn"
        text = f"expects {_fmt_range(lo, hi)} visible H; anchored to {fit.n} H the signals only roughly fit whole numbers ({worst_txt}, {fit.integer_sum} whole H)"
    else:
        status = "fail"
        text = f"expects {_fmt_range(lo, hi)} visible H, but no such count makes the integrals whole numbers: at {fit.n} H {worst_txt} and the signals add to {fit.integer_sum} whole H"
    if status == "pass" and fit.minor_share > MINOR_SHARE_WARN:
        status = "warn"
        text += f"; {100 * fit.minor_share:.0f} % of the integral sits in small regions (impurity or baseline)"
    return CheckResult(
        "proton count", status, observed, expected, text, WEIGHTS["proton count"],
        {"fit_n": fit.n, "unit": fit.unit, "h": fit.h, "whole": fit.whole, "low": lo, "high": hi},
    )


# ----------------------------------------------------------------------------- unsaturation


@lru_cache(maxsize=None)
def _unsaturation_rules() -> dict[str, tuple[float, float, float, int, str]]:
    return {r["rule"]: (float(r["low_ppm"]), float(r["high_ppm"]), float(r["min_h"]), int(r["rdbe"]), r["source"]) for r in load_table("unsaturation_signals")}


def _exchangeable_allowances(candidate: Candidate, evidence: Evidence) -> tuple[int, int]:
    """(NH that could sit among aromatic signals, all exchangeable H that could be visible)."""
    lo, hi, ch, bound = visible_h(candidate, evidence)
    if candidate.mol is not None:
        nh = sum(s.n_h for s in exchangeable_hydrogens(candidate.mol) if s.element == "N") if hi > ch else 0
        return nh, hi - ch
    return min(bound, candidate.formula.count("N")), bound


def required_rdbe(candidate: Candidate, evidence: Evidence, fit: CountFit) -> tuple[int, list[str]]:
    """Least ring-plus-double-bond count the anchored signals demand, and the rules that set it."""
    rules = _unsaturation_rules()
    nh_allow, x_allow = _exchangeable_allowances(candidate, evidence)

    def h_in(rule: str, exclude: tuple[float, float] | None = None) -> float:
        low, high = rules[rule][:2]
        s = 0.0
        for r, h in zip(evidence.regions, fit.h):
            if low <= r.peak_ppm <= high and not (exclude and exclude[0] <= r.peak_ppm <= exclude[1]):
                s += h
        return s

    reasons = []
    need = 0
    ald_lo, ald_hi = rules["aldehyde"][:2]
    arom = h_in("aromatic4") - nh_allow
    if arom >= rules["aromatic4"][2]:
        need = rules["aromatic4"][3]
        reasons.append(f"{arom:.1f} H at 6.5-8.8 ppm mean an aromatic ring ({need})")
        vinyl = h_in("vinyl_extra") - x_allow
        if vinyl >= rules["vinyl_extra"][2]:
            need += rules["vinyl_extra"][3]
            reasons.append(f"{vinyl:.1f} olefinic H at 5.5-6.5 ppm add a C=C")
    elif h_in("sp2", (ald_lo, ald_hi)) >= rules["sp2"][2]:
        need = rules["sp2"][3]
        reasons.append("signals above 6.5 ppm need an sp2 system (1)")
    ald = h_in("aldehyde") - x_allow
    if ald >= rules["aldehyde"][2]:
        need += rules["aldehyde"][3]
        reasons.append(f"{ald:.1f} H at 9.3-10.3 ppm mean a formyl C=O")
    return need, reasons


def check_unsaturation(candidate: Candidate, evidence: Evidence) -> CheckResult:
    """The candidate's ring-plus-double-bond count against the minimum its anchored signals demand."""
    r = candidate.formula.rdbe
    if r < 0 or abs(r - round(r)) > 1e-9:
        return CheckResult("unsaturation", "fail", "-", f"RDBE {r:g}", f"RDBE {r:g} is not that of a closed-shell neutral molecule", WEIGHTS["unsaturation"])
    fit = best_fit(candidate, evidence)
    if fit is None:
        return _na("unsaturation", nmr_usable(evidence) or "no count")
    need, why = required_rdbe(candidate, evidence, fit)
    status = "pass" if r >= need else "fail"
    because = "; ".join(why) if why else "no aromatic, olefinic or formyl signal sets a minimum"
    text = (
        f"RDBE {r:.0f} meets the minimum of {need} the spectrum demands ({because})"
        if status == "pass"
        else f"RDBE {r:.0f} is below the minimum of {need} the spectrum demands ({because})"
    )
    return CheckResult("unsaturation", status, f"at least {need}", f"RDBE {r:.0f}", text, WEIGHTS["unsaturation"], {"required": need})


# ----------------------------------------------------------------------------- shifts


def _class_of(ppm: float) -> str:
    """The shift region (nmrcheck.predict's, shared with the predictor) of ``ppm``; shifts beyond the ends go to the end regions."""
    low, high = SHIFT_REGIONS[0].low_ppm, SHIFT_REGIONS[-1].high_ppm
    return region_of(min(max(float(ppm), low), high))


def visible_groups(candidate: Candidate, evidence: Evidence):
    """Predicted H groups the candidate should show here (exchangeable ones only where they are surely seen)."""
    solvent = _exchange_solvent(evidence)
    return tuple(g for g in h_environments(candidate) if _surely_seen(g, solvent))


def _structure_fit(name: str, candidate: Candidate, evidence: Evidence, bare: str) -> CheckResult | tuple[CountFit, tuple[Environment, ...]]:
    """(best count, visible predicted groups) for a check that needs a structure, or its not-applicable result."""
    if candidate.mol is None:
        return _na(name, bare)
    fit = best_fit(candidate, evidence)
    if fit is None:
        return _na(name, nmr_usable(evidence) or "no count")
    try:
        return fit, visible_groups(candidate, evidence)
    except CandidateError as exc:
        return _na(name, f"no shift prediction for this structure: {exc}")


def check_shift_regions(candidate: Candidate, evidence: Evidence) -> CheckResult:
    """Predicted shift distribution of a structure against the observed integrals (counts per region, EMD per H)."""
    covered = _covered("shift regions", candidate)
    if covered is not None:
        return covered
    got = _structure_fit("shift regions", candidate, evidence, "a bare formula predicts no shifts")
    if isinstance(got, CheckResult):
        return got
    fit, groups = got
    from scipy.stats import wasserstein_distance

    if not groups:
        return _na("shift regions", "no hydrogens expected to be visible")
    obs = [(r.peak_ppm, h) for r, h, w in zip(evidence.regions, fit.h, fit.whole) if w > 0]
    if not obs:
        return _na("shift regions", "no counted signal")
    emd = float(wasserstein_distance([g.ppm for g in groups], [p for p, _ in obs], [g.n_h for g in groups], [h for _, h in obs]))
    pred_counts: dict[str, float] = {}
    obs_counts: dict[str, float] = {}
    for g in groups:
        pred_counts[_class_of(g.ppm)] = pred_counts.get(_class_of(g.ppm), 0) + g.n_h
    for p, h in obs:
        obs_counts[_class_of(p)] = obs_counts.get(_class_of(p), 0) + h
    names = [r.name for r in SHIFT_REGIONS if r.name in pred_counts or r.name in obs_counts]
    worst = max(names, key=lambda n: abs(pred_counts.get(n, 0) - obs_counts.get(n, 0)))
    diff = obs_counts.get(worst, 0) - pred_counts.get(worst, 0)
    status = "pass" if emd <= EMD_PASS_PPM else "warn" if emd <= EMD_WARN_PPM else "fail"
    observed = ", ".join(f"{n} {obs_counts.get(n, 0):.1f}" for n in names)
    expected = ", ".join(f"{n} {pred_counts.get(n, 0):.0f}" for n in names)
    text = f"predicted shifts (nmrcheck.predict) sit on average {emd:.2f} ppm per H from the observed signals"
    if abs(diff) >= 0.7:
        text += f"; largest difference: {worst} region holds {obs_counts.get(worst, 0):.1f} H where {pred_counts.get(worst, 0):.0f} are expected"
    return CheckResult("shift regions", status, observed, expected, text, WEIGHTS["shift regions"], {"emd_ppm": emd})


def check_signal_count(candidate: Candidate, evidence: Evidence) -> CheckResult:
    """Distinct H environments of a structure against resolved signal groups (warn only: overlap is common)."""
    covered = _covered("signal count", candidate)
    if covered is not None:
        return covered
    got = _structure_fit("signal count", candidate, evidence, "a bare formula has no environments to count")
    if isinstance(got, CheckResult):
        return got
    fit, groups = got
    expected = len(groups)
    seen = sum(1 for w in fit.whole if w > 0)
    if seen > expected + 1:
        return CheckResult(
            "signal count", "warn", f"{seen} signal groups", f"at most {expected} environments",
            f"{seen} resolved signal groups but only {expected} distinct H environments: an impurity, a mixture, rotamers or another structure",
            WEIGHTS["signal count"],
        )
    return CheckResult(
        "signal count", "pass", f"{seen} signal groups", f"up to {expected} environments",
        f"{seen} resolved signal groups for {expected} distinct H environments (overlap can merge them)", WEIGHTS["signal count"],
    )


# ----------------------------------------------------------------------------- assignment

#: Share of a structure's required H that may miss before the structure is rejected (with at least MISFIT_FAIL_H).
MISFIT_FAIL_SHARE = 0.15
MISFIT_FAIL_H = 2
#: Below this support (exp(-mean cost per H / 2)) the assignment is only a rough fit: a mean cost per H above
#: 1.4, i.e. each H on average more than 1.2 calibrated tolerances off.
SUPPORT_WARN = 0.5


def _covered(name: str, candidate: Candidate) -> CheckResult | None:
    """For a structure the assignment replaces the count-only checks: their not-applicable result."""
    if candidate.mol is not None:
        return _na(name, "a structure is judged by its assignment (see 'assignment')")
    return None


def check_assignment(candidate: Candidate, evidence: Evidence) -> CheckResult:
    """Predicted H environments assigned to the observed signals (shift, H count, multiplet); see :mod:`nmrcheck.validate.assign`."""
    if candidate.mol is None:
        return _na("assignment", "a bare formula predicts no environments")
    why = nmr_usable(evidence)
    if why:
        return _na("assignment", why)
    from nmrcheck.validate.assign import assign

    try:
        a = assign(candidate, evidence)
    except CandidateError as exc:
        return _na("assignment", f"no assignment: {exc}")
    misfits = a.misfits
    missing = [e for e in misfits if e.status == "missing"]
    share = a.misfit_h / max(1, a.required_h)
    fitted = sum(e.n_h for e in a.environments if e.required and e.fits)
    observed = f"{fitted} of {a.required_h} H placed within tolerance; {100 * a.explained_share:.0f} % of the counted integral explained"
    expected = f"{len(a.environments)} environments ({a.predictor})"
    if (a.misfit_h >= MISFIT_FAIL_H and share >= MISFIT_FAIL_SHARE) or any(e.n_h >= 2 for e in missing):
        status = "fail"
    elif misfits or a.support < SUPPORT_WARN:
        status = "warn"
    else:
        status = "pass"
    if misfits:
        text = f"{a.misfit_h} of {a.required_h} H do not fit ({a.predictor}): " + "; ".join(e.describe() for e in misfits[:4])
    else:
        text = f"every environment fits a signal ({a.predictor}; joint misfit {a.cost:.1f} over {a.required_h} H, support {a.support:.2f})"
    hidden = [e for e in a.environments if e.status == "hidden"]
    if hidden:
        text += "; " + ", ".join(f"{e.label} at {e.predicted_ppm:.1f} ppm {e.note}" for e in hidden)
    return CheckResult(
        "assignment", status, observed, expected, text, WEIGHTS["assignment"],
        {"support": a.support, "assignment": a, "predictor": a.predictor, "unit": a.unit, "visible_h": a.visible_h},
    )


WEIGHTS["assignment"] = 3.0

#: The checks every candidate goes through, in report order. Other modules add theirs with :func:`register_check`.
CHECKS: list = []


def register_check(check, *, weight: float, after: str | None = None) -> None:
    """Add ``check(candidate, evidence) -> CheckResult`` to the checks every candidate goes through.

    ``weight`` is how much it counts in the score; ``after`` names the check function it follows
    (default: the end). Registering the same function twice is ignored.
    """
    if check in CHECKS:
        return
    WEIGHTS[check.__name__.removeprefix("check_").replace("_", " ")] = weight
    if after is None:
        CHECKS.append(check)
    else:
        idx = next(i for i, f in enumerate(CHECKS) if f.__name__ == after)
        CHECKS.insert(idx + 1, check)


for _check in (check_mass, check_isotopes, check_proton_count, check_unsaturation, check_assignment, check_shift_regions, check_signal_count):
    CHECKS.append(_check)


def all_checks(candidate: Candidate, evidence: Evidence) -> tuple[CheckResult, ...]:
    """Every registered check, in report order."""
    return tuple(f(candidate, evidence) for f in CHECKS)
