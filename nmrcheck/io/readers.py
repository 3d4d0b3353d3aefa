"""Read 1H FIDs and processed spectra (Bruker, Varian/Agilent, JCAMP-DX) through nmrglue.

This is the only module that knows vendor parameter names; it converts them once
into :class:`~nmrcheck.io.records.Fid` or :class:`~nmrcheck.io.records.SpectrumFile`.
"""

from __future__ import annotations

import logging
import os
import re
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from nmrcheck.errors import InputFileError
from nmrcheck.io.records import Acquisition, Fid, SpectrumFile

__all__ = ["detect_format", "read_fid", "read_spectrum_file", "read_any", "FORMATS"]

log = logging.getLogger("nmrcheck")

FORMATS = frozenset({"bruker", "bruker-pdata", "varian", "jcamp-fid", "jcamp-spectrum"})


def _ng():
    # nmrglue prints warnings for harmless header quirks; keep them out of user output.
    import nmrglue

    return nmrglue


# ----------------------------------------------------------------------------- detection


def detect_format(path: str | os.PathLike) -> str:
    """Name the format of ``path``: one of :data:`FORMATS`.

    A Bruker experiment directory holds ``fid`` and ``acqus``; a processed-data
    directory ``1r`` and ``procs``; a Varian/Agilent directory ``fid`` and
    ``procpar``. A JCAMP-DX file is told apart by its ``##DATA TYPE=``.
    """
    p = Path(path)
    if not p.exists():
        raise InputFileError(p, "no such file or directory")
    if p.is_dir():
        names = {c.name for c in p.iterdir()}
        if "procpar" in names and "fid" in names:
            return "varian"
        if "acqus" in names and ("fid" in names or "ser" in names):
            return "bruker"
        if "1r" in names and "procs" in names:
            return "bruker-pdata"
        raise InputFileError(p, "directory is not a Bruker (fid+acqus, 1r+procs) or Varian (fid+procpar) data set")
    if p.name == "fid" and (p.parent / "acqus").exists():
        return "bruker"
    if p.name == "fid" and (p.parent / "procpar").exists():
        return "varian"
    if p.name in ("1r", "procs") and (p.parent / "procs").exists():
        return "bruker-pdata"
    try:
        with open(p, "rb") as fh:
            head = fh.read(65536)
    except OSError as exc:
        raise InputFileError(p, f"cannot be read ({exc.strerror})") from None
    text = head.decode("latin-1", errors="replace")
    if "##" not in text[:4096]:
        raise InputFileError(p, "unknown format (not a JCAMP-DX file, nor a Bruker or Varian data set)")
    m = re.search(r"##DATA\s*TYPE\s*=\s*([^\r\n$]+)", text, re.IGNORECASE)
    kind = (m.group(1).strip().upper() if m else "")
    if "FID" in kind:
        return "jcamp-fid"
    if "SPECTRUM" in kind:
        return "jcamp-spectrum"
    raise InputFileError(p, f"JCAMP-DX file of data type {kind or 'unknown'!r}; expected NMR FID or NMR SPECTRUM")


# ----------------------------------------------------------------------------- helpers


def _first(v: Any) -> Any:
    if isinstance(v, list):
        return v[0] if v else None
    return v


def _num(v: Any) -> float | None:
    v = _first(v)
    if v is None:
        return None
    if isinstance(v, (int, float, np.integer, np.floating)):
        return float(v)
    s = str(v).strip().strip("<>").strip()
    try:
        return float(s)
    except ValueError:
        return None


def _text(v: Any) -> str | None:
    v = _first(v)
    if v is None:
        return None
    s = str(v).strip()
    if s.startswith("<") and s.endswith(">"):
        s = s[1:-1]
    s = s.strip()
    return s or None


def _array_item(v: Any, index: int) -> float | None:
    """Item ``index`` of a Bruker array parameter (list, or JCAMP '(0..63)\\n ...' text)."""
    v = _first(v) if not isinstance(v, list) or len(v) == 1 else v
    if isinstance(v, list):
        vals = v
    elif isinstance(v, str):
        body = v.split("\n", 1)[1] if v.lstrip().startswith("(") and "\n" in v else v
        vals = body.split()
    else:
        return None
    try:
        return float(vals[index])
    except (IndexError, ValueError, TypeError):
        return None


