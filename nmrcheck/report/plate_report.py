"""The morning page of a plate run: one self-contained HTML file, plus CSV, JSON and NMReDATA exports.

The first screen answers "what needs me, and what can go ahead": the plate map beside the
list of wells that need attention and the list ready for the next step. Below: one compact,
sortable, filterable line per well, then each well's evidence collapsed (spectrum with
integrals, zoom and pan; candidates; regions). Everything is inline (styles, one small script,
SVG drawings): the file opens offline and fetches nothing. Every piece of user-provided text is
HTML-escaped.
"""

from __future__ import annotations

import logging
import os
import re
import time
from html import escape
from pathlib import Path
from typing import Any, Mapping

from nmrcheck import __version__
from nmrcheck.data import user_citation
from nmrcheck.io.assay import AssayReadout, read_assay, write_assay
from nmrcheck.io.atomic import write_text_atomically
from nmrcheck.plate.manifest import layout_named
from nmrcheck.plate.results import VERDICTS, WellResult
from nmrcheck.plate.store import DATABASE_NAME, ResultsStore
from nmrcheck.report.plate_exports import write_csv, write_json
from nmrcheck.report.plate_svg import SPECTRUM_INK, VERDICT_STYLE, legend_html, plate_map_svg, spectrum_svg, svg_defs
from nmrcheck.report.triage import WellLine, activity_text, display_units, triage, well_line

__all__ = ["ASSAY_FILE", "CAUTIONS", "render_plate_report", "write_plate_report"]

log = logging.getLogger("nmrcheck")

#: Name under which a plate's assay readouts are kept in its results folder (so later reports keep them).
ASSAY_FILE = "assay.csv"

CAUTIONS = (
    "These results are screening aids, not identifications: a 'consistent' call means the spectrum "
    "does not contradict the candidate, not that the compound is proven.",
    "Deuterated solvents, extracts and fractions are handled under the laboratory's own safety rules.",
    "Decisions on what to isolate, discard or report rest with the responsible chemist and the local regulations.",
)

_CSS = """
:root{--ink:#1d232a;--muted:#5b6670;--line:#d5dbe1;--panel:#f5f7f9;--accent:#2b7bb9;--warn:#b0432f;--ok:#2f7d4f}
*{box-sizing:border-box}
body{font-family:system-ui,-apple-system,'Segoe UI',Roboto,sans-serif;margin:0 auto;max-width:1360px;color:var(--ink);padding:.6em 1.2em;font-size:14px;line-height:1.35}
h1{font-size:1.35em;margin:.1em 0} h2{font-size:1.08em;margin:1.1em 0 .35em;padding-bottom:.15em;border-bottom:2px solid var(--line)}
.muted{color:var(--muted)} .small{font-size:.86em}
.caution{font-size:.84em;color:var(--muted);margin:.2em 0 .5em}
.first{display:grid;grid-template-columns:minmax(380px,470px) 1fr;gap:1.4em;align-items:start}
.first h2{margin-top:.3em}
.legend{list-style:none;padding:0;display:flex;flex-wrap:wrap;gap:.15em .9em;margin:.3em 0;font-size:.82em}
.legend li{display:flex;align-items:center;gap:.25em}
.tally span{display:inline-block;margin-right:.8em;font-size:.9em}
ol.triage{list-style:none;margin:0;padding:0}
ol.triage li{display:grid;grid-template-columns:3.2em minmax(8em,14em) 7.6em 6.8em 4.2em 1fr;gap:.5em;padding:.16em .3em;border-bottom:1px solid var(--line);align-items:baseline;white-space:nowrap}
ol.triage.nopurity li{grid-template-columns:3.2em minmax(8em,15em) 7.6em 4.2em 1fr}
ol.triage li > *{overflow:hidden;text-overflow:ellipsis}
ol.triage li:hover{background:var(--panel)}
ol.triage .why{white-space:nowrap}
.concern{font-size:.78em;font-weight:600;text-transform:uppercase;letter-spacing:.02em;color:var(--warn)}
ol.ready .concern{color:var(--ok)}
.act{color:#b8391c;font-weight:700}
.badge{display:inline-block;border-radius:.7em;padding:0 .45em;font-size:.82em;font-weight:600;border:1px solid #1a1a1a;white-space:nowrap}
table{border-collapse:collapse;font-size:.9em;width:100%}
th,td{border-bottom:1px solid var(--line);padding:.2em .4em;text-align:left;vertical-align:baseline}
th{background:var(--panel);position:sticky;top:0;white-space:nowrap}
table.wells td{white-space:nowrap;max-width:22em;overflow:hidden;text-overflow:ellipsis}
table.wells td.why{width:100%;max-width:0}
table.wells td.num{text-align:right;font-variant-numeric:tabular-nums}
table.sortable th{cursor:pointer;user-select:none} table.sortable th:after{content:' \\2195';color:#9aa4ad;font-size:.8em}
table.sortable th[data-dir=asc]:after{content:' \\2191';color:var(--ink)} table.sortable th[data-dir=desc]:after{content:' \\2193';color:var(--ink)}
.filters{display:flex;gap:.8em;align-items:center;margin:.3em 0 .4em;font-size:.9em}
.filters input{padding:.2em .4em;width:18em}
details.well{border-bottom:1px solid var(--line);padding:.12em 0}
details.well > summary{cursor:pointer;white-space:nowrap;overflow:hidden;text-overflow:ellipsis}
details.well[open]{background:#fcfdfd;padding-bottom:.6em}
details.well[open] > summary{font-weight:600;margin-bottom:.3em}
.kv{display:grid;grid-template-columns:max-content 1fr;gap:.05em 1em;font-size:.9em;margin:.4em 0}
.kv > div:nth-child(odd){color:var(--muted)}
.error{background:#f6eef8;border-left:4px solid #6a3d9a;padding:.3em .7em;white-space:pre-wrap;font-family:monospace;font-size:.85em}
.tools{display:flex;gap:.4em;align-items:center;font-size:.85em;margin:.2em 0}
.tools button{font:inherit;padding:.05em .55em;border:1px solid #9aa4ad;background:#fff;border-radius:3px;cursor:pointer}
.tools label{margin-left:1em}
svg.spectrum{width:100%;height:auto;display:block;cursor:crosshair}
svg.platemap{width:100%;height:auto;max-width:470px}
.caption{font-size:.82em;color:var(--muted);margin:.1em 0 .4em}
.swatch{display:inline-block;width:.9em;height:.9em;vertical-align:-.1em;border:1px solid #888}
footer{margin-top:1.5em;font-size:.85em;color:var(--muted)}
@media print{.tools,.filters{display:none} details.well{page-break-inside:avoid} body{max-width:none;font-size:11px} .first{grid-template-columns:340px 1fr}}
"""

