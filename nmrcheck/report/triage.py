"""The morning triage: one line per well saying what it holds, how sure, how much, and what to do next.

A :class:`WellLine` is built from a stored :class:`~nmrcheck.plate.results.WellResult` (and the
well's assay readout, when there is one). Fields that other stages add later (purity, known
compounds, MS/MS groups, an ambiguous proton count) are shown when present and left blank
when not, so older result databases still report.
"""

from __future__ import annotations

import re

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from nmrcheck.data import user_citation as clean_citation
from nmrcheck.io.assay import AssayReadout
from nmrcheck.plate.results import WellResult

__all__ = [
    "ATTENTION_ORDER",
    "activity_text",
    "display_units",
    "WellLine",
    "clean_citation",
    "format_amount",
    "triage",
    "well_line",
]

#: Reasons a well needs the chemist's eyes, most pressing first (the attention list's order after activity).
ATTENTION_ORDER = (
    "contradicted",
    "mixture",
    "short of material",
    "ambiguous count",
    "doubtful",
    "undecided",
    "empty",
    "unreadable",
    "error",
)

_UNIT_FIXES = (
    (re.compile(r"\+-|\+/-"), "±"),
    (re.compile(r"(?<=[\d ])ug\b"), "µg"),
    (re.compile(r"(?<=[\d ])uL\b"), "µL"),
    (re.compile(r"(?<=[\d ])umol\b"), "µmol"),
    (re.compile(r"(?<=[\d ])uM\b"), "µM"),
)


def display_units(text: str) -> str:
    """Text with the trade's symbols: '+-' as '±', 'ug' as 'µg', 'uL' as 'µL' (after a number)."""
    for pattern, repl in _UNIT_FIXES:
        text = pattern.sub(repl, text)
    return text


def activity_text(readout: AssayReadout | None) -> str:
    """'active (87 %)', 'inactive (3.1 µM)' or just the value when no threshold was given."""
    if readout is None:
        return ""
    unit = readout.unit.replace("uM", "µM").replace("ug", "µg").replace("uL", "µL")
    value = f"{readout.value:.3g}" + (f" {unit}" if unit else "")
    if readout.active is None:
        return value
    return f"{'active' if readout.active else 'inactive'} ({value})"


@dataclass(frozen=True)
class WellLine:
    """What the report says about one well on one line."""

    well: str
    verdict: str
    category: str
    """'attention', 'ready' or 'pending'."""
    concern: str
    """For attention wells: one of :data:`ATTENTION_ORDER`; '' otherwise."""
    name: str
    """Best candidate's name (from the manifest or a library), or 'unnamed C8H8O3' when only a formula is known."""
    formula: str
    smiles: str
    """The best candidate's structure ('' when only a formula is known)."""
    purity: str
    purity_detail: str
    """The evidence behind the purity call (tooltip)."""
    amount_ug: float | None
    amount: str
    """'3.2 µg' (or nmol when no molar mass), '' when not quantified."""
    amount_detail: str
    count: str
    """Protons as the verdict used them ('7 H', 'ambiguous: 7 or 14 H')."""
    count_detail: str
    next_step: str
    next_detail: str
    reason: str
    """The one reason that matters for this well, in its first clause ('assignment: 4 of 10 H do not fit')."""
    reason_detail: str = ""
    """The same reason in full (for the tooltip and the exports)."""
    known: str = ""
    """'no known compound at this mass', 'known (n candidates)', or '' when not searched."""
    known_detail: str = ""
    """The known compounds, best first, with the taxon they match ('noctulide A (genus), ...'), or why the
    search could not run."""
    activity: AssayReadout | None = None
    related: tuple[str, ...] = ()
    """Wells whose MS/MS spectra group with this one."""
    related_note: str = ""
    """What the MS/MS groups say ('... share fragments: probably the same scaffold')."""
    rank_key: tuple = field(default=(), compare=False)


def _get(result: WellResult, name: str) -> Any:
    """A result field by name, also one that a newer stage stores and this version does not declare."""
    return getattr(result, name, None)


