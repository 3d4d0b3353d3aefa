"""Candidate structures are bounded: at most MAX_HEAVY_ATOMS heavy atoms, refused before RDKit parses a giant SMILES."""

from __future__ import annotations

from nmrcheck.io.structures import MAX_HEAVY_ATOMS, mol_from_smiles, smiles_size_problem


def test_natural_product_sized_smiles_pass():
    # Natural-product sizes (vancomycin 101, maitotoxin 236 heavy atoms; from memory) are inside the limit.
    assert smiles_size_problem("C" * 240) is None
    mol, problem = mol_from_smiles("CC(=O)Oc1ccccc1C(=O)O")
    assert problem is None and mol.GetNumHeavyAtoms() == 13  # aspirin, C9H8O4


def test_giant_smiles_refused_by_its_size():
    _, problem = mol_from_smiles("C" * 100_000)
    assert problem is not None and str(MAX_HEAVY_ATOMS) in problem
    _, problem = mol_from_smiles("C" * (MAX_HEAVY_ATOMS + 1))
    assert problem is not None and "heavy atoms" in problem


def test_hydrogen_brackets_do_not_count_as_heavy_atoms():
    assert smiles_size_problem("[2H]" * 2000) is None or "heavy" not in smiles_size_problem("[2H]" * 2000)


def test_candidate_file_size_is_bounded(tmp_path):
    import pytest

    from nmrcheck.errors import InputFileError
    from nmrcheck.io.structures import MAX_CANDIDATE_FILE_BYTES, read_structures

    p = tmp_path / "many.smi"
    with open(p, "wb") as fh:
        fh.truncate(MAX_CANDIDATE_FILE_BYTES + 1)  # sparse: no real disk use
    with pytest.raises(InputFileError, match="larger than"):
        read_structures(p)