_JS = r"""
(function(){
  function key(td){ var v = td.getAttribute('data-sort'); return v !== null ? v : td.textContent.trim(); }
  document.querySelectorAll('table.sortable').forEach(function(table){
    var ths = table.querySelectorAll('thead th');
    ths.forEach(function(th, col){
      th.addEventListener('click', function(){
        var body = table.tBodies[0], rows = Array.prototype.slice.call(body.rows);
        var asc = th.getAttribute('data-dir') !== 'asc';
        ths.forEach(function(o){ o.removeAttribute('data-dir'); });
        th.setAttribute('data-dir', asc ? 'asc' : 'desc');
        rows.sort(function(a, b){
          var x = key(a.cells[col]), y = key(b.cells[col]);
          var nx = parseFloat(x), ny = parseFloat(y), c;
          if (!isNaN(nx) && !isNaN(ny)) c = nx - ny;
          else if (x === '' || y === '') c = (x === '') - (y === '');
          else c = x.localeCompare(y, undefined, {numeric: true});
          if (x === '' || y === '') return c;  /* blanks last either way */
          return asc ? c : -c;
        });
        rows.forEach(function(r){ body.appendChild(r); });
      });
    });
  });
  var text = document.getElementById('filter-text'), group = document.getElementById('filter-group');
  function filter(){
    var q = (text && text.value || '').toLowerCase(), g = group ? group.value : '';
    document.querySelectorAll('#wells tbody tr').forEach(function(tr){
      var ok = (!q || tr.textContent.toLowerCase().indexOf(q) >= 0) && (!g || (' ' + tr.getAttribute('data-groups') + ' ').indexOf(' ' + g + ' ') >= 0);
      tr.style.display = ok ? '' : 'none';
    });
  }
  if (text) text.addEventListener('input', filter);
  if (group) group.addEventListener('change', filter);
  function openHash(){
    var id = decodeURIComponent(location.hash.slice(1)); if (!id) return;
    var el = document.getElementById(id);
    if (el && el.tagName === 'DETAILS') { el.open = true; el.scrollIntoView(); }
  }
  window.addEventListener('hashchange', openHash); openHash();
  var wasOpen = [];
  window.addEventListener('beforeprint', function(){ document.querySelectorAll('details.well').forEach(function(d){ if (!d.open) { d.open = true; wasOpen.push(d); } }); });
  window.addEventListener('afterprint', function(){ wasOpen.forEach(function(d){ d.open = false; }); wasOpen = []; });
  var NS = 'http://www.w3.org/2000/svg';
  function ticks(hi, lo){
    var span = hi - lo; if (!(span > 0) || !isFinite(span)) return [];
    var raw = span / 12, mag = Math.pow(10, Math.floor(Math.log(raw) / Math.LN10)), step = mag;
    [1, 2, 5, 10].some(function(m){ step = m * mag; return step >= raw; });
    var out = [], t0 = Math.floor(hi / step) * step;
    for (var k = 0; k <= 60; k++){ var t = t0 - k * step; if (t < lo - 1e-9) break; if (t <= hi + 1e-9) out.push(Math.round(t * 1e6) / 1e6); }
    return out;
  }
  document.querySelectorAll('svg.spectrum').forEach(function(svg){
    var hi = +svg.getAttribute('data-hi'), lo = +svg.getAttribute('data-lo');
    var L = +svg.getAttribute('data-left'), R = +svg.getAttribute('data-right');
    var data = svg.querySelector('g.data'), tk = svg.querySelector('g.ticks'), brush = svg.querySelector('rect.brush');
    var ay = +tk.getAttribute('data-axis-y'), ty = +tk.getAttribute('data-text-y');
    var view = {hi: hi, lo: lo};
    function x0(p){ return L + (hi - p) / (hi - lo) * (R - L); }
    function draw(){
      var k = (hi - lo) / (view.hi - view.lo), tx = L - k * x0(view.hi);
      data.setAttribute('transform', 'translate(' + tx + ',0) scale(' + k + ',1)');
      while (tk.firstChild) tk.removeChild(tk.firstChild);
      ticks(view.hi, view.lo).forEach(function(t){
        var x = tx + k * x0(t), ln = document.createElementNS(NS, 'line'), tt = document.createElementNS(NS, 'text');
        ln.setAttribute('x1', x); ln.setAttribute('x2', x); ln.setAttribute('y1', ay); ln.setAttribute('y2', ay + 4); ln.setAttribute('stroke', '#444');
        tt.setAttribute('x', x); tt.setAttribute('y', ty); tt.setAttribute('text-anchor', 'middle'); tt.setAttribute('font-size', '11');
        tt.textContent = String(t); tk.appendChild(ln); tk.appendChild(tt);
      });
      svg.querySelectorAll('g.hl').forEach(function(g){
        var p = +g.getAttribute('data-ppm'), dx = +g.getAttribute('data-dx'), ax = tx + k * x0(p);
        var ln = g.querySelector('line'), tt = g.querySelector('text');
        g.style.display = (p <= view.hi && p >= view.lo) ? '' : 'none';
        ln.setAttribute('x1', ax); ln.setAttribute('x2', ax + dx); tt.setAttribute('x', ax + dx);
      });
    }
    function toPpm(evt){
      var r = svg.getBoundingClientRect(), vb = svg.viewBox.baseVal;
      var x = (evt.clientX - r.left) * vb.width / r.width;
      return view.hi - (Math.min(Math.max(x, L), R) - L) / (R - L) * (view.hi - view.lo);
    }
    function setView(a, b){
      var h = Math.min(hi, Math.max(a, b)), l = Math.max(lo, Math.min(a, b));
      if (h - l < 0.01) { var c = (h + l) / 2; h = Math.min(hi, c + 0.005); l = Math.max(lo, c - 0.005); }
      view.hi = h; view.lo = l; draw();
    }
    var start = null;
    svg.addEventListener('mousedown', function(e){ start = toPpm(e); e.preventDefault(); });
    svg.addEventListener('mousemove', function(e){
      if (start === null) return;
      var p = toPpm(e), k = (hi - lo) / (view.hi - view.lo), tx = L - k * x0(view.hi);
      var a = tx + k * x0(Math.max(p, start)), b = tx + k * x0(Math.min(p, start));
      brush.setAttribute('x', a); brush.setAttribute('width', Math.max(0, b - a)); brush.style.display = '';
    });
    window.addEventListener('mouseup', function(e){
      if (start === null) return;
      var p = toPpm(e), s = start; start = null; brush.style.display = 'none';
      if (Math.abs(p - s) > (view.hi - view.lo) / 200) setView(s, p);
    });
    svg.addEventListener('dblclick', function(){ setView(hi, lo); });
    var box = svg.parentNode;
    box.querySelectorAll('button[data-act]').forEach(function(b){
      b.addEventListener('click', function(){
        var act = b.getAttribute('data-act'), w = view.hi - view.lo, c = (view.hi + view.lo) / 2;
        if (act === 'all') setView(hi, lo);
        else if (act === 'in') setView(c + w / 4, c - w / 4);
        else if (act === 'out') setView(c + w, c - w);
        else if (act === 'left') { var d = Math.min(w / 3, hi - view.hi); setView(view.hi + d, view.lo + d); }
        else if (act === 'right') { var d2 = Math.min(w / 3, view.lo - lo); setView(view.hi - d2, view.lo - d2); }
      });
    });
    var pred = box.querySelector('input.show-predicted'), g = svg.querySelector('g.predicted');
    if (pred && g) pred.addEventListener('change', function(){ g.style.display = pred.checked ? '' : 'none'; });
  });
})();
"""


