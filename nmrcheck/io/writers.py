"""Write FIDs as Bruker experiment directories (through nmrglue), so synthetic plates look like real ones.

Only :mod:`nmrcheck.io` writes NMR files; the demo plate and the tests call this module.
"""

from __future__ import annotations

import os
import warnings
from pathlib import Path

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.io.records import Fid

__all__ = ["write_bruker_fid", "bruker_parameters", "jcamp_fid_text", "jcamp_spectrum_text", "jcamp_link_text"]


def bruker_parameters(fid: Fid) -> dict[str, object]:
    """The acquisition parameters of ``fid`` under their Bruker names (a minimal ``acqus``).

    Points are stored as 64-bit floats (``DTYPA=2``) in little-endian order
    (``BYTORDA=0``), so the data read back are bit-identical to ``fid.data``.
    """
    acq = fid.acquisition
    if acq.nucleus != "1H":
        raise ParameterError(f"fid.acquisition.nucleus: {acq.nucleus!r}; only 1H FIDs are written")
    bf1 = acq.base_mhz or acq.spectrometer_mhz / (1.0 + acq.carrier_ppm * 1e-6)
    # Bruker stores the delay table and pulse table with index 1 as the one used by zg.
    pulses = [0.0] * 64
    pulses[1] = float(acq.pulse_us) if acq.pulse_us is not None else 0.0
    delays = [0.0] * 64
    delays[1] = float(acq.relaxation_delay_s) if acq.relaxation_delay_s is not None else 0.0
    params: dict[str, object] = {
        "TD": int(2 * fid.size),
        "SW_h": float(acq.sweep_width_hz),
        "SW": float(acq.sweep_width_hz / acq.spectrometer_mhz),
        "SFO1": float(acq.spectrometer_mhz),
        "BF1": float(bf1),
        "O1": float(acq.carrier_ppm * bf1),
        "SOLVENT": acq.solvent or "",
        "NS": int(acq.scans) if acq.scans is not None else 1,
        "RG": float(acq.receiver_gain) if acq.receiver_gain is not None else 1.0,
        "P": pulses,
        "D": delays,
        "TE": float(acq.temperature_k) if acq.temperature_k is not None else 298.0,
        "PULPROG": acq.pulse_program or "zg",
        "NUC1": "1H",
        "DECIM": 1 if not fid.group_delay_points else 16,
        "DSPFVS": 20,
        "GRPDLY": float(fid.group_delay_points) if fid.group_delay_points else -1.0,
        **({"DE": float(acq.prescan_delay_us)} if acq.prescan_delay_us is not None else {}),
        "BYTORDA": 0,
        "DTYPA": 2,
        "AQ_mod": 3,
    }
    return params


def write_bruker_fid(fid: Fid, directory: str | os.PathLike, *, overwrite: bool = False) -> Path:
    """Write ``fid`` as a Bruker 1D experiment directory (``acqus``, ``fid``, ``pdata/1/title``).

    Parameters
    ----------
    fid
        The FID to write; its digital-filter delay is kept as ``GRPDLY``.
    directory
        Experiment directory to create (parents are created too).
    overwrite
        Replace files already there; otherwise an existing ``fid`` is an error.

    Returns
    -------
    Path
        The experiment directory, readable by :func:`nmrcheck.io.read_fid`.
    """
    import nmrglue as ng

    d = Path(directory)
    if (d / "fid").exists() and not overwrite:
        raise ParameterError(f"directory: {d} already holds an fid (pass overwrite=True to replace it)")
    d.mkdir(parents=True, exist_ok=True)
    data = np.asarray(fid.data, dtype=np.complex128)
    if data.ndim != 1:
        raise ParameterError(f"fid.data: a 1D FID is needed, got shape {data.shape}")
    acqus = dict(bruker_parameters(fid))
    # The JCAMP-DX header lines nmrglue writes before the parameters.
    acqus["_coreheader"] = ["##TITLE= Parameter file, nmrcheck", "##JCAMPDX= 5.0", "##DATATYPE= Parameter Values", "##ORIGIN= nmrcheck", "##OWNER= nmrcheck"]
    acqus["_comments"] = ["$$ written by nmrcheck.io.writers"]
    dic = {"acqus": acqus}
    with warnings.catch_warnings():
        # nmrglue warns when it overwrites; the caller asked for it.
        warnings.simplefilter("ignore")
        ng.bruker.write(str(d), dic, data, overwrite=True, big=False, isfloat=True, write_prog=False)
    if fid.acquisition.title:
        title = d / "pdata" / "1" / "title"
        title.parent.mkdir(parents=True, exist_ok=True)
        title.write_text(fid.acquisition.title + "\n", encoding="utf-8")
    return d


