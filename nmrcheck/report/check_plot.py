"""Overlay of the best candidates' predicted shift positions on the processed spectrum."""

from __future__ import annotations

import os
from collections.abc import Sequence

__all__ = ["plot_check"]


def plot_check(processed, verdicts: Sequence, path: str | os.PathLike, *, best: int = 3) -> None:
    """Save a PNG: the spectrum with each of the ``best`` candidates' predicted H groups as bars (height = H)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from nmrcheck.validate.checks import visible_groups

    spec = processed.spectrum
    fig, ax = plt.subplots(figsize=(10, 4.5))
    y = spec.data.real
    ax.plot(spec.ppm, y / max(float(y.max()), 1e-12), color="black", lw=0.7, label="spectrum")
    shown = [v for v in verdicts if v.candidate.mol is not None][:best]
    from nmrcheck.validate.evidence import evidence_from

    ev = evidence_from(processed)
    for i, v in enumerate(shown):
        groups = visible_groups(v.candidate, ev)
        top = max((g.n_h for g in groups), default=1)
        for g in groups:
            ax.vlines(g.ppm, -0.05 - 0.12 * (i + 1), -0.05 - 0.12 * (i + 1) + 0.1 * g.n_h / top, color=f"C{i}", lw=2)
            ax.axvspan(g.ppm - g.tolerance_ppm, g.ppm + g.tolerance_ppm, ymin=0, ymax=0.02, color=f"C{i}", alpha=0.15)
        ax.plot([], [], color=f"C{i}", lw=2, label=f"#{v.rank} {v.candidate.label} ({v.verdict})")
    ax.set_xlim(float(spec.ppm.max()), float(spec.ppm.min()))
    ax.set_xlabel("1H chemical shift / ppm")
    ax.set_yticks([])
    ax.legend(loc="upper left", fontsize=8)
    fig.tight_layout()
    fig.savefig(path, dpi=120)
    plt.close(fig)