def _well_sort_key(well: str) -> str:
    # Row letter then zero-padded column, so A2 sorts before A10.
    return f"{well[0]}{int(well[1:]):03d}"


def _badge(verdict: str) -> str:
    st = VERDICT_STYLE.get(verdict, VERDICT_STYLE["pending"])
    return f'<span class="badge" style="background:{st["fill"]};color:{st["ink"]}">{escape(verdict)}</span>'


def _kv(pairs) -> str:
    return '<div class="kv">' + "".join(f"<div>{escape(k)}</div><div>{v}</div>" for k, v in pairs) + "</div>"


def _fmt(v: Any, digits: int = 2) -> str:
    if v is None or v == "":
        return "–"
    if isinstance(v, float):
        return escape(f"{v:.{digits}f}")
    return escape(str(v))


def _tip(text: str, tip: str) -> str:
    """Text with a tooltip (both escaped)."""
    if not tip:
        return escape(text)
    return f'<span title="{escape(tip)}">{escape(text)}</span>'


def _activity_cell(line: WellLine) -> str:
    a = line.activity
    if a is None:
        return ""
    text = activity_text(a)
    tip = (a.assay + ": " if a.assay else "") + f"{a.value:g} {a.unit}".strip()
    if a.threshold is not None:
        tip += f"; hit when {a.hit_when} {a.threshold:g} {a.unit}".rstrip()
    cls = ' class="act"' if a.active else ""
    return f'<span{cls} title="{escape(tip)}">{escape(text)}</span>'


