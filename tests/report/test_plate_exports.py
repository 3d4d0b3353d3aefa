"""CSV export safe in spreadsheets (OWASP 'CSV Injection' guidance: a leading quote before =, +, -, @, tab, CR; from memory)."""

from __future__ import annotations

import csv

import pytest

from nmrcheck.plate import WellResult
from nmrcheck.report.plate_exports import spreadsheet_safe, write_csv


@pytest.mark.parametrize(
    ("cell", "written"),
    [
        ("=HYPERLINK(\"http://x\",\"y\")", "'=HYPERLINK(\"http://x\",\"y\")"),
        ("+1+cmd|' /C calc'!A0", "'+1+cmd|' /C calc'!A0"),
        ("-2+3", "'-2+3"),
        ("@SUM(A1:A9)", "'@SUM(A1:A9)"),
        ("\t=1", "'\t=1"),
        ("\r=1", "'\r=1"),
        ("-inf", "'-inf"),
        ("-", "'-"),
        # Numbers stay numbers: a negative mass error is a number, not a formula.
        ("-0.45", "-0.45"),
        ("-12", "-12"),
        ("+3.5e-4", "+3.5e-4"),
        ("-.5", "-.5"),
        # Ordinary text is untouched.
        ("C15H10O5", "C15H10O5"),
        ("fraction 3 = main peak", "fraction 3 = main peak"),
        ("", ""),
    ],
)
def test_spreadsheet_safe(cell, written):
    assert spreadsheet_safe(cell) == written


def test_csv_cells_from_the_manifest_are_neutralised(tmp_path):
    notes = "=1+2"
    r = WellResult(well="A1", status="error", verdict="error", error="@import", spec={"notes": notes}, spectrum_path="-rf",
                   processing={"snr": -3.0})
    path = write_csv([r], tmp_path / "results.csv")
    with open(path, newline="", encoding="utf-8") as fh:
        row = next(csv.DictReader(fh))
    assert row["notes"] == "'=1+2" and row["error"] == "'@import" and row["spectrum_path"] == "'-rf"
    assert row["snr"] == "-3"
    assert not list(tmp_path.glob("*.tmp"))
