"""Small vector charts for the review memo, drawn with ``reportlab.graphics``.

Only layout lives here: axis ranges, tick marks, label placement and clipping.
Every number plotted is handed in by the caller, already in display units.
Text handed in must already be safe for the embedded font (the memo writer
substitutes glyphs the font lacks); graphics strings are never parsed as markup.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Sequence

from reportlab.graphics.shapes import (
    Circle,
    Drawing,
    Group,
    Line,
    Polygon,
    PolyLine,
    Rect,
    String,
)
from reportlab.lib import colors
from reportlab.pdfbase.pdfmetrics import stringWidth

# Palette (chosen for contrast in colour and when printed in grey).
INK = colors.HexColor("#222222")
GRID = colors.HexColor("#DDDDDD")
FRAME = colors.HexColor("#777777")
TRACE = colors.HexColor("#1A4C8B")
TRACE_2 = colors.HexColor("#C26A00")
LIMIT_COLOURS = (
    colors.HexColor("#A11D21"),
    colors.HexColor("#6A3D9A"),
    colors.HexColor("#B15928"),
    colors.HexColor("#00798C"),
    colors.HexColor("#8E244D"),
    colors.HexColor("#455A64"),
)
LIMIT_DASHES = ((6, 2), (2, 2), (8, 2, 2, 2), (4, 4), (1, 2), (10, 3))
MARK = colors.HexColor("#1B1B1B")
BAR = colors.HexColor("#5B7DB1")
BAR_SPECIAL = colors.HexColor("#9E9E9E")
SWING_LOW = colors.HexColor("#3F6FB0")  # tornado: input at its low value
SWING_HIGH = colors.HexColor("#D08A2E")  # tornado: input at its high value


@dataclass
class Series:
    xs: Sequence[float]
    ys: Sequence[float]
    label: str = ""
    colour: object = TRACE
    width: float = 1.4
    dash: tuple | None = None


@dataclass
class HLine:
    y: float
    label: str
    suffix: str = ""  # kept whole when the label must be shortened (e.g. the temperature)
    colour: object = LIMIT_COLOURS[0]
    dash: tuple | None = (6, 2)


@dataclass
class VLine:
    x: float
    label: str
    colour: object = MARK
    dash: tuple | None = (3, 2)


@dataclass
class Marker:
    x: float
    y: float
    label: str = ""
    colour: object = MARK


@dataclass
class ChartFonts:
    regular: str
    bold: str
    size: float = 7.5


@dataclass
class _Frame:
    left: float
    bottom: float
    width: float
    height: float
    x0: float
    x1: float
    y0: float
    y1: float
    notes: list = field(default_factory=list)

    def px(self, x: float) -> float:
        return self.left + (x - self.x0) / (self.x1 - self.x0) * self.width

    def py(self, y: float) -> float:
        return self.bottom + (y - self.y0) / (self.y1 - self.y0) * self.height


def nice_ticks(lo: float, hi: float, target: int = 6) -> tuple[float, float, list[float], float]:
    """Round axis limits outward to a 1/2/2.5/5 step; return (lo, hi, ticks, step)."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        lo, hi = 0.0, 1.0
    if hi < lo:
        lo, hi = hi, lo
    if hi - lo <= 1e-12 * max(1.0, abs(hi)):
        pad = max(abs(hi) * 0.05, 1.0)
        lo, hi = lo - pad, hi + pad
    span = hi - lo
    raw = span / max(target, 1)
    mag = 10.0 ** math.floor(math.log10(raw))
    step = 10 * mag
    for m in (1.0, 2.0, 2.5, 5.0, 10.0):
        if span / (m * mag) <= target:
            step = m * mag
            break
    nlo = math.floor(lo / step + 1e-9) * step
    nhi = math.ceil(hi / step - 1e-9) * step
    count = int(round((nhi - nlo) / step))
    ticks = [nlo + i * step for i in range(count + 1)]
    return nlo, nhi, ticks, step


_HOUR_STEPS = (1, 2, 3, 4, 6, 8, 12, 24, 48, 72, 96, 168, 336, 720, 1440, 2160, 4320, 8760)


