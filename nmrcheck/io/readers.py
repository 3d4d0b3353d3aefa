"""Read 1H FIDs and processed spectra (Bruker, Varian/Agilent, JCAMP-DX).

This is the only module that knows vendor parameter names; it converts them once
into :class:`~nmrcheck.io.records.Fid` or :class:`~nmrcheck.io.records.SpectrumFile`.
Bruker parameter files, Varian ``procpar`` and JCAMP-DX files are parsed with bounded effort
(:mod:`nmrcheck.io.parameters`, :mod:`nmrcheck.io.varian`, :mod:`nmrcheck.io.jcamp`), binary
data with numpy; nmrglue supplies the Bruker digital-filter delay table. Every numeric parameter is checked for being finite and plausible
(:mod:`nmrcheck.io.plausible`) and every data set for holding a signal at all; a refusal
is one line naming the file and the field.
"""

from __future__ import annotations

import functools
import logging
import os
import re
from pathlib import Path
from typing import Any

import numpy as np

from nmrcheck.errors import InputFileError
from nmrcheck.io import plausible as pl
from nmrcheck.io.jcamp import JcampBlock, JcampTable, decode_table, read_blocks
from nmrcheck.io.parameters import read_parameter_file, regular_file
from nmrcheck.io.records import Acquisition, Fid, SpectrumFile

__all__ = ["detect_format", "read_fid", "read_spectrum_file", "read_any", "FORMATS"]

log = logging.getLogger("nmrcheck")

FORMATS = frozenset({"bruker", "bruker-pdata", "varian", "jcamp-fid", "jcamp-spectrum"})


def _ng():
    import nmrglue

    return nmrglue


# ----------------------------------------------------------------------------- detection


