"""Charts for the web page as inline SVG, drawn on the server (no script, no external file).

Each chart is a ``<figure>`` holding an ``<svg role="img">`` with a title and a description, and a
caption; the page puts the plotted numbers in a table beside it as the text alternative.  Colours
are dark enough to read on white (contrast at least 4.5:1) and every line also differs by its dash
pattern, so nothing rests on colour alone.
"""
from __future__ import annotations

import html
import math
from dataclasses import dataclass, field

esc = html.escape

#: Line colours (all at least 4.5:1 against white) and dash patterns, used in turn.
INK = "#1c2127"
COLOURS = ("#1b4f7a", "#8c1c1c", "#6b4e00", "#1e5e3a", "#5a2d82", "#4a4a4a")
DASHES = ("", "6 3", "2 3", "8 3 2 3", "4 4", "1 2")
GRID = "#d5dae0"
#: A white outline behind a label drawn over the curves, so it stays readable.
HALO = ' paint-order="stroke" stroke="#fff" stroke-width="3.5" stroke-linejoin="round"'



@dataclass
class Line:
    xs: list
    ys: list
    label: str
    colour: str = COLOURS[0]
    dash: str = ""
    width: float = 2.2
    step: bool = False


@dataclass
class Mark:
    """A horizontal (``axis="y"``) or vertical (``axis="x"``) reference line with its label."""

    value: float
    label: str
    axis: str = "y"
    colour: str = COLOURS[1]
    dash: str = "6 3"


@dataclass
class Chart:
    title: str
    description: str
    x_label: str
    y_label: str
    lines: list = field(default_factory=list)
    marks: list = field(default_factory=list)
    x_range: tuple | None = None
    y_range: tuple | None = None


def nice_ticks(lo: float, hi: float, n: int = 6) -> list[float]:
    """Round tick values covering [lo, hi] (steps of 1, 2, 2.5 or 5 times a power of ten)."""
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        return [lo]
    raw = (hi - lo) / max(n - 1, 1)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw)
    start = math.ceil(lo / step - 1e-9) * step
    out, v = [], start
    while v <= hi + step * 1e-9:
        out.append(0.0 if abs(v) < step * 1e-9 else v)
        v += step
    return out


def tick_text(v: float) -> str:
    if v == 0:
        return "0"
    if abs(v) >= 1e5 or abs(v) < 1e-3:
        return f"{v:.2g}"
    return f"{v:.6g}"


def _finite_pairs(xs, ys):
    return [(float(x), float(y)) for x, y in zip(xs, ys)
            if isinstance(x, (int, float)) and isinstance(y, (int, float)) and math.isfinite(x) and math.isfinite(y)]


