"""mzML reading (pymzml) and writing: round trips through the project's writer and the PSI writer library psims.

CV terms and units as in the PSI mzML 1.1.0 specification (Martens et al., Mol. Cell.
Proteomics 2011, 10, R110.000133) and the PSI-MS ontology file that psims ships.
"""

from __future__ import annotations

import gzip
import re
from pathlib import Path

import numpy as np
import pytest

from nmrcheck.errors import InputFileError
from nmrcheck.io.mzml import CV_TERMS, Scan, read_mzml, write_mzml


def _scans():
    rng = np.random.default_rng(5)
    out = []
    for k in range(6):
        polarity = "positive" if k % 3 else "negative"
        mz = np.sort(rng.uniform(100, 1000, 50))
        inten = rng.uniform(1e2, 1e6, 50)
        out.append(Scan(len(out), f"scan={len(out) + 1}", 0.25 * k, 1, polarity, mz, inten, True))
        if polarity == "positive":
            fmz = np.sort(rng.uniform(50, 300, 12))
            out.append(Scan(len(out), f"scan={len(out) + 1}", 0.25 * k + 0.01, 2, polarity, fmz, rng.uniform(10, 1e4, 12), True,
                            301.0707, 1, out[-1].scan_id, 30.0))
    return out


def _same(run, scans):
    assert len(run.scans) == len(scans)
    for got, want in zip(run.scans, scans):
        assert got.scan_id == want.scan_id and got.ms_level == want.ms_level and got.polarity == want.polarity
        assert got.rt_min == pytest.approx(want.rt_min, abs=1e-9)
        np.testing.assert_array_equal(got.mz, want.mz)
        np.testing.assert_allclose(got.intensity, want.intensity, rtol=1e-6)
        assert got.centroided is True
        if want.ms_level == 2:
            assert got.precursor_mz == pytest.approx(want.precursor_mz, abs=1e-9)
            assert got.precursor_charge == 1 and got.precursor_scan_id == want.precursor_scan_id
            assert got.collision_energy_ev == pytest.approx(30.0)


def test_own_writer_round_trip(tmp_path):
    scans = _scans()
    run = read_mzml(write_mzml(tmp_path / "run.mzML", scans))
    _same(run, scans)
    assert run.polarities == ("positive", "negative")
    assert len(run.level(2)) == 4 and all(s.polarity == "positive" for s in run.level(2))


def test_reads_what_psims_writes(tmp_path, psims_writer):
    """The PSI writer library's output (indexed mzML, its own CV and array encodings) reads to the same scans."""
    scans = _scans()
    path = psims_writer(tmp_path / "psims.mzML", scans)
    assert b"<indexedmzML" in Path(path).read_bytes()[:2000]
    _same(read_mzml(path), scans)


def test_scan_start_time_in_seconds_is_converted(tmp_path):
    """mzML allows the scan start time in seconds (UO:0000010) as well as minutes (UO:0000031)."""
    scans = [Scan(0, "scan=1", 90.0, 1, "positive", np.array([200.0]), np.array([1e4]))]
    path = write_mzml(tmp_path / "s.mzML", scans)
    text = path.read_text().replace('unitAccession="UO:0000031" unitName="minute"', 'unitAccession="UO:0000010" unitName="second"')
    path.write_text(text)
    assert read_mzml(path).scans[0].rt_min == pytest.approx(1.5)


def test_cv_terms_match_the_psi_ms_ontology():
    """Every accession the writer uses names the same term in psi-ms.obo / unit.obo as shipped with psims."""
    psims = pytest.importorskip("psims", reason="psims ships the PSI-MS ontology file")
    vendor = Path(psims.__file__).parent / "controlled_vocabulary" / "vendor"
    names = {}
    for obo in ("psi-ms.obo.gz", "unit.obo.gz"):
        with gzip.open(vendor / obo, "rt", encoding="utf-8") as fh:
            text = fh.read()
        for block in text.split("[Term]")[1:]:
            acc = re.search(r"^id: (\S+)", block, re.M)
            name = re.search(r"^name: (.+)$", block, re.M)
            if acc and name:
                names[acc.group(1)] = name.group(1).strip()
    for term, (_, accession) in CV_TERMS.items():
        assert names.get(accession) == term, (accession, names.get(accession), term)


@pytest.mark.parametrize(
    "content, message",
    [
        (None, "no such file"),
        ("well,spectrum\nA1,x\n", "not an mzML file"),
        ('<?xml version="1.0"?>\n<mzML xmlns="http://psi.hupo.org/ms/mzml"><run><spectrumList count="1"><spectrum index="0" id="s1" defaultArrayLength="1"><binaryDataArrayList>', "cannot be read as mzML|holds no spectrum|no scan start time"),
    ],
)
def test_unreadable_files_give_one_line_errors(tmp_path, content, message):
    path = tmp_path / "run.mzML"
    if content is not None:
        path.write_text(content)
    with pytest.raises(InputFileError, match=message) as err:
        read_mzml(path)
    assert "\n" not in str(err.value) and str(path) in str(err.value)


def test_truncated_file_is_an_input_error(tmp_path):
    path = write_mzml(tmp_path / "run.mzML", _scans())
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(InputFileError) as err:
        read_mzml(path)
    assert "\n" not in str(err.value)


def test_written_file_is_valid_against_the_mzml_schema(tmp_path):
    """The PSI mzML 1.1.0 XML schema (as shipped with psims) accepts what write_mzml writes."""
    psims = pytest.importorskip("psims", reason="psims ships the mzML 1.1.0 schema")
    from lxml import etree

    xsd = Path(psims.__file__).parent / "validation" / "xsd" / "mzML1.1.0.xsd"
    schema = etree.XMLSchema(etree.parse(str(xsd)))
    doc = etree.parse(str(write_mzml(tmp_path / "run.mzML", _scans())))
    assert schema.validate(doc), schema.error_log