def detect_format(path: str | os.PathLike) -> str:
    """Name the format of ``path``: one of :data:`FORMATS`.

    A Bruker experiment directory holds ``fid`` and ``acqus``; a processed-data
    directory ``1r`` and ``procs``; a Varian/Agilent directory ``fid`` and
    ``procpar``. A JCAMP-DX file is told apart by its ``##DATA TYPE=``; a compound
    file (``LINK``) by the block :func:`read_any` would read (the 1H FID, else the 1H spectrum).
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
    regular_file(p)
    try:
        with open(p, "rb") as fh:
            head = fh.read(65536)
    except OSError as exc:
        raise InputFileError(p, f"cannot be read ({exc.strerror})") from None
    text = head.decode("latin-1", errors="replace")
    if "##" not in text[:4096]:
        raise InputFileError(p, "unknown format (not a JCAMP-DX file, nor a Bruker or Varian data set)")
    m = re.search(r"^\s*##DATA\s*TYPE\s*=\s*([^\r\n$]+)", text, re.IGNORECASE | re.MULTILINE)
    kind = (m.group(1).strip().upper() if m else "")
    if "LINK" in kind:
        _, block, _ = _jcamp_block(p, None)
        return "jcamp-fid" if "FID" in block.data_type else "jcamp-spectrum"
    if "FID" in kind:
        return "jcamp-fid"
    if "SPECTRUM" in kind:
        return "jcamp-spectrum"
    raise InputFileError(p, f"JCAMP-DX file of data type {kind or 'unknown'!r}; expected NMR FID, NMR SPECTRUM or LINK")


# ----------------------------------------------------------------------------- helpers


def _first(v: Any) -> Any:
    if isinstance(v, list):
        return v[0] if v else None
    return v


def _num(v: Any) -> float | None:
    v = _first(v)
    if v is None or isinstance(v, bool):
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


def _check_proton(path: Path | str, acq: Acquisition) -> None:
    if acq.nucleus != "1H":
        raise InputFileError(path, f"nucleus is {acq.nucleus}; nmrcheck processes 1H spectra only")


def _optional(p: dict[str, Any], key: str, source: str, notes: list[str], *, lo: float, hi: float, what: str, item: int | None = None) -> float | None:
    """A descriptive parameter (scans, gain, pulse, temperature, delay): None with a note when implausible."""
    raw = p.get(key)
    if raw is None or raw == "":
        return None
    value = _array_item(raw, item) if item is not None else _num(raw)
    checked = pl.optional_number(value, lo=lo, hi=hi)
    if checked is None:
        shown = value if value is not None else _first(raw)
        notes.append(f"{source}: {key}={shown!r} is not a plausible {what}; ignored")
    return checked


def _group_delay(source: str, p: dict[str, Any], notes: list[str]) -> float:
    """Digital-filter delay in points: GRPDLY when recorded, otherwise looked up from DECIM and DSPFVS.

    The lookup table of delays for the older firmware (DSPFVS 10-13) is the one
    nmrglue ships (``nmrglue.fileio.bruker.bruker_dsp_table``). When the delay
    cannot be known (GRPDLY unset and DECIM or DSPFVS unreadable) the file is
    refused: an uncorrected delay of ~70 points would ruin phase and count silently.
    """
    if "GRPDLY" in p and p["GRPDLY"] not in (None, ""):
        g = pl.number(source, "GRPDLY", p["GRPDLY"], lo=-1.0, hi=pl.MAX_GROUP_DELAY_POINTS, unit="points", what="digital-filter delay")
        if g > 0:
            return g
        if g != -1.0 and g != 0.0:
            raise InputFileError(source, f"GRPDLY={g:g} is neither a delay nor the -1 that means 'not set'")
    if _num(p.get("DIGMOD")) == 0.0:
        return 0.0  # analogue filtering: no delay
    has = {k: p.get(k) not in (None, "") for k in ("DECIM", "DSPFVS")}
    if not any(has.values()):
        if "GRPDLY" in p:
            raise InputFileError(source, "GRPDLY is not set and DECIM/DSPFVS are missing: the digital-filter delay cannot be known")
        notes.append(f"{source}: no digital-filter parameters (GRPDLY, DECIM, DSPFVS); the FID is taken as starting at t=0")
        return 0.0
    for k, present in has.items():
        if not present:
            raise InputFileError(source, f"{k} is missing and GRPDLY is not set: the digital-filter delay cannot be known")
    decim = pl.number(source, "DECIM", p["DECIM"], lo=1.0, hi=100000.0, what="decimation; GRPDLY is not set, so the digital-filter delay depends on it")
    dspfvs = pl.number(source, "DSPFVS", p["DSPFVS"], lo=0.0, hi=100.0, what="digital-filter firmware; GRPDLY is not set, so the delay depends on it")
    if decim <= 1:
        return 0.0
    table = _ng().fileio.bruker.bruker_dsp_table
    firmware = int(round(dspfvs))
    if firmware not in table:
        raise InputFileError(source, f"digital filter firmware DSPFVS={firmware} has no known group delay and GRPDLY is not set")
    row = table[firmware]
    key = int(round(decim))
    if key not in row:
        raise InputFileError(source, f"decimation DECIM={decim:g} not in the group-delay table for DSPFVS={firmware}")
    return float(row[key])


def _bruker_acquisition(
    p: dict[str, Any],
    title: str | None,
    source: str,
    notes: list[str],
    *,
    sweep_width_hz: float | None = None,
    carrier_ppm: float | None = None,
    values: int | None = None,
) -> Acquisition:
    """Acquisition from Bruker parameter names (``SFO1``, ``BF1``, ``O1``, ``SW_h`` ...), each checked.

    ``sweep_width_hz`` and ``carrier_ppm`` stand in for ``SW_h`` and ``O1``/``BF1`` when the
    file lacks them (JCAMP-DX files with the standard NMR labels only); ``values`` is the
    number of recorded values when known (TD).
    """
    lo_mhz, hi_mhz = pl.MHZ_RANGE
    sfo1 = pl.number(source, "SFO1", p.get("SFO1"), lo=lo_mhz, hi=hi_mhz, unit="MHz", what="observe frequency")
    if p.get("SW_h") is not None:
        swh = pl.number(source, "SW_h", p.get("SW_h"), lo=0.0, hi=1e9, unit="Hz", what="sweep width")
    elif sweep_width_hz is not None:
        swh = sweep_width_hz
    else:
        raise InputFileError(source, "sweep width (SW_h) missing")
    lo_sw, hi_sw = pl.SWEEP_PPM_RANGE
    if not lo_sw <= swh / sfo1 <= hi_sw:
        raise InputFileError(source, f"SW_h={swh:g} Hz is {swh / sfo1:.3g} ppm at {sfo1:g} MHz, outside the plausible {lo_sw:g}..{hi_sw:g} ppm")
    bf1 = None
    if p.get("BF1") is not None:
        bf1 = pl.number(source, "BF1", p.get("BF1"), lo=lo_mhz, hi=hi_mhz, unit="MHz", what="base frequency")
    o1 = None
    if p.get("O1") is not None:
        o1 = pl.number(source, "O1", p.get("O1"), lo=-pl.MAX_CARRIER_OFFSET_PPM * hi_mhz, hi=pl.MAX_CARRIER_OFFSET_PPM * hi_mhz, unit="Hz", what="carrier offset")
    if bf1 is None and o1 is not None:
        bf1 = sfo1 - o1 * 1e-6
        notes.append(f"{source}: BF1 missing; taken as SFO1 - O1 = {bf1:.6f} MHz")
    if bf1 is not None:
        offset_ppm = (sfo1 - bf1) / bf1 * 1e6
        if abs(offset_ppm) > pl.MAX_CARRIER_OFFSET_PPM:
            raise InputFileError(source, f"SFO1={sfo1:g} MHz and BF1={bf1:g} MHz differ by {offset_ppm:.4g} ppm; they must agree within {pl.MAX_CARRIER_OFFSET_PPM:g} ppm")
        if o1 is not None and abs((sfo1 - bf1) * 1e6 - o1) > max(50.0, 1e-6 * abs(o1)):
            raise InputFileError(source, f"SFO1={sfo1} MHz is not BF1 + O1 ({bf1} MHz + {o1:g} Hz); the header is inconsistent")
        carrier = o1 / bf1 if o1 is not None else offset_ppm
    elif carrier_ppm is not None:
        carrier = carrier_ppm
        # The axis is built from the base frequency: place it so that SFO1 sits at the carrier.
        bf1 = sfo1 / (1.0 + carrier * 1e-6)
    else:
        raise InputFileError(source, "BF1 and O1 missing: the carrier position (and so the ppm axis) is unknown")
    nuc = _text(p.get("NUC1")) or _text(p.get(".OBSERVENUCLEUS"))
    scans = _optional(p, "NS", source, notes, lo=1, hi=1e8, what="number of scans")
    td = values if values is not None else pl.optional_number(_num(p.get("TD")), lo=2, hi=pl.MAX_FID_VALUES)
    return Acquisition(
        nucleus=_nucleus(nuc),
        spectrometer_mhz=sfo1,
        sweep_width_hz=swh,
        carrier_ppm=carrier,
        base_mhz=bf1,
        solvent=_text(p.get("SOLVENT")) or _text(p.get(".SOLVENTNAME")),
        scans=int(scans) if scans is not None else None,
        receiver_gain=_optional(p, "RG", source, notes, lo=1e-6, hi=1e7, what="receiver gain"),
        pulse_us=_optional(p, "P", source, notes, lo=1e-6, hi=1e6, what="pulse length (us)", item=1),
        pulse_program=_text(p.get("PULPROG")),
        temperature_k=_optional(p, "TE", source, notes, lo=1.0, hi=1000.0, what="temperature (K)"),
        relaxation_delay_s=_optional(p, "D", source, notes, lo=0.0, hi=1e5, what="relaxation delay (s)", item=1),
        acquisition_time_s=(td / 2.0 / swh) if td else None,
        title=title,
        prescan_delay_us=_optional(p, "DE", source, notes, lo=0.0, hi=1e4, what="pre-scan delay (us)"),
        filter_delay=_filter_delay_kind(p),
    )


def _filter_delay_kind(p: dict[str, Any]) -> str | None:
    """``"recorded"`` when GRPDLY states the digital-filter delay, ``"table"`` when it comes from DECIM/DSPFVS, else None."""
    grpdly = _num(p.get("GRPDLY"))
    if grpdly is not None and grpdly > 0:
        return "recorded"
    decim, dspfvs = _num(p.get("DECIM")), _num(p.get("DSPFVS"))
    if _num(p.get("DIGMOD")) == 0.0 or decim is None or dspfvs is None or decim <= 1:
        return None
    return "table"


def _read_title(p: Path) -> str | None:
    try:
        if not p.is_file() or p.stat().st_size > 1_000_000:
            return None
        t = p.read_bytes().decode("utf-8", errors="replace").strip()
    except OSError:
        return None
    return " ".join(t.split()) or None


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


#: Bruker raw data are written in blocks of 1024 bytes; the last block is padded with zeros
#: (TopSpin before version 4 for 1D FIDs; common practice, from memory).
_BRUKER_BLOCK_BYTES = 1024


def _bruker_binary(path: Path, values: int, *, dtype_code: Any, byte_order: Any, source: str, dtype_key: str, order_key: str, padding: bool, what: str) -> np.ndarray:
    code = int(pl.number(source, dtype_key, dtype_code if dtype_code is not None else 0, lo=0, hi=2, what="data type"))
    if code not in (0, 2):
        raise InputFileError(source, f"{dtype_key}={code}: only 32-bit integer (0) and 64-bit float (2) data are read")
    order = int(pl.number(source, order_key, byte_order if byte_order is not None else 0, lo=0, hi=1, what="byte order"))
    dtype = np.dtype(("<" if order == 0 else ">") + ("i4" if code == 0 else "f8"))
    regular_file(path, path.name)
    expected = values * dtype.itemsize
    actual = path.stat().st_size
    padded = -(-expected // _BRUKER_BLOCK_BYTES) * _BRUKER_BLOCK_BYTES if padding else expected
    if actual == 0:
        raise InputFileError(path, f"the {what} is empty (0 bytes)")
    if actual < expected:
        raise InputFileError(path, f"truncated: {actual} bytes where {values} values need {expected}")
    if actual not in (expected, padded):
        extra = f" (or {padded} with the 1024-byte block padding)" if padded != expected else ""
        raise InputFileError(path, f"holds {actual} bytes where {values} values need {expected}{extra}: junk appended, or the header's point count is wrong")
    try:
        raw = np.fromfile(path, dtype=dtype, count=actual // dtype.itemsize)
    except (OSError, ValueError) as exc:
        raise InputFileError(path, f"cannot be read ({exc})") from None
    if raw.size > values and np.any(raw[values:]):
        raise InputFileError(path, f"the padding after the {values} announced values is not zeros: junk appended, or the point count is wrong")
    return raw[:values].astype(np.float64)


def _read_bruker_fid(d: Path) -> Fid:
    fid_path = d / "fid"
    if not fid_path.exists():
        if (d / "ser").exists():
            raise InputFileError(d, "holds a multidimensional experiment (ser); nmrcheck reads 1D FIDs")
        raise InputFileError(d, "Bruker directory has no 'fid' file")
    if (d / "acqu2s").exists():
        raise InputFileError(d, "is a 2D experiment (acqu2s present); nmrcheck reads 1D FIDs")
    acqus = d / "acqus"
    p = read_parameter_file(acqus)
    source = str(acqus)
    notes: list[str] = []
    td = int(pl.number(source, "TD", p.get("TD"), lo=32, hi=pl.MAX_FID_VALUES, unit="values", what="number of points"))
    if td % 2:
        raise InputFileError(source, f"TD={td} is odd; a complex FID holds pairs of values")
    raw = _bruker_binary(fid_path, td, dtype_code=p.get("DTYPA"), byte_order=p.get("BYTORDA"), source=source, dtype_key="DTYPA", order_key="BYTORDA", padding=True, what="fid")
    data = raw[0::2] + 1j * raw[1::2]
    pl.check_points(str(fid_path), data, "the fid")
    acq = _bruker_acquisition(p, _read_title(d / "pdata" / "1" / "title"), source, notes, values=td)
    _check_proton(d, acq)
    gd = _group_delay(source, p, notes)
    if gd >= data.size / 2:
        raise InputFileError(source, f"digital-filter delay of {gd:g} points is not shorter than half the FID ({data.size} points)")
    return Fid(data=data, acquisition=acq, source=str(d), format="bruker", group_delay_points=gd, conjugate=False, notes=tuple(notes))


def _read_varian_fid(d: Path) -> Fid:
    from nmrcheck.io.varian import read_procpar, read_varian_fid_points

    source = str(d / "procpar")
    notes: list[str] = []
    pp = read_procpar(d / "procpar")
    data = read_varian_fid_points(d / "fid")

    def val(name, default=None):
        entry = pp.get(name)
        if not entry:
            return default
        vals = entry.get("values") or [default]
        return vals[0]

    lo_mhz, hi_mhz = pl.MHZ_RANGE
    sfrq = pl.number(source, "sfrq", val("sfrq"), lo=lo_mhz, hi=hi_mhz, unit="MHz", what="observe frequency")
    sw = pl.number(source, "sw", val("sw"), lo=0.0, hi=1e9, unit="Hz", what="sweep width")
    lo_sw, hi_sw = pl.SWEEP_PPM_RANGE
    if not lo_sw <= sw / sfrq <= hi_sw:
        raise InputFileError(source, f"sw={sw:g} Hz is {sw / sfrq:.3g} ppm at {sfrq:g} MHz, outside the plausible {lo_sw:g}..{hi_sw:g} ppm")
    tof = pl.number(source, "tof", val("tof", 0.0), lo=-pl.MAX_CARRIER_OFFSET_PPM * hi_mhz, hi=pl.MAX_CARRIER_OFFSET_PPM * hi_mhz, unit="Hz", what="carrier offset")
    # The axis is built from the base frequency: the spectrometer's reference frequency (reffrq)
    # when recorded, otherwise the transmitter frequency less its offset.
    base = pl.optional_number(_num(val("reffrq")), lo=lo_mhz, hi=hi_mhz)
    if base is None or abs(sfrq - base) / base > pl.MAX_CARRIER_OFFSET_PPM * 1e-6:
        base = sfrq - tof * 1e-6
    tn = _text(val("tn")) or "H1"
    np_points = pl.optional_number(_num(val("np")), lo=2, hi=pl.MAX_FID_VALUES)
    flat = {"nt": val("nt"), "gain": val("gain"), "pw": val("pw"), "temp": val("temp"), "d1": val("d1")}
    scans = _optional(flat, "nt", source, notes, lo=1, hi=1e8, what="number of scans")
    temp = _optional(flat, "temp", source, notes, lo=-273.0, hi=700.0, what="temperature (C)")
    acq = Acquisition(
        nucleus=_nucleus(tn),
        spectrometer_mhz=sfrq,
        sweep_width_hz=sw,
        carrier_ppm=tof / sfrq,
        base_mhz=base,
        solvent=_text(val("solvent")),
        scans=int(scans) if scans is not None else None,
        receiver_gain=_optional(flat, "gain", source, notes, lo=-1e3, hi=1e7, what="receiver gain"),
        pulse_us=_optional(flat, "pw", source, notes, lo=1e-6, hi=1e6, what="pulse length (us)"),
        pulse_program=_text(val("seqfil")),
        temperature_k=(temp + 273.15) if temp is not None else None,
        relaxation_delay_s=_optional(flat, "d1", source, notes, lo=0.0, hi=1e5, what="relaxation delay (s)"),
        acquisition_time_s=pl.optional_number(_num(val("at")), lo=1e-6, hi=1e4) or ((np_points / 2 / sw) if np_points else None),
        title=_text(val("samplename")) or None,
    )
    _check_proton(d, acq)
    pl.check_points(str(d / "fid"), data, "the fid")
    # Varian/Agilent record the quadrature channel with the opposite sense to Bruker
    # (nmrglue's examples reverse Bruker spectra after the transform but not Varian ones).
    return Fid(data=data, acquisition=acq, source=str(d), format="varian", conjugate=True, notes=tuple(notes))


# ----------------------------------------------------------------------------- JCAMP-DX


@functools.lru_cache(maxsize=4)
def _blocks_cached(path: str, size: int, mtime_ns: int) -> tuple[JcampBlock, ...]:
    return tuple(read_blocks(path))


def _data_blocks(blocks: tuple[JcampBlock, ...] | list[JcampBlock]) -> list[JcampBlock]:
    out: list[JcampBlock] = []
    for b in blocks:
        if b.tables and any(t.label in ("XYDATA", "DATATABLE") for t in b.tables):
            out.append(b)
        out.extend(_data_blocks(b.children))
    return out


def _block_nucleus(b: JcampBlock) -> str:
    return _nucleus(_text(b.get(".OBSERVE NUCLEUS")) or _text(b.get("$NUC1")))


def _jcamp_block(path: Path, want: str | None) -> tuple[Path, JcampBlock, str | None]:
    """The data block to read from ``path`` (``want``: "fid", "spectrum" or None for the FID first) and a note saying which."""
    st = regular_file(path, "JCAMP-DX file").stat()
    blocks = _blocks_cached(str(path), st.st_size, st.st_mtime_ns)
    data = _data_blocks(blocks)
    if not data:
        raise InputFileError(path, "JCAMP-DX file holds no data block")
    compound = len(data) > 1 or any(b.data_type == "LINK" for b in blocks)
    if not compound:
        return path, data[0], None

    def kind(b: JcampBlock) -> str | None:
        t = b.data_type
        if not t.startswith("NMR") or (_num(b.get("NUM DIM")) or 1) > 1:
            return None
        return "fid" if "FID" in t else "spectrum" if "SPECTRUM" in t else None

    usable = [(i, b, kind(b)) for i, b in enumerate(data, start=1) if kind(b) and _block_nucleus(b) == "1H"]
    order = [want] if want else ["fid", "spectrum"]
    for k in order:
        for i, b, bk in usable:
            if bk == k:
                note = f"{path}: compound JCAMP-DX file of {len(data)} data blocks; block {i} ({b.title!r}, {b.data_type}, 1H) read"
                return path, b, note
    listing = ", ".join(f"{b.data_type or 'untyped'} {_block_nucleus(b)}" for b in data)
    wanted = {"fid": "1H FID", "spectrum": "1H spectrum"}.get(want or "", "1H FID or spectrum")
    raise InputFileError(path, f"compound JCAMP-DX file holds no {wanted} (blocks: {listing})")


def _params(b: JcampBlock) -> dict[str, Any]:
    """Block labels as Bruker-style parameters: ``$SFO1`` -> ``SFO1``; standard labels kept with their dot."""
    out: dict[str, Any] = {}
    for k, v in b.labels.items():
        if not v:
            continue
        out[k[1:] if k.startswith("$") else k] = v[0]
    # Label normalisation drops underscores: $SW_h arrives as SWH, $SW_p as SWP.
    if "SW_h" not in out and "SWH" in out:
        out["SW_h"] = out["SWH"]
    if "NUC1" not in out and ".OBSERVENUCLEUS" in out:
        out["NUC1"] = out[".OBSERVENUCLEUS"]
    if "SFO1" not in out and ".OBSERVEFREQUENCY" in out:
        out["SFO1"] = out[".OBSERVEFREQUENCY"]
    if "SOLVENT" not in out and ".SOLVENTNAME" in out:
        out["SOLVENT"] = out[".SOLVENTNAME"]
    if "NS" not in out and ".AVERAGES" in out:
        out["NS"] = out[".AVERAGES"]
    if "PULPROG" not in out and ".PULSESEQUENCE" in out:
        out["PULPROG"] = out[".PULSESEQUENCE"]
    return out


def _columns(text: str | None) -> list[str]:
    return [c.strip() for c in (text or "").split(",")]


_TIME_UNITS = ("SECOND", "SEC", "S", "MS", "US", "MICROSECONDS", "MILLISECONDS")
_FREQ_UNITS = ("HZ", "PPM", "KHZ", "MHZ")


def _unit_kind(unit: str) -> str | None:
    u = unit.strip().upper()
    if not u:
        return None
    if u in _FREQ_UNITS:
        return "frequency"
    if u in _TIME_UNITS or u.startswith("SECOND"):
        return "time"
    return None


def _shift_reference(b: JcampBlock) -> tuple[int, float] | None:
    """(data point number, ppm) from ``##.SHIFT REFERENCE= (type, compound, point, shift)`` (Davies & Lampen 1993)."""
    raw = b.get(".SHIFT REFERENCE")
    if not raw:
        return None
    parts = _columns(raw.strip().strip("()"))
    if len(parts) < 4:
        return None
    point, shift = _num(parts[2]), _num(parts[3])
    if point is None or shift is None or not np.isfinite(point) or not np.isfinite(shift) or point < 1 or abs(shift) > 1000:
        return None
    return int(point), shift


