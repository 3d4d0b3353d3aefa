"""Read a retention calibration: reference compounds run on the plate's gradient, with their retention times.

CSV with ``rt_min`` and either ``logp`` or ``smiles`` (the logP is then computed), and
optionally ``name``; lines starting with ``#`` are comments.
"""

from __future__ import annotations

import csv
import io
import math
import os
from dataclasses import dataclass
from pathlib import Path

from nmrcheck.errors import InputFileError

__all__ = ["RetentionReference", "read_retention_calibration"]


@dataclass(frozen=True)
class RetentionReference:
    """One reference compound: its retention time and its logP or structure."""

    line: int
    name: str
    rt_min: float
    logp: float | None
    smiles: str | None


def read_retention_calibration(path: str | os.PathLike) -> tuple[RetentionReference, ...]:
    """Reference compounds of a retention calibration file.

    Raises
    ------
    InputFileError
        Missing file, missing columns, or a row whose time or logP is not a number (the
        message names the line).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise InputFileError(p, f"cannot be read ({exc.strerror or exc})") from None
    kept = [(n, ln) for n, ln in enumerate(text.splitlines(), start=1) if ln.strip() and not ln.lstrip().startswith("#")]
    numbers = [n for n, _ in kept]  # file line of each line the reader sees
    reader = csv.DictReader(io.StringIO("\n".join(ln for _, ln in kept)))
    fields = {(f or "").strip().lower(): f for f in reader.fieldnames or []}
    if "rt_min" not in fields or not ({"logp", "smiles"} & set(fields)):
        raise InputFileError(p, "a retention calibration needs an 'rt_min' column and a 'logp' or 'smiles' column")
    out = []
    for row in reader:
        n = numbers[reader.line_num - 1]
        get = {k: (row.get(f) or "").strip() for k, f in fields.items()}
        try:
            rt = float(get["rt_min"])
            logp = float(get["logp"]) if get.get("logp") else None
        except ValueError:
            raise InputFileError(p, f"line {n}: rt_min and logp must be numbers") from None
        if not math.isfinite(rt) or rt < 0 or (logp is not None and not math.isfinite(logp)):
            raise InputFileError(p, f"line {n}: rt_min must be a time >= 0 and logp finite")
        if logp is None and not get.get("smiles"):
            raise InputFileError(p, f"line {n}: give a logp or a smiles")
        out.append(RetentionReference(n, get.get("name", "") or f"line {n}", rt, logp, get.get("smiles") or None))
    if not out:
        raise InputFileError(p, "the retention calibration holds no reference compound")
    return tuple(out)
