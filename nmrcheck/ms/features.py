"""Per-well MS features from the extract's LC-MS run and the fraction-collection timetable.

For each well, the survey scans recorded while its contents passed the detector (the
collection window shifted back by the detector-to-collector delay) are searched for:

1. mass traces (centroids of consecutive scans within ``trace_tolerance_ppm``) and their
   extracted-ion chromatograms, with chromatographic peaks picked on a lightly smoothed trace;
2. isotope envelopes: co-eluting peaks spaced by 1.00336/z (13C - 12C; the M+2 window also
   takes 37Cl, 81Br and 34S), which give the charge state;
3. ion species of one compound: co-eluting envelopes whose m/z values give the same neutral
   mass under the species of ``lcms_ion_species.csv`` (protonated, sodiated, ammoniated,
   potassiated, water-loss, dimer and doubly charged ions; formate, chloride and deprotonated
   ions in negative mode).

Each feature carries its share of the well's ion current (all its ions and isotope peaks over
the summed intensity of the well's survey scans): several large shares in one well are
evidence that the well holds a mixture. Ion current is not amount: ionisation efficiencies
differ between compounds by orders of magnitude.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from nmrcheck.chem.adducts import IonSpecies, ion_mz, neutral_mass, parse_ion
from nmrcheck.data import load_table
from nmrcheck.errors import ParameterError
from nmrcheck.io.mzml import LcmsRun, Scan
from nmrcheck.io.timetable import FractionWindow, Timetable
from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM, PRECURSOR_MATCH_MZ, TRACE_LINK_PPM, masses_agree

__all__ = [
    "FeatureOptions",
    "FeatureIon",
    "Ms2Spectrum",
    "LcmsFeature",
    "WellMs",
    "well_features",
    "plate_features",
    "grouping_species",
    "ISOTOPE_SPACING",
]

ISOTOPE_SPACING = 1.0033548378
"""13C - 12C mass difference, u (IUPAC atomic masses: 13.0033548378 - 12)."""

# Half-width of the window searched for the M+k isotope peak around k * 1.0020 u: wide enough
# for 15N (0.99703), 13C (1.00335), 2H (1.00628) at M+1 and 34S (1.99580), 37Cl (1.99705),
# 81Br (1.99795), 18O (2.00425) and 13C2 (2.00671) at M+2 (IUPAC isotope masses).
_ISOTOPE_CENTRE = 1.0020
_ISOTOPE_HALF_WIDTH = 0.0110


@dataclass(frozen=True)
class FeatureOptions:
    """How features are found in one well's stretch of the run (masses in ppm or u, times in minutes)."""

    tolerance_ppm: float = DEFAULT_TOLERANCE_PPM
    """Mass accuracy of one ion's m/z (the shared default): two ions belong to one neutral mass
    when their neutral masses can be the same, each within this (:func:`nmrcheck.tolerances.masses_agree`)."""
    trace_tolerance_ppm: float = TRACE_LINK_PPM
    """Largest m/z gap between neighbouring centroids of one mass trace (:data:`nmrcheck.tolerances.TRACE_LINK_PPM`)."""
    min_scans: int = 3
    """A chromatographic peak needs at least this many survey scans with the ion."""
    min_share: float = 0.01
    """Features below this share of the well's ion current are not listed."""
    major_share: float = 0.10
    """A feature at or above this share is a major one (for the purity evidence)."""
    min_correlation: float = 0.8
    """Co-elution: the extracted-ion chromatograms correlate at least this well (Pearson)."""
    max_apex_shift_scans: int = 2
    """Co-elution: peak centres at most this many survey scans apart (or a tenth of the narrower peak's width)."""
    max_charge: int = 3
    margin_min: float = 0.5
    """Context read on each side of the well's window so that peaks cut by it keep their shape."""
    precursor_tolerance_mz: float = PRECURSOR_MATCH_MZ
    """An MS/MS scan belongs to an ion when its precursor m/z is this close, u (:data:`nmrcheck.tolerances.PRECURSOR_MATCH_MZ`)."""
    max_features: int = 30
    species: tuple[str, ...] | None = None
    """Ion species tried when grouping (bracket notation); None: the packaged table."""

    def __post_init__(self) -> None:
        for name in ("tolerance_ppm", "trace_tolerance_ppm", "precursor_tolerance_mz"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and 0 < v <= 100):
                raise ParameterError(f"{name}: must be in (0, 100], got {v!r}")
        if not 0 <= self.min_share < 1 or not 0 < self.major_share <= 1:
            raise ParameterError("min_share must be in [0, 1) and major_share in (0, 1]")
        if not 0 < self.min_correlation <= 1:
            raise ParameterError(f"min_correlation: must be in (0, 1], got {self.min_correlation}")
        if self.min_scans < 2 or self.max_charge < 1 or self.max_features < 1:
            raise ParameterError("min_scans must be >= 2, max_charge and max_features >= 1")
        if self.margin_min < 0:
            raise ParameterError(f"margin_min: must be >= 0, got {self.margin_min}")
        if self.species is not None:
            for s in self.species:
                parse_ion(s)

    def as_dict(self) -> dict[str, Any]:
        from dataclasses import asdict

        d = asdict(self)
        d["species"] = list(self.species) if self.species is not None else None
        return d