def _ntuple_tables(path: Path, b: JcampBlock) -> dict[str, tuple[JcampTable, int]]:
    """NTUPLES pages by symbol ("R", "I") with the column index of the symbol."""
    symbols = [s.upper() for s in _columns(b.get("SYMBOL"))]
    out: dict[str, tuple[JcampTable, int]] = {}
    for t in b.tables:
        if t.label != "DATATABLE":
            continue
        m = re.search(r"\(\s*X\s*\+\+\s*\(\s*(\w+)\s*\.\.", t.header, re.IGNORECASE)
        if not m:
            raise InputFileError(path, f"DATA TABLE {t.header!r} is not an (X++(Y..Y)) page")
        sym = m.group(1).upper()
        if sym not in symbols:
            raise InputFileError(path, f"DATA TABLE of symbol {sym} not declared in ##SYMBOL")
        if sym in out:
            raise InputFileError(path, f"two DATA TABLE pages for symbol {sym}")
        out[sym] = (t, symbols.index(sym))
    return out


def _column_number(path: Path, b: JcampBlock, label: str, index: int, *, default: float | None = None, lo: float = -1e300, hi: float = 1e300) -> float:
    cols = _columns(b.get(label))
    value = cols[index] if index < len(cols) and cols[index] else None
    if value is None:
        if default is None:
            raise InputFileError(path, f"##{label}= gives no value for column {index + 1}")
        return default
    return pl.number(str(path), f"##{label} (column {index + 1})", value, lo=lo, hi=hi)


