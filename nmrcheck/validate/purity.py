"""One compound or several? The purity call of a well from the best structure's assignment and the MS features.

The best candidate that is not ``inconsistent`` and has a structure explains part of the counted
integral through its assignment. What is left is grouped into residual signal sets, each with its
own integer unit (the integral of one of its protons), so a second compound's share is a molar
share, not an integral share. Broad lines (exchangeable H, water) are not counted as impurities.
Several major features in the well's LC-MS run are evidence too.

Calls: ``single compound`` (other compounds together below :data:`SINGLE_BELOW_PCT` of the
moles), ``major compound with impurities`` (the main compound at least :data:`MAJOR_FROM_PCT`),
``mixture`` (less), or ``undecided`` when no structure fits well enough to attribute signals.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from nmrcheck.validate.assign import BROAD_HZ, MINOR_H, Assignment
from nmrcheck.validate.records import CandidateVerdict, Evidence, WellFeature

__all__ = ["Purity", "PURITY_CALLS", "purity_of", "residual_sets", "well_features_from", "SINGLE_BELOW_PCT", "MAJOR_FROM_PCT"]

PURITY_CALLS = ("single compound", "major compound with impurities", "mixture", "undecided")
#: Other compounds below this molar share (%) leave a well a single compound: routine spectra of pure
#: isolates keep a few % of unexplained integral in baseline, satellites and traces (measured on the 15
#: shared pure compounds: residual sets 0-12 %, median 0; common practice calls >= 95 % 'pure').
SINGLE_BELOW_PCT = 8.0
#: Main compound at or above this molar share (%): 'major compound with impurities'; below it, 'mixture'.
MAJOR_FROM_PCT = 60.0
#: An MS feature at or above this share of the well's ion current is a major one (as in nmrcheck.ms).
MS_MAJOR_PCT = 10.0
#: A single line this close to the solvent's water position is taken for water (its shift moves with temperature and pH).
WATER_WINDOW_PPM = 0.1
#: A signal that holds at least this share of the counted integral counts as resolved (against the candidates' H).
SIGNAL_SHARE = 0.01
#: A residual set's lines must be this close (H) to whole numbers of their own unit.
SET_TOLERANCE_H = 0.2
#: A set gives a molar share only with at least this many signals, each this close to its whole number
#: (a second compound shows several signals in whole-number ratios; a few stray lines fit some unit by chance).
MOL_MIN_SIGNALS = 3
MOL_TOLERANCE_H = 0.15


@dataclass(frozen=True)
class ResidualSet:
    """Signals no environment of the main structure explains, sharing one integer unit."""

    ppm: tuple[float, ...]
    h: tuple[int, ...]
    """Whole protons per signal at the set's own unit (single-signal sets: the signal's H at the main unit)."""
    unit: float | None
    """Integral per proton of the set; None for a single signal, whose proton count is unknown."""
    integral: float
    integrals: tuple[float, ...] = ()

    def integral_of(self, k: int) -> float:
        return self.integrals[k] if self.integrals else self.integral


@dataclass(frozen=True)
class Purity:
    """The purity call of one well, with its evidence."""

    call: str
    """One of :data:`PURITY_CALLS`."""
    share_pct: float | None
    """Share of the counted 1H integral (broad exchange lines and water left out) that the main compound's
    assignment explains, % (None when undecided): a proton-weighted share, equal to the molar share when the
    compounds carry as many visible H."""
    explained_pct: float | None
    """Share of the counted integral the main structure's assignment explains, %."""
    candidate: str | None
    """Label of the structure the signals were attributed to."""
    evidence: tuple[str, ...]
    residual_sets: tuple[ResidualSet, ...] = field(default=())
    main_mol_pct: float | None = None
    """Molar share of the main compound, %, when the other signals form sets with their own integer unit
    (mole ratio = ratio of the integrals per proton); None otherwise."""

    @property
    def label(self) -> str:
        """The call as shown: 'major compound with impurities (about 85 %)'."""
        if self.call == "major compound with impurities" and self.share_pct is not None:
            return f"{self.call} (about {self.share_pct:.0f} %)"
        return self.call

    def as_dict(self) -> dict[str, Any]:
        return {
            "call": self.call,
            "label": self.label,
            "share_pct": None if self.share_pct is None else round(self.share_pct, 1),
            "explained_pct": None if self.explained_pct is None else round(self.explained_pct, 1),
            "main_mol_pct": None if self.main_mol_pct is None else round(self.main_mol_pct, 1),
            "candidate": self.candidate,
            "evidence": list(self.evidence),
            "residual_sets": [
                {"ppm": [round(p, 3) for p in s.ppm], "h": list(s.h), "own_unit": s.unit is not None, "integral": float(s.integral)}
                for s in self.residual_sets
            ],
        }


