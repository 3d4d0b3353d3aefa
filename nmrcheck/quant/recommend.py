"""Go/no-go for the next experiment on a well, from its amount and SNR, with thresholds the user can replace.

Decision rule: 'go' when the amount less twice its standard uncertainty (about a
95 % lower bound) reaches the experiment's go threshold; 'borderline' when the
estimate itself reaches the borderline threshold; 'no-go' otherwise. The scans
needed for a target SNR follow from SNR growing with the square root of scans.
"""

from __future__ import annotations

import csv
import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from nmrcheck.data import load_table
from nmrcheck.errors import ParameterError, TableError
from nmrcheck.io.records import Acquisition
from nmrcheck.quant.amount import Amount, CandidateAmount

__all__ = ["Threshold", "Recommendation", "load_thresholds", "recommend", "scans_for_snr"]

#: Coverage factor for the lower bound the 'go' decision uses (k = 2, about 95 %).
COVERAGE = 2.0

_COLUMNS = ("experiment", "label", "go_nmol", "borderline_nmol", "go_ug", "borderline_ug", "target_snr", "source")


@dataclass(frozen=True)
class Threshold:
    """Amounts an experiment needs: nmol in the tube and/or micrograms, and the 1H SNR to aim for."""

    experiment: str
    label: str
    go_nmol: float | None
    borderline_nmol: float | None
    go_ug: float | None
    borderline_ug: float | None
    target_snr: float
    source: str


def _num(row: Mapping[str, Any], key: str, where: str) -> float | None:
    v = row.get(key)
    if v is None or (isinstance(v, str) and not v.strip()):
        return None
    try:
        x = float(v)
    except (TypeError, ValueError):
        raise TableError(f"{where}: {key} must be a number, got {v!r}") from None
    if not (x >= 0 and math.isfinite(x)):
        raise TableError(f"{where}: {key} must be a non-negative number, got {v!r}")
    return x


def _threshold(row: Mapping[str, Any], where: str) -> Threshold:
    name = str(row.get("experiment") or "").strip()
    if not name:
        raise TableError(f"{where}: empty experiment name")
    source = str(row.get("source") or "").strip()
    if not source:
        raise TableError(f"{where}: empty source (say where the threshold comes from)")
    t = Threshold(
        experiment=name,
        label=str(row.get("label") or name),
        go_nmol=_num(row, "go_nmol", where),
        borderline_nmol=_num(row, "borderline_nmol", where),
        go_ug=_num(row, "go_ug", where),
        borderline_ug=_num(row, "borderline_ug", where),
        target_snr=_num(row, "target_snr", where) or 100.0,
        source=source,
    )
    for go, bl, unit in ((t.go_nmol, t.borderline_nmol, "nmol"), (t.go_ug, t.borderline_ug, "ug")):
        if go is not None and bl is not None and bl > go:
            raise TableError(f"{where}: borderline_{unit} ({bl}) exceeds go_{unit} ({go})")
    return t


def load_thresholds(path: str | Path | None = None) -> dict[str, Threshold]:
    """Thresholds by experiment name (case-insensitive keys): packaged defaults, updated from ``path``.

    ``path`` is a CSV file with the columns of ``recommendation_defaults.csv``
    (``#`` lines are comments), a JSON file (a list of such rows, or a mapping of
    experiment name to row), or a TOML file (tables named by experiment) where
    Python 3.11's ``tomllib`` is available.
    """
    out = {r["experiment"].lower(): _threshold(r, f"recommendation_defaults.csv ({r['experiment']})") for r in load_table("recommendation_defaults")}
    if path is None:
        return out
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise ParameterError(f"thresholds: cannot read {p}: {exc.strerror or exc}") from None
    suffix = p.suffix.lower()
    rows: list[dict[str, Any]]
    if suffix == ".json":
        try:
            data = json.loads(text)
        except json.JSONDecodeError as exc:
            raise TableError(f"{p}: not valid JSON ({exc.msg}, line {exc.lineno})") from None
        rows = [dict(v, experiment=k) for k, v in data.items()] if isinstance(data, dict) else list(data)
    elif suffix == ".toml":
        try:
            import tomllib
        except ImportError:  # pragma: no cover - Python 3.10
            raise ParameterError(f"thresholds: TOML needs Python 3.11 or later; give {p.stem}.csv or .json instead") from None
        try:
            data = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise TableError(f"{p}: not valid TOML ({exc})") from None
        rows = [dict(v, experiment=k) for k, v in data.items() if isinstance(v, dict)]
    else:
        lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
        reader = csv.DictReader(lines)
        missing = {"experiment", "source"} - set(reader.fieldnames or ())
        if missing:
            raise TableError(f"{p}: missing column(s) {', '.join(sorted(missing))} (columns: {', '.join(_COLUMNS)})")
        rows = list(reader)
    for i, row in enumerate(rows, start=1):
        if not isinstance(row, dict):
            raise TableError(f"{p} entry {i}: expected a row of named values")
        t = _threshold(row, f"{p} entry {i}")
        out[t.experiment.lower()] = t
    return out


