"""One well screened: its amount against the residual solvent signal and the go/no-go, in the result and the exports.

The recordings are synthetic (nmrcheck.synth) with known composition: methyl tert-butyl ether
(1.19 ppm 9 H, 3.22 ppm 3 H; textbook values, from memory) at 80 nmol in 35 uL CDCl3 of
99.96 atom % D, whose residual CHCl3 line (7.26 ppm) holds the protons that lot leaves:
1.500 g/mL (CRC Handbook, from memory) x 35 uL / M(CDCl3) (RDKit, deuterium mass) x 0.04 %.
A line's area is its protons times the amount times ``UNIT``.
"""

from __future__ import annotations

import csv
import json

import pytest
from rdkit import Chem
from rdkit.Chem import Descriptors

from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.plate import read_manifest
from nmrcheck.plate.screen import ScreenOptions, screen_well
from nmrcheck.report.plate_exports import write_csv, write_json
from nmrcheck.report.plate_report import render_plate_report
from nmrcheck.synth import Line, simulate_fid

UNIT = 0.01
NMOL = 80.0
VOLUME_UL = 35.0
RESIDUAL_NMOL_H = 1.500 * VOLUME_UL * 1e-3 / Descriptors.MolWt(Chem.MolFromSmiles("[2H]C(Cl)(Cl)Cl")) * 0.0004 * 1e9
OPTIONS = ScreenOptions(solvent_volume_ul=VOLUME_UL, deuteration_pct=99.96)


@pytest.fixture(scope="module")
def plate(tmp_path_factory):
    root = tmp_path_factory.mktemp("screen")
    lines = [Line(1.19, 9 * NMOL * UNIT), Line(3.22, 3 * NMOL * UNIT), Line(7.26, RESIDUAL_NMOL_H * UNIT)]
    for k, well in enumerate(("A1", "A2")):
        write_bruker_fid(simulate_fid(lines, noise=0.002, solvent="CDCl3", seed=k), root / "fids" / well)
    (root / "manifest.csv").write_text("well,spectrum,formulas\nA1,fids/{well},C5H12O\nA2,fids/{well},\n", encoding="utf-8")
    return read_manifest(root / "manifest.csv")


@pytest.fixture(scope="module")
def results(plate):
    return {w.well: screen_well(w, plate.directory, OPTIONS) for w in plate.wells}


def test_amount_of_the_manifest_candidate(results):
    r = results["A1"]
    assert r.status == "done", r.error
    a = r.amount
    assert a["basis"] == "C5H12O (12 H)"  # the candidate's own count: 9 + 3 C-H
    # Measured 81.7 nmol: two low baseline humps beside the 9 H singlet count as analyte (0.3 H each).
    assert a["nmol"] == pytest.approx(NMOL, rel=0.03)
    assert a["ug"] == pytest.approx(NMOL * Descriptors.MolWt(Chem.MolFromSmiles("COC(C)(C)C")) * 1e-3, rel=0.03)
    assert a["conc_mM"] == pytest.approx(NMOL / VOLUME_UL, rel=0.03)
    assert a["method"] == "solvent residual" and a["uncertainty_pct"] == pytest.approx(20.0, abs=0.5)
    # 80 nmol less twice 20 % is 48 nmol: above the 30 nmol an HSQC needs (recommendation_defaults.csv).
    rec = r.recommendation
    assert rec["decision"] == "go" and rec["experiment"] == "1H-13C HSQC"
    assert rec["reasons"] and rec["scans_needed"] >= 1


def test_amount_without_a_candidate_is_per_proton_unit(results):
    r = results["A2"]
    a = r.amount
    assert a["basis"].startswith("per ") and a["ug"] is None
    # Whatever unit the count chose, the protons integrated are MTBE's 12 x 80 nmol.
    assert a["details"]["nmol_h"] == pytest.approx(12 * NMOL, rel=0.03)
    assert r.recommendation["decision"] in {"go", "borderline", "no-go"}


