"""Set the ppm axis: TMS or DSS at 0 ppm when present, otherwise the solvent's residual signal."""

from __future__ import annotations

import numpy as np

from nmrcheck.processing.noise import noise_level
from nmrcheck.processing.results import Reference
from nmrcheck.processing.solvents import normalise_solvent, solvent_signals
from nmrcheck.processing.spectrum import ProcessingStep, Spectrum

__all__ = ["find_peak", "reference_axis"]


def find_peak(spectrum: Spectrum, centre_ppm: float, *, window_ppm: float, min_snr: float = 10.0) -> float | None:
    """Shift of the tallest point of the real spectrum within ``centre +- window`` (parabolic vertex), or None."""
    sl = spectrum.slice_of(centre_ppm + window_ppm, centre_ppm - window_ppm)
    y = spectrum.data.real[sl]
    if y.size < 3:
        return None
    k = int(np.argmax(y))
    if y[k] < min_snr * noise_level(spectrum.data.real):
        return None
    i = sl.start + k
    frac = 0.0
    if 0 < i < spectrum.size - 1:
        a, b, c = spectrum.data.real[i - 1 : i + 2]
        den = a - 2 * b + c
        frac = 0.5 * (a - c) / den if den < 0 else 0.0
    return float(spectrum.first_ppm - (i + frac) * spectrum.step_ppm)


def _is_sharp_singlet(spectrum: Spectrum, ppm: float, *, max_width_hz: float = 3.0) -> bool:
    """True when the line at ``ppm`` is narrow (half-height width below ``max_width_hz``)."""
    i = spectrum.index_of(ppm)
    y = spectrum.data.real
    half = y[i] / 2.0
    lo, hi = i, i
    limit = int(10 * max_width_hz / spectrum.hz_per_point) + 2
    while lo > 0 and y[lo] > half and i - lo < limit:
        lo -= 1
    while hi < y.size - 1 and y[hi] > half and hi - i < limit:
        hi += 1
    return (hi - lo) * spectrum.hz_per_point <= max_width_hz


def reference_axis(
    spectrum: Spectrum,
    *,
    solvent: str | None = None,
    search_ppm: float = 0.3,
    prefer: str = "auto",
) -> tuple[Spectrum, Reference]:
    """Shift the axis so that the reference signal sits at its table position.

    Parameters
    ----------
    solvent
        Solvent name; defaults to the one recorded in the file.
    search_ppm
        How far from its table value the reference signal is looked for.
    prefer
        'auto' (TMS/DSS when a sharp singlet is found near 0 ppm, else the solvent
        residual), 'standard', 'solvent' or 'none'.
    """
    name = normalise_solvent(solvent or spectrum.solvent)
    if prefer == "none" or name is None:
        why = "none" if prefer == "none" else f"none (solvent {solvent or spectrum.solvent!r} unknown)"
        return spectrum, Reference("none", why, spectrum.first_ppm, None, "")
    found: tuple[str, str, float, float, str] | None = None
    if prefer in ("auto", "standard"):
        for sig in solvent_signals(name, kind="reference"):
            at = find_peak(spectrum, sig.ppm, window_ppm=search_ppm, min_snr=20.0)
            if at is not None and _is_sharp_singlet(spectrum, at):
                found = (sig.name, sig.name, sig.ppm, at, sig.source)
                break
    if found is None and prefer in ("auto", "solvent"):
        residuals = sorted(solvent_signals(name, kind="residual"), key=lambda s: -s.ppm)
        for sig in residuals:
            at = find_peak(spectrum, sig.ppm, window_ppm=search_ppm, min_snr=5.0)
            if at is not None:
                found = ("solvent", f"{sig.name} in {name}", sig.ppm, at, sig.source)
                break
    if found is None:
        return spectrum, Reference("none", f"none (no reference signal found for {name})", spectrum.first_ppm, None, "")
    kind, label, target, at, source = found
    shift = target - at
    step = ProcessingStep("reference", {"kind": kind, "ppm": target, "found_ppm": at})
    moved = spectrum.evolve(step, first_ppm=spectrum.first_ppm + shift)
    return moved, Reference(kind, label, target, at, source)
