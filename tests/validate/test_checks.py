"""Checks and verdicts on hand-built evidence (no spectrum processing needed)."""

from __future__ import annotations

from dataclasses import replace

import pytest

from nmrcheck.chem.adducts import ion_mz
from nmrcheck.chem.formula import parse_formula
from nmrcheck.validate import (
    Candidate,
    Evidence,
    MsFeature,
    ObservedRegion,
    candidates_from_strings,
    check_candidate,
    check_candidates,
    check_mass,
    check_proton_count,
    check_unsaturation,
    fit_count,
)
from nmrcheck.io.structures import mol_from_smiles
from nmrcheck.validate.checks import expected_visible, visible_h


def _estragole_evidence(ms=True, snr=500.0, solvent="CDCl3"):
    """Estragole (4-allylanisole, C10H12O) as textbook 1H data: 7.10 (2H), 6.83 (2H), 5.95 (1H),
    5.05 (2H), 3.79 (3H), 3.33 (2H) ppm (common textbook values, from memory); integrals at 100 per H."""
    peaks = [(7.10, 2), (6.83, 2), (5.95, 1), (5.05, 2), (3.79, 3), (3.33, 2)]
    regions = tuple(ObservedRegion(p + 0.05, p - 0.05, 100.0 * n, p) for p, n in peaks)
    feature = MsFeature(((ion_mz(parse_formula("C10H12O").monoisotopic_mass, "[M+H]+") * (1 + 1e-6), "[M+H]+"),), ppm=5) if ms else None
    return Evidence("synthetic", solvent, regions, ((7.28, 7.24, "CHCl3"),), 12.0, 11.5, 12.5, snr, feature)


def _cand(smiles):
    mol, problem = mol_from_smiles(smiles)
    assert problem is None
    from nmrcheck.validate import formula_of_mol

    return Candidate(smiles, formula_of_mol(mol), mol, "smiles")


def test_right_structure_is_consistent():
    v = check_candidate(_cand("C=CCc1ccc(OC)cc1"), _estragole_evidence())
    assert v.verdict == "consistent", v.reasons


def test_two_h_fewer_is_inconsistent_without_ms():
    """C10H10O can show at most 10 H where the integrals are whole numbers only for 12."""
    (c,), _ = candidates_from_strings(formulas=["C10H10O"])
    assert check_candidate(c, _estragole_evidence(ms=False)).verdict == "inconsistent"


def test_two_h_more_structure_is_inconsistent_without_ms():
    """4-Propylanisole (C10H14O, RDBE 4) cannot hold the ring plus the vinyl signals (RDBE >= 5)."""
    v = check_candidate(_cand("CCCc1ccc(OC)cc1"), _estragole_evidence(ms=False))
    assert v.verdict == "inconsistent" and v.check("unsaturation").status == "fail"


def test_no_ms_feature_is_undecided_and_low_snr_too():
    c = _cand("C=CCc1ccc(OC)cc1")
    assert check_candidate(c, _estragole_evidence(ms=False)).verdict == "undecided"
    v = check_candidate(c, _estragole_evidence(snr=3.0))
    assert v.verdict == "undecided"
    assert v.check("proton count").status == "not-applicable"


def test_mass_check_ppm():
    """C10H12O monoisotopic 148.08882 u (molmass, independent) against a 1 ppm high feature."""
    r = check_mass(Candidate("x", parse_formula("C10H12O")), _estragole_evidence())
    assert r.status == "pass" and abs(r.details["error_ppm"] - 1.0) < 0.05
    r2 = check_mass(Candidate("y", parse_formula("C9H8O2")), _estragole_evidence())
    assert r2.status == "fail"


def test_fit_count_whole_numbers_and_half_proton_doublet():
    """Integrals 2:2:1:2:3:2 fit 12 H exactly; anchored to 10 H the 1H signal becomes 0.83 H and the 3H one 2.5 H."""
    ints = [200, 200, 100, 200, 300, 200]
    assert fit_count(ints, 12).fits
    bad = fit_count(ints, 10)
    assert not bad.fits and abs(bad.h[4] - 2.5) < 1e-9


def test_proton_count_explains_in_words():
    r = check_proton_count(Candidate("C10H10O", parse_formula("C10H10O")), _estragole_evidence())
    assert r.status == "fail" and "visible H" in r.explanation


def test_unsaturation_rule_aromatic_plus_vinyl():
    """Four aromatic H (6.5-8.8 ppm) and an olefinic H (5.5-6.5 ppm) demand RDBE >= 5 (rule table unsaturation_signals.csv)."""
    r = check_unsaturation(_cand("CCCc1ccc(OC)cc1"), _estragole_evidence())
    assert r.status == "fail" and r.details["required"] == 5


def test_ranking_ties_share_a_rank():
    cands, _ = candidates_from_strings(formulas=["C10H12O", "C10H12O", "C10H10O"])
    ranked = check_candidates(cands, _estragole_evidence())
    assert [v.rank for v in ranked] == [1, 1, 3]
    assert ranked[-1].verdict == "inconsistent"


@pytest.mark.parametrize(
    "smiles,solvent,expected",
    [
        # Ethanol C2H6O: 5 carbon-bound H, one OH (exchange table solvent_exchange.csv, common practice).
        ("CCO", "D2O", (5, 5)),
        ("CCO", "CD3OD", (5, 5)),
        ("CCO", "DMSO-d6", (6, 6)),
        ("CCO", "CDCl3", (5, 6)),
        ("CCO", "acetone-d6", (5, 6)),
        # Acetic acid: COOH may be lost even in DMSO-d6 (common practice).
        ("CC(=O)O", "DMSO-d6", (3, 4)),
        # A solvent the exchange table does not cover (THF-d8) or none: the OH may or may not be seen.
        ("CCO", "THF-d8", (5, 6)),
        ("CCO", None, (5, 6)),
    ],
)
def test_exchangeable_visibility_per_solvent(smiles, solvent, expected):
    evidence = _estragole_evidence(solvent=solvent)
    assert visible_h(_cand(smiles), evidence)[:2] == expected
    assert expected_visible(_cand(smiles), replace(evidence, flagged=()))[:2] == expected


def test_formula_exchangeable_bound_from_heteroatoms():
    """C9H19NO4: 4 O (one H each) and N (two H) bound the exchangeable H at 6 (valence rule, from memory)."""
    c = Candidate("C9H19NO4", parse_formula("C9H19NO4"))
    lo, hi, _, bound = visible_h(c, _estragole_evidence())
    assert (lo, hi, bound) == (13, 19, 6)
