"""Round trip of nmrcheck.io.writers through nmrcheck.io.read_fid."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.io import read_fid
from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.synth import Line, simulate_fid


@pytest.mark.parametrize("group_delay", [0.0, 67.98])
def test_bruker_round_trip_is_identical(tmp_path, group_delay):
    """Data bit-identical (64-bit floats) and every acquisition field equal: the reader is the reference."""
    fid = simulate_fid([Line(2.1, 3, 1.0, (7.0,))], points=2048, noise=0.05, group_delay_points=group_delay, solvent="DMSO-d6")
    back = read_fid(write_bruker_fid(fid, tmp_path / "exp" / "1"))
    assert np.array_equal(back.data, fid.data)
    assert back.group_delay_points == pytest.approx(group_delay)
    assert dataclasses.asdict(back.acquisition) == dataclasses.asdict(fid.acquisition)
    assert back.format == "bruker"


def test_bruker_title_is_written(tmp_path):
    fid = simulate_fid([Line(1.0, 1)], points=512)
    fid = dataclasses.replace(fid, acquisition=dataclasses.replace(fid.acquisition, title="well A1 fraction 12"))
    back = read_fid(write_bruker_fid(fid, tmp_path / "t"))
    assert back.acquisition.title == "well A1 fraction 12"


def test_refuses_to_overwrite_without_asking(tmp_path):
    fid = simulate_fid([Line(1.0, 1)], points=512)
    write_bruker_fid(fid, tmp_path / "x")
    with pytest.raises(ParameterError, match="overwrite"):
        write_bruker_fid(fid, tmp_path / "x")
    write_bruker_fid(fid, tmp_path / "x", overwrite=True)
