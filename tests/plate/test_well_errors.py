"""A well that fails unexpectedly stores an error written for people, never a raw exception representation."""

from __future__ import annotations

import numpy as np

from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.plate import read_manifest
from nmrcheck.plate.screen import ScreenOptions, screen_well
from nmrcheck.synth import Line, simulate_fid


def test_unexpected_failure_is_stored_in_words(tmp_path, monkeypatch):
    write_bruker_fid(simulate_fid([Line(1.2, 3.0)], points=4096, noise=0.001), tmp_path / "fids" / "A1")
    (tmp_path / "manifest.csv").write_text("well,spectrum\nA1,fids/{well}\n", encoding="utf-8")
    plate = read_manifest(tmp_path / "manifest.csv")
    import nmrcheck.processing as processing

    def singular(*args, **kwargs):
        raise np.linalg.LinAlgError("Singular matrix")

    monkeypatch.setattr(processing, "process", singular)
    result = screen_well(plate.wells[0], plate.directory, ScreenOptions())
    assert result.status == "error"
    assert result.error == "internal error (a matrix computation did not converge): Singular matrix"


def test_unreadable_well_names_the_problem(tmp_path):
    d = tmp_path / "fids" / "A1"
    write_bruker_fid(simulate_fid([Line(1.2, 3.0)], points=4096, noise=0.001), d)
    (d / "fid").write_bytes(bytes((d / "fid").stat().st_size))
    (tmp_path / "manifest.csv").write_text("well,spectrum\nA1,fids/{well}\n", encoding="utf-8")
    plate = read_manifest(tmp_path / "manifest.csv")
    result = screen_well(plate.wells[0], plate.directory, ScreenOptions())
    assert result.status == "unreadable" and "the fid holds only zeros" in result.error
