"""The LC-MS run on the plate: features into the manifest (hand entries win), MS/MS checks and groups in the results.

The plate is the demo's first nine wells with their invented LC-MS run (nmrcheck.demo): what each
well holds is known by construction; masses are checked against molmass.
"""

from __future__ import annotations

import csv
import json

import pytest
from click.testing import CliRunner

from nmrcheck.cli import main
from nmrcheck.demo import COMPOUNDS, DEMO_DELAY_MIN, build_demo_plate, demo_wells
from nmrcheck.plate import read_manifest
from nmrcheck.plate.lcms import analyse_run, load_lcms, manifest_rows, merge_lcms, write_manifest

molmass = pytest.importorskip("molmass", reason="molmass gives the reference masses; pip install -e '.[test]'")


@pytest.fixture(scope="module")
def plate(tmp_path_factory):
    root = tmp_path_factory.mktemp("lcms-plate")
    manifest = build_demo_plate(root, points=4096, wells=demo_wells()[:9], lcms=True)
    return manifest, manifest.parent / "lcms" / "extract.mzML", manifest.parent / "lcms" / "timetable.csv"


@pytest.fixture(scope="module")
def lcms(plate):
    _, run, table = plate
    return analyse_run(run, table, collector_delay_min=DEMO_DELAY_MIN)


def test_features_fill_the_manifest_and_hand_entries_win(plate, lcms):
    manifest, _, _ = plate
    merged = merge_lcms(read_manifest(manifest), lcms)
    by = {s.well: s for s in merged.wells}
    truth = {w.well: w for w in demo_wells()[:9]}
    for well, spec in by.items():
        w = truth[well]
        assert spec.lcms is not None and spec.lcms["well"] == well
        if w.content != w.claimed:
            # A7: the chemist typed the neighbouring peak's feature; it stays.
            assert spec.lcms["manifest_feature"] == {"source": "manifest"}
            want = molmass.Formula(f"[{COMPOUNDS[w.claimed].formula}H]+").monoisotopic_mass
        else:
            assert spec.lcms["manifest_feature"]["source"] == "lcms"
            want = molmass.Formula(f"[{COMPOUNDS[w.content].formula}H]+").monoisotopic_mass
        mz, ion = spec.ms_features[0]
        assert ion == "[M+H]+" and mz == pytest.approx(want, rel=3e-6)
        assert spec.rt_min is not None


def test_written_manifest_is_valid_and_mixes_with_an_existing_one(plate, lcms, tmp_path):
    manifest, _, _ = plate
    existing = read_manifest(manifest)
    rows = manifest_rows(lcms, existing=existing)
    out = write_manifest(manifest.parent / "from-lcms.csv", rows)
    again = read_manifest(out)
    assert [s.well for s in again.wells] == [s.well for s in existing.wells]
    a7 = again.well("A7")
    assert a7.ms_features == existing.well("A7").ms_features  # typed by hand: kept
    assert again.well("A1").formulas == existing.well("A1").formulas
    alone = read_manifest(write_manifest(tmp_path / "alone.csv", manifest_rows(lcms, spectrum="nmr/{well}")))
    assert alone.well("A3").spectrum == "nmr/{well}" and alone.well("A3").ms_features


def test_groups_link_the_benzopyranones(lcms):
    """Coumarin (A3) and umbelliferone (A4) are given fragments one O apart in the demo scenario."""
    related = [g for g in lcms.groups if g.relation == "related"]
    assert any({"A3", "A4"} <= set(g.wells) for g in related)
    assert all("share fragments" in g.summary for g in related)


def test_cli_features_command(plate, tmp_path):
    _, run, table = plate
    out = tmp_path / "m.csv"
    done = CliRunner().invoke(main, ["plate", "features", str(run), str(table), "--collector-delay-min", str(DEMO_DELAY_MIN), "--out", str(out)])
    assert done.exit_code == 0, done.output
    assert "A3" in done.output and "share fragments" in done.output and out.is_file()
    done = CliRunner().invoke(main, ["plate", "features", str(run), str(table), "--json"])
    assert done.exit_code == 0
    data = json.loads(done.output)
    assert set(data["wells"]) == {w.well for w in demo_wells()[:9]}


def test_cli_bad_timetable_is_one_line(plate, tmp_path):
    _, run, _ = plate
    bad = tmp_path / "t.csv"
    bad.write_text("well,start_min,end_min\nA1,1.0,1.2\nA2,1.3,x\n")
    done = CliRunner().invoke(main, ["plate", "features", str(run), str(bad)])
    assert done.exit_code == 2
    assert "line 3, field 'end_min'" in done.output and len(done.output.strip().splitlines()) == 1