def _nucleus(raw: str | None) -> str:
    if not raw:
        return "1H"
    s = raw.replace("^", "").strip().upper()
    m = re.match(r"(\d+)([A-Z]+)", s)
    if m:
        return m.group(1) + m.group(2).capitalize()
    m = re.match(r"([A-Z]+)(\d+)", s)
    if m:
        return m.group(2) + m.group(1).capitalize()
    return s


def _check_proton(path: Path, acq: Acquisition) -> None:
    if acq.nucleus != "1H":
        raise InputFileError(path, f"nucleus is {acq.nucleus}; nmrcheck processes 1H spectra only")


def _group_delay_bruker(grpdly: float | None, decim: float | None, dspfvs: float | None) -> float:
    """Digital-filter delay in points: GRPDLY when recorded, otherwise looked up from DECIM and DSPFVS.

    The lookup table of delays for the older firmware (DSPFVS 10-13) is the one
    nmrglue ships (``nmrglue.fileio.bruker.bruker_dsp_table``).
    """
    if grpdly is not None and grpdly > 0:
        return float(grpdly)
    if decim is None or dspfvs is None or decim <= 1:
        return 0.0
    table = _ng().fileio.bruker.bruker_dsp_table
    firmware = int(round(dspfvs))
    if firmware not in table:
        raise InputFileError("acqus", f"digital filter firmware DSPFVS={firmware} has no known group delay and GRPDLY is not set")
    row = table[firmware]
    key = int(round(decim))
    if key not in row:
        raise InputFileError("acqus", f"decimation DECIM={decim:g} not in the group-delay table for DSPFVS={firmware}")
    return float(row[key])


def _bruker_acquisition(p: dict[str, Any], title: str | None) -> Acquisition:
    sfo1 = _num(p.get("SFO1"))
    bf1 = _num(p.get("BF1"))
    swh = _num(p.get("SW_h"))
    o1 = _num(p.get("O1")) or 0.0
    if not sfo1 or not swh:
        raise InputFileError("acqus", "spectrometer frequency (SFO1) or sweep width (SW_h) missing")
    td = _num(p.get("TD"))
    nuc = _text(p.get("NUC1")) or _text(p.get(".OBSERVENUCLEUS"))
    return Acquisition(
        nucleus=_nucleus(nuc),
        spectrometer_mhz=sfo1,
        sweep_width_hz=swh,
        carrier_ppm=o1 / (bf1 or sfo1),
        base_mhz=bf1,
        solvent=_text(p.get("SOLVENT")) or _text(p.get(".SOLVENTNAME")),
        scans=int(_num(p.get("NS"))) if _num(p.get("NS")) is not None else None,
        receiver_gain=_num(p.get("RG")),
        pulse_us=_array_item(p.get("P"), 1),
        pulse_program=_text(p.get("PULPROG")),
        temperature_k=_num(p.get("TE")),
        relaxation_delay_s=_array_item(p.get("D"), 1),
        acquisition_time_s=(td / 2.0 / swh) if td else None,
        title=title,
    )


def _strip_dollar(dic: dict[str, Any]) -> dict[str, Any]:
    """JCAMP-DX keys without their private-label ``$`` (``$SFO1`` -> ``SFO1``)."""
    out = {}
    for k, v in dic.items():
        out[k[1:] if k.startswith("$") else k] = v
    return out


# ----------------------------------------------------------------------------- FIDs


def read_fid(path: str | os.PathLike) -> Fid:
    """Read a 1H FID from a Bruker or Varian directory or a JCAMP-DX FID file."""
    p = Path(path)
    fmt = detect_format(p)
    if fmt == "bruker":
        return _read_bruker_fid(p if p.is_dir() else p.parent)
    if fmt == "varian":
        return _read_varian_fid(p if p.is_dir() else p.parent)
    if fmt == "jcamp-fid":
        return _read_jcamp_fid(p)
    raise InputFileError(p, f"holds a processed spectrum ({fmt}), not an FID")