@lru_cache(maxsize=None)
def _species_table() -> tuple[tuple[IonSpecies, int], ...]:
    return tuple((parse_ion(r["notation"]), int(r["preference"])) for r in load_table("lcms_ion_species"))


def grouping_species(polarity: str, species: tuple[str, ...] | None = None) -> tuple[IonSpecies, ...]:
    """Ion species tried for one polarity, most preferred first."""
    if species is None:
        rows = sorted((pref, ion.notation, ion) for ion, pref in _species_table() if ion.polarity == polarity)
        return tuple(r[2] for r in rows)
    return tuple(ion for ion in (parse_ion(s) for s in species) if ion.polarity == polarity)


# --- records ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class FeatureIon:
    """One ion species of a feature, as observed."""

    species: str
    """Bracket notation, e.g. ``'[M+Na]+'``."""
    mz: float
    """Monoisotopic m/z, intensity-weighted over the chromatographic peak."""
    charge: int
    """Signed charge from the isotope spacing (or 1 / -1 when no isotope peak was seen)."""
    intensity: float
    """Ion current of the ion's isotope envelope within the well's window (summed centroid intensity)."""
    isotopes: tuple[float, ...]
    """Isotope envelope M+0, M+1, ... relative to M+0 = 100, over the whole chromatographic peak."""
    rt_min: float
    """Apex retention time at the detector, minutes."""
    mass_error_ppm: float = 0.0
    """m/z against the one the feature's neutral mass gives for this species."""

    def as_dict(self) -> dict[str, Any]:
        return {
            "species": self.species,
            "mz": round(self.mz, 6),
            "charge": self.charge,
            "intensity": float(self.intensity),
            "isotopes": [round(v, 2) for v in self.isotopes],
            "rt_min": round(self.rt_min, 4),
            "mass_error_ppm": round(self.mass_error_ppm, 2),
        }


