"""Ranked formula candidates: end to end on known compounds, combination of ions, scoring, errors."""

from __future__ import annotations

import math
import re

import numpy as np
import pytest
from natural_products import CHARGED_NATURAL_PRODUCTS, NATURAL_PRODUCTS, simulated_feature
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
    """Mass part -0.5 (e/tolerance)^4 (flat-topped within the tolerance); prior log p(N) - log(1 - p(N))
    plus the log densities of H/C, N/C and O/C whose 'common' ranges of Kind & Fiehn 2007 Table 2
    (H/C 0.2-3.1, N/C 0-1.3, O/C 0-1.2; 99.7 % of library formulas) are read as 3 standard deviations."""
    mz = ion_mz(CAFFEINE.monoisotopic_mass, "[M+H]+") * (1 + 2e-6)
    best = formula_search([(mz, "[M+H]+")], ppm=4)
    c = next(c for c in best.candidates if c.formula == CAFFEINE)
    assert c.score_parts["mass"] == pytest.approx(-0.5 * (2.0 / 4.0) ** 4, rel=1e-4)
    ratios = -0.5 * (((10 / 8 - 1.65) / (2.9 / 6)) ** 2 + ((4 / 8) / (1.3 / 3)) ** 2 + ((2 / 8) / (1.2 / 3)) ** 2)
    # element_priors.csv: p(N) = 0.3
    assert c.score_parts["prior"] == pytest.approx(math.log(0.3) - math.log(0.7) + ratios, rel=1e-9)
    # Every candidate lies within the tolerance, where the mass part stays above -0.5 (0.61 of the peak).
    assert all(-0.5 - 1e-9 <= x.score_parts["mass"] <= 0 for x in best.candidates)
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
CATION_IONS = ("[M]+",)


def _true_formula(smiles):
    """Formula from RDKit, without the charge sign of a cation."""
    return parse_formula(CalcMolFormula(Chem.MolFromSmiles(smiles)).rstrip("+-"))


@pytest.fixture(scope="module")
def natural_product_ranks():
    """Rank of the true formula per compound and ion set (see the test below for the set-up)."""
    assert len(NATURAL_PRODUCTS) >= 40 and len(CHARGED_NATURAL_PRODUCTS) >= 5
    rng = np.random.default_rng(2026)
    ranks = {ions: [] for ions in (*ION_SETS, CATION_IONS)}
    masses = []
    misses = []
    cases = [(entry, ION_SETS) for entry in NATURAL_PRODUCTS] + [(entry, (CATION_IONS,)) for entry in CHARGED_NATURAL_PRODUCTS]
    for (name, _cls, smiles, _formula), ion_sets in cases:
        truth = _true_formula(smiles)
        masses.append(truth.monoisotopic_mass)
        for ions in ion_sets:
            features, intensities = simulated_feature(truth, ions, rng)
            # Default elements: CHNOPS, widened by Cl and Br only where the envelope demands them.
            search = formula_search(features, ppm=3.0, isotopes=intensities, max_candidates=10)
            hills = [c.formula.hill for c in search.candidates]
            rank = hills.index(truth.hill) + 1 if truth.hill in hills else 99
            ranks[ions].append(rank)
            if rank > 5:
                misses.append(f"{name} {' '.join(ions)}: rank {rank if rank < 99 else '> 10'} of {search.n_passed}")
    return ranks, masses, misses


def test_natural_products_rank_near_the_top(record_property, natural_product_ranks):
    """Known natural products (tests/chem/natural_products.py; formulas from RDKit), simulated
    with 1-3 ppm mass error per ion (independent, random sign) and 2-5 % isotope noise (seed
    2026), searched at 3 ppm with isotopes over the default elements (CHNOPS, widened by Cl
    and Br when the envelope demands them) within the golden rules' limits, for three ion
    sets: [M+H]+/[M+Na]+/[M+NH4]+, [M-H]-/[M+HCOO]-, and [M+H]+ alone; the permanently
    charged alkaloids as [M]+.

    Required: the true formula in the top 10 for every compound and ion set, in the top 5
    for at least 90 % of them, and first for at least 85 % (measured: 93-100 % per ion set).
    ``bench/bench_formulas.py`` reports the rates over more noise draws.
    """
    ranks, masses, misses = natural_product_ranks
    assert min(masses) >= 100 and max(masses) <= 1300
    rates = {}
    for ions, values in ranks.items():
        v = np.array(values)
        rates[" ".join(ions)] = (float(np.mean(v == 1)), float(np.mean(v <= 5)))
        record_property(f"rank-1 rate {' '.join(ions)}", rates[" ".join(ions)][0])
        record_property(f"top-5 rate {' '.join(ions)}", rates[" ".join(ions)][1])
    beyond_top_10 = [m for m in misses if "> 10" in m]
    assert not beyond_top_10, beyond_top_10
    assert all(top5 >= 0.90 for _, top5 in rates.values()), rates
    assert all(rank1 >= 0.85 for rank1, _ in rates.values()), rates


