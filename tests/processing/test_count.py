"""Proton counting: the unit from the integrals, its ambiguity, bounds from candidate formulas,
and lines that must never be counted. Integrals are known by construction (nmrcheck.synth)."""

from __future__ import annotations

import numpy as np
import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.processing import process
from nmrcheck.processing.count import (AMBIGUITY_MARGIN, _cost, bounded_alternatives, bounded_unit, competing_units, count_protons, find_unit,
                                      near_totals, threshold_loss)
from nmrcheck.processing.results import Region
from nmrcheck.synth import Line, simulate_fid


def _regions(integrals):
    return [Region(10.0 - i, 9.5 - i, float(a), peak_ppm=9.75 - i) for i, a in enumerate(integrals)]


def test_clear_integer_ratios_are_not_ambiguous():
    """1:1:2:3 (a clean spectrum of 7 H): the unit is unique; doubling fits no better, so only
    the preference for fewer protons separates 7 from 14 H by more than the ambiguity margin."""
    regions, count = count_protons(_regions([1.0, 1.02, 1.98, 3.03]))
    assert count.integer_h == 7
    assert not count.ambiguous and count.alternative_totals == ()


def test_half_reading_signals_make_the_count_ambiguous():
    """Relaxation-weighted integrals (4-allylanisole's 2/2/1/2/3/2 H, the slowly relaxing ring and
    vinyl protons at 55-60 % and the methyl at 90 % of their full area, as after a short delay):
    about 6 and about 13 H fit about equally, so both are offered and the range spans them."""
    protons = np.array([2.0, 2.0, 1.0, 2.0, 3.0, 2.0])
    integrals = protons * np.array([0.6, 0.6, 0.55, 0.55, 0.9, 0.7])
    _, count = count_protons(_regions(integrals))
    assert count.ambiguous
    assert min(count.alternative_totals) <= 6.5 and max(count.alternative_totals) >= 11.5
    assert count.total_h_low <= 6.5 and count.total_h_high >= 11.5


def test_competing_units_are_multiples_of_the_best():
    integrals = np.array([2.0, 2.0, 1.0, 2.0, 3.0, 2.0]) * np.array([0.6, 0.6, 0.55, 0.55, 0.9, 0.7])
    unit, _ = find_unit(integrals)
    for u in competing_units(integrals, unit):
        ratio = unit / u
        assert min(abs(ratio - k) for k in (1 / 3, 0.5, 2.0, 3.0)) < 0.15


def test_a_second_reading_that_is_no_multiple_is_offered():
    """Integrals (x 1e4), threshold losses and one-proton detection limit of the counted regions of
    2759-55-9's SNR-300 copy (N-(4-methylphenyl)propanamide, 12 C-H + 1 N-H by structure.mol; shared
    recording, ../shared/tools/add_noise.py, seed 0): two aromatic doublets (the N-H under one), the
    CH2 quartet, the aryl methyl, water, the CH3 triplet: 2:3:2:3:-:3 H. At one proton the error model
    allows 30 %, so they also read as five one-proton singlets (4.8 H), and the preference for fewer
    protons took that, with a range of 4.3-5.5 H. 13 H fits within the ambiguity margin though it is
    no multiple of 4.8; both are offered."""
    integrals = [21.707, 32.545, 25.312, 38.759, 5.377, 32.223]
    losses = [0.017, 0.007, 0.019, 0.004, 0.167, 0.011]
    _, count = count_protons(_regions(integrals), one_proton_detection_limit=1.594, threshold_losses=losses)
    assert count.ambiguous
    assert min(count.alternative_totals) <= 13.5 and max(count.alternative_totals) >= 11.5
    assert count.total_h_low <= 12 and count.total_h_high >= 12


def test_competing_units_fit_about_as_well_and_lie_beyond_the_near_totals():
    """Every second reading fits within the ambiguity margin and its total is a quarter or more away
    (the 2759-55-9 integrals above: 4.8 H best, 13 H offered)."""
    integrals = np.array([21.707, 32.545, 25.312, 38.759, 5.377, 32.223])
    unit, cost = find_unit(integrals)
    offered = competing_units(integrals, unit)
    assert offered
    for u in offered:
        assert _cost(integrals, u) <= cost + AMBIGUITY_MARGIN + 1e-9
        assert abs(integrals.sum() / u - integrals.sum() / unit) >= 0.25 * integrals.sum() / unit


