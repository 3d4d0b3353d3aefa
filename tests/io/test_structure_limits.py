"""Candidate structures are bounded: at most MAX_HEAVY_ATOMS heavy atoms, refused before RDKit parses a giant SMILES."""

from __future__ import annotations

from nmrcheck.io.structures import MAX_HEAVY_ATOMS, mol_from_smiles, smiles_size_problem


def test_natural_product_sized_smiles_pass():
    # Vancomycin-sized structures (about 100 heavy atoms) are far inside the limit.
    assert smiles_size_problem("C" * 150) is None
    mol, problem = mol_from_smiles("CC(=O)Oc1ccccc1C(=O)O")
    assert problem is None and mol.GetNumHeavyAtoms() == 13  # aspirin, C9H8O4


def test_giant_smiles_refused_by_its_size():
    _, problem = mol_from_smiles("C" * 100_000)
    assert problem is not None and str(MAX_HEAVY_ATOMS) in problem
    _, problem = mol_from_smiles("C" * (MAX_HEAVY_ATOMS + 1))
    assert problem is not None and "heavy atoms" in problem


def test_hydrogen_brackets_do_not_count_as_heavy_atoms():
    assert smiles_size_problem("[2H]" * 2000) is None or "heavy" not in smiles_size_problem("[2H]" * 2000)
