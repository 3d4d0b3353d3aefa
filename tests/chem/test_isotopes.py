"""Isotope patterns against IsoSpecPy and handbook ratios; the batch recurrence; the pattern fit."""

from __future__ import annotations

import re

import IsoSpecPy
import numpy as np
import pytest
from natural_products import NATURAL_PRODUCTS
from rdkit import Chem
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

from nmrcheck.chem.adducts import ion_composition
from nmrcheck.chem.elements import electron_mass, element
from nmrcheck.chem.formula import parse_formula
from nmrcheck.chem.isotopes import fit_isotopes, isotope_pattern, parse_intensities, pattern_matrix
from nmrcheck.errors import ParameterError

FORMULAS = sorted({CalcMolFormula(Chem.MolFromSmiles(s)) for _n, _c, s, _f in NATURAL_PRODUCTS})


def isospec_binned(formula, *, own_table: bool, peaks: int):
    """IsoSpecPy fine structure (99.9999 % of the distribution), summed into nominal-mass bins.

    With ``own_table`` IsoSpecPy is given nmrcheck's isotope masses and abundances, so that
    only the algorithm is compared; otherwise it uses its own element table.
    """
    if own_table:
        symbols = list(formula.counts)
        iso = IsoSpecPy.IsoTotalProb(
            prob_to_cover=0.999999,
            atomCounts=[formula.count(s) for s in symbols],
            isotopeMasses=[list(element(s).masses) for s in symbols],
            isotopeProbabilities=[list(element(s).abundances) for s in symbols],
        )
    else:
        iso = IsoSpecPy.IsoTotalProb(prob_to_cover=0.999999, formula=formula.hill)
    masses = np.array(list(iso.masses))
    probs = np.array(list(iso.probs))
    offset = np.rint(masses - formula.monoisotopic_mass).astype(int)
    p = np.array([probs[offset == k].sum() for k in range(peaks)])
    pm = np.array([(probs * masses)[offset == k].sum() for k in range(peaks)])
    return p, np.divide(pm, p, out=np.zeros_like(p), where=p > 0)


@pytest.mark.parametrize("hill", FORMULAS)
def test_pattern_matches_isospecpy_algorithm(hill):
    """Same isotope table: binned abundances agree to 1e-6 absolute, bin mean masses to 1e-6 u."""
    formula = parse_formula(hill)
    ours = isotope_pattern(formula, max_peaks=6, min_abundance=0.0)
    p, mean_mass = isospec_binned(formula, own_table=True, peaks=6)
    # IsoSpecPy covers 99.9999 % of the distribution: what it leaves out bounds the tolerance.
    assert np.array(ours.abundances) == pytest.approx(p, abs=2e-6)
    big = p > 1e-2
    assert np.array(ours.mz)[big] == pytest.approx(mean_mass[big], abs=1e-6)


@pytest.mark.parametrize("hill", FORMULAS[::3])
def test_pattern_matches_isospecpy_own_table(hill):
    """IsoSpecPy's own element table (older IUPAC abundances for N, S, Cl): within 1.5 % relative."""
    formula = parse_formula(hill)
    ours = np.array(isotope_pattern(formula, max_peaks=4, min_abundance=0.0).abundances)
    p, _ = isospec_binned(formula, own_table=False, peaks=4)
    assert ours / ours.max() == pytest.approx(p / p.max(), abs=0.015)


def test_ion_pattern_is_that_of_the_ion_composition():
    f = parse_formula("C15H10O5")
    ion = isotope_pattern(f, ion="[M+Cl]-")
    direct = isotope_pattern(ion_composition(f, "[M+Cl]-"))
    assert ion.abundances == pytest.approx(direct.abundances, abs=1e-12)
    assert ion.mz[0] == pytest.approx(direct.mz[0] + electron_mass(), abs=1e-12)
    assert ion.charge == -1
    doubly = isotope_pattern(parse_formula("C60H92N12O10"), ion="[M+2H]2+")
    assert doubly.mz[1] - doubly.mz[0] == pytest.approx(0.5017, abs=2e-3)  # peaks 1/z apart


