"""NMReDATA reader: assignment and peak-list parsing on built records, and on the real reference records."""

from __future__ import annotations

import pytest
from rdkit import Chem

from nmrcheck.errors import InputFileError
from nmrcheck.io.nmredata import read_nmredata


def _write(tmp_path, mol, tags: dict[str, str], name="rec.nmredata.sdf"):
    """An NMReDATA record built by RDKit's mol block writer plus hand-written data items."""
    body = Chem.MolToMolBlock(mol)
    for tag, value in tags.items():
        # two blank lines after each item, as some writers produce
        body += f"> <{tag}>\n{value}\n\n\n"
    path = tmp_path / name
    path.write_text(body + "$$$$\n", encoding="utf-8")
    return path


def test_assignments_with_implicit_hydrogens(tmp_path):
    """Ethyl acetate CC(=O)OCC: atoms 1..6 in the file; H<n> names the H on atom n."""
    mol = Chem.MolFromSmiles("CC(=O)OCC")
    path = _write(
        tmp_path,
        mol,
        {
            "NMREDATA_VERSION": "1.1",
            "NMREDATA_SOLVENT": "CDCl3",
            "NMREDATA_SMILES": "CC(=O)OCC",
            "NMREDATA_ASSIGNMENT": "h1, 2.05, H1\\\nh5, 4.12, H5 ; OCH2\\\nc2, 171.1, 2\\\nh6, 1.26, H6",
            "NMREDATA_1D_1H": "Larmor=400.13\n4.12, L=h5, S=q\n2.05, L=h1\n1.26, L=h6",
        },
    )
    rec = read_nmredata(path)
    assert rec.solvent == "CDCl3" and rec.smiles == "CC(=O)OCC"
    assert [(a.label, a.shift_ppm, a.atoms, a.hydrogen) for a in rec.assignments] == [
        ("h1", 2.05, (0,), True),
        ("h5", 4.12, (4,), True),
        ("c2", 171.1, (1,), False),
        ("h6", 1.26, (5,), True),
    ]
    assert len(rec.hydrogen_assignments) == 3
    spectrum = rec.spectra["1H"]
    assert spectrum.parameters["Larmor"] == "400.13"
    assert [p.shift_ppm for p in spectrum.peaks] == [4.12, 2.05, 1.26]
    assert dict(spectrum.peaks[0].attributes) == {"L": "h5", "S": "q"}


def test_assignment_to_an_explicit_hydrogen_atom(tmp_path):
    """A number naming an explicit H atom is read as the H of its heavy atom (RDKit AddHs puts H after heavy atoms)."""
    mol = Chem.AddHs(Chem.MolFromSmiles("C=O"))
    h_number = next(a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1) + 1
    path = _write(tmp_path, mol, {"NMR_ASSIGNMENT": f"h1, 9.6, {h_number}"})
    (a,) = read_nmredata(path).assignments
    assert a.atoms == (0,) and a.hydrogen


def test_missing_file(tmp_path):
    with pytest.raises(InputFileError, match="no such file"):
        read_nmredata(tmp_path / "absent.sdf")


def test_record_without_mol_block(tmp_path):
    path = tmp_path / "bad.sdf"
    path.write_text("> <NMREDATA_SOLVENT>\nCDCl3\n\n$$$$\n")
    with pytest.raises(InputFileError, match="no mol block"):
        read_nmredata(path)


@pytest.mark.parametrize("line", ["h1, 2.0, H99", "h1, two, H1", "h1, 2.0"])
def test_bad_assignment_lines(tmp_path, line):
    path = _write(tmp_path, Chem.MolFromSmiles("CC"), {"NMREDATA_ASSIGNMENT": line})
    with pytest.raises(InputFileError, match="assignment"):
        read_nmredata(path)


@pytest.mark.refdata
def test_reads_every_reference_record(refdata):
    """All NMReDATA records of the reference set parse; their SMILES tag names the same molecule as the
    mol block (RDKit canonical SMILES as the independent check)."""
    files = sorted((refdata / "jcamp-fid").glob("*/assignments.nmredata.sdf"))
    if not files:
        pytest.skip(f"no NMReDATA records under {refdata / 'jcamp-fid'}")
    for f in files:
        rec = read_nmredata(f)
        assert rec.hydrogen_assignments, f
        assert rec.smiles
        # the SMILES tags carry no stereo, so compare the constitution only
        from_tag = Chem.MolToSmiles(Chem.MolFromSmiles(rec.smiles), isomericSmiles=False)
        assert Chem.MolToSmiles(Chem.RemoveHs(rec.mol), isomericSmiles=False) == from_tag, f