def _guard(path: Path, what: str):
    """Context turning low-level read failures into one-line InputFileErrors."""

    class _G:
        def __enter__(self):
            self._w = warnings.catch_warnings()
            self._w.__enter__()
            warnings.simplefilter("ignore")
            return self

        def __exit__(self, et, ev, tb):
            self._w.__exit__(et, ev, tb)
            if ev is None or isinstance(ev, InputFileError):
                if isinstance(ev, InputFileError) and ev.path in ("acqus", "procs", "procpar"):
                    raise InputFileError(path, ev.problem) from None
                return False
            if isinstance(ev, (OSError, ValueError, KeyError, IndexError, TypeError, EOFError, AttributeError, ZeroDivisionError)):
                msg = str(ev).splitlines()[0] if str(ev) else type(ev).__name__
                raise InputFileError(path, f"{what} is corrupt or truncated ({msg})") from None
            return False

    return _G()


def _read_bruker_fid(d: Path) -> Fid:
    ng = _ng()
    with _guard(d, "Bruker data set"):
        fid_path = d / "fid"
        if not fid_path.exists():
            raise InputFileError(d, "Bruker directory has no 'fid' file")
        dic = ng.bruker.read_acqus_file(str(d), acqus_files=["acqus"])
        p = dic["acqus"]
        td = int(p.get("TD", 0))
        dtype_code = int(p.get("DTYPA", 0))
        itemsize = 8 if dtype_code == 2 else 4
        expected = td * itemsize
        actual = fid_path.stat().st_size
        if td <= 0:
            raise InputFileError(d, "acqus has no TD (number of points)")
        if actual < expected:
            raise InputFileError(fid_path, f"truncated: {actual} bytes where TD={td} needs {expected}")
        dic, data = ng.bruker.read(str(d), read_pulseprogram=False)
        data = np.asarray(data)
        if data.ndim != 1:
            raise InputFileError(d, f"is a {data.ndim}D experiment; nmrcheck reads 1D FIDs")
        title = _read_title(d / "pdata" / "1" / "title")
        acq = _bruker_acquisition(dic["acqus"], title)
        _check_proton(d, acq)
        gd = _group_delay_bruker(_num(p.get("GRPDLY")), _num(p.get("DECIM")), _num(p.get("DSPFVS")))
    return Fid(
        data=data.astype(np.complex128),
        acquisition=acq,
        source=str(d),
        format="bruker",
        group_delay_points=gd,
        conjugate=False,
    )


def _read_title(p: Path) -> str | None:
    try:
        t = p.read_text(errors="replace").strip()
    except OSError:
        return None
    return " ".join(t.split()) or None


def _read_varian_fid(d: Path) -> Fid:
    ng = _ng()
    with _guard(d, "Varian data set"):
        dic, data = ng.varian.read(str(d))
        data = np.asarray(data)
        if data.ndim > 1:
            if data.shape[0] != 1:
                raise InputFileError(d, f"holds {data.shape[0]} FIDs; nmrcheck reads 1D FIDs")
            data = data[0]
        pp = dic["procpar"]

        def val(name, default=None):
            entry = pp.get(name)
            if not entry:
                return default
            vals = entry.get("values") or [default]
            return vals[0]

        sfrq = _num(val("sfrq"))
        sw = _num(val("sw"))
        if not sfrq or not sw:
            raise InputFileError(d, "procpar lacks sfrq or sw")
        tn = _text(val("tn")) or "H1"
        np_points = _num(val("np"))
        acq = Acquisition(
            nucleus=_nucleus(tn),
            spectrometer_mhz=sfrq,
            sweep_width_hz=sw,
            carrier_ppm=(_num(val("tof")) or 0.0) / sfrq,
            base_mhz=None,
            solvent=_text(val("solvent")),
            scans=int(_num(val("nt"))) if _num(val("nt")) is not None else None,
            receiver_gain=_num(val("gain")),
            pulse_us=_num(val("pw")),
            pulse_program=_text(val("seqfil")),
            temperature_k=(_num(val("temp")) + 273.15) if _num(val("temp")) is not None else None,
            relaxation_delay_s=_num(val("d1")),
            acquisition_time_s=_num(val("at")) or ((np_points / 2 / sw) if np_points else None),
            title=_text(val("samplename")) or None,
        )
        _check_proton(d, acq)
    # Varian/Agilent record the quadrature channel with the opposite sense to Bruker
    # (nmrglue's examples reverse Bruker spectra after the transform but not Varian ones).
    return Fid(data=data.astype(np.complex128), acquisition=acq, source=str(d), format="varian", conjugate=True)


