"""Fraction-collection timetables: reading, the detector window, and one-line errors naming line and field."""

from __future__ import annotations

import pytest

from nmrcheck.errors import InputFileError
from nmrcheck.io.timetable import FractionWindow, read_timetable, write_timetable


def test_reads_windows_and_comments(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("# plate 7\nwell,start_min,end_min,notes\na01,1.0,1.2,first\nA2,1.2,1.4,\n")
    t = read_timetable(p)
    assert t.wells == ("A1", "A2")
    assert t.window("A1") == FractionWindow("A1", 1.0, 1.2, 3, "first")


def test_detector_window_is_the_collection_window_moved_earlier_by_the_delay():
    """Eluate reaches the collector after the detector: a well's contents passed the detector earlier (common practice)."""
    assert FractionWindow("A1", 2.0, 2.5).detector_window(0.3) == pytest.approx((1.7, 2.2))


def test_write_then_read(tmp_path):
    wins = [FractionWindow("B3", 0.5, 0.6), FractionWindow("B4", 0.6, 0.7)]
    t = read_timetable(write_timetable(tmp_path / "t.csv", wins, comment="invented"))
    assert [(w.well, w.start_min, w.end_min) for w in t.windows] == [("B3", 0.5, 0.6), ("B4", 0.6, 0.7)]


@pytest.mark.parametrize(
    "text, where",
    [
        ("well,start_min\nA1,1\n", "line 1: the header lacks the column 'end_min'"),
        ("well,start_min,end_min,colour\nA1,1,2,red\n", "line 1, field 'colour'"),
        ("well,start_min,end_min\nZ1,1,2\n", "line 2, field 'well'"),
        ("well,start_min,end_min\nA1,one,2\n", "line 2, field 'start_min'"),
        ("well,start_min,end_min\nA1,1,2\nA2,2.5,2.4\n", "line 3, field 'end_min'"),
        ("well,start_min,end_min\nA1,1,2\nA1,2,3\n", "line 3, field 'well': A1 already given on line 2"),
        ("well,start_min,end_min\nA1,1,2\nA2,1.5,3\n", "line 3, field 'start_min': A2 starts at 1.5 min, inside A1"),
        ("well,start_min,end_min\nA1,-1,2\n", "line 2, field 'start_min'"),
        ("# nothing\n", "empty"),
        ("well,start_min,end_min\n", "names no well"),
    ],
)
def test_problems_are_one_line_naming_line_and_field(tmp_path, text, where):
    p = tmp_path / "t.csv"
    p.write_text(text)
    with pytest.raises(InputFileError) as err:
        read_timetable(p)
    assert where in str(err.value) and "\n" not in str(err.value)