def _short_purity(text: str) -> str:
    """'single', 'major, ~85 %' or 'mixture' for the narrow column of the triage lists."""
    low = text.lower()
    if low.startswith("single"):
        return "single"
    if low.startswith("major"):
        pct = re.search(r"(\d+)\s*%", text)
        return f"major, ~{pct.group(1)} %" if pct else "major"
    return text


def _triage_list(lines: list[WellLine], *, empty: str, purity: bool, kind: str) -> str:
    if not lines:
        return f'<p class="muted">{escape(empty)}</p>'
    items = []
    for ln in lines:
        what = ln.concern or ln.next_step or ln.verdict
        # Only hits are named in the lists (a line of 'inactive' would bury them); the table has every readout.
        act = _activity_cell(ln) if ln.activity is not None and ln.activity.active else ""
        items.append(
            f'<li data-well="{escape(ln.well)}"><a href="#well-{escape(ln.well)}"><b>{escape(ln.well)}</b></a>'
            f'<span title="{escape(ln.formula)}">{escape(ln.name or "–")}</span>'
            f"<span>{_badge(ln.verdict)}</span>"
            + (f'<span class="small">{_tip(_short_purity(ln.purity) or "purity –", ln.purity or ln.purity_detail or ("purity call of the validation" if ln.purity else "no purity call"))}</span>' if purity else "")
            + f'<span class="num">{_tip(ln.amount or "–", ln.amount_detail)}</span>'
            f'<span class="why"><span class="concern">{escape(what)}</span> {act} {_tip(ln.reason, ln.reason_detail)}</span></li>'
        )
    return f'<ol class="triage {kind}{"" if purity else " nopurity"}">' + "".join(items) + "</ol>"


_TABLE_HEAD = (
    ("Well", "well"),
    ("Best candidate", "text"),
    ("Verdict", "rank"),
    ("Purity", "text"),
    ("H (as judged)", "num"),
    ("Amount", "num"),
    ("Bioassay", "num"),
    ("Known?", "text"),
    ("Next step", "text"),
    ("Why", "text"),
)


def _table(lines: dict[str, WellLine], names: list[str], pending: set[str]) -> str:
    """The sortable table; a column no well has data for (purity, assay, known compounds) is left out."""
    rank = {v: i for i, v in enumerate(list(VERDICTS) + ["pending"])}
    shown = {
        "Purity": any(ln.purity for ln in lines.values()),
        "Bioassay": any(ln.activity is not None for ln in lines.values()),
        "Known?": any(ln.known for ln in lines.values()),
    }
    rows = []
    for w in names:
        ln = lines.get(w)
        if ln is None:
            cells = {label: "<td></td>" for label, _ in _TABLE_HEAD}
            cells["Well"] = f'<td data-sort="{_well_sort_key(w)}"><a href="#well-{escape(w)}">{escape(w)}</a></td>'
            cells["Verdict"] = f'<td data-sort="{rank["pending"]}">{_badge("pending")}</td>'
            cells["Why"] = '<td class="why muted">no result yet</td>'
            rows.append(f'<tr data-well="{escape(w)}" data-groups="pending">' + "".join(v for k, v in cells.items() if shown.get(k, True)) + "</tr>")
            continue
        groups = [ln.category, ln.concern.replace(" ", "-") if ln.concern else ""]
        if ln.activity is not None and ln.activity.active:
            groups.append("active")
        act_sort = "" if ln.activity is None else f"{ln.activity.value:.6g}"
        count_sort = ln.count.split(" ")[0] if ln.count and ln.count[0].isdigit() else ""
        cells = {
            "Well": f'<td data-sort="{_well_sort_key(w)}"><a href="#well-{escape(w)}">{escape(w)}</a></td>',
            "Best candidate": f'<td title="{escape(ln.formula)}">{escape(ln.name)}</td>',
            "Verdict": f'<td data-sort="{rank.get(ln.verdict, 99)}">{_badge(ln.verdict)}</td>',
            "Purity": f"<td>{_tip(ln.purity, ln.purity_detail)}</td>",
            "H (as judged)": f'<td class="num" data-sort="{escape(count_sort)}">{_tip(ln.count, ln.count_detail)}</td>',
            "Amount": f'<td class="num" data-sort="{"" if ln.amount_ug is None else f"{ln.amount_ug:.6g}"}">{_tip(ln.amount, ln.amount_detail)}</td>',
            "Bioassay": f'<td class="num" data-sort="{act_sort}">{_activity_cell(ln)}</td>',
            "Known?": f"<td>{escape(ln.known)}</td>",
            "Next step": f"<td>{_tip(ln.next_step, ln.next_detail)}</td>",
            "Why": f'<td class="why">{_tip(ln.reason, ln.reason_detail)}</td>',
        }
        rows.append(f'<tr data-well="{escape(w)}" data-groups="{escape(" ".join(g for g in groups if g))}">'
                    + "".join(v for k, v in cells.items() if shown.get(k, True)) + "</tr>")
    head = "".join(f"<th>{escape(label)}</th>" for label, _ in _TABLE_HEAD if shown.get(label, True))
    return f'<table class="sortable wells" id="wells"><thead><tr>{head}</tr></thead><tbody>{"".join(rows)}</tbody></table>'