# ----------------------------------------------------------------------------- JCAMP-DX

#: Ordinates are written as integers scaled by FACTOR/YFACTOR; this many levels span the largest value.
_JCAMP_LEVELS = 2.0**30


def _affn_lines(x_start: int, x_step: int, values: np.ndarray, per_line: int = 10) -> list[str]:
    out = []
    for i in range(0, values.size, per_line):
        chunk = values[i : i + per_line]
        out.append(f"{x_start + i * x_step} " + " ".join(str(int(v)) for v in chunk))
    return out


def _scaled(values: np.ndarray) -> tuple[np.ndarray, float]:
    peak = float(np.max(np.abs(values))) if values.size else 0.0
    factor = peak / _JCAMP_LEVELS if peak > 0 else 1.0
    return np.round(values / factor).astype(np.int64), factor


def _standard_header(title: str, data_type: str, data_class: str, mhz: float, solvent: str | None, shift_reference_ppm: float | None) -> list[str]:
    lines = [
        f"##TITLE= {title}",
        "##JCAMP-DX= 5.00",
        f"##DATA TYPE= {data_type}",
        f"##DATA CLASS= {data_class}",
        "##ORIGIN= nmrcheck",
        "##OWNER= nmrcheck",
        f"##.OBSERVE FREQUENCY= {mhz:.10g}",
        "##.OBSERVE NUCLEUS= ^1H",
    ]
    if solvent:
        lines.append(f"##.SOLVENT NAME= {solvent}")
    if shift_reference_ppm is not None:
        # (reference type, compound, data point number, shift): point 1 is the high-ppm end.
        lines.append(f"##.SHIFT REFERENCE= (INTERNAL, {solvent or 'unknown'}, 1, {shift_reference_ppm:.6f})")
    return lines