def best_check(result: WellResult) -> Mapping[str, Any] | None:
    """The validation record of the candidate the well's verdict speaks of.

    As the plate run calls a well: the manifest's structures first (the most specific claim),
    then its formulas, then any candidate; among those, the one whose verdict is the well's,
    best rank first. So a contradicted structure is not hidden behind a formula that fits.
    """
    checks = [c for c in result.checks if isinstance(c, Mapping)]
    if not checks:
        return None
    kinds = {str(c.get("key")): (c.get("kind"), str(c.get("source", "")).startswith("manifest")) for c in result.candidates}
    tiers = (
        [c for c in checks if kinds.get(str(c.get("key"))) == ("structure", True)],
        [c for c in checks if kinds.get(str(c.get("key"))) == ("formula", True)],
        checks,
    )
    tier = next(t for t in tiers if t)
    same = [c for c in tier if c.get("verdict") == result.verdict] or tier
    return min(same, key=lambda c: (c.get("rank") if isinstance(c.get("rank"), (int, float)) else 1e9))


def _candidate_name(result: WellResult, check: Mapping[str, Any] | None) -> tuple[str, str, str]:
    """(name, formula, SMILES) of the best candidate: its own name, else a named structure of the same formula."""
    by_key = {str(c.get("key")): c for c in result.candidates}
    cand = by_key.get(str(check.get("key"))) if check else None
    formula = str((check or {}).get("formula") or (cand or {}).get("formula") or "")
    if cand and cand.get("name"):
        return str(cand["name"]), formula, str(cand.get("smiles") or "")
    named = [c for c in result.candidates if c.get("name") and (not formula or c.get("formula") == formula)]
    if named:
        # Manifest names first, then any library's.
        named.sort(key=lambda c: 0 if str(c.get("source", "")).startswith("manifest") else 1)
        return str(named[0]["name"]), formula, str(named[0].get("smiles") or "")
    if check and check.get("label") and check.get("label") != formula:
        return str(check["label"]), formula, ""
    if formula:
        return f"unnamed {formula}", formula, ""
    structures = (result.spec or {}).get("structures") or []
    if structures and isinstance(structures[0], (list, tuple)) and len(structures[0]) == 2:
        return str(structures[0][0]), formula, str(structures[0][1])
    return "", formula, ""


def _purity(result: WellResult) -> tuple[str, bool, str]:
    """(call as shown, is a mixture, its evidence) from the validation's purity record, when it made one."""
    p = _get(result, "purity")
    if not p:
        return "", False, ""
    if isinstance(p, Mapping):
        call = str(p.get("call") or "")
        text = str(p.get("label") or call or p.get("verdict") or "")
        pct = next((p[k] for k in ("share_pct", "main_mol_pct", "about_pct") if isinstance(p.get(k), (int, float))), None)
        if pct is not None and "%" not in text and text.startswith("major"):
            text = f"{text} (about {float(pct):.0f} %)"
        evidence = "; ".join(str(e) for e in p.get("evidence") or [])
        return text, "mixture" in (call or text).lower(), evidence
    return str(p), "mixture" in str(p).lower(), ""


def _known(result: WellResult) -> tuple[str, str]:
    """(summary, detail) of the well's known-compound search (:class:`~nmrcheck.plate.results.Dereplication`);
    ('', '') when none ran, ('', why) when it could not."""
    k = _get(result, "known")
    if k is None:
        return "", ""
    if k.count is None:
        return "", k.summary
    names = [f"{m.name} ({m.taxon_match})" if m.taxon_match != "other" else m.name for m in k.matches[:_KNOWN_NAMES]]
    more = len(k.matches) - len(names) if k.matches else 0
    detail = ", ".join(names) + (f" and {more} more" if more > 0 else "")
    return k.summary, detail


_KNOWN_NAMES = 5
"""Known compounds named in a well's detail; the rest are counted."""


def _related(result: WellResult) -> tuple[tuple[str, ...], str]:
    """(wells whose MS/MS spectra group with this one, what the groups say), from the LC-MS record or a newer field."""
    found: list[str] = []
    notes: list[str] = []
    sources = [((result.lcms or {}) if isinstance(getattr(result, "lcms", None), Mapping) else {}).get("related_wells")]
    sources += [getattr(result, name, None) for name in ("related_wells", "msms_group", "msms_groups", "ms_groups", "spectral_groups")]
    for value in sources:
        if not value:
            continue
        groups = value if isinstance(value, (list, tuple)) and value and isinstance(value[0], Mapping) else [value]
        for g in groups:
            wells = g.get("others") or g.get("wells") if isinstance(g, Mapping) else g
            if not isinstance(wells, (list, tuple)):
                continue
            if isinstance(g, Mapping) and g.get("wells") and result.well not in [str(w) for w in g["wells"]] and not g.get("others") and len(groups) > 1:
                continue
            found += [str(w) for w in wells if str(w) != result.well]
            if isinstance(g, Mapping) and g.get("summary"):
                notes.append(str(g["summary"]))
    return tuple(dict.fromkeys(found)), "; ".join(dict.fromkeys(notes))


