"""Candidate input: bad entries are reported one by one and the rest still run."""

from __future__ import annotations

from nmrcheck.validate import candidates_from_file, candidates_from_strings


def test_invalid_smiles_and_unknown_element_reported_others_kept():
    good, bad = candidates_from_strings(formulas=["C10H12O", "C10H12Xx"], smiles=["C1CC", "COc1ccc(CC=C)cc1 estragole"])
    assert [c.label for c in good] == ["C10H12O", "estragole"]
    assert len(bad) == 2
    assert "Xx" in bad[0].problem
    assert "C1CC" in bad[1].problem


def test_structure_formula_from_rdkit():
    """Estragole is C10H12O (RDKit CalcMolFormula agrees; independent)."""
    from rdkit import Chem
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    (c,), _ = candidates_from_strings(smiles=["COc1ccc(CC=C)cc1"])
    assert c.formula.hill == CalcMolFormula(Chem.MolFromSmiles("COc1ccc(CC=C)cc1"))


def test_empty_sdf_is_one_clear_problem(tmp_path):
    p = tmp_path / "empty.sdf"
    p.write_text("\n")
    good, bad = candidates_from_file(p)
    assert good == () and "empty" in bad[0].problem


def test_csv_mixed_rows(tmp_path):
    p = tmp_path / "c.csv"
    p.write_text("label,formula,smiles\na,C10H12O,\nb,,COc1ccc(CC=C)cc1\nc,C5Q,\nd,,\n")
    good, bad = candidates_from_file(p)
    assert [c.label for c in good] == ["a", "b"]
    assert [b.label for b in bad] == ["c", "d"]
