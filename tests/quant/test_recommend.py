"""Go/no-go decisions, scans for a target SNR, and user threshold files."""

from __future__ import annotations

import json

import pytest

from nmrcheck.errors import ParameterError, TableError
from nmrcheck.io.records import Acquisition
from nmrcheck.quant import CandidateAmount, load_thresholds, recommend, scans_for_snr


def _cand(nmol, pct=5.0, mw=300.0):
    return CandidateAmount("C15H10O7", mw, 3, nmol, nmol * mw / 1000.0, nmol / 40.0, pct, "internal standard")


ACQ = Acquisition(nucleus="1H", spectrometer_mhz=600.0, sweep_width_hz=7200.0, carrier_ppm=4.7, scans=16, relaxation_delay_s=2.0, acquisition_time_s=2.5)


def test_scans_grow_with_the_square_of_snr():
    """SNR grows with the square root of scans (common practice): twice the SNR needs four times the scans."""
    assert scans_for_snr(50.0, 16, 100.0) == 64
    assert scans_for_snr(100.0, 16, 100.0) == 16
    with pytest.raises(ParameterError):
        scans_for_snr(0.0, 16, 100.0)


def test_decisions_against_the_default_hsqc_thresholds():
    """Defaults (table): HSQC go at 30 nmol, borderline from 10; 'go' needs the k=2 lower bound above go."""
    t = load_thresholds()["1h-13c hsqc"]
    assert (t.go_nmol, t.borderline_nmol) == (30.0, 10.0)
    assert recommend(_cand(100.0), 300.0, experiment="1H-13C HSQC").decision == "go"
    # 32 nmol +- 5 %: lower bound 28.8 is below 30 -> borderline.
    assert recommend(_cand(32.0), 300.0, experiment="1H-13C HSQC").decision == "borderline"
    assert recommend(_cand(5.0), 300.0, experiment="1H-13C HSQC").decision == "no-go"


def test_bioassay_needs_the_users_mass():
    """A bioassay needing 50 ug: 200 nmol of M 300 (60 ug, +-5 %) is a go; 150 nmol (45 ug) is not."""
    assert recommend(_cand(200.0), 300.0, experiment="bioassay", required_ug=50.0).decision == "go"
    r = recommend(_cand(150.0), 300.0, experiment="bioassay", required_ug=50.0)
    assert r.decision == "no-go"
    assert any("50 ug" in x for x in r.reasons)


def test_scans_and_hours_for_the_target():
    """SNR 25 after 16 scans of 4.5 s: SNR 100 needs 16 x 16 = 256 scans, 0.32 h."""
    r = recommend(_cand(100.0), 25.0, experiment="1H-qNMR", acquisition=ACQ)
    assert r.scans_needed == 256
    assert r.hours_needed == pytest.approx(256 * 4.5 / 3600.0)
    assert r.decision == "borderline"


def test_user_thresholds_csv_and_json(tmp_path):
    csv_file = tmp_path / "mine.csv"
    csv_file.write_text("# my probe\nexperiment,label,go_nmol,borderline_nmol,go_ug,borderline_ug,target_snr,source\n1H-13C HSQC,HSQC on our 5 mm room-temperature probe,300,100,,,100,our lab's experience\n")
    table = load_thresholds(csv_file)
    assert table["1h-13c hsqc"].go_nmol == 300.0
    assert "13c 1d" in table  # defaults kept
    assert recommend(_cand(100.0), 300.0, experiment="1H-13C HSQC", config=table).decision == "borderline"
    json_file = tmp_path / "mine.json"
    json_file.write_text(json.dumps({"NOESY": {"label": "NOESY overnight", "go_nmol": 50, "borderline_nmol": 20, "source": "our lab"}}))
    assert recommend(_cand(100.0), 300.0, experiment="noesy", config=json_file).decision == "go"


def test_bad_threshold_files(tmp_path):
    f = tmp_path / "bad.csv"
    f.write_text("experiment,go_nmol,source\nHSQC,lots,me\n")
    with pytest.raises(TableError, match="go_nmol"):
        load_thresholds(f)
    f.write_text("experiment,go_nmol,source\nHSQC,10,\n")
    with pytest.raises(TableError, match="source"):
        load_thresholds(f)
    with pytest.raises(ParameterError, match="no thresholds"):
        recommend(_cand(100.0), 300.0, experiment="cryo-EM")
