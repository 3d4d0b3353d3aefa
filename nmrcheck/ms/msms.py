"""MS/MS: merged product-ion spectra, fragment formulas, candidate formulas contradicted by a
fragment, and the modified cosine that groups wells whose compounds fragment alike.

A product ion of a precursor can only hold atoms the precursor holds: its composition is a
sub-formula of the precursor ion's. A candidate formula whose precursor ion has no
sub-formula within tolerance of a clearly observed fragment is contradicted by it.

The modified cosine (Watrous et al., PNAS 2012, 109, E1743) matches peaks either at the same
m/z or shifted by the precursor mass difference, so that spectra of analogues differing by a
substituent still score high; peaks are paired greedily by the product of their intensities,
each used once.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Iterable, Sequence

import numpy as np

from nmrcheck.chem.adducts import ion_composition, parse_ion
from nmrcheck.chem.elements import electron_mass, element
from nmrcheck.chem.formula import Formula, parse_formula
from nmrcheck.errors import FormulaError, ParameterError
from nmrcheck.tolerances import (
    DEFAULT_TOLERANCE_PPM,
    FRAGMENT_TOLERANCE_MDA,
    FRAGMENT_TOLERANCE_PPM,
    MSMS_PEAK_MERGE_MZ,
    SPECTRUM_MATCH_MZ,
    masses_agree,
)

__all__ = [
    "merge_scans",
    "FragmentAssignment",
    "FragmentCheck",
    "assign_fragments",
    "check_fragments",
    "modified_cosine",
    "SpectralLink",
    "SpectralGroup",
    "spectral_groups",
]


def merge_scans(scans: Sequence, *, tolerance_mz: float = MSMS_PEAK_MERGE_MZ, min_relative: float = 0.5) -> tuple[np.ndarray, np.ndarray]:
    """One spectrum from several MS/MS scans of the same precursor.

    Each scan is scaled to its base peak; peaks within ``tolerance_mz`` are merged
    (intensity-weighted m/z, summed intensity). With three or more scans, a peak must be seen
    in at least half of them (random noise is not). Returns (m/z, intensity relative to the
    base peak = 100), peaks below ``min_relative`` % dropped.
    """
    parts = [(s.mz, s.intensity / s.intensity.max()) for s in scans if s.intensity.size and s.intensity.max() > 0]
    if not parts:
        return np.empty(0), np.empty(0)
    mz = np.concatenate([p[0] for p in parts])
    inten = np.concatenate([p[1] for p in parts])
    which = np.concatenate([np.full(p[0].size, k) for k, p in enumerate(parts)])
    order = np.argsort(mz)
    mz, inten, which = mz[order], inten[order], which[order]
    breaks = np.nonzero(np.diff(mz) > tolerance_mz)[0] + 1
    starts = np.concatenate([[0], breaks])
    ends = np.concatenate([breaks, [mz.size]])
    out_mz, out_i = [], []
    need = (len(parts) + 1) // 2 if len(parts) >= 3 else 1
    for a, b in zip(starts, ends):
        if np.unique(which[a:b]).size < need:
            continue
        w = inten[a:b].sum()
        out_mz.append(float((mz[a:b] * inten[a:b]).sum() / w))
        out_i.append(float(w))
    if not out_mz:
        return np.empty(0), np.empty(0)
    out_mz, out_i = np.array(out_mz), np.array(out_i)
    out_i = 100.0 * out_i / out_i.max()
    keep = out_i >= min_relative
    return out_mz[keep], out_i[keep]


# --- sub-formulas ----------------------------------------------------------------------------


def _compositions(limits: dict[str, int], max_mass: float) -> tuple[tuple[str, ...], np.ndarray, np.ndarray]:
    """Every composition with 0..limit atoms of each element and mass <= max_mass: (elements, counts, masses)."""
    symbols = tuple(sorted(limits, key=lambda s: -element(s).monoisotopic_mass))
    counts = np.zeros((1, 0), dtype=np.int32)
    masses = np.zeros(1)
    for s in symbols:
        m = element(s).monoisotopic_mass
        n = np.arange(limits[s] + 1)
        new_masses = (masses[:, None] + n[None, :] * m).ravel()
        new_counts = np.concatenate([np.repeat(counts, n.size, axis=0), np.tile(n, counts.shape[0])[:, None]], axis=1)
        keep = new_masses <= max_mass
        masses, counts = new_masses[keep], new_counts[keep]
    return symbols, counts, masses


def _rdbe(symbols: tuple[str, ...], counts: np.ndarray) -> np.ndarray:
    v = np.array([element(s).valence - 2 for s in symbols], dtype=np.float64)
    return 1.0 + 0.5 * counts @ v


def _formula(symbols, row) -> Formula:
    return Formula({s: int(n) for s, n in zip(symbols, row) if n})


def _tolerance(mz: float, tolerance_ppm: float, tolerance_mda: float) -> float:
    return max(mz * tolerance_ppm * 1e-6, tolerance_mda * 1e-3)


@dataclass(frozen=True)
class FragmentAssignment:
    """A product ion and the sub-formulas of the precursor ion that explain it."""

    mz: float
    relative_intensity: float
    formulas: tuple[str, ...]
    """Ion compositions (neutral-atom basis, Hill), smallest mass error first; empty: none fits."""
    errors_ppm: tuple[float, ...]
    losses: tuple[str, ...]
    """Neutral loss from the precursor ion for each formula."""

    def as_dict(self) -> dict[str, Any]:
        return {"mz": round(self.mz, 6), "relative_intensity": round(self.relative_intensity, 2), "formulas": list(self.formulas),
                "errors_ppm": [round(e, 2) for e in self.errors_ppm], "losses": list(self.losses)}


@dataclass(frozen=True)
class FragmentCheck:
    """How a candidate formula fares against the MS/MS spectrum of its feature."""

    formula: str
    """The candidate's neutral formula."""
    species: str
    precursor_formula: str
    """Composition of the precursor ion."""
    status: str
    """'supported' (every clear fragment has a sub-formula), 'contradicted' or 'no fragments'."""
    explained_share: float
    """Fraction of the clear fragments' intensity that sub-formulas explain."""
    assignments: tuple[FragmentAssignment, ...]
    reasons: tuple[str, ...]
    """For a contradiction: each unexplained fragment by m/z and why."""

    def as_dict(self) -> dict[str, Any]:
        return {"formula": self.formula, "species": self.species, "precursor_formula": self.precursor_formula, "status": self.status,
                "explained_share": round(self.explained_share, 4), "assignments": [a.as_dict() for a in self.assignments],
                "reasons": list(self.reasons)}


