"""Quantification choices to reference objects: one reference at a time, one-line errors, amounts through the same path."""

from __future__ import annotations

import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.quant import QuantOptions, SolventReference, StandardReference, parse_ppm_range
from nmrcheck.synth import Line

UNIT = 0.01  # area units per nmol of protons in the synthetic spectrum (see tests/quant/test_amount.py)


@pytest.mark.parametrize(("text", "pair"), [("5.25:5.195", (5.25, 5.195)), ("1,2", (1.0, 2.0)), (None, None), ((3.0, 2.0), (3.0, 2.0))])
def test_parse_ppm_range(text, pair):
    assert parse_ppm_range(text, "--range") == pair


@pytest.mark.parametrize("text", ["5.25", "a:b", "1:2:3"])
def test_parse_ppm_range_names_the_option(text):
    with pytest.raises(ParameterError, match="--range: expected START:END"):
        parse_ppm_range(text, "--range")


def test_no_reference_is_not_requested():
    assert not QuantOptions().requested
    assert QuantOptions(standard="DSS-d6", standard_nmol=40.0).requested


@pytest.mark.parametrize(
    ("kw", "message"),
    [
        ({"standard_nmol": 1.0}, "--standard-nmol: only goes with --standard"),
        ({"deuteration_pct": 99.8}, "--deuteration-pct: only goes with --solvent-reference"),
        ({"calibration_h": 3}, "--calibration-h: only goes with --calibration"),
        ({"volume_ul": 200.0}, "--volume-ul: needs a reference"),
        ({"required_ug": 50.0}, "--required-ug: needs a reference"),
        ({"standard": "DSS-d6"}, "exactly one of --standard-nmol or --standard-conc-mm"),
        ({"standard": "DSS-d6", "standard_nmol": 1.0, "standard_conc_mm": 1.0}, "exactly one of --standard-nmol or --standard-conc-mm"),
        ({"calibration": "x", "calibration_conc_mm": 1.0}, "needs --calibration-conc-mm, --calibration-range and --calibration-h"),
        ({"standard": "DSS-d6", "standard_nmol": 1.0, "calibration": "x"}, "not --standard and --calibration"),
    ],
)
def test_inconsistent_choices(kw, message):
    with pytest.raises(ParameterError, match=message.replace("(", r"\(")):
        QuantOptions(**kw)


def test_methods_are_the_quant_references(synthetic):
    p = synthetic([Line(0.0, 9 * 40 * UNIT), Line(4.2, 3 * 80 * UNIT)], solvent="D2O")
    std = QuantOptions(standard="DSS-d6", standard_nmol=40.0, volume_ul=200.0).method(p)
    assert std == StandardReference("DSS-d6", nmol=40.0, volume_ul=200.0)
    res = QuantOptions(solvent_reference=True, deuteration_pct=99.9, volume_ul=200.0).method(p)
    assert res == SolventReference("D2O", deuteration_pct=99.9, volume_ul=200.0)


def test_amount_and_recommendation_per_candidate(synthetic):
    """80 nmol of a 3 H singlet against 40 nmol DSS-d6 (known by construction); HSQC goes at 30 nmol (recommendation_defaults.csv)."""
    p = synthetic([Line(0.0, 9 * 40 * UNIT), Line(4.2, 3 * 80 * UNIT)], solvent="D2O", noise=0.002)
    quant = QuantOptions(standard="DSS-d6", standard_nmol=40.0, volume_ul=200.0)
    amount = quant.amount(p, analyte_range_ppm=(4.23, 4.17), analyte_h=3)
    assert amount.nmol_per_proton == pytest.approx(80.0, rel=0.01)
    result = quant.assess(amount, p, candidates=[("C2H6O2", 3), (100.0, 3)])
    (first, rec1), (second, _) = result.candidates
    assert first.nmol == pytest.approx(80.0, rel=0.01) and second.ug == pytest.approx(80.0 * 100.0 * 1e-3, rel=0.01)
    assert rec1.decision == "go" and result.recommendation is rec1
    assert QuantOptions(standard="DSS-d6", standard_nmol=40.0, experiment="13C 1D").assess(amount, p).recommendation.decision == "no-go"
