"""Shift predictors behind one interface: the additive increments (always installed) and an optional learned model.

A predictor turns a structure (and the solvent) into :class:`~nmrcheck.predict.PredictedShift`
records. Every predictor keeps the increments' classes, symmetry classes, geminal sites and
exchangeable-H windows; a learned model only replaces the estimated shift of carbon-bound H.
"""

from __future__ import annotations

import logging
import os
from dataclasses import replace
from functools import lru_cache
from typing import Protocol

from rdkit import Chem

from nmrcheck.errors import CandidateError
from nmrcheck.predict.shifts import PredictedShift, predict_shifts

__all__ = ["ShiftPredictor", "IncrementPredictor", "LearnedPredictor", "available_predictors", "default_predictor", "LEARNED_EXTRA"]

log = logging.getLogger("nmrcheck")

#: Name of the optional extra that installs the learned predictor (``pip install nmrcheck[learned-shifts]``).
LEARNED_EXTRA = "learned-shifts"
#: Environment variable that turns the learned predictor off even where it is installed ('0', 'no', 'off').
LEARNED_SWITCH = "NMRCHECK_LEARNED_SHIFTS"


class ShiftPredictor(Protocol):
    """Anything that estimates the 1H shifts of a structure."""

    name: str

    def predict(self, mol: Chem.Mol, solvent: str | None = None) -> tuple[PredictedShift, ...]: ...


class IncrementPredictor:
    """Published additive increments (:func:`nmrcheck.predict.predict_shifts`); the solvent is not used."""

    name = "additive increments"

    def predict(self, mol: Chem.Mol, solvent: str | None = None) -> tuple[PredictedShift, ...]:
        key = _key(mol)
        if key not in _INCREMENT_CACHE:
            if len(_INCREMENT_CACHE) > 512:
                _INCREMENT_CACHE.clear()
            _INCREMENT_CACHE[key] = predict_shifts(mol)
        return _INCREMENT_CACHE[key]


def _key(mol: Chem.Mol) -> str:
    # The predictions carry atom indices: the same compound written in another atom order
    # (another SMILES) is another key, hence the canonical rank of every index beside the SMILES.
    try:
        if mol.GetNumConformers():
            return Chem.MolToMolBlock(mol)
        return Chem.MolToSmiles(mol) + "|" + ",".join(str(r) for r in Chem.CanonicalRankAtoms(mol, breakTies=True))
    except Exception as exc:  # RDKit raises several exception types on broken molecules
        raise CandidateError(f"structure cannot be written out: {exc}") from None


_INCREMENT_CACHE: dict[str, tuple[PredictedShift, ...]] = {}
_LEARNED_CACHE: dict[tuple[str, str], tuple[PredictedShift, ...]] = {}


# The learned model's solvent keys (from its documentation); others are passed through lower-cased.
_LEARNED_SOLVENTS = {"CDCl3": "cdcl3", "DMSO-d6": "dmso-d6", "CD3OD": "cd3od", "D2O": "d2o", "acetone-d6": "acetone-d6",
                     "CD3CN": "cd3cn", "C6D6": "c6d6", "CD2Cl2": "cd2cl2", "pyridine-d5": "pyridine-d5", "H2O/D2O": "d2o"}


