"""Text table and JSON of ranked formula candidates (the ``nmrcheck formulas`` output)."""

from __future__ import annotations

import json
from typing import Any

from nmrcheck.chem.candidates import FormulaCandidate, FormulaSearch
from nmrcheck.data import user_citations

__all__ = ["candidate_record", "search_record", "format_search", "search_json"]

CAUTION = "Screening aid, not an identification: decisions rest with the responsible chemist."


def candidate_record(candidate: FormulaCandidate) -> dict[str, Any]:
    """One candidate as plain JSON-ready data."""
    record: dict[str, Any] = {
        "rank": candidate.rank,
        "formula": candidate.formula.hill,
        "charge": candidate.charge,
        "neutral_mass": round(candidate.neutral_mass, 6),
        "error_ppm": round(candidate.error_ppm, 3) + 0.0,
        "rdbe": candidate.rdbe,
        "score": round(candidate.score, 4) + 0.0,
        "score_parts": {k: round(v, 4) + 0.0 for k, v in candidate.score_parts.items()},
        "rules_passed": list(candidate.rules_passed),
        "rules_failed": list(candidate.rules_failed),
        "ions": [
            {
                "ion": m.ion,
                "mz_observed": m.mz_observed,
                "mz_calculated": round(m.mz_calculated, 6),
                "error_ppm": round(m.error_ppm, 3),
                "error_mda": round(m.error_mda, 3),
                "ion_formula": m.ion_formula,
                "ion_rdbe": m.ion_rdbe,
                "electrons": m.electrons,
            }
            for m in candidate.ions
        ],
    }
    if candidate.isotope_fit is not None:
        fit = candidate.isotope_fit
        record["isotopes"] = {
            "observed": list(fit.observed),
            "predicted": [round(x, 3) for x in fit.predicted],
            "chi2": round(fit.chi2, 4),
            "dof": fit.dof,
            "agrees": fit.agrees,
        }
    return record


def search_record(search: FormulaSearch) -> dict[str, Any]:
    """The whole search (query, counts, candidates) as plain data."""
    return {
        "features": [{"mz": mz, "ion": ion} for mz, ion in search.features],
        "neutral_mass": round(search.neutral_mass, 6),
        "mass_window": [round(x, 6) for x in search.mass_window],
        "ppm": search.ppm,
        "mda": search.mda,
        "elements": {s: list(r) for s, r in search.elements.items()},
        "rules": search.rules,
        "isotopes": list(search.isotopes) if search.isotopes is not None else None,
        "n_in_window": search.n_in_window,
        "n_passed": search.n_passed,
        "h_range": list(search.h_range) if search.h_range is not None else None,
        "notes": list(search.notes),
        "candidates": [candidate_record(c) for c in search.candidates],
    }


def search_json(search: FormulaSearch, *, full: bool = False) -> str:
    """JSON text: the list of candidates, or with ``full`` the whole search record."""
    data = search_record(search) if full else [candidate_record(c) for c in search.candidates]
    return json.dumps(user_citations(data), indent=2)


def _tidy(x: float) -> float:
    """``x`` rounded to what the table shows, without a minus sign on zero."""
    return round(x, 2) + 0.0


def _range_text(elements) -> str:
    return " ".join(f"{s}{lo}-{hi}" for s, (lo, hi) in elements.items())


def format_search(search: FormulaSearch) -> str:
    """Aligned text table of the candidates, with the query and what the score parts mean."""
    tol = " or ".join(
        t for t in ((f"{search.ppm:g} ppm" if search.ppm else ""), (f"{search.mda:g} mDa" if search.mda else "")) if t
    )
    lines = []
    for mz, ion in search.features:
        lines.append(f"m/z {mz:.5f}  {ion}")
    lines.append(
        f"neutral mass {search.neutral_mass:.5f} u (window {search.mass_window[0]:.5f}-{search.mass_window[1]:.5f}, tolerance {tol})"
    )
    lines.append(f"elements     {_range_text(search.elements)}")
    lines.append(
        f"rules        {search.rules}: {search.n_in_window} compositions examined within tolerance, "
        f"{search.n_passed} pass, {len(search.candidates)} shown"
    )
    if search.isotopes is not None:
        lines.append(f"isotopes     {', '.join(f'{v:g}' for v in search.isotopes)} (first ion)")
    for note in search.notes:
        lines.append(f"note         {note}")
    lines.append("")
    if not search.candidates:
        lines.append("no formula within tolerance passes the rules")
    else:
        has_iso = search.isotopes is not None
        has_prior = any("prior" in c.score_parts for c in search.candidates)
        has_protons = any("protons" in c.score_parts for c in search.candidates)
        head = f"{'rank':>4}  {'formula':<22} {'M (u)':>11} {'ppm':>6} {'RDBE':>5} {'score':>8} {'mass':>7}"
        if has_iso:
            head += f" {'isotope':>8}"
        if has_prior:
            head += f" {'prior':>6}"
        if has_protons:
            head += f" {'H':>6}"
        head += "  failed rules"
        lines.append(head)
        for c in search.candidates:
            row = (
                f"{c.rank:>4}  {c.label:<22} {c.neutral_mass:>11.5f} {_tidy(c.error_ppm):>+6.2f} "
                f"{c.rdbe:>5.1f} {_tidy(c.score):>8.2f} {_tidy(c.score_parts['mass']):>7.2f}"
            )
            if has_iso:
                row += f" {_tidy(c.score_parts.get('isotopes', 0.0)):>8.2f}"
            if has_prior:
                row += f" {_tidy(c.score_parts.get('prior', 0.0)):>6.2f}"
            if has_protons:
                row += f" {_tidy(c.score_parts.get('protons', 0.0)):>6.2f}"
            failed = [r for r in c.rules_failed]
            row += "  " + (", ".join(failed) if failed else "-")
            lines.append(row)
        lines.append("")
        lines.append(
            "score = log-likelihood, higher is better: mass (error against tolerance/2 as one SD)"
            + (" + isotope (-chi2/2 of the observed pattern)" if has_iso else "")
            + (" + prior (heteroatoms in natural products)" if has_prior else "")
            + (" + H (share of hidden-exchangeable-H cases that fit the 1H count)" if has_protons else "")
        )
    lines.append(CAUTION)
    return "\n".join(lines)