def _ntuples_data(path: Path, b: JcampBlock, kind: str) -> tuple[np.ndarray, float, float, str]:
    """Complex data of an NTUPLES block and its X axis: (data, first_x, last_x, x unit)."""
    symbols = [s.upper() for s in _columns(b.get("SYMBOL"))]
    if "X" not in symbols:
        raise InputFileError(path, "NTUPLES without an X column in ##SYMBOL")
    xi = symbols.index("X")
    pages = _ntuple_tables(path, b)
    if "R" not in pages:
        raise InputFileError(path, f"NTUPLES {kind} without a real (R) page")
    if "I" not in pages:
        raise InputFileError(path, f"JCAMP-DX {kind} without an imaginary (I) page; a complex {kind} is needed")
    n_x = int(_column_number(path, b, "VAR DIM", xi, lo=16, hi=pl.MAX_SPECTRUM_POINTS))
    first_x = _column_number(path, b, "FIRST", xi)
    last_x = _column_number(path, b, "LAST", xi)
    x_factor = _column_number(path, b, "FACTOR", xi, default=1.0)
    if x_factor == 0 or first_x == last_x:
        raise InputFileError(path, "##FACTOR or ##FIRST/##LAST of X give no axis (zero step)")
    delta = (last_x - first_x) / (n_x - 1)
    channels = []
    for sym, name in (("R", "real"), ("I", "imaginary")):
        table, col = pages[sym]
        n = int(_column_number(path, b, "VAR DIM", col, default=float(n_x), lo=16, hi=pl.MAX_SPECTRUM_POINTS))
        factor = _column_number(path, b, "FACTOR", col, default=1.0)
        if factor == 0:
            raise InputFileError(path, f"##FACTOR of the {name} column is 0")
        y = decode_table(table, source=str(path), first_x=first_x, delta_x=delta, x_factor=x_factor, expected_points=n, what=f"page {table.page or sym} ({name})")
        channels.append(_scaled(path, y, factor, f"the {name} page"))
    if channels[0].size != channels[1].size:
        raise InputFileError(path, f"real and imaginary pages differ in length ({channels[0].size}, {channels[1].size})")
    units = _columns(b.get("UNITS"))
    unit = units[xi] if xi < len(units) else ""
    return channels[0] + 1j * channels[1], first_x, last_x, unit


