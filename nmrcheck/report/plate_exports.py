"""CSV and JSON exports of a plate's results: the same records the HTML report shows.

The CSV is safe to open in a spreadsheet: a text cell that a spreadsheet would take for a
formula (starting with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return) gets a leading
single quote, following the OWASP guidance on CSV injection; numbers, negative ones
included, are written as numbers. Both files are written whole or not at all (a temporary
file renamed over the old one).
"""

from __future__ import annotations

import csv
import io
import json
import os
import re
from pathlib import Path
from typing import Any, Iterable, Mapping

from nmrcheck.data import user_citations
from nmrcheck.io.atomic import write_text_atomically
from nmrcheck.plate.results import WellResult
from nmrcheck.report.amount_text import amount_line
from nmrcheck.report.triage import WellLine, well_line

__all__ = ["CSV_COLUMNS", "amount_text", "recommendation_text", "spreadsheet_safe", "well_row", "write_csv", "write_json"]

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def spreadsheet_safe(cell: str) -> str:
    """``cell`` with a leading ``'`` when a spreadsheet would read it as a formula (OWASP, CSV injection).

    A plain decimal number (``-3.2``, ``+1e-5``) is left alone: a spreadsheet reads it as the
    number it is, which is what the column means; anything else starting with ``=``, ``+``,
    ``-``, ``@``, a tab or a carriage return is shown as text.
    """
    if not cell or not cell.startswith(_FORMULA_START):
        return cell
    if _PLAIN_NUMBER.fullmatch(cell):
        return cell
    return "'" + cell

CSV_COLUMNS = (
    "well",
    "verdict",
    "status",
    "category",
    "concern",
    "name",
    "smiles",
    "purity",
    "h_as_judged",
    "reason",
    "next_step",
    "assay",
    "assay_value",
    "assay_unit",
    "assay_threshold",
    "active",
    "known",
    "related_wells",
    "total_h",
    "total_h_low",
    "total_h_high",
    "integer_h",
    "snr",
    "solvent",
    "reference",
    "ms_feature",
    "best_formula",
    "best_formula_error_ppm",
    "named_candidates",
    "amount",
    "amount_nmol",
    "amount_ug",
    "amount_conc_mM",
    "amount_uncertainty_pct",
    "amount_method",
    "amount_basis",
    "recommendation",
    "recommendation_experiment",
    "scans_needed",
    "hours_needed",
    "error",
    "notes",
    "spectrum_path",
    "options_hash",
    "software_version",
    "seconds",
)


def _fmt(v: Any, digits: int = 2) -> str:
    if v is None:
        return ""
    if isinstance(v, float):
        return f"{v:.{digits}f}"
    return str(v)


def _num(v: Any) -> str:
    """A number to four significant digits (amounts span orders of magnitude)."""
    return "" if v is None else f"{float(v):.4g}"


def amount_text(amount: Mapping[str, Any] | None) -> str:
    """'206 nmol, 31.3 ug, 5.89 mM +- 20.3 % (solvent residual)' from a well's amount record; '' when there is none."""
    # Records written before amounts had this shape carry no headline figures: show nothing rather than guess.
    if not amount or "uncertainty_pct" not in amount:
        return ""
    return amount_line(amount)


def recommendation_text(rec: Mapping[str, Any] | None) -> str:
    """'go (1H-13C HSQC)' from a well's recommendation record; '' when there is none."""
    if not rec:
        return ""
    return f"{rec.get('decision', '')} ({rec.get('experiment', '')})"


