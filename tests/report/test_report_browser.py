"""The morning report as a chemist sees it: rendered by headless Chromium and measured in the page.

A small probe script is appended to a copy of the report; it measures the laid-out page
(positions, heights, SVG bounding boxes from getBBox, the order after a click on a column) and
writes the figures as JSON into the DOM, which Chromium's --dump-dom hands back. The tests skip
with a reason when Chromium is not installed (Debian package 'chromium').
"""

from __future__ import annotations

import csv
import dataclasses
import html
import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from nmrcheck.io.assay import AssayReadout
from nmrcheck.plate import ResultsStore
from nmrcheck.report.plate_report import render_plate_report, write_plate_report

pytestmark = pytest.mark.slow

_PROBE = r"""
<script>
(function(){
  var out = {};
  var wells = %(wells)s;
  function box(el){ var r = el.getBoundingClientRect(); return {top: r.top + window.scrollY, bottom: r.bottom + window.scrollY, left: r.left, right: r.right, height: r.height}; }
  out.viewport = {w: window.innerWidth, h: window.innerHeight};
  out.page_height = document.documentElement.scrollHeight;
  var map = document.querySelector('svg.platemap'); out.map = map ? box(map) : null;
  var att = document.getElementById('attention'); out.attention = att ? box(att) : null;
  var firstLine = document.querySelector('ol.triage li'); out.attention_first = firstLine ? box(firstLine) : null;
  var ready = document.getElementById('ready'); out.ready = ready ? box(ready) : null;
  out.scripts = document.querySelectorAll('script').length;
  var handlers = [];
  document.querySelectorAll('*').forEach(function(el){
    for (var i = 0; i < el.attributes.length; i++){ var n = el.attributes[i].name.toLowerCase(); if (n.indexOf('on') === 0) handlers.push(el.tagName + ' ' + n); }
  });
  out.handlers = handlers;
  out.reach = {};
  wells.forEach(function(w){
    var d = document.getElementById('well-' + w);
    out.reach[w] = {section: !!d && d.tagName === 'DETAILS',
                    map: !!document.querySelector('svg.platemap a[href="#well-' + w + '"]'),
                    table: !!document.querySelector('#wells a[href="#well-' + w + '"]')};
  });
  out.open_on_load = Array.prototype.map.call(document.querySelectorAll('details.well[open]'), function(d){ return d.id; });
  // Bioassay column: click its header once (ascending), read the sort keys top to bottom.
  var ths = Array.prototype.slice.call(document.querySelectorAll('#wells thead th'));
  var col = ths.findIndex(function(th){ return th.textContent.trim() === 'Bioassay'; });
  out.assay_col = col;
  if (col >= 0){
    ths[col].click();
    out.assay_sorted = Array.prototype.map.call(document.querySelectorAll('#wells tbody tr'), function(tr){ return tr.cells[col].getAttribute('data-sort'); });
    ths[col].click();
    out.assay_sorted_desc = Array.prototype.map.call(document.querySelectorAll('#wells tbody tr'), function(tr){ return tr.cells[col].getAttribute('data-sort'); });
  }
  // Open every well, then measure each spectrum's text boxes in SVG user units.
  document.querySelectorAll('details.well').forEach(function(d){ d.open = true; });
  out.spectra = [];
  document.querySelectorAll('svg.spectrum').forEach(function(svg){
    var boxes = [];
    svg.querySelectorAll('text').forEach(function(t){
      if (t.closest('[style*="display: none"]') || t.closest('[style*="display:none"]')) return;
      var b = t.getBBox(); boxes.push({text: t.textContent, x: b.x, y: b.y, w: b.width, h: b.height});
    });
    var vb = svg.viewBox.baseVal;
    out.spectra.push({id: svg.id, boxes: boxes, width: box(svg).right - box(svg).left, vb: [vb.width, vb.height]});
  });
  // Zoom: the first spectrum's 'zoom in' button twice, then its tick labels and proton labels again.
  var sp = document.querySelector('svg.spectrum');
  if (sp){
    var before = Array.prototype.map.call(sp.querySelectorAll('g.ticks text'), function(t){ return +t.textContent; });
    var zin = sp.parentNode.querySelector('button[data-act="in"]'); zin.click(); zin.click();
    var after = Array.prototype.map.call(sp.querySelectorAll('g.ticks text'), function(t){ return +t.textContent; });
    var boxes = [];
    sp.querySelectorAll('text').forEach(function(t){
      var g = t.closest('g.hl'); if (g && g.style.display === 'none') return;
      var b = t.getBBox(); boxes.push({text: t.textContent, x: b.x, y: b.y, w: b.width, h: b.height});
    });
    out.zoom = {before: before, after: after, transform: sp.querySelector('g.data').getAttribute('transform'), boxes: boxes};
    sp.parentNode.querySelector('button[data-act="all"]').click();
    out.zoom.reset = sp.querySelector('g.data').getAttribute('transform');
  }
  var pre = document.createElement('pre'); pre.id = 'nmrcheck-probe'; pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>
"""


