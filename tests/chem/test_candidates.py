"""Ranked formula candidates: end to end on known compounds, combination of ions, scoring, errors."""

from __future__ import annotations

import math
import re

import numpy as np
import pytest
from natural_products import NATURAL_PRODUCTS, simulated_feature
from rdkit import Chem
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

from nmrcheck.chem.adducts import ion_mz
from nmrcheck.chem.candidates import FormulaCandidate, formula_candidates, formula_search
from nmrcheck.chem.enumerate import enumerate_formulas
from nmrcheck.chem.formula import parse_formula
from nmrcheck.chem.rules import RULE_NAMES, check_rules
from nmrcheck.errors import FormulaError, ParameterError

CAFFEINE = parse_formula("C8H10N4O2")


def test_caffeine_from_its_protonated_ion():
    mz = ion_mz(CAFFEINE.monoisotopic_mass, "[M+H]+") * (1 + 1.5e-6)
    found = formula_candidates([(mz, "[M+H]+")], ppm=3, isotopes=[100, 10.2, 0.7])
    assert isinstance(found[0], FormulaCandidate)
    best = found[0]
    assert best.formula == CAFFEINE and best.rank == 1
    assert best.error_ppm == pytest.approx(1.5, abs=1e-3)
    assert best.neutral_mass == pytest.approx(CAFFEINE.monoisotopic_mass, abs=1e-12)
    assert best.rdbe == 6.0
    assert set(best.rules_passed) == set(RULE_NAMES)
    assert best.rules_failed == ()
    assert set(best.score_parts) == {"mass", "isotopes", "prior"}
    assert best.score == pytest.approx(sum(best.score_parts.values()), abs=1e-12)
    ion = best.ions[0]
    assert (ion.ion, ion.ion_formula, ion.ion_rdbe, ion.electrons) == ("[M+H]+", "C8H11N4O2", 5.5, "even")
    assert [c.rank for c in found] == list(range(1, len(found) + 1))
    assert all(a.score >= b.score for a, b in zip(found, found[1:]))


def test_score_parts_follow_the_stated_model():
    """Mass part -0.5 (e/sigma)^2 with sigma = tolerance/2; prior log p(N) - log(1 - p(N))."""
    mz = ion_mz(CAFFEINE.monoisotopic_mass, "[M+H]+") * (1 + 2e-6)
    best = formula_search([(mz, "[M+H]+")], ppm=4)
    c = next(c for c in best.candidates if c.formula == CAFFEINE)
    assert c.score_parts["mass"] == pytest.approx(-0.5 * (2.0 / 2.0) ** 2, rel=1e-4)
    assert c.score_parts["prior"] == pytest.approx(math.log(0.3) - math.log(0.7), rel=1e-9)  # element_priors.csv
    no_prior = formula_search([(mz, "[M+H]+")], ppm=4, prior=None).candidates
    assert all("prior" not in x.score_parts for x in no_prior)


def test_several_ions_combine_into_one_neutral_mass():
    m = parse_formula("C27H30O16").monoisotopic_mass  # rutin
    features = [(ion_mz(m, "[M+H]+") * (1 + 1e-6), "[M+H]+"), (ion_mz(m, "[M+Na]+") * (1 - 1e-6), "[M+Na]+"), (ion_mz(m, "[M+NH4]+"), "[M+NH4]+")]
    search = formula_search(features, ppm=3, isotopes=[100, 30.5, 8.0])
    best = search.candidates[0]
    assert best.formula.hill == "C27H30O16"
    assert [i.ion for i in best.ions] == ["[M+H]+", "[M+Na]+", "[M+NH4]+"]
    assert [i.error_ppm for i in best.ions] == pytest.approx([1.0, -1.0, 0.0], abs=2e-3)
    assert search.neutral_mass == pytest.approx(m, abs=1e-3)
    # each candidate fits every ion within tolerance
    for c in search.candidates:
        assert all(abs(i.error_ppm) <= 3.0 + 1e-9 for i in c.ions)


def test_ions_that_disagree_are_refused():
    m = parse_formula("C27H30O16").monoisotopic_mass
    with pytest.raises(ParameterError, match=re.escape("disagree on the neutral mass")):
        formula_search([(ion_mz(m, "[M+H]+"), "[M+H]+"), (ion_mz(m, "[M+K]+"), "[M+Na]+")], ppm=3)


