"""The report's figures, drawn with matplotlib and returned as inline SVG text.

Text stays text (``svg.fonttype = 'none'``): it is searchable and selectable in the page, the SVG
stays small, and no font file is embedded or referenced; the browser draws it with its own
sans-serif. Each figure's element ids get a prefix of its own, so several figures can share one
HTML document without clashing ids. The XML prologue, the DOCTYPE (the only external reference
matplotlib writes) and the metadata block are removed.

Lines are told apart by marker and line style as well as colour, so the figures read in grey.
Figures are drawn on matplotlib's SVG canvas directly, never through pyplot: no window, no
global figure registry, whatever backend the process has chosen.
"""

from __future__ import annotations

import io
import math
import re
from collections.abc import Mapping, Sequence
from typing import Any

import matplotlib
from matplotlib.axes import Axes
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure

from harness.report import fmt
from harness.report.decimate import decimate

# Okabe-Ito palette: distinguishable with the common colour-vision deficiencies.
COLOURS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")
MARKERS = ("o", "s", "^", "D", "v", "P", "X")
LINESTYLES = ("-", "--", "-.", ":", (0, (5, 1, 1, 1)), (0, (3, 1)), (0, (1, 2)))
LIMIT_COLOUR = "#B00000"

_RC = {
    "svg.fonttype": "none",
    "font.family": "sans-serif",
    "font.size": 9.0,
    "axes.grid": True,
    "grid.color": "#d0d0d0",
    "grid.linewidth": 0.6,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "figure.dpi": 72,
}
_NO_METADATA = {"Format": None, "Type": None, "Creator": None, "Date": None}
_PROLOGUE = re.compile(r"^.*?(?=<svg\b)", re.S)
_ID = re.compile(r'\bid="([^"]+)"')
_REF = re.compile(r'(href="#|url\(#)([^")]+)')


def to_svg(fig: Figure, name: str) -> str:
    """Serialise ``fig`` as an inline ``<svg>`` element whose ids all start with ``name``.

    The figure is emptied once written: its artists hold one another in cycles, which would
    otherwise wait for the garbage collector while the next figures are drawn (3 MB of a report).
    """
    buffer = io.StringIO()
    with matplotlib.rc_context({**_RC, "svg.hashsalt": name}):
        FigureCanvasSVG(fig).print_svg(buffer, metadata=_NO_METADATA)
    fig.clear()
    return _prefix_ids(_strip_prologue(buffer.getvalue()), name)


def _strip_prologue(svg: str) -> str:
    svg = _PROLOGUE.sub("", svg, count=1)
    # matplotlib's global "*{...}" rule would leak into the HTML page; the page's CSS carries it.
    return re.sub(r"<style[^>]*>.*?</style>", "", svg, count=1, flags=re.S)


def _prefix_ids(svg: str, name: str) -> str:
    svg = _ID.sub(lambda m: f'id="{name}-{m.group(1)}"', svg)
    svg = _REF.sub(lambda m: f"{m.group(1)}{name}-{m.group(2)}", svg)
    return svg.replace("<svg ", '<svg class="figure-svg" role="img" ', 1)


def new_figure(width_in: float, height_in: float, *, left: float = 0.8, right: float = 0.2, bottom: float = 0.5,
               top: float = 0.15) -> Figure:
    """A figure whose axes sit at fixed margins, in inches: ``left`` for the y tick labels and
    label, ``right`` (room for a second y axis), ``bottom`` for the x tick labels and label, ``top``.

    Fixed rather than matplotlib's constrained layout, which measures every text of a figure
    before drawing it and was a third of the figures' cost (about 0.15 s a report); the labels
    here are short (a few tick digits, a quantity and its unit), so margins sized once hold them.
    """
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(width_in, height_in))
    fig.subplots_adjust(left=left / width_in, right=1 - right / width_in, bottom=bottom / height_in,
                        top=1 - top / height_in)
    return fig


def _stack(fig: Figure, panels: int, gap: float) -> None:
    """A gap of ``gap`` inches between ``panels`` axes stacked one above the other."""
    height = fig.get_figheight() * (fig.subplotpars.top - fig.subplotpars.bottom)
    fig.subplots_adjust(hspace=gap / ((height - gap * (panels - 1)) / panels))