def _clear_fragments(mz, inten, precursor_mz: float, min_relative: float) -> list[tuple[float, float]]:
    """Fragments at or above ``min_relative`` % of the base peak, lighter than the precursor by more than 0.5 u."""
    return [(float(m), float(i)) for m, i in zip(mz, inten) if i >= min_relative and m < precursor_mz - 0.5]


def assign_fragments(
    mz: Sequence[float],
    intensity: Sequence[float],
    precursor: Formula,
    *,
    charge: int = 1,
    precursor_mz: float | None = None,
    tolerance_ppm: float = FRAGMENT_TOLERANCE_PPM,
    tolerance_mda: float = FRAGMENT_TOLERANCE_MDA,
    min_relative: float = 10.0,
    max_formulas: int = 3,
) -> tuple[FragmentAssignment, ...]:
    """Sub-formulas of the precursor ion ``precursor`` for each clear fragment.

    Parameters
    ----------
    mz, intensity
        The product-ion spectrum (intensities relative to its base peak = 100).
    precursor
        Composition of the precursor ion (neutral-atom basis, e.g. C10H15O for [C10H14O+H]+).
    charge
        Signed charge of the fragments (that of the precursor for a singly charged one).
    precursor_mz
        The precursor's m/z (default: from ``precursor``); fragments within 0.5 u of it or
        heavier are not fragments.
    tolerance_ppm, tolerance_mda
        Mass tolerance of a fragment, the larger of the two.
    min_relative
        Clear fragments are at least this % of the base peak.
    max_formulas
        Formulas kept per fragment.
    """
    if charge == 0:
        raise ParameterError("charge: a fragment ion is charged")
    me = electron_mass()
    if precursor_mz is None:
        precursor_mz = (precursor.monoisotopic_mass - charge * me) / abs(charge)
    clear = _clear_fragments(mz, intensity, precursor_mz, min_relative)
    if not clear:
        return ()
    top = max(m for m, _ in clear) * abs(charge) + charge * me
    symbols, counts, masses = _compositions(dict(precursor.counts), top + 0.05)
    rd = _rdbe(symbols, counts)
    ok = rd >= -0.5
    counts, masses = counts[ok], masses[ok]
    out = []
    for m, i in clear:
        target = m * abs(charge) + charge * me
        tol = _tolerance(m, tolerance_ppm, tolerance_mda) * abs(charge)
        hit = np.nonzero(np.abs(masses - target) <= tol)[0]
        hit = hit[np.argsort(np.abs(masses[hit] - target))][:max_formulas]
        formulas, errors, losses = [], [], []
        for h in hit:
            f = _formula(symbols, counts[h])
            formulas.append(f.hill)
            errors.append((masses[h] - target) / target * 1e6)
            loss = precursor - f
            losses.append(loss.hill if loss else "")
        out.append(FragmentAssignment(m, i, tuple(formulas), tuple(errors), tuple(losses)))
    return tuple(out)