def test_negative_mode_and_adduct_isotopes():
    """[M+Cl]- brings its own chlorine isotope pattern; the neutral stays halogen-free."""
    m = parse_formula("C15H10O5").monoisotopic_mass  # apigenin
    features = [(ion_mz(m, "[M-H]-"), "[M-H]-"), (ion_mz(m, "[M+Cl]-"), "[M+Cl]-")]
    best = formula_candidates(features, ppm=3)[0]
    assert best.formula.hill == "C15H10O5"
    assert best.ions[1].ion_formula == "C15H10ClO5"
    from nmrcheck.chem.isotopes import isotope_pattern

    chloride = isotope_pattern(parse_formula("C15H10O5"), ion="[M+Cl]-").relative()[:3]
    found = formula_candidates([features[1]], ppm=3, isotopes=list(chloride))[0]
    assert found.formula.hill == "C15H10O5" and found.isotope_fit.agrees


def test_mda_tolerance_is_the_larger_one():
    m = CAFFEINE.monoisotopic_mass
    mz = ion_mz(m, "[M+H]+") + 0.002  # 10 ppm off
    assert CAFFEINE not in {c.formula for c in formula_candidates([(mz, "[M+H]+")], ppm=3)}
    assert CAFFEINE in {c.formula for c in formula_candidates([(mz, "[M+H]+")], ppm=3, mda=2.5)}
    assert CAFFEINE in {c.formula for c in formula_candidates([(mz, "[M+H]+")], ppm=None, mda=2.5)}


def test_losses_need_their_atoms():
    """[M+H-H2O]+ can only come from a molecule with O and H."""
    m = parse_formula("C20H32O").monoisotopic_mass
    found = formula_candidates([(ion_mz(m, "[M+H-H2O]+"), "[M+H-H2O]+")], ppm=3, elements="C H O")
    assert found and all(c.formula.count("O") >= 1 for c in found)
    with pytest.raises(FormulaError, match="needs at least 1 O"):
        formula_candidates([(ion_mz(m, "[M+H-H2O]+"), "[M+H-H2O]+")], ppm=3, elements="C H")


def test_search_is_the_enumeration_filtered_by_the_rules():
    """Nothing is lost between the enumeration and the ranked list (small case, every candidate kept)."""
    mz = 301.1410
    search = formula_search([(mz, "[M+H]+")], ppm=5, elements="C0-25 H0-50 N0-4 O0-8 S0-1", max_candidates=10_000)
    low, high = search.mass_window
    every = enumerate_formulas(low, high, dict(search.elements)).formulas()
    expected = {f for f in every if check_rules(f).passes("common")}
    assert {c.formula for c in search.candidates} == expected
    assert search.n_passed == len(expected)


def test_rules_none_keeps_failures_and_reports_them():
    mz = ion_mz(CAFFEINE.monoisotopic_mass, "[M+H]+")
    found = formula_candidates([(mz, "[M+H]+")], ppm=10, rules="none", elements="C0-12 H0-40 N0-6 O0-6", max_candidates=500)
    assert any(c.rules_failed for c in found)
    strict = formula_candidates([(mz, "[M+H]+")], ppm=10, elements="C0-12 H0-40 N0-6 O0-6", max_candidates=500)
    assert {c.formula for c in strict} < {c.formula for c in found}


@pytest.mark.parametrize(
    ("kwargs", "error", "fragment"),
    [
        ({"features": []}, ParameterError, "no m/z"),
        ({"features": [(-200.0, "[M+H]+")]}, ParameterError, "must be positive"),
        ({"features": [(99999.0, "[M+H]+")]}, ParameterError, "beyond"),
        ({"features": [(300.0, "[M+Q]+")]}, FormulaError, "'Q'"),
        ({"features": [(300.0, "[M+H]+")], "ppm": -1}, ParameterError, "ppm"),
        ({"features": [(300.0, "[M+H]+")], "ppm": 500}, ParameterError, "not high-resolution"),
        ({"features": [(300.0, "[M+H]+")], "ppm": None}, ParameterError, "give ppm or mda"),
        ({"features": [(300.0, "[M+H]+")], "elements": "C0-10 X0-3"}, FormulaError, "'X0-3'"),
        ({"features": [(300.0, "[M+H]+")], "rules": "strict"}, ParameterError, "unknown preset"),
        ({"features": [(300.0, "[M+H]+")], "prior": "plants"}, ParameterError, "prior"),
        ({"features": [(300.0, "[M+H]+")], "max_candidates": 0}, ParameterError, "max_candidates"),
        ({"features": [(300.0, "[M+H]+")], "isotopes": "100"}, ParameterError, "at least"),
    ],
)
def test_bad_input_names_the_problem(kwargs, error, fragment):
    features = kwargs.pop("features")
    with pytest.raises(error, match=re.escape(fragment)):
        formula_search(features, **kwargs)