def test_plate_run_with_the_run_records_features_fragment_checks_and_groups(plate, tmp_path):
    manifest, run, table = plate
    # A8 holds caffeine (C8H10N4O2); C8H18OS2 lies 2.6 ppm away in mass but cannot hold its N-bearing fragments.
    rows = list(csv.reader(manifest.read_text().splitlines()))
    header = rows[1]
    for row in rows[2:]:
        if row[0] == "A8":
            row[header.index("formulas")] = "C8H10N4O2; C8H18OS2"
    edited = manifest.parent / "edited.csv"
    with open(edited, "w", newline="") as fh:
        csv.writer(fh).writerows(rows[1:])
    out = tmp_path / "out"
    done = CliRunner().invoke(main, ["plate", "run", str(edited), "--out", str(out), "--workers", "1", "--no-report",
                                     "--lcms", str(run), "--timetable", str(table), "--collector-delay-min", str(DEMO_DELAY_MIN)])
    assert done.exit_code == 0, done.output
    assert "MS/MS: wells" in done.output
    from nmrcheck.plate.store import ResultsStore

    with ResultsStore(out) as store:
        results = store.current(with_trace=False)
    a8 = results["A8"]
    assert a8.lcms["features"] and a8.lcms["manifest_feature"]["source"] == "lcms"
    checks = {c["formula"]: c for c in a8.checks if c["key"] in {r["key"] for r in a8.candidates if r.get("source", "").startswith("manifest")}}
    wrong = checks["C8H18OS2"]
    assert wrong["verdict"] == "inconsistent"
    frag = [c for c in wrong["checks"] if c["name"] == "fragments"][0]
    assert frag["status"] == "fail" and "needs" in frag["explanation"] and "N" in frag["explanation"]
    assert [c for c in checks["C8H10N4O2"]["checks"] if c["name"] == "fragments"][0]["status"] == "pass"
    record = load_lcms(out)
    assert record["groups"] and record["collector_delay_min"] == DEMO_DELAY_MIN
    from nmrcheck.plate.lcms import lcms_summary

    lines = lcms_summary(out)
    assert lines[0].startswith("LC-MS: features of 9 of 9 wells")  # A1..A9 each hold a compound (nmrcheck.demo)
    assert any(ln.startswith("MS/MS: wells") for ln in lines)
    assert lcms_summary(tmp_path / "no-run") == []
    # The same command again resumes: the run gives the same LC-MS records, so nothing is redone.
    again = CliRunner().invoke(main, ["plate", "run", str(edited), "--out", str(out), "--workers", "1", "--no-report",
                                      "--lcms", str(run), "--timetable", str(table), "--collector-delay-min", str(DEMO_DELAY_MIN)])
    assert again.exit_code == 0 and "0 screened" in again.output, again.output


def test_plate_run_needs_both_run_and_timetable(plate, tmp_path):
    manifest, run, _ = plate
    done = CliRunner().invoke(main, ["plate", "run", str(manifest), "--out", str(tmp_path / "o"), "--lcms", str(run)])
    assert done.exit_code == 2 and "--timetable" in done.output


def test_a_co_isolated_ion_turns_a_contradiction_into_a_doubt():
    """Fragments of an ion co-eluting within the isolation window are no evidence against the candidate (common practice)."""
    from nmrcheck.plate.lcms import fragment_checks

    frag = molmass.Formula("[C7H8NO]+").monoisotopic_mass
    spectrum = {"precursor_mz": 167.1067, "species": "[M+H]+", "rt_min": 2.0, "scan_ids": ["s1"], "collision_energy_ev": 20.0,
                "mz": [frag], "intensity": [100.0]}
    target = {"neutral_mass": 166.0994, "share": 0.6, "rt_start_min": 1.9, "rt_end_min": 2.1,
              "ions": [{"species": "[M+H]+", "mz": 167.1067}], "ms2": [spectrum]}
    other = {"neutral_mass": 166.5, "share": 0.3, "rt_start_min": 1.95, "rt_end_min": 2.2, "ions": [{"species": "[M+H]+", "mz": 167.6}], "ms2": []}
    alone = fragment_checks({"features": [target]}, ["C10H14O2"], neutral_mass=166.0994)[0]
    assert alone["status"] == "contradicted" and alone["co_isolated_mz"] == []
    mixed = fragment_checks({"features": [target, other]}, ["C10H14O2"], neutral_mass=166.0994)[0]
    assert mixed["co_isolated_mz"] == [167.6]
