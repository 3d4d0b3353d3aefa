"""The plate report: self-contained, every well on the map, user text escaped, rendered by headless Chromium."""

from __future__ import annotations

import csv
import json
import re
from html.parser import HTMLParser

import pytest

from nmrcheck.plate import ResultsStore
from nmrcheck.report.plate_report import CAUTIONS, write_plate_report

# The demo's note for A2 carries markup (nmrcheck.demo.demo_wells).
NOTE_FRAGMENT = "<b>yellow band</b>"


@pytest.fixture(scope="module")
def report(screened_plate):
    manifest, out, _ = screened_plate
    return manifest, out, write_plate_report(out, title="Test plate <i>x</i>")


class _Collector(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))


def test_page_is_self_contained(report):
    _, _, path = report
    html = path.read_text(encoding="utf-8")
    parser = _Collector()
    parser.feed(html)
    for tag, attrs in parser.tags:
        assert not (tag == "script" and "src" in attrs), "external script"
        assert not (tag == "link" and attrs.get("rel") == "stylesheet"), "external stylesheet"
        assert not (tag == "img" and not attrs.get("src", "").startswith("data:")), "image not embedded"
    assert "@import" not in html and "@font-face" not in html
    assert not re.search(r"""(src|href)=["']https?://""", html)


def test_user_text_is_escaped(report):
    _, _, path = report
    html = path.read_text(encoding="utf-8")
    assert NOTE_FRAGMENT not in html and "<script>alert" not in html
    assert "&lt;b&gt;yellow band&lt;/b&gt;" in html
    assert "<i>x</i>" not in html and "&lt;i&gt;x&lt;/i&gt;" in html


def test_cautions_and_every_well_present(report):
    manifest, _, path = report
    html = path.read_text(encoding="utf-8")
    for text in CAUTIONS:
        assert text.replace("'", "&#x27;") in html
    for w in manifest.wells:
        assert f'id="well-{w.well}"' in html
        assert f'data-well="{w.well}"' in html


def test_exports_hold_the_same_results(report):
    manifest, out, _ = report
    with ResultsStore(out) as store:
        current = store.current()
    with open(out / "results.csv", encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert {r["well"]: r["verdict"] for r in rows} == {w: r.verdict for w, r in current.items()}
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert {w["well"]: w["verdict"] for w in doc["wells"]} == {w: r.verdict for w, r in current.items()}
    assert doc["run"]["status"] == "complete"
    # Amount and go/no-go: in every export for each well that has them, the same figures.
    with_amount = {w: r for w, r in current.items() if r.amount}
    assert with_amount, "the demo wells are quantified against their residual solvent line"
    by_well = {r["well"]: r for r in rows}
    json_wells = {w["well"]: w for w in doc["wells"]}
    html = (out / "report.html").read_text(encoding="utf-8")
    for w, r in with_amount.items():
        assert float(by_well[w]["amount_nmol"]) == pytest.approx(r.amount["nmol"], rel=1e-3)
        assert by_well[w]["recommendation"] == r.recommendation["decision"]
        assert json_wells[w]["amount"]["nmol"] == r.amount["nmol"]
        assert json_wells[w]["recommendation"]["decision"] == r.recommendation["decision"]
        assert by_well[w]["amount"] in html


def test_cli_report_joins_an_assay_and_keeps_it(screened_plate, tmp_path):
    """`plate report --assay`: readouts in the exports and kept for the next report; a bad file is one line, exit 2."""
    from click.testing import CliRunner

    from nmrcheck.cli import main

    import shutil

    _, shared, _ = screened_plate
    out = tmp_path / "results"
    shutil.copytree(shared, out)  # the shared plate's folder stays without an assay
    assay = tmp_path / "assay.csv"
    assay.write_text("well,value,unit,threshold\nA1,81,%,50\nA2,7,%,50\n", encoding="utf-8")
    done = CliRunner().invoke(main, ["plate", "report", str(out), "--assay", str(assay)])
    assert done.exit_code == 0, done.output
    with open(out / "results.csv", encoding="utf-8", newline="") as fh:
        rows = {r["well"]: r for r in csv.DictReader(fh)}
    assert rows["A1"]["active"] == "yes" and rows["A2"]["active"] == "no" and rows["A3"]["active"] == ""
    assert (out / "assay.csv").is_file()
    done = CliRunner().invoke(main, ["plate", "report", str(out)])
    assert done.exit_code == 0
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    a1 = next(w for w in doc["wells"] if w["well"] == "A1")
    assert a1["assay"]["active"] is True and a1["triage"]["name"]
    bad = tmp_path / "bad.csv"
    bad.write_text("well,value\nA1,lots\n", encoding="utf-8")
    done = CliRunner().invoke(main, ["plate", "report", str(out), "--assay", str(bad)])
    assert done.exit_code == 2 and "line 2, value: 'lots' is not a number" in done.output
    assert len(done.output.strip().splitlines()) == 1


def test_nmredata_record_per_well(report):
    """Each screened well with a candidate structure gets an NMReDATA file the reader takes back."""
    from nmrcheck.io.nmredata import read_nmredata

    _, out, _ = report
    files = sorted((out / "nmredata").glob("*.nmredata.sdf"))
    assert len(files) >= 15
    rec = read_nmredata(files[0])
    assert rec.tags["NMREDATA_VERSION"] == "1.1" and rec.spectra["1H"].peaks
    # Every assignment names hydrogens of the structure, at a shift the 1D list holds.
    shifts = {p.shift_ppm for p in rec.spectra["1H"].peaks}
    assert all(a.hydrogen and a.shift_ppm in shifts for a in rec.assignments)


def test_wells_say_when_they_used_the_plates_first_order_phase(report):
    """The demo plate's wells share one first-order phase (nmrcheck.demo.DEMO_P1_DEG): the run finds
    it and each well's processing line says it was drawn to it."""
    _, out, path = report
    html = path.read_text(encoding="utf-8")
    with ResultsStore(out, readonly=True) as store:
        processed = {w: r for w, r in store.current(with_trace=False).items() if r.processing}
    used = [w for w, r in processed.items() if r.processing["options"].get("shared_p1")]
    assert processed and len(used) == len(processed)
    assert html.count("first order drawn to the plate&#x27;s shared") + html.count("first order drawn to the plate's shared") >= len(used)
