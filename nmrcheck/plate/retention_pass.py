"""After a plate's wells are screened: fit retention time against logP over the plate and add the 'retention' check.

The fit needs the whole plate (wells whose structure candidate the other checks call
consistent), so it runs once all wells have a result, on the stored results: each
structure candidate's check record gets a 'retention' entry, and the well a note with
the model. The check warns only; it does not change a candidate's verdict.
"""

from __future__ import annotations

import dataclasses
import logging
from typing import Any

from nmrcheck.errors import NmrcheckError
from nmrcheck.plate.results import WellResult

__all__ = ["apply_retention", "retention_pass"]

log = logging.getLogger("nmrcheck")

_NOTE = "retention: "


def _structures(result: WellResult) -> dict[str, str]:
    """Candidate key -> SMILES of the well's structure candidates."""
    return {c["key"]: c["smiles"] for c in result.candidates if c.get("kind") == "structure" and c.get("smiles") and "key" in c}


def _rt(result: WellResult) -> float | None:
    rt = (result.spec or {}).get("rt_min")
    return float(rt) if rt is not None else None


def _mol(smiles: str, cache: dict[str, Any]):
    if smiles not in cache:
        from nmrcheck.io.structures import mol_from_smiles

        cache[smiles] = mol_from_smiles(smiles)[0]
    return cache[smiles]


def apply_retention(results: dict[str, WellResult], *, calibration: str | None = None) -> tuple[Any, dict[str, WellResult]]:
    """(model or None, the results that changed) after adding the retention check to every well.

    Parameters
    ----------
    results
        Current results by well.
    calibration
        Retention calibration file; without one the model is fitted on the plate.
    """
    from nmrcheck.validate.retention import calibration_model, check_retention, crippen_logp, fit_retention

    mols: dict[str, Any] = {}
    model, why = None, ""
    if calibration:
        try:
            model = calibration_model(calibration)
        except NmrcheckError as exc:
            why = str(exc)
    else:
        points = []
        for r in results.values():
            rt = _rt(r)
            if r.status != "done" or rt is None:
                continue
            smiles = _structures(r)
            consistent = sorted((c for c in r.checks if c.get("verdict") == "consistent" and c.get("key") in smiles), key=lambda c: c.get("rank", 99))
            if consistent:
                mol = _mol(smiles[consistent[0]["key"]], mols)
                if mol is not None:
                    points.append((crippen_logp(mol), rt))
        try:
            model = fit_retention(points, source=f"plate: {len(points)} wells with a consistent candidate")
        except NmrcheckError as exc:
            why = str(exc)
    changed = {}
    for well, r in results.items():
        if r.status != "done":
            continue
        smiles = _structures(r)
        checks = []
        for c in r.checks:
            c = dict(c)
            kept = [x for x in c.get("checks", []) if x.get("name") != "retention"]
            if c.get("key") in smiles:
                result = check_retention(_mol(smiles[c["key"]], mols), _rt(r), model)
                if result.status != "not-applicable" or model is not None:
                    kept.append(result.as_dict())
                reasons = [x for x in c.get("reasons", []) if not x.startswith("retention: ")]
                if result.status == "warn":
                    reasons.append(f"retention: {result.explanation}")
                c["reasons"] = reasons
            c["checks"] = kept
            checks.append(c)
        notes = [n for n in r.notes if not n.startswith(_NOTE)]
        if smiles:
            notes.append(_NOTE + (model.describe() if model is not None else f"no model ({why})"))
        updated = dataclasses.replace(r, checks=tuple(checks), notes=tuple(notes))
        if updated.checks != r.checks or updated.notes != r.notes:
            changed[well] = updated
    return model, changed


def retention_pass(store, run_id: str, wells: set[str], *, calibration: str | None = None) -> None:
    """Add the retention check to the stored results of ``wells`` (a plate-level step after screening)."""
    current = {w: r for w, r in store.current(with_trace=False).items() if w in wells}
    model, changed = apply_retention(current, calibration=calibration)
    for result in changed.values():
        store.amend(result)
    if model is not None:
        log.info("retention model %s", model.describe())
