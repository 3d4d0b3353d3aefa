"""Retention time against Crippen logP: the logP values, the robust fit and the check."""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem
from scipy.stats import spearmanr

from nmrcheck.errors import InputFileError, ParameterError
from nmrcheck.validate.retention import MIN_TOLERANCE_MIN, RetentionModel, calibration_model, check_retention, crippen_logp, fit_retention


@pytest.mark.parametrize(
    ("smiles", "logp"),
    [
        # Crippen logP as RDKit's implementation of Wildman & Crippen (1999) gives them (from memory).
        ("c1ccccc1", 1.6866),
        ("CCO", -0.0014),
        ("c1ccccc1O", 1.3922),
        ("C", 0.6361),
    ],
)
def test_crippen_logp_of_reference_compounds(smiles, logp):
    assert crippen_logp(Chem.MolFromSmiles(smiles)) == pytest.approx(logp, abs=1e-4)


def test_crippen_logp_orders_compounds_as_measured_logp_does():
    """Measured octanol-water logP (Hansch, Leo & Hoekman 1995 compilation, from memory): the
    Crippen estimates rank them the same way (Spearman rho >= 0.9), as a retention fit needs."""
    measured = {
        "CCO": -0.31, "Cn1cnc2c1c(=O)n(C)c(=O)n2C": -0.07, "c1ccccc1O": 1.46, "OC(=O)c1ccccc1": 1.87,
        "c1ccccc1": 2.13, "Cc1ccccc1": 2.73, "Clc1ccccc1": 2.84, "c1ccc2ccccc2c1": 3.30, "CCCCCCCC": 5.18,
    }
    crippen = [crippen_logp(Chem.MolFromSmiles(s)) for s in measured]
    assert spearmanr(crippen, list(measured.values())).statistic >= 0.9


def _plate_points(rng, n=24, slope=2.0, intercept=1.5, noise=0.1, outliers=4):
    logp = rng.uniform(-1.0, 5.0, n)
    rt = intercept + slope * logp + rng.normal(0, noise, n)
    rt[:outliers] += rng.choice([-1, 1], outliers) * rng.uniform(3.0, 6.0, outliers)  # wells whose candidate is wrong
    return list(zip(logp, rt))


def test_theil_sen_fit_resists_wrong_wells():
    """Synthetic plate: t = 1.5 + 2.0 logP min, 0.1 min noise, 4 of 24 wells off by 3-6 min."""
    model = fit_retention(_plate_points(np.random.default_rng(7)))
    assert model.slope_min == pytest.approx(2.0, abs=0.1)
    assert model.intercept_min == pytest.approx(1.5, abs=0.25)
    # three robust SDs of 0.1 min noise, and never below the floor
    assert MIN_TOLERANCE_MIN <= model.tolerance_min <= 0.45
    assert model.points == 24 and model.predict(2.0) == pytest.approx(model.intercept_min + 2 * model.slope_min)


@pytest.mark.parametrize(
    ("points", "fragment"),
    [
        ([(1.0, 2.0)] * 4, "at least 5"),
        ([(1.0 + 0.1 * k, 2.0 + k) for k in range(6)], "spans only"),
        ([(k, 10.0 - k) for k in range(6)], "does not rise"),
    ],
)
def test_unusable_fits_are_refused(points, fragment):
    with pytest.raises(ParameterError, match=fragment):
        fit_retention(points)


def test_check_passes_warns_or_does_not_apply():
    model = RetentionModel(slope_min=2.0, intercept_min=1.5, tolerance_min=0.5, points=20, source="test")
    phenol = Chem.MolFromSmiles("c1ccccc1O")  # logP 1.3922: predicted 4.28 min
    ok = check_retention(phenol, 4.5, model)
    assert ok.status == "pass" and ok.details["predicted_min"] == pytest.approx(1.5 + 2.0 * 1.3922, abs=1e-3)
    late = check_retention(phenol, 6.0, model)
    assert late.status == "warn" and "later" in late.explanation and "beyond the 0.50 min tolerance" in late.explanation
    assert check_retention(None, 4.5, model).status == "not-applicable"
    assert check_retention(phenol, None, model).status == "not-applicable"
    assert check_retention(phenol, 4.5, None).status == "not-applicable"


def test_calibration_file(tmp_path):
    """Reference compounds on a synthetic gradient t = 1 + 1.5 logP (logP from SMILES or given)."""
    rows = ["name,smiles,logp,rt_min"]
    for name, smiles in (("ethanol", "CCO"), ("phenol", "c1ccccc1O"), ("benzene", "c1ccccc1"), ("toluene", "Cc1ccccc1"),
                         ("naphthalene", "c1ccc2ccccc2c1"), ("octane", "CCCCCCCC")):
        rows.append(f"{name},{smiles},,{1 + 1.5 * crippen_logp(Chem.MolFromSmiles(smiles)):.4f}")
    rows.append("given,,4.0,7.0")
    path = tmp_path / "calibration.csv"
    path.write_text("\n".join(rows) + "\n")
    model = calibration_model(path)
    assert model.slope_min == pytest.approx(1.5, abs=1e-3) and model.intercept_min == pytest.approx(1.0, abs=1e-3)
    assert model.points == 7 and "calibration calibration.csv" in model.source
    bad = tmp_path / "bad.csv"
    bad.write_text("name,rt_min\nx,3\n")
    with pytest.raises(InputFileError, match="'logp' or 'smiles'"):
        calibration_model(bad)
    bad.write_text("name,logp,rt_min\nx,1.0,three\n")
    with pytest.raises(InputFileError, match="line 2"):
        calibration_model(bad)
