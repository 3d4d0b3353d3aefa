"""The plate report: self-contained, every well on the map, user text escaped, rendered by headless Chromium."""

from __future__ import annotations

import csv
import json
import re
import shutil
import subprocess
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


def _chromium():
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


@pytest.mark.slow
def test_renders_in_headless_chromium(report, tmp_path):
    """Chromium's serialised DOM after load: the plate map holds every well, the note is text, not markup."""
    browser = _chromium()
    if browser is None:
        pytest.skip("chromium is not installed (Debian package 'chromium')")
    manifest, _, path = report
    cmd = [
        browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run", f"--user-data-dir={tmp_path / 'profile'}",
        "--dump-dom", path.as_uri(),
    ]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr[-2000:]
    dom = done.stdout
    parser = _Collector()
    parser.feed(dom)
    on_map = {a.get("data-well") for t, a in parser.tags if t == "a" and "well" in (a.get("class") or "").split()}
    assert on_map == {w.well for w in manifest.wells}
    # An unescaped note would have been parsed into a <b> element, serialised as "<b>yellow band</b>".
    assert "yellow band</b>" not in dom
    assert "&lt;b&gt;yellow band&lt;/b&gt;" in dom
    assert "<script>alert" not in dom
    shot = tmp_path / "page.png"
    cmd[-2:] = ["--window-size=1200,900", f"--screenshot={shot}", path.as_uri()]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0 and shot.stat().st_size > 10_000
