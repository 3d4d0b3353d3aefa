"""Reference tables shipped with nmrcheck (CSV files with a ``source`` column) and their loader."""

from __future__ import annotations

import csv
import re
from functools import lru_cache
from importlib import resources

from nmrcheck.errors import TableError

__all__ = ["load_table", "table_names", "user_citation", "user_citations"]


def table_names() -> list[str]:
    """Names (without ``.csv``) of every packaged table."""
    return sorted(
        p.name[:-4] for p in resources.files(__name__).iterdir() if p.name.endswith(".csv")
    )


@lru_cache(maxsize=None)
def load_table(name: str) -> tuple[dict[str, str], ...]:
    """Rows of the packaged table ``name`` as dicts of strings.

    Lines starting with ``#`` are comments. Every row must have a non-empty
    ``source`` column: a table value without a provenance is an error.
    """
    path = resources.files(__name__) / f"{name}.csv"
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise TableError(f"no packaged table named {name!r}") from None
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    reader = csv.DictReader(lines)
    if reader.fieldnames is None or "source" not in reader.fieldnames:
        raise TableError(f"{name}.csv: no 'source' column")
    rows = []
    for lineno, row in enumerate(reader, start=2):
        if None in row or any(v is None for v in row.values()):
            raise TableError(f"{name}.csv row {lineno}: wrong number of fields")
        if not row["source"].strip():
            raise TableError(f"{name}.csv row {lineno}: empty source")
        rows.append({k: v.strip() for k, v in row.items()})
    return tuple(rows)


_MEMORY_FORMS = (
    (re.compile(r"\s*\(\s*from memory\s*\)", re.IGNORECASE), ""),
    (re.compile(r"\(\s*from memory\s*[;,]\s*", re.IGNORECASE), "("),
    (re.compile(r"\s*[;,]\s*from memory\b", re.IGNORECASE), ""),
    (re.compile(r"\bfrom memory\s*[;,]?\s*", re.IGNORECASE), ""),
)


def user_citation(text: str | None) -> str:
    """A table's source as users see it: without the note that it was cited from memory.

    The data files keep that note for contributors; the reader of a report or a listing gets the
    citation itself (``'Gottlieb 1997 Table 1 (from memory)'`` becomes ``'Gottlieb 1997 Table 1'``).
    """
    if not text:
        return ""
    out = str(text)
    for pattern, repl in _MEMORY_FORMS:
        out = pattern.sub(repl, out)
    return re.sub(r"\s{2,}", " ", out).strip(" ;,")


def user_citations(obj):
    """A JSON-ready structure with :func:`user_citation` applied to every string in it (for JSON shown to users)."""
    if isinstance(obj, str):
        return user_citation(obj) if "memory" in obj.lower() else obj
    if isinstance(obj, dict):
        return {k: user_citations(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [user_citations(v) for v in obj]
    return obj
