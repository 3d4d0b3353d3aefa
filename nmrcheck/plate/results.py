"""The record one well yields in a plate run: always data (a status and the reasons), never None."""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np

__all__ = ["STATUSES", "VERDICTS", "SpectrumTrace", "WellResult", "options_hash"]

STATUSES = frozenset({"done", "error", "empty", "unreadable"})
"""'done': processed and checked; 'empty': no analyte signal above noise; 'unreadable': the
recording is missing, truncated or corrupt; 'error': anything else went wrong."""

VERDICTS = ("consistent", "doubtful", "inconsistent", "undecided", "empty", "unreadable", "error")
"""A well's call, best first: the four check verdicts, then the three failure statuses."""


@dataclass(frozen=True, eq=False)
class SpectrumTrace:
    """A display copy of the processed real spectrum: min/max envelope of ``values`` from ``first_ppm`` to ``last_ppm``."""

    first_ppm: float
    last_ppm: float
    values: np.ndarray
    """float32, pairs of (min, max) per bin flattened, high ppm first."""

    @classmethod
    def from_spectrum(cls, ppm: np.ndarray, real: np.ndarray, *, bins: int = 2048) -> "SpectrumTrace":
        n = real.size
        bins = max(16, min(bins, n // 2))
        edges = np.linspace(0, n, bins + 1).astype(int)
        lo = np.minimum.reduceat(real, edges[:-1])
        hi = np.maximum.reduceat(real, edges[:-1])
        # Min then max per bin: a line drawn through them keeps every narrow peak at full height.
        values = np.empty(2 * bins, dtype=np.float32)
        values[0::2] = lo
        values[1::2] = hi
        return cls(float(ppm[0]), float(ppm[-1]), values)

    def to_bytes(self) -> bytes:
        head = np.array([self.first_ppm, self.last_ppm], dtype=np.float64).tobytes()
        return head + self.values.astype("<f4").tobytes()

    @classmethod
    def from_bytes(cls, blob: bytes) -> "SpectrumTrace":
        first, last = np.frombuffer(blob[:16], dtype=np.float64)
        return cls(float(first), float(last), np.frombuffer(blob[16:], dtype="<f4").copy())


@dataclass(frozen=True, eq=False)
class WellResult:
    """Everything the plate run learned about one well.

    All fields but ``trace`` are JSON-ready (dicts, lists, strings, numbers), so the
    record round-trips through the results database and the exports unchanged.
    """

    well: str
    status: str
    verdict: str
    """One of :data:`VERDICTS`."""
    spectrum_path: str | None = None
    processing: dict[str, Any] = field(default_factory=dict)
    """Options, phase, reference, SNR, noise, step history and warnings."""
    regions: tuple[dict[str, Any], ...] = ()
    count: dict[str, Any] | None = None
    ms_feature: dict[str, Any] | None = None
    candidates: tuple[dict[str, Any], ...] = ()
    """Formula and structure candidates (from the manifest and from the HRMS feature)."""
    checks: tuple[dict[str, Any], ...] = ()
    """Per candidate: the validation's verdict, score and reasons."""
    amount: dict[str, Any] | None = None
    """Amount in the tube: ``nmol``, ``ug``, ``conc_mM``, ``uncertainty_pct``, ``method`` and ``basis`` (the
    candidate it is for, or the proton unit), with ``per_proton`` and the full quantification in ``details``."""
    recommendation: dict[str, Any] | None = None
    """Go/no-go for the next experiment: ``decision``, ``experiment``, ``reasons``, ``scans_needed``, ``hours_needed``."""
    lcms: dict[str, Any] | None = None
    """The well in the extract's LC-MS run, when the plate had one: collection and detector windows, ion
    current, ``features`` (largest share first; each with ``neutral_mass``, ``ions`` (species, m/z, charge,
    isotopes), ``rt_min``, ``share`` of the well's ion current, ``ms2`` spectra), ``major_features`` (how many
    reach ``major_share``: more than one is evidence of a mixture), ``related_wells`` (MS/MS groups),
    ``manifest_feature`` (which feature the formula search used) and ``fragment_checks`` (per candidate formula)."""
    purity: dict[str, Any] | None = None
    """One compound or several: ``call`` ('single compound', 'major compound with impurities', 'mixture',
    'undecided'), ``label`` (with 'about x %'), ``share_pct``, ``evidence`` (lines), ``candidate`` and ``residual_sets``."""
    error: str | None = None
    notes: tuple[str, ...] = ()
    """What the run could not do for this well and why (e.g. a stage not installed)."""
    timings: dict[str, float] = field(default_factory=dict)
    """Wall seconds per stage."""
    software_version: str = ""
    options_hash: str = ""
    spec: dict[str, Any] = field(default_factory=dict)
    """The manifest row, as validated."""
    trace: SpectrumTrace | None = None

    def __post_init__(self) -> None:
        if self.status not in STATUSES:
            raise ValueError(f"status: {self.status!r} is not one of {sorted(STATUSES)}")
        if self.verdict not in VERDICTS:
            raise ValueError(f"verdict: {self.verdict!r} is not one of {VERDICTS}")

    def as_dict(self) -> dict[str, Any]:
        """JSON-ready dict of every field except the display trace."""
        out = {}
        for f in fields(self):
            if f.name == "trace":
                continue
            v = getattr(self, f.name)
            out[f.name] = list(v) if isinstance(v, tuple) else v
        return out

    def to_json(self) -> str:
        return json.dumps(self.as_dict(), default=_jsonable, sort_keys=True)

    @classmethod
    def from_dict(cls, d: dict[str, Any], trace: SpectrumTrace | None = None) -> "WellResult":
        kw = {f.name: d[f.name] for f in fields(cls) if f.name in d and f.name != "trace"}
        for name in ("regions", "candidates", "checks", "notes"):
            if name in kw and kw[name] is not None:
                kw[name] = tuple(kw[name])
        rec = kw.get("recommendation")
        if isinstance(rec, str):
            # Results stored before recommendations were records held 'decision (experiment)'.
            decision, _, experiment = rec.partition(" (")
            kw["recommendation"] = {"decision": decision, "experiment": experiment.rstrip(")"), "reasons": []}
        return cls(**kw, trace=trace)


def _jsonable(v: Any) -> Any:
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, (np.floating,)):
        return float(v)
    if isinstance(v, np.ndarray):
        return v.tolist()
    if isinstance(v, (set, frozenset, tuple)):
        return list(v)
    return str(v)


def options_hash(*parts: Any) -> str:
    """A short stable hash of JSON-able parts (options and the manifest row), to key results."""
    text = json.dumps(parts, default=_jsonable, sort_keys=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]
