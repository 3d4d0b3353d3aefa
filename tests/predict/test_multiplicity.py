"""First-order multiplets from 3J neighbours (n+1 rule), against textbook patterns (common practice)."""

from __future__ import annotations

import pytest
from rdkit import Chem

from nmrcheck.predict import group_environments, predict_shifts
from nmrcheck.predict.multiplicity import multiplets


def _patterns(smiles):
    mol = Chem.MolFromSmiles(smiles)
    envs = group_environments(predict_shifts(mol))
    m = multiplets(mol, envs)
    return {(e.n_h, round(e.ppm, 1)): m[k] for k, e in enumerate(envs)}, envs, m


@pytest.mark.parametrize(
    "smiles,expected",
    [
        # ethyl acetate: OCH2 quartet, CH3 triplet, acetyl singlet (textbook, common practice)
        ("CCOC(C)=O", {"quartet": 2, "triplet": 3, "singlet": 3}),
        # 2-iodopropane: CH septet, 2 CH3 doublet (textbook)
        ("CC(C)I", {"septet": 1, "doublet": 6}),
        # 1-propanol: CH3 triplet, CH2 sextet, OCH2 triplet; OH not coupled (fast exchange)
        ("CCCO", {"triplet": 5, "sextet": 2, "singlet": 1}),
    ],
)
def test_textbook_patterns(smiles, expected):
    _, envs, m = _patterns(smiles)
    got: dict[str, int] = {}
    for k, e in enumerate(envs):
        got[m[k].name] = got.get(m[k].name, 0) + e.n_h
    assert got == expected


def test_equivalent_hydrogens_do_not_split_each_other():
    """Ethane-like equivalence: 1,2-dichloroethane shows one singlet for 4 H (textbook)."""
    _, envs, m = _patterns("ClCCCl")
    assert len(envs) == 1 and m[0].name == "singlet" and m[0].width_hz == 0


def test_para_disubstituted_ring_gives_doublets_and_fluorine_couples():
    """4-Fluorotoluene: each ring H couples to one ortho H (8 Hz) and to F (ortho 8-9 Hz, meta 5-6 Hz): never a singlet."""
    _, envs, m = _patterns("Cc1ccc(F)cc1")
    ring = [m[k] for k, e in enumerate(envs) if e.shift_class == "aromatic"]
    assert len(ring) == 2 and all(r.width_hz >= 12 for r in ring)
    methyl = [m[k] for k, e in enumerate(envs) if e.n_h == 3][0]
    assert methyl.name == "singlet"


def test_trans_olefin_couples_wider_than_ring_olefin():
    """Typical 3J: trans/unknown acyclic C=C 13-16 Hz, cis in a ring 10 Hz (common practice)."""
    _, envs, m = _patterns("CC=CC(=O)OC")
    olefinic = [m[k] for k, e in enumerate(envs) if e.shift_class == "olefinic"]
    assert all(r.width_hz >= 13 for r in olefinic)
