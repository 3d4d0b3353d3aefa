"""The record one well yields in a plate run: always data (a status and the reasons), never None."""

from __future__ import annotations

import hashlib
import json
import re
from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np

__all__ = ["STATUSES", "VERDICTS", "SpectrumTrace", "KnownMatch", "Dereplication", "WellResult", "options_hash"]

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


@dataclass(frozen=True)
class KnownMatch:
    """One known compound of the library at a well's mass, in the order the look-up ranked them."""

    rank: int
    """1 for the best: genus match first, then family, then the rest, each by mass error."""
    name: str
    formula: str
    """Hill formula (of the ion itself for a permanently charged molecule)."""
    taxon_match: str
    """'genus', 'family' or 'other' (:data:`nmrcheck.ms.library.TAXON_RANKS`)."""
    error_ppm: float | None = None
    inchikey_block: str | None = None
    smiles: str = ""

    def as_dict(self) -> dict[str, Any]:
        return {"rank": self.rank, "name": self.name, "formula": self.formula, "taxon_match": self.taxon_match,
                "error_ppm": self.error_ppm, "inchikey_block": self.inchikey_block, "smiles": self.smiles}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "KnownMatch":
        return cls(rank=int(d["rank"]), name=str(d["name"]), formula=str(d.get("formula") or ""),
                   taxon_match=str(d.get("taxon_match") or "other"), error_ppm=d.get("error_ppm"),
                   inchikey_block=d.get("inchikey_block"), smiles=str(d.get("smiles") or ""))


@dataclass(frozen=True)
class Dereplication:
    """The known-compound search of one well: how many known compounds lie at its mass, and which.

    ``count`` is None when the search could not run (``error`` says why); 0 means no known
    compound at this mass (a new one, as far as the library knows).
    """

    count: int | None
    matches: tuple[KnownMatch, ...] = ()
    """Best first. As many as ``count``, except in results stored before this record existed
    (their matches are the library candidates the well kept)."""
    ions: tuple[str, ...] = ()
    """Ion species the look-up used."""
    ppm: float | None = None
    genus: str | None = None
    family: str | None = None
    error: str | None = None

    @property
    def summary(self) -> str:
        """'known (n candidates)', 'no known compound at this mass', or 'not searched: why'."""
        if self.count is None:
            return f"not searched: {self.error or 'unknown reason'}"
        if self.count == 0:
            return "no known compound at this mass"
        return f"known ({self.count} candidate{'s' if self.count != 1 else ''})"

    def as_dict(self) -> dict[str, Any]:
        return {"count": self.count, "summary": self.summary, "matches": [m.as_dict() for m in self.matches],
                "ions": list(self.ions), "ppm": self.ppm, "genus": self.genus, "family": self.family, "error": self.error}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Dereplication":
        count = d.get("count")
        return cls(count=None if count is None else int(count), matches=tuple(KnownMatch.from_dict(m) for m in d.get("matches") or ()),
                   ions=tuple(d.get("ions") or ()), ppm=d.get("ppm"), genus=d.get("genus"), family=d.get("family"), error=d.get("error"))

    @classmethod
    def from_old_record(cls, notes: tuple[str, ...], candidates: tuple[dict[str, Any], ...]) -> tuple["Dereplication | None", tuple[str, ...]]:
        """(record, remaining notes) of a result stored when the search spoke only through a note
        ('known compounds: known (3 candidates)'); (None, notes) when that well was not searched."""
        for k, note in enumerate(notes):
            text = str(note)
            if not text.startswith(_KNOWN_NOTE):
                continue
            said = text[len(_KNOWN_NOTE):]
            rest = notes[:k] + notes[k + 1:]
            m = re.fullmatch(r"known \((\d+) candidates?\)", said)
            if said == "no known compound at this mass":
                return cls(count=0), rest
            if m is None:
                return cls(count=None, error=said), rest
            kept = [c["known"] for c in candidates if c.get("source") == "library" and isinstance(c.get("known"), dict)]
            matches = tuple(
                KnownMatch(rank=r, name=str(c.get("name") or ""), formula=str(c.get("formula") or ""), taxon_match=str(c.get("taxon_match") or "other"),
                           error_ppm=c.get("error_ppm"), inchikey_block=c.get("inchikey_block"), smiles=str(c.get("smiles") or ""))
                for r, c in enumerate(kept, start=1)
            )
            return cls(count=int(m.group(1)), matches=matches), rest
        return None, notes


_KNOWN_NOTE = "known compounds: "


@dataclass(frozen=True, eq=False)
class WellResult:
    """Everything the plate run learned about one well.

    All fields but ``trace`` and ``known`` are JSON-ready (dicts, lists, strings, numbers);
    ``known`` is a typed record with ``as_dict``. The record round-trips through the results
    database and the exports unchanged.
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
    known: Dereplication | None = None
    """The known-compound search (None when the run had no library or the well no MS feature)."""
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
            if isinstance(v, Dereplication):
                v = v.as_dict()
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
        if isinstance(kw.get("known"), dict):
            kw["known"] = Dereplication.from_dict(kw["known"])
        elif "known" not in d:
            # Results stored before the search had its own field said it in a note.
            kw["known"], notes = Dereplication.from_old_record(tuple(kw.get("notes") or ()), tuple(kw.get("candidates") or ()))
            if "notes" in kw:
                kw["notes"] = notes
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