def well_features_from(well_ms: Any) -> tuple[WellFeature, ...]:
    """WellFeatures from an :class:`nmrcheck.ms.features.WellMs`, or from its record (a dict with ``features``,
    each with ``share`` (0-1) and ``ions`` carrying ``mz`` and ``species``), as a plate stores it."""
    out = []
    features = well_ms.get("features", ()) if isinstance(well_ms, dict) else getattr(well_ms, "features", ())
    for f in features or ():
        if isinstance(f, dict):
            ions = f.get("ions") or [{}]
            mz = ions[0].get("mz", f.get("neutral_mass"))
            if mz is None or f.get("share") is None:
                continue
            out.append(WellFeature(float(mz), 100.0 * float(f["share"]), str(ions[0].get("species", ""))))
        else:
            out.append(WellFeature(float(f.main_ion.mz), 100.0 * float(f.share), str(getattr(f.main_ion, "species", ""))))
    return tuple(out)


def residual_sets(signals: Sequence[tuple[float, float]], main_unit: float) -> tuple[ResidualSet, ...]:
    """Group (ppm, integral) signals into sets that share an integer unit, largest set first.

    A unit is tried from each signal as 1, 2 or 3 protons; the unit that puts the most signals on
    whole numbers (1-9 H, within :data:`SET_TOLERANCE_H`) wins, the largest unit among equals (the
    fewest protons). Signals left over form further sets; a lone signal is a set of its own.
    """
    left = list(signals)
    out: list[ResidualSet] = []
    while left:
        best: tuple[int, float, list[int]] | None = None
        if len(left) >= 2:
            for _, integral in left:
                for k in (1, 2, 3):
                    u = integral / k
                    h = np.array([i for _, i in left]) / u
                    ok = [j for j, v in enumerate(h) if 0.8 <= v <= 9.2 and abs(v - round(v)) <= SET_TOLERANCE_H]
                    key = (len(ok), u)
                    if len(ok) >= 2 and (best is None or key > (best[0], best[1])):
                        best = (len(ok), u, ok)
        if best is None:
            for p, i in left:
                out.append(ResidualSet((p,), (max(1, int(round(i / main_unit))),), None, i))
            break
        _, u, members = best
        chosen = [left[j] for j in members]
        out.append(ResidualSet(tuple(p for p, _ in chosen), tuple(int(round(i / u)) for _, i in chosen), u, sum(i for _, i in chosen), tuple(i for _, i in chosen)))
        left = [s for j, s in enumerate(left) if j not in members]
    out.sort(key=lambda s: -s.integral)
    return tuple(out)


def _tight(s: ResidualSet) -> bool:
    """True when every signal of the set is within :data:`MOL_TOLERANCE_H` of its whole number at the set's unit."""
    return s.unit is not None and all(abs(s.integral_of(k) / s.unit - n) <= MOL_TOLERANCE_H for k, n in enumerate(s.h))


def _water_ppm(solvent: str | None) -> float | None:
    from nmrcheck.data import load_table

    for row in load_table("solvents"):
        if row.get("solvent") == solvent and row.get("kind") == "water":
            return float(row["ppm"])
    return None


def _best_assignment(verdicts: Iterable[CandidateVerdict]) -> tuple[CandidateVerdict, Assignment] | None:
    for v in sorted(verdicts, key=lambda v: v.rank):
        if v.verdict == "inconsistent":
            continue
        check = v.check("assignment")
        if check is not None and isinstance(check.details.get("assignment"), Assignment):
            return v, check.details["assignment"]
    return None


