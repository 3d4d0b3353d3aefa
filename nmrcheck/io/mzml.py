"""mzML (PSI mzML 1.1) runs: read into frozen scan records through pymzml, and a small writer.

Reading goes through pymzml (chosen over pyteomics by measured speed: about 3 times faster
on a generated 10-minute run, ``python bench/bench_mzml_readers.py``). Everything downstream sees :class:`Scan` and
:class:`LcmsRun` only: retention time in minutes, MS level, polarity, precursor m/z and the
peak arrays; no controlled-vocabulary name leaves this module.

The writer produces plain (non-indexed) mzML 1.1 with zlib-compressed 64-bit arrays, enough
for the demo plate and for tests that need a run on disk without the psims writer. The
controlled-vocabulary terms it writes are those of the PSI-MS ontology (accession and name
pairs as in ``psi-ms.obo``; units from the Unit Ontology), following the PSI mzML 1.1.0
specification (Martens et al., Mol. Cell. Proteomics 2011, 10, R110.000133).
"""

from __future__ import annotations

import base64
import os
import warnings
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable
from xml.sax.saxutils import quoteattr

import numpy as np

from nmrcheck.errors import InputFileError, ParameterError

__all__ = ["Scan", "LcmsRun", "read_mzml", "write_mzml", "CV_TERMS"]

POLARITIES = ("positive", "negative")

# Accession and name of every PSI-MS / UO term the writer uses (checked against the ontology
# file psims ships in tests/io/test_mzml.py).
CV_TERMS: dict[str, tuple[str, str]] = {
    "ms level": ("MS", "MS:1000511"),
    "MS1 spectrum": ("MS", "MS:1000579"),
    "MSn spectrum": ("MS", "MS:1000580"),
    "positive scan": ("MS", "MS:1000130"),
    "negative scan": ("MS", "MS:1000129"),
    "centroid spectrum": ("MS", "MS:1000127"),
    "profile spectrum": ("MS", "MS:1000128"),
    "total ion current": ("MS", "MS:1000285"),
    "base peak m/z": ("MS", "MS:1000504"),
    "base peak intensity": ("MS", "MS:1000505"),
    "no combination": ("MS", "MS:1000795"),
    "scan start time": ("MS", "MS:1000016"),
    "isolation window target m/z": ("MS", "MS:1000827"),
    "selected ion m/z": ("MS", "MS:1000744"),
    "charge state": ("MS", "MS:1000041"),
    "peak intensity": ("MS", "MS:1000042"),
    "beam-type collision-induced dissociation": ("MS", "MS:1000422"),
    "collision energy": ("MS", "MS:1000045"),
    "64-bit float": ("MS", "MS:1000523"),
    "zlib compression": ("MS", "MS:1000574"),
    "m/z array": ("MS", "MS:1000514"),
    "intensity array": ("MS", "MS:1000515"),
    "m/z": ("MS", "MS:1000040"),
    "number of detector counts": ("MS", "MS:1000131"),
    "electrospray ionization": ("MS", "MS:1000073"),
    "time-of-flight": ("MS", "MS:1000084"),
    "microchannel plate detector": ("MS", "MS:1000114"),
    "custom unreleased software tool": ("MS", "MS:1000799"),
    "peak picking": ("MS", "MS:1000035"),
    "minute": ("UO", "UO:0000031"),
    "electronvolt": ("UO", "UO:0000266"),
}