def _chromium() -> str | None:
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


def _run_chromium(args: list[str], tmp_path: Path) -> subprocess.CompletedProcess:
    browser = _chromium()
    if browser is None:
        pytest.skip("chromium is not installed (Debian package 'chromium')")
    cmd = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", "--window-size=1400,900",
           f"--user-data-dir={tmp_path / 'chromium-profile'}", *args]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=180)
    assert done.returncode == 0, done.stderr[-2000:]
    return done


def probe(report: Path, wells: list[str], tmp_path: Path, *, fragment: str = "") -> dict:
    """Load a copy of ``report`` with the probe appended; return what the probe measured."""
    page = report.with_name(report.stem + "-probe.html")
    text = report.read_text(encoding="utf-8")
    page.write_text(text.replace("</body>", _PROBE % {"wells": json.dumps(wells)} + "</body>"), encoding="utf-8")
    dom = _run_chromium(["--dump-dom", page.as_uri() + fragment], tmp_path).stdout
    m = re.search(r'<pre id="nmrcheck-probe">(.*?)</pre>', dom, re.S)
    assert m, "the probe did not run"
    return json.loads(html.unescape(m.group(1)))


def _overlaps(boxes: list[dict]) -> list[tuple[str, str]]:
    bad = []
    for i, a in enumerate(boxes):
        for b in boxes[i + 1:]:
            dx = min(a["x"] + a["w"], b["x"] + b["w"]) - max(a["x"], b["x"])
            dy = min(a["y"] + a["h"], b["y"] + b["h"]) - max(a["y"], b["y"])
            if dx > 0.5 and dy > 0.5:
                bad.append((a["text"], b["text"]))
    return bad


# --- the screened 24-well plate of conftest, with assay readouts ----------------------------------


