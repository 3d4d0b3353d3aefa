"""Plot of a processed spectrum a chemist would print (matplotlib, imported lazily).

The whole useful range with the reference and solvent lines in view, the vertical scale set by
the compound's tallest signal (taller solvent lines run off the top), counted regions shaded and
labelled once under the axis without overlap, regions left out shaded without text, and the
running integral over each counted region. The same layout rules as the plate report's SVG
(:mod:`nmrcheck.report.spectrum_layout`).
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from nmrcheck.processing.results import Processed
from nmrcheck.report.spectrum_layout import analyte_top, counted_regions, h_label, nice_ticks, place_labels, running_integral, view_range

__all__ = ["draw_spectrum", "plot_processed"]

#: Own palette, shared with the plate report (nmrcheck.report.plate_svg.SPECTRUM_INK).
COUNTED = "#2b7bb9"
FLAGGED = "#d9a21b"
INTEGRAL = "#0f7b5f"
REFERENCE = "#6b6b6b"
LABEL_INK = "#0d3552"


def _region_dicts(processed: Processed) -> list[dict[str, Any]]:
    return [r.as_dict() for r in processed.regions]


def draw_spectrum(ax, processed: Processed, *, ppm_range: tuple[float, float] | None = None, label_rows: int = 3, fontsize: float = 8.0) -> dict[str, Any]:
    """Draw the spectrum on ``ax`` (labels go under the axis); returns the layout used (range, top, labels).

    ``label_rows`` rows of proton labels sit below the tick labels; a label with no room on any
    row is left out (its value is in the regions table and the JSON).
    """
    import numpy as np

    spec = processed.spectrum
    ppm, y = np.asarray(spec.ppm, dtype=float), np.asarray(spec.data.real, dtype=float)
    regions = _region_dicts(processed)
    ref = processed.reference
    ref_ppm = float(ref.ppm) if ref is not None and ref.found_ppm is not None else None
    if ppm_range is None:
        hi, lo = view_range(float(ppm[0]), float(ppm[-1]), regions, reference_ppm=ref_ppm)
    else:
        hi, lo = max(ppm_range), min(ppm_range)
    m = (ppm <= hi) & (ppm >= lo)
    x, yy = ppm[m], y[m]
    step = max(1, x.size // 8000)
    top = analyte_top(x, yy, regions) * 1.12
    bottom = float(np.median(yy)) - 0.05 * top if yy.size else 0.0
    for r in regions:
        if r["end_ppm"] > hi or r["start_ppm"] < lo:
            continue
        counted = not r.get("flag") and r.get("h") is not None and round(float(r["h"]), 1) > 0
        ax.axvspan(r["end_ppm"], r["start_ppm"], color=COUNTED if counted else FLAGGED, alpha=0.14 if counted else 0.25, lw=0)
    if ref_ppm is not None and lo <= ref_ppm <= hi:
        ax.axvline(ref_ppm, color=REFERENCE, lw=0.8, ls=(0, (4, 3)))
    ax.plot(x[::step], yy[::step], lw=0.7, color="#1b1b1b")
    counted = counted_regions(regions)
    curves = [running_integral(x, yy, float(r["start_ppm"]), float(r["end_ppm"])) for r in counted]
    scale = max((float(np.max(np.abs(c))) for _, c in curves if c.size), default=0.0)
    if scale > 0:
        base = bottom + 0.1 * (top - bottom)
        for xs, c in curves:
            ax.plot(xs, base + c / scale * 0.4 * (top - bottom), color=INTEGRAL, lw=1.1)
    ax.set_xlim(hi, lo)
    ax.set_xticks(nice_ticks(hi, lo))
    ax.set_xticklabels([f"{t:g}" for t in nice_ticks(hi, lo)])
    ax.set_ylim(bottom, top)
    ax.set_yticks([])
    for side in ("top", "right", "left"):
        ax.spines[side].set_visible(False)
    xlabel = ax.set_xlabel("δ(¹H) / ppm", fontsize=fontsize + 1)
    # Proton labels: placed in points across the axes width so that none overlaps another.
    fig = ax.figure
    width_pt = ax.get_position().width * fig.get_figwidth() * 72.0
    anchors = [((hi - (float(r["start_ppm"]) + float(r["end_ppm"])) / 2) / (hi - lo)) * width_pt for r in counted]
    texts = [h_label(float(r["h"])) for r in counted]
    slots = place_labels(anchors, [len(t) * fontsize * 0.62 + 3 for t in texts], left=0.0, right=width_pt, gap=3.0, max_rows=label_rows)
    from matplotlib.transforms import offset_copy

    ax.tick_params(axis="x", labelsize=fontsize)
    placed = []
    for s in slots:
        dy = -(2.2 + s.row * 1.45) * fontsize
        text_at = offset_copy(ax.transAxes, fig=fig, x=0, y=dy, units="points")
        placed.append(ax.annotate(texts[s.index], xy=(s.anchor_x / width_pt, 0), xycoords=ax.transAxes, xytext=(s.x / width_pt, 0), textcoords=text_at,
                                  ha="center", va="top", fontsize=fontsize, color=LABEL_INK, annotation_clip=False,
                                  arrowprops={"arrowstyle": "-", "color": COUNTED, "lw": 0.6, "shrinkA": 0, "shrinkB": 0}))
    rows_used = max((sl.row + 1 for sl in slots), default=0)
    xlabel.set_visible(True)
    ax.xaxis.labelpad = 2 + rows_used * fontsize * 1.45
    return {"hi": hi, "lo": lo, "top": top, "labels": placed, "reference_ppm": ref_ppm}


def plot_processed(processed: Processed, path: str | os.PathLike | None = None, *, ppm_range: tuple[float, float] | None = None, width_in: float = 11.0, height_in: float = 4.2, dpi: int = 120) -> Any:
    """Draw the processed spectrum (see the module) and save it to ``path`` (PNG) when given; returns the figure."""
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(width_in, height_in), dpi=dpi)
    fig.subplots_adjust(left=0.02, right=0.98, top=0.97, bottom=0.27)
    draw_spectrum(ax, processed, ppm_range=ppm_range)
    if path is not None:
        fig.savefig(Path(path), format="png")
        plt.close(fig)
    return fig