_GENERIC = ("C", "H", "N", "O", "S", "P", "Cl", "Br", "Na", "K")


def _why_not(m: float, charge: int, precursor: Formula, tolerance: float) -> str:
    """Why no sub-formula of ``precursor`` explains m/z ``m``: the elements a fitting composition needs."""
    me = electron_mass()
    target = m * abs(charge) + charge * me
    limits = {"C": int(target // 12) + 1, "H": int(target // 1) + 1, "N": 6, "O": min(20, int(target // 16) + 1), "S": 2, "P": 1, "Cl": 2, "Br": 2, "Na": 1, "K": 1}
    symbols, counts, masses = _compositions(limits, target + tolerance)
    near = np.abs(masses - target) <= tolerance
    rd = _rdbe(symbols, counts)
    col = {s: k for k, s in enumerate(symbols)}
    h_ok = counts[:, col["H"]] <= 2 * counts[:, col["C"]] + counts[:, col["N"]] + 3
    hit = np.nonzero(near & (rd >= -0.5) & h_ok)[0]
    if hit.size == 0:
        return f"no composition of C, H, N, O, S, P, Cl, Br, Na, K fits either within {tolerance * 1e3:.1f} mDa"
    # The fitting compositions closest to being a sub-formula of the precursor.
    prec = np.array([precursor.count(s) for s in symbols])
    excess = np.maximum(counts[hit] - prec[None, :], 0)
    best = hit[np.lexsort((np.abs(masses[hit] - target), excess.sum(axis=1)))][0]
    f = _formula(symbols, counts[best])
    need = [f"{n} {s}" if s not in precursor.counts else f"{n} more {s}" for s, n in zip(symbols, counts[best] - prec) if n > 0]
    err = (masses[best] - target) / target * 1e6
    return f"the closest composition, {f.hill} ({err:+.1f} ppm), needs {', '.join(need)} beyond the precursor ion {precursor.hill}"


def check_fragments(
    formula: Formula | str,
    species: str,
    mz: Sequence[float],
    intensity: Sequence[float],
    *,
    precursor_mz: float | None = None,
    tolerance_ppm: float = FRAGMENT_TOLERANCE_PPM,
    tolerance_mda: float = FRAGMENT_TOLERANCE_MDA,
    min_relative: float = 10.0,
) -> FragmentCheck:
    """Does the candidate ``formula`` (neutral), observed as ``species``, contain every clear fragment?

    Returns a :class:`FragmentCheck`: 'contradicted' naming each clear fragment no sub-formula
    of the precursor ion explains (and the elements a fitting composition would need),
    'supported' when all are explained, 'no fragments' when the spectrum shows none clearly.
    """
    f = parse_formula(formula) if isinstance(formula, str) else formula
    ion = parse_ion(species)
    try:
        precursor = ion_composition(f, ion)
    except FormulaError as exc:
        return FragmentCheck(f.hill, ion.notation, "", "contradicted", 0.0, (), (f"{ion.notation} cannot be made from {f.hill}: {exc}",))
    z = 1 if ion.charge > 0 else -1
    assignments = assign_fragments(mz, intensity, precursor, charge=z, precursor_mz=precursor_mz, tolerance_ppm=tolerance_ppm,
                                   tolerance_mda=tolerance_mda, min_relative=min_relative)
    if not assignments:
        return FragmentCheck(f.hill, ion.notation, precursor.hill, "no fragments", 0.0, (), ())
    total = sum(a.relative_intensity for a in assignments)
    explained = sum(a.relative_intensity for a in assignments if a.formulas)
    reasons = []
    for a in assignments:
        if a.formulas:
            continue
        tol = _tolerance(a.mz, tolerance_ppm, tolerance_mda)
        reasons.append(
            f"fragment m/z {a.mz:.4f} ({a.relative_intensity:.0f} % of the base peak) is no sub-formula of {precursor.hill} "
            f"({ion.notation} of {f.hill}) within {tolerance_ppm:g} ppm: {_why_not(a.mz, z, precursor, tol)}"
        )
    status = "contradicted" if reasons else "supported"
    return FragmentCheck(f.hill, ion.notation, precursor.hill, status, explained / total if total else 0.0, assignments, tuple(reasons))


# --- similarity ----------------------------------------------------------------------------


def modified_cosine(
    mz_a: Sequence[float],
    intensity_a: Sequence[float],
    precursor_a: float,
    mz_b: Sequence[float],
    intensity_b: Sequence[float],
    precursor_b: float,
    *,
    tolerance_mz: float = SPECTRUM_MATCH_MZ,
    intensity_power: float = 1.0,
) -> tuple[float, int]:
    """Modified cosine of two spectra and the number of matched peaks.

    A peak of A matches a peak of B when their m/z agree within ``tolerance_mz`` or when A's
    agrees with B's plus the precursor difference (``precursor_a - precursor_b``). Matches are
    taken greedily by the product of intensities**``intensity_power``, each peak at most once;
    the score is the sum of the taken products over the norms of both spectra.
    """
    ma, ia = np.asarray(mz_a, dtype=np.float64), np.asarray(intensity_a, dtype=np.float64) ** intensity_power
    mb, ib = np.asarray(mz_b, dtype=np.float64), np.asarray(intensity_b, dtype=np.float64) ** intensity_power
    if ma.size == 0 or mb.size == 0:
        return 0.0, 0
    shift = float(precursor_a) - float(precursor_b)
    pairs = set()
    for s in (0.0, shift):
        d = ma[:, None] - (mb[None, :] + s)
        i, j = np.nonzero(np.abs(d) <= tolerance_mz)
        pairs.update(zip(i.tolist(), j.tolist()))
    if not pairs:
        return 0.0, 0
    cand = sorted(pairs, key=lambda p: (-ia[p[0]] * ib[p[1]], p[0], p[1]))
    used_a, used_b = set(), set()
    total, n = 0.0, 0
    for i, j in cand:
        if i in used_a or j in used_b:
            continue
        used_a.add(i)
        used_b.add(j)
        total += ia[i] * ib[j]
        n += 1
    norm = float(np.sqrt((ia**2).sum()) * np.sqrt((ib**2).sum()))
    return (float(total / norm) if norm else 0.0), n


@dataclass(frozen=True)
class SpectralLink:
    """Two wells' features whose MS/MS spectra agree."""

    well_a: str
    well_b: str
    neutral_mass_a: float
    neutral_mass_b: float
    precursor_mz_a: float
    precursor_mz_b: float
    score: float
    matched_peaks: int

    @property
    def mass_difference(self) -> float:
        """Neutral mass of B minus that of A, u."""
        return self.neutral_mass_b - self.neutral_mass_a

    def as_dict(self) -> dict[str, Any]:
        return {"well_a": self.well_a, "well_b": self.well_b, "neutral_mass_a": round(self.neutral_mass_a, 5),
                "neutral_mass_b": round(self.neutral_mass_b, 5), "precursor_mz_a": round(self.precursor_mz_a, 5),
                "precursor_mz_b": round(self.precursor_mz_b, 5), "mass_difference": round(self.mass_difference, 5),
                "score": round(self.score, 4), "matched_peaks": self.matched_peaks}


@dataclass(frozen=True)
class SpectralGroup:
    """Wells whose features share fragments (connected by links at or above the score threshold)."""

    wells: tuple[str, ...]
    members: tuple[tuple[str, float], ...]
    """(well, neutral mass) of each linked feature."""
    links: tuple[SpectralLink, ...]
    relation: str
    """'same compound' when every link joins equal masses (e.g. one peak collected over neighbouring wells), else 'related'."""
    summary: str

    def as_dict(self) -> dict[str, Any]:
        return {"wells": list(self.wells), "members": [[w, round(m, 5)] for w, m in self.members], "relation": self.relation,
                "summary": self.summary, "links": [link.as_dict() for link in self.links]}


def _well_order(well: str) -> tuple[str, int]:
    return (well[0], int(well[1:]) if well[1:].isdigit() else 0)


def _join(names: list[str]) -> str:
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]


def spectral_groups(
    spectra: Iterable[tuple[str, float, Any]],
    *,
    tolerance_mz: float = SPECTRUM_MATCH_MZ,
    min_score: float = 0.7,
    min_matched_peaks: int = 4,
    precursor_window_mz: float = 17.0,
    intensity_power: float = 0.5,
    mass_tolerance_ppm: float = DEFAULT_TOLERANCE_PPM,
) -> tuple[SpectralGroup, ...]:
    """Group wells whose MS/MS spectra agree by the modified cosine.

    Parameters
    ----------
    spectra
        (well, neutral mass, spectrum) triples; a spectrum has ``mz``, ``intensity``,
        ``precursor_mz`` (e.g. :class:`nmrcheck.ms.features.Ms2Spectrum`).
    tolerance_mz
        Peak matching tolerance, u.
    min_score, min_matched_peaks
        A link needs both (0.7 and a handful of peaks, as in molecular networking practice).
    precursor_window_mz
        Peaks within this of the precursor are left out (the precursor and its small losses
        say little about the scaffold).
    intensity_power
        Intensities are raised to this power (0.5: square roots, so a few dominant peaks do
        not decide alone).
    mass_tolerance_ppm
        Mass accuracy of each feature's neutral mass: two linked features whose masses can be
        the same within it (:func:`nmrcheck.tolerances.masses_agree`) are the same compound.
    """
    items = []
    for well, mass, s in spectra:
        mz = np.asarray(s.mz, dtype=np.float64)
        inten = np.asarray(s.intensity, dtype=np.float64)
        keep = np.abs(mz - s.precursor_mz) > precursor_window_mz
        keep &= mz < s.precursor_mz
        items.append((well, float(mass), float(s.precursor_mz), mz[keep], inten[keep]))
    links = []
    for a in range(len(items)):
        for b in range(a + 1, len(items)):
            wa, ma, pa, mza, ia = items[a]
            wb, mb, pb, mzb, ib = items[b]
            if wa == wb:
                continue
            score, n = modified_cosine(mza, ia, pa, mzb, ib, pb, tolerance_mz=tolerance_mz, intensity_power=intensity_power)
            if score >= min_score and n >= min_matched_peaks:
                if _well_order(wb) < _well_order(wa):
                    wa, wb, ma, mb, pa, pb = wb, wa, mb, ma, pb, pa
                links.append((a, b, SpectralLink(wa, wb, ma, mb, pa, pb, score, n)))
    parent = list(range(len(items)))

    def find(x):
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for a, b, _ in links:
        parent[find(a)] = find(b)
    groups: dict[int, list[int]] = {}
    for a, b, _ in links:
        groups.setdefault(find(a), [])
    for k in range(len(items)):
        if find(k) in groups:
            groups[find(k)].append(k)
    out = []
    for root, members in groups.items():
        glinks = tuple(sorted((link for a, b, link in links if find(a) == root), key=lambda l: (_well_order(l.well_a), _well_order(l.well_b))))
        wells = sorted({items[k][0] for k in members}, key=_well_order)
        same = all(masses_agree(l.neutral_mass_a, l.neutral_mass_b, mass_tolerance_ppm) for l in glinks)
        if same:
            mass = items[members[0]][1]
            summary = f"wells {_join(wells)} show the same precursor mass (M {mass:.4f}) and fragments: probably the same compound"
        else:
            summary = f"wells {_join(wells)} share fragments: probably the same scaffold"
        out.append(SpectralGroup(tuple(wells), tuple(sorted(((items[k][0], items[k][1]) for k in members), key=lambda m: (_well_order(m[0]), m[1]))),
                                 glinks, "same compound" if same else "related", summary))
    out.sort(key=lambda g: _well_order(g.wells[0]))
    return tuple(out)
