"""Inline SVG drawings for the plate report: the plate map coloured by verdict and each well's spectrum.

SVG rather than raster images: crisp at any zoom, searchable text, small, and no plotting
library needed to write a 384-well report quickly.
"""

from __future__ import annotations

from html import escape
from typing import Any, Mapping, Sequence

import numpy as np

from nmrcheck.report.spectrum_layout import AxisError, analyte_top, check_axis, counted_regions, h_label, nice_ticks, place_labels, running_integral, view_range

__all__ = ["ACTIVE_INK", "SPECTRUM_INK", "VERDICT_STYLE", "plate_map_svg", "spectrum_svg", "legend_html", "svg_defs"]

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


#: Marker of an active well (bioassay hit) on the plate map and in the tables.
ACTIVE_INK = "#e4572e"


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


def legend_html(*, with_activity: bool = False) -> str:
    items = []
    for key, st in VERDICT_STYLE.items():
        pattern = f'<circle cx="11" cy="11" r="9" fill="url(#pat-{st["pattern"]})"/>' if st["pattern"] else ""
        items.append(
            f'<li><svg width="22" height="22" aria-hidden="true"><circle cx="11" cy="11" r="9" fill="{st["fill"]}" stroke="#1a1a1a"/>'
            f'{pattern}<text x="11" y="15" text-anchor="middle" font-size="11" font-weight="bold" fill="{st["ink"]}">{escape(st["letter"])}</text></svg>'
            f" {escape(st['label'])}</li>"
        )
    if with_activity:
        items.append(f'<li><svg width="16" height="16" aria-hidden="true"><path d="M8 2L14 8L8 14L2 8Z" fill="{ACTIVE_INK}" stroke="#1a1a1a"/></svg> active in the assay</li>')
    return '<ul class="legend">' + "".join(items) + "</ul>"


def plate_map_svg(rows: str, columns: int, verdicts: Mapping[str, str], tooltips: Mapping[str, str] | None = None, activity: Mapping[str, bool | None] | None = None) -> str:
    """A plate drawn well by well; each well links to its section and names its verdict in text.

    Parameters
    ----------
    rows
        Row letters (``'ABCDEFGH'``).
    columns
        Number of columns.
    verdicts
        Verdict of each well with a result or a manifest entry; absent wells are drawn blank.
    activity
        Bioassay call per well: True (a hit) draws a filled diamond beside the well.
    """
    tooltips = tooltips or {}
    activity = activity or {}
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
            if activity.get(well):
                # Only hits are marked: a plate of hollow markers would bury the few that matter.
                d = cell * 0.17
                ax, ay = cx + r * 0.8, cy - r * 0.8
                out.append(f'<path class="active" d="M{ax:.1f} {ay - d:.1f}L{ax + d:.1f} {ay:.1f}L{ax:.1f} {ay + d:.1f}L{ax - d:.1f} {ay:.1f}Z" '
                           f'fill="{ACTIVE_INK}" stroke="#1a1a1a" stroke-width="1"/>')
            out.append("</g></a>")
    out.append("</svg>")
    return "".join(out)


#: Colours of the spectrum drawing (own palette): trace, counted regions, regions left out,
#: integral curves, predicted environments, reference line.
SPECTRUM_INK = {
    "trace": "#1b1b1b",
    "counted": "#2b7bb9",
    "flagged": "#d9a21b",
    "integral": "#0f7b5f",
    "predicted": "#8a3ba8",
    "reference": "#6b6b6b",
}

#: Approximate advance of one character of the 11-unit label font, in drawing units (sans-serif
#: digits and capitals are about 0.6 em); slightly generous so estimated boxes cover real ones.
_CHAR_W = 7.0