def _style(index: int) -> dict[str, Any]:
    i = index % len(COLOURS)
    return {"color": COLOURS[i], "marker": MARKERS[i], "linestyle": LINESTYLES[i], "markersize": 4.5, "linewidth": 1.4}


def _numbers(values: Sequence[Any]) -> list[float]:
    return [float(v) if fmt.is_number(v) else math.nan for v in values]


# --------------------------------------------------------------------------- efficiency


def efficiency_figure(points: Sequence[Mapping[str, Any]], maximum: Mapping[str, Any] | None) -> str | None:
    """Efficiency against load, one curve per power factor, the maximum marked."""
    curves = _curves_by_pf(points)
    if not curves:
        return None
    with matplotlib.rc_context(_RC):
        fig = new_figure(7.0, 3.6)
        ax = fig.add_subplot()
        for index, (pf, curve) in enumerate(curves):
            ax.plot([n * 100 for n, _ in curve], [e for _, e in curve], label=f"power factor {fmt.fixed(pf, 2)}", **_style(index))
        _mark_maximum(ax, maximum)
        ax.set_xlabel("load (% of rated power)")
        ax.set_ylabel("efficiency (%)")
        ax.legend(loc="lower left", fontsize=8)  # the curves fall to the right: their ends stay clear
        ax.set_xlim(left=0)
    return to_svg(fig, "fig-efficiency")


def _curves_by_pf(points: Sequence[Mapping[str, Any]]) -> list[tuple[float, list[tuple[float, float]]]]:
    curves: dict[float, list[tuple[float, float]]] = {}
    for p in points:
        n, pf, eta = p.get("load_pu"), p.get("power_factor"), p.get("efficiency_pct")
        if fmt.is_number(n) and fmt.is_number(pf) and fmt.is_number(eta):
            curves.setdefault(float(pf), []).append((float(n), float(eta)))
    return [(pf, sorted(curve)) for pf, curve in sorted(curves.items(), reverse=True)]


def _mark_maximum(ax: Axes, maximum: Mapping[str, Any] | None) -> None:
    if not maximum or not fmt.is_number(maximum.get("load_pu")) or not fmt.is_number(maximum.get("efficiency_pct")):
        return
    x, y = maximum["load_pu"] * 100, maximum["efficiency_pct"]
    ax.plot([x], [y], marker="*", markersize=13, color="#000000", linestyle="none", zorder=5,
            label=f"maximum {fmt.num(y, 5)} % at {fmt.num(x, 3)} % load")
    ax.axvline(x, color="#000000", linewidth=0.8, linestyle=":")
    ax.annotate(f"max {fmt.num(y, 5)} %", (x, y), xytext=(6, 6), textcoords="offset points", fontsize=8)


# --------------------------------------------------------------------------- excitation


def excitation_figure(sweep: Sequence[Mapping[str, Any]]) -> str | None:
    """No-load current and loss against voltage, from the points of an excitation sweep."""
    points = [p for p in sweep if fmt.is_number(p.get("u_V"))]
    if len(points) < 2:
        return None
    use_pct = all(fmt.is_number(p.get("u_pct")) for p in points)
    x = _numbers([p["u_pct"] if use_pct else p["u_V"] for p in points])
    with matplotlib.rc_context(_RC):
        fig = new_figure(7.0, 3.4, right=0.8)
        ax = fig.add_subplot()
        current = ax.plot(x, _numbers([p.get("i_A") for p in points]), label="no-load current", **_style(0))
        ax.set_ylabel("no-load current (A)")
        ax.set_xlabel("applied voltage (% of rated)" if use_pct else "applied voltage (V)")
        loss_ax = ax.twinx()
        loss_ax.grid(False)
        loss_ax.spines["right"].set_visible(True)
        loss = loss_ax.plot(x, _numbers([p.get("p_W") for p in points]), label="no-load loss", **_style(1))
        loss_ax.set_ylabel("no-load loss (W)")
        if use_pct:
            ax.axvline(100, color="#000000", linewidth=0.8, linestyle=":")
        ax.legend(handles=current + loss, loc="upper left", fontsize=8)
    return to_svg(fig, "fig-excitation")