@dataclass(frozen=True, eq=False)
class Scan:
    """One spectrum of an LC-MS run.

    Attributes
    ----------
    index : int
        Position in the run, from 0.
    scan_id : str
        The spectrum's native id (``'scan=12'``).
    rt_min : float
        Scan start time, minutes.
    ms_level : int
        1 for a survey scan, 2 for MS/MS.
    polarity : str or None
        ``'positive'``, ``'negative'`` or None when the file does not say.
    mz : numpy.ndarray, shape (n,)
        m/z of the peaks (or profile points), ascending, float64.
    intensity : numpy.ndarray, shape (n,)
        Intensities, float64.
    centroided : bool or None
        True for a peak list, False for a profile spectrum, None when not stated.
    precursor_mz : float or None
        Selected ion m/z of an MS/MS scan.
    precursor_charge : int or None
    precursor_scan_id : str or None
        Native id of the survey scan the precursor was picked from.
    collision_energy_ev : float or None
    """

    index: int
    scan_id: str
    rt_min: float
    ms_level: int
    polarity: str | None
    mz: np.ndarray
    intensity: np.ndarray
    centroided: bool | None = True
    precursor_mz: float | None = None
    precursor_charge: int | None = None
    precursor_scan_id: str | None = None
    collision_energy_ev: float | None = None

    def __post_init__(self) -> None:
        if self.polarity not in (None, *POLARITIES):
            raise ParameterError(f"scan {self.scan_id}: polarity {self.polarity!r} is not 'positive' or 'negative'")
        if self.mz.shape != self.intensity.shape:
            raise ParameterError(f"scan {self.scan_id}: {self.mz.size} m/z values but {self.intensity.size} intensities")

    @property
    def total_ion_current(self) -> float:
        return float(self.intensity.sum())


@dataclass(frozen=True, eq=False)
class LcmsRun:
    """An LC-MS run as read from a file: its scans in acquisition order."""

    source: str
    scans: tuple[Scan, ...]

    def level(self, ms_level: int, polarity: str | None = None) -> tuple[Scan, ...]:
        """Scans of one MS level (and polarity when given), in time order."""
        return tuple(s for s in self.scans if s.ms_level == ms_level and (polarity is None or s.polarity == polarity))

    @property
    def polarities(self) -> tuple[str, ...]:
        """Polarities present among the survey scans."""
        return tuple(p for p in POLARITIES if any(s.polarity == p for s in self.scans if s.ms_level == 1))

    @property
    def rt_range_min(self) -> tuple[float, float]:
        if not self.scans:
            return (0.0, 0.0)
        return (self.scans[0].rt_min, self.scans[-1].rt_min)


# --- reading ---------------------------------------------------------------------------------


def _minutes(value: float, unit: str | None, where: str, path: Path) -> float:
    if unit in (None, "minute", "UO:0000031", "min"):
        return float(value)
    if unit in ("second", "UO:0000010", "s", "sec"):
        return float(value) / 60.0
    if unit in ("millisecond", "UO:0000028", "ms"):
        return float(value) / 60000.0
    raise InputFileError(path, f"{where}: scan start time in unit {unit!r}; expected minutes or seconds")


def _scan_from_pymzml(index: int, spec, path: Path) -> Scan:
    scan_id = spec.element.get("id") or f"index={index}"
    try:
        level = int(spec.ms_level or 1)
        start = spec.scan_time
        if start is None or start[0] is None:
            raise InputFileError(path, f"spectrum {scan_id!r}: no scan start time")
        rt = _minutes(start[0], start[1], f"spectrum {scan_id!r}", path)
        # Polarity and spectrum representation are cvParams directly under <spectrum>.
        terms = {child.get("accession") for child in spec.element if child.tag.endswith("cvParam")}
        polarity = "positive" if "MS:1000130" in terms else "negative" if "MS:1000129" in terms else None
        centroided = True if "MS:1000127" in terms else False if "MS:1000128" in terms else None
        mz = np.asarray(spec.mz, dtype=np.float64)
        inten = np.asarray(spec.i, dtype=np.float64)
        prec_mz = prec_z = prec_ref = energy = None
        if level > 1:
            precursors = spec.selected_precursors or []
            if precursors:
                p = precursors[0]
                prec_mz = float(p["mz"]) if p.get("mz") is not None else None
                prec_z = int(p["charge"]) if p.get("charge") is not None else None
                element = p.get("element")
                if element is not None:
                    prec_ref = element.get("spectrumRef")
                    for cv in element.iter():
                        if cv.get("accession") == "MS:1000045":
                            energy = float(cv.get("value"))
    except InputFileError:
        raise
    except (KeyError, TypeError, ValueError, IndexError) as exc:
        raise InputFileError(path, f"spectrum {scan_id!r}: malformed ({exc})") from None
    if mz.size != inten.size:
        raise InputFileError(path, f"spectrum {scan_id!r}: {mz.size} m/z values but {inten.size} intensities")
    if mz.size > 1 and np.any(np.diff(mz) < 0):
        order = np.argsort(mz, kind="stable")
        mz, inten = mz[order], inten[order]
    return Scan(index, scan_id, rt, level, polarity, mz, inten, centroided, prec_mz, prec_z, prec_ref, energy)


