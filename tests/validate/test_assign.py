"""Assignment of predicted environments to observed regions, on hand-built textbook evidence."""

from __future__ import annotations

import pytest

from nmrcheck.io.structures import mol_from_smiles
from nmrcheck.validate import Candidate, Evidence, ObservedRegion, check_candidate, check_candidates, formula_of_mol
from nmrcheck.validate.assign import assign


def _cand(smiles):
    mol, problem = mol_from_smiles(smiles)
    assert problem is None
    return Candidate(smiles, formula_of_mol(mol), mol, "smiles")


def _evidence(peaks, solvent="CDCl3", unit=100.0, mhz=400.0):
    """Regions from (ppm, H, lines, spread Hz) tuples, 100 integral units per H."""
    regions = tuple(
        ObservedRegion(p + 0.04, p - 0.04, unit * n, p, lines, spread, 1.5) for p, n, lines, spread in peaks
    )
    return Evidence("synthetic", solvent, regions, ((7.28, 7.24, "CHCl3"), (1.60, 1.52, "H2O")), None, None, None, 500.0, spectrometer_mhz=mhz)


#: Ethyl (E)-crotonate in CDCl3: 6.97 (dq, 1H), 5.84 (dq, 1H), 4.18 (q, 2H), 1.88 (dd, 3H), 1.28 (t, 3H)
#: (textbook values, from memory); lines and spread as first-order multiplets at 400 MHz.
CROTONATE = [(6.97, 1, 8, 22), (5.84, 1, 8, 22), (4.18, 2, 4, 21), (1.88, 3, 4, 9), (1.28, 3, 3, 14)]


def test_true_structure_fits_every_environment():
    a = assign(_cand("C/C=C/C(=O)OCC"), _evidence(CROTONATE))
    assert not a.misfits
    assert a.visible_h == 10 and a.explained_share > 0.99
    assert abs(a.unit - 100.0) < 1.0


def test_isomer_names_the_environment_that_does_not_fit():
    """Ethyl but-3-enoate (C6H10O2): its =CH2 (5.1-5.2 ppm) and allylic CH2 doublet (3.1 ppm) have no signal here."""
    v = check_candidate(_cand("C=CCC(=O)OCC"), _evidence(CROTONATE))
    check = v.check("assignment")
    assert check.status == "fail" and v.verdict == "inconsistent"
    assert "CH2 at predicted 3.1 ppm, 2 H, doublet: nothing observed between 2.1 and 4.1" in check.explanation


def test_rough_fit_of_an_isomer_is_only_a_warning():
    """Vinyl butyrate: every H can be put somewhere, but only roughly (an olefinic signal left over)."""
    v = check_candidate(_cand("CCCC(=O)OC=C"), _evidence(CROTONATE))
    assert v.check("assignment").status == "warn"


def test_overlap_lets_one_region_hold_two_environments():
    """Two signals merged into one 5 H region still assign (several environments per region)."""
    peaks = [(6.97, 1, 8, 22), (5.84, 1, 8, 22), (4.18, 2, 4, 21), (1.50, 6, 7, 40)]
    a = assign(_cand("C/C=C/C(=O)OCC"), _evidence(peaks))
    assert a.region_assigned[-1] == 6


def test_impurity_signal_is_left_unexplained():
    peaks = CROTONATE + [(3.49, 3, 1, 0)]  # methanol-like singlet (3 H at the unit), not of the compound
    a = assign(_cand("C/C=C/C(=O)OCC"), _evidence(peaks))
    assert not a.misfits
    assert [round(h) for _, h in a.residual_regions()] == [3]
    assert abs(a.explained_share - 10 / 13) < 0.02


def test_singlet_against_a_wide_multiplet_is_a_multiplet_misfit():
    """A methyl singlet cannot be a 4-line 21 Hz region on its own."""
    peaks = [(7.3, 5, 6, 15), (4.18, 2, 4, 21), (2.05, 3, 4, 21)]
    a = assign(_cand("CC(=O)OCc1ccccc1"), _evidence(peaks))
    assert any(e.status == "multiplet off" and e.label == "CH3" for e in a.environments)


def test_true_ranks_above_isomer():
    ranked = check_candidates([_cand("CCCC(=O)OC=C"), _cand("C/C=C/C(=O)OCC")], _evidence(CROTONATE))
    assert ranked[0].candidate.label == "C/C=C/C(=O)OCC" and ranked[0].rank < ranked[1].rank


def test_diastereotopic_methylene_may_show_two_signals():
    """Menthol-like chiral alcohol: a ring CH2 shown as two 1 H signals is no misfit (diastereotopic H)."""
    from nmrcheck.validate.assign import _resolve_equivalence
    from nmrcheck.predict import group_environments, predict_shifts

    mol, _ = mol_from_smiles("CC(C)[C@@H]1CC[C@@H](C)C[C@H]1O")
    envs = group_environments(predict_shifts(mol))
    split = _resolve_equivalence(mol, envs)
    assert len(split) > len(envs)
    assert sum(e.n_h for e in split) == sum(e.n_h for e in envs)


def test_bare_formula_cannot_be_assigned():
    from nmrcheck.chem.formula import parse_formula
    from nmrcheck.errors import CandidateError

    with pytest.raises(CandidateError, match="bare formula"):
        assign(Candidate("f", parse_formula("C6H10O2")), _evidence(CROTONATE))