def _xydata(path: Path, b: JcampBlock) -> tuple[np.ndarray, float, float, str]:
    """Real data of an XYDATA block and its X axis: (data, first_x, last_x, x unit)."""
    tables = [t for t in b.tables if t.label == "XYDATA"]
    if len(tables) != 1:
        raise InputFileError(path, f"{len(tables)} XYDATA tables in one block; expected one")
    src = str(path)
    n = int(pl.number(src, "##NPOINTS", b.get("NPOINTS"), lo=16, hi=pl.MAX_SPECTRUM_POINTS, what="number of points"))
    first_x = pl.number(src, "##FIRSTX", b.get("FIRSTX"), lo=-1e12, hi=1e12)
    last_x = pl.number(src, "##LASTX", b.get("LASTX"), lo=-1e12, hi=1e12)
    if first_x == last_x:
        raise InputFileError(path, "##FIRSTX equals ##LASTX: the axis has no width")
    delta = (last_x - first_x) / (n - 1)
    if b.get("DELTAX") is not None:
        dx = pl.number(src, "##DELTAX", b.get("DELTAX"), lo=-1e12, hi=1e12)
        if abs(dx - delta) > 1e-3 * abs(delta):
            raise InputFileError(path, f"##DELTAX={dx:g} disagrees with (LASTX-FIRSTX)/(NPOINTS-1)={delta:g}")
    x_factor = pl.number(src, "##XFACTOR", b.get("XFACTOR") or 1.0, lo=-1e300, hi=1e300)
    y_factor = pl.number(src, "##YFACTOR", b.get("YFACTOR") or 1.0, lo=-1e300, hi=1e300)
    if x_factor == 0 or y_factor == 0:
        raise InputFileError(path, "##XFACTOR or ##YFACTOR is 0")
    y = decode_table(tables[0], source=src, first_x=first_x, delta_x=delta, x_factor=x_factor, expected_points=n, what="XYDATA")
    return _scaled(path, y, y_factor, "XYDATA"), first_x, last_x, b.get("XUNITS") or ""


