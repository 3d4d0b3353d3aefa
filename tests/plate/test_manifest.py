"""Manifest validation: a good manifest reads; a broken one lists every problem by line and column."""

from __future__ import annotations

from pathlib import Path

import pytest

from nmrcheck.errors import ManifestError
from nmrcheck.plate import layout_named, read_manifest

DOCS = Path(__file__).resolve().parents[2] / "docs"


def test_example_manifest_in_the_docs_is_valid():
    m = read_manifest(DOCS / "example-manifest.csv")
    assert m.layout.name == "96"
    assert len(m.wells) >= 3
    first = m.wells[0]
    assert first.ms_features and first.ms_features[0][1] == "[M+H]+"


def test_fields_are_parsed(tmp_path):
    (tmp_path / "cands.csv").write_text("name,smiles,formula\nthymol,Cc1ccc(C(C)C)c(O)c1,\n,,C10H14O\n")
    (tmp_path / "m.csv").write_text(
        "# comment line\n"
        "well,spectrum,ms_feature,isotopes,rt_min,formulas,structures,candidates_file,solvent,notes\n"
        "a01,fids/{well}/1,151.1117 [M+H]+; 173.0937 [M+Na]+,\"100,11.2\",4.5,C10H14O,eugenol: COc1cc(CC=C)ccc1O,cands.csv,dmso,\"a, b\"\n"
    )
    w = read_manifest(tmp_path / "m.csv").wells[0]
    assert w.well == "A1" and w.line == 3
    assert w.ms_features == ((151.1117, "[M+H]+"), (173.0937, "[M+Na]+"))
    assert w.isotopes == (100.0, 11.2) and w.rt_min == 4.5
    assert w.formulas == ("C10H14O",)  # the file's duplicate formula is kept once
    assert ("eugenol", "COc1cc(CC=C)ccc1O") in w.structures and ("thymol", "Cc1ccc(C(C)C)c(O)c1") in w.structures
    assert w.solvent == "DMSO-d6"  # alias table nmrcheck/data/solvent_aliases.csv
    assert w.notes == "a, b"


def test_every_broken_row_is_reported(tmp_path):
    (tmp_path / "m.csv").write_text(
        "well,spectrum,ms_feature,isotopes,rt_min,formulas,structures,candidates_file,solvent\n"
        "A1,a,301.07 M+H,,,,,,\n"          # line 2: ion not in brackets
        "Z99,b,,,,,,,\n"                   # line 3: not a well
        "A3,,,,,,,,\n"                     # line 4: no spectrum
        "A4,d,,,soon,,,,\n"                # line 5: rt not a number
        "A5,e,,,,C10H14Xx,,,\n"            # line 6: unknown element
        "A6,f,,,,,C1CC(,,\n"               # line 7: unreadable SMILES
        "A7,g,,,,,,missing.csv,\n"         # line 8: candidates file absent
        "A8,h,,,,,,,heavy water?\n"        # line 9: unknown solvent
        "A1,i,,,,,,,\n"                    # line 10: duplicate well
        "A9,j,,100,,,,,\n"                 # line 11: isotopes without a feature (and only one value)
    )
    with pytest.raises(ManifestError) as info:
        read_manifest(tmp_path / "m.csv")
    problems = info.value.problems
    expected = [
        ("line 2,", "ms_feature"), ("line 3,", "well"), ("line 4,", "spectrum"), ("line 5,", "rt_min"),
        ("line 6,", "formulas"), ("line 7,", "structures"), ("line 8,", "candidates_file"),
        ("line 9,", "solvent"), ("line 10,", "well"), ("line 11,", "isotopes"),
    ]
    for line, column in expected:
        assert any(p.startswith(line) and f"'{column}'" in p for p in problems), (line, column, problems)
    assert "problem(s) in the manifest" in str(info.value)


def test_header_problems(tmp_path):
    (tmp_path / "m.csv").write_text("well,spectra\nA1,x\n")
    with pytest.raises(ManifestError) as info:
        read_manifest(tmp_path / "m.csv")
    assert any("'spectrum'" in p for p in info.value.problems)
    assert any("'spectra'" in p and "unknown column" in p for p in info.value.problems)


def test_empty_and_missing_manifest(tmp_path):
    (tmp_path / "m.csv").write_text("")
    with pytest.raises(ManifestError, match="empty"):
        read_manifest(tmp_path / "m.csv")
    with pytest.raises(ManifestError, match="does not exist"):
        read_manifest(tmp_path / "nope.csv")


def test_384_layout_is_inferred_and_96_enforced(tmp_path):
    (tmp_path / "m.csv").write_text("well,spectrum\nP24,x\nA1,y\n")
    m = read_manifest(tmp_path / "m.csv")
    assert m.layout.name == "384" and [w.well for w in m.wells] == ["A1", "P24"]
    with pytest.raises(ManifestError, match="outside the 96-well layout"):
        read_manifest(tmp_path / "m.csv", layout=96)
    # 8 x 12 and 16 x 24: the ANSI/SLAS microplate formats (common practice).
    assert len(layout_named(96).wells()) == 96 and len(layout_named("384").wells()) == 384
