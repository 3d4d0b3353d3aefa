"""MS/MS: fragment formulas, contradictions, the modified cosine and the grouping of wells."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest

from nmrcheck.chem import parse_formula
from nmrcheck.ms.msms import assign_fragments, check_fragments, merge_scans, modified_cosine, spectral_groups

molmass = pytest.importorskip("molmass", reason="molmass gives the reference masses; pip install -e '.[test]'")


def _mz(ion: str) -> float:
    """m/z of a singly charged ion from molmass (IUPAC masses, electron mass subtracted)."""
    return molmass.Formula(f"[{ion}]+").monoisotopic_mass


def test_modified_cosine_hand_computed_shift_example():
    """A: 100, 150, 180 (1, 2, 1), precursor 200; B: 100, 164, 194 (1, 2, 2), precursor 214.
    Pairs: 100-100 direct (1), 150-164 and 180-194 shifted by 14 (4 and 2):
    7 / (sqrt(6) * 3) = 0.952579 (hand-computed)."""
    score, n = modified_cosine([100, 150, 180], [1, 2, 1], 200.0, [100, 164, 194], [1, 2, 2], 214.0)
    assert score == pytest.approx(7 / (6**0.5 * 3), abs=1e-9) and n == 3


def test_modified_cosine_uses_each_peak_once_greedily():
    """A: 100, 114 (1, 3), precursor 214; B: 100, 114 (2, 1), precursor 200. The best pair is A114-B100
    (shifted, 6); it uses both peaks the others need: 6 / (sqrt(10) * sqrt(5)) = 0.848528 (hand-computed)."""
    score, n = modified_cosine([100, 114], [1, 3], 214.0, [100, 114], [2, 1], 200.0)
    assert score == pytest.approx(6 / 50**0.5, abs=1e-9) and n == 1


def test_modified_cosine_agrees_with_matchms():
    """matchms's ModifiedCosineGreedy on random analogue spectra (optional: matchms is heavy)."""
    matchms = pytest.importorskip("matchms", reason="matchms not installed (optional): pip install matchms")
    from matchms.similarity import ModifiedCosineGreedy

    rng = np.random.default_rng(1)
    for _ in range(5):
        ma = np.sort(rng.uniform(50, 400, 20))
        ia = rng.uniform(1, 100, 20)
        mb = np.sort(np.concatenate([ma[:10], ma[10:] + 14.01565, rng.uniform(50, 400, 5)]))
        ib = rng.uniform(1, 100, mb.size)
        a = matchms.Spectrum(mz=ma, intensities=ia, metadata={"precursor_mz": 420.0})
        b = matchms.Spectrum(mz=mb, intensities=ib, metadata={"precursor_mz": 434.01565})
        want = ModifiedCosineGreedy(tolerance=0.01, intensity_power=1.0).pair(a, b)
        got = modified_cosine(ma, ia, 420.0, mb, ib, 434.01565, tolerance_mz=0.01)
        assert got[0] == pytest.approx(float(want["score"]), abs=1e-9) and got[1] == int(want["matches"])


def test_fragment_formulas_are_sub_formulas_within_tolerance():
    """Fragment m/z from molmass; the assigned composition is the planted one."""
    planted = ("C8H5O3", "C7H5O2", "C6H5O")
    mz = [_mz(f) * (1 + 2e-6) for f in planted]
    got = assign_fragments(mz, [100.0, 50.0, 30.0], parse_formula("C15H11O5"))
    assert [a.formulas[0] for a in got] == list(planted)
    assert all(abs(a.errors_ppm[0]) < 3 for a in got)
    assert got[0].losses[0] == "C7H6O2"


def test_a_fragment_needing_nitrogen_contradicts_a_nitrogen_free_candidate():
    frag = _mz("C7H8NO")
    check = check_fragments("C12H16O3", "[M+H]+", [frag, 150.0], [100.0, 3.0])
    assert check.status == "contradicted"
    assert f"m/z {frag:.4f}" in check.reasons[0] and "needs 1 N" in check.reasons[0]
    ok = check_fragments("C11H16N2O2", "[M+H]+", [frag], [100.0])
    assert ok.status == "supported" and ok.assignments[0].formulas[0] == "C7H8NO"


def test_small_peaks_and_heavier_ions_do_not_contradict():
    """Below 10 % of the base peak a peak is not a clear fragment; above the precursor it is not a fragment."""
    precursor = _mz("C10H15O")
    check = check_fragments("C10H14O", "[M+H]+", [_mz("C7H8NO"), precursor, precursor + 20], [5.0, 100.0, 80.0])
    assert check.status == "no fragments"


def test_merge_scans_drops_peaks_seen_once_in_three():
    @dataclass
    class S:
        mz: np.ndarray
        intensity: np.ndarray

    scans = [S(np.array([100.0, 150.0 + d, 200.0 + k]), np.array([50.0, 100.0, 30.0])) for k, d in enumerate((0.0, 0.001, -0.001))]
    mz, inten = merge_scans(scans)
    assert mz[:2] == pytest.approx([100.0, 150.0], abs=1e-3)
    assert inten.max() == pytest.approx(100.0) and mz.size == 2


@dataclass
class _Spec:
    precursor_mz: float
    mz: tuple
    intensity: tuple


def _analogue(shift: float, extra: float = 0.0):
    core = [_mz(f) for f in ("C6H5O", "C7H5O2", "C8H5O3", "C9H7O", "C5H5")]
    sub = [m + shift for m in (_mz("C10H9O3"), _mz("C11H11O3"))]
    prec = _mz("C15H11O5") + shift
    return _Spec(prec, tuple(core + sub + ([extra] if extra else [])), tuple([100.0, 60, 45, 30, 20, 50, 40] + ([10.0] if extra else [])))


def test_spectral_groups_link_analogues_and_name_the_wells():
    ch2, o = molmass.Formula("CH2").monoisotopic_mass, molmass.Formula("O").monoisotopic_mass
    unrelated = _Spec(400.2, (60.0, 77.04, 91.05, 105.07, 119.08), (100.0, 80, 60, 40, 20))
    m = molmass.Formula("C15H10O5").monoisotopic_mass
    spectra = [("B4", m, _analogue(0.0)), ("B5", m + ch2, _analogue(ch2)), ("C7", m + o, _analogue(o, 131.0)), ("D1", 399.2, unrelated)]
    groups = spectral_groups(spectra)
    assert len(groups) == 1
    g = groups[0]
    assert g.wells == ("B4", "B5", "C7") and g.relation == "related"
    assert g.summary == "wells B4, B5 and C7 share fragments: probably the same scaffold"
    assert {round(link.mass_difference, 2) for link in g.links} >= {14.02, 15.99}


def test_one_compound_over_two_wells_is_the_same_compound():
    groups = spectral_groups([("A2", 270.0528, _analogue(0.0)), ("A3", 270.0528, _analogue(0.0))])
    assert groups[0].relation == "same compound" and "same compound" in groups[0].summary