def purity_of(verdicts: Iterable[CandidateVerdict], evidence: Evidence) -> Purity:
    """The purity call of the well whose ``evidence`` the ranked ``verdicts`` were made on."""
    notes: list[str] = []
    ms_major = sorted((f for f in evidence.ms_features if f.share_pct >= MS_MAJOR_PCT), key=lambda f: -f.share_pct)
    if len(ms_major) >= 2:
        notes.append(f"{len(ms_major)} major MS features: " + ", ".join(f"m/z {f.mz:.4f} ({f.share_pct:.0f} % of the ion current)" for f in ms_major[:4]))
    verdicts = tuple(verdicts)
    found = _best_assignment(verdicts)
    if found is None:
        call = "mixture" if len(ms_major) >= 3 else "undecided"
        notes.insert(0, "no candidate structure fits the spectrum well enough to attribute its signals")
        # more resolved signals than the claimed compound has hydrogens: more than one compound
        total = sum(r.integral for r in evidence.regions)
        signals = sum(1 for r in evidence.regions if total > 0 and r.integral >= SIGNAL_SHARE * total)
        claims = [v.candidate.formula.count("H") for v in verdicts]
        if claims and signals > max(claims):
            call = "mixture"
            notes.append(f"{signals} resolved signals (each at least {100 * SIGNAL_SHARE:.0f} % of the integral) but the candidates have at most {max(claims)} H: more than one compound")
        return Purity(call, None, None, None, tuple(notes))
    verdict, a = found
    regions = evidence.regions
    total = float(sum(r.integral for r in regions))
    water = _water_ppm(evidence.solvent)
    signals = []
    # every signal no environment took, however small, and the excess of a taken one when it holds at
    # least half a proton more than it was given (an impurity under it); smaller excesses are integration error
    unexplained = [(i, h) for i, (h, n) in enumerate(zip(a.region_h, a.region_assigned)) if n == 0 and h > 0]
    unexplained += [(i, h - n) for i, (h, n) in enumerate(zip(a.region_h, a.region_assigned)) if n > 0 and h - n >= MINOR_H]
    for i, extra_h in unexplained:
        r = regions[i]
        integral = extra_h * a.unit
        if (r.linewidth_hz or 0.0) >= BROAD_HZ:
            if extra_h >= 0.3:
                    notes.append(f"broad line at {r.peak_ppm:.2f} ppm ({extra_h:.1f} H, {r.linewidth_hz:.0f} Hz wide) taken for exchangeable H or water, not an impurity")
            continue
        if water is not None and abs(r.peak_ppm - water) <= WATER_WINDOW_PPM and (r.lines or 1) <= 1:
            notes.append(f"singlet at {r.peak_ppm:.2f} ppm next to the water position ({water:.2f}) taken for water, not an impurity")
            continue
        signals.append((r.peak_ppm, integral))
    sets = residual_sets(signals, a.unit)
    # shares of the counted integral, broad lines and water left out of both sides
    impurity = sum(integral for _, integral in signals)
    counted = total - (sum(a.region_h[i] * a.unit for i, _ in unexplained) - impurity)
    share = 100.0 * (1.0 - impurity / counted) if counted > 0 else 0.0
    explained = 100.0 * a.explained_share
    # molar share: only when the sets with their own unit hold nearly all the unexplained integral
    mol_pct = None
    # a set counts as a compound of its own when it has several signals that sit tightly on whole numbers
    with_unit = [t for t in sets if t.unit is not None and len(t.ppm) >= MOL_MIN_SIGNALS and _tight(t)]
    if impurity > 0 and with_unit and sum(t.integral for t in with_unit) >= 0.8 * impurity:
        others = sum(t.unit for t in with_unit) * impurity / sum(t.integral for t in with_unit)
        mol_pct = 100.0 * a.unit / (a.unit + others)
    elif impurity == 0:
        mol_pct = 100.0
    # the call goes by moles where the other signals have their own unit, else by the integral
    basis = mol_pct if mol_pct is not None else share
    if basis >= 100.0 - SINGLE_BELOW_PCT:
        call = "single compound"
    elif basis >= MAJOR_FROM_PCT:
        call = "major compound with impurities"
    else:
        call = "mixture"
    # MS: several major features contradict 'single compound'; many of them with no dominant one make a mixture
    if len(ms_major) >= 2 and call == "single compound":
        call = "major compound with impurities"
    if len(ms_major) >= 3 and ms_major[0].share_pct < 50.0:
        call = "mixture"
    head = f"{verdict.candidate.label} explains {explained:.0f} % of the counted integral ({a.visible_h} H at its unit)"
    for s in sets[:4]:
        if s.integral < 0.02 * counted:
            continue
        where = ", ".join(f"{p:.2f}" for p in s.ppm[:6])
        pct = 100.0 * s.integral / counted
        if s.unit is not None:
            notes.append(f"signals at {where} ppm ({pct:.0f} % of the integral) form a set of {sum(s.h)} H with their own unit: another compound")
        else:
            notes.append(f"unexplained signal at {where} ppm ({pct:.0f} % of the integral, {s.integral / a.unit:.1f} H at the main unit)")
    if total <= 0:  # pragma: no cover - evidence regions have positive integrals
        return Purity("undecided", None, None, verdict.candidate.label, tuple(notes))
    return Purity(call, share, explained, verdict.candidate.label, (head, *notes), sets, mol_pct)
