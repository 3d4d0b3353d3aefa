"""The demo plate: built, screened and reported end to end."""

from __future__ import annotations

import csv

from click.testing import CliRunner

from nmrcheck.cli import main
from nmrcheck.demo import COMPOUNDS, demo_wells, run_demo


def test_demo_wells_are_well_formed():
    wells = demo_wells()
    assert len(wells) == 36 and len({w.well for w in wells}) == 36
    assert sum(w.content is None for w in wells) == 1  # one empty well
    assert sum(w.corrupt for w in wells) == 1  # one truncated file
    assert sum(bool(w.content and w.claimed and w.content != w.claimed) for w in wells) == 3
    assert all(w.content in COMPOUNDS for w in wells if w.content)


def test_demo_compounds_formulas_match_their_structures():
    """Formula from RDKit (independent of the demo's hand-written formulas)."""
    from rdkit import Chem
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    for c in COMPOUNDS.values():
        assert CalcMolFormula(Chem.MolFromSmiles(c.smiles)) == c.formula, c.name


def test_demo_runs_end_to_end(tmp_path):
    summary, report, seconds = run_demo(tmp_path, workers=2, points=8192)
    assert summary.status == "complete" and summary.wells == 36
    # By construction (nmrcheck.demo): one empty well, one truncated file, three contradictions.
    assert summary.verdicts.get("empty") == 1 and summary.verdicts.get("unreadable") == 1
    assert summary.verdicts.get("inconsistent", 0) >= 2
    assert report.is_file() and (report.parent / "results.csv").is_file()
    # The invented assay readouts (nmrcheck.demo.demo_assay) are joined: thymol, eugenol and umbelliferone wells hit.
    assert (report.parent / "assay.csv").is_file()
    html = report.read_text(encoding="utf-8")
    assert "active (" in html and 'class="active"' in html
    # The LC-MS path: features from the invented run, a mixture well and MS/MS groups (by construction).
    from nmrcheck.plate.lcms import load_lcms
    from nmrcheck.plate.store import ResultsStore

    with ResultsStore(report.parent) as store:
        results = store.current(with_trace=False)
    assert results["B2"].lcms["major_features"] == 2 and any("may hold a mixture" in n for n in results["B2"].notes)
    assert results["B11"].lcms["features"] == []
    assert results["A1"].lcms["manifest_feature"]["source"] == "lcms" and results["A1"].ms_feature
    assert results["A7"].lcms["manifest_feature"]["source"] == "manifest"
    assert any(g["relation"] == "related" for g in load_lcms(report.parent)["groups"])


def test_cli_plate_run_and_report(tmp_path):
    from nmrcheck.demo import build_demo_plate

    manifest = build_demo_plate(tmp_path, points=4096, wells=demo_wells()[:6])
    runner = CliRunner()
    # A broken assay file stops the run before any well is screened: one line, exit 2.
    bad = tmp_path / "bad-assay.csv"
    bad.write_text("well,value\nA1,high\n", encoding="utf-8")
    done = runner.invoke(main, ["plate", "run", str(manifest), "--out", str(tmp_path / "out"), "--workers", "1", "--assay", str(bad)])
    assert done.exit_code == 2 and "line 2, value" in done.output and not (tmp_path / "out" / "results.sqlite").exists()
    # The demo's invented readouts (plate/assay.csv) joined at the end of the run.
    assay = manifest.parent / "assay.csv"
    done = runner.invoke(main, ["plate", "run", str(manifest), "--out", str(tmp_path / "out"), "--workers", "1", "--assay", str(assay)])
    assert done.exit_code == 0, done.output
    assert "6 screened" in done.output
    with open(tmp_path / "out" / "results.csv", encoding="utf-8", newline="") as fh:
        active = {r["well"]: r["active"] for r in csv.DictReader(fh)}
    # A4 holds umbelliferone, a hit of the invented assay (nmrcheck.demo.demo_assay); A1 methyl 4-hydroxybenzoate is not.
    assert active["A4"] == "yes" and active["A1"] == "no"
    done = runner.invoke(main, ["plate", "report", str(tmp_path / "out")])
    assert done.exit_code == 0 and (tmp_path / "out" / "report.html").is_file()


def test_cli_broken_manifest_exits_non_zero(tmp_path):
    (tmp_path / "m.csv").write_text("well,spectrum\nQ1,x\nA1,\n")
    done = CliRunner().invoke(main, ["plate", "run", str(tmp_path / "m.csv"), "--out", str(tmp_path / "o")])
    assert done.exit_code == 2
    assert "line 2" in done.output and "line 3" in done.output