@dataclass(frozen=True)
class Recommendation:
    """Go/no-go for one well and one next experiment."""

    decision: str
    """'go', 'borderline' or 'no-go'."""
    experiment: str
    reasons: tuple[str, ...]
    scans_needed: int | None
    """Scans for the 1H spectrum to reach the target SNR (None when scans or SNR are unknown)."""
    hours_needed: float | None
    target_snr: float
    threshold_source: str
    details: dict[str, Any] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        return {
            "decision": self.decision,
            "experiment": self.experiment,
            "reasons": list(self.reasons),
            "scans_needed": self.scans_needed,
            "hours_needed": None if self.hours_needed is None else round(self.hours_needed, 3),
            "target_snr": self.target_snr,
            "threshold_source": self.threshold_source,
        }


def scans_for_snr(snr: float, scans: int, target_snr: float) -> int:
    """Scans giving ``target_snr`` when ``scans`` gave ``snr`` (SNR grows with the square root of scans)."""
    if not (snr > 0 and scans > 0 and target_snr > 0):
        raise ParameterError(f"scans_for_snr: snr ({snr}), scans ({scans}) and target_snr ({target_snr}) must be positive")
    return max(1, math.ceil(scans * (target_snr / snr) ** 2))


def recommend(
    amount: Amount | CandidateAmount,
    snr: float,
    *,
    experiment: str,
    config: Mapping[str, Threshold] | str | Path | None = None,
    required_ug: float | None = None,
    required_nmol: float | None = None,
    acquisition: Acquisition | None = None,
) -> Recommendation:
    """Recommendation for running ``experiment`` next on this well.

    Parameters
    ----------
    amount
        A candidate's amount (nmol and ug) or the per-proton :class:`Amount`
        (nmol only).
    snr
        SNR of the 1H spectrum's analyte signal.
    experiment
        Name in the thresholds (e.g. ``'1H-13C HSQC'``, ``'13C 1D'``, ``'bioassay'``).
    config
        Thresholds from :func:`load_thresholds`, or a path to a user file.
    required_ug, required_nmol
        What the experiment needs, replacing the table's go and borderline amounts
        (e.g. a bioassay needing 50 ug).
    acquisition
        The 1H acquisition, for the scans and hours to reach the target SNR.
    """
    table = config if isinstance(config, Mapping) else load_thresholds(config)
    t = table.get(experiment.strip().lower())
    if t is None:
        raise ParameterError(f"experiment: {experiment!r} has no thresholds (known: {', '.join(sorted(x.experiment for x in table.values()))}); add it to a thresholds file")
    for v, name in ((required_ug, "required_ug"), (required_nmol, "required_nmol")):
        if v is not None and not v > 0:
            raise ParameterError(f"{name}: must be positive, got {v}")
    go_nmol, bl_nmol, go_ug, bl_ug = t.go_nmol, t.borderline_nmol, t.go_ug, t.borderline_ug
    if required_ug is not None:
        go_ug = bl_ug = required_ug
    if required_nmol is not None:
        go_nmol = bl_nmol = required_nmol
    if isinstance(amount, CandidateAmount):
        nmol, ug = amount.nmol, amount.ug
    else:
        nmol, ug = amount.nmol_per_proton, None
    u = amount.uncertainty_pct / 100.0
    reasons: list[str] = []
    verdicts: list[str] = []
    for value, go, bl, unit in ((nmol, go_nmol, bl_nmol, "nmol"), (ug, go_ug, bl_ug, "ug")):
        if go is None and bl is None:
            continue
        if value is None:
            verdicts.append("no-go")
            reasons.append(f"needs an amount in {unit}, which is unknown (give the molar mass or the volume)")
            continue
        low = value * max(0.0, 1.0 - COVERAGE * u)
        go_v = go if go is not None else bl
        bl_v = bl if bl is not None else go
        if low >= go_v:
            verdicts.append("go")
            reasons.append(f"{value:.3g} {unit} (at least {low:.3g} at k=2) reaches the {go_v:g} {unit} {t.label} needs")
        elif value >= bl_v:
            verdicts.append("borderline")
            reasons.append(f"{value:.3g} {unit} +- {100 * u:.0f} % is near the {go_v:g} {unit} {t.label} needs (borderline from {bl_v:g})")
        else:
            verdicts.append("no-go")
            reasons.append(f"{value:.3g} {unit} is below the {bl_v:g} {unit} {t.label} needs at least")
    scans_needed = hours = None
    if acquisition is not None and acquisition.scans and snr > 0:
        scans_needed = scans_for_snr(snr, acquisition.scans, t.target_snr)
        per_scan = (acquisition.relaxation_delay_s or 0.0) + (acquisition.acquisition_time_s or 0.0)
        hours = scans_needed * per_scan / 3600.0 if per_scan > 0 else None
    if not verdicts:
        # An experiment with only an SNR target (e.g. a quantitative 1H re-acquisition).
        if snr >= t.target_snr:
            verdicts.append("go")
            reasons.append(f"SNR {snr:.0f} reaches the target {t.target_snr:g}")
        else:
            verdicts.append("borderline" if snr >= 10 else "no-go")
            more = f"; about {scans_needed} scans ({hours:.1f} h) would reach it" if scans_needed and hours is not None else ""
            reasons.append(f"SNR {snr:.0f} is below the target {t.target_snr:g}{more}")
    order = ("no-go", "borderline", "go")
    decision = min(verdicts, key=order.index)
    return Recommendation(
        decision=decision,
        experiment=t.experiment,
        reasons=tuple(reasons),
        scans_needed=scans_needed,
        hours_needed=hours,
        target_snr=t.target_snr,
        threshold_source=t.source,
    )
