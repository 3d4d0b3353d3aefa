"""Export a processed spectrum as arrays (NumPy .npz: ``ppm``, ``real``, ``imag``)."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from nmrcheck.errors import InputFileError

__all__ = ["save_spectrum_npz"]


def save_spectrum_npz(path: str | os.PathLike, *, ppm: np.ndarray, data: np.ndarray) -> Path:
    """Write ``ppm``, ``real`` and ``imag`` arrays to ``path`` atomically (temporary file, then rename)."""
    out = Path(path)
    if out.suffix != ".npz":
        raise InputFileError(out, "spectrum export must end in .npz")
    tmp = out.with_name(out.name + ".part.npz")
    try:
        np.savez(tmp, ppm=np.asarray(ppm, float), real=np.asarray(data).real, imag=np.asarray(data).imag)
        os.replace(tmp, out)
    except OSError as exc:
        raise InputFileError(out, f"cannot be written ({exc.strerror})") from None
    return out