# --------------------------------------------------------------------------- load-loss series


def load_series_figure(series: Sequence[Mapping[str, Any]]) -> str | None:
    """Repeated load-loss readings: the loss at rated current drifting with the winding
    temperature, and the same loss converted to the reference temperature (which should hold)."""
    points = [p for p in series if fmt.is_number(p.get("loss_W"))]
    if len(points) < 2:
        return None
    x = _numbers([p.get("reading", k + 1) for k, p in enumerate(points)])
    with matplotlib.rc_context(_RC):
        fig = new_figure(7.0, 3.2, right=0.8)
        ax = fig.add_subplot()
        raw = ax.plot(x, _numbers([p.get("loss_W") for p in points]), label="load loss at rated current", **_style(0))
        ref = ax.plot(x, _numbers([p.get("loss_ref_W") for p in points]), label="at reference temperature",
                      **_style(1))
        ax.set_xlabel("load-loss reading")
        ax.set_ylabel("load loss (W)")
        ax.set_xticks(x)
        hot = ax.twinx()
        hot.grid(False)
        hot.spines["right"].set_visible(True)
        temperature = hot.plot(x, _numbers([p.get("winding_temperature_C") for p in points]),
                               label="winding temperature", **_style(2))
        hot.set_ylabel("winding temperature (°C)")
        ax.legend(handles=raw + ref + temperature, loc="center right", fontsize=8)
    return to_svg(fig, "fig-load-series")


# --------------------------------------------------------------------------- ratio test

def ratio_figure(ratio: Mapping[str, Any] | None) -> str | None:
    """Each tap's ratio deviation per phase pair, with the tolerance band of each tap."""
    taps = [t for t in (ratio or {}).get("taps") or [] if fmt.is_number(t.get("tap"))]
    if not taps:
        return None
    x = [float(t["tap"]) for t in taps]
    limits = _numbers([t.get("limit_pct") for t in taps])
    with matplotlib.rc_context(_RC):
        fig = new_figure(7.0, 3.0, top=0.4)
        ax = fig.add_subplot()
        ax.fill_between(x, [-v for v in limits], limits, step="mid", color=LIMIT_COLOUR, alpha=0.08, linewidth=0)
        ax.step(x, limits, where="mid", color=LIMIT_COLOUR, linewidth=1.0, label="tolerance")
        ax.step(x, [-v for v in limits], where="mid", color=LIMIT_COLOUR, linewidth=1.0)
        names = [p.get("phase") or "ratio" for p in taps[0].get("phases") or []]
        for k, name in enumerate(names):
            y = _numbers([(t.get("phases") or [{}] * (k + 1))[k].get("deviation_pct") for t in taps])
            style = _style(k)
            ax.plot(x, y, label=name, **{**style, "linestyle": "none"})
        ax.axhline(0.0, color="#000000", linewidth=0.6)
        ax.set_xticks(x, [("0" if v == 0 else f"{int(v):+d}") for v in x])
        ax.set_xlabel("tap")
        ax.set_ylabel("ratio deviation (% of declared)")
        ax.legend(loc="lower center", bbox_to_anchor=(0.5, 1.0), fontsize=8, ncols=len(names) + 1, frameon=False)
    return to_svg(fig, "fig-ratio")


# --------------------------------------------------------------------------- ramp traces

_TRACE_PANELS = (("u_V", "voltage_V", "voltage (V)"), ("i_A", "current_A", "current (A)"), ("p_W", "power_W", "power (W)"))


# A three-phase trace: one line per channel (voltages line-to-line, currents line currents, the
# power of each measuring element), told apart by dash pattern as well as colour (black-and-white prints).
_PHASE_LINES = (("L1", "U12", "-"), ("L2", "U23", "--"), ("L3", "U31", ":"))


