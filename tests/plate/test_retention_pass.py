"""The plate-level retention step on synthetic stored results: fit over consistent wells, warn the misfit."""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem

from nmrcheck.plate.results import WellResult
from nmrcheck.plate.retention_pass import apply_retention
from nmrcheck.validate.retention import crippen_logp

# Structures written from memory; their logP is RDKit's Crippen value, the time a synthetic gradient's.
SMILES = ["CCO", "c1ccccc1O", "c1ccccc1", "Cc1ccccc1", "c1ccc2ccccc2c1", "CCCCCCCC", "Clc1ccccc1", "OC(=O)c1ccccc1",
          "CC(=O)Oc1ccccc1C(=O)O", "COc1cc(CC=C)ccc1O"]


def _well(name, smiles, rt, verdict="consistent"):
    return WellResult(
        well=name, status="done", verdict=verdict, spec={"rt_min": rt},
        candidates=({"key": "c1", "kind": "structure", "smiles": smiles, "name": "x"}, {"key": "c2", "kind": "formula", "formula": "C6H6"}),
        checks=({"key": "c1", "verdict": verdict, "rank": 1, "reasons": [], "checks": []},
                {"key": "c2", "verdict": verdict, "rank": 2, "reasons": [], "checks": []}),
    )


@pytest.fixture()
def plate():
    rng = np.random.default_rng(3)
    wells = {}
    for k, s in enumerate(SMILES):
        rt = 2.0 + 1.8 * crippen_logp(Chem.MolFromSmiles(s)) + rng.normal(0, 0.05)
        wells[f"A{k + 1}"] = _well(f"A{k + 1}", s, rt)
    # B1: its candidate is called consistent by the other checks, but elutes 4 min too early.
    wells["B1"] = _well("B1", "CCCCCCCC", 2.0 + 1.8 * 3.3668 - 4.0)
    return wells


def test_fit_over_the_plate_and_warn_the_misfit(plate):
    model, changed = apply_retention(plate)
    assert model.slope_min == pytest.approx(1.8, abs=0.1)
    assert set(changed) == set(plate)
    b1 = changed["B1"].checks[0]
    retention = next(c for c in b1["checks"] if c["name"] == "retention")
    assert retention["status"] == "warn" and "earlier" in retention["explanation"]
    assert any(r.startswith("retention: ") for r in b1["reasons"])
    assert b1["verdict"] == "consistent"  # a warning only
    assert all(next(c for c in changed[w].checks[0]["checks"] if c["name"] == "retention")["status"] == "pass" for w in changed if w != "B1")
    # formulas have no logP: no retention entry
    assert not [c for c in changed["A1"].checks[1]["checks"] if c["name"] == "retention"]
    assert any(n.startswith("retention: t = ") for n in changed["A1"].notes)


def test_running_again_changes_nothing(plate):
    _, first = apply_retention(plate)
    merged = {**plate, **first}
    _, second = apply_retention(merged)
    assert second == {}


def test_too_few_consistent_wells_say_why(plate):
    few = {w: r for w, r in list(plate.items())[:3]}
    model, changed = apply_retention(few)
    assert model is None
    assert all(any("retention: no model (retention fit: 3 points" in n for n in r.notes) for r in changed.values())