@dataclass(frozen=True)
class Ms2Spectrum:
    """The MS/MS spectrum of one precursor ion, merged over the scans that selected it."""

    precursor_mz: float
    species: str
    """Ion species of the precursor within its feature."""
    rt_min: float
    """Retention time of the most intense contributing scan."""
    scan_ids: tuple[str, ...]
    collision_energy_ev: float | None
    mz: tuple[float, ...]
    intensity: tuple[float, ...]
    """Relative to the base peak = 100."""

    def as_dict(self) -> dict[str, Any]:
        return {
            "precursor_mz": round(self.precursor_mz, 6),
            "species": self.species,
            "rt_min": round(self.rt_min, 4),
            "scan_ids": list(self.scan_ids),
            "collision_energy_ev": self.collision_energy_ev,
            "mz": [round(v, 6) for v in self.mz],
            "intensity": [round(v, 3) for v in self.intensity],
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Ms2Spectrum":
        return cls(float(d["precursor_mz"]), d["species"], float(d["rt_min"]), tuple(d.get("scan_ids", ())),
                   d.get("collision_energy_ev"), tuple(float(v) for v in d["mz"]), tuple(float(v) for v in d["intensity"]))


@dataclass(frozen=True)
class LcmsFeature:
    """A compound as the LC-MS saw it in one well: its ions, isotope envelope, retention and share of the ion current."""

    neutral_mass: float
    """Monoisotopic mass of M, u (intensity-weighted over its ions)."""
    polarity: str
    """'positive', 'negative', or 'both' for a compound seen in both polarities of a switching run."""
    ions: tuple[FeatureIon, ...]
    """Most intense first (with 'both': the polarity of the larger share first)."""
    rt_min: float
    rt_start_min: float
    rt_end_min: float
    share: float
    """Fraction of the well's ion current (of its polarity; with 'both', the larger fraction) carried by its ions."""
    species_assumed: bool = False
    """True for a lone ion whose species is the usual one by assumption, not by a partner ion."""
    ms2: tuple[Ms2Spectrum, ...] = ()

    @property
    def main_ion(self) -> FeatureIon:
        return self.ions[0]

    @property
    def charge(self) -> int:
        return self.main_ion.charge

    @property
    def isotopes(self) -> tuple[float, ...]:
        return self.main_ion.isotopes

    def manifest_entry(self) -> tuple[tuple[tuple[float, str], ...], tuple[float, ...] | None]:
        """(``ms_features`` pairs, ``isotopes``) as a manifest row holds them: ions most intense first."""
        pairs = tuple((round(i.mz, 5), i.species) for i in self.ions)
        iso = self.isotopes if len(self.isotopes) >= 2 else None
        return pairs, iso

    def as_dict(self) -> dict[str, Any]:
        return {
            "neutral_mass": round(self.neutral_mass, 6),
            "polarity": self.polarity,
            "ions": [i.as_dict() for i in self.ions],
            "charge": self.charge,
            "isotopes": [round(v, 2) for v in self.isotopes],
            "rt_min": round(self.rt_min, 4),
            "rt_start_min": round(self.rt_start_min, 4),
            "rt_end_min": round(self.rt_end_min, 4),
            "share": round(self.share, 5),
            "species_assumed": self.species_assumed,
            "ms2": [s.as_dict() for s in self.ms2],
        }


@dataclass(frozen=True)
class WellMs:
    """What the LC-MS run shows for one well."""

    well: str
    collection_window_min: tuple[float, float]
    """The collector's window as in the timetable."""
    detector_window_min: tuple[float, float]
    """The same shifted back by the detector-to-collector delay: what was searched."""
    survey_scans: int
    """Survey scans (all polarities) inside the detector window."""
    total_ion_current: dict[str, float]
    """Summed intensity of the survey scans inside the window, per polarity."""
    features: tuple[LcmsFeature, ...]
    """Features at or above the minimum share, largest share first."""
    major_share: float = 0.10
    notes: tuple[str, ...] = ()

    @property
    def major_features(self) -> tuple[LcmsFeature, ...]:
        return tuple(f for f in self.features if f.share >= self.major_share)

    def as_dict(self) -> dict[str, Any]:
        return {
            "well": self.well,
            "collection_window_min": [round(v, 4) for v in self.collection_window_min],
            "detector_window_min": [round(v, 4) for v in self.detector_window_min],
            "survey_scans": self.survey_scans,
            "total_ion_current": {k: float(v) for k, v in self.total_ion_current.items()},
            "features": [f.as_dict() for f in self.features],
            "major_share": self.major_share,
            "major_features": len(self.major_features),
            "notes": list(self.notes),
        }


# --- mass traces and chromatographic peaks ---------------------------------------------------


@dataclass
class _Peak:
    """A chromatographic peak of one mass trace (internal; indices into the well's survey scans)."""

    mz: float
    apex: int
    lo: int
    hi: int
    xic: np.ndarray
    height: float
    rt_apex: float
    used: bool = False
    centre: float = 0.0


def _mass_traces(scans: list[Scan], tolerance_ppm: float, min_scans: int, in_window: np.ndarray, min_window_sum: float) -> list[tuple[np.ndarray, np.ndarray]]:
    """(intensity per scan, mean m/z per scan) of each mass trace seen in at least ``min_scans`` scans
    and carrying at least ``min_window_sum`` of ion current inside the well's window."""
    n = len(scans)
    counts = np.fromiter((s.mz.size for s in scans), dtype=np.int64, count=n)
    if counts.sum() == 0:
        return []
    mz = np.concatenate([s.mz for s in scans])
    inten = np.concatenate([s.intensity for s in scans])
    idx = np.repeat(np.arange(n), counts)
    order = np.argsort(mz, kind="stable")
    mz, inten, idx = mz[order], inten[order], idx[order]
    breaks = np.nonzero(np.diff(mz) > mz[:-1] * tolerance_ppm * 1e-6)[0] + 1
    starts = np.concatenate([[0], breaks])
    ends = np.concatenate([breaks, [mz.size]])
    in_sums = np.add.reduceat(inten * in_window[idx], starts)
    keep = (ends - starts >= min_scans) & (in_sums >= min_window_sum) & (in_sums > 0)
    out = []
    for a, b in zip(starts[keep], ends[keep]):
        sidx = idx[a:b]
        xic = np.bincount(sidx, weights=inten[a:b], minlength=n)
        if np.count_nonzero(xic) < min_scans:
            continue
        wmz = np.bincount(sidx, weights=inten[a:b] * mz[a:b], minlength=n)
        mean_mz = np.divide(wmz, xic, out=np.zeros(n), where=xic > 0)
        out.append((xic, mean_mz))
    return out


def _pick_peaks(xic: np.ndarray, mean_mz: np.ndarray, rts: np.ndarray, min_scans: int) -> list[_Peak]:
    """Chromatographic peaks of one trace: apexes of the [1, 2, 1]-smoothed trace, bounded where the
    trace ends or rises again from a valley below half the apex."""
    s = np.convolve(xic, [0.25, 0.5, 0.25], mode="same")
    n = s.size
    taken = np.zeros(n, dtype=bool)
    peaks = []
    left = np.concatenate([[-1.0], s[:-1]])
    right = np.concatenate([s[1:], [-1.0]])
    maxima = np.nonzero((s > 0) & (s >= left) & (s >= right))[0]
    for apex in maxima[np.argsort(-s[maxima], kind="stable")]:
        top = s[apex]
        if taken[apex]:
            continue
        lo = apex
        while lo > 0 and s[lo - 1] > 0 and not taken[lo - 1] and not (s[lo - 1] > s[lo] and s[lo] < 0.5 * top):
            lo -= 1
        hi = apex
        while hi < n - 1 and s[hi + 1] > 0 and not taken[hi + 1] and not (s[hi + 1] > s[hi] and s[hi] < 0.5 * top):
            hi += 1
        taken[lo : hi + 1] = True
        seg = xic[lo : hi + 1]
        if np.count_nonzero(seg) < min_scans:
            continue
        w = seg.sum()
        mz = float((seg * mean_mz[lo : hi + 1]).sum() / w)
        # Apex time refined by a parabola through the smoothed apex and its neighbours.
        rt = float(rts[apex])
        if 0 < apex < n - 1:
            y0, y1, y2 = s[apex - 1], s[apex], s[apex + 1]
            den = y0 - 2 * y1 + y2
            if den < 0:
                d = 0.5 * (y0 - y2) / den
                rt += d * float(rts[apex + 1] - rts[apex - 1]) / 2.0
        peak = _Peak(mz, int(apex), int(lo), int(hi), xic, float(top), rt)
        peak.centre = _centre(peak)
        peaks.append(peak)
    return peaks


def _centre(p: _Peak) -> float:
    """Intensity-weighted centre (scan index) of the points above half the peak's maximum: steadier than the apex
    on a flat-topped peak sampled by many scans."""
    seg = p.xic[p.lo : p.hi + 1]
    top = seg >= 0.5 * seg.max()
    return p.lo + float((np.nonzero(top)[0] * seg[top]).sum() / seg[top].sum())


def _coelute(a: _Peak, b: _Peak, options: FeatureOptions) -> bool:
    # Peaks sampled by many scans may be a few scans apart at the top by noise alone: allow a tenth of the narrower width.
    allowed = max(options.max_apex_shift_scans, 0.1 * min(a.hi - a.lo + 1, b.hi - b.lo + 1))
    if abs(a.centre - b.centre) > allowed:
        return False
    # Shapes compared where both peaks are, which must cover half the narrower one: a trace that
    # also carries a neighbouring compound (close in m/z and time) does not spoil the comparison.
    lo, hi = max(a.lo, b.lo), min(a.hi, b.hi)
    if hi - lo + 1 < max(3, 0.5 * min(a.hi - a.lo + 1, b.hi - b.lo + 1)):
        return False
    x = a.xic[lo : hi + 1] - a.xic[lo : hi + 1].mean()
    y = b.xic[lo : hi + 1] - b.xic[lo : hi + 1].mean()
    den = math.sqrt(float(x @ x) * float(y @ y))
    return den > 0 and float(x @ y) / den >= options.min_correlation


@dataclass
class _Envelope:
    mono: _Peak
    charge: int
    members: list[list[_Peak]]
    """Peaks of M+0, M+1, ... (several when the fine structure is resolved)."""


def _envelopes(peaks: list[_Peak], options: FeatureOptions) -> list[_Envelope]:
    order = sorted(peaks, key=lambda p: p.mz)
    mzs = np.array([p.mz for p in order])
    out = []
    for p in order:
        if p.used:
            continue
        p.used = True
        best = None
        for z in range(options.max_charge, 0, -1):
            env = [[p]]
            for k in range(1, 8):
                centre = p.mz + k * _ISOTOPE_CENTRE / z
                # two measured m/z: each may err by the tolerance
                half = (_ISOTOPE_HALF_WIDTH + 2 * p.mz * options.tolerance_ppm * 1e-6) / z
                if k == 1:
                    centre = p.mz + ISOTOPE_SPACING / z
                    half = (0.008 + 2 * p.mz * options.tolerance_ppm * 1e-6) / z
                a, b = np.searchsorted(mzs, [centre - half, centre + half])
                found = [q for q in order[a:b] if not q.used and q is not p and _coelute(p, q, options)]
                if k == 1:
                    # M+1 cannot exceed what the most carbon-rich composition of this mass gives
                    # (about 1.1 % per carbon, at most mass/12 carbons), with room for error.
                    limit = 0.0012 * p.mz * z + 0.1
                    found = [q for q in found if q.height <= limit * p.height]
                if not found:
                    break
                env.append(found)
            if len(env) >= 2:
                best = (z, env)
                break
        if best is None:
            out.append(_Envelope(p, 1, [[p]]))
            continue
        z, env = best
        for group in env[1:]:
            for q in group:
                q.used = True
        out.append(_Envelope(p, z, env))
    return out


# --- ion species ---------------------------------------------------------------------------


@dataclass
class _Ion:
    env: _Envelope
    mz: float
    charge: int
    area_window: float
    isotopes: tuple[float, ...]
    rt: float


def _group_species(ions: list[_Ion], species: tuple[IonSpecies, ...], options: FeatureOptions) -> list[tuple[dict[int, tuple[IonSpecies, float]], bool]]:
    """Assign ion species: greedily take the neutral mass that explains the most co-eluting ions.

    Returns (members, assumed) pairs: members maps an ion's index to its species and the neutral
    mass it gives; assumed is True for a lone ion given the commonest species of its charge.
    """
    prefs = {s.notation: k for k, s in enumerate(species)}
    masses: list[list[tuple[float, IonSpecies]]] = []
    for ion in ions:
        row = []
        for s in species:
            if abs(s.charge) != ion.charge:
                continue
            try:
                row.append((neutral_mass(ion.mz, s), s))
            except ParameterError:
                continue
        masses.append(row)
    free = set(range(len(ions)))
    groups = []
    coelute = {}

    def co(i, j):
        key = (min(i, j), max(i, j))
        if key not in coelute:
            coelute[key] = _coelute(ions[i].env.mono, ions[j].env.mono, options)
        return coelute[key]

    while free:
        best = None
        for i in sorted(free):
            for m, s in masses[i]:
                members = {i: (s, m)}
                for j in sorted(free):
                    if j == i or not co(i, j):
                        continue
                    fits = [(abs(mj - m), t, mj) for mj, t in masses[j] if masses_agree(mj, m, options.tolerance_ppm)]
                    if fits:
                        _, t, mj = min(fits, key=lambda f: (prefs[f[1].notation], f[0]))
                        members[j] = (t, mj)
                if len(members) < 2:
                    continue
                area = sum(ions[k].area_window for k in members)
                penalty = sum(prefs[t.notation] for t, _ in members.values())
                key = (len(members), area, -penalty)
                if best is None or key > best[0]:
                    best = (key, members)
        if best is None:
            break
        members = best[1]
        groups.append((members, False))
        free -= set(members)
    for i in sorted(free):
        lone = [s for s in species if abs(s.charge) == ions[i].charge and s.molecules == 1 and not s.loss]
        if not lone:
            continue
        s = lone[0]
        try:
            groups.append(({i: (s, neutral_mass(ions[i].mz, s))}, True))
        except ParameterError:
            continue
    return groups


# --- one well ------------------------------------------------------------------------------


def _ms2_for(feature_ions: list[FeatureIon], ms2_scans: list[Scan], rt_lo: float, rt_hi: float, options: FeatureOptions) -> tuple[Ms2Spectrum, ...]:
    from nmrcheck.ms.msms import merge_scans

    out = []
    for ion in feature_ions:
        picked = [s for s in ms2_scans if s.precursor_mz is not None and rt_lo <= s.rt_min <= rt_hi
                  and abs(s.precursor_mz - ion.mz) <= options.precursor_tolerance_mz]
        if not picked:
            continue
        mz, inten = merge_scans(picked)
        if mz.size == 0:
            continue
        top = max(picked, key=lambda s: s.total_ion_current)
        energies = {s.collision_energy_ev for s in picked}
        out.append(Ms2Spectrum(float(np.median([s.precursor_mz for s in picked])), ion.species, top.rt_min,
                               tuple(s.scan_id for s in picked), energies.pop() if len(energies) == 1 else None,
                               tuple(float(v) for v in mz), tuple(float(v) for v in inten)))
    return tuple(out)


def _features_one_polarity(scans: list[Scan], in_window: np.ndarray, ms2_scans: list[Scan], polarity: str, options: FeatureOptions) -> tuple[list[LcmsFeature], float]:
    rts = np.array([s.rt_min for s in scans])
    tic = float(sum(s.intensity.sum() for s, w in zip(scans, in_window) if w))
    if tic <= 0:
        return [], 0.0
    peaks: list[_Peak] = []
    # Traces below a thousandth of the listing threshold can be neither a feature nor a partner ion's isotope.
    for xic, mean_mz in _mass_traces(scans, options.trace_tolerance_ppm, options.min_scans, in_window, 1e-3 * options.min_share * tic):
        peaks.extend(_pick_peaks(xic, mean_mz, rts, options.min_scans))
    envs = _envelopes(peaks, options)
    ions = []
    for env in envs:
        lo, hi = env.mono.lo, env.mono.hi
        sums = [sum(float(q.xic[lo : hi + 1].sum()) for q in group) for group in env.members]
        area_window = sum(float(q.xic[lo : hi + 1][in_window[lo : hi + 1]].sum()) for group in env.members for q in group)
        if area_window <= 0:
            continue
        iso = tuple(100.0 * v / sums[0] for v in sums)
        ions.append(_Ion(env, env.mono.mz, env.charge, area_window, iso, env.mono.rt_apex))
    # Small ions cannot make a listed feature on their own; keep them only as possible partners.
    ions.sort(key=lambda i: -i.area_window)
    floor = options.min_share * tic * 0.1
    ions = [i for i in ions if i.area_window >= floor][:400]
    species = grouping_species(polarity, options.species)
    groups = _group_species(ions, species, options)
    features = []
    for group, assumed in groups:
        members = sorted(group.items(), key=lambda kv: -ions[kv[0]].area_window)
        weights = np.array([ions[k].area_window for k, _ in members])
        mass = float(np.average([m for _, (s, m) in members], weights=weights))
        share = float(weights.sum() / tic)
        if share < options.min_share:
            continue
        fions = []
        for k, (s, m) in members:
            ion = ions[k]
            expected = ion_mz(mass, s)
            fions.append(FeatureIon(s.notation, ion.mz, int(math.copysign(ion.charge, s.charge)), ion.area_window, ion.isotopes, ion.rt,
                                    (ion.mz - expected) / expected * 1e6))
        main = ions[members[0][0]].env.mono
        rt_lo, rt_hi = float(rts[main.lo]), float(rts[main.hi])
        ms2 = _ms2_for(fions, ms2_scans, rt_lo, rt_hi, options)
        features.append(LcmsFeature(mass, polarity, tuple(fions), main.rt_apex, rt_lo, rt_hi, share, assumed, ms2))
    features.sort(key=lambda f: -f.share)
    return features, tic


def well_features(run: LcmsRun, window: FractionWindow, *, collector_delay_min: float = 0.0, options: FeatureOptions | None = None) -> WellMs:
    """The MS features of one well.

    Parameters
    ----------
    run
        The extract's LC-MS run (:func:`nmrcheck.io.mzml.read_mzml`).
    window
        The well's collection window (:mod:`nmrcheck.io.timetable`).
    collector_delay_min
        Time the eluate takes from the MS detector to the collector, minutes; the well's
        contents passed the detector this much before its collection window.
    options
        Tolerances and thresholds (:class:`FeatureOptions`).
    """
    options = options or FeatureOptions()
    if not 0 <= collector_delay_min < 100:
        raise ParameterError(f"collector_delay_min: {collector_delay_min} min is outside 0..100 min")
    start, end = window.detector_window(collector_delay_min)
    return _well_features(run.scans, window, start, end, options)


def _well_features(all_scans, window: FractionWindow, start: float, end: float, options: FeatureOptions) -> WellMs:
    notes = []
    features: list[LcmsFeature] = []
    tics: dict[str, float] = {}
    n_survey = 0
    # A run that does not record its polarity is taken as positive (the commoner mode), and says so.
    unknown = any(s.polarity is None for s in all_scans if s.ms_level == 1)
    if unknown:
        notes.append("the run does not record the polarity of some survey scans: positive assumed for them")
    for polarity in ("positive", "negative"):
        scans = [s for s in all_scans if s.ms_level == 1 and (s.polarity or "positive") == polarity and start - options.margin_min <= s.rt_min <= end + options.margin_min]
        if not scans:
            continue
        scans = [_centroided(s) for s in scans]
        in_window = np.array([start <= s.rt_min < end for s in scans])
        n_survey += int(in_window.sum())
        if not in_window.any():
            continue
        ms2 = [s for s in all_scans if s.ms_level > 1 and (s.polarity or "positive") == polarity and start - options.margin_min <= s.rt_min <= end + options.margin_min]
        found, tic = _features_one_polarity(scans, in_window, ms2, polarity, options)
        tics[polarity] = tic
        features.extend(found)
    features = _merge_polarities(features, options)
    if n_survey == 0:
        notes.append(f"no survey scan between {start:.3f} and {end:.3f} min at the detector: the window lies outside the run")
    elif not features:
        notes.append("no MS feature above the minimum share of the ion current")
    features.sort(key=lambda f: -f.share)
    return WellMs(window.well, (window.start_min, window.end_min), (start, end), n_survey, tics,
                  tuple(features[: options.max_features]), options.major_share, tuple(notes))


def _merge_polarities(features: list[LcmsFeature], options: FeatureOptions) -> list[LcmsFeature]:
    """One feature per compound seen in both polarities (same neutral mass, overlapping peaks).

    Its ions are both polarities' (most intense first, each polarity's ion current on its own
    scale); its share is the larger of the two polarities' shares; its ion species are no
    longer an assumption when the two polarities agree on the neutral mass.
    """
    pos = [f for f in features if f.polarity == "positive"]
    neg = [f for f in features if f.polarity == "negative"]
    if not pos or not neg:
        return features
    used: set[int] = set()
    out = []
    for p in pos:
        match = None
        for k, n in enumerate(neg):
            if k in used or not masses_agree(p.neutral_mass, n.neutral_mass, options.tolerance_ppm):
                continue
            if p.rt_start_min <= n.rt_min <= p.rt_end_min or n.rt_start_min <= p.rt_min <= n.rt_end_min:
                match = k
                break
        if match is None:
            out.append(p)
            continue
        used.add(match)
        n = neg[match]
        main, other = (p, n) if p.share >= n.share else (n, p)
        if main.species_assumed and not other.species_assumed:
            mass = other.neutral_mass
        elif other.species_assumed and not main.species_assumed:
            mass = main.neutral_mass
        else:
            mass = 0.5 * (p.neutral_mass + n.neutral_mass)
        out.append(LcmsFeature(mass, "both", main.ions + other.ions, main.rt_min, min(p.rt_start_min, n.rt_start_min),
                               max(p.rt_end_min, n.rt_end_min), main.share, False, main.ms2 + other.ms2))
    out.extend(n for k, n in enumerate(neg) if k not in used)
    return out


def _centroided(scan: Scan) -> Scan:
    """A profile scan reduced to its local maxima (intensity-weighted centre of the top three points)."""
    if scan.centroided is not False or scan.mz.size < 3:
        return scan
    y, x = scan.intensity, scan.mz
    top = np.nonzero((y[1:-1] > y[:-2]) & (y[1:-1] >= y[2:]) & (y[1:-1] > 0))[0] + 1
    w = y[top - 1] + y[top] + y[top + 1]
    mz = (x[top - 1] * y[top - 1] + x[top] * y[top] + x[top + 1] * y[top + 1]) / w
    from dataclasses import replace

    return replace(scan, mz=mz, intensity=y[top].astype(np.float64), centroided=True)


def plate_features(run: LcmsRun, timetable: Timetable, *, collector_delay_min: float = 0.0, options: FeatureOptions | None = None) -> dict[str, WellMs]:
    """:func:`well_features` for every well of the timetable, by well name."""
    options = options or FeatureOptions()
    if not 0 <= collector_delay_min < 100:
        raise ParameterError(f"collector_delay_min: {collector_delay_min} min is outside 0..100 min")
    scans = run.scans
    rts = np.array([s.rt_min for s in scans])
    out = {}
    for w in timetable.windows:
        start, end = w.detector_window(collector_delay_min)
        a, b = np.searchsorted(rts, [start - options.margin_min, end + options.margin_min + 1e-9])
        out[w.well] = _well_features(scans[a:b], w, start, end, options)
    return out