def test_next_experiment_sets_the_threshold(plate):
    """HMBC needs 100 nmol to go, 30 for borderline (recommendation_defaults.csv): 80 nmol is borderline."""
    r = screen_well(plate.well("A1"), plate.directory, ScreenOptions(solvent_volume_ul=VOLUME_UL, deuteration_pct=99.96, next_experiment="1H-13C HMBC"))
    assert r.recommendation["decision"] == "borderline"


def test_exports_and_report_show_amount_and_recommendation(results, tmp_path):
    with open(write_csv(results.values(), tmp_path / "r.csv"), encoding="utf-8", newline="") as fh:
        rows = {r["well"]: r for r in csv.DictReader(fh)}
    a1 = rows["A1"]
    assert float(a1["amount_nmol"]) == pytest.approx(results["A1"].amount["nmol"], rel=1e-3)
    assert float(a1["amount_ug"]) == pytest.approx(results["A1"].amount["ug"], rel=1e-3)
    assert a1["amount_method"] == "solvent residual" and a1["amount_basis"] == "C5H12O (12 H)"
    assert "nmol" in a1["amount"] and a1["recommendation"] == "go" and a1["recommendation_experiment"] == "1H-13C HSQC"
    doc = json.loads(write_json(results.values(), tmp_path / "r.json").read_text(encoding="utf-8"))
    well = next(w for w in doc["wells"] if w["well"] == "A1")
    assert well["amount"]["nmol"] == results["A1"].amount["nmol"] and well["recommendation"]["decision"] == "go"
    html = render_plate_report(results)
    assert a1["amount"] in html and "go: 1H-13C HSQC" in html  # the next step names its experiment
    assert "reaches the 30 nmol" in html  # the reason, from the recommendation


def test_demo_caffeine_wells_use_ten_protons(tmp_path):
    """Caffeine (C8H10N4O2) shows all 10 of its H in CDCl3 (three N-CH3 and one CH, no exchangeable H):
    the demo's caffeine wells take their amount from those 10 H, never from an anchor of 3."""
    from nmrcheck.demo import build_demo_plate, demo_wells

    wells = tuple(w for w in demo_wells() if w.content == "caffeine" and w.claimed == "caffeine")
    assert wells
    plate = read_manifest(build_demo_plate(tmp_path, wells=wells))
    for spec in plate.wells:
        r = screen_well(spec, plate.directory, ScreenOptions())
        assert r.amount is not None, r.notes
        assert r.amount["candidate"]["n_h"] == 10, r.amount["basis"]
        assert r.purity["call"] == "single compound"


def test_no_amount_from_an_inconsistent_candidate(tmp_path):
    """A well claimed as propan-1-ol that holds MTBE: the structure is inconsistent, so no amount, with the reason."""
    lines = [Line(1.19, 9 * NMOL * UNIT), Line(3.22, 3 * NMOL * UNIT), Line(7.26, RESIDUAL_NMOL_H * UNIT)]
    write_bruker_fid(simulate_fid(lines, noise=0.002, solvent="CDCl3", seed=5), tmp_path / "fids" / "A1")
    (tmp_path / "manifest.csv").write_text("well,spectrum,structures\nA1,fids/{well},propanol: CCCO\n", encoding="utf-8")
    plate = read_manifest(tmp_path / "manifest.csv")
    r = screen_well(plate.well("A1"), plate.directory, OPTIONS)
    assert r.verdict == "inconsistent"
    assert r.amount is None and r.recommendation is None
    assert any(n.startswith("no amount: every candidate is inconsistent") for n in r.notes)