def _candidates_table(result: WellResult) -> str:
    if not result.candidates:
        return '<p class="muted">no candidates: the manifest names none and there is no MS feature</p>'
    checks_by_key = {str(ch.get("key")): ch for ch in result.checks}
    rows = []
    for c in sorted(result.candidates, key=lambda c: (checks_by_key.get(str(c.get("key")), {}).get("rank") or 1e9)):
        ch = checks_by_key.get(str(c.get("key")), {})
        if c.get("kind") == "structure":
            what_html = f"{escape(str(c.get('name', '')))} <span class=\"muted small\">{escape(str(c.get('formula') or ''))}</span>"
        else:
            what_html = escape(str(c.get("formula") or ""))
        reasons = ch.get("reasons") or []
        if isinstance(reasons, str):
            reasons = [reasons]
        first = escape(display_units(str(reasons[0]))) if reasons else ('–' if ch else '<span class="muted">not checked</span>')
        more = "".join(f"<li>{escape(display_units(str(r)))}</li>" for r in reasons[1:])
        if more:
            first += f'<details><summary class="small muted">{len(reasons) - 1} more</summary><ul class="small">{more}</ul></details>'
        if c.get("problem"):
            first = escape(str(c["problem"])) + "<br>" + first
        err = c.get("error_ppm")
        rows.append(
            "<tr>"
            f"<td>{_fmt(ch.get('rank'))}</td><td>{what_html}</td><td>{escape(str(c.get('source', '')))}</td>"
            f"<td>{'–' if err is None else escape(f'{float(err):+.1f} ppm')}</td>"
            f"<td>{_fmt(c.get('rdbe'), 1)}</td>"
            f"<td>{_fmt(ch.get('counted_h'))}</td>"
            f"<td>{_badge(str(ch['verdict'])) if ch.get('verdict') else '–'}</td><td>{first}</td>"
            "</tr>"
        )
    head = "<tr><th>Rank</th><th>Candidate</th><th>From</th><th>Mass error</th><th>RDBE</th><th>H counted</th><th>Check</th><th>Reasons</th></tr>"
    return f"<table class=\"small\"><thead>{head}</thead><tbody>{''.join(rows)}</tbody></table>"


def _regions_table(result: WellResult) -> str:
    if not result.regions:
        return ""
    rows = "".join(
        f"<tr><td>{_fmt(r.get('start_ppm'), 3)}–{_fmt(r.get('end_ppm'), 3)}</td><td>{_fmt(r.get('peak_ppm'), 3)}</td>"
        f"<td>{_fmt(r.get('integral'), 4)}</td><td>{_fmt(r.get('h'), 2)}</td><td>{escape(str(r.get('flag') or 'counted'))}</td>"
        f"<td>{escape(str(r.get('label') or ''))}</td></tr>"
        for r in result.regions
    )
    return ('<details><summary class="small">Integration regions</summary><table class="small"><thead><tr><th>Range (ppm)</th><th>Peak (ppm)</th>'
            f"<th>Integral</th><th>H</th><th>Kind</th><th>Label</th></tr></thead><tbody>{rows}</tbody></table></details>")