def test_allowed_totals_that_settle_on_one_unit_are_one_reading():
    """Three signals read 2.32 : 1.42 : 2.19 with every total from 1 to 8 H allowed (a formula alone
    allows that many): 5 H fits best, and 7 and 8 H both settle on a unit giving 7.97-8.0 H. That is
    one second reading, offered once, not two."""
    integrals = [2.321, 1.421, 2.189]
    allowed = tuple(range(1, 9))
    unit, total = bounded_unit(integrals, allowed)
    assert total == 5
    competing, _ = bounded_alternatives(integrals, allowed, unit)
    totals = sorted(sum(integrals) / u for u in competing)
    assert totals and all(b - a >= 0.5 for a, b in zip(totals, totals[1:]))


def test_twice_the_count_is_offered_when_one_proton_signals_could_hide():
    """4-allylanisole (C10H12O, PubChem, from memory; 2/2/1/2/3/2 H) with its one-proton vinyl multiplet lost in the noise:
    the survivors read 2:2:2:3.75:2 (the methyl relaxes faster than the ring protons after a short
    delay). 1:1:1:2:1 at twice the unit fits as well, and the preference for fewer protons picks
    6 H. That preference rests on every one-proton signal being seen: when a one-proton multiplet
    of the smaller unit (1.0 here) would lie under the detection limit, 12 H is offered beside it."""
    integrals = [2.0, 2.06, 1.92, 3.75, 2.08]
    _, seen = count_protons(_regions(integrals), one_proton_detection_limit=0.9)
    assert not seen.ambiguous and seen.integer_h == 6
    _, hidden = count_protons(_regions(integrals), one_proton_detection_limit=1.5)
    assert hidden.ambiguous and hidden.integer_h == 6
    assert min(hidden.alternative_totals) <= 6.5 and max(hidden.alternative_totals) >= 11.5
    assert hidden.total_h_low <= 6 and hidden.total_h_high >= 12


def test_count_is_a_lower_bound_when_one_proton_signals_cannot_be_seen():
    """Only a methylene and two methyl singlets survive (2:3:3, clear integer ratios: 8 H). With the
    detection limit of a one-proton multiplet under the unit the count stands as it is; above it,
    any number of one-proton signals may be missing (common practice: signals under the detection
    limit are unknown, not absent), so the count is a lower bound and the range reaches twice it."""
    integrals = [2.0, 3.0, 3.05]
    _, seen = count_protons(_regions(integrals), one_proton_detection_limit=0.5)
    assert seen.integer_h == 8 and not seen.lower_bound and seen.total_h_high < 9.0
    _, unseen = count_protons(_regions(integrals), one_proton_detection_limit=1.5)
    assert unseen.integer_h == 8 and unseen.lower_bound
    assert unseen.total_h_low <= 8.0 and unseen.total_h_high >= 2 * unseen.total_h
    _, anchored = count_protons(_regions(integrals), anchor_h=8, one_proton_detection_limit=1.5)
    assert not anchored.lower_bound


def test_threshold_loss_follows_the_peak_height():
    """Half the threshold-to-peak ratio, at most half the area (the figures measured on the shared
    recordings' noisy copies are in threshold_loss's docstring)."""
    assert threshold_loss(1.0) == 0.5 and threshold_loss(0.0) == 0.5
    assert threshold_loss(2.0) == pytest.approx(0.25)
    assert threshold_loss(50.0) == pytest.approx(0.01)


def test_multiplets_cut_by_the_threshold_do_not_inflate_the_count():
    """Integrals (x 1e4) and peak-to-threshold ratios of the counted regions of 1047626-52-7's
    SNR-100 copy (shared recording, ../shared/tools/add_noise.py, seed 0): the three methyl singlets
    keep their area while the one-proton multiplets, barely above the threshold, lose their outer
    lines. Read as if nothing were lost, the methyls come out as 4 H each and the range (20-23 H)
    misses the structure's 18 C-H + 1 O-H (structure.mol); with the threshold losses it holds them."""
    integrals = [3.56, 3.39, 2.15, 3.36, 3.01, 6.53, 2.62, 3.03, 2.93, 12.12, 11.95, 12.29]
    peak_over_threshold = [6.4, 7.3, 1.4, 2.2, 1.8, 4.3, 2.4, 4.2, 2.9, 31.1, 35.6, 31.7]
    _, plain = count_protons(_regions(integrals))
    assert plain.total_h_low > 19
    _, aware = count_protons(_regions(integrals), threshold_losses=[threshold_loss(x) for x in peak_over_threshold])
    assert aware.total_h_low <= 19 and aware.total_h_high >= 18


