"""A recording still being written is not complete; a finished one is (nmrcheck.io.completeness)."""

from __future__ import annotations

import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.io.completeness import expected_size_reached, file_signature, is_complete
from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.synth import Line, simulate_fid


@pytest.fixture
def experiment(tmp_path):
    fid = simulate_fid([Line(1.0, 1)], points=1024)
    return write_bruker_fid(fid, tmp_path / "exp")


def test_finished_bruker_fid_is_complete(experiment):
    # TD=2048 values of 8 bytes (DTYPA=2) = 16384 bytes: the size acqus announces.
    assert (experiment / "fid").stat().st_size == 2048 * 8
    assert is_complete(experiment, settle_s=0.05)
    assert is_complete(experiment / "fid", settle_s=0)


def test_half_written_fid_is_not_complete(experiment):
    data = (experiment / "fid").read_bytes()
    (experiment / "fid").write_bytes(data[: len(data) // 2])
    assert not expected_size_reached(experiment)
    assert not is_complete(experiment, settle_s=0)


def test_fid_without_acqus_is_not_complete(experiment):
    (experiment / "acqus").unlink()
    assert not is_complete(experiment, settle_s=0)


def test_missing_recording(tmp_path):
    assert file_signature(tmp_path / "nothing") is None
    assert not is_complete(tmp_path / "nothing", settle_s=0)


def test_jcamp_needs_its_end_line(tmp_path):
    """JCAMP-DX files close with ##END= (JCAMP-DX 4.24 specification, McDonald & Wilks 1988; from memory)."""
    p = tmp_path / "x.dx"
    p.write_text("##TITLE= x\n##JCAMP-DX= 5.01\n##DATA TYPE= NMR FID\n1 2 3\n")
    assert not is_complete(p, settle_s=0)
    p.write_text(p.read_text() + "##END=\n")
    assert is_complete(p, settle_s=0.05)


def test_negative_settle_time_is_refused(experiment):
    with pytest.raises(ParameterError, match="settle_s"):
        is_complete(experiment, settle_s=-1)
