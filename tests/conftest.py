"""Shared fixtures: where the real recordings are (or a clear skip when they are not), and a screened synthetic plate."""

from __future__ import annotations

import os
from pathlib import Path

import pytest


def _refdata_dir() -> Path | None:
    value = os.environ.get("NMRCHECK_REFDATA")
    if not value:
        return None
    p = Path(value)
    return p if p.is_dir() else None


@pytest.fixture(scope="session")
def refdata() -> Path:
    """The folder of real recordings named by NMRCHECK_REFDATA (skip when unset or missing)."""
    p = _refdata_dir()
    if p is None:
        pytest.skip("real recordings not available: set NMRCHECK_REFDATA to the shared refdata folder")
    return p


@pytest.fixture(scope="session")
def phase_tool(refdata):
    """The shared measuring tool tools/phase_vs_instrument.py beside the recordings (skip when absent)."""
    import importlib.util

    path = refdata.parent / "tools" / "phase_vs_instrument.py"
    if not path.is_file():
        pytest.skip(f"measuring tool not found at {path}")
    spec = importlib.util.spec_from_file_location("phase_vs_instrument", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def jcamp_recordings() -> list[str]:
    """Names of the JCAMP-DX recording folders, for parametrising (empty when refdata is absent)."""
    p = _refdata_dir()
    if p is None or not (p / "jcamp-fid").is_dir():
        return []
    return sorted(d.name for d in (p / "jcamp-fid").iterdir() if (d / "1h.fid.dx").exists())


def bruker_recordings() -> list[str]:
    p = _refdata_dir()
    if p is None or not (p / "bruker-raw").is_dir():
        return []
    return sorted(d.name for d in (p / "bruker-raw").iterdir() if (d / "fid").exists())


# A synthetic 24-well plate, shared by the plate and report tests so it is built and screened once:
# the demo plate's first 22 wells, its empty well (B11) and its truncated recording (C12), small FIDs.
PLATE_POINTS = 16384


def plate_wells():
    from nmrcheck.demo import demo_wells

    wells = demo_wells()
    return tuple(list(wells[:22]) + [w for w in wells if w.well in ("B11", "C12")])


@pytest.fixture(scope="session")
def plate_manifest(tmp_path_factory):
    """Path of the 24-well manifest; its recordings are Bruker folders next to it."""
    from nmrcheck.demo import build_demo_plate

    return build_demo_plate(tmp_path_factory.mktemp("plate24"), points=PLATE_POINTS, wells=plate_wells())


@pytest.fixture(scope="session")
def screened_plate(plate_manifest, tmp_path_factory):
    """The 24-well plate screened once with two local workers: (manifest, out_dir, summary)."""
    from nmrcheck.plate import read_manifest, run_plate

    out = tmp_path_factory.mktemp("plate24-out")
    manifest = read_manifest(plate_manifest)
    summary = run_plate(manifest, out, workers=2)
    return manifest, out, summary


@pytest.fixture(scope="session")
def psims_writer():
    """A function writing a sequence of :class:`nmrcheck.io.mzml.Scan` as mzML with the PSI writer library psims."""
    pytest.importorskip("psims", reason="psims (the PSI mzML writer) is not installed; pip install -e '.[test]'")
    from psims.mzml.writer import MzMLWriter

    def write(path, scans, *, run_id="run"):
        import gc
        import warnings

        # psims leaves its ontology files open; they are closed by the collection below.
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", ResourceWarning)
            _write(path, list(scans), run_id)
            gc.collect()
        return path

    def _write(path, scans, run_id):
        with MzMLWriter(open(path, "wb"), close=True) as out:
            out.controlled_vocabularies()
            out.file_description(["MS1 spectrum", "MSn spectrum", "centroid spectrum"])
            out.software_list([{"id": "psims-writer", "version": "1", "params": ["python-psims"]}])
            source = out.Source(1, ["electrospray ionization", "electrospray inlet"])
            analyzer = out.Analyzer(2, ["time-of-flight"])
            detector = out.Detector(3, ["microchannel plate detector"])
            out.instrument_configuration_list([out.InstrumentConfiguration(id="IC1", component_list=[source, analyzer, detector])])
            out.data_processing_list([out.DataProcessing([out.ProcessingMethod(order=1, software_reference="psims-writer", params=["Conversion to mzML"])], id="DP1")])
            with out.run(id=run_id, instrument_configuration="IC1"):
                with out.spectrum_list(count=len(scans)):
                    for s in scans:
                        precursor = None
                        if s.ms_level > 1:
                            precursor = {"mz": s.precursor_mz, "charge": s.precursor_charge, "scan_id": s.precursor_scan_id,
                                         "activation": ["beam-type collision-induced dissociation", {"collision energy": s.collision_energy_ev}]}
                        out.write_spectrum(
                            s.mz, s.intensity, id=s.scan_id, polarity=f"{s.polarity} scan", centroided=bool(s.centroided),
                            scan_start_time=s.rt_min, precursor_information=precursor,
                            params=[{"ms level": s.ms_level}, "MS1 spectrum" if s.ms_level == 1 else "MSn spectrum"],
                        )

    return write