def test_partial_multiplets_near_the_threshold_are_protons_not_impurities():
    """Integrals (x 1e4), peak-to-threshold ratios and one-proton detection limit of the counted regions of
    16485-10-2's SNR-30 copy (shared recording, ../shared/tools/add_noise.py, seed 2). Two one-proton
    multiplets whose tallest lines stand 1.2 times the threshold keep under half their area (4.61 and
    7.95 against about 15 for one proton). Left to the minor-signal term they made a halved unit win
    (32 or 64 H offered); a region that could hold half a proton before its threshold loss is a signal
    of its own, and the count offered brackets the structure's 15 C-H + 4 N-H/O-H (structure.mol)."""
    integrals = [15.59, 18.38, 34.63, 13.25, 26.96, 4.61, 23.03, 7.95, 34.82, 98.58]
    peak_over_threshold = [1.5, 2.5, 2.4, 2.2, 2.9, 1.2, 1.7, 1.2, 2.9, 10.4]
    _, count = count_protons(_regions(integrals), one_proton_detection_limit=24.81,
                             threshold_losses=[threshold_loss(x) for x in peak_over_threshold])
    offered = count.alternative_totals if count.ambiguous else (count.total_h,)
    assert min(offered) <= 19.5 and max(offered) >= 14.5
    assert 15 <= count.total_h <= 19


def test_range_holds_what_the_regions_left_under_the_threshold():
    """Integrals (in units of the chosen proton), peak-to-threshold ratios, integral noise and one-proton
    detection limit of the counted regions of menthol's SNR-100 copy (2216-51-5, shared recording,
    ../shared/tools/add_noise.py, seed 4). Its ring multiplets stand 1.3-2.2 times the threshold and show
    only part of their area, so the count reads about 16 H for the structure's 19 C-H + 1 O-H
    (structure.mol): the high end of the range must reach what the regions hold with their threshold
    losses restored."""
    integrals = [1.116, 1.028, 0.828, 0.958, 0.779, 0.798, 0.47, 0.328, 7.122, 2.879]
    peak_over_threshold = [7.05, 2.2, 1.99, 1.88, 1.9, 2.21, 1.32, 2.07, 36.07, 20.7]
    losses = [threshold_loss(x) for x in peak_over_threshold]
    _, count = count_protons(_regions(integrals), integral_sigma=[0.012] * len(integrals),
                             one_proton_detection_limit=0.462, threshold_losses=losses)
    assert 15.5 <= count.total_h <= 17.0
    assert count.total_h_low <= 19 <= count.total_h_high
    shown = sum(integrals) / count.unit_integral
    restored = sum(h / (1.0 - loss) for h, loss in zip(integrals, losses)) / count.unit_integral
    assert count.total_h_high >= restored > shown


def test_detection_limit_follows_the_noise():
    """The same spectrum (4-allylanisole's lines, 400 MHz) clean and with the noise of a few
    micrograms: clean, every one-proton signal stands clear and the count is 12 H outright; in the
    noise the 1 H vinyl multiplet (a ddt spread over 12 lines) is lost, and the count must still
    hold 12 H (as an alternative: n or 2n), never a confident 6 H."""
    lines = [Line(7.10, 2.0, 1.0, (8.6,)), Line(6.83, 2.0, 1.0, (8.6,)), Line(5.95, 1.0, 1.0, (16.9, 10.1, 6.7, 6.7)),
             Line(5.06, 2.0, 1.0, (13.5,)), Line(3.78, 3.0, 1.0), Line(3.32, 2.0, 1.0, (6.7,))]
    # Shifts and couplings of 4-allylanisole in CDCl3 (SDBS-like literature values, from memory).
    clean = process(simulate_fid(lines, spectrometer_mhz=400.0, sweep_width_hz=4800.0, points=16384, noise=0.0, seed=3))
    assert clean.count.integer_h == 12 and not clean.count.ambiguous
    height = max(clean.spectrum.data.real)
    # Noise for a tallest line of about 60 sigma (SNR 30 as height over twice the noise).
    sigma_spectrum = height / 60.0
    probe = process(simulate_fid(lines, spectrometer_mhz=400.0, sweep_width_hz=4800.0, points=16384, noise=1.0, seed=3))
    scale = sigma_spectrum / probe.noise
    noisy = process(simulate_fid(lines, spectrometer_mhz=400.0, sweep_width_hz=4800.0, points=16384, noise=scale, seed=3))
    c = noisy.count
    assert c.ambiguous and c.total_h_low <= 12 <= c.total_h_high


