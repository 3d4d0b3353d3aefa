"""Synthetic spectra of known amounts for the quantification tests."""

from __future__ import annotations

from dataclasses import replace

import pytest

from nmrcheck.processing import process
from nmrcheck.synth import simulate_fid


def _synthetic(lines, *, noise=0.0005, solvent="D2O", scale=1.0, seed=0, **acq):
    fid = simulate_fid(lines, noise=noise, solvent=solvent, scale=scale, seed=seed)
    if acq:
        fid = replace(fid, acquisition=replace(fid.acquisition, **acq))
    return process(fid)


@pytest.fixture
def synthetic():
    """Processed synthetic spectrum from lines; keywords past the noise replace fields of the acquisition record."""
    return _synthetic
