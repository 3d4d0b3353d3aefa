"""Exchangeable hydrogens: classes, the per-solvent table, visible-H counts for structures and formulas."""

from __future__ import annotations

import pytest
from rdkit import Chem

from nmrcheck.errors import CandidateError, FormulaError, ParameterError
from nmrcheck.predict import (
    SOLVENTS,
    exchangeable_bound,
    exchangeable_hydrogens,
    expected_visible_h,
    solvent_exchange_rules,
)
from nmrcheck.predict._tables import exchangeable_classes

# paracetamol: CH3 + 4 ArH = 7 C-H; phenol OH and amide NH
PARACETAMOL = Chem.MolFromSmiles("CC(=O)Nc1ccc(O)cc1")


@pytest.mark.parametrize("bad", ["xylene-d10", "THF-d8", ""])
def test_solvent_without_exchange_rules_is_a_parameter_error(bad):
    """THF-d8 is a known solvent (solvents.csv) but the exchange table has no rules for it."""
    with pytest.raises(ParameterError, match="solvent="):
        solvent_exchange_rules(bad)
    with pytest.raises(ParameterError, match="solvent="):
        expected_visible_h("C2H6O", bad)


def test_unknown_solvent_leaves_every_exchangeable_h_open():
    """Paracetamol C8H9NO2: 7 C-H, phenol OH and amide NH; with no solvent each may or may not be seen (RDKit count)."""
    assert tuple(expected_visible_h(PARACETAMOL, None)) == (7, 9, 7, 2)
    with pytest.raises(ParameterError, match="solvent="):
        solvent_exchange_rules(None)


@pytest.mark.parametrize(("spelling", "canonical"), [("dmso", "DMSO-d6"), ("MeOD", "CD3OD"), ("H2O+D2O", "H2O/D2O"), ("D2O", "D2O")])
def test_rules_accept_every_spelling_of_the_solvent_vocabulary(spelling, canonical):
    """Spellings as in acquisition files (common practice); the rules are those of the canonical solvent."""
    assert {r.solvent for r in solvent_exchange_rules(spelling).values()} == {canonical}


def test_table_covers_the_required_solvents():
    required = {"CDCl3", "DMSO-d6", "CD3OD", "D2O", "acetone-d6", "CD2Cl2", "C6D6", "CD3CN", "pyridine-d5"}
    assert required <= set(SOLVENTS)


@pytest.mark.parametrize("solvent", SOLVENTS)
def test_every_solvent_has_a_rule_for_every_class(solvent):
    rules = solvent_exchange_rules(solvent)
    assert set(rules) == set(exchangeable_classes())
    for rule in rules.values():
        assert rule.visible in ("yes", "maybe", "no")
        assert rule.source
        if rule.visible != "no":
            assert rule.low_ppm < rule.high_ppm


@pytest.mark.parametrize("solvent", ["D2O", "CD3OD"])
def test_deuterated_protic_solvents_exchange_away_fast_classes(solvent):
    """OH, NH2, COOH exchange for D in D2O and CD3OD (common practice)."""
    rules = solvent_exchange_rules(solvent)
    for h_class, info in exchangeable_classes().items():
        if info.fast_exchange:
            assert rules[h_class].visible == "no", h_class


def test_dmso_shows_hydroxyl_and_amide_cdcl3_may_not():
    """DMSO-d6 slows OH exchange (sharp, coupled OH); in CDCl3 and acetone-d6 OH may be broad or missing
    (common practice)."""
    assert solvent_exchange_rules("DMSO-d6")["alcohol OH"].visible == "yes"
    assert solvent_exchange_rules("DMSO-d6")["amide NH"].visible == "yes"
    assert solvent_exchange_rules("CDCl3")["alcohol OH"].visible == "maybe"
    assert solvent_exchange_rules("acetone-d6")["alcohol OH"].visible == "maybe"


def test_rules_are_read_only():
    with pytest.raises(TypeError):
        solvent_exchange_rules("CDCl3")["alcohol OH"] = None  # type: ignore[index]