def test_range_spans_units_a_few_protons_apart_that_fit_as_well():
    """Synthetic integrals of a crowded aliphatic spectrum (a C20 terpenoid-like compound: seven one-proton multiplets, a
    cluster of three overlapping methyls and a fourth methyl; relaxation-weighted, the ring
    multiplets at 60-110 % of their area, as after a short delay): units giving 16-20 H cost
    about the same, so the range must reach from about 16 to about 20 H, while clean integer
    ratios (1:1:2:3, 7 H) keep a narrow one."""
    crowded = [1.14, 1.07, 0.90, 0.83, 0.72, 0.83, 0.58, 0.37, 7.08, 3.13]
    unit, _ = find_unit(crowded)
    assert max(near_totals(crowded, unit)) >= 19.0
    _, count = count_protons(_regions(crowded))
    assert count.total_h_low <= 16.5 and count.total_h_high >= 19.5
    _, clean = count_protons(_regions([1.0, 1.02, 1.98, 3.03]))
    assert clean.total_h_high - clean.total_h_low <= 1.5


def test_candidate_formulas_bound_the_unit():
    """The relaxation-weighted integrals above, bounded by candidate formulas: with 12 H allowed
    (4-allylanisole, C10H12O) the unit is the 12 H one, not the 6 H one the integrals alone prefer."""
    integrals = list(np.array([2.0, 2.0, 1.0, 2.0, 3.0, 2.0]) * np.array([0.6, 0.6, 0.55, 0.55, 0.9, 0.7]))
    unit, total = bounded_unit(integrals, [12])
    assert total == 12
    _, count = count_protons(_regions(integrals), candidate_h_counts=(12, 14))
    assert count.method == "bounded by candidate formulas"
    assert count.integer_h in (12, 13)
    assert count.bounded_by == (12, 14)
    with pytest.raises(ParameterError, match="candidate_h_counts"):
        bounded_unit(integrals, [0])


def test_candidate_totals_the_integrals_fit_alike_are_both_offered():
    """The same integrals, with candidate formulas allowing 6 and 12 H (totals in the ratio 1:2, as
    for a formula and its dimer): the integrals fit both about as well as they fit n and 2n protons
    without formulas, so the count offers both (ambiguous) instead of a confident 6 H. A nearer
    candidate total that fits about as well (14 beside 12) only widens the range."""
    integrals = list(np.array([2.0, 2.0, 1.0, 2.0, 3.0, 2.0]) * np.array([0.6, 0.6, 0.55, 0.55, 0.9, 0.7]))
    _, free = count_protons(_regions(integrals))
    _, both = count_protons(_regions(integrals), candidate_h_counts=(6, 12))
    assert both.method == "bounded by candidate formulas"
    assert both.ambiguous and both.alternative_totals == free.alternative_totals
    assert min(both.alternative_totals) < 7 and 11.5 < max(both.alternative_totals) < 13.5
    assert both.total_h_low <= 12 <= both.total_h_high
    _, near = count_protons(_regions(integrals), candidate_h_counts=(12, 14))
    assert not near.ambiguous and near.total_h_low <= 12.5 and near.total_h_high >= 14
    _, one = count_protons(_regions(integrals), candidate_h_counts=(12,))
    assert not one.ambiguous and one.total_h_high < 14