def test_amount_settings_per_well_from_the_manifest(tmp_path):
    """A well's own volume and next experiment override the plate's; an internal standard replaces the solvent line."""
    # DSS-d6 (9 H singlet at 0.00 ppm) and methyl tert-butyl ether in D2O
    lines = [Line(0.0, 9 * 40.0 * UNIT), Line(1.22, 9 * NMOL * UNIT), Line(3.25, 3 * NMOL * UNIT)]
    write_bruker_fid(simulate_fid(lines, noise=0.002, solvent="D2O", seed=6), tmp_path / "fids" / "A1")
    (tmp_path / "manifest.csv").write_text(
        "well,spectrum,formulas,standard,standard_nmol,volume_ul,next_experiment\nA1,fids/{well},C5H12O,no-such-standard,40,50,1H-13C HMBC\n", encoding="utf-8")
    from nmrcheck.plate.manifest import ManifestError

    with pytest.raises(ManifestError, match="standard"):
        read_manifest(tmp_path / "manifest.csv")
    (tmp_path / "manifest.csv").write_text(
        "well,spectrum,formulas,standard,standard_nmol,volume_ul,next_experiment\nA1,fids/{well},C5H12O,DSS-d6,40,50,1H-13C HMBC\n", encoding="utf-8")
    plate = read_manifest(tmp_path / "manifest.csv")
    r = screen_well(plate.well("A1"), plate.directory, OPTIONS)
    assert r.amount["settings"]["volume_ul"] == 50.0 and r.amount["method"] == "internal standard"
    assert r.amount["nmol"] == pytest.approx(NMOL, rel=0.03)  # 12 H against DSS-d6's 9 H at 40 nmol
    assert r.amount["conc_mM"] == pytest.approx(NMOL / 50.0, rel=0.03)
    assert r.recommendation["experiment"].lower() == "1h-13c hmbc"


def test_count_bounded_by_the_claimed_formula(results):
    """The manifest's C5H12O allows 11-12 visible H (one OH may exchange): the processing's unit is chosen among
    them, so the count reads MTBE's 12 H, not a fraction of it."""
    r = results["A1"]
    assert r.count["method"] == "bounded by candidate formulas"
    assert round(r.count["total_h"]) == 12
    assert results["A2"].count["method"] != "bounded by candidate formulas"


def test_solvent_the_spectrum_shows_decides_the_claimed_counts(tmp_path):
    """A file that says CD3OD holding 3,3-dimethylbutan-1-ol in CDCl3 (CHCl3 at 7.26 ppm with its 13C
    satellites at +-104.5 Hz, 0.55 % each; no CHD2OD at 3.31; Gottlieb 1997 and common practice, from
    memory). In CD3OD the OH would exchange (13 visible H); in CDCl3 its singlet is seen, so the count is
    bounded by CDCl3's 13-14 H and reads 14. The manifest's CDCl3 agrees with the spectrum, and says so."""
    mhz = 600.0  # simulate_fid's default
    chcl3 = [Line(7.26, 2.0 * UNIT * NMOL), *(Line(7.26 + s * 104.5 / mhz, 0.0055 * 2.0 * UNIT * NMOL) for s in (-1, 1))]
    analyte = [Line(0.92, 9 * NMOL * UNIT), Line(1.52, 2 * NMOL * UNIT, 1.0, (7.5, 7.5)),
               Line(3.70, 2 * NMOL * UNIT, 1.0, (7.5, 7.5)), Line(2.05, 1 * NMOL * UNIT, 1.5)]
    write_bruker_fid(simulate_fid(chcl3 + analyte, noise=0.002, solvent="CD3OD", seed=7), tmp_path / "fids" / "A1")
    (tmp_path / "manifest.csv").write_text("well,spectrum,solvent,structures\nA1,fids/{well},CDCl3,dimethylbutanol: CC(C)(C)CCO\n", encoding="utf-8")
    plate = read_manifest(tmp_path / "manifest.csv")
    r = screen_well(plate.well("A1"), plate.directory, OPTIONS)
    assert any("solvent read from the spectrum" in w for w in r.processing["warnings"]), r.processing["warnings"]
    assert r.count["method"] == "bounded by candidate formulas"
    assert round(r.count["total_h"]) == 14
    assert any("manifest solvent CDCl3 is what the spectrum shows" in n for n in r.notes), r.notes