ION_SETS = (("[M+H]+", "[M+Na]+", "[M+NH4]+"), ("[M-H]-", "[M+HCOO]-"), ("[M+H]+",))
ELEMENTS = "C H N O P S Cl Br"


@pytest.fixture(scope="module")
def natural_product_ranks():
    """Rank of the true formula per compound and ion set (see the test below for the set-up)."""
    assert len(NATURAL_PRODUCTS) >= 25
    rng = np.random.default_rng(2026)
    ranks = {ions: [] for ions in ION_SETS}
    masses = []
    beyond_top_10 = []
    for name, _cls, smiles, _formula in NATURAL_PRODUCTS:
        truth = parse_formula(CalcMolFormula(Chem.MolFromSmiles(smiles)))
        masses.append(truth.monoisotopic_mass)
        for ions in ION_SETS:
            features, intensities = simulated_feature(truth, ions, rng)
            search = formula_search(features, ppm=3.0, isotopes=intensities, elements=ELEMENTS, max_candidates=10)
            hills = [c.formula.hill for c in search.candidates]
            rank = hills.index(truth.hill) + 1 if truth.hill in hills else 99
            ranks[ions].append(rank)
            if rank > 10:
                beyond_top_10.append(f"{name} {' '.join(ions)}: rank > 10 of {search.n_passed}")
    return ranks, masses, beyond_top_10


def test_natural_products_rank_near_the_top(record_property, natural_product_ranks):
    """Known natural products (tests/chem/natural_products.py; formulas from RDKit), simulated
    with 1-3 ppm mass error per ion (independent, random sign) and 2-5 % isotope noise (seed
    2026), searched at 3 ppm with isotopes over C H N O P S Cl Br within the golden rules'
    limits, for three ion sets: [M+H]+/[M+Na]+/[M+NH4]+, [M-H]-/[M+HCOO]-, and [M+H]+ alone.

    Required: the true formula in the top 10 for every compound and ion set, in the top 5 for
    at least 90 % of them (about 98 % over many noise draws; 34 compounds make single draws
    vary by a few percent), and first for at least 75 %. The top 5 is not reached for every
    compound: above 1000 Da (oxytocin, gramicidin S, cyclosporin A) families of formulas that
    differ by C H-4 N4 O-4 (1.3 mDa) have M+1 and M+2 within a few tenths of a percent of the
    truth, so neither mass nor isotopes can order them, and a truth whose ions all lie near
    the 3 ppm edge loses to candidates near 0 ppm. ``bench/bench_formulas.py`` reports the
    rates over more noise draws.
    """
    ranks, masses, beyond_top_10 = natural_product_ranks
    assert min(masses) >= 150 and max(masses) <= 1300
    rates = {}
    for ions, values in ranks.items():
        v = np.array(values)
        rates[" ".join(ions)] = (float(np.mean(v == 1)), float(np.mean(v <= 5)))
        record_property(f"rank-1 rate {' '.join(ions)}", rates[" ".join(ions)][0])
        record_property(f"top-5 rate {' '.join(ions)}", rates[" ".join(ions)][1])
    assert not beyond_top_10, beyond_top_10
    assert all(top5 >= 0.90 for _, top5 in rates.values()), rates
    assert all(rank1 >= 0.75 for rank1, _ in rates.values()), rates


@pytest.mark.xfail(strict=True, reason="issue goal not met: top 5 for every compound; measured 94-100 % per ion set "
                   "(misses above 1000 Da: oxytocin, gramicidin S, cyclosporin A; and edge-of-window mass errors)")
def test_natural_products_all_in_top_five(natural_product_ranks):
    """The issue's requirement: the true formula within the top 5 for all compounds at 3 ppm with isotopes."""
    ranks, _, _ = natural_product_ranks
    assert all(r <= 5 for values in ranks.values() for r in values)