def test_natural_products_all_in_top_five(natural_product_ranks):
    """The issue's requirement: the true formula within the top 5 for all compounds at 3 ppm with isotopes
    (met since the mass part is flat within the tolerance and the prior includes the golden rules' element
    ratios; before, paclitaxel [M+H]+ ranked 6th, psammaplin A and cyclosporin A 6th and 7th as
    [M+H]+/[M+Na]+/[M+NH4]+)."""
    ranks, _, misses = natural_product_ranks
    assert not misses, misses


def test_taurine_needs_the_extended_ratio_ranges():
    """Taurine C2H7NO3S (O/C 1.5) lies outside the golden rules' common O/C range (0-1.2, Kind &
    Fiehn 2007 Table 2) and inside the extended one (0-3): found only with rules='extended'."""
    m = parse_formula("C2H7NO3S").monoisotopic_mass
    mz = ion_mz(m, "[M+H]+")
    assert not formula_candidates([(mz, "[M+H]+")])
    assert formula_candidates([(mz, "[M+H]+")], rules="extended")[0].formula.hill == "C2H7NO3S"


def test_berberine_as_a_permanently_charged_cation():
    """Berberine, C20H18NO4+ (PubChem), m/z 336.1230 as [M]+ (the issue's example): the even-electron
    cation, not the radical cation C14H24O7S that '[M]+.' gives."""
    search = formula_search([(336.1230, "[M]+")], ppm=3, isotopes=[100, 22.4, 3.6])
    best = search.candidates[0]
    assert best.label == "C20H18NO4+" and best.charge == 1
    assert best.rdbe == 12.5  # 20 - 18/2 + 1/2 + 1: half-integer, an even-electron ion
    assert best.ions[0].ion == "[M]+" and best.ions[0].electrons == "even"
    # m/z = M(neutral atoms) - m_e (CODATA 2018 electron mass 0.000548580 u)
    assert best.ions[0].mz_calculated == pytest.approx(parse_formula("C20H18NO4").monoisotopic_mass - 0.000548580, abs=1e-8)
    assert any("charged molecules" in n for n in search.notes)
    radical = formula_candidates([(336.1230, "[M]+.")], ppm=3)
    assert "C20H18NO4" not in {c.formula.hill for c in radical}


def test_charged_molecule_is_not_mixed_with_adducts():
    with pytest.raises(ParameterError, match="permanently charged"):
        formula_search([(336.1230, "[M]+"), (359.1128, "[M+Na]+")], ppm=3)


def _envelope(formula_text, ion="[M+H]+", peaks=6):
    from nmrcheck.chem.isotopes import isotope_pattern

    f = parse_formula(formula_text)
    rel = np.array(isotope_pattern(f, ion=ion).relative()[:peaks])
    return f, ion_mz(f.monoisotopic_mass, ion), [float(x) for x in rel[rel >= 0.5]]


@pytest.mark.parametrize(
    ("formula_text", "element", "count"),
    [
        ("C17H17ClO6", "Cl", 1),  # griseofulvin (PubChem)
        ("C11H7Cl2NO3", "Cl", 2),  # pyoluteorin (PubChem)
        ("C16H8Br2N2O2", "Br", 2),  # 6,6'-dibromoindigo (PubChem)
    ],
)
def test_halogens_enter_the_search_when_the_envelope_demands_them(formula_text, element, count):
    """37Cl/35Cl and 81Br/79Br (IUPAC abundances 24.2/75.8 % and 49.3/50.7 %) give M+2 of 32 % per Cl and
    97 % per Br: with the default elements the search adds the halogen and says so."""
    f, mz, iso = _envelope(formula_text)
    search = formula_search([(mz, "[M+H]+")], ppm=3, isotopes=iso)
    assert search.candidates[0].formula == f
    lo, hi = search.elements[element]
    assert lo <= count <= hi
    assert any("isotope envelope" in n and element in n for n in search.notes)
    # Without the envelope, the default elements cannot reach it.
    assert f not in {c.formula for c in formula_candidates([(mz, "[M+H]+")], ppm=3, isotopes=iso[:2])}