def trace_figure(trace: Mapping[str, Any], index: int, trip: Mapping[str, Any] | None = None) -> str | None:
    """Voltage, current and power against time for one ramp, each with its limit drawn; a
    three-phase step draws each phase."""
    lines = list(trace.get("phases") or [trace])
    t = _numbers(lines[0].get("t_s") or [])
    panels = [p for p in _TRACE_PANELS if len(lines[0].get(p[0]) or []) == len(t) and t]
    if not panels:
        return None
    with matplotlib.rc_context(_RC):
        fig = new_figure(7.0, 1.5 + 1.25 * len(panels), top=0.12, bottom=0.45)
        _stack(fig, len(panels), 0.12)
        axes = fig.subplots(len(panels), 1, sharex=True, squeeze=False)[:, 0]
        for i, (ax, (key, limit_key, label)) in enumerate(zip(axes, panels)):
            for line, (phase, pair, dash) in zip(lines, _PHASE_LINES):
                name = (pair if key == "u_V" else phase) if len(lines) > 1 else label.split(" ")[0]
                ax.plot(*decimate(_numbers(line["t_s"]), _numbers(line[key])), color=COLOURS[i], linewidth=1.3,
                        linestyle=dash if len(lines) > 1 else "-", label=name)
            ax.set_ylabel(label)
            if len(lines) > 1:
                ax.legend(loc="center right", fontsize=7, ncol=3)
            unit = label.split(" (")[1].rstrip(")")
            total = " (total)" if len(lines) > 1 and key == "p_W" else ""
            _draw_limit(ax, (trace.get("limits") or {}).get(limit_key), unit + total)
            _draw_trip(ax, trace, trip)
        axes[-1].set_xlabel("time (s)")
    return to_svg(fig, f"fig-trace-{index}")


def _draw_limit(ax: Axes, limit: Any, unit: str) -> None:
    if not fmt.is_number(limit):
        return
    ax.axhline(limit, color=LIMIT_COLOUR, linestyle="--", linewidth=1.1)
    # Upper left is free: a ramp starts at zero there.
    ax.annotate(f"limit {fmt.num(limit)} {unit}", (0.0, limit), xycoords=("axes fraction", "data"),
                xytext=(4, 2), textcoords="offset points", ha="left", va="bottom", fontsize=7.5, color=LIMIT_COLOUR)
    low, high = ax.get_ylim()
    # Room above the limit for its label, and the zero line in view: the ramp starts there.
    ax.set_ylim(min(low, 0), max(high, limit * 1.22))


def _draw_trip(ax: Axes, trace: Mapping[str, Any], trip: Mapping[str, Any] | None) -> None:
    if not trip or trip.get("step") != trace.get("step") or not fmt.is_number(trip.get("t_s")):
        return
    ax.axvline(trip["t_s"], color="#000000", linewidth=1.2, linestyle="-.")
    ax.annotate("trip", (trip["t_s"], 1.0), xycoords=("data", "axes fraction"), xytext=(-3, -10),
                textcoords="offset points", ha="right", fontsize=7.5, fontweight="bold")


# --------------------------------------------------------------------------- equivalent circuit


def circuit_figure(circuit: Mapping[str, Any], voltages: Mapping[str, Any]) -> str | None:
    """The approximate equivalent circuit (shunt branch at the terminals), one panel per winding."""
    sides = [s for s in ("hv", "lv") if isinstance(circuit.get(s), Mapping) and any(fmt.is_number(v) for v in circuit[s].values())]
    if not sides:
        return None
    with matplotlib.rc_context(_RC):
        fig = new_figure(6.4, 2.35 * len(sides), left=0.1, right=0.1, bottom=0.05, top=0.3)
        _stack(fig, len(sides), 0.35)
        for i, side in enumerate(sides):
            ax = fig.add_subplot(len(sides), 1, i + 1)
            _draw_circuit(ax, circuit[side])
            ax.set_title(_circuit_title(side, voltages.get(side)), fontsize=9.5, loc="left")
    return to_svg(fig, "fig-circuit")


def _circuit_title(side: str, voltage: Any) -> str:
    rated = f" ({fmt.eng(voltage, 'V', 3)})" if fmt.is_number(voltage) else ""
    return f"referred to the {side.upper()} winding{rated}"


