"""Ion species: bracket notation, the ion table, and m/z against molmass and handbook values."""

from __future__ import annotations

import re

import molmass
import pytest

from nmrcheck.chem.adducts import ion_composition, ion_mz, known_ions, neutral_mass, parse_ion
from nmrcheck.chem.formula import Formula, parse_formula
from nmrcheck.data import load_table
from nmrcheck.errors import FormulaError, ParameterError

REQUIRED = (
    "[M+H]+", "[M+Na]+", "[M+K]+", "[M+NH4]+", "[M+H-H2O]+", "[2M+H]+", "[M+2H]2+",
    "[M-H]-", "[M+Cl]-", "[M+HCOO]-", "[M+CH3COO]-", "[M-H-H2O]-",
)  # the ion species the formula-engine issue asks for


def test_required_species_are_tabled():
    tabled = {ion.notation for ion in known_ions()}
    assert set(REQUIRED) <= tabled
    assert {ion.polarity for ion in known_ions("negative")} == {"negative"}


@pytest.mark.parametrize("row", load_table("ion_species"), ids=lambda r: r["notation"])
def test_table_columns_agree_with_the_notation(row):
    """Each row's molecules, gain, loss, charge and electron parity are what its notation says."""
    ion = parse_ion(row["notation"])
    assert ion.notation == row["notation"]
    assert ion.molecules == int(row["molecules"])
    gain = parse_formula(row["gain"]) if row["gain"] else Formula()
    loss = parse_formula(row["loss"]) if row["loss"] else Formula()
    # The engine nets atoms both gained and lost ([M+H-H2O]+ loses HO); the net change agrees.
    assert ion.gain + loss == gain + ion.loss
    assert ion.charge == int(row["charge"])
    assert ion.electrons == row["electrons"]
    assert ion.polarity == row["polarity"]


CAFFEINE = "C8H10N4O2"


@pytest.mark.parametrize(
    ("ion", "composition", "charge"),
    [
        ("[M+H]+", "C8H11N4O2", 1),
        ("[M+Na]+", "C8H10N4NaO2", 1),
        ("[M+K]+", "C8H10KN4O2", 1),
        ("[M+NH4]+", "C8H14N5O2", 1),
        ("[M+H-H2O]+", "C8H9N4O", 1),
        ("[2M+H]+", "C16H21N8O4", 1),
        ("[2M+Na]+", "C16H20N8NaO4", 1),
        ("[M+2H]2+", "C8H12N4O2", 2),
        ("[M+H+Na]2+", "C8H11N4NaO2", 2),
        ("[M-H]-", "C8H9N4O2", -1),
        ("[M+Cl]-", "C8H10ClN4O2", -1),
        ("[M+HCOO]-", "C9H11N4O4", -1),
        ("[M+CH3COO]-", "C10H13N4O4", -1),
        ("[M-H-H2O]-", "C8H7N4O", -1),
        ("[M-2H]2-", "C8H8N4O2", -2),
        ("[M+Na-2H]-", "C8H8N4NaO2", -1),
    ],
)
def test_mz_matches_molmass(ion, composition, charge):
    """m/z of caffeine's ions: molmass monoisotopic mass of the charged composition (electrons included) / |z|."""
    assert ion_composition(parse_formula(CAFFEINE), ion).hill == composition
    sign = "+" if charge > 0 else "-"
    expected = molmass.Formula(f"[{composition}]{abs(charge) if abs(charge) > 1 else ''}{sign}").monoisotopic_mass / abs(charge)
    m = parse_formula(CAFFEINE).monoisotopic_mass
    assert ion_mz(m, ion) == pytest.approx(expected, abs=2e-7)
    assert neutral_mass(ion_mz(m, ion), ion) == pytest.approx(m, abs=1e-9)


@pytest.mark.parametrize(
    ("formula", "ion", "mz"),
    [
        ("C8H10N4O2", "[M+H]+", 195.087652),  # caffeine, common practice value (from memory)
        ("C33H40N2O9", "[M+H]+", 609.280657),  # reserpine calibrant (from memory)
        ("C6H12O6", "[M+Na]+", 203.052609),  # glucose sodium adduct (from memory)
        ("C6H12O6", "[M-H]-", 179.056112),  # deprotonated glucose (from memory)
    ],
)
def test_handbook_ion_mz(formula, ion, mz):
    assert ion_mz(parse_formula(formula).monoisotopic_mass, ion) == pytest.approx(mz, abs=2e-6)


def test_electron_mass_is_counted():
    """[M]+. and [M]-. differ from M by exactly one electron mass (CODATA 2018)."""
    m = 300.0
    assert ion_mz(m, "[M]+.") == pytest.approx(m - 0.000548579909065, abs=1e-12)
    assert ion_mz(m, "[M]-.") == pytest.approx(m + 0.000548579909065, abs=1e-12)
    assert parse_ion("[M]+.").electrons == "odd"


@pytest.mark.parametrize(
    ("text", "same_as"),
    [
        ("[M+FA-H]-", "[M+HCOO]-"),
        ("[M+C2H3O2]-", "[M+CH3COO]-"),
        ("[M + H]+", "[M+H]+"),
        ("[M+H]1+", "[M+H]+"),
        ("[M-H2O+H]+", "[M+H-H2O]+"),
        ("[M+ACN+H]+", "[M+C2H3N+H]+"),
        ("[M+H-Hex]+", "[M+H-C6H10O5]+"),
    ],
)
def test_equivalent_spellings(text, same_as):
    a, b = parse_ion(text), parse_ion(same_as)
    assert (a.gain, a.loss, a.charge, a.molecules) == (b.gain, b.loss, b.charge, b.molecules)
    assert a.mass_shift == pytest.approx(b.mass_shift, abs=1e-12)


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("M+H", "not bracket notation"),
        ("[M+H]", "not bracket notation"),
        ("[M+Xy]+", "'Xy'"),
        ("[M+H]-", "bring charge +1"),
        ("[M-H]+", "bring charge -1"),
        ("[M+Na]2+", "bring charge +1"),
        ("[M+H]+.", "drop the radical dot"),
        ("[M+2H]+", "bring charge +2"),
        ("[7M+H]+", "1 to 4"),
    ],
)
def test_bad_ion_names_the_problem(text, fragment):
    with pytest.raises(FormulaError, match=re.escape(fragment)):
        parse_ion(text)


@pytest.mark.parametrize("mz", [-5.0, 0.0, float("nan"), 1e6])
def test_absurd_mz_is_refused(mz):
    with pytest.raises(ParameterError, match="m/z"):
        neutral_mass(mz, "[M+H]+")


def test_mz_leaving_no_molecule_is_refused():
    with pytest.raises(ParameterError, match="no positive neutral mass"):
        neutral_mass(20.0, "[M+Na]+")


def test_loss_needs_the_atoms():
    with pytest.raises(FormulaError, match="too few O"):
        ion_composition(parse_formula("C10H16"), "[M+H-H2O]+")