def hour_ticks(lo: float, hi: float, target: int = 7) -> tuple[float, float, list[float], float]:
    """Ticks for a time axis in hours: whole-hour steps that divide a day or a week."""
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi - lo < 6:
        return nice_ticks(lo, hi, target)
    span = hi - lo
    step = next((s for s in _HOUR_STEPS if span / s <= target), None)
    if step is None:
        return nice_ticks(lo, hi, target)
    nlo = math.floor(lo / step + 1e-9) * step
    nhi = math.ceil(hi / step - 1e-9) * step
    count = int(round((nhi - nlo) / step))
    return nlo, nhi, [nlo + i * step for i in range(count + 1)], float(step)


def tick_format(step: float) -> str:
    """Format with just enough decimals to show every multiple of ``step`` exactly."""
    if step <= 0 or not math.isfinite(step):
        return "{:g}"
    for decimals in range(0, 10):
        if abs(round(step, decimals) - step) <= 1e-9 * step:
            return "{:.%df}" % decimals
    return "{:g}"


def _fmt_tick(value: float, fmt: str) -> str:
    text = fmt.format(value)
    if text.startswith("-") and float(text) == 0.0:
        text = text[1:]
    return text.replace("-", "\u2212")


def fit_text(text: str, font: str, size: float, max_width: float) -> str:
    """Shorten ``text`` with an ellipsis so that it fits ``max_width`` points.

    Only a prefix about twice as long as what fits is ever measured, so the time does not
    grow with the length of a very long text."""
    n = len(text)
    hi = 64  # a prefix too wide to fit (or the whole text), found by doubling
    while hi < n and stringWidth(text[:hi], font, size) <= max_width:
        hi *= 2
    if hi >= n:
        if stringWidth(text, font, size) <= max_width:
            return text
        hi = n
    ell = "\u2026"
    lo = 0
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if stringWidth(text[:mid] + ell, font, size) <= max_width:
            lo = mid
        else:
            hi = mid - 1
    return text[:lo] + ell


def spread_positions(wanted: Sequence[float], gap: float, lo: float, hi: float) -> list[float]:
    """Move 1-D label positions apart by at least ``gap``, staying in [lo, hi] if they fit.

    Order is preserved; positions move as little as a simple two-sweep pass allows.
    """
    n = len(wanted)
    if n == 0:
        return []
    order = sorted(range(n), key=lambda i: wanted[i])
    pos = [min(max(wanted[i], lo), hi) for i in order]
    for k in range(1, n):
        pos[k] = max(pos[k], pos[k - 1] + gap)
    if pos[-1] > hi:
        pos[-1] = hi
        for k in range(n - 2, -1, -1):
            pos[k] = min(pos[k], pos[k + 1] - gap)
    if pos[0] < lo:  # too many to fit: keep the gap, run past the top instead
        pos[0] = lo
        for k in range(1, n):
            pos[k] = max(pos[k], pos[k - 1] + gap)
    out = [0.0] * n
    for k, i in enumerate(order):
        out[i] = pos[k]
    return out


def _clip_segment(x0, y0, x1, y1, xmin, xmax, ymin, ymax):
    """Liang-Barsky clip; return the clipped segment or None."""
    dx, dy = x1 - x0, y1 - y0
    t0, t1 = 0.0, 1.0
    for p, q in ((-dx, x0 - xmin), (dx, xmax - x0), (-dy, y0 - ymin), (dy, ymax - y0)):
        if p == 0:
            if q < 0:
                return None
            continue
        r = q / p
        if p < 0:
            if r > t1:
                return None
            t0 = max(t0, r)
        else:
            if r < t0:
                return None
            t1 = min(t1, r)
    return (x0 + t0 * dx, y0 + t0 * dy, x0 + t1 * dx, y0 + t1 * dy)


def clip_polyline(points: Sequence[tuple[float, float]], xmin, xmax, ymin, ymax) -> list[list[tuple[float, float]]]:
    """Split a polyline into the pieces that lie inside a rectangle."""
    pieces: list[list[tuple[float, float]]] = []
    current: list[tuple[float, float]] = []
    if len(points) == 1:
        x, y = points[0]
        if xmin <= x <= xmax and ymin <= y <= ymax:
            return [[(x, y)]]
        return []
    for (ax, ay), (bx, by) in zip(points[:-1], points[1:]):
        seg = _clip_segment(ax, ay, bx, by, xmin, xmax, ymin, ymax)
        if seg is None:
            if current:
                pieces.append(current)
                current = []
            continue
        sx, sy, ex, ey = seg
        if current and (abs(current[-1][0] - sx) > 1e-9 or abs(current[-1][1] - sy) > 1e-9):
            pieces.append(current)
            current = []
        if not current:
            current.append((sx, sy))
        current.append((ex, ey))
        if (ex, ey) != (bx, by):
            pieces.append(current)
            current = []
    if current:
        pieces.append(current)
    return pieces


