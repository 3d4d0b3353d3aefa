"""A synthetic 24-well plate (the demo plate's first 22 wells, its empty well and its truncated file), small FIDs."""

from __future__ import annotations

import pytest

from nmrcheck.demo import build_demo_plate, demo_wells

POINTS = 8192


def plate_wells():
    wells = demo_wells()
    chosen = list(wells[:22]) + [w for w in wells if w.well in ("B11", "C12")]
    return tuple(chosen)


@pytest.fixture(scope="session")
def plate_manifest(tmp_path_factory):
    """Path of the 24-well manifest; its recordings are Bruker folders next to it."""
    return build_demo_plate(tmp_path_factory.mktemp("plate24"), points=POINTS, wells=plate_wells())


@pytest.fixture(scope="session")
def screened_plate(plate_manifest, tmp_path_factory):
    """The 24-well plate screened once with two local workers: (manifest, out_dir, summary)."""
    from nmrcheck.plate import read_manifest, run_plate

    out = tmp_path_factory.mktemp("plate24-out")
    manifest = read_manifest(plate_manifest)
    summary = run_plate(manifest, out, workers=2)
    return manifest, out, summary
