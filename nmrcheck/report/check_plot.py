"""The spectrum with the best candidates' predicted environments above it, for ``nmrcheck check --plot``."""

from __future__ import annotations

import os
from collections.abc import Sequence

from nmrcheck.report.spectrum_plot import draw_spectrum

__all__ = ["plot_check"]

#: Own colours for up to three candidates' predicted environments.
_CANDIDATE_INK = ("#8a3ba8", "#c2571a", "#2f7d4f")


def plot_check(processed, verdicts: Sequence, path: str | os.PathLike, *, best: int = 3) -> None:
    """Save a PNG: the spectrum as :func:`~nmrcheck.report.spectrum_plot.plot_processed` draws it, and above
    it one strip per candidate (the ``best`` ranked with a structure) with a bar at each predicted
    environment (height: its protons; whisker: the estimate's tolerance)."""
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt

    from nmrcheck.validate.checks import visible_groups
    from nmrcheck.validate.evidence import evidence_from

    shown = [v for v in verdicts if v.candidate.mol is not None][:best]
    rows = max(1, len(shown))
    fig = plt.figure(figsize=(11, 4.2 + 0.45 * rows), dpi=120)
    grid = fig.add_gridspec(2, 1, height_ratios=(0.45 * rows, 3.0), hspace=0.04, left=0.02, right=0.98, top=0.97, bottom=0.25)
    ax = fig.add_subplot(grid[1])
    layout = draw_spectrum(ax, processed)
    strip = fig.add_subplot(grid[0], sharex=ax)
    ev = evidence_from(processed)
    for i, v in enumerate(shown):
        colour = _CANDIDATE_INK[i % len(_CANDIDATE_INK)]
        y0 = rows - 1 - i
        groups = visible_groups(v.candidate, ev)
        most = max((g.n_h for g in groups), default=1)
        for g in groups:
            if not layout["lo"] <= g.ppm <= layout["hi"]:
                continue
            strip.plot([g.ppm + g.tolerance_ppm, g.ppm - g.tolerance_ppm], [y0 + 0.1, y0 + 0.1], color=colour, lw=0.8, alpha=0.6)
            strip.plot([g.ppm, g.ppm], [y0 + 0.1, y0 + 0.1 + 0.75 * g.n_h / most], color=colour, lw=2.2)
        strip.text(0.005, y0 + 0.55, f"#{v.rank} {v.candidate.label} ({v.verdict})", transform=strip.get_yaxis_transform(), ha="left", va="center",
                   fontsize=8, color=colour, bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.8, "pad": 1})
    strip.set_ylim(0, rows)
    strip.set_yticks([])
    strip.tick_params(axis="x", labelbottom=False, length=0)
    for side in ("top", "right", "left"):
        strip.spines[side].set_visible(False)
    strip.spines["bottom"].set_color("#cccccc")
    fig.savefig(path)
    plt.close(fig)