def _scaled(path: Path, values: np.ndarray, factor: float, what: str) -> np.ndarray:
    """``values * factor``, refused when the product leaves the range of any recording (before it overflows)."""
    largest = float(np.max(np.abs(values))) if values.size else 0.0
    if largest * abs(factor) > pl.MAX_POINT_MAGNITUDE:
        raise InputFileError(path, f"{what}: values up to {largest:.3g} times the factor {factor:.3g} are beyond any recording (corrupt data or factor)")
    return values * factor


def _block_data(path: Path, b: JcampBlock, kind: str) -> tuple[np.ndarray, float, float, str]:
    if (b.get("DATA CLASS") or "").strip().upper().replace(" ", "") == "NTUPLES" or any(t.label == "DATATABLE" for t in b.tables):
        data, first_x, last_x, unit = _ntuples_data(path, b, kind)
    else:
        data, first_x, last_x, unit = _xydata(path, b)
    declared = b.data_type or "untyped"
    x_kind = _unit_kind(unit)
    if kind == "spectrum" and x_kind == "time":
        raise InputFileError(path, f"##DATA TYPE= {declared} but the data run over time ({unit}): they are an FID")
    if kind == "fid" and x_kind == "frequency":
        raise InputFileError(path, f"##DATA TYPE= {declared} but the data run over frequency ({unit}): they are a spectrum")
    pl.check_points(str(path), data, f"the {declared} data")
    return data, first_x, last_x, unit


