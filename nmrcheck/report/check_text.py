"""Text and JSON renderings of the validator's verdicts for the ``check`` command."""

from __future__ import annotations

import json
from collections.abc import Sequence

from nmrcheck.data import user_citations
from nmrcheck.report.amount_text import amount_line

__all__ = ["verdicts_text", "verdicts_json"]

_MARK = {"pass": "ok  ", "warn": "warn", "fail": "FAIL", "not-applicable": "n/a "}


def _by_label(verdicts: Sequence, amounts) -> dict[str, tuple]:
    """Candidate amounts keyed by the label of the verdict they belong to (an amount is for one candidate only)."""
    out = {}
    if amounts is None:
        return out
    for a, r in amounts.candidates:
        for v in verdicts:
            if a.label.startswith(v.candidate.label) or a.label == v.candidate.formula.hill:
                out.setdefault(v.candidate.label, (a, r))
                break
    return out


def verdicts_text(verdicts: Sequence, problems: Sequence = (), *, evidence=None, amounts=None, purity=None) -> str:
    """A readable report: the purity call, one block per candidate, reasons strongest first, then skipped entries.

    ``amounts`` (a :class:`nmrcheck.quant.QuantResult`) adds the amount and go/no-go of the one
    candidate it was computed for, or the one-line reason it was refused; ``purity`` (a
    :class:`nmrcheck.validate.Purity`) the call on one compound or several.
    """
    per = _by_label(verdicts, amounts)
    lines = []
    if evidence is not None:
        ms = f"M = {evidence.ms.neutral_mass:.5f} u (+/- {evidence.ms.ppm:g} ppm)" if evidence.ms else "no MS feature"
        total = f"{evidence.total_h:.1f} H (self-consistent, {evidence.total_h_low:.1f}-{evidence.total_h_high:.1f})" if evidence.total_h is not None else "no count"
        lines.append(f"spectrum {evidence.source}: solvent {evidence.solvent or 'unknown'}, SNR {evidence.snr:.0f}, {total}; {ms}")
    if purity is not None:
        lines.append(f"purity: {purity.label}")
        for e in purity.evidence[:4]:
            lines.append(f"  - {e}")
    if amounts is not None:
        if amounts.amount is not None:
            lines.append(f"amount reference: {amounts.amount.reference}")
        if amounts.refused:
            lines.append(f"  {amounts.refused}")
        for w in amounts.amount.warnings if amounts.amount is not None else ():
            lines.append(f"  warning: {w}")
    if lines:
        lines.append("")
    for i, v in enumerate(verdicts):
        c = v.candidate
        lines.append(f"#{v.rank} {c.label} ({c.formula.hill}): {v.verdict.upper()}  score {v.score:.2f}")
        if c.label in per:
            a, r = per[c.label]
            lines.append(f"    amount ({a.n_h:g} H on its own signals): {amount_line(a.as_dict(), r.as_dict())}")
        for r in v.reasons[:3]:
            lines.append(f"    - {r}")
        for chk in v.checks:
            lines.append(f"      [{_MARK[chk.status]}] {chk.name}: observed {chk.observed}; expected {chk.expected}")
        lines.append("")
    for p in problems:
        lines.append(f"skipped {p.label} ({p.origin}): {p.problem}")
    lines.append("Screening aid only: the verdicts weigh evidence, they do not identify a compound.")
    return "\n".join(lines)


def verdicts_json(verdicts: Sequence, problems: Sequence = (), *, evidence=None, amounts=None, purity=None) -> str:
    """JSON: ``{"candidates": [...], "skipped": [...]}`` with every check of every candidate.

    With ``amounts`` (a :class:`nmrcheck.quant.QuantResult`) the candidate it was computed for
    carries ``amount`` and ``recommendation``; the top level carries the per-proton ``amount``,
    the ``recommendation`` and ``amount_refused`` (the reason, or null). With ``purity`` the top
    level carries ``purity`` (``call``, ``label``, ``share_pct``, ``evidence``, ...).
    """
    doc = {
        "candidates": [v.as_dict() for v in verdicts],
        "skipped": [{"label": p.label, "origin": p.origin, "problem": p.problem} for p in problems],
    }
    if purity is not None:
        doc["purity"] = purity.as_dict()
    if amounts is not None:
        q = amounts.as_dict()
        per = _by_label(verdicts, amounts)
        for cand, v in zip(doc["candidates"], verdicts):
            if v.candidate.label in per:
                a, r = per[v.candidate.label]
                cand.update({"amount": a.as_dict(), "recommendation": r.as_dict()})
        doc["amount"] = q["amount"]
        doc["recommendation"] = q["recommendation"]
        doc["amount_refused"] = q["refused"]
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
