"""Small inline SVG charts for the web view: a trend with its mean and control limits, a
histogram. Hand-written: a few lines of SVG per chart, where a plotting library would add a
second of start-up to every page (the HTML report's figures use matplotlib, offline)."""

from __future__ import annotations

import math
from typing import Sequence

from markupsafe import Markup, escape

WIDTH, HEIGHT, PAD = 560, 200, 36


def trend(values: Sequence[float | None], mean: float | None, lower: float | None, upper: float | None,
          unit: str) -> Markup:
    """Values in unit order, the mean (solid) and control limits (dashed); points outside in red."""
    known = [v for v in values if v is not None]
    if not known:
        return Markup("<p class='empty'>no values</p>")
    bounds = known + [b for b in (lower, upper) if b is not None]
    low, high = min(bounds), max(bounds)
    pad = (high - low) * 0.08 or abs(high) * 0.05 or 1.0
    low, high = low - pad, high + pad
    x_step = (WIDTH - 2 * PAD) / max(len(values) - 1, 1)

    def y(v: float) -> float:
        return HEIGHT - PAD - (v - low) / (high - low) * (HEIGHT - 2 * PAD)

    parts = [f"<svg class='chart' viewBox='0 0 {WIDTH} {HEIGHT}' role='img'>",
             f"<text x='4' y='14'>{escape(unit)}</text>",
             f"<text x='4' y='{PAD}'>{high:.4g}</text><text x='4' y='{HEIGHT - PAD}'>{low:.4g}</text>"]
    for value, style in ((mean, "mean"), (lower, "limit"), (upper, "limit")):
        if value is not None:
            parts.append(f"<line class='{style}' x1='{PAD}' x2='{WIDTH - PAD}' y1='{y(value):.1f}' y2='{y(value):.1f}'/>")
    points = [(PAD + i * x_step, v) for i, v in enumerate(values) if v is not None]
    parts.append("<polyline class='trend' points='" + " ".join(f"{x:.1f},{y(v):.1f}" for x, v in points) + "'/>")
    for x, v in points:
        outside = lower is not None and upper is not None and not lower <= v <= upper
        parts.append(f"<circle class='{'outside' if outside else 'point'}' cx='{x:.1f}' cy='{y(v):.1f}' r='3'/>")
    parts.append("</svg>")
    return Markup("".join(parts))


def histogram(values: Sequence[float | None], unit: str, bins: int | None = None) -> Markup:
    known = sorted(v for v in values if v is not None)
    if not known:
        return Markup("<p class='empty'>no values</p>")
    count = bins or max(3, min(12, int(math.sqrt(len(known))) + 1))
    low, high = known[0], known[-1]
    width = (high - low) / count or 1.0
    heights = [0] * count
    for v in known:
        heights[min(int((v - low) / width), count - 1)] += 1
    bar = (WIDTH - 2 * PAD) / count
    top = max(heights)
    parts = [f"<svg class='chart' viewBox='0 0 {WIDTH} {HEIGHT}' role='img'>",
             f"<text x='4' y='14'>units per bin ({escape(unit)})</text>"]
    for i, h in enumerate(heights):
        tall = h / top * (HEIGHT - 2 * PAD)
        parts.append(f"<rect class='bar' x='{PAD + i * bar:.1f}' y='{HEIGHT - PAD - tall:.1f}' "
                     f"width='{bar - 2:.1f}' height='{tall:.1f}'><title>{h}</title></rect>")
    parts.append(f"<text x='{PAD}' y='{HEIGHT - 8}'>{low:.4g}</text>"
                 f"<text x='{WIDTH - PAD - 40}' y='{HEIGHT - 8}'>{high:.4g}</text></svg>")
    return Markup("".join(parts))