def _read_jcamp_fid(path: Path) -> Fid:
    path, b, note = _jcamp_block(path, "fid")
    if "FID" not in b.data_type:
        raise InputFileError(path, f"##DATA TYPE= {b.data_type or 'none'}; expected NMR FID")
    data, first_x, last_x, unit = _block_data(path, b, "fid")
    if not np.iscomplexobj(data):
        raise InputFileError(path, "JCAMP-DX FID without an imaginary channel; a complex FID is needed")
    p = _params(b)
    notes = [note] if note else []
    source = str(path)
    n = data.size
    sw_from_axis = None
    if _unit_kind(unit) == "time" or not unit:
        scale = {"MS": 1e-3, "MILLISECONDS": 1e-3, "US": 1e-6, "MICROSECONDS": 1e-6}.get(unit.strip().upper(), 1.0)
        dwell = abs(last_x - first_x) * scale / (n - 1)
        sw_from_axis = 1.0 / dwell if dwell > 0 else None
    swh_vendor = _num(p.get("SW_h"))
    if swh_vendor is not None and sw_from_axis is not None and np.isfinite(swh_vendor) and abs(swh_vendor - sw_from_axis) > 0.01 * sw_from_axis:
        raise InputFileError(path, f"$SW_h={swh_vendor:g} Hz disagrees with the time axis (dwell gives {sw_from_axis:g} Hz)")
    carrier = None
    if p.get("O1") is None and p.get("BF1") is None:
        ref = _shift_reference(b)
        sfo1 = _num(p.get("SFO1"))
        sw = swh_vendor or sw_from_axis
        if ref is not None and sfo1 and sw and np.isfinite(sfo1) and sfo1 > 0:
            # Point `ref[0]` of the spectrum at `ref[1]` ppm: the carrier is at the centre.
            carrier = ref[1] - sw / 2.0 / sfo1
            notes.append(f"{source}: no $O1/$BF1; carrier placed from ##.SHIFT REFERENCE at {carrier:.3f} ppm")
    acq = _bruker_acquisition(p, _text(b.get("TITLE")), source, notes, sweep_width_hz=sw_from_axis, carrier_ppm=carrier, values=2 * n)
    _check_proton(path, acq)
    gd = _group_delay(source, p, notes)
    if gd >= n / 2:
        raise InputFileError(source, f"digital-filter delay of {gd:g} points is not shorter than half the FID ({n} points)")
    return Fid(data=data, acquisition=acq, source=str(path), format="jcamp-fid", group_delay_points=gd, conjugate=False, notes=tuple(notes))


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
    if fmt in ("jcamp-spectrum", "jcamp-fid") and p.is_file():
        return _read_jcamp_spectrum(p)
    raise InputFileError(p, f"holds an FID ({fmt}), not a processed spectrum")


def _read_bruker_pdata(d: Path) -> SpectrumFile:
    procs_path = d / "procs"
    procs = read_parameter_file(procs_path)
    source = str(procs_path)
    notes: list[str] = []
    si = int(pl.number(source, "SI", procs.get("SI"), lo=16, hi=pl.MAX_SPECTRUM_POINTS, unit="points", what="spectrum size"))
    lo_mhz, hi_mhz = pl.MHZ_RANGE
    sf = pl.number(source, "SF", procs.get("SF"), lo=lo_mhz, hi=hi_mhz, unit="MHz", what="reference frequency")
    swp = pl.number(source, "SW_p", procs.get("SW_p"), lo=0.0, hi=1e9, unit="Hz", what="spectral width")
    lo_sw, hi_sw = pl.SWEEP_PPM_RANGE
    if not lo_sw <= swp / sf <= hi_sw:
        raise InputFileError(source, f"SW_p={swp:g} Hz is {swp / sf:.3g} ppm, outside the plausible {lo_sw:g}..{hi_sw:g} ppm")
    offset = pl.number(source, "OFFSET", procs.get("OFFSET"), lo=-1000.0, hi=1000.0, unit="ppm", what="shift of the first point")
    nc = pl.number(source, "NC_proc", procs.get("NC_proc", 0), lo=-64, hi=64, what="intensity scaling exponent")
    kwargs = dict(dtype_code=procs.get("DTYPP"), byte_order=procs.get("BYTORDP"), source=source, dtype_key="DTYPP", order_key="BYTORDP", padding=False)
    real = _bruker_binary(d / "1r", si, what="1r", **kwargs)
    spec: np.ndarray = _scaled(d / "1r", real, 2.0**nc, "1r")
    if (d / "1i").exists():
        spec = spec + 1j * _scaled(d / "1i", _bruker_binary(d / "1i", si, what="1i", **kwargs), 2.0**nc, "1i")
    pl.check_points(str(d / "1r"), spec.real, "the spectrum (1r)")
    acq_dir = d.parent.parent
    try:
        adic = read_parameter_file(acq_dir / "acqus")
        acq = _bruker_acquisition(adic, _read_title(d / "title"), str(acq_dir / "acqus"), notes)
    except InputFileError as exc:
        if (acq_dir / "acqus").exists():
            raise
        log.debug("no usable acqus beside %s: %s", d, exc)
        acq = Acquisition(nucleus="1H", spectrometer_mhz=sf, sweep_width_hz=swp, carrier_ppm=offset - swp / sf / 2.0)
        notes.append(f"{d}: no acqus beside the processed data; acquisition details unknown")
    _check_reference_frequency(source, "SF", sf, acq)
    acq = _with_reference(acq, sf)
    _check_proton(d, acq)
    last = offset - swp / sf * (si - 1) / si
    lb = pl.optional_number(_num(procs.get("LB")), lo=-1e4, hi=1e4) or 0.0
    return SpectrumFile(
        data=spec,
        first_ppm=offset,
        last_ppm=last,
        acquisition=acq,
        source=str(d),
        format="bruker-pdata",
        processing={"lb_hz": lb, "size": float(si)},
        notes=tuple(notes),
    )


