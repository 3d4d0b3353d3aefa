"""A recording still being written is not complete; a finished one is (nmrcheck.io.completeness)."""

from __future__ import annotations

import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.io.completeness import expected_size_reached, file_signature, has_end_marker, is_complete, recording_fingerprint
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


def test_audit_trail_end_does_not_close_a_jcamp_file(tmp_path):
    """'$$' starts a JCAMP-DX comment (JCAMP-DX 4.24, McDonald & Wilks 1988; from memory): a quoted '##END=' closes nothing."""
    p = tmp_path / "x.dx"
    head = "##TITLE= x\n##JCAMP-DX= 5.01\n##DATA TYPE= NMR FID\n$$ ##TITLE= Audit trail\n$$ ##END=\n"
    p.write_text(head)
    assert not has_end_marker(p) and not expected_size_reached(p)
    p.write_text(head + "##XYDATA=(X++(Y..Y))\n1 2 3\n##END=\n")
    assert has_end_marker(p)
    p.write_text(head + "##XYDATA=(X++(Y..Y))\n1 2 3\n##END=\n$$ trailing comment\n\n")
    assert has_end_marker(p)


def test_compound_jcamp_needs_its_outer_end(tmp_path):
    """A LINK file has one ##TITLE= and one ##END= per block, the outer block last (JCAMP-DX 5.01; from memory)."""
    p = tmp_path / "x.jdx"
    inner = "##TITLE= real\n##DATA TYPE= NMR FID\n1 2\n##END=\n##TITLE= imag\n##DATA TYPE= NMR FID\n3 4\n##END=\n"
    p.write_text("##TITLE= link\n##BLOCKS= 2\n" + inner)
    assert not has_end_marker(p)
    p.write_text("##TITLE= link\n##BLOCKS= 2\n" + inner + "##END=\n")
    assert has_end_marker(p)


def test_block_padded_bruker_fid_is_complete(tmp_path):
    """The last acquisition block may be zero-padded to 1024 bytes (Bruker raw-data layout; common practice)."""
    fid = simulate_fid([Line(1.0, 1)], points=1000)
    exp = write_bruker_fid(fid, tmp_path / "exp")
    data = (exp / "fid").read_bytes()
    assert len(data) == 16000
    (exp / "fid").write_bytes(data + bytes(1024 - 16000 % 1024))
    assert expected_size_reached(exp)
    (exp / "fid").write_bytes(data + bytes(2048))
    assert not expected_size_reached(exp), "more than one block of padding is not a complete recording"


def test_varian_fid_is_complete_at_the_size_its_header_gives(tmp_path):
    """Varian 'fid' file header: nblocks, ntraces, np, ebytes, tbytes, bbytes, vers_id, status, nbheaders (big-endian; from memory)."""
    import struct

    exp = tmp_path / "exp.fid"
    exp.mkdir()
    (exp / "procpar").write_text("")
    npoints, nbheaders = 512, 1
    header = struct.pack(">6ihhi", 1, 1, npoints, 4, npoints * 4, npoints * 4 + 28 * nbheaders, 0, 0, nbheaders)
    body = bytes(28) + bytes(npoints * 4)
    (exp / "fid").write_bytes(header + body[: len(body) // 2])
    assert not expected_size_reached(exp)
    (exp / "fid").write_bytes(header + body)
    assert expected_size_reached(exp)


def test_fingerprint_follows_content(experiment):
    first = recording_fingerprint(experiment)
    assert first == recording_fingerprint(experiment / "fid")
    data = bytearray((experiment / "fid").read_bytes())
    data[-8:] = bytes(8)
    (experiment / "fid").write_bytes(bytes(data))
    assert recording_fingerprint(experiment) != first