def format_amount(amount: Mapping[str, Any] | None) -> tuple[str, float | None, str]:
    """('3.2 µg', 3.18, 'tooltip with the rest') from a well's amount record."""
    if not amount or "uncertainty_pct" not in amount:
        return "", None, ""
    ug, nmol, mm = amount.get("ug"), amount.get("nmol"), amount.get("conc_mM")
    unc = amount.get("uncertainty_pct")
    bits = []
    if nmol is not None:
        bits.append(f"{float(nmol):.3g} nmol")
    if ug is not None:
        bits.append(f"{float(ug):.3g} µg")
    if mm is not None:
        bits.append(f"{float(mm):.3g} mM")
    detail = ", ".join(bits) or "amount unknown"
    if unc is not None:
        detail += f" ± {float(unc):.0f} %"
    if amount.get("method"):
        detail += f" ({amount['method']})"
    if amount.get("basis"):
        detail += f" for {amount['basis']}"
    if ug is not None:
        value = float(ug)
        return (f"{value:.2g} µg" if value < 10 else f"{value:.0f} µg"), value, detail
    if nmol is not None:
        return f"{float(nmol):.2g} nmol", None, detail
    return "", None, detail


def _count(result: WellResult, check: Mapping[str, Any] | None) -> tuple[str, str, bool]:
    """(count as the verdict used it, detail, ambiguous)."""
    count = result.count or {}
    own = ""
    if count.get("total_h") is not None:
        own = f"the spectrum's own count is {float(count['total_h']):.1f} H"
        if count.get("total_h_low") is not None and count.get("total_h_high") is not None:
            own += f" ({float(count['total_h_low']):.1f}-{float(count['total_h_high']):.1f})"
    alternatives = [a for a in (count.get("alternative_totals") or []) if isinstance(a, (int, float))]
    ambiguous = bool(count.get("ambiguous"))
    if ambiguous:
        totals = sorted({int(round(float(count.get("integer_h") or count.get("total_h") or 0)))} | {int(round(a)) for a in alternatives})
        text = "ambiguous: " + " or ".join(f"{t}" for t in totals) + " H"
        return text, own + "; the integrals fit more than one proton unit equally well", True
    if check and isinstance(check.get("counted_h"), (int, float)):
        name = check.get("label") or check.get("formula") or "the best candidate"
        return f"{int(check['counted_h'])} H", f"as the check of {name} counted them; {own}".strip("; "), False
    if count.get("total_h") is not None:
        detail = "the spectrum's own count"
        if count.get("total_h_low") is not None and count.get("total_h_high") is not None:
            detail += f", range {float(count['total_h_low']):.1f}-{float(count['total_h_high']):.1f} H"
        if count.get("lower_bound"):
            detail += "; a one-proton multiplet would stay under the detection limit, so more protons may be unseen"
            return f"at least {float(count['total_h']):.1f} H", detail, False
        return f"{float(count['total_h']):.1f} H", detail, False
    return "", "", False


_DECISION_TEXT = {"go": "go: {e}", "borderline": "borderline for {e}", "no-go": "too little for {e}"}


def _next_step(result: WellResult) -> tuple[str, str, str]:
    """(short text naming the experiment, tooltip, decision)."""
    rec = result.recommendation or {}
    if not rec:
        return "", "", ""
    decision = str(rec.get("decision", ""))
    experiment = str(rec.get("experiment") or "the next experiment")
    text = _DECISION_TEXT.get(decision, decision + " ({e})").format(e=experiment)
    detail = display_units("; ".join(str(r) for r in rec.get("reasons") or []))
    if rec.get("scans_needed") and rec.get("hours_needed") is not None:
        detail += f"; {rec['scans_needed']} scans ({float(rec['hours_needed']):.1f} h) for SNR {float(rec.get('target_snr') or 0):g}"
    if rec.get("threshold_source"):
        detail += f"; threshold: {clean_citation(rec['threshold_source'])}"
    return text, detail.strip("; "), decision


def _first_problem(check: Mapping[str, Any] | None, statuses: Sequence[str]) -> str:
    if not check:
        return ""
    for sub in check.get("checks") or []:
        if isinstance(sub, Mapping) and sub.get("status") in statuses:
            return f"{sub.get('name')}: {sub.get('explanation')}"
    return ""


