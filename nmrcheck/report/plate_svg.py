"""Inline SVG drawings for the plate report: the plate map coloured by verdict and each well's spectrum.

SVG rather than raster images: crisp at any zoom, searchable text, small, and no plotting
library needed to write a 384-well report quickly.
"""

from __future__ import annotations

from html import escape
from typing import Any, Mapping, Sequence

import numpy as np

__all__ = ["VERDICT_STYLE", "plate_map_svg", "spectrum_svg", "legend_html", "svg_defs"]

# Own palette, chosen for colour-blind readers: hues far apart on the blue-yellow axis that
# deuteranopia and protanopia keep, distinct lightness, and every verdict also carries a
# letter and a fill pattern so colour is never the only cue.
VERDICT_STYLE: dict[str, dict[str, str]] = {
    "consistent": {"fill": "#1f78b4", "ink": "#ffffff", "letter": "C", "pattern": "", "label": "consistent"},
    "doubtful": {"fill": "#f0b040", "ink": "#1a1a1a", "letter": "D", "pattern": "dots", "label": "doubtful"},
    "inconsistent": {"fill": "#a8325e", "ink": "#ffffff", "letter": "I", "pattern": "hatch", "label": "inconsistent"},
    "undecided": {"fill": "#b9c2cc", "ink": "#1a1a1a", "letter": "U", "pattern": "", "label": "undecided"},
    "empty": {"fill": "#ffffff", "ink": "#1a1a1a", "letter": "E", "pattern": "", "label": "empty (no signal)"},
    "unreadable": {"fill": "#333333", "ink": "#ffffff", "letter": "X", "pattern": "cross", "label": "unreadable file"},
    "error": {"fill": "#6a3d9a", "ink": "#ffffff", "letter": "!", "pattern": "cross", "label": "processing error"},
    "pending": {"fill": "#f4f4f4", "ink": "#555555", "letter": "\u00b7", "pattern": "", "label": "no result yet"},
}


def svg_defs() -> str:
    """The fill patterns, defined once per page."""
    return (
        '<svg width="0" height="0" style="position:absolute" aria-hidden="true"><defs>'
        '<pattern id="pat-hatch" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">'
        '<line x1="0" y1="0" x2="0" y2="6" stroke="#ffffff" stroke-width="2" stroke-opacity="0.55"/></pattern>'
        '<pattern id="pat-dots" width="6" height="6" patternUnits="userSpaceOnUse">'
        '<circle cx="3" cy="3" r="1.2" fill="#1a1a1a" fill-opacity="0.45"/></pattern>'
        '<pattern id="pat-cross" width="7" height="7" patternUnits="userSpaceOnUse">'
        '<path d="M0 0L7 7M7 0L0 7" stroke="#ffffff" stroke-width="1" stroke-opacity="0.5"/></pattern>'
        "</defs></svg>"
    )


def _style(verdict: str) -> dict[str, str]:
    return VERDICT_STYLE.get(verdict, VERDICT_STYLE["pending"])


def legend_html() -> str:
    items = []
    for key, st in VERDICT_STYLE.items():
        pattern = f'<circle cx="11" cy="11" r="9" fill="url(#pat-{st["pattern"]})"/>' if st["pattern"] else ""
        items.append(
            f'<li><svg width="22" height="22" aria-hidden="true"><circle cx="11" cy="11" r="9" fill="{st["fill"]}" stroke="#1a1a1a"/>'
            f'{pattern}<text x="11" y="15" text-anchor="middle" font-size="11" font-weight="bold" fill="{st["ink"]}">{escape(st["letter"])}</text></svg>'
            f" {escape(st['label'])}</li>"
        )
    return '<ul class="legend">' + "".join(items) + "</ul>"


def plate_map_svg(rows: str, columns: int, verdicts: Mapping[str, str], tooltips: Mapping[str, str] | None = None) -> str:
    """A plate drawn well by well; each well links to its section and names its verdict in text.

    Parameters
    ----------
    rows
        Row letters (``'ABCDEFGH'``).
    columns
        Number of columns.
    verdicts
        Verdict of each well with a result or a manifest entry; absent wells are drawn blank.
    """
    tooltips = tooltips or {}
    cell = 34 if columns <= 12 else 24
    r = cell * 0.42
    left, top = 26, 22
    width = left + cell * columns + 6
    height = top + cell * len(rows) + 6
    out = [f'<svg class="platemap" role="img" aria-label="plate map" viewBox="0 0 {width} {height}" width="{width}" height="{height}" font-family="sans-serif">']
    for c in range(columns):
        out.append(f'<text x="{left + cell * c + cell / 2:.1f}" y="14" text-anchor="middle" font-size="11">{c + 1}</text>')
    for i, letter in enumerate(rows):
        cy = top + cell * i + cell / 2
        out.append(f'<text x="12" y="{cy + 4:.1f}" text-anchor="middle" font-size="11">{letter}</text>')
        for c in range(columns):
            well = f"{letter}{c + 1}"
            cx = left + cell * c + cell / 2
            if well not in verdicts:
                out.append(f'<circle cx="{cx:.1f}" cy="{cy:.1f}" r="{r:.1f}" fill="none" stroke="#cccccc" stroke-dasharray="2 2"><title>{well}: not in the manifest</title></circle>')
                continue
            verdict = verdicts[well]
            st = _style(verdict)
            tip = escape(f"{well}: {st['label']}" + (f" - {tooltips[well]}" if tooltips.get(well) else ""))
            dash = ' stroke-dasharray="3 2"' if verdict == "empty" else ""
            out.append(f'<a href="#well-{well}" class="well" data-well="{well}" data-verdict="{escape(verdict)}"><g>')
            out.append(f'<title>{tip}</title><circle cx="{cx:.1f}" cy="{cy:.1f}" r="{r:.1f}" fill="{st["fill"]}" stroke="#1a1a1a" stroke-width="1"{dash}/>')
            if st["pattern"]:
                out.append(f'<circle cx="{cx:.1f}" cy="{cy:.1f}" r="{r:.1f}" fill="url(#pat-{st["pattern"]})"/>')
            out.append(f'<text x="{cx:.1f}" y="{cy + 4:.1f}" text-anchor="middle" font-size="{11 if columns <= 12 else 9}" font-weight="bold" fill="{st["ink"]}">{escape(st["letter"])}</text>')
            out.append("</g></a>")
    out.append("</svg>")
    return "".join(out)


