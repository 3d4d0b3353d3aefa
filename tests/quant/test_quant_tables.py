"""The quantification tables: every row sourced, and molar masses and residual amounts from independent values."""

from __future__ import annotations

import pytest

from nmrcheck.data import load_table
from nmrcheck.quant import known_standards, solvent_info, standard_info


@pytest.mark.parametrize("name", ["standards", "quant_solvents", "recommendation_defaults"])
def test_every_row_has_a_source(name):
    rows = load_table(name)
    assert rows
    assert all(r["source"].strip() for r in rows)


@pytest.mark.parametrize(
    "name, molar_mass",
    [
        # Molar masses (g/mol): PubChem computed properties (from memory).
        ("maleic acid", 116.07),
        ("dimethyl sulfone", 94.13),
        ("1,3,5-trimethoxybenzene", 168.19),
        ("DSS", 218.32),
    ],
)
def test_standard_molar_masses(name, molar_mass):
    assert standard_info(name)[0].molar_mass == pytest.approx(molar_mass, abs=0.02)


def test_aliases_and_solvent_choice():
    assert standard_info("TMB", "DMSO-d6")[0].signal_ppm == pytest.approx(3.71)  # 9 H methoxy first
    assert standard_info("dss-d6", "D2O")[0].n_h == 9
    assert "maleic acid" in known_standards()


def test_solvent_data():
    """CDCl3 molar mass 120.38 g/mol with deuterium (PubChem, from memory); D2O flagged unreliable."""
    assert solvent_info("cdcl3").molar_mass == pytest.approx(120.38, abs=0.01)
    assert not solvent_info("D2O").reliable