def test_exchangeable_hydrogens_classes():
    sites = {s.h_class: s for s in exchangeable_hydrogens(PARACETAMOL)}
    assert set(sites) == {"amide NH", "phenol OH"}
    assert sites["phenol OH"].fast_exchange and not sites["amide NH"].fast_exchange
    assert sites["phenol OH"].element == "O" and sites["phenol OH"].n_h == 1


def test_exchangeable_hydrogens_counts_nh2_and_cooh():
    """Glycine zwitterion-free form NCC(=O)O: NH2 (2 H, amine) and COOH (1 H)."""
    sites = exchangeable_hydrogens(Chem.MolFromSmiles("NCC(=O)O"))
    assert sorted((s.h_class, s.n_h) for s in sites) == [("amine NH", 2), ("carboxylic acid OH", 1)]


@pytest.mark.parametrize(
    ("solvent", "expected"),
    [
        # paracetamol shows NH 9.65 and OH 9.14 in DMSO-d6 (from memory): all 9 H
        ("DMSO-d6", (9, 9, 7, 2)),
        # D2O / CD3OD: OH exchanged; amide NH exchanges slowly (maybe)
        ("D2O", (7, 8, 7, 2)),
        ("MeOD", (7, 8, 7, 2)),
        # CDCl3: amide NH seen, phenol OH maybe
        ("CDCl3", (8, 9, 7, 2)),
    ],
)
def test_expected_visible_h_paracetamol(solvent, expected):
    assert tuple(expected_visible_h(PARACETAMOL, solvent)) == expected


def test_expected_visible_h_fields_unpack():
    min_h, max_h, carbon_bound_h, exchangeable_h = expected_visible_h(PARACETAMOL, "DMSO")
    assert carbon_bound_h + exchangeable_h == 9 == max_h


@pytest.mark.parametrize(
    ("formula", "bound"),
    [
        ("C6H12O6", 6),  # glucose: 5 OH really; bound = O count
        ("C2H7N", 2),  # ethylamine: NH2
        ("CH4", 0),
        ("C2H2O4", 2),  # oxalic acid: H limits the bound
        ({"C": 3, "H": 7, "N": 1, "O": 2, "S": 1}, 5),  # cysteine: 2N+O+S = 5
    ],
)
def test_exchangeable_bound(formula, bound):
    """Bound = min(H, 2 N + O + S) (one exchangeable H per O and S, two per N)."""
    assert exchangeable_bound(formula) == bound


def test_expected_visible_h_formula():
    assert tuple(expected_visible_h("C6H12O6", "D2O")) == (6, 12, 6, 6)
    assert tuple(expected_visible_h({"C": 6, "H": 12, "O": 6}, "DMSO-d6")) == (6, 12, 6, 6)
    assert tuple(expected_visible_h("C10H16", "CDCl3")) == (16, 16, 16, 0)


def test_formula_bound_contains_the_structure_count():
    """For real structures the formula bound always covers the exchangeable H actually present
    (glucose, paracetamol, glycine; formulas from RDKit's CalcMolFormula)."""
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    for smiles in ["OC[C@H]1O[C@H](O)[C@H](O)[C@@H](O)[C@@H]1O", "CC(=O)Nc1ccc(O)cc1", "NCC(=O)O"]:
        mol = Chem.MolFromSmiles(smiles)
        actual = sum(s.n_h for s in exchangeable_hydrogens(mol))
        assert actual <= exchangeable_bound(CalcMolFormula(mol))


@pytest.mark.parametrize("bad", ["C6H12X", "", "c6h6", "C6H6+", {"C": -1}, {"C": 1.5}])
def test_bad_formula_is_a_formula_error(bad):
    with pytest.raises(FormulaError):
        expected_visible_h(bad, "CDCl3")


def test_bad_structure_is_a_candidate_error():
    with pytest.raises(CandidateError):
        exchangeable_hydrogens(None)
    with pytest.raises(CandidateError):
        expected_visible_h(Chem.MolFromSmiles("C(C)(C)(C)(C)C", sanitize=False), "CDCl3")