def _spectrum_block(result: WellResult, line: WellLine, index: int) -> str:
    if result.trace is None:
        return ""
    proc = result.processing or {}
    ref = proc.get("reference") or {}
    reference = {"name": ref.get("name"), "ppm": ref.get("ppm")} if ref.get("ppm") is not None and ref.get("kind") not in (None, "none") else None
    predicted = []
    if line.smiles:
        from nmrcheck.report.assignment import predicted_environments

        predicted = predicted_environments(line.smiles, proc.get("solvent"))
    svg = spectrum_svg(result.trace.first_ppm, result.trace.last_ppm, result.trace.values, result.regions,
                       uid=f"w{index}", reference=reference, predicted=predicted)
    tools = ('<div class="tools"><span class="muted">drag across the spectrum to zoom; double-click for the whole range</span>'
             '<button type="button" data-act="all">whole range</button><button type="button" data-act="in">zoom in</button>'
             '<button type="button" data-act="out">zoom out</button><button type="button" data-act="left" title="toward higher ppm">&#9664;</button>'
             '<button type="button" data-act="right" title="toward lower ppm">&#9654;</button>')
    if predicted:
        tools += f'<label><input type="checkbox" class="show-predicted"> predicted shifts of {escape(line.name)}</label>'
    tools += "</div>"
    left_out = sorted({f"{r.get('label') or r.get('flag')} {float(r.get('peak_ppm') or r['start_ppm']):.2f}" for r in result.regions if r.get("flag")})
    count = result.count or {}
    caption = (f'<p class="caption"><span class="swatch" style="background:{SPECTRUM_INK["counted"]}33"></span> counted, with the spectrum\'s own proton count'
               + (f" ({float(count['total_h']):.1f} H in all)" if count.get("total_h") is not None else "")
               + f' and running integrals (<span style="color:{SPECTRUM_INK["integral"]}">green</span>); '
               + f'<span class="swatch" style="background:{SPECTRUM_INK["flagged"]}55"></span> not counted'
               + (f": {escape(', '.join(left_out))}" if left_out else "")
               + (f"; dashed line: {escape(str(ref.get('name')))} set the axis" if reference else "")
               + ". The vertical scale follows the compound's tallest signal; taller solvent lines run off the top.</p>")
    return f'<div class="spectrum-box">{tools}{svg}</div>{caption}'


def _well_section(result: WellResult, line: WellLine, index: int, history_len: int, nmredata: str | None) -> str:
    spec = result.spec or {}
    proc = result.processing or {}
    summary = (f'<b>{escape(result.well)}</b> · {escape(line.name or "no candidate")} · {_badge(result.verdict)}'
               + (f" · {escape(line.amount)}" if line.amount else "")
               + (f" · {_activity_cell(line)}" if line.activity is not None else "")
               + (f' · <span class="muted">{escape(line.reason)}</span>' if line.reason else ""))
    out = [f'<details class="well" id="well-{escape(result.well)}"><summary>{summary}</summary>']
    if result.error:
        out.append(f'<div class="error">{escape(result.error)}</div>')
    out.append(_spectrum_block(result, line, index))
    pairs = [("Recording", escape(result.spectrum_path or str(spec.get("spectrum", "–"))))]
    if spec.get("notes"):
        pairs.append(("Notes", escape(str(spec["notes"]))))
    if line.count:
        pairs.append(("Protons", escape(f"{line.count} ({line.count_detail})" if line.count_detail else line.count)))
    if line.purity:
        pairs.append(("Purity", escape(line.purity + (f" ({line.purity_detail})" if line.purity_detail else ""))))
    if line.amount_detail:
        pairs.append(("Amount", escape(line.amount_detail)))
    if line.next_step:
        pairs.append(("Next step", escape(f"{line.next_step}: {line.next_detail}" if line.next_detail else line.next_step)))
    if line.known or line.known_detail:
        text = ": ".join(t for t in (line.known, line.known_detail) if t)
        pairs.append(("Known compounds", escape(text)))
    if line.related:
        pairs.append(("Related wells (MS/MS)", " ".join(f'<a href="#well-{escape(w)}">{escape(w)}</a>' for w in line.related)
                      + (f' <span class="muted">({escape(line.related_note)})</span>' if line.related_note else "")))
    lcms = result.lcms if isinstance(getattr(result, "lcms", None), Mapping) else None
    if lcms and lcms.get("features") is not None:
        feats = lcms.get("features") or []
        top = ", ".join(f"M {float(f['neutral_mass']):.4f} ({100 * float(f.get('share') or 0):.0f} %)" for f in feats[:3] if f.get("neutral_mass") is not None)
        pairs.append(("LC-MS", escape(f"{len(feats)} feature(s) in the collection window, {lcms.get('major_features', '?')} major" + (f": {top}" if top else ""))))
    if line.activity is not None:
        pairs.append(("Bioassay", _activity_cell(line)))
    if proc:
        ref = proc.get("reference") or {}
        phase = proc.get("phase") or {}
        shared = (proc.get("options") or {}).get("shared_p1")
        plate_p1 = f" (first order drawn to the plate's shared {_fmt(shared[0], 1)}°)" if isinstance(shared, (list, tuple)) and shared else ""
        pairs.append(("Processing", f"SNR {_fmt(proc.get('snr'), 0)}; solvent {_fmt(proc.get('solvent'))}; axis set by {_fmt(ref.get('name'))} ({_fmt(ref.get('kind'))}); "
                                    f"phase {_fmt(phase.get('p0_deg'), 1)}° / {_fmt(phase.get('p1_deg'), 1)}°{plate_p1}; "
                                    f"{_fmt(proc.get('points'))} points at {_fmt(proc.get('spectrometer_mhz'), 2)} MHz"))
    feature = result.ms_feature or {}
    if feature:
        ions = "; ".join(f"m/z {float(mz):.5f} {ion}" for mz, ion in feature.get("ions", []))
        iso = feature.get("isotopes")
        pairs.append(("MS feature", escape(ions) + (f"; isotopes {escape(', '.join(f'{v:g}' for v in iso))}" if iso else "")
                      + (f"; RT {_fmt(feature.get('rt_min'), 2)} min" if feature.get("rt_min") is not None else "")))
    if nmredata:
        pairs.append(("NMReDATA", f'<a href="{escape(nmredata)}">{escape(nmredata)}</a> (observed signals, assignment proposed from estimated shifts)'))
    timing = sum(result.timings.values()) if result.timings else 0.0
    pairs.append(("Run", f"{timing:.2f} s; nmrcheck {escape(result.software_version)}; options {escape(result.options_hash)}; {history_len} recorded result(s)"))
    out.append(_kv(pairs))
    warnings = list(proc.get("warnings") or []) + list(result.notes)
    if warnings:
        out.append('<ul class="small">' + "".join(f"<li>{escape(display_units(user_citation(str(w))))}</li>" for w in warnings) + "</ul>")
    if result.status in ("done", "empty"):
        out.append(_candidates_table(result))
    out.append(_regions_table(result))
    out.append("</details>")
    return "".join(out)


