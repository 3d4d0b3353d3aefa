"""The --plot figures of `process` and `check`: readable as printed, measured on the rendered figure."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import pytest

from nmrcheck.processing import process
from nmrcheck.synth import Line, simulate_fid


@pytest.fixture(scope="module")
def processed():
    """Methyl cinnamate in CDCl3 with a towering CHCl3 residual line and TMS: shifts and couplings as in common
    practice (aromatic multiplets 7.4-7.5, trans-olefinic doublets 7.70/6.44 with J 16 Hz, OCH3 3.81)."""
    lines = [Line(7.70, 1, 1.0, (16.0,)), Line(7.52, 2, 2.0), Line(7.38, 3, 2.0), Line(6.44, 1, 1.0, (16.0,)), Line(3.81, 3, 0.9),
             Line(7.26, 40.0, 1.0), Line(1.56, 1.0, 4.0), Line(0.0, 0.5, 0.8)]
    fid = simulate_fid(lines, spectrometer_mhz=600.13, sweep_width_hz=9600.0, points=16384, carrier_ppm=6.0, noise=0.005, seed=4, solvent="CDCl3")
    return process(fid)


def _boxes(fig, texts):
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    from matplotlib.text import Text

    # The text's own box (an annotation's extent would include its leader line).
    return [(t.get_text(), Text.get_window_extent(t, renderer)) for t in texts if t.get_visible() and t.get_text()]


def _overlapping(boxes):
    out = []
    for i, (ta, a) in enumerate(boxes):
        for tb, b in boxes[i + 1:]:
            if a.x0 < b.x1 - 0.5 and b.x0 < a.x1 - 0.5 and a.y0 < b.y1 - 0.5 and b.y0 < a.y1 - 0.5:
                out.append((ta, tb))
    return out


def test_process_plot_is_legible(processed, tmp_path):
    import matplotlib.pyplot as plt

    from nmrcheck.report.spectrum_plot import plot_processed

    fig = plot_processed(processed)
    ax = fig.axes[0]
    hi, lo = ax.get_xlim()
    # TMS (0 ppm), water (1.56) and the residual CHCl3 (7.26, Gottlieb 1997 Table 1) are in view.
    assert hi >= 7.8 and lo <= -0.2
    # The analyte sets the scale: the CHCl3 line (40 H worth) runs off the top.
    ppm, y = processed.spectrum.ppm, processed.spectrum.data.real
    chcl3 = y[(ppm < 7.28) & (ppm > 7.24)].max()
    assert ax.get_ylim()[1] < 0.5 * chcl3
    labels = [t for t in ax.texts if t.get_text().endswith(" H")]
    counted = [r for r in processed.regions if r.counted and r.h is not None and round(r.h, 1) > 0]
    assert len(labels) == len(counted) and not [t for t in labels if t.get_text().startswith("0.0")]
    # Nothing else is written in the plot: flagged regions carry no text.
    assert len(ax.texts) == len(labels)
    boxes = _boxes(fig, ax.texts + ax.get_xticklabels())
    assert not _overlapping(boxes), _overlapping(boxes)
    # Running integrals: one curve per counted region besides the trace.
    assert len(ax.lines) >= 1 + len(counted)
    fig.savefig(tmp_path / "p.png")
    plt.close(fig)


def test_check_plot_draws_candidates_above_the_spectrum(processed, tmp_path):
    from nmrcheck.report.check_plot import plot_check
    from nmrcheck.validate import check_candidates
    from nmrcheck.validate.candidates import candidates_from_strings
    from nmrcheck.validate.evidence import evidence_from

    candidates, problems = candidates_from_strings(smiles=["COC(=O)/C=C/c1ccccc1"])
    assert not problems
    verdicts = check_candidates(candidates, evidence_from(processed))
    out = tmp_path / "check.png"
    plot_check(processed, verdicts, out)
    assert out.stat().st_size > 20_000
