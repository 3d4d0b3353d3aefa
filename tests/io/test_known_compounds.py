"""Reading known-compound library files: CSV/TSV columns by name (any case), SMILES files, errors."""

from __future__ import annotations

import pytest

from nmrcheck.errors import InputFileError
from nmrcheck.io.known_compounds import read_known_compounds
from nmrcheck.io.retention_calibration import read_retention_calibration


def test_tsv_columns_by_name_in_any_case(tmp_path):
    path = tmp_path / "lib.tsv"
    path.write_text("# exported\nSMILES\tName\tGenus\tFAMILY\textra\nCCO\tethanol\tSaccharomyces\tSaccharomycetaceae\tx\n")
    (row,) = list(read_known_compounds(path))
    assert (row.line, row.name, row.smiles, row.genus, row.family, row.formula) == (3, "ethanol", "CCO", "Saccharomyces", "Saccharomycetaceae", "")


def test_smiles_file(tmp_path):
    path = tmp_path / "lib.smi"
    path.write_text("CCO ethanol\n\nc1ccccc1O\n")
    rows = list(read_known_compounds(path))
    assert [(r.line, r.smiles, r.name) for r in rows] == [(1, "CCO", "ethanol"), (3, "c1ccccc1O", "")]


@pytest.mark.parametrize(("name", "content", "fragment"), [
    ("lib.csv", "name,formula\nx,C2H6O\n", "'smiles' column"),
    ("lib.xyz", "CCO\n", "unknown library file ending"),
])
def test_bad_library_files(tmp_path, name, content, fragment):
    path = tmp_path / name
    path.write_text(content)
    with pytest.raises(InputFileError, match=fragment):
        list(read_known_compounds(path))


def test_retention_calibration_rows(tmp_path):
    path = tmp_path / "cal.csv"
    path.write_text("# gradient A\nname,smiles,logp,rt_min\nphenol,c1ccccc1O,,4.1\n,,2.5,6.0\n")
    rows = read_retention_calibration(path)
    assert [(r.line, r.name, r.smiles, r.logp, r.rt_min) for r in rows] == [(3, "phenol", "c1ccccc1O", None, 4.1), (4, "line 4", None, 2.5, 6.0)]
    path.write_text("name,logp,rt_min\nx,1.0,-2\n")
    with pytest.raises(InputFileError, match="line 2"):
        read_retention_calibration(path)