def read_mzml(path: str | os.PathLike) -> LcmsRun:
    """Read every spectrum of an mzML file (plain or indexed, zlib-compressed or not).

    Raises
    ------
    InputFileError
        Missing or unreadable file, not mzML, or a spectrum without a scan start time.
    """
    import logging

    p = Path(path)
    if not p.is_file():
        raise InputFileError(p, "no such file")
    with open(p, "rb") as fh:
        head = fh.read(4096)
    if b"<mzML" not in head and b"<indexedmzML" not in head:
        raise InputFileError(p, "not an mzML file (no <mzML> element at the start)")
    try:
        with warnings.catch_warnings():
            # pymzml warns at import that its optional compiled numpress decoder is missing.
            warnings.simplefilter("ignore", ImportWarning)
            import pymzml.run
    except ImportError as exc:  # pragma: no cover - a declared dependency
        raise InputFileError(p, f"reading mzML needs pymzml ({exc})") from None
    # pymzml logs every index it has to rebuild and every term it does not know as warnings.
    logging.getLogger("pymzml").setLevel(logging.ERROR)
    scans = []
    try:
        reader = pymzml.run.Reader(str(p), build_index_from_scratch=False)
        try:
            for i, spec in enumerate(reader):
                scans.append(_scan_from_pymzml(i, spec, p))
        finally:
            reader.close()
    except InputFileError:
        raise
    except Exception as exc:  # noqa: BLE001 - pymzml raises bare Exceptions, XML and zlib errors alike
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputFileError(p, f"cannot be read as mzML ({first})") from None
    if not scans:
        raise InputFileError(p, "holds no spectrum")
    scans.sort(key=lambda s: (s.rt_min, s.index))
    return LcmsRun(str(p), tuple(scans))


# --- writing ---------------------------------------------------------------------------------


def _cv(name: str, value: object = "", unit: str | None = None) -> str:
    ref, acc = CV_TERMS[name]
    text = f'<cvParam cvRef="{ref}" accession="{acc}" name={quoteattr(name)} value={quoteattr(str(value))}'
    if unit is not None:
        uref, uacc = CV_TERMS[unit]
        text += f' unitCvRef="{uref}" unitAccession="{uacc}" unitName={quoteattr(unit)}'
    return text + "/>"


def _array(values: np.ndarray, name: str, unit: str) -> str:
    raw = zlib.compress(np.ascontiguousarray(values, dtype="<f8").tobytes())
    enc = base64.b64encode(raw).decode("ascii")
    return (
        f'<binaryDataArray encodedLength="{len(enc)}">{_cv("64-bit float")}{_cv("zlib compression")}'
        f"{_cv(name, unit=unit)}<binary>{enc}</binary></binaryDataArray>"
    )


def _spectrum_xml(i: int, s: Scan) -> str:
    parts = [f'<spectrum index="{i}" id={quoteattr(s.scan_id)} defaultArrayLength="{s.mz.size}">']
    parts.append(_cv("ms level", s.ms_level))
    parts.append(_cv("MS1 spectrum" if s.ms_level == 1 else "MSn spectrum"))
    if s.polarity is not None:
        parts.append(_cv(f"{s.polarity} scan"))
    if s.centroided is not None:
        parts.append(_cv("centroid spectrum" if s.centroided else "profile spectrum"))
    parts.append(_cv("total ion current", repr(float(s.intensity.sum()))))
    if s.intensity.size:
        top = int(np.argmax(s.intensity))
        parts.append(_cv("base peak m/z", repr(float(s.mz[top])), unit="m/z"))
        parts.append(_cv("base peak intensity", repr(float(s.intensity[top])), unit="number of detector counts"))
    parts.append(f'<scanList count="1">{_cv("no combination")}<scan>{_cv("scan start time", repr(float(s.rt_min)), unit="minute")}</scan></scanList>')
    if s.ms_level > 1 and s.precursor_mz is not None:
        ref = f" spectrumRef={quoteattr(s.precursor_scan_id)}" if s.precursor_scan_id else ""
        ion = _cv("selected ion m/z", repr(float(s.precursor_mz)), unit="m/z")
        if s.precursor_charge is not None:
            ion += _cv("charge state", int(s.precursor_charge))
        act = _cv("beam-type collision-induced dissociation")
        if s.collision_energy_ev is not None:
            act += _cv("collision energy", repr(float(s.collision_energy_ev)), unit="electronvolt")
        parts.append(
            f'<precursorList count="1"><precursor{ref}><isolationWindow>'
            f'{_cv("isolation window target m/z", repr(float(s.precursor_mz)), unit="m/z")}</isolationWindow>'
            f'<selectedIonList count="1"><selectedIon>{ion}</selectedIon></selectedIonList>'
            f"<activation>{act}</activation></precursor></precursorList>"
        )
    parts.append('<binaryDataArrayList count="2">')
    parts.append(_array(s.mz, "m/z array", "m/z"))
    parts.append(_array(s.intensity, "intensity array", "number of detector counts"))
    parts.append("</binaryDataArrayList></spectrum>\n")
    return "".join(parts)