@pytest.mark.parametrize(
    ("formula", "relative"),
    [
        ("Cl2", (100.0, 0.0, 64.0, 0.0, 10.2)),  # Cl2: 9:6:1 (common practice; exact 100:64.0:10.2)
        ("Br2", (51.4, 0.0, 100.0, 0.0, 48.6)),  # Br2: 1:2:1
        ("CH3Br", (100.0, 1.1, 97.3)),  # 79Br:81Br nearly 1:1
        ("C10H16", (100.0, 11.0)),  # 1.1 % per carbon (common practice)
    ],
)
def test_handbook_ratios(formula, relative):
    got = isotope_pattern(parse_formula(formula), min_abundance=0.0).relative()
    assert got[: len(relative)] == pytest.approx(relative, abs=0.6)


@pytest.mark.parametrize("peaks", [2, 4, 7])
def test_batch_recurrence_equals_convolution(peaks):
    """pattern_matrix (Miller's recurrence) against isotope_pattern (explicit convolution)."""
    formulas = [parse_formula(h) for h in FORMULAS] + [parse_formula("C2H3Cl3"), parse_formula("CH2Br2"), parse_formula("C3H9ClSi")]
    symbols = ("C", "H", "Br", "Cl", "N", "O", "S", "Si")
    counts = np.array([[f.count(s) for s in symbols] for f in formulas])
    batch = pattern_matrix(counts, symbols, peaks)
    for row, f in zip(batch, formulas):
        single = np.array(isotope_pattern(f, max_peaks=peaks, min_abundance=0.0).abundances)
        single = np.pad(single, (0, peaks - single.size))
        assert row == pytest.approx(single, abs=1e-12)


def test_fit_of_a_perfect_pattern_is_zero_and_scale_free():
    pattern = isotope_pattern(parse_formula("C27H30O16"), max_peaks=4, min_abundance=0.0).abundances
    chi2, scaled, dof = fit_isotopes([1234.0 * a for a in pattern], np.array(pattern))
    assert chi2[0] == pytest.approx(0.0, abs=1e-18)
    assert dof == 3
    assert scaled[0] == pytest.approx([1234.0 * a for a in pattern], rel=1e-12)


def test_fit_grows_with_the_mismatch():
    """Error model sigma_k = 0.05 I_k; with the scale fitted, two peaks leave
    chi2 = (o1 p2 - o2 p1)^2 / (s2^2 p1^2 + s1^2 p2^2) (weighted least squares, standard algebra)."""
    observed = [100.0, 11.0]
    chi2, _, _ = fit_isotopes(observed, np.array([[100.0, 10.0], [100.0, 11.0]]), relative_error=0.05, absolute_error=0.0)
    assert chi2[1] == pytest.approx(0.0, abs=1e-12)
    s1, s2 = 0.05 * 100.0, 0.05 * 11.0
    expected = (100.0 * 10.0 - 11.0 * 100.0) ** 2 / (s2**2 * 100.0**2 + s1**2 * 10.0**2)
    assert chi2[0] == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    ("values", "fragment"),
    [
        ("100", "at least M+0 and M+1"),
        ("100,abc", "comma-separated"),
        ("0,10", "M+0"),
        ("100,-3", ">= 0"),
        (",".join(["1"] * 21), "at most 20"),
    ],
)
def test_bad_intensities_are_refused(values, fragment):
    with pytest.raises(ParameterError, match=re.escape(fragment)):
        parse_intensities(values)


def test_intensity_text_forms():
    assert parse_intensities("100, 16.8, 2.3") == (100.0, 16.8, 2.3)
    assert parse_intensities("100;16.8;2.3") == (100.0, 16.8, 2.3)
    assert parse_intensities([100, 5]) == (100.0, 5.0)