class LearnedPredictor:
    """The CSP5 1H model (MIT licence, optional extra ``learned-shifts``): replaces the increments' shift of each carbon-bound H.

    torch is imported only when the first prediction is made, and limited to one thread
    (two threads collide on a small shared machine). The model's per-H shifts are averaged
    over the H of each heavy atom and, for symmetry-equivalent atoms, over the class, so the
    environments stay those of the increments.
    """

    name = "learned model (CSP5 1H)"

    def __init__(self) -> None:
        self._predict = None

    def _model(self):
        if self._predict is None:
            try:
                import torch
                from csp5 import predict_smiles
            except ImportError as exc:
                raise CandidateError(f"learned predictor not installed ({exc}); pip install 'nmrcheck[{LEARNED_EXTRA}]'") from None
            torch.set_num_threads(1)
            self._predict = predict_smiles
        return self._predict

    def predict(self, mol: Chem.Mol, solvent: str | None = None) -> tuple[PredictedShift, ...]:
        base = IncrementPredictor().predict(mol, solvent)
        solvent_key = _LEARNED_SOLVENTS.get(solvent or "", (solvent or "cdcl3").lower())
        key = (_key(mol), solvent_key)
        if key not in _LEARNED_CACHE:
            if len(_LEARNED_CACHE) > 512:
                _LEARNED_CACHE.clear()
            _LEARNED_CACHE[key] = _merge_learned(self.per_atom(mol, solvent_key), solvent_key, base)
        return _LEARNED_CACHE[key]

    def per_atom(self, mol: Chem.Mol, solvent_key: str) -> dict[int, list[float]]:
        """Model shifts of the H on each heavy atom of ``mol`` (indices of ``mol``)."""
        smiles = Chem.MolToSmiles(mol)
        parsed = Chem.MolFromSmiles(smiles)
        match = mol.GetSubstructMatch(parsed) if parsed is not None else ()
        if parsed is None or len(match) != parsed.GetNumAtoms():
            raise CandidateError("learned predictor: structure could not be mapped onto its SMILES")
        result = self._model()([smiles], nucleus="1H", solvent=solvent_key)
        if len(result.failures):
            raise CandidateError(f"learned predictor failed on {smiles}: {result.failures}")
        with_h = Chem.AddHs(parsed)
        out: dict[int, list[float]] = {}
        for idx, shift in zip(result.predictions["atom_index"], result.predictions["shift_ppm"]):
            atom = with_h.GetAtomWithIdx(int(idx))
            heavy = atom.GetNeighbors()[0].GetIdx() if atom.GetAtomicNum() == 1 else int(idx)
            out.setdefault(match[heavy], []).append(float(shift))
        return out


def _merge_learned(per_atom: dict[int, list[float]], solvent_key: str, base: tuple[PredictedShift, ...]) -> tuple[PredictedShift, ...]:
    # average over symmetry classes so equivalent atoms keep one estimate
    by_class: dict[int, list[float]] = {}
    for p in base:
        if not p.exchangeable and p.atom_index in per_atom:
            by_class.setdefault(p.environment, []).extend(per_atom[p.atom_index])
    out = []
    sites: dict[int, list[PredictedShift]] = {}
    for p in base:
        sites.setdefault(p.atom_index, []).append(p)
    for p in base:
        values = by_class.get(p.environment)
        if p.exchangeable or not values:
            out.append(p)
            continue
        atom_values = sorted(per_atom.get(p.atom_index, values))
        if len(sites[p.atom_index]) == 2 and len(atom_values) == 2:
            # a =CH2 with two sites: pair the model's two values with the increments' order
            order = sorted(sites[p.atom_index], key=lambda s: s.ppm)
            ppm = atom_values[order.index(p)]
        else:
            ppm = sum(values) / len(values)
        out.append(replace(p, ppm=round(ppm, 4), rule=f"CSP5 1H model ({solvent_key})"))
    return tuple(out)


@lru_cache(maxsize=1)
def _learned_installed() -> bool:
    import importlib.util

    return importlib.util.find_spec("csp5") is not None and importlib.util.find_spec("torch") is not None


def available_predictors() -> tuple[ShiftPredictor, ...]:
    """The increments, then the learned model where its extra is installed."""
    out: list[ShiftPredictor] = [IncrementPredictor()]
    if _learned_installed():
        out.append(_learned_singleton())
    return tuple(out)


@lru_cache(maxsize=1)
def _learned_singleton() -> LearnedPredictor:
    return LearnedPredictor()


def default_predictor() -> ShiftPredictor:
    """The learned model when installed (and not switched off with ``NMRCHECK_LEARNED_SHIFTS=0``), else the increments."""
    if _learned_installed() and os.environ.get(LEARNED_SWITCH, "1").lower() not in ("0", "no", "off", "false"):
        return _learned_singleton()
    return IncrementPredictor()
