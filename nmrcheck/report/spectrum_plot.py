"""Plot of a processed spectrum with its integration regions and proton labels (matplotlib, imported lazily)."""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from nmrcheck.processing.results import Processed

__all__ = ["plot_processed"]

#: Region shading: counted analyte regions versus flagged ones (own palette; colour-blind safe pair).
COUNTED = "#2f6f8f"
FLAGGED = "#c9a227"


def plot_processed(processed: Processed, path: str | os.PathLike | None = None, *, ppm_range: tuple[float, float] | None = None, width_in: float = 10.0, height_in: float = 3.6, dpi: int = 110) -> Any:
    """Draw the real spectrum, shade each region and write its H; save to ``path`` (PNG) when given.

    Returns the matplotlib figure.
    """
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt
    import numpy as np

    spec = processed.spectrum
    ppm, y = spec.ppm, spec.data.real
    if ppm_range is None:
        counted = [r for r in processed.regions if r.counted] or list(processed.regions)
        hi = max([r.start_ppm for r in counted], default=float(ppm[0])) + 0.5
        lo = min([r.end_ppm for r in counted], default=float(ppm[-1])) - 0.5
        ppm_range = (hi, lo)
    hi, lo = max(ppm_range), min(ppm_range)
    sl = spec.slice_of(hi, lo)
    step = max(1, (sl.stop - sl.start) // 6000)
    fig, ax = plt.subplots(figsize=(width_in, height_in), dpi=dpi)
    yy = y[sl][::step]
    ax.plot(ppm[sl][::step], yy, lw=0.7, color="#222222")
    top = float(np.max(yy)) if yy.size else 1.0
    for r in processed.regions:
        if r.end_ppm > hi or r.start_ppm < lo:
            continue
        colour = COUNTED if r.counted else FLAGGED
        ax.axvspan(r.end_ppm, r.start_ppm, color=colour, alpha=0.18, lw=0)
        label = f"{r.h:.1f}H" if r.h is not None else (r.flag or "")
        ax.text((r.start_ppm + r.end_ppm) / 2, top * 1.02, label, ha="center", va="bottom", fontsize=7, color=colour, rotation=90 if not r.counted else 0)
    ax.set_xlim(hi, lo)
    ax.set_ylim(-0.05 * top, top * 1.18)
    ax.set_xlabel("δ 1H (ppm)")
    ax.set_yticks([])
    for side in ("top", "right", "left"):
        ax.spines[side].set_visible(False)
    fig.tight_layout()
    if path is not None:
        fig.savefig(Path(path), format="png")
        plt.close(fig)
    return fig
