"""Small synthetic plates built by code for the run-robustness tests (a few wells of short FIDs)."""

from __future__ import annotations

import pytest

from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.synth import Line, simulate_fid

# 4-methoxytoluene-like lines: a methyl, a methoxy and an AA'BB' pair drawn as two doublets.
LINES = (Line(2.3, 3, 1.0), Line(3.8, 3, 1.0), Line(6.85, 2, 1.0, (8.5,)), Line(7.1, 2, 1.0, (8.5,)))
FORMULA = "C8H10O"


def small_fid(seed: int, *, points: int = 4096):
    return simulate_fid(list(LINES), points=points, noise=0.005, seed=seed)


def write_small_plate(folder, wells, *, points: int = 4096, present=None):
    """Bruker folders ``folder/<well>`` and ``folder/manifest.csv``; ``present`` limits which recordings are written."""
    folder.mkdir(parents=True, exist_ok=True)
    rows = ["well,spectrum,formulas"]
    for k, well in enumerate(wells):
        if present is None or well in present:
            write_bruker_fid(small_fid(k + 1, points=points), folder / well)
        rows.append(f"{well},{well},{FORMULA}")
    (folder / "manifest.csv").write_text("\n".join(rows) + "\n")
    return folder / "manifest.csv"


@pytest.fixture
def make_fid():
    """``make_fid(seed, points=4096)``: a short synthetic FID of the plate's compound."""
    return small_fid


@pytest.fixture
def small_plate(tmp_path):
    """A factory: ``small_plate(wells, points=4096, present=None)`` -> manifest path."""

    def make(wells, *, points: int = 4096, present=None, name: str = "plate"):
        return write_small_plate(tmp_path / name, wells, points=points, present=present)

    return make
