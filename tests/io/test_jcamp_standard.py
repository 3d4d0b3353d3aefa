"""JCAMP-DX files with only the standard NMR labels, and compound (LINK) files.

The files are written here by nmrcheck.io.writers from the JCAMP-DX NMR standard (Davies &
Lampen, Appl. Spectrosc. 1993, 47, 1093): ``.OBSERVE FREQUENCY`` (MHz), ``.OBSERVE NUCLEUS``,
``.SOLVENT NAME``, ``.SHIFT REFERENCE= (type, compound, point, shift)``, an NTUPLES ``NMR FID``
with real and imaginary pages, an XYDATA ``NMR SPECTRUM`` with X in Hz, and ``##DATA TYPE=
LINK`` with ``##BLOCKS=`` and ``##BLOCK_ID=``. The numbers are checked against nmrglue's
independent JCAMP-DX reader and against the synthetic lines' known shifts.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from nmrcheck.errors import InputFileError
from nmrcheck.io import detect_format, read_any, read_fid, read_spectrum_file
from nmrcheck.io.writers import jcamp_fid_text, jcamp_link_text, jcamp_spectrum_text
from nmrcheck.processing import process
from nmrcheck.synth import Line, simulate_fid

# Invented lines in CDCl3 (residual CHCl3 at 7.26 ppm, TMS at 0; Gottlieb 1997, from memory).
LINES = [Line(7.26, 0.05, 0.8), Line(3.80, 3.0, 1.0), Line(1.25, 6.0, 1.0, (7.0,)), Line(0.0, 0.3, 0.8)]
MHZ = 400.13
CARRIER = 4.5


@pytest.fixture(scope="module")
def fid():
    return simulate_fid(LINES, points=8192, noise=0.0005, spectrometer_mhz=MHZ, sweep_width_hz=6000.0, carrier_ppm=CARRIER)


@pytest.fixture(scope="module")
def files(fid, tmp_path_factory):
    d = tmp_path_factory.mktemp("jcamp-standard")
    spectrum = process(fid).spectrum
    spec_text = jcamp_spectrum_text(spectrum.data.real, first_ppm=spectrum.first_ppm, last_ppm=float(spectrum.ppm[-1]), spectrometer_mhz=MHZ, solvent="CDCl3")
    carbon = jcamp_spectrum_text(spectrum.data.real, first_ppm=220.0, last_ppm=-10.0, spectrometer_mhz=100.6, title="13C").replace("^1H", "^13C")
    out = {
        "fid": d / "fid.dx",
        "spectrum": d / "spectrum.dx",
        "link": d / "link.dx",
        "link-spectrum-only": d / "link-spec.dx",
        "link-carbon-only": d / "link-13c.dx",
    }
    out["fid"].write_text(jcamp_fid_text(fid))
    out["spectrum"].write_text(spec_text)
    out["link"].write_text(jcamp_link_text([carbon, spec_text, jcamp_fid_text(fid)]))
    out["link-spectrum-only"].write_text(jcamp_link_text([carbon, spec_text]))
    out["link-carbon-only"].write_text(jcamp_link_text([carbon, carbon]))
    return out, spectrum


def _nmrglue(path):
    import nmrglue as ng

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return ng.jcampdx.read(str(path))


def test_standard_fid_labels(files, fid):
    paths, _ = files
    got = read_fid(paths["fid"])
    acq = got.acquisition
    assert acq.spectrometer_mhz == pytest.approx(MHZ)  # .OBSERVE FREQUENCY
    assert acq.sweep_width_hz == pytest.approx(6000.0, rel=1e-6)  # 1 / dwell from the time axis
    assert acq.carrier_ppm == pytest.approx(CARRIER, abs=1e-5)  # from .SHIFT REFERENCE
    assert acq.solvent == "CDCl3" and acq.nucleus == "1H"
    _, data = _nmrglue(paths["fid"])
    np.testing.assert_allclose(got.data, data[0] + 1j * data[1])
    np.testing.assert_allclose(got.data, fid.data, atol=np.abs(fid.data).max() * 2e-9)
    assert any(".SHIFT REFERENCE" in n for n in got.notes) and any("digital-filter" in n for n in got.notes)


def test_standard_fid_lines_at_their_shifts(files):
    """The synthetic lines come out where they were put: the methoxy singlet at 3.80 ppm, TMS at 0."""
    paths, _ = files
    processed = process(paths["fid"])
    assert processed.reference.kind in ("TMS", "solvent")
    peak = processed.spectrum.ppm[np.argmax(processed.spectrum.data.real * ((processed.spectrum.ppm > 3.5) & (processed.spectrum.ppm < 4.1)))]
    assert peak == pytest.approx(3.80, abs=0.005)


def test_standard_spectrum_axis_from_shift_reference(files):
    paths, spectrum = files
    got = read_spectrum_file(paths["spectrum"])
    assert got.first_ppm == pytest.approx(spectrum.first_ppm, abs=1e-6)
    assert got.last_ppm == pytest.approx(float(spectrum.ppm[-1]), abs=1e-6)
    assert got.acquisition.spectrometer_mhz == pytest.approx(MHZ)
    _, data = _nmrglue(paths["spectrum"])
    np.testing.assert_allclose(got.data, data)
    assert detect_format(paths["spectrum"]) == "jcamp-spectrum"


def test_link_file_reads_the_1h_fid_and_says_so(files):
    paths, _ = files
    assert detect_format(paths["link"]) == "jcamp-fid"
    got = read_any(paths["link"])
    assert got.size == 8192
    assert "block 3" in got.notes[0] and "NMR FID" in got.notes[0]
    processed = process(paths["link"])
    assert any("compound JCAMP-DX file" in w for w in processed.warnings)


def test_link_file_spectrum_block(files):
    paths, spectrum = files
    got = read_spectrum_file(paths["link"])
    assert "block 2" in got.notes[0] and got.first_ppm == pytest.approx(spectrum.first_ppm, abs=1e-6)
    assert detect_format(paths["link-spectrum-only"]) == "jcamp-spectrum"
    assert read_any(paths["link-spectrum-only"]).data.size == spectrum.size


def test_link_file_without_1h_is_refused(files):
    paths, _ = files
    with pytest.raises(InputFileError, match="no 1H FID or spectrum.*13C"):
        read_any(paths["link-carbon-only"])


def test_fid_labelled_as_spectrum_is_refused(files, tmp_path):
    paths, _ = files
    p = tmp_path / "mislabelled.dx"
    p.write_text(paths["fid"].read_text().replace("##DATA TYPE= NMR FID", "##DATA TYPE= NMR SPECTRUM"))
    with pytest.raises(InputFileError, match="run over time"):
        read_any(p)
