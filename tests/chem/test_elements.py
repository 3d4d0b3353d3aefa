"""Element data: isotope masses and abundances against molmass, constants against CODATA."""

from __future__ import annotations

import molmass
import pytest

from nmrcheck.chem.elements import electron_mass, element, known_elements, proton_mass
from nmrcheck.data import load_table
from nmrcheck.errors import FormulaError

CHEM_TABLES = (
    "isotopes",
    "constants",
    "valences",
    "ion_species",
    "ion_fragments",
    "golden_rules_element_limits",
    "golden_rules_ratios",
    "golden_rules_element_probability",
    "element_priors",
)


@pytest.mark.parametrize("name", CHEM_TABLES)
def test_every_row_names_its_source(name):
    """Project rule: every reference-table row carries a non-empty source (load_table checks it)."""
    rows = load_table(name)
    assert rows
    assert all(row["source"] for row in rows)


@pytest.mark.parametrize("symbol", known_elements())
def test_isotopes_match_molmass(symbol):
    """Isotope masses and abundances: molmass carries the NIST SRD 144 table independently."""
    ours = element(symbol)
    theirs = {n: iso for n, iso in molmass.ELEMENTS[symbol].isotopes.items() if iso.abundance > 0}
    assert set(ours.mass_numbers) == set(theirs)
    for n, mass, abundance in zip(ours.mass_numbers, ours.masses, ours.abundances):
        assert mass == pytest.approx(theirs[n].mass, abs=1e-9)
        assert abundance == pytest.approx(theirs[n].abundance, abs=1e-6)


def test_monoisotopic_isotope_is_the_most_abundant():
    # 12C, 1H, 35Cl, 79Br: common practice
    assert element("C").nominal_mass == 12
    assert element("H").nominal_mass == 1
    assert element("Cl").nominal_mass == 35
    assert element("Br").nominal_mass == 79
    assert element("S").monoisotopic_mass == pytest.approx(31.97207117, abs=1e-8)  # molmass / NIST


def test_electron_mass_is_codata_2018():
    """m_e = 5.48579909065e-4 u (CODATA 2018), as molmass carries it."""
    assert electron_mass() == pytest.approx(molmass.ELECTRON.mass, abs=1e-15)
    assert electron_mass() == pytest.approx(5.48579909065e-4, rel=1e-11)


def test_hydrogen_atom_less_electron_is_the_proton():
    """m(1H) = m_p + m_e - 13.6 eV binding energy (1.46e-8 u); CODATA 2018 m_p = 1.007276466621 u."""
    assert element("H").monoisotopic_mass - electron_mass() - proton_mass() == pytest.approx(-1.46e-8, abs=2e-9)


def test_unknown_element_is_named():
    with pytest.raises(FormulaError, match="'Xx'"):
        element("Xx")