@pytest.mark.parametrize("formula_text", ["C13H14N2O4S2", "C22H18O11", "C43H66N12O12S2"])  # gliotoxin, EGCG, oxytocin
def test_no_halogen_added_for_sulfur_or_plain_compounds(formula_text):
    _, mz, iso = _envelope(formula_text)
    search = formula_search([(mz, "[M+H]+")], ppm=3, isotopes=iso)
    assert "Cl" not in search.elements and "Br" not in search.elements
    assert not any("isotope envelope" in n for n in search.notes)


def test_given_elements_are_not_widened():
    _, mz, iso = _envelope("C17H17ClO6")
    search = formula_search([(mz, "[M+H]+")], ppm=3, isotopes=iso, elements="C H N O")
    assert set(search.elements) == {"C", "H", "N", "O"}


def test_proton_bound_cuts_and_scores():
    """Rutin C27H30O16 (PubChem): 30 H, 16 O. In DMSO-d6 all its 10 OH may show (30 H visible); in
    CD3OD only its 20 C-H (common practice). Both counts keep it; a count of 12 H cuts it."""
    m = parse_formula("C27H30O16").monoisotopic_mass
    feature = [(ion_mz(m, "[M+H]+") * (1 + 1e-6), "[M+H]+")]
    free = formula_search(feature, ppm=3, max_candidates=10_000)
    for seen in ((29.5, 30.5), (19.6, 20.4)):
        bounded = formula_search(feature, ppm=3, h_range=seen, max_candidates=10_000)
        assert "C27H30O16" in {c.formula.hill for c in bounded.candidates}
        assert bounded.n_passed < free.n_passed
        for c in bounded.candidates:
            h, e = c.formula.count("H"), c.formula.count("O") + 2 * c.formula.count("N") + c.formula.count("S")
            assert h >= round(seen[0]) and h - e <= round(seen[1])
            # log of the share of the 0..E hidden-H cases that leave a count in range
            fitting = min(h, round(seen[1])) - max(h - e, round(seen[0])) + 1
            assert c.score_parts["protons"] == pytest.approx(math.log(fitting / (e + 1)))
        assert any("proton bound" in n for n in bounded.notes)
    cut = formula_search(feature, ppm=3, h_range=(11.5, 12.5), max_candidates=10_000)
    assert "C27H30O16" not in {c.formula.hill for c in cut.candidates}
    with pytest.raises(ParameterError, match="h_range"):
        formula_search(feature, ppm=3, h_range=(20, 10))


def test_proton_bound_counts_the_cation_hydrogens():
    """Berberine C20H18NO4+: 18 H, all seen. From the formula alone its 4 O and 1 N could carry up
    to 6 exchangeable H, of which the 0-hidden case is the one that fits: log(1/7)."""
    found = formula_candidates([(336.1230, "[M]+")], ppm=3, h_range=(17.6, 18.4))
    assert found[0].label == "C20H18NO4+"
    assert found[0].score_parts["protons"] == pytest.approx(math.log(1 / 7))
    assert all(c.formula.count("H") >= 18 for c in found)


def test_one_default_tolerance():
    """The same default tolerance in the formula engine, the validator's MS feature and the plate options."""
    import inspect

    from nmrcheck.chem.candidates import DEFAULT_TOLERANCE_PPM
    from nmrcheck.plate.screen import ScreenOptions
    from nmrcheck.validate.records import MsFeature

    assert inspect.signature(formula_search).parameters["ppm"].default == DEFAULT_TOLERANCE_PPM
    assert inspect.signature(formula_candidates).parameters["ppm"].default == DEFAULT_TOLERANCE_PPM
    assert MsFeature(((195.0877, "[M+H]+"),)).ppm == DEFAULT_TOLERANCE_PPM
    assert ScreenOptions().mass_tolerance_ppm == DEFAULT_TOLERANCE_PPM


def test_open_proton_bound_keeps_only_formulas_with_enough_h():
    """A lower bound alone (high None): every formula shows at least that many H."""
    m = parse_formula("C27H30O16").monoisotopic_mass
    found = formula_candidates([(ion_mz(m, "[M+H]+"), "[M+H]+")], ppm=3, h_range=(19.6, None), max_candidates=500)
    assert "C27H30O16" in {c.formula.hill for c in found}
    assert all(c.formula.count("H") >= 20 for c in found)
