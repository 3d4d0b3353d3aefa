"""Formulas: parsing, Hill notation, monoisotopic mass (against RDKit, molmass and handbook values), RDBE."""

from __future__ import annotations

import re

import molmass
import pytest
from natural_products import NATURAL_PRODUCTS
from rdkit import Chem
from rdkit.Chem.Descriptors import ExactMolWt
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

from nmrcheck.chem.formula import Formula, formula_from_counts, parse_formula, rdbe
from nmrcheck.errors import FormulaError


@pytest.mark.parametrize(
    ("text", "hill"),
    [
        ("C15H10O5", "C15H10O5"),
        ("C6H12O6", "C6H12O6"),
        ("C2H3Cl3", "C2H3Cl3"),
        ("CH3COO", "C2H3O2"),
        ("(CH3)3SiCl", "C3H9ClSi"),
        ("H2O", "H2O"),
        ("ClH", "ClH"),  # Hill order without carbon: alphabetical throughout
        ("NaCl", "ClNa"),
        ("OC", "CO"),
        ("Br2C6H4", "C6H4Br2"),
    ],
)
def test_parse_and_hill(text, hill):
    """Hill convention (common practice): C, H, then alphabetical; without C, all alphabetical."""
    assert parse_formula(text).hill == hill


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("C2Xx", "'Xx'"),
        ("", "empty"),
        ("c6h6", "unexpected 'c'"),
        ("C6H6+", "unexpected '+'"),
        ("C(H3", "without ')'"),
        ("CH3)", "without '('"),
        ("[13C]H4", "unexpected '['"),
    ],
)
def test_malformed_formula_names_the_problem(text, fragment):
    with pytest.raises(FormulaError, match=re.escape(fragment)):
        parse_formula(text)


def test_formula_behaves_as_a_value():
    a = parse_formula("C6H12O6")
    assert a == parse_formula("H12C6O6")
    assert hash(a) == hash(parse_formula("O6C6H12"))
    assert a.count("C") == 6 and a.count("N") == 0
    assert str(a) == "C6H12O6"
    assert a + parse_formula("H") == parse_formula("C6H13O6")
    assert a - parse_formula("H2O") == parse_formula("C6H10O5")
    assert (a * 2).hill == "C12H24O12"
    assert formula_from_counts({"C": 1, "H": 4, "N": 0}).hill == "CH4"
    with pytest.raises(FormulaError, match="too few N"):
        _ = a - parse_formula("N")
    with pytest.raises(FormulaError, match="negative"):
        Formula({"C": -1})
    with pytest.raises(AttributeError):
        a.counts = {}  # frozen
    with pytest.raises(TypeError):
        a.counts["C"] = 7  # read-only mapping


@pytest.mark.parametrize(("name", "smiles"), [(n, s) for n, _c, s, _f in NATURAL_PRODUCTS])
def test_monoisotopic_mass_matches_rdkit_and_molmass(name, smiles):
    """Independent libraries: RDKit ExactMolWt of the structure, molmass monoisotopic mass of the formula."""
    mol = Chem.MolFromSmiles(smiles)
    f = parse_formula(CalcMolFormula(mol))
    # RDKit's periodic table predates the current NIST masses by up to ~5e-8 u per atom.
    assert f.monoisotopic_mass == pytest.approx(ExactMolWt(mol), abs=5e-6)
    assert f.monoisotopic_mass == pytest.approx(molmass.Formula(f.hill).monoisotopic_mass, abs=1e-8)


def test_natural_product_formulas_written_in_the_list_match_their_structures():
    """The formulas typed in natural_products.py (from memory) agree with RDKit's from the SMILES."""
    for name, _cls, smiles, formula in NATURAL_PRODUCTS:
        assert CalcMolFormula(Chem.MolFromSmiles(smiles)) == formula, name


@pytest.mark.parametrize(
    ("formula", "mass"),
    [
        ("C6H12O6", 180.063388),  # glucose, handbook monoisotopic mass (from memory)
        ("C8H10N4O2", 194.080376),  # caffeine (from memory)
        ("C33H40N2O9", 608.273381),  # reserpine, the usual ESI calibrant (from memory)
        ("H2O", 18.010565),  # water (from memory)
    ],
)
def test_handbook_masses(formula, mass):
    assert parse_formula(formula).monoisotopic_mass == pytest.approx(mass, abs=2e-6)


@pytest.mark.parametrize(
    ("formula", "expected"),
    [
        ("C6H6", 4.0),  # benzene: one ring, three C=C (common practice)
        ("C6H12O6", 1.0),  # glucose: one ring
        ("C8H10N4O2", 6.0),  # caffeine: two rings, four double bonds
        ("C2H3Cl3", 0.0),
        ("C15H10O5", 11.0),  # apigenin: three rings, eight double bonds
        ("C6H5NO2", 5.0),  # nitrobenzene with trivalent N (common practice)
        ("C2H6O4S", 0.0),  # dimethyl sulfate: divalent S, the extra bonds go to O
        ("C3H9O4P", 0.0),  # trimethyl phosphate
        ("C8H11N4O2", 5.5),  # protonated caffeine: an even-electron ion is half-integer
    ],
)
def test_rdbe(formula, expected):
    assert rdbe(parse_formula(formula)) == expected
    assert parse_formula(formula).rdbe == expected
