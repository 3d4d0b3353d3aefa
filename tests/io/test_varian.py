"""Varian/Agilent directories (fid + procpar): written here with nmrglue's own writer, read back by nmrcheck."""

from __future__ import annotations

import copy

import numpy as np
import pytest

from nmrcheck.io import detect_format, read_fid
from nmrcheck.processing.transform import fourier_transform


def _entry(template: dict, name: str, value, *, text: bool = False) -> dict:
    e = copy.deepcopy(template)
    e["name"] = name
    e["values"] = [str(value)]
    if text:
        e["basictype"] = "2"  # string parameter in procpar's own type codes (nmrglue's writer)
        e["subtype"] = "1"
    return e


def _write_varian(directory, *, sfrq=499.8, sw=6000.0, points=4096, line_hz=750.0, nucleus="H1"):
    import nmrglue as ng

    udic = ng.fileio.fileiobase.create_blank_udic(1)
    udic[0].update(size=points, complex=True, sw=sw, obs=sfrq, car=0.0, label=nucleus, time=True, freq=False)
    dic = ng.varian.create_dic(udic)
    tmpl = dic["procpar"]["np"]
    for name, value, text in [("sfrq", sfrq, False), ("sw", sw, False), ("tof", 0.0, False), ("nt", 8, False),
                              ("gain", 30, False), ("pw", 9.5, False), ("temp", 25.0, False), ("d1", 2.0, False),
                              ("at", points / sw, False), ("tn", nucleus, True), ("solvent", "cdcl3", True),
                              ("seqfil", "s2pul", True)]:
        dic["procpar"][name] = _entry(tmpl, name, value, text=text)
    t = np.arange(points) / sw
    # Varian's quadrature sense: a line above the carrier rotates as exp(-2 pi i f t) (the
    # opposite of Bruker's; nmrglue's processing examples reverse Bruker spectra only; from memory).
    data = (np.exp(-2j * np.pi * line_hz * t) * np.exp(-np.pi * 2.0 * t)).astype(np.complex64)
    ng.varian.write(str(directory), dic, data, overwrite=True)
    return line_hz


def test_varian_directory_read_and_transformed(tmp_path):
    """A line written 750 Hz above the carrier at 499.8 MHz sits at +1.5006 ppm (750/499.8)."""
    line_hz = _write_varian(tmp_path / "s2pul.fid")
    assert detect_format(tmp_path / "s2pul.fid") == "varian"
    fid = read_fid(tmp_path / "s2pul.fid")
    acq = fid.acquisition
    assert acq.nucleus == "1H" and acq.spectrometer_mhz == pytest.approx(499.8)
    assert acq.sweep_width_hz == pytest.approx(6000.0) and acq.scans == 8
    assert acq.solvent == "cdcl3" and acq.pulse_us == pytest.approx(9.5)
    assert acq.temperature_k == pytest.approx(298.15)
    spec = fourier_transform(fid, lb_hz=0.0)
    peak = spec.ppm[int(np.argmax(np.abs(spec.data)))]
    assert peak == pytest.approx(line_hz / 499.8, abs=2 * spec.step_ppm)


def test_varian_wrong_nucleus(tmp_path):
    from nmrcheck.errors import InputFileError

    _write_varian(tmp_path / "c13.fid", nucleus="C13")
    with pytest.raises(InputFileError, match="nucleus is 13C"):
        read_fid(tmp_path / "c13.fid")