def svg_chart(chart: Chart, chart_id: str, width: int = 760, height: int = 360) -> str:
    """The chart as an inline ``<svg>``: axes with ticks, the lines, reference marks and a legend."""
    left, right, top, bottom = 66, 18, 16, 58
    pw, ph = width - left - right, height - top - bottom
    pts_all = [p for ln in chart.lines for p in _finite_pairs(ln.xs, ln.ys)]
    xs = [p[0] for p in pts_all] + [m.value for m in chart.marks if m.axis == "x" and math.isfinite(m.value)]
    ys = [p[1] for p in pts_all] + [m.value for m in chart.marks if m.axis == "y" and math.isfinite(m.value)]
    x0, x1 = chart.x_range or ((min(xs), max(xs)) if xs else (0.0, 1.0))
    y0, y1 = chart.y_range or ((min(ys), max(ys)) if ys else (0.0, 1.0))
    if x1 <= x0:
        x1 = x0 + 1.0
    if y1 <= y0:
        y0, y1 = y0 - 1.0, y1 + 1.0
    if chart.y_range is None:
        pad = (y1 - y0) * 0.06
        y0, y1 = y0 - pad, y1 + pad
    yt = nice_ticks(y0, y1)
    xt = nice_ticks(x0, x1)
    y0, y1 = min(y0, yt[0]), max(y1, yt[-1])

    def X(x):
        return left + (x - x0) / (x1 - x0) * pw

    def Y(y):
        return top + (1 - (y - y0) / (y1 - y0)) * ph

    out = [f'<svg id="{esc(chart_id)}" class="chart" role="img" aria-labelledby="{esc(chart_id)}-t {esc(chart_id)}-d" '
           f'viewBox="0 0 {width} {height}" width="100%" preserveAspectRatio="xMidYMid meet" '
           f'xmlns="http://www.w3.org/2000/svg" font-family="DejaVu Sans, Verdana, sans-serif" font-size="12">',
           f'<title id="{esc(chart_id)}-t">{esc(chart.title)}</title>',
           f'<desc id="{esc(chart_id)}-d">{esc(chart.description)}</desc>',
           f'<rect x="{left}" y="{top}" width="{pw}" height="{ph}" fill="#fff" stroke="{INK}" stroke-width="1"/>']
    for v in yt:
        if y0 <= v <= y1:
            out.append(f'<line x1="{left}" x2="{left + pw}" y1="{Y(v):.1f}" y2="{Y(v):.1f}" stroke="{GRID}"/>'
                       f'<text x="{left - 6}" y="{Y(v) + 4:.1f}" text-anchor="end" fill="{INK}">{esc(tick_text(v))}</text>')
    for v in xt:
        if x0 <= v <= x1:
            out.append(f'<line y1="{top}" y2="{top + ph}" x1="{X(v):.1f}" x2="{X(v):.1f}" stroke="{GRID}"/>'
                       f'<text x="{X(v):.1f}" y="{top + ph + 16}" text-anchor="middle" fill="{INK}">'
                       f'{esc(tick_text(v))}</text>')
    out.append(f'<text x="{left + pw / 2:.1f}" y="{height - 22}" text-anchor="middle" fill="{INK}">'
               f'{esc(chart.x_label)}</text>')
    out.append(f'<text transform="translate(14 {top + ph / 2:.1f}) rotate(-90)" text-anchor="middle" fill="{INK}">'
               f'{esc(chart.y_label)}</text>')
    out.append(f'<clipPath id="{esc(chart_id)}-clip"><rect x="{left}" y="{top}" width="{pw}" height="{ph}"/></clipPath>')
    out.append(f'<g clip-path="url(#{esc(chart_id)}-clip)">')
    series_at = len(out)
    for m in chart.marks:
        if not math.isfinite(m.value):
            continue
        dash = f' stroke-dasharray="{m.dash}"' if m.dash else ""
        if m.axis == "y" and y0 <= m.value <= y1:
            out.append(f'<line class="mark" x1="{left}" x2="{left + pw}" y1="{Y(m.value):.1f}" y2="{Y(m.value):.1f}" '
                       f'stroke="{m.colour}" stroke-width="1.4"{dash}><title>{esc(m.label)}</title></line>'
                       f'<text x="{left + 6}" y="{Y(m.value) - 4:.1f}" fill="{m.colour}"{HALO}>{esc(m.label)}</text>')
        elif m.axis == "x" and x0 <= m.value <= x1:
            out.append(f'<line class="mark" y1="{top}" y2="{top + ph}" x1="{X(m.value):.1f}" x2="{X(m.value):.1f}" '
                       f'stroke="{m.colour}" stroke-width="1.4"{dash}><title>{esc(m.label)}</title></line>'
                       f'<text transform="translate({X(m.value) + 4:.1f} {top + ph - 6}) rotate(-90)" '
                       f'fill="{m.colour}"{HALO}>{esc(m.label)}</text>')
    for ln in chart.lines:
        pts = _finite_pairs(ln.xs, ln.ys)
        if not pts:
            continue
        if ln.step:
            stepped = [pts[0]]
            for (xa, ya), (xb, yb) in zip(pts[:-1], pts[1:]):
                stepped += [(xb, ya), (xb, yb)]
            pts = stepped
        path = " ".join(f"{X(x):.1f},{Y(y):.1f}" for x, y in pts)
        dash = f' stroke-dasharray="{ln.dash}"' if ln.dash else ""
        out.insert(series_at, f'<polyline class="series" fill="none" stroke="{ln.colour}" stroke-width="{ln.width}"{dash} '
                   f'stroke-linejoin="round" points="{path}"><title>{esc(ln.label)}</title></polyline>')
        series_at += 1
    out.append("</g>")
    # legend under the x label
    lx = left
    for ln in chart.lines:
        dash = f' stroke-dasharray="{ln.dash}"' if ln.dash else ""
        out.append(f'<line x1="{lx}" x2="{lx + 26}" y1="{height - 7}" y2="{height - 7}" stroke="{ln.colour}" '
                   f'stroke-width="{ln.width}"{dash}/><text x="{lx + 31}" y="{height - 3}" fill="{INK}">'
                   f'{esc(ln.label)}</text>')
        lx += 40 + 7 * len(ln.label)
    out.append("</svg>")
    return "".join(out)


