"""The data rows of the project's own CSV files (manifest, timetable): blank lines and '#' comments skipped."""

from __future__ import annotations

import csv
from collections.abc import Iterator

__all__ = ["data_rows"]


def data_rows(reader: "csv._reader") -> Iterator[tuple[int, list[str]]]:
    """(line number, fields) of each row of ``reader`` that holds data.

    A row is skipped when it is empty, holds only blank fields, or its first field
    starts with ``#`` (a comment). The line number is the reader's, so multi-line
    quoted fields are numbered where they end, as ``csv`` counts them.
    """
    for fields in reader:
        if not fields or all(not f.strip() for f in fields) or fields[0].lstrip().startswith("#"):
            continue
        yield reader.line_num, fields