def write_mzml(path: str | os.PathLike, scans: Iterable[Scan], *, run_id: str = "run", software_version: str = "") -> Path:
    """Write ``scans`` as an mzML 1.1 file (zlib-compressed 64-bit arrays, retention times in minutes).

    Parameters
    ----------
    path
        File to write (its folder is created).
    scans
        The spectra, written in the order given.
    run_id
        Identifier of the ``<run>`` element.
    software_version
        Version recorded for the writing software.
    """
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    scans = list(scans)
    levels = {s.ms_level for s in scans}
    content = "".join(_cv(n) for n, lv in (("MS1 spectrum", 1), ("MSn spectrum", 2)) if lv in levels or (lv == 2 and max(levels, default=1) > 1))
    with open(p, "w", encoding="utf-8", newline="\n") as fh:
        fh.write('<?xml version="1.0" encoding="utf-8"?>\n')
        fh.write(
            '<mzML xmlns="http://psi.hupo.org/ms/mzml" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" '
            'xsi:schemaLocation="http://psi.hupo.org/ms/mzml http://psidev.info/files/ms/mzML/xsd/mzML1.1.0.xsd" '
            f"id={quoteattr(run_id)} version=\"1.1.0\">\n"
        )
        fh.write(
            '<cvList count="2">'
            '<cv id="MS" fullName="Proteomics Standards Initiative Mass Spectrometry Ontology" version="4.1.0" '
            'URI="https://raw.githubusercontent.com/HUPO-PSI/psi-ms-CV/master/psi-ms.obo"/>'
            '<cv id="UO" fullName="Unit Ontology" version="releases/2020-03-10" '
            'URI="http://ontologies.berkeleybop.org/uo.obo"/></cvList>\n'
        )
        fh.write(f"<fileDescription><fileContent>{content}</fileContent></fileDescription>\n")
        fh.write(
            f'<softwareList count="1"><software id="nmrcheck" version={quoteattr(software_version or "0")}>'
            f'{_cv("custom unreleased software tool", "nmrcheck")}</software></softwareList>\n'
        )
        fh.write(
            '<instrumentConfigurationList count="1"><instrumentConfiguration id="IC1">'
            '<componentList count="3">'
            f'<source order="1">{_cv("electrospray ionization")}</source>'
            f'<analyzer order="2">{_cv("time-of-flight")}</analyzer>'
            f'<detector order="3">{_cv("microchannel plate detector")}</detector>'
            "</componentList></instrumentConfiguration></instrumentConfigurationList>\n"
        )
        fh.write(
            '<dataProcessingList count="1"><dataProcessing id="DP1"><processingMethod order="1" softwareRef="nmrcheck">'
            f'{_cv("peak picking")}</processingMethod></dataProcessing></dataProcessingList>\n'
        )
        fh.write(f'<run id={quoteattr(run_id)} defaultInstrumentConfigurationRef="IC1">\n')
        fh.write(f'<spectrumList count="{len(scans)}" defaultDataProcessingRef="DP1">\n')
        for i, s in enumerate(scans):
            fh.write(_spectrum_xml(i, s))
        fh.write("</spectrumList>\n</run>\n</mzML>\n")
    return p

