"""Amounts and go/no-go from ``nmrcheck process`` and ``nmrcheck check`` on synthetic recordings of known composition.

The recordings are synthetic FIDs (nmrcheck.synth) written as Bruker experiment directories
(nmrcheck.io.writers) and read back by the commands. In them a line's area is its proton
count times the amount times a constant (``UNIT``), so the amounts are known by construction:
ethanol (CH3 triplet 1.17 ppm, CH2 quartet 3.65 ppm; shifts common textbook values, from
memory) at 80 nmol in 200 uL (0.4 mM) against 40 nmol of DSS-d6 (9 H singlet at 0 ppm).
"""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from rdkit import Chem
from rdkit.Chem import Descriptors

from nmrcheck.cli import main
from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.synth import Line, simulate_fid

#: Area units per nmol of protons (any constant: the commands recover ratios).
UNIT = 0.01
ETHANOL_NMOL = 80.0
DSS_NMOL = 40.0
VOLUME_UL = 200.0
#: Residual CHCl3 protons in 35 uL of CDCl3 at 99.96 atom % D: 1.500 g/mL (CRC Handbook, from memory)
#: over the molar mass of CDCl3 (RDKit, with the deuterium mass), one position, 0.04 % H.
CDCL3_UL = 35.0
CDCL3_RESIDUAL_NMOL_H = 1.500 * CDCL3_UL * 1e-3 / Descriptors.MolWt(Chem.MolFromSmiles("[2H]C(Cl)(Cl)Cl")) * 0.0004 * 1e9


def _ethanol(nmol):
    return [Line(1.17, 3 * nmol * UNIT, 1.0, (7.0, 7.0)), Line(3.65, 2 * nmol * UNIT, 1.0, (7.0, 7.0, 7.0))]


@pytest.fixture(scope="module")
def recordings(tmp_path_factory):
    root = tmp_path_factory.mktemp("quant-cli")
    dss = [Line(0.0, 9 * DSS_NMOL * UNIT)]
    write_bruker_fid(simulate_fid(dss + _ethanol(ETHANOL_NMOL), noise=0.002, solvent="D2O"), root / "ethanol")
    # A calibration tube: 1.0 mM of a 3 H singlet in 200 uL (200 nmol), same acquisition.
    write_bruker_fid(simulate_fid([Line(4.2, 3 * 200.0 * UNIT)], noise=0.002, solvent="D2O", seed=1), root / "calibration")
    # Methyl tert-butyl ether (1.19 ppm 9 H, 3.22 ppm 3 H; textbook values, from memory) in CDCl3 with its residual CHCl3.
    mtbe = [Line(1.19, 9 * ETHANOL_NMOL * UNIT), Line(3.22, 3 * ETHANOL_NMOL * UNIT), Line(7.26, CDCL3_RESIDUAL_NMOL_H * UNIT)]
    write_bruker_fid(simulate_fid(mtbe, noise=0.002, solvent="CDCl3", seed=2), root / "mtbe")
    return root


def _run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def _json(*args):
    result = _run(*args, "--json")
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


STANDARD = ("--standard", "DSS-d6", "--standard-nmol", DSS_NMOL, "--volume-ul", VOLUME_UL)


def test_process_amount_per_proton_unit_against_a_standard(recordings):
    out = _json("process", recordings / "ethanol", *STANDARD)
    a = out["amount"]
    # The proton unit is the processing's count: 5 H of ethanol, so the unit is one molecule.
    assert a["per"].startswith("5 H")
    assert a["nmol"] == pytest.approx(ETHANOL_NMOL, rel=0.01)
    assert a["conc_mM"] == pytest.approx(ETHANOL_NMOL / VOLUME_UL, rel=0.01)
    assert a["ug"] is None  # no molar mass without a candidate
    assert 0 < a["uncertainty_pct"] < 5 and a["method"] == "internal standard"
    rec = out["recommendation"]
    # 80 nmol less twice 1 % passes the 30 nmol HSQC threshold (recommendation_defaults.csv).
    assert rec["decision"] == "go" and rec["experiment"] == "1H-13C HSQC"
    assert set(rec) >= {"decision", "reasons", "scans_needed", "hours_needed"}
    assert rec["reasons"] and rec["scans_needed"] >= 1 and rec["hours_needed"] >= 0


def test_process_experiment_changes_the_decision(recordings):
    """13C 1D needs 300 nmol at least (borderline) in recommendation_defaults.csv: 80 nmol is a no-go."""
    out = _json("process", recordings / "ethanol", *STANDARD, "--experiment", "13C 1D")
    assert out["recommendation"]["decision"] == "no-go"
    assert out["recommendation"]["experiment"] == "13C 1D"


def test_process_without_a_reference_reports_no_amount(recordings):
    out = _json("process", recordings / "ethanol")
    assert "amount" not in out and "recommendation" not in out


