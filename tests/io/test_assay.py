"""Bioassay readouts: read and checked line by line, every problem one line naming line and field."""

from __future__ import annotations

import pytest

from nmrcheck.errors import InputFileError
from nmrcheck.io.assay import AssayReadout, read_assay, write_assay


def _write(tmp_path, text):
    p = tmp_path / "assay.csv"
    p.write_text(text, encoding="utf-8")
    return p


def test_reads_values_thresholds_and_direction(tmp_path):
    p = _write(tmp_path, "# plate 7, growth inhibition\nwell,value,unit,threshold,hit_when,assay\n"
                         "A01,87.5,%,50,above,growth\nb2,12,%,50,,growth\nC3,0.8,uM,5,below,IC50\nD4,3,uM,,,\n")
    got = read_assay(p)
    assert list(got) == ["A1", "B2", "C3", "D4"]
    assert got["A1"] == AssayReadout("A1", 87.5, "%", 50.0, "above", "growth")
    assert got["A1"].active is True and got["B2"].active is False
    # An IC50 is a hit when it is at or below the threshold.
    assert got["C3"].active is True
    assert got["D4"].active is None


def test_only_well_and_value_are_required(tmp_path):
    got = read_assay(_write(tmp_path, "value,well\n3.5,H12\n"))
    assert got["H12"].value == 3.5 and got["H12"].threshold is None


@pytest.mark.parametrize(
    "text, expected",
    [
        ("well,value\nA1,abc\n", "line 2, value: 'abc' is not a number"),
        ("well,value\nA1,nan\n", "line 2, value: 'nan' is not a finite number"),
        ("well,value\nZ1,3\n", "line 2, well: 'Z1' is not a well name"),
        ("well,value\nA1,3\nA01,4\n", "line 3, well: A1 is given twice"),
        ("well,value,hit_when\nA1,3,sideways\n", "line 2, hit_when: 'sideways' is not 'above' or 'below'"),
        ("well,value,threshold\nA1,3,high\n", "line 2, threshold: 'high' is not a number"),
        ("well,reading\nA1,3\n", "line 1: no 'value' column"),
        ("well,value,colour\nA1,3,red\n", "line 1: unknown column 'colour'"),
        ("well,value\nA1,3,4\n", "line 2: 3 fields where the header has 2"),
        ("# nothing\n", "no header line"),
    ],
)
def test_problems_are_one_line_naming_line_and_field(tmp_path, text, expected):
    with pytest.raises(InputFileError) as err:
        read_assay(_write(tmp_path, text))
    message = str(err.value)
    assert expected in message and "\n" not in message and "assay.csv" in message


def test_missing_file(tmp_path):
    with pytest.raises(InputFileError, match="no such file"):
        read_assay(tmp_path / "none.csv")


def test_write_then_read_round_trip(tmp_path):
    readouts = [AssayReadout("A1", 87.5, "%", 50.0, "above", "growth, 10 µg/mL"), AssayReadout("B7", 0.25, "µM", None, "below", "")]
    got = read_assay(write_assay(readouts, tmp_path / "a.csv"))
    assert list(got.values()) == readouts