def _finite_pairs(xs, ys):
    out = []
    dropped = 0
    for x, y in zip(xs, ys):
        try:
            fx, fy = float(x), float(y)
        except (TypeError, ValueError):
            dropped += 1
            continue
        if math.isfinite(fx) and math.isfinite(fy):
            out.append((fx, fy))
        else:
            dropped += 1
    return out, dropped


def thin(points: list[tuple[float, float]], keep: int = 2500) -> list[tuple[float, float]]:
    """Keep at most about ``keep`` points: a regular stride plus each local extreme of y."""
    n = len(points)
    if n <= keep:
        return points
    stride = max(1, n // keep)
    chosen = set(range(0, n, stride))
    chosen.add(n - 1)
    ys = [p[1] for p in points]
    chosen.add(max(range(n), key=ys.__getitem__))
    chosen.add(min(range(n), key=ys.__getitem__))
    return [points[i] for i in sorted(chosen)]


def _rotated_string(x, y, text, font, size, colour=INK):
    g = Group(String(0, 0, text, fontName=font, fontSize=size, fillColor=colour, textAnchor="middle"))
    g.transform = (0, 1, -1, 0, x, y)
    return g


def line_chart(
    width: float,
    height: float,
    series: Sequence[Series],
    fonts: ChartFonts,
    x_label: str,
    y_label: str,
    hlines: Sequence[HLine] = (),
    vlines: Sequence[VLine] = (),
    markers: Sequence[Marker] = (),
    x_range: tuple[float, float] | None = None,
    y_range: tuple[float, float] | None = None,
    x_min_zero: bool = False,
    x_hours: bool = False,
    x_exact: bool = False,
    marker_label: str = "",
    clipped_note: str = "",
    dropped_note: str = "",
) -> Drawing:
    """Line chart with labelled horizontal and vertical reference lines.

    Horizontal-line labels go in a column at the right of the plot, moved apart
    so they never overlap (with a leader to their line when moved).  Vertical-
    line labels go above the plot in as many rows as needed so none overlap.
    ``y_range`` clips the series; ``clipped_note`` is printed when clipping hid
    part of a series.  ``dropped_note`` (with ``{n}``) is printed when
    non-finite points were left out.
    """
    fs = fonts.size
    d = Drawing(width, height, initialFontName=fonts.regular, initialFontSize=fonts.size)

    cleaned = []
    dropped = 0
    for s in series:
        pts, nd = _finite_pairs(s.xs, s.ys)
        dropped += nd
        cleaned.append((s, thin(pts)))

    xs_all = [p[0] for _, pts in cleaned for p in pts] + [v.x for v in vlines] + [m.x for m in markers]
    ys_all = [p[1] for _, pts in cleaned for p in pts] + [h.y for h in hlines] + [m.y for m in markers]
    xs_all = [x for x in xs_all if math.isfinite(x)]
    ys_all = [y for y in ys_all if math.isfinite(y)]
    if x_range is not None:
        xlo, xhi = x_range
    else:
        xlo, xhi = (min(xs_all), max(xs_all)) if xs_all else (0.0, 1.0)
    if x_min_zero:
        xlo = min(xlo, 0.0)
    if y_range is not None:
        ylo, yhi = y_range
    else:
        ylo, yhi = (min(ys_all), max(ys_all)) if ys_all else (0.0, 1.0)
        pad = 0.04 * (yhi - ylo) if yhi > ylo else 1.0
        ylo, yhi = ylo - pad, yhi + pad
    x0, x1, xticks, xstep = (hour_ticks if x_hours else nice_ticks)(xlo, xhi, 7)
    if x_exact and xhi > xlo:
        x0, x1 = xlo, xhi
        xticks = [t for t in xticks if x0 - 1e-9 * abs(x1 - x0) <= t <= x1 + 1e-9 * abs(x1 - x0)]
    if x_min_zero and xlo >= 0:
        x0 = max(x0, 0.0)
        xticks = [t for t in xticks if t >= x0 - 1e-12]
    y0, y1, yticks, ystep = nice_ticks(ylo, yhi, 6)
    xfmt, yfmt = tick_format(xstep), tick_format(ystep)

    # Margins.
    ytick_w = max((stringWidth(_fmt_tick(t, yfmt), fonts.regular, fs) for t in yticks), default=10)
    left = 6 + fs * 1.3 + 4 + ytick_w + 4
    right_col = 0.0
    hl_texts = []
    if hlines:
        max_label = min(170.0, width * 0.32)
        hl_texts = []
        for h in hlines:
            tail = ("  " + h.suffix) if h.suffix else ""
            room = max(20.0, max_label - stringWidth(tail, fonts.regular, fs))
            hl_texts.append(fit_text(h.label, fonts.regular, fs, room) + tail)
        right_col = 10 + max(stringWidth(t, fonts.regular, fs) for t in hl_texts) + 4
    right = max(right_col, 12.0)

    # Vertical-line label rows (greedy interval packing above the plot).
    v_items = []
    plot_w_guess = width - left - right
    for v in vlines:
        text = fit_text(v.label, fonts.regular, fs, max(60.0, plot_w_guess * 0.6))
        v_items.append((v, text, stringWidth(text, fonts.regular, fs)))
    legend_items = [(s, pts) for s, pts in cleaned if s.label]
    show_legend = len(legend_items) > 1 or (len(legend_items) == 1 and bool(markers))
    bottom = 6 + fs + 6 + fs + 8 + (fs + 6 if show_legend else 0)
    notes = []
    if dropped and dropped_note:
        notes.append(dropped_note.format(n=dropped))
    bottom += len(notes) * (fs + 3)

    def layout_rows(plot_left, plot_w):
        """Rows of labels above the plot: each label starts at its line (or ends there
        near the right edge); lines are taken right to left so leaders rarely cross text."""
        rows: list[list[tuple[float, float]]] = []
        placed = []
        for v, text, w in sorted(v_items, key=lambda it: -it[0].x):
            cx = plot_left + (v.x - x0) / (x1 - x0) * plot_w if x1 > x0 else plot_left
            a = cx + 2 if cx + 2 + w <= width - 2 else cx - 2 - w
            a = min(max(a, 2.0), width - 2.0 - w)
            for r, row in enumerate(rows):
                if all(a + w + 4 <= s or a >= e + 4 for s, e in row):
                    row.append((a, a + w))
                    placed.append((v, text, a, w, r))
                    break
            else:
                rows.append([(a, a + w)])
                placed.append((v, text, a, w, len(rows) - 1))
        return rows, placed

    top = 8.0
    plot_w = width - left - right
    rows, placed = layout_rows(left, plot_w)
    top += len(rows) * (fs + 3)
    plot_h = height - top - bottom
    fr = _Frame(left, bottom, plot_w, plot_h, x0, x1, y0, y1)

    # Grid, ticks and frame.
    for t in yticks:
        y = fr.py(t)
        d.add(Line(left, y, left + plot_w, y, strokeColor=GRID, strokeWidth=0.5))
        d.add(String(left - 4, y - fs * 0.35, _fmt_tick(t, yfmt), fontName=fonts.regular, fontSize=fs,
                     fillColor=INK, textAnchor="end"))
    for t in xticks:
        x = fr.px(t)
        d.add(Line(x, bottom, x, bottom + plot_h, strokeColor=GRID, strokeWidth=0.5))
        d.add(String(x, bottom - fs - 3, _fmt_tick(t, xfmt), fontName=fonts.regular, fontSize=fs,
                     fillColor=INK, textAnchor="middle"))
    d.add(Rect(left, bottom, plot_w, plot_h, strokeColor=FRAME, strokeWidth=0.7, fillColor=None))
    d.add(String(left + plot_w / 2, bottom - 2 * fs - 8, x_label, fontName=fonts.bold, fontSize=fs,
                 fillColor=INK, textAnchor="middle"))
    d.add(_rotated_string(6 + fs, bottom + plot_h / 2, y_label, fonts.bold, fs))

    # Series, clipped to the plot.
    clipped_any = False
    for s, pts in cleaned:
        if not pts:
            continue
        if any(not (y0 - 1e-9 <= p[1] <= y1 + 1e-9) or not (x0 - 1e-9 <= p[0] <= x1 + 1e-9) for p in pts):
            clipped_any = True
        for piece in clip_polyline(pts, x0, x1, y0, y1):
            flat = []
            for px_, py_ in piece:
                flat.extend((fr.px(px_), fr.py(py_)))
            if len(flat) == 2:
                d.add(Circle(flat[0], flat[1], 1.0, fillColor=s.colour, strokeColor=None))
                continue
            d.add(PolyLine(flat, strokeColor=s.colour, strokeWidth=s.width, strokeDashArray=s.dash,
                           strokeLineJoin=1, strokeLineCap=1))

    # Horizontal reference lines with right-hand labels.
    if hlines:
        wanted = [fr.py(min(max(h.y, y0), y1)) - fs * 0.35 for h in hlines]
        got = spread_positions(wanted, fs + 2.5, bottom - fs * 0.35, bottom + plot_h - fs * 0.35)
        for h, text, w_y, g_y in zip(hlines, hl_texts, wanted, got):
            y = fr.py(min(max(h.y, y0), y1))
            d.add(Line(left, y, left + plot_w, y, strokeColor=h.colour, strokeWidth=1.0, strokeDashArray=h.dash))
            ly = g_y + fs * 0.35
            d.add(Line(left + plot_w, y, left + plot_w + 6, ly, strokeColor=h.colour, strokeWidth=0.6))
            d.add(String(left + plot_w + 8, g_y, text, fontName=fonts.regular, fontSize=fs, fillColor=h.colour))

    # Vertical reference lines with labels above the plot (leaders first, then the
    # labels on a white backing so a crossing leader never runs through text).
    shown = [(v, text, a, w, r) for v, text, a, w, r in placed if x0 <= v.x <= x1]
    for v, text, a, w, r in shown:
        x = fr.px(v.x)
        d.add(Line(x, bottom, x, bottom + plot_h, strokeColor=v.colour, strokeWidth=1.0, strokeDashArray=v.dash))
        ly = bottom + plot_h + 3 + r * (fs + 3)
        d.add(Line(x, bottom + plot_h, x, ly + fs * 0.5, strokeColor=v.colour, strokeWidth=0.5))
    for v, text, a, w, r in shown:
        ly = bottom + plot_h + 3 + r * (fs + 3)
        d.add(Rect(a - 1, ly + 0.5, w + 2, fs + 1.5, fillColor=colors.white, strokeColor=None))
        d.add(String(a, ly + 1.5, text, fontName=fonts.regular, fontSize=fs, fillColor=v.colour))

    # Markers with labels staggered above / below.
    for k, m in enumerate(markers):
        if not (x0 <= m.x <= x1 and y0 <= m.y <= y1):
            continue
        x, y = fr.px(m.x), fr.py(m.y)
        d.add(Circle(x, y, 2.6, fillColor=colors.white, strokeColor=m.colour, strokeWidth=1.2))
        if m.label:
            dy = 5 if k % 2 == 0 else -(fs + 4)
            ty = min(max(y + dy, bottom + 2), bottom + plot_h - fs - 1)
            d.add(String(x + 4, ty, m.label, fontName=fonts.bold, fontSize=fs, fillColor=m.colour))

    # Legend row and notes under the x label.
    yrow = bottom - 2 * fs - 8 - fs - 6
    if show_legend:
        xcur = left
        for s, _ in legend_items:
            d.add(Line(xcur, yrow + fs * 0.35, xcur + 18, yrow + fs * 0.35, strokeColor=s.colour,
                       strokeWidth=s.width, strokeDashArray=s.dash))
            d.add(String(xcur + 22, yrow, s.label, fontName=fonts.regular, fontSize=fs, fillColor=INK))
            xcur += 22 + stringWidth(s.label, fonts.regular, fs) + 16
        if markers:
            d.add(Circle(xcur + 3, yrow + fs * 0.35, 2.6, fillColor=colors.white, strokeColor=markers[0].colour,
                         strokeWidth=1.2))
            if marker_label:
                d.add(String(xcur + 10, yrow, marker_label, fontName=fonts.regular, fontSize=fs, fillColor=INK))
        yrow -= fs + 3
    if clipped_any and clipped_note:
        notes.append(clipped_note)
    for note in notes:
        d.add(String(left, yrow, fit_text(note, fonts.regular, fs, width - left), fontName=fonts.regular,
                     fontSize=fs, fillColor=INK))
        yrow -= fs + 3
    return d


def bar_chart(
    width: float,
    height: float,
    categories: Sequence[str],
    counts: Sequence[int],
    fonts: ChartFonts,
    x_label: str,
    y_label: str,
    special: Sequence[bool] = (),
) -> Drawing:
    """Vertical bars with integer counts printed above each bar."""
    fs = fonts.size
    d = Drawing(width, height, initialFontName=fonts.regular, initialFontSize=fonts.size)
    n = max(len(categories), 1)
    top_count = max(list(counts) + [1])
    y0, y1, yticks, ystep = nice_ticks(0, top_count, 5)
    ystep = max(1.0, ystep)
    yticks = [t for t in yticks if abs(t - round(t)) < 1e-9]
    left = 6 + fs * 1.3 + 4 + max(stringWidth(str(int(t)), fonts.regular, fs) for t in yticks) + 4
    right = 8
    plot_w = width - left - right
    slot = plot_w / n
    # Category labels: shrink to fit, then wrap onto two lines if still too wide.
    label_lines = []
    for c in categories:
        if stringWidth(c, fonts.regular, fs) <= slot - 4:
            label_lines.append([c])
        else:
            parts = c.split(" ", 1)
            label_lines.append([fit_text(p, fonts.regular, fs, slot - 4) for p in parts])
    nlines = max((len(ll) for ll in label_lines), default=1)
    bottom = 6 + fs + 8 + nlines * (fs + 2) + 4
    top = fs + 8
    plot_h = height - top - bottom
    fr = _Frame(left, bottom, plot_w, plot_h, 0, n, y0, y1)
    for t in yticks:
        y = fr.py(t)
        d.add(Line(left, y, left + plot_w, y, strokeColor=GRID, strokeWidth=0.5))
        d.add(String(left - 4, y - fs * 0.35, str(int(round(t))), fontName=fonts.regular, fontSize=fs,
                     fillColor=INK, textAnchor="end"))
    for i, (lines, cnt) in enumerate(zip(label_lines, counts)):
        xa = left + i * slot + slot * 0.15
        bw = slot * 0.7
        is_special = i < len(special) and special[i]
        h = fr.py(cnt) - bottom
        if cnt > 0:
            d.add(Rect(xa, bottom, bw, h, fillColor=BAR_SPECIAL if is_special else BAR, strokeColor=FRAME,
                       strokeWidth=0.5))
        d.add(String(xa + bw / 2, bottom + h + 2, str(int(cnt)), fontName=fonts.bold, fontSize=fs,
                     fillColor=INK, textAnchor="middle"))
        for k, line in enumerate(lines):
            d.add(String(left + (i + 0.5) * slot, bottom - (k + 1) * (fs + 2), line, fontName=fonts.regular,
                         fontSize=fs, fillColor=INK, textAnchor="middle"))
    d.add(Rect(left, bottom, plot_w, plot_h, strokeColor=FRAME, strokeWidth=0.7, fillColor=None))
    d.add(String(left + plot_w / 2, 6, x_label, fontName=fonts.bold, fontSize=fs, fillColor=INK,
                 textAnchor="middle"))
    d.add(_rotated_string(6 + fs, bottom + plot_h / 2, y_label, fonts.bold, fs))
    return d


@dataclass
class TornadoRow:
    """One input of a tornado chart.  Times in display units (hours); None = not reached."""
    label: str
    low: float | None
    high: float | None
    mark: str = ""  # appended to the label after any shortening (e.g. a footnote "*")


def _wrap_path(text: str, font: str, size: float, width: float, max_lines: int = 2) -> list[str]:
    """Break a dotted path after dots to fit ``width``; shorten the last line if still too long."""
    if stringWidth(text, font, size) <= width or "." not in text:
        return [fit_text(text, font, size, width)]
    pieces = text.split(".")
    parts = [p + "." for p in pieces[:-1]] + [pieces[-1]]
    lines, cur = [], ""
    for part in parts:
        if cur and stringWidth(cur + part, font, size) > width:
            lines.append(cur)
            cur = part
        else:
            cur += part
    lines.append(cur)
    if len(lines) > max_lines:
        lines = lines[:max_lines - 1] + ["".join(lines[max_lines - 1:])]
    return [fit_text(line, font, size, width) for line in lines]


def _flow(items: Sequence[float], gap: float, width: float) -> list[tuple[int, float]]:
    """Greedy left-to-right flow of items of the given widths: (row, x offset) for each."""
    out, row, x = [], 0, 0.0
    for w in items:
        if x > 0 and x + w > width:
            row, x = row + 1, 0.0
        out.append((row, x))
        x += w + gap
    return out


def _not_reached_marker(x: float, y: float, colour, size: float = 3.2) -> Polygon:
    return Polygon([x, y - size, x, y + size, x + 1.8 * size, y], fillColor=colour, strokeColor=INK,
                   strokeWidth=0.4)


def tornado_chart(
    width: float,
    rows: Sequence[TornadoRow],
    fonts: ChartFonts,
    x_label: str,
    low_label: str,
    high_label: str,
    nominal: float | None = None,
    nominal_label: str = "",
    x_max: float | None = None,
    not_reached_label: str = "",
    notes: Sequence[str] = (),
) -> Drawing:
    """Horizontal swing bars around a nominal time, one row per input, first row on top.

    Each row shows two segments from the nominal time: to the time with the input
    at its low value and to the time with it at its high value, in two colours.
    When both lie on the same side the nearer one is drawn narrower on top, so
    neither hides the other.  A time of None (not reached) is drawn to the right
    edge (``x_max``, the horizon) and marked with a triangle past the edge.
    ``nominal`` None with a ``nominal_label`` means the nominal case does not
    reach the limit: its line is drawn at the right edge.
    """
    fs = fonts.size
    rows = list(rows)
    finite = [t for r in rows for t in (r.low, r.high) if t is not None and math.isfinite(t)]
    if nominal is not None and math.isfinite(nominal):
        finite.append(nominal)
    top_x = x_max if x_max is not None and math.isfinite(x_max) and x_max > 0 else None
    if top_x is None:
        top_x = max(finite) * 1.05 if finite and max(finite) > 0 else 1.0
    top_x = max([top_x] + finite)
    x0, x1, xticks, xstep = hour_ticks(0.0, top_x, 7)
    x1 = top_x if top_x > 0 else x1  # the right edge is the horizon itself
    xticks = [t for t in xticks if t <= x1 * (1 + 1e-9)]
    xfmt = tick_format(xstep)

    # Label column: as wide as the longest label, at most 36 % of the drawing.
    max_label = width * 0.36
    label_lines = []
    for r in rows:
        mark_w = stringWidth(r.mark, fonts.regular, fs) if r.mark else 0.0
        lines = _wrap_path(r.label, fonts.regular, fs, max_label - mark_w)
        lines[-1] += r.mark
        label_lines.append(lines)
    label_w = max((stringWidth(line, fonts.regular, fs) for ll in label_lines for line in ll), default=20.0)
    nlines = max((len(ll) for ll in label_lines), default=1)
    row_h = max(16.0, nlines * (fs + 1.5) + 6)
    left = 6 + label_w + 8
    right = 14.0  # room for the not-reached triangles
    plot_w = width - left - right

    # Legend items (swatch + text), flowed into rows under the axis label.
    legend = [("low", low_label), ("high", high_label)]
    if not_reached_label and any(r.low is None or r.high is None for r in rows):
        legend.append(("nr", not_reached_label))
    legend = [(k, fit_text(t, fonts.regular, fs, width - 30)) for k, t in legend if t]
    legend_w = [16 + stringWidth(t, fonts.regular, fs) for _, t in legend]
    # Under the plot when the legend fits there on one row; else from the drawing's left edge.
    legend_x = 6 + label_w + 8
    placed_legend = _flow(legend_w, 14, width - legend_x - 4)
    if placed_legend and placed_legend[-1][0] > 0:
        legend_x = 4.0
        placed_legend = _flow(legend_w, 14, width - 8)
    legend_rows = (placed_legend[-1][0] + 1) if placed_legend else 0
    notes = [fit_text(n, fonts.regular, fs, width - 8) for n in notes if n]

    bottom = 6 + len(notes) * (fs + 3) + legend_rows * (fs + 5) + fs + 6 + fs + 6
    top = (fs + 8) if nominal_label else 6.0
    plot_h = row_h * max(len(rows), 1)
    height = bottom + plot_h + top
    d = Drawing(width, height, initialFontName=fonts.regular, initialFontSize=fs)
    fr = _Frame(left, bottom, plot_w, plot_h, x0, x1, 0.0, 1.0)

    def px(t):
        return fr.px(min(max(t, x0), x1))

    # Grid, ticks, frame.
    for t in xticks:
        x = fr.px(t)
        d.add(Line(x, bottom, x, bottom + plot_h, strokeColor=GRID, strokeWidth=0.5))
        d.add(String(x, bottom - fs - 3, _fmt_tick(t, xfmt), fontName=fonts.regular, fontSize=fs,
                     fillColor=INK, textAnchor="middle"))
    for i in range(1, len(rows)):
        y = bottom + plot_h - i * row_h
        d.add(Line(left, y, left + plot_w, y, strokeColor=GRID, strokeWidth=0.4))
    d.add(Rect(left, bottom, plot_w, plot_h, strokeColor=FRAME, strokeWidth=0.7, fillColor=None))
    d.add(String(left + plot_w / 2, bottom - 2 * fs - 8, fit_text(x_label, fonts.bold, fs, plot_w), fontName=fonts.bold,
                 fontSize=fs, fillColor=INK, textAnchor="middle"))

    base = nominal if nominal is not None and math.isfinite(nominal) else x1
    bx = px(base)
    bar_h = min(row_h * 0.6, 10.0)
    for i, (r, lines) in enumerate(zip(rows, label_lines)):
        yc = bottom + plot_h - (i + 0.5) * row_h
        # Labels, right-aligned against the plot, centred on the row.
        first_y = yc + (len(lines) - 1) * (fs + 1.5) / 2 - fs * 0.35
        for k, line in enumerate(lines):
            d.add(String(left - 6, first_y - k * (fs + 1.5), line, fontName=fonts.regular, fontSize=fs,
                         fillColor=INK, textAnchor="end"))
        segs = []
        for t, colour in ((r.low, SWING_LOW), (r.high, SWING_HIGH)):
            reached = t is not None and math.isfinite(t)
            end = px(t) if reached else left + plot_w
            segs.append((end, colour, reached))
        same_side = (segs[0][0] - bx) * (segs[1][0] - bx) > 0 or abs(segs[0][0] - segs[1][0]) < 0.5
        order = sorted(segs, key=lambda s: -abs(s[0] - bx))
        for k, (end, colour, reached) in enumerate(order):
            h = bar_h if (k == 0 or not same_side) else bar_h * 0.5
            x_lo, x_hi = min(bx, end), max(bx, end)
            d.add(Rect(x_lo, yc - h / 2, max(x_hi - x_lo, 0.8), h, fillColor=colour, strokeColor=INK,
                       strokeWidth=0.3))
        unreached = [colour for end, colour, reached in segs if not reached]
        for k, colour in enumerate(unreached):
            dy = 0.0 if len(unreached) == 1 else (2.6 if k == 0 else -2.6)
            d.add(_not_reached_marker(left + plot_w + 2, yc + dy, colour, 2.6 if len(unreached) > 1 else 3.2))

    # Nominal line and its label above the plot.
    if nominal_label or nominal is not None:
        d.add(Line(bx, bottom, bx, bottom + plot_h + (3 if nominal_label else 0), strokeColor=INK, strokeWidth=1.0,
                   strokeDashArray=(3, 2)))
        if nominal_label:
            text = fit_text(nominal_label, fonts.regular, fs, width - 4)
            w = stringWidth(text, fonts.regular, fs)
            a = bx + 3 if bx + 3 + w <= width - 2 else bx - 3 - w
            a = min(max(a, 2.0), width - 2.0 - w)
            d.add(String(a, bottom + plot_h + 3, text, fontName=fonts.regular, fontSize=fs, fillColor=INK))

    # Legend and notes.
    yrow = bottom - 2 * fs - 8 - fs - 5
    for (kind, text), (row, off) in zip(legend, placed_legend):
        x = legend_x + off
        y = yrow - row * (fs + 5)
        if kind == "nr":
            d.add(_not_reached_marker(x + 3, y + fs * 0.35, FRAME))
        else:
            d.add(Rect(x, y - 0.5, 11, fs, fillColor=SWING_LOW if kind == "low" else SWING_HIGH, strokeColor=INK,
                       strokeWidth=0.3))
        d.add(String(x + 16, y, text, fontName=fonts.regular, fontSize=fs, fillColor=INK))
    yrow -= legend_rows * (fs + 5)
    for note in notes:
        d.add(String(4.0, yrow, note, fontName=fonts.regular, fontSize=fs, fillColor=INK))
        yrow -= fs + 3
    return d