def well_row(result: WellResult, line: WellLine | None = None) -> dict[str, str]:
    """One flat row of text cells for a well (the CSV export)."""
    line = line or well_line(result)
    a = line.activity
    count = result.count or {}
    proc = result.processing or {}
    hrms = [c for c in result.candidates if c.get("kind") == "formula" and "hrms" in str(c.get("source", ""))]
    best = min(hrms, key=lambda c: c.get("rank") or 1e9) if hrms else None
    named = [c.get("formula") or c.get("name") or c.get("smiles") for c in result.candidates if str(c.get("source", "")).startswith("manifest")]
    feature = result.ms_feature or {}
    amount = result.amount or {}
    rec = result.recommendation or {}
    return {
        "well": result.well,
        "verdict": result.verdict,
        "status": result.status,
        "category": line.category,
        "concern": line.concern,
        "name": line.name,
        "smiles": line.smiles,
        "purity": line.purity,
        "h_as_judged": line.count,
        "reason": line.reason_detail or line.reason,
        "next_step": line.next_step,
        "assay": a.assay if a else "",
        "assay_value": _num(a.value) if a else "",
        "assay_unit": a.unit if a else "",
        "assay_threshold": _num(a.threshold) if a else "",
        "active": "" if a is None or a.active is None else ("yes" if a.active else "no"),
        "known": line.known,
        "related_wells": " ".join(line.related),
        "total_h": _fmt(count.get("total_h"), 1),
        "total_h_low": _fmt(count.get("total_h_low"), 1),
        "total_h_high": _fmt(count.get("total_h_high"), 1),
        "integer_h": _fmt(count.get("integer_h")),
        "snr": _fmt(proc.get("snr"), 0),
        "solvent": _fmt(proc.get("solvent")),
        "reference": _fmt((proc.get("reference") or {}).get("name")),
        "ms_feature": "; ".join(f"{mz:.4f} {ion}" for mz, ion in feature.get("ions", [])),
        "best_formula": _fmt(best.get("formula")) if best else "",
        "best_formula_error_ppm": _fmt(best.get("error_ppm")) if best else "",
        "named_candidates": "; ".join(str(n) for n in named if n),
        "amount": line.amount_detail,
        "amount_nmol": _num(amount.get("nmol")),
        "amount_ug": _num(amount.get("ug")),
        "amount_conc_mM": _num(amount.get("conc_mM")),
        "amount_uncertainty_pct": _num(amount.get("uncertainty_pct")),
        "amount_method": _fmt(amount.get("method")),
        "amount_basis": _fmt(amount.get("basis")),
        "recommendation": _fmt(rec.get("decision")),
        "recommendation_experiment": _fmt(rec.get("experiment")),
        "scans_needed": _fmt(rec.get("scans_needed")),
        "hours_needed": _num(rec.get("hours_needed")),
        "error": (result.error or "").splitlines()[0] if result.error else "",
        "notes": str((result.spec or {}).get("notes", "")),
        "spectrum_path": _fmt(result.spectrum_path),
        "options_hash": result.options_hash,
        "software_version": result.software_version,
        "seconds": _fmt(sum(result.timings.values()), 2),
    }


def write_csv(results: Iterable[WellResult], path: str | os.PathLike, *, lines: Mapping[str, WellLine] | None = None) -> Path:
    """One row per well, columns :data:`CSV_COLUMNS` (UTF-8: units are written µg, µL, ±)."""
    lines = lines or {}
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=list(CSV_COLUMNS))
    writer.writeheader()
    for r in results:
        writer.writerow({k: spreadsheet_safe(v) for k, v in well_row(r, lines.get(r.well)).items()})
    return write_text_atomically(path, buffer.getvalue())


def _triage_dict(line: WellLine) -> dict[str, Any]:
    return {
        "category": line.category,
        "concern": line.concern,
        "name": line.name,
        "formula": line.formula,
        "smiles": line.smiles,
        "purity": line.purity,
        "h_as_judged": line.count,
        "h_detail": line.count_detail,
        "amount_ug": line.amount_ug,
        "next_step": line.next_step,
        "reason": line.reason_detail or line.reason,
        "known": line.known,
        "related_wells": list(line.related),
    }


def write_json(results: Iterable[WellResult], path: str | os.PathLike, *, run: Mapping[str, Any] | None = None,
               lines: Mapping[str, WellLine] | None = None, assay: Mapping[str, Any] | None = None) -> Path:
    """Every field of every well's result (without the display trace), its triage line and assay readout, and the run."""
    lines = lines or {}
    wells = []
    for r in results:
        d = r.as_dict()
        line = lines.get(r.well) or well_line(r, (assay or {}).get(r.well))
        d["triage"] = _triage_dict(line)
        d["assay"] = line.activity.as_dict() if line.activity is not None else None
        wells.append(d)
    doc = {"run": dict(run or {}), "wells": wells}
    return write_text_atomically(path, json.dumps(user_citations(json.loads(json.dumps(doc, default=str))), indent=1, sort_keys=True))
