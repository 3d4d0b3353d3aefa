"""Baseline correction of a phased spectrum with FABC (Cobas et al., J. Magn. Reson. 2006, 183, 145) from pybaselines."""

from __future__ import annotations

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.processing.spectrum import ProcessingStep, Spectrum

__all__ = ["correct_baseline"]

#: Points per shortest baseline undulation on which the baseline is fitted.
SAMPLES_PER_UNDULATION = 400
#: Wavelet scale of FABC's derivative test (the width over which it looks for signal), Hz.
DERIVATIVE_SCALE_HZ = 120.0


def correct_baseline(
    spectrum: Spectrum, *, smoothness_hz: float = 200.0, wing_hz: float = 0.0, method: str = "fabc"
) -> Spectrum:
    """Subtract a smooth baseline fitted through the signal-free points of the real part.

    FABC classifies points as baseline by the size of a smoothed derivative and
    fits a Whittaker smoother through them; ``smoothness_hz`` sets the shortest
    baseline undulation followed (converted to the smoother's penalty for this
    spectrum's point spacing). Points within ``wing_hz`` of a signal point are not
    used for the fit: Lorentzian wings pass FABC's derivative test for baseline but
    hold several percent of a line's area. ``method='none'`` returns the spectrum
    unchanged.
    """
    if method == "none":
        return spectrum
    if method != "fabc":
        raise ParameterError(f"baseline method: {method!r} is not one of 'fabc', 'none'")
    if smoothness_hz <= 0:
        raise ParameterError(f"smoothness_hz: must be positive, got {smoothness_hz}")
    from pybaselines.classification import fabc

    y = spectrum.data.real
    n = y.size
    points = max(8.0, smoothness_hz / spectrum.hz_per_point)
    # A baseline is smooth on the scale of smoothness_hz: fit it on block means with
    # about SAMPLES_PER_UNDULATION points per undulation (faster, and keeps the
    # smoother's penalty well conditioned), then interpolate back to every point.
    block = int(max(1, min(points // SAMPLES_PER_UNDULATION, n // 512)))
    m = n // block
    coarse = y[: m * block].reshape(m, block).mean(axis=1)
    centres = (np.arange(m) + 0.5) * block - 0.5
    # Whittaker penalty: a second-difference smoother follows undulations of about
    # lam**(1/4) points; choose lam so that this matches the requested width.
    lam = float((points / block) ** 4) / 16.0
    # The wavelet scale of FABC's derivative test, fixed in Hz: pybaselines' own estimate
    # (optimize_window) costs most of the step and lands between 50 and 240 Hz on the
    # shared recordings.
    scale = max(2, int(round(DERIVATIVE_SCALE_HZ / (spectrum.hz_per_point * block))))
    first, params = fabc(coarse, lam=lam, scale=scale, num_std=3.0, min_length=2)
    # FABC's signal points, widened by the Lorentzian wings (which its derivative test
    # calls baseline but which belong to the lines), then the smoother through the rest.
    signal = ~np.asarray(params["mask"], bool)
    wing = int(round(wing_hz / (spectrum.hz_per_point * block)))
    if wing > 0 and signal.any():
        from scipy.ndimage import maximum_filter1d

        signal = maximum_filter1d(signal.astype(np.uint8), size=2 * wing + 1).astype(bool)
    keep = ~signal
    if wing == 0 or keep.sum() < 16:
        bl_coarse = first
    else:
        bl_coarse, _ = fabc(coarse, lam=lam, weights=keep.astype(float), weights_as_mask=True)
    bl = np.interp(np.arange(n), centres, bl_coarse)
    data = (y - bl) + 1j * spectrum.data.imag
    step = ProcessingStep("baseline", {"method": method, "smoothness_hz": smoothness_hz, "wing_hz": wing_hz})
    return spectrum.evolve(step, data=data)
