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

__all__ = ["write_bruker_fid", "bruker_parameters"]


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