def _read_jcamp(path: Path) -> tuple[dict[str, Any], Any]:
    ng = _ng()
    with _guard(path, "JCAMP-DX file"):
        dic, data = ng.jcampdx.read(str(path))
    if data is None or (isinstance(data, list) and len(data) == 0):
        raise InputFileError(path, "JCAMP-DX file holds no data block")
    return dic, data


def _jcamp_acquisition(path: Path, dic: dict[str, Any]) -> Acquisition:
    p = _strip_dollar(dic)
    if "SFO1" not in p and ".OBSERVEFREQUENCY" in p:
        p["SFO1"] = p[".OBSERVEFREQUENCY"]
    if "SW_h" not in p and "SWH" in p:
        p["SW_h"] = p["SWH"]
    if "SW_h" not in p and "SW" in p and _num(p.get("SFO1")):
        p["SW_h"] = [(_num(p["SW"]) or 0.0) * _num(p["SFO1"])]
    if "NUC1" not in p and ".OBSERVENUCLEUS" in p:
        p["NUC1"] = p[".OBSERVENUCLEUS"]
    if "NS" not in p and ".AVERAGES" in p:
        p["NS"] = p[".AVERAGES"]
    if "PULPROG" not in p and ".PULSESEQUENCE" in p:
        p["PULPROG"] = p[".PULSESEQUENCE"]
    with _guard(path, "JCAMP-DX header"):
        try:
            return _bruker_acquisition(p, _text(dic.get("TITLE")))
        except InputFileError as exc:
            raise InputFileError(path, exc.problem) from None


def _read_jcamp_fid(path: Path) -> Fid:
    dic, data = _read_jcamp(path)
    if not isinstance(data, list) or len(data) < 2:
        raise InputFileError(path, "JCAMP-DX FID without an imaginary channel; a complex FID is needed")
    re_, im = (np.asarray(data[0], float), np.asarray(data[1], float))
    if re_.size != im.size or re_.size < 16:
        raise InputFileError(path, f"real and imaginary channels differ in length or are too short ({re_.size}, {im.size})")
    acq = _jcamp_acquisition(path, dic)
    _check_proton(path, acq)
    p = _strip_dollar(dic)
    gd = _group_delay_bruker(_num(p.get("GRPDLY")), _num(p.get("DECIM")), _num(p.get("DSPFVS")))
    return Fid(
        data=re_ + 1j * im,
        acquisition=acq,
        source=str(path),
        format="jcamp-fid",
        group_delay_points=gd,
        conjugate=False,
    )


# ----------------------------------------------------------------------------- processed spectra


def read_spectrum_file(path: str | os.PathLike) -> SpectrumFile:
    """Read a spectrum processed elsewhere: Bruker ``pdata/N`` (1r, 1i, procs) or JCAMP-DX NMR SPECTRUM."""
    p = Path(path)
    fmt = detect_format(p)
    if fmt == "bruker":
        pdata = p / "pdata" / "1" if p.is_dir() else p.parent / "pdata" / "1"
        if not pdata.exists():
            raise InputFileError(p, "Bruker directory has no pdata/1")
        return _read_bruker_pdata(pdata)
    if fmt == "bruker-pdata":
        return _read_bruker_pdata(p if p.is_dir() else p.parent)
    if fmt == "jcamp-spectrum":
        return _read_jcamp_spectrum(p)
    raise InputFileError(p, f"holds an FID ({fmt}), not a processed spectrum")


