"""Synthetic LC-MS runs with known answers: invented compounds eluting as Gaussian peaks, their ion
species and isotope envelopes in centroided survey scans, chemical noise, and data-dependent MS/MS.

Used by the tests, the benchmarks and the demo plate; written to mzML by :mod:`nmrcheck.io.mzml`.
Masses come from :mod:`nmrcheck.chem` (IUPAC isotope masses, CODATA electron mass).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from nmrcheck.chem.adducts import parse_ion
from nmrcheck.chem.elements import electron_mass
from nmrcheck.chem.formula import parse_formula
from nmrcheck.chem.isotopes import isotope_pattern
from nmrcheck.errors import ParameterError
from nmrcheck.io.mzml import Scan

__all__ = ["SimulatedCompound", "simulate_run", "fragment_mz"]


@dataclass(frozen=True)
class SimulatedCompound:
    """An invented compound as the LC-MS sees it.

    Attributes
    ----------
    name : str
    formula : str
        Neutral molecular formula.
    rt_min : float
        Apex retention time at the detector, minutes.
    abundance : float
        Apex intensity (detector counts) of the monoisotopic peak of its first ion.
    ions : tuple of (str, float)
        Ion species and their intensity relative to the first.
    fwhm_s : float
        Full width at half maximum of the chromatographic peak, seconds.
    fragments : tuple of (str, float)
        MS/MS product ions of the first ion: composition of the (singly charged) ion in
        neutral-atom terms, e.g. ``'C7H7O'`` for C7H7O+, and relative intensity (base 100).
    """

    name: str
    formula: str
    rt_min: float
    abundance: float
    ions: tuple[tuple[str, float], ...] = (("[M+H]+", 1.0),)
    fwhm_s: float = 6.0
    fragments: tuple[tuple[str, float], ...] = field(default_factory=tuple)


def fragment_mz(composition: str, charge: int = 1) -> float:
    """m/z of a product ion of the given composition (neutral-atom basis) and signed charge."""
    return (parse_formula(composition).monoisotopic_mass - charge * electron_mass()) / abs(charge)


def _ion_peaks(c: SimulatedCompound, index: int, min_relative: float = 1e-3):
    """Rows (compound, ion index, isotope offset, m/z, apex intensity, polarity sign) of one compound."""
    formula = parse_formula(c.formula)
    rows = []
    for k, (notation, rel) in enumerate(c.ions):
        species = parse_ion(notation)
        pattern = isotope_pattern(formula, ion=species, max_peaks=8)
        top = pattern.abundances[0]
        for off, mz, ab in zip(pattern.offsets, pattern.mz, pattern.abundances):
            r = ab / top
            if r >= min_relative:
                rows.append((index, k, off, mz, c.abundance * rel * r, 1 if species.charge > 0 else -1))
    return rows


def simulate_run(
    compounds: list[SimulatedCompound] | tuple[SimulatedCompound, ...],
    *,
    duration_min: float = 10.0,
    scan_interval_s: float = 0.5,
    polarities: tuple[str, ...] = ("positive",),
    mz_range: tuple[float, float] = (100.0, 1500.0),
    mass_error_ppm: float = 1.0,
    intensity_noise: float = 0.05,
    noise_peaks: int = 40,
    noise_level: float = 300.0,
    detection_limit: float = 100.0,
    top_n: int = 2,
    ms2_threshold: float = 2e4,
    exclusion_min: float = 0.1,
    collision_energy_ev: float = 25.0,
    seed: int = 0,
) -> tuple[Scan, ...]:
    """Survey scans every ``scan_interval_s`` (alternating polarities when two are given), each
    followed by up to ``top_n`` MS/MS scans of the most intense compound ions.

    Parameters
    ----------
    compounds
        What elutes.
    duration_min
        Run length, minutes.
    scan_interval_s
        Time between survey scans of one polarity, seconds.
    polarities
        ``('positive',)``, ``('negative',)`` or both (polarity switching).
    mz_range
        Scan range, m/z.
    mass_error_ppm
        Standard deviation of each centroid's m/z error (grows as 1/sqrt of the intensity
        below 1e4 counts, as counting statistics make it).
    intensity_noise
        Relative standard deviation of each centroid's intensity.
    noise_peaks, noise_level
        Chemical-noise centroids per scan (uniform in m/z) and their mean intensity.
    detection_limit
        Centroids below this intensity are not recorded.
    top_n, ms2_threshold, exclusion_min
        Data-dependent acquisition: the ``top_n`` most intense monoisotopic compound ions
        above ``ms2_threshold`` per survey scan, each ion then excluded for ``exclusion_min``.
    collision_energy_ev
        Recorded with each MS/MS scan.
    seed
        Random seed: the same arguments give the same run.
    """
    if duration_min <= 0 or scan_interval_s <= 0:
        raise ParameterError("duration_min and scan_interval_s must be positive")
    for p in polarities:
        if p not in ("positive", "negative"):
            raise ParameterError(f"polarities: {p!r} is not 'positive' or 'negative'")
    rng = np.random.default_rng(seed)
    rows = [r for i, c in enumerate(compounds) for r in _ion_peaks(c, i)]
    table = np.array([r[:5] for r in rows], dtype=np.float64).reshape(-1, 5)
    sign = np.array([r[5] for r in rows], dtype=np.int64)
    cidx = table[:, 0].astype(int)
    rt = np.array([c.rt_min for c in compounds])[cidx] if rows else np.empty(0)
    sigma = np.array([c.fwhm_s / 60.0 / (2.0 * math.sqrt(2.0 * math.log(2.0))) for c in compounds])[cidx] if rows else np.empty(0)
    fragments = []
    for c in compounds:
        species = parse_ion(c.ions[0][0])
        z = 1 if species.charge > 0 else -1
        fragments.append([(fragment_mz(f, z), rel) for f, rel in c.fragments])
    scans: list[Scan] = []
    excluded: dict[tuple[int, int], float] = {}
    n_cycles = int(duration_min * 60.0 / scan_interval_s)
    step = scan_interval_s / 60.0 / max(1, len(polarities))
    number = 0
    for cycle in range(n_cycles):
        for pi, polarity in enumerate(polarities):
            t = (cycle * len(polarities) + pi) * step
            want = 1 if polarity == "positive" else -1
            live = (sign == want) & (np.abs(t - rt) < 5 * sigma)
            heights = table[live, 4] * np.exp(-0.5 * ((t - rt[live]) / sigma[live]) ** 2)
            heights = heights * (1.0 + intensity_noise * rng.standard_normal(heights.size))
            mzs = table[live, 3]
            err = mass_error_ppm * np.sqrt(np.maximum(1.0, 1e4 / np.maximum(heights, 1.0)))
            mzs = mzs * (1.0 + 1e-6 * err * rng.standard_normal(mzs.size))
            noise_mz = rng.uniform(mz_range[0], mz_range[1], noise_peaks)
            noise_i = rng.exponential(noise_level, noise_peaks)
            mz = np.concatenate([mzs, noise_mz])
            inten = np.concatenate([heights, noise_i])
            keep = (inten >= detection_limit) & (mz >= mz_range[0]) & (mz <= mz_range[1])
            order = np.argsort(mz[keep])
            number += 1
            survey_id = f"scan={number}"
            scans.append(Scan(len(scans), survey_id, t, 1, polarity, mz[keep][order], inten[keep][order], True))
            # Data-dependent MS/MS of the most intense monoisotopic compound ions.
            rows_live = np.nonzero(live)[0]
            mono = [(h, r) for h, r in zip(heights, rows_live) if table[r, 2] == 0 and h >= ms2_threshold]
            mono.sort(reverse=True)
            picked = 0
            for h, r in mono:
                key = (int(table[r, 0]), int(table[r, 1]))
                if picked >= top_n or t < excluded.get(key, -1.0):
                    continue
                excluded[key] = t + exclusion_min
                picked += 1
                number += 1
                prec = float(mzs[list(rows_live).index(r)])
                frag = fragments[key[0]] if key[1] == 0 else []
                peaks = [(fmz, rel / 100.0 * h * 0.5) for fmz, rel in frag]
                peaks.append((prec, h * (0.05 if frag else 0.6)))
                fmz = np.array([p[0] for p in peaks])
                fi = np.array([p[1] for p in peaks]) * (1.0 + intensity_noise * rng.standard_normal(len(peaks)))
                fmz = fmz * (1.0 + 1e-6 * mass_error_ppm * rng.standard_normal(fmz.size))
                nmz = rng.uniform(50.0, prec, 8)
                ni = rng.exponential(0.01 * h, 8)
                fmz, fi = np.concatenate([fmz, nmz]), np.concatenate([fi, ni])
                keep2 = fi >= detection_limit
                o = np.argsort(fmz[keep2])
                charge = int(abs(parse_ion(compounds[key[0]].ions[key[1]][0]).charge))
                scans.append(Scan(len(scans), f"scan={number}", t + (picked * step) / (top_n + 1), 2, polarity,
                                  fmz[keep2][o], fi[keep2][o], True, prec, charge, survey_id, collision_energy_ev))
    return tuple(scans)