def test_process_against_the_solvent_residual(recordings):
    """MTBE at 80 nmol against the CHCl3 residual of 35 uL CDCl3 at 99.96 atom % D (see CDCL3_RESIDUAL_NMOL_H)."""
    # 9:3 alone reads as a 3:1 (4 H) unit, so the count is anchored to MTBE's 12 H.
    out = _json("process", recordings / "mtbe", "--anchor-h", 12, "--solvent-reference", "--deuteration-pct", 99.96, "--volume-ul", CDCL3_UL)
    a = out["amount"]
    assert a["method"] == "solvent residual"
    assert a["per"].startswith("12 H")
    # Measured 81.7 nmol: the default ranges are every counted region, and two low baseline humps
    # beside the 9 H singlet (2.19-1.79 and 0.59-0.22 ppm, 0.3 H each) count as analyte.
    assert a["nmol"] == pytest.approx(ETHANOL_NMOL, rel=0.03)
    assert a["conc_mM"] == pytest.approx(ETHANOL_NMOL / CDCL3_UL, rel=0.03)
    # The lot's grade is only a minimum: the stated uncertainty is the 20 % default of SolventReference.
    assert a["uncertainty_pct"] == pytest.approx(20.0, abs=0.5)
    assert any("deuteration" in w for w in a["warnings"])


def test_process_against_an_external_calibration(recordings):
    """Same acquisition for both tubes, so the PULCON factor is 1: 0.4 mM from the 1.0 mM calibration."""
    out = _json("process", recordings / "ethanol", "--calibration", recordings / "calibration", "--calibration-conc-mm", 1.0,
                "--calibration-range", "4.25:4.15", "--calibration-h", 3, "--volume-ul", VOLUME_UL)
    a = out["amount"]
    assert a["method"] == "external calibration (PULCON)"
    assert a["conc_mM"] == pytest.approx(ETHANOL_NMOL / VOLUME_UL, rel=0.02)
    assert a["nmol"] == pytest.approx(ETHANOL_NMOL, rel=0.02)


def test_process_text_shows_the_amount(recordings):
    result = _run("process", recordings / "ethanol", *STANDARD)
    assert result.exit_code == 0, result.output
    line = next(ln for ln in result.output.splitlines() if ln.startswith("amount"))
    assert "nmol" in line and "1H-13C HSQC: GO" in line


def test_check_amount_only_for_the_best_sound_candidate(recordings):
    """The amount is that of the best candidate that is not inconsistent, on its own signals and protons
    (ethanol: 5 C-H, OH exchanged in D2O); a second candidate gets none (no amount from another hypothesis)."""
    out = _json("check", recordings / "ethanol", "--smiles", "CCO ethanol", "--smiles", "CC(C)O propan-2-ol", *STANDARD)
    by_label = {c["label"]: c for c in out["candidates"]}
    ethanol, propanol = by_label["ethanol"], by_label["propan-2-ol"]
    mw = Descriptors.MolWt(Chem.MolFromSmiles("CCO"))  # RDKit average molar mass
    assert ethanol["amount"]["nmol"] == pytest.approx(ETHANOL_NMOL, rel=0.01)
    assert ethanol["amount"]["n_h"] == 5
    assert ethanol["amount"]["ug"] == pytest.approx(ETHANOL_NMOL * mw * 1e-3, rel=0.01)
    assert ethanol["amount"]["conc_mM"] == pytest.approx(ETHANOL_NMOL / VOLUME_UL, rel=0.01)
    assert ethanol["amount"]["method"] == "internal standard" and ethanol["amount"]["uncertainty_pct"] > 0
    assert "amount" not in propanol
    assert ethanol["recommendation"]["decision"] in {"go", "borderline", "no-go"}
    assert out["recommendation"] == ethanol["recommendation"] and out["amount_refused"] is None


def test_check_refuses_the_amount_of_an_inconsistent_candidate(recordings):
    """Only an inconsistent structure given (propan-1-ol on ethanol's spectrum): no amount, with the reason."""
    out = _json("check", recordings / "ethanol", "--smiles", "CCCO propanol", *STANDARD)
    assert out["candidates"][0]["verdict"] == "inconsistent"
    assert "amount" not in out["candidates"][0]
    assert out["amount_refused"].startswith("no amount: every candidate is inconsistent")


def test_check_text_shows_the_amount(recordings):
    result = _run("check", recordings / "ethanol", "--smiles", "CCO ethanol", *STANDARD)
    assert result.exit_code == 0, result.output
    assert "amount reference: DSS-d6" in result.output
    assert any(ln.strip().startswith("amount (5 H on its own signals):") and "µg" in ln for ln in result.output.splitlines())
    assert "purity: single compound" in result.output


@pytest.mark.parametrize(
    "args, message",
    [
        (("--standard-nmol", 40), "--standard-nmol: only goes with --standard"),
        (("--standard", "DSS-d6", "--volume-ul", 200), "exactly one of --standard-nmol or --standard-conc-mm"),
        (("--standard", "DSS-d6", "--standard-nmol", 40, "--solvent-reference", "--deuteration-pct", 99.8), "not --standard and --solvent-reference"),
        (("--experiment", "13C 1D"), "--experiment: needs a reference"),
        (("--solvent-reference", "--deuteration-pct", 99.8), "needs --deuteration-pct (atom % D of the lot) and --volume-ul"),
        (("--standard", "unobtainium", "--standard-nmol", 40), "'unobtainium' is not in the standards table"),
        (("--standard", "DSS-d6", "--standard-nmol", 40, "--experiment", "ENDOR"), "'ENDOR' has no thresholds"),
        (("--standard", "x", "--standard-nmol", 4, "--standard-range", "a:b", "--standard-h", 3), "--standard-range: expected START:END"),
    ],
)
@pytest.mark.parametrize("command", ["process", "check"])
def test_bad_options_are_one_line_errors(recordings, command, args, message):
    extra = ("--formula", "C2H6O") if command == "check" else ()
    result = _run(command, recordings / "ethanol", *extra, *args)
    assert result.exit_code == 2
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("nmrcheck: ") and message in lines[0], result.output