def svg_bars(rows: list[tuple[str, float | None, float | None]], nominal: float | None, chart_id: str, title: str,
             description: str, x_label: str, x_max: float | None = None, width: int = 760) -> str:
    """Horizontal swing bars (low-value end, high-value end) for a sensitivity chart; None = not reached
    (drawn to ``x_max`` with an open end)."""
    row_h, left, right, top = 26, 250, 24, 12
    height = top + row_h * len(rows) + 50
    ends = [v for _, a, b in rows for v in (a, b) if v is not None and math.isfinite(v)]
    hi = max(ends + ([nominal] if nominal is not None else []) + ([x_max] if x_max else []) + [1e-9])
    xt = nice_ticks(0.0, hi)
    hi = max(hi, xt[-1])
    pw = width - left - right

    def X(v):
        return left + v / hi * pw

    out = [f'<svg id="{esc(chart_id)}" class="chart" role="img" aria-labelledby="{esc(chart_id)}-t {esc(chart_id)}-d" '
           f'viewBox="0 0 {width} {height}" width="100%" xmlns="http://www.w3.org/2000/svg" '
           f'font-family="DejaVu Sans, Verdana, sans-serif" font-size="12">',
           f'<title id="{esc(chart_id)}-t">{esc(title)}</title><desc id="{esc(chart_id)}-d">{esc(description)}</desc>']
    base = top + row_h * len(rows)
    for v in xt:
        out.append(f'<line x1="{X(v):.1f}" x2="{X(v):.1f}" y1="{top}" y2="{base}" stroke="{GRID}"/>'
                   f'<text x="{X(v):.1f}" y="{base + 15}" text-anchor="middle" fill="{INK}">{esc(tick_text(v))}</text>')
    for i, (name, a, b) in enumerate(rows):
        y = top + i * row_h
        out.append(f'<text x="{left - 8}" y="{y + 17}" text-anchor="end" fill="{INK}">{esc(name[:38])}</text>')
        va = hi if a is None else a
        vb = hi if b is None else b
        lo_v, hi_v = min(va, vb), max(va, vb)
        out.append(f'<rect x="{X(lo_v):.1f}" y="{y + 5}" width="{max(X(hi_v) - X(lo_v), 1.5):.1f}" height="{row_h - 10}" '
                   f'fill="#c9d6e3" stroke="{COLOURS[0]}"><title>{esc(name)}</title></rect>')
    if nominal is not None:
        out.append(f'<line x1="{X(nominal):.1f}" x2="{X(nominal):.1f}" y1="{top}" y2="{base}" stroke="{INK}" '
                   f'stroke-dasharray="4 3" stroke-width="1.4"/>')
    out.append(f'<text x="{left + pw / 2:.1f}" y="{base + 36}" text-anchor="middle" fill="{INK}">{esc(x_label)}</text>')
    out.append("</svg>")
    return "".join(out)