def _read_bruker_pdata(d: Path) -> SpectrumFile:
    ng = _ng()
    with _guard(d, "Bruker processed data"):
        has_imag = (d / "1i").exists()
        dic, data = ng.bruker.read_pdata(str(d), all_components=has_imag, scale_data=True)
        procs = dic["procs"]
        if has_imag:
            spec = np.asarray(data[0], float) + 1j * np.asarray(data[1], float)
        else:
            spec = np.asarray(data, float)
        sf = _num(procs.get("SF"))
        swp = _num(procs.get("SW_p"))
        offset = _num(procs.get("OFFSET"))
        si = spec.shape[-1]
        if not sf or not swp or offset is None:
            raise InputFileError(d, "procs lacks SF, SW_p or OFFSET")
        acq_dir = d.parent.parent
        try:
            adic = ng.bruker.read_acqus_file(str(acq_dir), acqus_files=["acqus"])["acqus"]
            acq = _bruker_acquisition(adic, _read_title(d / "title"))
        except (OSError, InputFileError, KeyError, ValueError):
            acq = Acquisition(nucleus="1H", spectrometer_mhz=sf, sweep_width_hz=swp, carrier_ppm=0.0)
        acq = _with_reference(acq, sf)
        _check_proton(d, acq)
    last = offset - swp / sf * (si - 1) / si
    return SpectrumFile(
        data=spec,
        first_ppm=offset,
        last_ppm=last,
        acquisition=acq,
        source=str(d),
        format="bruker-pdata",
        processing={"lb_hz": _num(procs.get("LB")) or 0.0, "size": float(si)},
    )


def _with_reference(acq: Acquisition, sf: float | None) -> Acquisition:
    from dataclasses import replace

    return replace(acq, reference_mhz=sf) if sf else acq


def _read_jcamp_spectrum(path: Path) -> SpectrumFile:
    dic, data = _read_jcamp(path)
    if isinstance(data, list):
        if len(data) >= 2:
            spec = np.asarray(data[0], float) + 1j * np.asarray(data[1], float)
        else:
            spec = np.asarray(data[0], float)
    else:
        spec = np.asarray(data, float)
    acq = _jcamp_acquisition(path, dic)
    _check_proton(path, acq)
    p = _strip_dollar(dic)
    sf = _num(p.get("SF")) or acq.spectrometer_mhz
    first_last = _jcamp_first_last(dic)
    offset = _num(p.get("OFFSET"))
    # nmrglue drops underscores from JCAMP-DX labels: $SW_p arrives as $SWP.
    sw_p = _num(p.get("SW_p")) or _num(p.get("SWP"))
    n = spec.shape[-1]
    if offset is not None and sw_p:
        first = offset
        last = offset - sw_p / sf * (n - 1) / n
    elif first_last is not None:
        first, last = (v / sf for v in first_last)
    else:
        raise InputFileError(path, "JCAMP-DX spectrum has no axis (neither OFFSET nor FIRST/LAST)")
    return SpectrumFile(
        data=spec,
        first_ppm=first,
        last_ppm=last,
        acquisition=_with_reference(acq, sf),
        source=str(path),
        format="jcamp-spectrum",
        processing={"lb_hz": _num(p.get("LB")) or 0.0, "size": float(n)},
    )


def _jcamp_first_last(dic: dict[str, Any]) -> tuple[float, float] | None:
    """FIRST/LAST of the x axis in Hz from a JCAMP-DX header, when given."""
    for fk, lk in (("FIRST", "LAST"), ("FIRSTX", "LASTX")):
        if fk in dic and lk in dic:
            try:
                f = float(str(_first(dic[fk])).split(",")[0])
                last = float(str(_first(dic[lk])).split(",")[0])
                return f, last
            except ValueError:
                continue
    return None


def read_any(path: str | os.PathLike) -> Fid | SpectrumFile:
    """An FID when ``path`` holds one, otherwise the processed spectrum."""
    fmt = detect_format(path)
    if fmt in ("bruker", "varian", "jcamp-fid"):
        return read_fid(path)
    return read_spectrum_file(path)
