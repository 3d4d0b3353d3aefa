"""File formats: the only package that reads or writes NMR data files (through nmrglue)."""

from nmrcheck.io.readers import FORMATS, detect_format, read_any, read_fid, read_spectrum_file
from nmrcheck.io.records import Acquisition, Fid, SpectrumFile

__all__ = [
    "FORMATS",
    "Acquisition",
    "Fid",
    "SpectrumFile",
    "detect_format",
    "read_any",
    "read_fid",
    "read_spectrum_file",
]