def _first_clause(text: str, *, limit: int = 110) -> str:
    """'check: what failed' up to the first colon or semicolon after it, so the line stays one line."""
    head, sep, rest = text.partition(": ")
    if sep and len(head) <= 20:
        cut = re.split(r"(?<=[^\d]): |; ", rest, maxsplit=1)[0]
        short = f"{head}: {cut}"
    else:
        short = re.split(r"; ", text, maxsplit=1)[0]
    return short if len(short) <= limit else short[: limit - 1].rstrip() + "…"


def well_line(result: WellResult, activity: AssayReadout | None = None) -> WellLine:
    """The triage line of one well."""
    check = best_check(result)
    name, formula, smiles = _candidate_name(result, check)
    purity, mixture, purity_detail = _purity(result)
    amount, amount_ug, amount_detail = format_amount(result.amount)
    count, count_detail, ambiguous = _count(result, check)
    next_text, next_detail, decision = _next_step(result)
    known, known_detail = _known(result)
    related, related_note = _related(result)
    verdict = result.verdict
    concern = ""
    reason = ""
    if result.status in ("unreadable", "error"):
        concern = result.status
        reason = (result.error or "the recording could not be read").splitlines()[0]
        head, sep, rest = reason.partition(": ")
        if sep and re.search(r"[\\/]", head):
            # The path is in the details; the line keeps the file's name and what is wrong with it.
            reason = re.split(r"[\\/]", head)[-1] + ": " + rest
    elif result.status == "empty" or verdict == "empty":
        concern = "empty"
        reason = "no analyte signal above the noise"
    elif verdict == "inconsistent":
        concern = "contradicted"
        reason = _first_problem(check, ("fail",)) or next(iter((check or {}).get("reasons") or []), "the spectrum contradicts every candidate")
    elif mixture:
        concern = "mixture"
        reason = purity
    elif ambiguous:
        concern = "ambiguous count"
        reason = f"the integrals fit {count.removeprefix('ambiguous: ')} equally well"
    elif verdict in ("doubtful", "undecided"):
        concern = verdict
        reason = _first_problem(check, ("fail", "warn")) or next(iter((check or {}).get("reasons") or []), "")
    elif decision == "no-go":
        concern = "short of material"
        reason = next(iter((result.recommendation or {}).get("reasons") or []), next_text)
    if concern:
        category = "attention"
    else:
        category = "ready"
        no_amount = next((n for n in result.notes if str(n).startswith("no amount")), "")
        reason = next(iter((result.recommendation or {}).get("reasons") or []), "") or no_amount or "consistent with its best candidate"
    severity = ATTENTION_ORDER.index(concern) if concern in ATTENTION_ORDER else len(ATTENTION_ORDER)
    act = activity.active if activity else None
    single = 0 if ("single" in purity.lower() or not purity) else 1
    new = 0 if known.startswith("no known") else 1
    rank_key = (0 if act else 1, severity, single, new, -(amount_ug or 0.0), result.well)
    return WellLine(
        well=result.well,
        verdict=verdict,
        category=category,
        concern=concern,
        name=name,
        formula=formula,
        smiles=smiles,
        purity=purity,
        purity_detail=purity_detail,
        amount_ug=amount_ug,
        amount=amount,
        amount_detail=amount_detail,
        count=count,
        count_detail=count_detail,
        next_step=next_text,
        next_detail=next_detail,
        reason=display_units(clean_citation(reason)) if concern in ("unreadable", "error") else _first_clause(display_units(clean_citation(reason))),
        reason_detail=display_units(clean_citation(reason)),
        known=known,
        known_detail=known_detail,
        activity=activity,
        related=related,
        related_note=related_note,
        rank_key=rank_key,
    )


def triage(results: Mapping[str, WellResult], activities: Mapping[str, AssayReadout] | None = None) -> tuple[list[WellLine], list[WellLine]]:
    """(needs attention, ready for the next step), each active wells first, then by concern and material."""
    activities = activities or {}
    lines = [well_line(r, activities.get(w)) for w, r in results.items()]
    attention = sorted((ln for ln in lines if ln.category == "attention"), key=lambda ln: ln.rank_key)
    ready = sorted((ln for ln in lines if ln.category == "ready"), key=lambda ln: ln.rank_key)
    return attention, ready