def spectrum_svg(
    first_ppm: float,
    last_ppm: float,
    values: np.ndarray,
    regions: Sequence[Mapping[str, Any]],
    *,
    width: int = 880,
    height: int = 230,
    uid: str = "s",
) -> str:
    """The spectrum trace with its integration regions shaded and each counted region's H written under it.

    ``uid`` makes the clip-path id unique on a page holding many spectra.
    """
    n = values.size
    ppm = np.linspace(first_ppm, last_ppm, n)
    counted = [r for r in regions if not r.get("flag")]
    shown = counted or list(regions)
    hi = min(first_ppm, max([r["start_ppm"] for r in shown], default=10.5) + 0.4)
    lo = max(last_ppm, min([r["end_ppm"] for r in shown], default=-0.5) - 0.4)
    if hi - lo < 1.0:
        hi, lo = min(first_ppm, hi + 0.5), max(last_ppm, lo - 0.5)
    keep = (ppm <= hi) & (ppm >= lo)
    x_ppm, y = ppm[keep], values[keep].astype(float)
    if x_ppm.size < 2:
        return '<p class="muted">no spectrum to draw</p>'
    # Scale to the tallest analyte signal; solvent and water lines are clipped rather than
    # letting them flatten the compound.
    tall = []
    for r in counted:
        m = (x_ppm <= r["start_ppm"]) & (x_ppm >= r["end_ppm"])
        if m.any():
            tall.append(float(y[m].max()))
    top = max(tall) if tall else float(np.percentile(y, 99.5))
    noise = float(np.median(np.abs(y - np.median(y)))) * 1.4826
    top = max(top, 8 * noise, 1e-12)
    bottom = float(np.median(y)) - 0.06 * top
    plot_top, plot_bottom = 12.0, height - 46.0
    left, right = 10.0, width - 10.0

    def sx(p):
        return left + (hi - p) / (hi - lo) * (right - left)

    def sy(v):
        return plot_bottom - (v - bottom) / (top * 1.08 - bottom) * (plot_bottom - plot_top)

    parts = [f'<svg class="spectrum" viewBox="0 0 {width} {height}" width="{width}" height="{height}" role="img" aria-label="1H spectrum" font-family="sans-serif">']
    parts.append(f'<clipPath id="clip-{uid}"><rect x="{left}" y="{plot_top - 4}" width="{right - left}" height="{plot_bottom - plot_top + 4}"/></clipPath>')
    for r in regions:
        a, b = sx(min(hi, r["start_ppm"])), sx(max(lo, r["end_ppm"]))
        if b <= left or a >= right or r["end_ppm"] > hi or r["start_ppm"] < lo:
            continue
        flagged = bool(r.get("flag"))
        fill = "#f0b040" if flagged else "#1f78b4"
        parts.append(f'<rect x="{a:.1f}" y="{plot_top:.1f}" width="{max(1.0, b - a):.1f}" height="{plot_bottom - plot_top:.1f}" fill="{fill}" fill-opacity="{0.16 if flagged else 0.14}"/>')
        mid = (a + b) / 2
        if flagged:
            label = escape(str(r.get("label") or r.get("flag")))
            parts.append(f'<text x="{mid:.1f}" y="{plot_top + 9:.1f}" text-anchor="middle" font-size="9" fill="#7a5200">{label}</text>')
        elif r.get("h") is not None:
            parts.append(f'<text x="{mid:.1f}" y="{plot_bottom + 30:.1f}" text-anchor="middle" font-size="10" fill="#0b3d61">{float(r["h"]):.1f}H</text>')
    step = max(1, x_ppm.size // 3000)
    pts = " ".join(f"{sx(p):.1f},{sy(v):.1f}" for p, v in zip(x_ppm[::step], y[::step]))
    parts.append(f'<polyline clip-path="url(#clip-{uid})" fill="none" stroke="#1a1a1a" stroke-width="0.8" points="{pts}"/>')
    parts.append(f'<line x1="{left}" y1="{plot_bottom + 2:.1f}" x2="{right}" y2="{plot_bottom + 2:.1f}" stroke="#444"/>')
    span = hi - lo
    tick = 0.5 if span < 4 else 1.0 if span < 14 else 2.0
    t = np.floor(hi / tick) * tick
    while t >= lo:
        x = sx(t)
        parts.append(f'<line x1="{x:.1f}" y1="{plot_bottom + 2:.1f}" x2="{x:.1f}" y2="{plot_bottom + 6:.1f}" stroke="#444"/>')
        parts.append(f'<text x="{x:.1f}" y="{plot_bottom + 17:.1f}" text-anchor="middle" font-size="10">{t:g}</text>')
        t -= tick
    parts.append(f'<text x="{right:.1f}" y="{height - 3:.1f}" text-anchor="end" font-size="10">ppm</text>')
    parts.append("</svg>")
    return "".join(parts)