def render_plate_report(
    results: Mapping[str, WellResult],
    *,
    layout: str = "96",
    wells: list[str] | None = None,
    title: str = "Plate screening report",
    subtitle: str | None = None,
    run: Mapping[str, Any] | None = None,
    history_counts: Mapping[str, int] | None = None,
    assay: Mapping[str, AssayReadout] | None = None,
    nmredata: Mapping[str, str] | None = None,
) -> str:
    """The report page as one HTML string.

    Parameters
    ----------
    results
        Current result per well.
    layout
        ``'96'`` or ``'384'``: the plate drawn.
    wells
        Wells of the manifest (wells without a result are shown as pending).
    assay
        Bioassay readouts by well (optional); active wells lead the triage lists.
    nmredata
        Relative link of each well's NMReDATA file (optional).
    """
    plate = layout_named(layout)
    names = sorted(set(wells or []) | set(results), key=_well_sort_key)
    assay = dict(assay or {})
    nmredata = dict(nmredata or {})
    lines = {w: well_line(r, assay.get(w)) for w, r in results.items()}
    attention, ready = triage(results, assay)
    verdicts = {w: (results[w].verdict if w in results else "pending") for w in names}
    tips = {}
    for w in names:
        ln = lines.get(w)
        if ln is not None:
            bits = [ln.name, ln.amount, activity_text(ln.activity), ln.concern or ln.next_step]
            tips[w] = " · ".join(b for b in bits if b)[:140]
    counts = {v: sum(1 for x in verdicts.values() if x == v) for v in list(VERDICTS) + ["pending"]}
    history_counts = history_counts or {}
    run = dict(run or {})
    activity = {w: a.active for w, a in assay.items() if w in verdicts}
    n_active = sum(1 for v in activity.values() if v)

    body = [f'<header id="top"><h1>{escape(title)}</h1>']
    meta = [f"{len(names)} wells", f"generated {time.strftime('%Y-%m-%d %H:%M')}", f"nmrcheck {__version__}"]
    if run.get("run_id"):
        meta.append(f"run {run.get('run_id')} ({run.get('status')})")
    if assay:
        meta.append(f"{len(assay)} assay readouts, {n_active} active")
    body.append(f'<p class="muted small">{escape(subtitle) + " · " if subtitle else ""}{escape(" · ".join(meta))}</p>')
    body.append(f'<p class="caution">{escape(CAUTIONS[0])} <a href="#cautions">All cautions</a>.</p></header>')

    body.append('<div class="first"><section><h2>Plate</h2>')
    body.append(svg_defs())
    body.append(plate_map_svg(plate.row_letters, plate.columns, verdicts, tips, activity))
    body.append(legend_html(with_activity=bool(assay)))
    body.append('<p class="tally">' + "".join(f"<span>{_badge(v)} {n}</span>" for v, n in counts.items() if n) + "</p></section>")
    body.append(f'<section><h2 id="attention">Needs your attention ({len(attention)})</h2>')
    with_purity = any(ln.purity for ln in lines.values())
    body.append(_triage_list(attention, empty="nothing: every screened well is ready for its next step", purity=with_purity, kind="attention"))
    body.append(f'<h2 id="ready">Ready for the next step ({len(ready)})</h2>')
    body.append(_triage_list(ready, empty="no well is consistent with enough material yet", purity=with_purity, kind="ready"))
    body.append("</section></div>")

    body.append('<h2 id="all-wells">All wells</h2>')
    body.append('<div class="filters"><label>Filter <input id="filter-text" type="search" placeholder="well, name, verdict, reason…"></label>'
                '<label>Show <select id="filter-group"><option value="">all wells</option><option value="attention">needs attention</option>'
                '<option value="ready">ready</option><option value="active">active in the assay</option><option value="mixture">mixtures</option>'
                '<option value="short-of-material">short of material</option><option value="pending">no result yet</option></select></label>'
                '<span class="muted">click a column to sort; hover a value for the details</span></div>')
    body.append(_table(lines, names, set(names) - set(results)))

    body.append('<h2 id="evidence">Evidence per well</h2><p class="muted small">Click a well to open its spectrum and checks.</p>')
    for i, w in enumerate(names):
        if w in results:
            body.append(_well_section(results[w], lines[w], i, history_counts.get(w, 1), nmredata.get(w)))
        else:
            body.append(f'<details class="well" id="well-{escape(w)}"><summary><b>{escape(w)}</b> · {_badge("pending")} · '
                        '<span class="muted">no result yet (recording not complete or not screened)</span></summary></details>')

    body.append('<footer><h2 id="cautions">Cautions</h2><ul>' + "".join(f"<li>{escape(c)}</li>" for c in CAUTIONS) + "</ul>")
    body.append('<p>The same results: <a href="results.csv">results.csv</a>, <a href="results.json">results.json</a>'
                + (", NMReDATA records in <a href=\"nmredata/\">nmredata/</a>" if nmredata else "") + ".</p></footer>")

    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
        f"<title>{escape(title)}</title><style>{_CSS}</style></head><body>"
        + "".join(body)
        + f"<script>{_JS}</script></body></html>\n"
    )


