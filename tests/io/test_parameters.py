"""Bruker parameter files: bounded parsing (truncation is an error, never a loop) and tolerant decoding."""

from __future__ import annotations

import pytest

from nmrcheck.errors import InputFileError
from nmrcheck.io.parameters import parse_parameter_text, read_parameter_file

# A minimal acqus in the JCAMP-DX "Parameter Values" layout Bruker writes (common practice).
ACQUS = """##TITLE= Parameter file
##JCAMPDX= 5.0
##DATATYPE= Parameter Values
$$ a comment
##$BF1= 600.13
##$D= (0..3)
0 1.5 0.002
0
##$NUC1= <1H>
##$CPDPRG= (0..2)
<mlev> <>
<waltz16>
##$PULPROG= <zg30>
##$SFO1= 600.1327
##$TD= 65536
##$AUNM= <au_zg
continued>
##END=
"""


def test_values_strings_and_arrays():
    p = parse_parameter_text(ACQUS)
    assert p["BF1"] == 600.13 and p["TD"] == 65536 and p["SFO1"] == 600.1327
    assert p["D"] == [0, 1.5, 0.002, 0]
    assert p["CPDPRG"] == ["mlev", "", "waltz16"]
    assert p["NUC1"] == "1H" and p["PULPROG"] == "zg30"
    assert p["AUNM"] == "au_zg\ncontinued"
    assert p["_comments"] == ["$$ a comment"]


@pytest.mark.parametrize("cut_after, field", [("##$PULPROG= <zg", "PULPROG"), ("##$D= (0..3)\n0 1.5", "$D"), ("##$AUNM= <au_zg", "AUNM"), ("##$CPDPRG= (0..2)\n<ml", "CPDPRG")])
def test_truncated_inside_a_value_is_an_error(cut_after, field):
    text = ACQUS[: ACQUS.index(cut_after) + len(cut_after)]
    with pytest.raises(InputFileError, match=field.replace("$", r"\$")):
        parse_parameter_text(text, source="acqus")


def test_a_string_never_swallows_the_next_parameter():
    """An unterminated '<' followed by more parameters is an error at that parameter (not a read to the end of the file)."""
    text = ACQUS.replace("##$NUC1= <1H>", "##$NUC1= <1H")
    with pytest.raises(InputFileError, match="NUC1"):
        parse_parameter_text(text)


def test_absurd_array_length_is_refused():
    with pytest.raises(InputFileError, match="array items"):
        parse_parameter_text(ACQUS.replace("(0..3)", "(0..999999999)"))


def test_stray_byte_is_not_fatal(tmp_path):
    p = tmp_path / "acqus"
    p.write_bytes(ACQUS.replace("$$ a comment", "$$ Kommentar gew\xe4hlt").encode("latin-1"))
    assert read_parameter_file(p)["SFO1"] == 600.1327


def test_windows_line_ends(tmp_path):
    p = tmp_path / "acqus"
    p.write_bytes(ACQUS.replace("\n", "\r\n").encode())
    params = read_parameter_file(p)
    assert params["D"] == [0, 1.5, 0.002, 0] and params["AUNM"] == "au_zg\ncontinued"


def test_fifo_is_refused_without_blocking(tmp_path):
    import os

    p = tmp_path / "acqus"
    os.mkfifo(p)
    with pytest.raises(InputFileError, match="FIFO"):
        read_parameter_file(p)
