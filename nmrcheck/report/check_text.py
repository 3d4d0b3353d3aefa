"""Text and JSON renderings of the validator's verdicts for the ``check`` command."""

from __future__ import annotations

import json
from collections.abc import Sequence

from nmrcheck.data import user_citations
from nmrcheck.report.amount_text import amount_line

__all__ = ["verdicts_text", "verdicts_json"]

_MARK = {"pass": "ok  ", "warn": "warn", "fail": "FAIL", "not-applicable": "n/a "}


def verdicts_text(verdicts: Sequence, problems: Sequence = (), *, evidence=None, amounts=None) -> str:
    """A readable report: one block per candidate, reasons strongest first, then skipped entries.

    ``amounts`` (a :class:`nmrcheck.quant.QuantResult` for the same candidates in the same
    order) adds each candidate's amount and go/no-go.
    """
    per = list(amounts.candidates) if amounts is not None else []
    lines = []
    if evidence is not None:
        ms = f"M = {evidence.ms.neutral_mass:.5f} u (+/- {evidence.ms.ppm:g} ppm)" if evidence.ms else "no MS feature"
        total = f"{evidence.total_h:.1f} H (self-consistent, {evidence.total_h_low:.1f}-{evidence.total_h_high:.1f})" if evidence.total_h is not None else "no count"
        lines.append(f"spectrum {evidence.source}: solvent {evidence.solvent or 'unknown'}, SNR {evidence.snr:.0f}, {total}; {ms}")
    if amounts is not None:
        lines.append(f"amount reference: {amounts.amount.reference}")
        for w in amounts.amount.warnings:
            lines.append(f"  warning: {w}")
    if lines:
        lines.append("")
    for i, v in enumerate(verdicts):
        c = v.candidate
        lines.append(f"#{v.rank} {c.label} ({c.formula.hill}): {v.verdict.upper()}  score {v.score:.2f}")
        if i < len(per):
            a, r = per[i]
            lines.append(f"    amount {a.n_h:g} H: {amount_line(a.as_dict(), r.as_dict())}")
        for r in v.reasons[:3]:
            lines.append(f"    - {r}")
        for chk in v.checks:
            lines.append(f"      [{_MARK[chk.status]}] {chk.name}: observed {chk.observed}; expected {chk.expected}")
        lines.append("")
    for p in problems:
        lines.append(f"skipped {p.label} ({p.origin}): {p.problem}")
    lines.append("Screening aid only: the verdicts weigh evidence, they do not identify a compound.")
    return "\n".join(lines)


def verdicts_json(verdicts: Sequence, problems: Sequence = (), *, evidence=None, amounts=None) -> str:
    """JSON: ``{"candidates": [...], "skipped": [...]}`` with every check of every candidate.

    With ``amounts`` (a :class:`nmrcheck.quant.QuantResult` for the same candidates in the same
    order) each candidate carries ``amount`` and ``recommendation``; the top level carries the
    per-proton ``amount`` and the ``recommendation`` for the best-ranked candidate.
    """
    doc = {
        "candidates": [v.as_dict() for v in verdicts],
        "skipped": [{"label": p.label, "origin": p.origin, "problem": p.problem} for p in problems],
    }
    if amounts is not None:
        q = amounts.as_dict()
        for cand, extra in zip(doc["candidates"], q["candidates"]):
            cand.update(extra)
        doc["amount"] = q["amount"]
        doc["recommendation"] = q["recommendation"]
    if evidence is not None:
        doc["evidence"] = {
            "source": evidence.source,
            "solvent": evidence.solvent,
            "snr": round(evidence.snr, 1),
            "total_h": evidence.total_h,
            "total_h_range": [evidence.total_h_low, evidence.total_h_high],
            "neutral_mass": evidence.ms.neutral_mass if evidence.ms else None,
        }
    return json.dumps(user_citations(doc), indent=2)
