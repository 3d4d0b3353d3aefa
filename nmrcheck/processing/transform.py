"""FID to spectrum: digital-filter delay, apodization, zero-filling and Fourier transform.

The spectrum comes out high ppm first, point ``i`` at ``+SW/2 - i*SW/N`` from the
carrier, the layout in which instrument software stores processed 1H spectra,
so that a spectrum processed to the instrument's size lines up point for point.
"""

from __future__ import annotations

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.io.records import Fid, SpectrumFile
from nmrcheck.processing.spectrum import ProcessingStep, Spectrum

__all__ = ["fourier_transform", "next_size", "spectrum_from_file", "DEFAULT_MAX_SIZE"]

#: Largest spectrum the default zero-filling makes (points).
DEFAULT_MAX_SIZE = 65536
#: Largest transform made at all (points; 64 MiB of complex values), whatever is asked.
MAX_TRANSFORM_POINTS = 1 << 22


def next_size(points: int) -> int:
    """Smallest power of two at or above ``points``."""
    return 1 << max(0, int(points - 1).bit_length())


def fourier_transform(
    fid: Fid,
    *,
    lb_hz: float = 0.3,
    size: int | None = None,
    gauss_hz: float = 0.0,
) -> Spectrum:
    """Transform ``fid`` into a complex spectrum, digital-filter delay removed.

    Parameters
    ----------
    fid : Fid
        As read by :func:`nmrcheck.io.read_fid`.
    lb_hz : float
        Exponential line broadening, Hz (negative values with ``gauss_hz`` give
        Lorentz-to-Gauss resolution enhancement).
    size : int, optional
        Points after zero-filling (complex); default: twice the FID rounded up to
        a power of two, capped at ``DEFAULT_MAX_SIZE`` (longer FIDs are transformed
        at their own length).
    gauss_hz : float
        Gaussian broadening, Hz (0: none).
    """
    n = fid.size
    if size is None:
        # Twice the FID (one zero-fill), but no more than DEFAULT_MAX_SIZE unless the FID
        # itself is longer: at 64k points the digital resolution (about 0.1 Hz for a
        # 12 ppm window at 600 MHz) is already far below any line width.
        size = max(next_size(n), min(next_size(2 * n), DEFAULT_MAX_SIZE))
    if not isinstance(size, (int, np.integer)) or size < 16 or size > MAX_TRANSFORM_POINTS:
        raise ParameterError(f"size: must be a whole number of points from 16 to {MAX_TRANSFORM_POINTS}, got {size!r}")
    if size < n:
        # Truncation keeps the first `size` points, as instrument software does.
        n = size
    sw = fid.acquisition.sweep_width_hz
    data = np.array(fid.data[:n], dtype=np.complex128)
    if fid.conjugate:
        data = np.conj(data)
    gd = float(fid.group_delay_points)
    t = (np.arange(n) - gd) / sw
    t = np.clip(t, 0.0, None)
    window = np.ones(n)
    if lb_hz:
        window *= np.exp(-np.pi * lb_hz * t)
    if gauss_hz:
        window *= np.exp(-((np.pi * gauss_hz * t) ** 2) / (4.0 * np.log(2.0)))
    data *= window
    if gd == 0.0:
        # Without a filter delay the first point is the t=0 sample: halve it to keep
        # the baseline flat (the usual first-point correction).
        data[0] *= 0.5
    padded = np.zeros(size, dtype=np.complex128)
    padded[:n] = data
    spec = np.fft.fft(padded)
    if gd:
        # Undo the delay: a linear phase across the spectrum equal to a time shift of gd points.
        k = np.fft.fftfreq(size)
        spec *= np.exp(2j * np.pi * gd * k)
    # numpy bin k sits at k*SW/N (mod SW); point i of the output at +SW/2 - i*SW/N.
    order = (size // 2 - np.arange(size)) % size
    # Instrument software stores the dispersion channel with the opposite sign to
    # numpy's transform; conjugating here makes 1r/1i comparisons direct.
    spec = np.conj(spec[order])
    acq = fid.acquisition
    mhz = acq.reference_mhz or acq.base_mhz or acq.spectrometer_mhz
    offset_hz = (acq.spectrometer_mhz - mhz) * 1e6
    first_ppm = (offset_hz + sw / 2.0) / mhz
    step = ProcessingStep(
        "fourier_transform",
        {"lb_hz": lb_hz, "gauss_hz": gauss_hz, "size": int(size), "group_delay_points": gd},
    )
    return Spectrum(
        data=spec,
        first_ppm=first_ppm,
        step_ppm=sw / size / mhz,
        acquisition=acq,
        source=fid.source,
        history=(ProcessingStep("read", {"format": fid.format, "points": fid.size}), step),
    )


def spectrum_from_file(sf: SpectrumFile) -> Spectrum:
    """A :class:`Spectrum` from a spectrum processed elsewhere (phase and reference as stored)."""
    data = np.asarray(sf.data)
    if not np.iscomplexobj(data):
        # A real-only spectrum: rebuild the dispersion part by Hilbert transform so
        # phase refinement stays possible.
        from scipy.signal import hilbert

        data = np.conj(hilbert(data))
    n = data.shape[-1]
    step_ppm = (sf.first_ppm - sf.last_ppm) / (n - 1)
    return Spectrum(
        data=data.astype(np.complex128),
        first_ppm=sf.first_ppm,
        step_ppm=step_ppm,
        acquisition=sf.acquisition,
        source=sf.source,
        history=(ProcessingStep("read_processed", {"format": sf.format, **sf.processing}),),
    )