def spectrum_svg(
    first_ppm: float,
    last_ppm: float,
    values: np.ndarray,
    regions: Sequence[Mapping[str, Any]],
    *,
    uid: str = "s",
    reference: Mapping[str, Any] | None = None,
    predicted: Sequence[Mapping[str, Any]] = (),
    width: int = 1200,
    height: int | None = None,
) -> str:
    """The spectrum across its whole useful range, scaled to the analyte, with integrals and proton labels.

    Counted regions are shaded blue, carry their running integral and one label ("2.0 H")
    under the axis; labels are stacked on rows so that none overlaps another. Regions left
    out of the count (solvent, water, reference, satellites) are shaded amber with a tooltip
    and no text. ``reference`` (``name``, ``ppm``) draws the line that set the axis;
    ``predicted`` (``ppm``, ``n_h``, ``tolerance_ppm``, ``label``) are a candidate's
    estimated environments, drawn hidden until the reader asks for them. The page's script
    zooms and pans the ``g.data`` group and redraws ticks and labels. ``height`` is ignored: the
    drawing is as tall as its label rows need.
    """
    try:
        check_axis(first_ppm, last_ppm)
    except AxisError as exc:
        return f'<p class="muted">no spectrum drawn: {escape(str(exc))}</p>'
    values = np.asarray(values, dtype=float)
    if values.size < 2 or not np.isfinite(values).any():
        return '<p class="muted">no spectrum drawn: the trace holds no finite values</p>'
    values = np.where(np.isfinite(values), values, np.nan)
    ppm = np.linspace(first_ppm, last_ppm, values.size)
    ref_ppm = None
    if reference and reference.get("ppm") is not None:
        ref_ppm = float(reference["ppm"])
    hi, lo = view_range(first_ppm, last_ppm, regions, reference_ppm=ref_ppm)
    keep = (ppm <= hi) & (ppm >= lo)
    x_ppm, y = ppm[keep], values[keep]
    if x_ppm.size < 2:
        return '<p class="muted">no spectrum drawn: no points in the useful range</p>'
    finite = y[np.isfinite(y)]
    top = analyte_top(x_ppm, np.nan_to_num(y, nan=float(np.median(finite))), regions) * 1.12
    bottom = float(np.median(finite)) - 0.05 * top
    left, right = 8.0, width - 50.0
    plot_top, plot_bottom = 8.0, 215.0
    axis_y = plot_bottom + 3.0
    tick_text_y = axis_y + 16.0
    row0_y, row_step = axis_y + 36.0, 15.0
    ink = SPECTRUM_INK

    def sx(p):
        return left + (hi - p) / (hi - lo) * (right - left)

    def sy(v):
        return plot_bottom - (v - bottom) / (top - bottom) * (plot_bottom - plot_top)

    counted = counted_regions(regions)
    anchors = [sx((float(r["start_ppm"]) + float(r["end_ppm"])) / 2) for r in counted]
    texts = [h_label(float(r["h"])) for r in counted]
    slots = place_labels(anchors, [len(t) * _CHAR_W + 2 for t in texts], left=left, right=right)
    rows_used = max((s.row + 1 for s in slots), default=0)
    height = int(row0_y + max(0, rows_used - 1) * row_step + 8) if rows_used else int(tick_text_y + 8)
    out = [
        f'<svg class="spectrum" id="sp-{uid}" viewBox="0 0 {width} {height}" preserveAspectRatio="xMinYMin meet" role="img" '
        f'aria-label="1H spectrum from {hi:.2f} to {lo:.2f} ppm" font-family="sans-serif" '
        f'data-hi="{hi:.4f}" data-lo="{lo:.4f}" data-left="{left}" data-right="{right}">',
        f'<defs><clipPath id="clip-{uid}"><rect x="{left}" y="0" width="{right - left}" height="{plot_bottom + 1:.1f}"/></clipPath></defs>',
        f'<rect class="hit" x="{left}" y="0" width="{right - left}" height="{axis_y:.1f}" fill="#ffffff"/>',
        f'<g clip-path="url(#clip-{uid})"><g class="data">',
    ]
    counted_ids = {id(r) for r in counted}
    for r in regions:
        if float(r["end_ppm"]) > hi or float(r["start_ppm"]) < lo:
            continue
        a, b = sx(float(r["start_ppm"])), sx(float(r["end_ppm"]))
        is_counted = id(r) in counted_ids
        if is_counted:
            tip = f"{float(r['start_ppm']):.2f}-{float(r['end_ppm']):.2f} ppm: {h_label(float(r['h']))} (counted)"
        elif r.get("flag"):
            tip = f"{float(r['start_ppm']):.2f}-{float(r['end_ppm']):.2f} ppm: {r.get('label') or r.get('flag')} ({r.get('flag')}, not counted)"
        else:
            tip = f"{float(r['start_ppm']):.2f}-{float(r['end_ppm']):.2f} ppm: below the counting threshold (not counted)"
        colour = ink["counted"] if is_counted else ink["flagged"]
        out.append(
            f'<rect class="{"region" if is_counted else "region-out"}" x="{a:.2f}" y="{plot_top:.1f}" width="{max(0.8 if is_counted else 3.0, b - a):.2f}" '
            f'height="{plot_bottom - plot_top:.1f}" fill="{colour}" fill-opacity="{0.13 if is_counted else 0.22}"><title>{escape(tip)}</title></rect>'
        )
    if ref_ppm is not None and lo <= ref_ppm <= hi:
        rx = sx(ref_ppm)
        out.append(
            f'<line class="refline" x1="{rx:.2f}" y1="{plot_top:.1f}" x2="{rx:.2f}" y2="{plot_bottom:.1f}" stroke="{ink["reference"]}" '
            f'stroke-dasharray="4 3" vector-effect="non-scaling-stroke"><title>{escape(str(reference.get("name") or "reference"))} at {ref_ppm:.2f} ppm set the axis</title></line>'
        )
    # The trace: NaN breaks the line instead of drawing through gaps.
    segs, cur = [], []
    for p, v in zip(x_ppm, y):
        if np.isfinite(v):
            cur.append(f"{sx(p):.2f},{min(max(sy(v), -2000.0), 2000.0):.1f}")
        elif cur:
            segs.append(cur)
            cur = []
    if cur:
        segs.append(cur)
    for seg in segs:
        if len(seg) > 1:
            out.append(f'<polyline class="trace" fill="none" stroke="{ink["trace"]}" stroke-width="0.9" vector-effect="non-scaling-stroke" points="{" ".join(seg)}"/>')
    # Running integrals on one scale: the largest rises 40 % of the plot height.
    curves = []
    for r in counted:
        xs, cum = running_integral(x_ppm, np.nan_to_num(y), float(r["start_ppm"]), float(r["end_ppm"]))
        if xs.size > 1:
            curves.append((xs, cum))
    scale = max((float(np.max(np.abs(c))) for _, c in curves), default=0.0)
    if scale > 0:
        base_y = plot_bottom - 0.1 * (plot_bottom - plot_top)
        span_y = 0.4 * (plot_bottom - plot_top)
        for xs, cum in curves:
            pts = " ".join(f"{sx(p):.2f},{base_y - c / scale * span_y:.1f}" for p, c in zip(xs, cum))
            out.append(f'<polyline class="integral" fill="none" stroke="{ink["integral"]}" stroke-width="1.3" vector-effect="non-scaling-stroke" points="{pts}"/>')
    if predicted:
        most = max(float(g.get("n_h") or 1) for g in predicted)
        out.append('<g class="predicted" style="display:none">')
        for g in predicted:
            p, tol = float(g["ppm"]), float(g.get("tolerance_ppm") or 0.0)
            if not (lo <= p <= hi):
                continue
            h = float(g.get("n_h") or 1)
            bar = 0.5 * (plot_bottom - plot_top) * h / most
            tip = f"{g.get('label') or 'predicted'}: {p:.2f} ppm, {h:g} H (estimate +/- {tol:.2f} ppm)"
            # A bar as tall as the environment's protons, a whisker as wide as the estimate's tolerance.
            # Exchangeable H (wide, solvent-dependent range) get a dashed bar and no whisker.
            exchangeable = bool(g.get("exchangeable"))
            whisker = "" if exchangeable else (
                f'<line x1="{sx(p + tol):.2f}" y1="{plot_bottom - 2:.1f}" x2="{sx(p - tol):.2f}" y2="{plot_bottom - 2:.1f}" stroke="{ink["predicted"]}" '
                f'stroke-width="1.2" stroke-opacity="0.7" vector-effect="non-scaling-stroke"/>')
            dash = ' stroke-dasharray="4 3"' if exchangeable else ""
            out.append(
                f'<g><title>{escape(tip)}</title>{whisker}'
                f'<line x1="{sx(p):.2f}" y1="{plot_bottom - 2:.1f}" x2="{sx(p):.2f}" y2="{plot_bottom - 2 - bar:.1f}" stroke="{ink["predicted"]}" '
                f'stroke-width="4" stroke-opacity="0.75" vector-effect="non-scaling-stroke"{dash}/></g>'
            )
        out.append("</g>")
    out.append("</g></g>")
    out.append(f'<rect class="brush" x="0" y="0" width="0" height="{axis_y:.1f}" fill="{ink["counted"]}" fill-opacity="0.15" style="display:none"/>')
    out.append(f'<line x1="{left}" y1="{axis_y:.1f}" x2="{right}" y2="{axis_y:.1f}" stroke="#444"/>')
    out.append(f'<g class="ticks" data-axis-y="{axis_y:.1f}" data-text-y="{tick_text_y:.1f}">')
    for t in nice_ticks(hi, lo):
        x = sx(t)
        out.append(f'<line x1="{x:.2f}" y1="{axis_y:.1f}" x2="{x:.2f}" y2="{axis_y + 4:.1f}" stroke="#444"/>'
                   f'<text x="{x:.2f}" y="{tick_text_y:.1f}" text-anchor="middle" font-size="11">{t:g}</text>')
    out.append("</g>")
    out.append(f'<text class="unit" x="{width - 4}" y="{tick_text_y:.1f}" text-anchor="end" font-size="11">ppm</text>')
    # Proton labels under the axis, on rows, each joined to its region's centre.
    out.append('<g class="hlabels">')
    for s in slots:
        r = counted[s.index]
        ty = row0_y + s.row * row_step
        centre = (float(r["start_ppm"]) + float(r["end_ppm"])) / 2
        out.append(
            f'<g class="hl" data-ppm="{centre:.4f}" data-dx="{s.x - s.anchor_x:.2f}">'
            f'<line x1="{s.anchor_x:.2f}" y1="{axis_y + 5:.1f}" x2="{s.x:.2f}" y2="{ty - 11:.1f}" stroke="{ink["counted"]}" stroke-width="0.7"/>'
            f'<text x="{s.x:.2f}" y="{ty:.1f}" text-anchor="middle" font-size="11" fill="#0d3552">{escape(texts[s.index])}</text></g>'
        )
    out.append("</g></svg>")
    return "".join(out)
