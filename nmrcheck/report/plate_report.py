"""The morning page of a plate run: one self-contained HTML file, plus CSV and JSON exports of the same results.

Everything is inline (styles, the small sorting script, SVG drawings): the file opens
offline and fetches nothing. Every piece of user-provided text is HTML-escaped.
"""

from __future__ import annotations

import json
import logging
import os
import time
from html import escape
from pathlib import Path
from typing import Any, Mapping

from nmrcheck import __version__
from nmrcheck.plate.manifest import layout_named
from nmrcheck.plate.results import VERDICTS, WellResult
from nmrcheck.plate.store import DATABASE_NAME, ResultsStore
from nmrcheck.report.plate_exports import CSV_COLUMNS, amount_text, recommendation_text, well_row, write_csv, write_json
from nmrcheck.report.plate_svg import VERDICT_STYLE, legend_html, plate_map_svg, spectrum_svg, svg_defs

__all__ = ["CAUTIONS", "render_plate_report", "write_plate_report"]

log = logging.getLogger("nmrcheck")

CAUTIONS = (
    "These results are screening aids, not identifications: a 'consistent' call means the spectrum "
    "does not contradict the candidate, not that the compound is proven.",
    "Deuterated solvents, extracts and fractions are handled under the laboratory's own safety rules.",
    "Decisions on what to isolate, discard or report rest with the responsible chemist and the local regulations.",
)

_TABLE_COLUMNS = (
    ("well", "Well"),
    ("verdict", "Verdict"),
    ("total_h", "H (total)"),
    ("integer_h", "H (integer)"),
    ("snr", "SNR"),
    ("solvent", "Solvent"),
    ("ms_feature", "MS feature"),
    ("named_candidates", "Named candidates"),
    ("best_formula", "Best formula (MS)"),
    ("amount", "Amount"),
    ("recommendation", "Recommendation"),
    ("notes", "Notes"),
)

_CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',Roboto,sans-serif;margin:1.2em auto;max-width:1200px;color:#1a1a1a;padding:0 1em}
h1{font-size:1.5em;margin-bottom:.2em} h2{font-size:1.2em;border-bottom:1px solid #ccc;padding-bottom:.2em;margin-top:1.6em}
h3{font-size:1.05em;margin:.2em 0}
.muted{color:#555} .cautions{border-left:5px solid #f0b040;background:#fff8e6;padding:.5em 1em;margin:1em 0}
.cautions li{margin:.2em 0}
.legend{list-style:none;padding:0;display:flex;flex-wrap:wrap;gap:.4em 1.2em;margin:.4em 0}
.legend li{display:flex;align-items:center;gap:.3em}
.counts span{display:inline-block;margin-right:1em}
table{border-collapse:collapse;font-size:.88em;margin:.5em 0}
th,td{border:1px solid #ccc;padding:.25em .45em;text-align:left;vertical-align:top}
th{background:#eef1f4} table.sortable th{cursor:pointer} table.sortable th:after{content:' \\2195';color:#888}
.badge{display:inline-block;border-radius:.8em;padding:0 .55em;font-weight:bold;border:1px solid #1a1a1a;white-space:nowrap}
section.well{border:1px solid #ddd;border-radius:6px;padding:.6em 1em;margin:1em 0}
.kv{display:grid;grid-template-columns:max-content 1fr;gap:.1em 1em;font-size:.9em}
.error{background:#f6eef8;border-left:4px solid #6a3d9a;padding:.4em .8em;white-space:pre-wrap;font-family:monospace;font-size:.85em}
svg.spectrum{max-width:100%;height:auto} svg.platemap{max-width:100%;height:auto}
@media print{section.well{page-break-inside:avoid}}
"""

_JS = """
(function(){
  var order = %s;
  function key(td){
    var v = td.getAttribute('data-sort'); if (v !== null) return v;
    return td.textContent.trim();
  }
  document.querySelectorAll('table.sortable').forEach(function(table){
    var ths = table.querySelectorAll('thead th');
    ths.forEach(function(th, col){
      th.addEventListener('click', function(){
        var body = table.tBodies[0];
        var rows = Array.prototype.slice.call(body.rows);
        var asc = th.getAttribute('data-dir') !== 'asc';
        ths.forEach(function(o){ o.removeAttribute('data-dir'); });
        th.setAttribute('data-dir', asc ? 'asc' : 'desc');
        rows.sort(function(a, b){
          var x = key(a.cells[col]), y = key(b.cells[col]);
          var nx = parseFloat(x), ny = parseFloat(y);
          var c = (!isNaN(nx) && !isNaN(ny)) ? nx - ny : x.localeCompare(y, undefined, {numeric: true});
          return asc ? c : -c;
        });
        rows.forEach(function(r){ body.appendChild(r); });
      });
    });
  });
})();
"""


def _well_sort_key(well: str) -> str:
    # Row letter then zero-padded column, so A2 sorts before A10.
    return f"{well[0]}{int(well[1:]):03d}"


def _badge(verdict: str) -> str:
    st = VERDICT_STYLE.get(verdict, VERDICT_STYLE["pending"])
    return f'<span class="badge" style="background:{st["fill"]};color:{st["ink"]}">{escape(st["letter"])} {escape(verdict)}</span>'


def _kv(pairs) -> str:
    return '<div class="kv">' + "".join(f"<div><b>{escape(k)}</b></div><div>{v}</div>" for k, v in pairs) + "</div>"


def _fmt(v: Any, digits: int = 2) -> str:
    if v is None or v == "":
        return "-"
    if isinstance(v, float):
        return escape(f"{v:.{digits}f}")
    return escape(str(v))


def _candidates_table(result: WellResult) -> str:
    if not result.candidates:
        return '<p class="muted">no candidates: the manifest names none and there is no MS feature</p>'
    checks_by_key = {str(ch.get("key")): ch for ch in result.checks}
    rows = []
    for c in result.candidates:
        ch = checks_by_key.get(str(c.get("key")), {})
        if c.get("kind") == "structure":
            what_html = f"{escape(str(c.get('name', '')))}<br><code>{escape(str(c.get('smiles', '')))}</code>"
        else:
            what_html = escape(str(c.get("formula") or ""))
        reasons = ch.get("reasons") or ch.get("reason") or []
        if isinstance(reasons, str):
            reasons = [reasons]
        reasons_html = "<br>".join(escape(str(r)) for r in reasons) or ("-" if ch else '<span class="muted">not checked</span>')
        if c.get("problem"):
            reasons_html = escape(str(c["problem"])) + "<br>" + reasons_html
        rules_failed = c.get("rules_failed") or []
        rows.append(
            "<tr>"
            f"<td>{escape(str(c.get('source', '')))}</td><td>{what_html}</td>"
            f"<td>{_fmt(c.get('neutral_mass'), 5)}</td><td>{_fmt(c.get('error_ppm'), 2)}</td>"
            f"<td>{_fmt(c.get('rdbe'), 1)}</td><td>{_fmt(c.get('rank'))}</td>"
            f"<td>{escape(', '.join(map(str, rules_failed))) or '-'}</td>"
            f"<td>{_fmt(ch.get('score'), 2)}</td>"
            f"<td>{_badge(str(ch['verdict'])) if ch.get('verdict') else '-'}</td><td>{reasons_html}</td>"
            "</tr>"
        )
    head = "<tr><th>From</th><th>Candidate</th><th>Neutral mass</th><th>Error (ppm)</th><th>RDBE</th><th>Rank</th><th>Rules failed</th><th>Score</th><th>Check</th><th>Reasons</th></tr>"
    return f"<table><thead>{head}</thead><tbody>{''.join(rows)}</tbody></table>"


def _regions_table(result: WellResult) -> str:
    if not result.regions:
        return ""
    rows = "".join(
        f"<tr><td>{_fmt(r.get('start_ppm'), 3)} - {_fmt(r.get('end_ppm'), 3)}</td><td>{_fmt(r.get('peak_ppm'), 3)}</td>"
        f"<td>{_fmt(r.get('integral'), 4)}</td><td>{_fmt(r.get('h'), 2)}</td><td>{escape(str(r.get('flag') or 'analyte'))}</td>"
        f"<td>{escape(str(r.get('label') or ''))}</td></tr>"
        for r in result.regions
    )
    return ("<details><summary>Integration regions</summary><table><thead><tr><th>Range (ppm)</th><th>Peak (ppm)</th>"
            f"<th>Integral</th><th>H</th><th>Kind</th><th>Label</th></tr></thead><tbody>{rows}</tbody></table></details>")


def _well_section(result: WellResult, index: int, history_len: int) -> str:
    spec = result.spec or {}
    proc = result.processing or {}
    count = result.count or {}
    out = [f'<section class="well" id="well-{escape(result.well)}"><h3>{escape(result.well)} {_badge(result.verdict)}</h3>']
    pairs = [("Status", escape(result.status)), ("Recording", escape(result.spectrum_path or spec.get("spectrum", "-")))]
    if spec.get("notes"):
        pairs.append(("Notes", escape(str(spec["notes"]))))
    if count:
        pairs.append(("Protons", f"{_fmt(count.get('total_h'), 1)} H (range {_fmt(count.get('total_h_low'), 1)}-{_fmt(count.get('total_h_high'), 1)}; "
                                 f"integer {_fmt(count.get('integer_h'))}; {escape(str(count.get('method', '')))})"))
    if proc:
        ref = proc.get("reference") or {}
        phase = proc.get("phase") or {}
        pairs.append(("Processing", f"SNR {_fmt(proc.get('snr'), 0)}; solvent {_fmt(proc.get('solvent'))}; referenced to {_fmt(ref.get('name'))} ({_fmt(ref.get('kind'))}); "
                                    f"phase {_fmt(phase.get('p0_deg'), 1)}&deg; / {_fmt(phase.get('p1_deg'), 1)}&deg; ({_fmt(phase.get('method'))}); "
                                    f"{_fmt(proc.get('points'))} points at {_fmt(proc.get('spectrometer_mhz'), 2)} MHz"))
    feature = result.ms_feature or {}
    if feature:
        ions = "; ".join(f"m/z {float(mz):.5f} {ion}" for mz, ion in feature.get("ions", []))
        iso = feature.get("isotopes")
        pairs.append(("MS feature", escape(ions) + (f"; isotopes {escape(', '.join(f'{v:g}' for v in iso))}" if iso else "")
                      + (f"; RT {_fmt(feature.get('rt_min'), 2)} min" if feature.get("rt_min") is not None else "")))
    if result.amount:
        a = result.amount
        text = amount_text(a) + (f" for {a['basis']}" if a.get("basis") else "")
        per = a.get("per_proton") or {}
        if per.get("reference"):
            text += f"; against {per['reference']}"
        pairs.append(("Amount", escape(text)))
    if result.recommendation:
        rec = result.recommendation
        items = "".join(f"<li>{escape(str(r))}</li>" for r in rec.get("reasons") or [])
        more = f" ({rec['scans_needed']} scans, {rec['hours_needed']:.1f} h for SNR {rec.get('target_snr', 0):g})" if rec.get("scans_needed") and rec.get("hours_needed") is not None else ""
        pairs.append(("Recommendation", f"{escape(recommendation_text(rec))}{escape(more)}" + (f"<ul>{items}</ul>" if items else "")))
    timing = sum(result.timings.values()) if result.timings else 0.0
    pairs.append(("Run", f"{timing:.2f} s; software {escape(result.software_version)}; options {escape(result.options_hash)}; {history_len} recorded result(s)"))
    out.append(_kv(pairs))
    if result.error:
        out.append(f'<div class="error">{escape(result.error)}</div>')
    warnings = list(proc.get("warnings") or []) + list(result.notes)
    if warnings:
        out.append("<ul>" + "".join(f"<li>{escape(str(w))}</li>" for w in warnings) + "</ul>")
    if result.trace is not None:
        out.append(spectrum_svg(result.trace.first_ppm, result.trace.last_ppm, result.trace.values, result.regions, uid=f"w{index}"))
    out.append(_regions_table(result))
    if result.status in ("done", "empty"):
        out.append(_candidates_table(result))
    out.append('<p><a href="#top">back to the plate map</a></p></section>')
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
    """
    plate = layout_named(layout)
    names = sorted(set(wells or []) | set(results), key=_well_sort_key)
    verdicts = {w: (results[w].verdict if w in results else "pending") for w in names}
    tips = {w: str((results[w].spec or {}).get("notes", ""))[:80] for w in names if w in results}
    counts = {v: sum(1 for x in verdicts.values() if x == v) for v in list(VERDICTS) + ["pending"]}
    history_counts = history_counts or {}
    run = dict(run or {})

    body = [f'<h1 id="top">{escape(title)}</h1>']
    if subtitle:
        body.append(f'<p class="muted">{escape(subtitle)}</p>')
    body.append(
        f'<p class="muted">{len(names)} wells; generated {escape(time.strftime("%Y-%m-%d %H:%M"))} by nmrcheck {escape(__version__)}'
        + (f"; run {escape(str(run.get('run_id')))} ({escape(str(run.get('status')))})" if run.get("run_id") else "")
        + "</p>"
    )
    body.append('<div class="cautions"><b>Cautions</b><ul>' + "".join(f"<li>{escape(c)}</li>" for c in CAUTIONS) + "</ul></div>")
    body.append('<p class="counts">' + "".join(f"<span>{_badge(v)} {n}</span>" for v, n in counts.items() if n) + "</p>")
    body.append("<h2>Plate map</h2>")
    body.append(svg_defs())
    body.append(plate_map_svg(plate.row_letters, plate.columns, verdicts, tips))
    body.append(legend_html())
    body.append('<p class="muted">Click a well for its evidence. Wells outside the manifest are drawn as dashed outlines.</p>')

    body.append("<h2>Wells</h2>")
    head = "".join(f"<th>{escape(label)}</th>" for _, label in _TABLE_COLUMNS)
    rank = {v: i for i, v in enumerate(list(VERDICTS) + ["pending"])}
    rows = []
    for w in names:
        if w in results:
            cells = well_row(results[w])
        else:
            cells = {k: "" for k in CSV_COLUMNS}
            cells.update({"well": w, "verdict": "pending"})
        tds = []
        for key, _ in _TABLE_COLUMNS:
            if key == "well":
                tds.append(f'<td data-sort="{_well_sort_key(w)}"><a href="#well-{escape(w)}">{escape(w)}</a></td>')
            elif key == "verdict":
                tds.append(f'<td data-sort="{rank.get(cells["verdict"], 99)}">{_badge(cells["verdict"])}</td>')
            else:
                tds.append(f"<td>{escape(cells.get(key, ''))}</td>")
        rows.append(f'<tr data-well="{escape(w)}">{"".join(tds)}</tr>')
    body.append(f'<table class="sortable" id="wells"><thead><tr>{head}</tr></thead><tbody>{"".join(rows)}</tbody></table>')
    body.append('<p class="muted">The same results: <a href="results.csv">results.csv</a>, <a href="results.json">results.json</a>.</p>')

    body.append("<h2>Evidence per well</h2>")
    for i, w in enumerate(names):
        if w in results:
            body.append(_well_section(results[w], i, history_counts.get(w, 1)))
        else:
            body.append(f'<section class="well" id="well-{escape(w)}"><h3>{escape(w)} {_badge("pending")}</h3><p class="muted">no result yet (recording not complete or not screened)</p></section>')

    js = _JS % json.dumps(list(VERDICTS))
    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
        f"<title>{escape(title)}</title><style>{_CSS}</style></head><body>"
        + "".join(body)
        + f"<script>{js}</script></body></html>\n"
    )


def write_plate_report(
    out_dir: str | os.PathLike,
    *,
    title: str | None = None,
    subtitle: str | None = None,
    html_name: str = "report.html",
) -> Path:
    """Write ``report.html``, ``results.csv`` and ``results.json`` from the results database in ``out_dir``.

    Returns the path of the HTML report.
    """
    out = Path(out_dir)
    if not (out / DATABASE_NAME).is_file():
        from nmrcheck.errors import InputFileError

        raise InputFileError(out, f"no {DATABASE_NAME} here: run 'nmrcheck plate run' with --out {out} first")
    with ResultsStore(out) as store:
        runs = store.runs()
        results = store.current()
        history_counts = {w: len(store.history(w)) for w in results}
    last = runs[-1] if runs else None
    layout = str(last.options.get("layout", "96")) if last else "96"
    wells = list(last.options.get("wells", [])) if last else []
    if any(w[0] > "H" or int(w[1:]) > 12 for w in list(results) + wells):
        layout = "384"
    run_info = {"run_id": last.run_id, "status": last.status, "manifest": last.manifest, "started_utc": last.started_utc, "finished_utc": last.finished_utc, "options": last.options} if last else {}
    html = render_plate_report(
        results,
        layout=layout,
        wells=wells,
        title=title or f"Plate screening report - {Path(last.manifest).name if last else out.name}",
        subtitle=subtitle,
        run=run_info,
        history_counts=history_counts,
    )
    report = out / html_name
    report.write_text(html, encoding="utf-8")
    ordered = [results[w] for w in sorted(results, key=_well_sort_key)]
    write_csv(ordered, out / "results.csv")
    write_json(ordered, out / "results.json", run=run_info)
    log.info("report written: %s", report)
    return report