def _draw_circuit(ax: Axes, values: Mapping[str, Any]) -> None:
    ax.set_axis_off()
    ax.set_xlim(-0.4, 10.4)
    ax.set_ylim(-0.8, 3.4)
    ax.set_aspect("equal")
    wire = {"color": "#000000", "linewidth": 1.2}
    ax.plot([0, 1.6, 3.2, 4.2], [2, 2, 2, 2], **wire)
    ax.plot([0, 10], [0, 0], **wire)
    for x in (1.6, 3.2):
        ax.plot([x], [2], marker="o", markersize=3, color="#000000")
        ax.plot([x], [0], marker="o", markersize=3, color="#000000")
    _resistor(ax, (1.6, 2), (1.6, 0))
    _inductor(ax, (3.2, 2), (3.2, 0))
    _resistor(ax, (4.2, 2), (6.4, 2))
    _inductor(ax, (6.6, 2), (8.8, 2))
    ax.plot([6.4, 6.6], [2, 2], **wire)
    ax.plot([8.8, 10], [2, 2], **wire)
    for x in (0, 10):
        for y in (0, 2):
            ax.plot([x], [y], marker="o", markersize=5, markerfacecolor="#ffffff", color="#000000", zorder=4)
    _circuit_labels(ax, values)


def _circuit_labels(ax: Axes, values: Mapping[str, Any]) -> None:
    text = {"fontsize": 8.5}
    ax.text(1.25, 1.0, f"Rc\n{fmt.eng(values.get('Rc_ohm'), 'Ω')}", ha="right", va="center", **text)
    ax.text(3.55, 1.0, f"Xm\n{fmt.eng(values.get('Xm_ohm'), 'Ω')}", ha="left", va="center", **text)
    ax.text(5.3, 2.4, f"Req\n{fmt.eng(values.get('Req_ohm'), 'Ω')}", ha="center", va="bottom", **text)
    ax.text(7.7, 2.4, f"Xeq\n{fmt.eng(values.get('Xeq_ohm'), 'Ω')}", ha="center", va="bottom", **text)
    ax.text(0, -0.5, "supply terminals", ha="left", va="center", fontsize=7.5)
    ax.text(10, -0.5, "load terminals", ha="right", va="center", fontsize=7.5)


def _frame(a: tuple[float, float], b: tuple[float, float]) -> tuple[float, tuple[float, float], tuple[float, float]]:
    """Length, unit vector along a->b and the unit normal of an element drawn from a to b."""
    dx, dy = b[0] - a[0], b[1] - a[1]
    length = math.hypot(dx, dy)
    along = (dx / length, dy / length)
    return length, along, (-along[1], along[0])


def _resistor(ax: Axes, a: tuple[float, float], b: tuple[float, float]) -> None:
    """IEC 60617 resistor: a plain rectangle on the wire."""
    length, u, n = _frame(a, b)
    lead, half = 0.25 * length, 0.22
    s0, s1 = lead, length - lead
    corners = [(s0, -half), (s1, -half), (s1, half), (s0, half), (s0, -half)]
    xs = [a[0] + s * u[0] + w * n[0] for s, w in corners]
    ys = [a[1] + s * u[1] + w * n[1] for s, w in corners]
    ax.fill(xs, ys, facecolor="#ffffff", edgecolor="#000000", linewidth=1.2, zorder=3)
    _leads(ax, a, b, u, lead)


def _inductor(ax: Axes, a: tuple[float, float], b: tuple[float, float], turns: int = 4) -> None:
    """An inductor as a row of half-turns on the wire."""
    length, u, n = _frame(a, b)
    lead = 0.2 * length
    pitch = (length - 2 * lead) / turns
    xs, ys = [], []
    for k in range(turns):
        centre = lead + (k + 0.5) * pitch
        for j in range(13):
            theta = math.pi * (1 - j / 12)
            s, w = centre + 0.5 * pitch * math.cos(theta), 0.5 * pitch * math.sin(theta)
            xs.append(a[0] + s * u[0] + w * n[0])
            ys.append(a[1] + s * u[1] + w * n[1])
    ax.plot(xs, ys, color="#000000", linewidth=1.2)
    _leads(ax, a, b, u, lead)


def _leads(ax: Axes, a: tuple[float, float], b: tuple[float, float], u: tuple[float, float], lead: float) -> None:
    for start, sign in ((a, 1), (b, -1)):
        end = (start[0] + sign * lead * u[0], start[1] + sign * lead * u[1])
        ax.plot([start[0], end[0]], [start[1], end[1]], color="#000000", linewidth=1.2)
