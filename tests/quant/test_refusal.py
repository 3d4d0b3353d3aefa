"""Amounts refused with a one-line reason: reference line in a suppression zone, uncertainty above 50 %."""

from __future__ import annotations

import pytest

from nmrcheck.processing import process
from nmrcheck.quant import QuantOptions
from nmrcheck.validate import amount_basis, candidates_from_strings, check_candidates, evidence_from

GLUCOSE = "OC[C@H]1O[C@H](O)[C@H](O)[C@@H](O)[C@@H]1O alpha-D-glucose"


@pytest.mark.refdata
def test_hdo_reference_under_presaturation_is_refused(refdata):
    """Glucose in D2O recorded with water presaturation (title of glucose-d2o-600): the HDO line the solvent
    reference would use is the presaturated one, so its integral measures the suppression (common practice)."""
    folder = refdata / "bruker-raw" / "glucose-d2o-600"
    if not folder.exists():
        pytest.skip("glucose-d2o-600 not in the refdata folder")
    processed = process(folder)
    ev = evidence_from(processed)
    cands, _ = candidates_from_strings((), [GLUCOSE])
    result = QuantOptions(solvent_reference=True, deuteration_pct=99.9, volume_ul=600).for_candidate(processed, amount_basis(check_candidates(cands, ev), ev))
    assert result.refused is not None and not result.candidates
    assert "\n" not in result.refused
    assert result.refused.startswith("no amount:")


def test_amount_with_uncertainty_over_half_is_refused():
    """A weak singlet against a weak standard: the integration noise alone exceeds 50 %."""
    from nmrcheck.synth import Line, simulate_fid

    lines = [Line(0.0, 9 * 0.02), Line(3.30, 3 * 0.01), Line(7.26, 0.002)]
    processed = process(simulate_fid(lines, noise=0.008, solvent="CDCl3", seed=3))
    amount = QuantOptions(standard="DSS", standard_nmol=1.0, volume_ul=35.0).amount(processed, analyte_range_ppm=(3.35, 3.25), analyte_h=3)
    reason = QuantOptions(standard="DSS", standard_nmol=1.0, volume_ul=35.0).refusal(amount, processed)
    if amount.uncertainty_pct <= 50:
        pytest.fail(f"fixture not noisy enough: {amount.uncertainty_pct:.0f} %")
    assert reason is not None and "exceeds 50 %" in reason
