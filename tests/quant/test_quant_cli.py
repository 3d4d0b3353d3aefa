"""The ``nmrcheck quant`` command: JSON fields and one-line errors."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from nmrcheck.cli import main


def test_needs_exactly_one_reference(tmp_path):
    result = CliRunner().invoke(main, ["quant", str(tmp_path)])
    assert result.exit_code == 2
    assert "exactly one of --standard" in result.output


def test_json_fields_on_the_real_mix(refdata):
    """DSS-d6 at 24.6 nmol (see test_refdata's assumptions); JSON carries amount, candidates and recommendation."""
    d = refdata / "bruker-raw" / "aminoacid-mix-undried-1" / "pdata" / "1"
    if not d.is_dir():
        pytest.skip("aminoacid-mix-undried-1 not in the refdata folder")
    args = ["quant", str(d), "--standard", "DSS-d6", "--standard-nmol", "24.6", "--volume-ul", "205", "--range", "5.25:5.195", "--analyte-h", "0.36", "--candidate", "C6H12O6", "--json"]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.output
    out = json.loads(result.output)
    cand = out["candidates"][0]
    assert set(cand) >= {"nmol", "ug", "conc_mM", "uncertainty_pct", "method"}
    assert cand["conc_mM"] == pytest.approx(cand["nmol"] / 205.0, rel=1e-3)
    assert out["recommendation"]["decision"] in {"go", "borderline", "no-go"}
