"""Readable text summary of one processed spectrum."""

from __future__ import annotations

from typing import Any

from nmrcheck.report.amount_text import amount_line

__all__ = ["format_processed"]

CAUTION = "Screening aid, not an identification: decisions rest with the responsible chemist."


def format_processed(summary: dict[str, Any]) -> str:
    """The summary of :func:`nmrcheck.processing.summary.processed_summary` as an aligned text block."""
    ref = summary["reference"]
    ph = summary["phase"]
    lines = [
        f"source      {summary['source']}",
        f"solvent     {summary['solvent'] or 'unknown'}   {summary['spectrometer_mhz']:.2f} MHz",
        f"reference   {ref['name']} set to {ref['ppm']:.3f} ppm" + (f" (found at {ref['found_ppm']:.3f})" if ref["found_ppm"] is not None else ""),
        f"phase       p0 {ph['p0_deg']:+.1f} deg, p1 {ph['p1_deg']:+.1f} deg ({ph['method']}, {ph['peaks_used']} signals)",
        f"SNR         {summary['snr']:.0f}",
    ]
    if summary["total_h"] is not None:
        lo, hi = summary["total_h_range"]
        lines.append(f"protons     {summary['total_h']:.1f} H (range {lo:.1f}-{hi:.1f}; {summary['integer_h']} by integer regions; {summary['count_method']})")
        if summary.get("ambiguous"):
            totals = " or ".join(f"{t:.0f}" for t in summary.get("alternative_totals") or [])
            lines.append(f"            ambiguous: the integrals fit {totals} H about equally")
        if summary.get("lower_bound"):
            lines.append("            at least: a one-proton multiplet would stay under the detection limit")
    else:
        lines.append("protons     no analyte signal above the noise threshold")
    lines.append("")
    lines.append("  from ppm   to ppm     integral        H  note")
    for r in summary["regions"]:
        h = "" if r["h"] is None else f"{r['h']:7.2f}"
        note = r["label"] or r["flag"] or ""
        if r["flag"]:
            note = f"[{r['flag']}] {r['label'] or ''}".strip()
        lines.append(f"  {r['start_ppm']:8.3f} {r['end_ppm']:8.3f} {r['integral']:12.4g} {h:>8}  {note}")
    if summary.get("amount"):
        a = summary["amount"]
        lines.append("")
        lines.append(f"amount      per {a['per']}: {amount_line(a, summary['recommendation'])}")
        lines.append(f"            against {a['reference']}")
        for w in a["warnings"]:
            lines.append(f"warning: {w}")
    for w in summary["warnings"]:
        lines.append(f"warning: {w}")
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)