@pytest.fixture(scope="module")
def assayed_report(screened_plate, tmp_path_factory):
    """The 24-well plate's report with invented assay readouts (nmrcheck.demo.demo_assay) joined."""
    from nmrcheck.demo import demo_assay, demo_wells

    manifest, out, _ = screened_plate
    on_plate = {w.well for w in manifest.wells}
    assay = tmp_path_factory.mktemp("assay") / "assay.csv"
    rows = demo_assay(tuple(w for w in demo_wells() if w.well in on_plate))
    with open(assay, "w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    report = write_plate_report(out, title="Calyxia nocturna (fictional) extract - fractions 1-24", subtitle="invented demo plate, synthetic spectra, invented assay", assay=assay)
    return manifest, out, report


@pytest.fixture(scope="module")
def measured(assayed_report, tmp_path_factory):
    """The probe's figures for the 24-well report, loaded once."""
    manifest, _, report = assayed_report
    return probe(report, [w.well for w in manifest.wells], tmp_path_factory.mktemp("chromium"))


def test_first_screen_holds_map_and_attention_list(measured):
    m = measured
    assert m["viewport"]["w"] == 1400
    # Within the first 900 px: the whole plate map, the attention heading and its first line.
    assert m["map"]["bottom"] <= 900, m["map"]
    assert m["attention"]["top"] < 900 and m["attention_first"]["bottom"] <= 900


def test_page_height_per_ten_wells_with_details_collapsed(assayed_report, measured):
    manifest, _, _ = assayed_report
    m = measured
    n = len(manifest.wells)
    assert m["open_on_load"] == []
    # Goal of the report's design: below 1,500 px per 10 wells at 1400 px wide.
    assert m["page_height"] < 1500 * n / 10, (m["page_height"], n)
    print(f"page height {m['page_height']} px for {n} wells ({m['page_height'] / n * 10:.0f} px per 10 wells)")


def test_every_manifest_well_reachable(assayed_report, tmp_path):
    manifest, _, report = assayed_report
    wells = [w.well for w in manifest.wells]
    m = probe(report, wells, tmp_path, fragment="#well-C12")
    for w in wells:
        assert m["reach"][w] == {"section": True, "map": True, "table": True}, w
    # Following a well's link opens its evidence.
    assert m["open_on_load"] == ["well-C12"]


def test_spectrum_labels_never_overlap(assayed_report, measured):
    manifest, _, _ = assayed_report
    m = measured
    assert len(m["spectra"]) >= 20
    for sp in m["spectra"]:
        labels = [b for b in sp["boxes"] if b["text"].endswith(" H")]
        assert all(b["w"] > 0 for b in sp["boxes"]), sp["id"]
        assert not _overlaps(sp["boxes"]), (sp["id"], _overlaps(sp["boxes"]))
        # No label for a region of 0.0 H.
        assert not [b for b in labels if b["text"].startswith("0.0")], sp["id"]
        # Full width: the drawing spans the page's content column (1400 px window).
        assert sp["width"] > 1200, sp["id"]


def test_zoom_in_the_page(measured):
    z = measured["zoom"]
    span = lambda ticks: max(ticks) - min(ticks)  # noqa: E731
    # Two clicks on 'zoom in' halve the visible range twice: the ticks cover about a quarter of the span.
    assert span(z["after"]) < 0.4 * span(z["before"]) and len(z["after"]) >= 4
    assert "scale(4" in z["transform"].replace(" ", "")
    assert not _overlaps(z["boxes"])
    assert "scale(1," in z["reset"].replace(" ", "")


def test_bioassay_column_sorts(assayed_report, measured):
    manifest, _, _ = assayed_report
    m = measured
    assert m["assay_col"] >= 0
    values = [float(v) for v in m["assay_sorted"] if v not in (None, "")]
    assert len(values) >= 20 and values == sorted(values)
    desc = [float(v) for v in m["assay_sorted_desc"] if v not in (None, "")]
    assert desc == sorted(desc, reverse=True)
    # Wells without a readout stay at the end both ways.
    tail = m["assay_sorted"][len(values):]
    assert all(v in (None, "") for v in tail)


PAYLOADS = (
    "<script>window.__pwned=1</script>",
    '<img src=x onerror="window.__pwned=2">',
    '"><svg onload="window.__pwned=3">',
    "</title><a href=\"javascript:alert(1)\" onclick=\"x()\">",
)


def test_all_user_text_escaped(screened_plate, tmp_path):
    """Payloads in every user-provided field (names, notes, errors, assay names, title) stay text."""
    manifest, out, _ = screened_plate
    with ResultsStore(out) as store:
        results = store.current()
    evil = {}
    for i, (w, r) in enumerate(sorted(results.items())):
        p = PAYLOADS[i % len(PAYLOADS)]
        cands = tuple(dict(c, name=p + str(c.get("name", ""))) if c.get("kind") == "structure" else c for c in r.candidates)
        spec = dict(r.spec, notes=p)
        regions = tuple(dict(g, label=p) if g.get("flag") else g for g in r.regions)
        evil[w] = dataclasses.replace(r, candidates=cands, spec=spec, regions=regions, error=(p if r.error else None))
    assay = {w: AssayReadout(w, 10.0 * k, p, 50.0, "above", p) for k, (w, p) in enumerate(zip(sorted(results), PAYLOADS * 10))}
    page = tmp_path / "evil.html"
    page.write_text(render_plate_report(evil, wells=list(results), title=PAYLOADS[0], subtitle=PAYLOADS[1], assay=assay), encoding="utf-8")
    m = probe(page, sorted(results), tmp_path)
    # The page's own script and the probe; no element carries an event handler.
    assert m["scripts"] == 2
    assert m["handlers"] == []
    text = page.read_text(encoding="utf-8")
    assert "window.__pwned" in text and "<img src=x" not in text and "<svg onload" not in text
    assert 'href="javascript:' not in text


def test_screenshot_of_the_morning(assayed_report, tmp_path):
    """The screened plate with its invented assay readouts, photographed at 1400 x 900; then one opened well.

    With NMRCHECK_SCREENSHOTS=DIR the pictures are also saved there (docs/ holds the README's).
    """
    _, _, report = assayed_report
    shot = tmp_path / "morning.png"
    _run_chromium([f"--screenshot={shot}", report.as_uri()], tmp_path)
    assert shot.stat().st_size > 50_000
    # An opened well with its spectrum and the best candidate's predicted shifts shown.
    text = report.read_text(encoding="utf-8")
    opened = report.with_name("opened.html")
    opened.write_text(text.replace("</body>", "<script>(function(){var d=document.getElementById('well-A6');d.open=true;"
                                   "var p=d.querySelector('input.show-predicted');if(p)p.click();document.body.prepend(d);})();</script></body>"),
                      encoding="utf-8")
    shot2 = tmp_path / "well.png"
    _run_chromium(["--window-size=1400,640", f"--screenshot={shot2}", opened.as_uri()], tmp_path)
    assert shot2.stat().st_size > 20_000
    target = os.environ.get("NMRCHECK_SCREENSHOTS")
    if target:
        Path(target).mkdir(parents=True, exist_ok=True)
        shutil.copy(shot, Path(target) / "morning-report.png")
        shutil.copy(shot2, Path(target) / "morning-report-well.png")