def test_a_count_that_calls_a_signal_an_impurity_is_no_second_reading():
    """Caffeine's 1H spectrum: three N-methyl singlets and the H-8 singlet, 3:3:3:1 (from its structure,
    common practice), each read within 3 % as routine integration does (0.98, 2.97, 3.06, 2.98 H: the
    values a synthetic caffeine spectrum made by nmrcheck.synth gave). A third
    of the unit reads the methyls as 1 H each and H-8 as a third of a proton, an impurity: that is not
    the n-or-3n ambiguity of the count, with or without the formula's allowance of 1-10 visible H
    (C8H10N4O2, every N-H and O-H allowed)."""
    integrals = [0.98, 2.97, 3.06, 2.98]
    _, free = count_protons(_regions(integrals))
    assert not free.ambiguous and free.integer_h == 10
    _, bounded = count_protons(_regions(integrals), candidate_h_counts=tuple(range(1, 11)))
    assert not bounded.ambiguous and bounded.integer_h == 10
    # Where every signal is divided alike, the second reading stays: the relaxation-weighted
    # 4-allylanisole integrals above read 6 or 12-13 H.
    weighted = list(np.array([2.0, 2.0, 1.0, 2.0, 3.0, 2.0]) * np.array([0.6, 0.6, 0.55, 0.55, 0.9, 0.7]))
    _, both = count_protons(_regions(weighted))
    assert both.ambiguous and min(both.alternative_totals) < 7 and max(both.alternative_totals) > 12


# An invented compound in D2O with DSS: its 9 H singlet at 0 ppm and its three 2 H methylene
# multiplets (2.91, 1.75, 0.63 ppm; common practice) must never be counted.
ANALYTE = [Line(7.40, 2.0, 1.0, (8.0,)), Line(7.05, 2.0, 1.0, (8.0,)), Line(3.95, 2.0, 1.0, (6.5, 6.5)),
           Line(3.30, 3.0, 1.0)]
DSS = [Line(0.0, 9.0 * 0.2, 0.8), Line(2.91, 2.0 * 0.2, 1.0, (7.5, 7.5)), Line(1.75, 2.0 * 0.2, 1.0, (7.5, 7.5, 7.5, 7.5)),
       Line(0.63, 2.0 * 0.2, 1.0, (8.0, 8.0))]


def test_dss_singlet_and_methylenes_are_never_counted():
    """DSS at a fifth of the analyte's molar amount: the singlet sets the axis (flag 'reference') and
    the three methylene multiplets are flagged, so the analyte's 9 H are all that is counted."""
    fid = simulate_fid(ANALYTE + DSS, spectrometer_mhz=600.0, sweep_width_hz=7200.0, points=32768, carrier_ppm=4.7,
                       noise=2e-4, seed=7)
    p = process(fid, solvent="D2O")
    assert p.reference.kind == "DSS"
    for ppm in (0.0, 2.91, 1.75, 0.63):
        near = [r for r in p.regions if r.peak_ppm is not None and abs(r.peak_ppm - ppm) < 0.05]
        assert near and all(not r.counted for r in near), ppm
    assert p.count.integer_h == 9


def test_water_singlet_is_modelled_and_a_multiplet_at_its_place_counted():
    """Water in CDCl3 is a singlet near 1.56 ppm that wanders by about 0.1 ppm (Gottlieb 1997, from
    memory): here at 1.62 ppm, beside an analyte CH2 quintet at 1.50 ppm. The singlet is taken out as
    water; the multiplet, inside the water window, is still counted (2 H of 2+2+3+2 = 9 H)."""
    lines = [Line(7.30, 2.0, 1.0, (8.0,)), Line(4.10, 2.0, 1.0, (7.0, 7.0)), Line(2.30, 3.0, 1.0),
             Line(1.50, 2.0, 1.0, (7.0, 7.0, 7.0, 7.0)), Line(1.62, 1.5, 2.0), Line(7.26, 0.05, 0.8)]
    fid = simulate_fid(lines, spectrometer_mhz=500.0, sweep_width_hz=6000.0, points=32768, carrier_ppm=5.0,
                       noise=2e-4, seed=9)
    p = process(fid, solvent="CDCl3")
    water = [r for r in p.regions if r.flag == "water"]
    assert water and abs(water[0].peak_ppm - 1.62) < 0.01
    quintet = [r for r in p.regions if r.counted and r.peak_ppm is not None and abs(r.peak_ppm - 1.50) < 0.03]
    assert quintet and quintet[0].h == pytest.approx(2.0, abs=0.2)
    assert p.count.integer_h == 9