def _check_reference_frequency(source: str, name: str, sf: float, acq: Acquisition) -> None:
    """The frequency of 0 ppm lies within 1000 ppm of the base frequency (referencing moves it by a few ppm)."""
    base = acq.base_mhz or acq.spectrometer_mhz
    if abs(sf / base - 1.0) * 1e6 > pl.MAX_CARRIER_OFFSET_PPM:
        raise InputFileError(source, f"{name}={sf:g} MHz is {abs(sf / base - 1.0) * 1e6:.4g} ppm from the base frequency {base:g} MHz; they must agree within {pl.MAX_CARRIER_OFFSET_PPM:g} ppm")


def _with_reference(acq: Acquisition, sf: float | None) -> Acquisition:
    from dataclasses import replace

    return replace(acq, reference_mhz=sf) if sf else acq


def _read_jcamp_spectrum(path: Path) -> SpectrumFile:
    path, b, note = _jcamp_block(path, "spectrum")
    if "SPECTRUM" not in b.data_type:
        raise InputFileError(path, f"##DATA TYPE= {b.data_type or 'none'}; expected NMR SPECTRUM")
    spec, first_x, last_x, unit = _block_data(path, b, "spectrum")
    p = _params(b)
    notes = [note] if note else []
    source = str(path)
    n = spec.shape[-1]
    lo_mhz, hi_mhz = pl.MHZ_RANGE
    sfo1 = pl.number(source, "SFO1 (or ##.OBSERVE FREQUENCY)", p.get("SFO1"), lo=lo_mhz, hi=hi_mhz, unit="MHz", what="observe frequency")
    sf = pl.number(source, "$SF", p["SF"], lo=lo_mhz, hi=hi_mhz, unit="MHz", what="reference frequency") if p.get("SF") is not None else sfo1
    offset = _num(p.get("OFFSET"))
    sw_p = _num(p.get("SW_p")) or _num(p.get("SWP"))
    x_unit = unit.strip().upper()
    x_hz_scale = {"HZ": 1.0, "KHZ": 1e3, "MHZ": 1e6}.get(x_unit)
    if offset is not None and sw_p:
        offset = pl.number(source, "$OFFSET", offset, lo=-1000.0, hi=1000.0, unit="ppm")
        sw_p = pl.number(source, "$SW_p", sw_p, lo=0.0, hi=1e9, unit="Hz")
        first = offset
        last = offset - sw_p / sf * (n - 1) / n
    elif x_unit == "PPM":
        first, last = first_x, last_x
    elif x_hz_scale is not None:
        step_ppm = (last_x - first_x) * x_hz_scale / (n - 1) / sf
        ref = _shift_reference(b)
        if ref is not None:
            first = ref[1] - (ref[0] - 1) * step_ppm
            notes.append(f"{source}: ppm axis from ##.SHIFT REFERENCE (point {ref[0]} at {ref[1]:g} ppm)")
        else:
            first = first_x * x_hz_scale / sf
        last = first + (n - 1) * step_ppm
    else:
        raise InputFileError(path, f"JCAMP-DX spectrum has no usable axis (neither $OFFSET/$SW_p nor X units of HZ or PPM; X units {unit or 'none'!r})")
    if not (np.isfinite(first) and np.isfinite(last)) or abs(first) > 1000 or abs(last) > 1000 or first == last:
        raise InputFileError(path, f"ppm axis {first:g}..{last:g} is not plausible for 1H")
    width_hz = abs(first - last) * sf * n / (n - 1)
    centre = (first + last) / 2.0
    carrier = None if p.get("O1") is not None or p.get("BF1") is not None else centre
    acq = _bruker_acquisition(p, _text(b.get("TITLE")), source, notes, sweep_width_hz=width_hz, carrier_ppm=carrier)
    _check_reference_frequency(source, "$SF", sf, acq)
    _check_proton(path, acq)
    lb = pl.optional_number(_num(p.get("LB")), lo=-1e4, hi=1e4) or 0.0
    return SpectrumFile(
        data=spec,
        first_ppm=first,
        last_ppm=last,
        acquisition=_with_reference(acq, sf),
        source=str(path),
        format="jcamp-spectrum",
        processing={"lb_hz": lb, "size": float(n)},
        notes=tuple(notes),
    )


def read_any(path: str | os.PathLike) -> Fid | SpectrumFile:
    """An FID when ``path`` holds one, otherwise the processed spectrum."""
    fmt = detect_format(path)
    if fmt in ("bruker", "varian", "jcamp-fid"):
        return read_fid(path)
    return read_spectrum_file(path)
