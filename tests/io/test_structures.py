"""Reading candidate files: SDF with names kept, bad records kept with their problem."""

from __future__ import annotations

import pytest
from rdkit import Chem

from nmrcheck.errors import InputFileError
from nmrcheck.io.structures import read_structures


def _block(smiles, name):
    m = Chem.MolFromSmiles(smiles)
    m.SetProp("_Name", name)
    return Chem.MolToMolBlock(m) + "$$$$\n"


def test_sdf_many_records_names_kept_and_bad_one_reported(tmp_path):
    bad = "broken\n  x\n\n  1  0  0  0  0  0  0  0  0  0999 V2000\n    0.0 0.0 0.0 Qq  0  0\nM  END\n$$$$\n"
    p = tmp_path / "set.sdf"
    p.write_text(_block("CCO", "ethanol") + bad + _block("c1ccccc1", "benzene"))
    entries = read_structures(p)
    assert [e.label for e in entries][::2] == ["ethanol", "benzene"]
    assert entries[0].ok and entries[2].ok and not entries[1].ok
    assert entries[2].mol.GetNumAtoms() == 6


def test_smiles_file_with_names(tmp_path):
    p = tmp_path / "c.smi"
    p.write_text("CCO ethanol\n# comment\nC1CC bad ring\n")
    e = read_structures(p)
    assert e[0].label == "ethanol" and e[0].ok
    assert not e[1].ok and "C1CC" in e[1].problem


def test_mol_file_label_from_file_name(tmp_path):
    m = Chem.MolFromSmiles("CCO")
    p = tmp_path / "ethanol.mol"
    p.write_text(Chem.MolToMolBlock(m))
    (e,) = read_structures(p)
    assert e.label == "ethanol" and e.mol.GetNumAtoms() == 3


@pytest.mark.parametrize("content,suffix", [("", ".sdf"), ("x", ".xyz")])
def test_empty_or_unknown_file(tmp_path, content, suffix):
    p = tmp_path / f"f{suffix}"
    p.write_text(content)
    with pytest.raises(InputFileError):
        read_structures(p)