def _write_nmredata(out: Path, results: Mapping[str, WellResult], lines: Mapping[str, WellLine]) -> dict[str, str]:
    """One NMReDATA file per well with a structure and counted signals; returns relative links."""
    from nmrcheck.io.nmredata import write_nmredata
    from nmrcheck.report.assignment import nmredata_record

    links = {}
    folder = out / "nmredata"
    for w, r in results.items():
        ln = lines[w]
        if not ln.smiles or not r.regions or r.status != "done":
            continue
        proc = r.processing or {}
        try:
            text = nmredata_record(well=w, name=ln.name, smiles=ln.smiles, solvent=proc.get("solvent"),
                                   larmor_mhz=proc.get("spectrometer_mhz"), regions=r.regions)
        except ValueError as exc:
            log.warning("%s: no NMReDATA record (%s)", w, exc)
            continue
        folder.mkdir(exist_ok=True)
        write_nmredata(folder / f"{w}.nmredata.sdf", [text])
        links[w] = f"nmredata/{w}.nmredata.sdf"
    return links


def write_plate_report(
    out_dir: str | os.PathLike,
    *,
    title: str | None = None,
    subtitle: str | None = None,
    html_name: str = "report.html",
    assay: str | os.PathLike | None = None,
) -> Path:
    """Write ``report.html``, ``results.csv``, ``results.json`` and ``nmredata/`` from the results database in ``out_dir``.

    ``assay`` is a bioassay CSV (see :mod:`nmrcheck.io.assay`); it is checked, copied into
    ``out_dir`` as ``assay.csv`` and used by every later report of the folder.

    Returns the path of the HTML report.
    """
    out = Path(out_dir)
    if not (out / DATABASE_NAME).is_file():
        from nmrcheck.errors import InputFileError

        raise InputFileError(out, f"no {DATABASE_NAME} here: run 'nmrcheck plate run' with --out {out} first")
    readouts: dict[str, AssayReadout] = {}
    if assay is not None:
        readouts = read_assay(assay)
        write_assay(readouts.values(), out / ASSAY_FILE)
    elif (out / ASSAY_FILE).is_file():
        readouts = read_assay(out / ASSAY_FILE)
    with ResultsStore(out, readonly=True) as store:
        runs = store.runs()
        results = store.current()
        history_counts = {w: len(store.history(w)) for w in results}
    last = runs[-1] if runs else None
    layout = str(last.options.get("layout", "96")) if last else "96"
    wells = list(last.options.get("wells", [])) if last else []
    if any(w[0] > "H" or int(w[1:]) > 12 for w in list(results) + wells):
        layout = "384"
    run_info = {"run_id": last.run_id, "status": last.status, "manifest": last.manifest, "started_utc": last.started_utc, "finished_utc": last.finished_utc, "options": last.options} if last else {}
    off_plate = sorted(set(readouts) - set(results) - set(wells), key=_well_sort_key)
    if off_plate:
        log.warning("assay readouts for wells not on this plate ignored: %s", ", ".join(off_plate))
        readouts = {w: a for w, a in readouts.items() if w not in off_plate}
    lines = {w: well_line(r, readouts.get(w)) for w, r in results.items()}
    links = _write_nmredata(out, results, lines)
    html = render_plate_report(
        results,
        layout=layout,
        wells=wells,
        title=title or f"Plate screening report - {Path(last.manifest).name if last else out.name}",
        subtitle=subtitle,
        run=run_info,
        history_counts=history_counts,
        assay=readouts,
        nmredata=links,
    )
    # Exports first, the page that links to them last; each written whole or not at all.
    ordered = [results[w] for w in sorted(results, key=_well_sort_key)]
    write_csv(ordered, out / "results.csv", lines=lines)
    write_json(ordered, out / "results.json", run=run_info, lines=lines, assay=readouts)
    report = write_text_atomically(out / html_name, html)
    log.info("report written: %s", report)
    return report