def jcamp_fid_text(fid: Fid, *, title: str = "nmrcheck FID", vendor_labels: bool = False) -> str:
    """``fid`` as a JCAMP-DX ``NMR FID`` (NTUPLES, real and imaginary pages, AFFN lines).

    Labels as in the JCAMP-DX NMR standard (Davies & Lampen, Appl. Spectrosc. 1993, 47, 1093):
    ``.OBSERVE FREQUENCY``, ``.OBSERVE NUCLEUS``, ``.SOLVENT NAME`` and ``.SHIFT REFERENCE`` (the
    ppm of the first point of the transformed spectrum, from which the carrier follows). With
    ``vendor_labels`` the Bruker-style private labels (``##$SFO1`` ...) are written as well.
    """
    acq = fid.acquisition
    if acq.nucleus != "1H":
        raise ParameterError(f"fid.acquisition.nucleus: {acq.nucleus!r}; only 1H FIDs are written")
    data = np.asarray(fid.data, dtype=np.complex128)
    n = data.size
    dwell = 1.0 / acq.sweep_width_hz
    mhz = acq.spectrometer_mhz
    first_ppm = acq.carrier_ppm + acq.sweep_width_hz / 2.0 / mhz
    real, fr = _scaled(data.real)
    imag, fi = _scaled(data.imag)
    lines = _standard_header(title, "NMR FID", "NTUPLES", mhz, acq.solvent, first_ppm)
    if acq.scans is not None:
        lines.append(f"##.AVERAGES= {acq.scans}")
    if acq.pulse_program:
        lines.append(f"##.PULSE SEQUENCE= {acq.pulse_program}")
    if vendor_labels:
        for key, value in bruker_parameters(fid).items():
            if isinstance(value, list):
                body = " ".join(f"{v:g}" for v in value)
                lines.append(f"##${key}= (0..{len(value) - 1})\n{body}")
            elif isinstance(value, str):
                lines.append(f"##${key}= <{value}>")
            else:
                lines.append(f"##${key}= {value}")
    lines += [
        "##NTUPLES= NMR FID",
        "##VAR_NAME= TIME, FID/REAL, FID/IMAG, PAGE NUMBER",
        "##SYMBOL= X, R, I, N",
        "##VAR_TYPE= INDEPENDENT, DEPENDENT, DEPENDENT, PAGE",
        "##VAR_FORM= AFFN, ASDF, ASDF, AFFN",
        f"##VAR_DIM= {n}, {n}, {n}, 2",
        "##UNITS= SECONDS, ARBITRARY UNITS, ARBITRARY UNITS,",
        f"##FIRST= 0, {real[0] * fr:.10g}, {imag[0] * fi:.10g}, 1",
        f"##LAST= {(n - 1) * dwell:.12g}, {real[-1] * fr:.10g}, {imag[-1] * fi:.10g}, 2",
        f"##FACTOR= {dwell:.12g}, {fr:.12g}, {fi:.12g}, 1",
    ]
    for page, (sym, values) in enumerate((("R", real), ("I", imag)), start=1):
        lines.append(f"##PAGE= N={page}")
        lines.append(f"##DATA TABLE= (X++({sym}..{sym})), XYDATA")
        lines += _affn_lines(0, 1, values)
    lines += ["##END NTUPLES= NMR FID", "##END="]
    return "\n".join(lines) + "\n"


def jcamp_spectrum_text(data: np.ndarray, *, first_ppm: float, last_ppm: float, spectrometer_mhz: float, solvent: str | None = None, title: str = "nmrcheck spectrum") -> str:
    """A real 1H spectrum as a JCAMP-DX ``NMR SPECTRUM`` (XYDATA, X in Hz, AFFN lines).

    The abscissa runs in Hz from the last point (0 Hz) up; the ppm scale is given, as the
    standard provides, by ``.SHIFT REFERENCE`` naming the shift of point 1.
    """
    y = np.asarray(data, dtype=float).real
    n = y.size
    delta_hz = (first_ppm - last_ppm) * spectrometer_mhz / (n - 1)
    values, yf = _scaled(y)
    lines = _standard_header(title, "NMR SPECTRUM", "XYDATA", spectrometer_mhz, solvent, first_ppm)
    lines += [
        "##XUNITS= HZ",
        "##YUNITS= ARBITRARY UNITS",
        f"##XFACTOR= {delta_hz:.12g}",
        f"##YFACTOR= {yf:.12g}",
        f"##FIRSTX= {(n - 1) * delta_hz:.12g}",
        "##LASTX= 0",
        f"##DELTAX= {-delta_hz:.12g}",
        f"##NPOINTS= {n}",
        f"##FIRSTY= {values[0] * yf:.10g}",
        "##XYDATA= (X++(Y..Y))",
    ]
    lines += _affn_lines(n - 1, -1, values)
    lines.append("##END=")
    return "\n".join(lines) + "\n"


def jcamp_link_text(blocks: list[str], *, title: str = "nmrcheck compound file") -> str:
    """Several JCAMP-DX blocks as one compound file (``##DATA TYPE= LINK``, ``##BLOCKS=``, ``##BLOCK_ID=``)."""
    out = [f"##TITLE= {title}", "##JCAMP-DX= 5.00", "##DATA TYPE= LINK", f"##BLOCKS= {len(blocks)}"]
    for i, block in enumerate(blocks, start=1):
        lines = block.rstrip("\n").split("\n")
        # The block's id goes after its header's second line (##JCAMP-DX=).
        out += lines[:2] + [f"##BLOCK_ID= {i}"] + lines[2:]
    out.append("##END=")
    return "\n".join(out) + "\n"
