"""Real recording: D-glucose against DSS in aminoacid-mix-undried-1 (a 1.0 mM sample by its title).

Sample (title): 200 uL of 1 mM amino acids + D-glucose, plus 5 uL of 0.1 % DSS in
D2O. Assumptions, stated:
- DSS is the d6 sodium salt (sodium 3-(trimethylsilyl)propane-1,1,2,2,3,3-d6-1-sulfonate):
  the spectrum shows no DSS methylene signals at 0.63 and 1.75 ppm, which the
  protio salt would show at 2/9 of the methyl integral each.
- 0.1 % is w/w in D2O (density 1.104 g/mL at 25 C, CRC Handbook, from memory),
  the way standard-in-D2O reagents are sold (common practice): 5.52 ug DSS-d6
  in 205 uL.
- Glucose nominal: 200 nmol (200 uL of 1 mM) in 205 uL.
- alpha-pyranose fraction at mutarotation equilibrium in D2O: 0.36 (Angyal, Adv.
  Carbohydr. Chem. Biochem. 1984, 42, 15; from memory; 0.36-0.38 depending on
  temperature).
Measured on the instrument's processed spectrum (the FID route depends on the
automatic phasing, still being improved).
"""

from __future__ import annotations

import pytest

from nmrcheck.io import read_spectrum_file
from nmrcheck.processing import process
from nmrcheck.quant import StandardReference, amount_for, quantify

ALPHA_FRACTION = 0.36
GLUCOSE_NOMINAL_NMOL = 200.0
DSS_UG = 5.0 * 1.104 * 1.0  # uL x g/mL x mg/g(0.1 %) -> ug


@pytest.fixture(scope="module")
def mix(refdata):
    d = refdata / "bruker-raw" / "aminoacid-mix-undried-1"
    if not d.is_dir():
        pytest.skip("aminoacid-mix-undried-1 not in the refdata folder")
    return process(read_spectrum_file(d / "pdata" / "1"))


def _dss():
    return StandardReference.from_mass("DSS-d6", mass_ug=DSS_UG, volume_ul=205.0)


def _glucose(mix):
    a = quantify(mix, method=_dss(), analyte_range_ppm=(5.25, 5.195), analyte_h=1)
    return a, a.nmol_per_proton / ALPHA_FRACTION


def test_glucose_against_dss_within_15_percent(mix):
    """Alpha-anomeric H1 doublet (5.22 ppm) over DSS's 9 H singlet; the issue's hand figure is 18 % low."""
    a, total = _glucose(mix)
    assert 0.85 * GLUCOSE_NOMINAL_NMOL <= total <= 1.10 * GLUCOSE_NOMINAL_NMOL
    # Short repetition (D1 1 s + AQ 1.7 s) and presaturation: the result must say it is not quantitative.
    assert any("not quantitative" in w for w in a.warnings)
    cand = amount_for(a, "C6H12O6", n_h=ALPHA_FRACTION)
    assert cand.ug == pytest.approx(total * 180.156 / 1000.0, rel=1e-3)  # RDKit average mass of C6H12O6


def test_glucose_against_dss_within_10_percent(mix):
    """The issue's goal on the instrument's processed spectrum (measured: 94 % of nominal)."""
    _, total = _glucose(mix)
    assert total == pytest.approx(GLUCOSE_NOMINAL_NMOL, rel=0.10)


def test_glucose_against_dss_from_the_raw_fid(refdata):
    """The same route on nmrcheck's own processing of the raw FID (measured: 100 % of nominal)."""
    from nmrcheck.processing import process

    _, total = _glucose(process(refdata / "bruker-raw" / "aminoacid-mix-undried-1"))
    assert total == pytest.approx(GLUCOSE_NOMINAL_NMOL, rel=0.10)


def test_alpha_fraction_from_the_spectrum(mix):
    """alpha-H1 (5.22) against beta-H2 (3.24 ppm dd, far from water): fraction near Angyal's 0.36-0.38."""
    alpha = quantify(mix, method=_dss(), analyte_range_ppm=(5.25, 5.195), analyte_h=1).nmol_per_proton
    beta = quantify(mix, method=_dss(), analyte_range_ppm=(3.26, 3.21), analyte_h=1).nmol_per_proton
    assert 0.30 <= alpha / (alpha + beta) <= 0.45


def test_alanine_methyl_doublet(mix):
    """Alanine CH3 doublet (J about 7 Hz) at 1.55 ppm, 3 H; reads high against DSS (see report)."""
    a = quantify(mix, method=_dss(), analyte_range_ppm=(1.60, 1.51), analyte_h=3)
    assert 100.0 <= a.nmol_per_proton <= 400.0
