"""PDF building blocks shared by the memo and the register summary.

Text safety for reportlab's markup, value access with field-named errors, number, time and
temperature formatting, fonts, colours, page layout and atomic file writes. reportlab is
imported only when a PDF is actually rendered, so importing this module is cheap.
"""
from __future__ import annotations

import datetime as _dt
import math
import os
import re
import tempfile
import unicodedata
from collections.abc import Mapping, Sequence
from pathlib import Path
from xml.sax.saxutils import escape as _xml_escape

from screening.errors import InputError
from screening.fileio import with_umask
from screening.report.templates import font_files

_FONT_NAMES = {
    "regular": "HSVera",
    "bold": "HSVera-Bold",
    "italic": "HSVera-Italic",
    "bold_italic": "HSVera-BoldItalic",
}
_MAX_CELL_CHARS = 1500
#: Longest text laid out as one paragraph; longer text is cut with a visible mark. Keeps line
#: breaking (and a paragraph split across pages) cheap, so memo time grows linearly with text.
_MAX_PARA_CHARS = 5000
#: Longest free text (notes) in a document, laid out as many short paragraphs; beyond it, a mark.
_MAX_FREE_TEXT_CHARS = 100_000
#: A table cell is at most this fraction of the page's frame height: a row never outgrows a page.
_MAX_CELL_HEIGHT_FRACTION = 0.4
_UNIT_SYMBOL = {"degC": "\u00b0C", "degF": "\u00b0F", "K": "K", "degR": "\u00b0R"}
_UNIT_ALIASES = {
    "degc": "degC", "°c": "degC", "celsius": "degC", "degree_celsius": "degC", "c": "degC",
    "degf": "degF", "°f": "degF", "fahrenheit": "degF", "degree_fahrenheit": "degF", "f": "degF",
    "k": "K", "kelvin": "K",
    "degr": "degR", "°r": "degR", "rankine": "degR", "degree_rankine": "degR", "r": "degR",
}


class MemoInputError(InputError, ValueError):
    """The result dict cannot be laid out (a value of the wrong kind)."""


# --------------------------------------------------------------------------- text safety


class _Text:
    """Makes any text safe for the embedded font and for Paragraph markup."""

    _covered: frozenset | None = None

    def __init__(self):
        if _Text._covered is None:
            from reportlab.pdfbase.ttfonts import TTFont

            sets = [set(TTFont(f"probe{k}", str(p)).face.charToGlyph) for k, p in font_files().items()]
            _Text._covered = frozenset(set.intersection(*sets))
        self.covered = _Text._covered
        self.substituted = 0
        self.cut_mark = lambda n: f"[{n} characters]"  # the layout sets the template's wording

    def cut(self, text: str, limit: int) -> str:
        """``text`` cut after ``limit`` characters, with the visible mark, when it is longer."""
        if len(text) <= limit:
            return text
        return text[:limit] + " " + self.cut_mark(len(text))

    def clean(self, value, keep_newlines: bool = False) -> str:
        """Plain text with every glyph the font lacks shown as ``[U+XXXX]``."""
        text = unicodedata.normalize("NFC", str(value))
        out = []
        for ch in text:
            cp = ord(ch)
            if ch == "\n" and keep_newlines:
                out.append("\n")
            elif ch in "\t\r\n":
                out.append(" ")
            elif cp in self.covered and not unicodedata.category(ch).startswith("C"):
                out.append(ch)
            elif ch == "\u00a0":
                out.append(" ")
            else:
                self.substituted += 1
                out.append(f"[U+{cp:04X}]")
        return "".join(out)

    def para(self, value, keep_newlines: bool = True) -> str:
        """Escaped text for a reportlab Paragraph: prints literally, never as markup.

        Text over ``_MAX_PARA_CHARS`` characters is cut with the visible mark."""
        text = self.cut(value if isinstance(value, str) else str(value), _MAX_PARA_CHARS)
        text = _xml_escape(self.clean(text, keep_newlines=keep_newlines))
        return text.replace("\n", "<br/>")

    def pieces(self, value, size: int = 1000) -> list[str]:
        """Free text as escaped paragraph markups of about ``size`` characters or fewer, in order.

        Lines are kept whole where they fit; a longer line is broken at its last space before
        ``size`` (or at ``size`` in a word without spaces). A blank line starts a new piece. Each
        piece is laid out on its own, so the time grows linearly with the text's length (one
        paragraph split across many pages is broken again on every page). Text over
        ``_MAX_FREE_TEXT_CHARS`` characters is cut with the visible mark.
        """
        text = self.cut(value if isinstance(value, str) else str(value), _MAX_FREE_TEXT_CHARS)
        out: list[str] = []
        for block in text.split("\n\n"):
            lines: list[str] = []
            used = 0
            for line in block.strip("\n").split("\n"):
                while len(line) > size:
                    cut = line.rfind(" ", size // 2, size)
                    cut = size if cut < 0 else cut + 1
                    if lines:
                        out.append("\n".join(lines))
                        lines, used = [], 0
                    out.append(line[:cut])
                    line = line[cut:]
                if lines and used + len(line) > size:
                    out.append("\n".join(lines))
                    lines, used = [], 0
                lines.append(line)
                used += len(line) + 1
            if lines and any(x.strip() for x in lines):
                out.append("\n".join(lines))
        return [self.para(p) for p in out if p.strip()]


def _template_blocks(text: str) -> list[tuple[str, str]]:
    """Split template prose into ("p", text) paragraphs and ("li", text) bullets."""
    blocks: list[tuple[str, str]] = []
    kind, buf = None, []

    def flush():
        nonlocal kind, buf
        if buf:
            blocks.append((kind or "p", " ".join(s.strip() for s in buf)))
        kind, buf = None, []

    for line in text.strip("\n").splitlines():
        stripped = line.strip()
        if not stripped:
            flush()
            continue
        if stripped.startswith("- "):
            flush()
            kind, buf = "li", [stripped[2:]]
        else:
            if kind is None:
                kind = "p"
            buf.append(stripped)
    flush()
    return blocks


# --------------------------------------------------------------------------- value access


def _num(value, where: str) -> float | None:
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise MemoInputError(f"{where}: expected a number or null, got {type(value).__name__}")
    return float(value)


def _mapping(value, where: str) -> Mapping | None:
    if value is None:
        return None
    if not isinstance(value, Mapping):
        raise MemoInputError(f"{where}: expected an object or null, got {type(value).__name__}")
    return value


def _seq(value, where: str) -> list:
    if value is None:
        return []
    if isinstance(value, (str, bytes)) or not isinstance(value, Sequence):
        if hasattr(value, "tolist"):  # numpy arrays from the engine
            return list(value.tolist())
        raise MemoInputError(f"{where}: expected a list or null, got {type(value).__name__}")
    return list(value)


def _str(value, where: str) -> str | None:
    if value is None:
        return None
    if isinstance(value, str):
        return value
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return str(value)
    raise MemoInputError(f"{where}: expected text or null, got {type(value).__name__}")


def _any_text(value) -> str:
    """Warnings and reasons are never dropped: anything that is not text is shown as text."""
    if isinstance(value, str):
        return value
    if isinstance(value, Mapping):
        return "; ".join(f"{k}: {v}" for k, v in value.items())
    return "" if value is None else str(value)


def _floats(value, where: str) -> list[float]:
    items = _seq(value, where)
    out = []
    for i, v in enumerate(items):
        f = _num(v, f"{where}[{i}]")
        out.append(float("nan") if f is None else f)
    return out


# --------------------------------------------------------------------------- number formatting


def _minus(text: str) -> str:
    return text.replace("-", "\u2212") if text.startswith("-") else text


def _num_text(x: float, digits: int = 4) -> str:
    if not math.isfinite(x):
        return "\u221e" if x > 0 else ("\u2212\u221e" if x < 0 else "NaN")
    return _minus(f"{x:.{digits}g}")


def _si_prefixed(x: float, unit: str, digits: int = 3) -> str:
    if not math.isfinite(x):
        return f"{_num_text(x)} {unit}"
    a = abs(x)
    for factor, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if a >= factor:
            return f"{_minus(f'{x / factor:.{digits}g}')} {prefix}{unit}"
    return f"{_minus(f'{x:.{digits}g}')} {unit}"


def _hours(seconds: float) -> str:
    if not math.isfinite(seconds):
        return _num_text(seconds) + " h"
    h = seconds / 3600.0
    a = abs(h)
    if a >= 100:
        text = f"{h:.0f} h"
    elif a >= 10:
        text = f"{h:.1f} h"
    elif a >= 1:
        text = f"{h:.2f} h"
    elif a >= 0.01:
        text = f"{h:.3f} h ({seconds / 60:.0f} min)" if abs(seconds) >= 60 else f"{h:.3f} h ({seconds:.0f} s)"
    elif seconds == 0:
        text = "0 h"
    elif seconds > 0:
        text = f"< 0.01 h ({seconds:.3g} s)"
    else:
        text = f"\u2212{abs(seconds):.3g} s (under 0.01 h)"
    return _minus(text)


def _hours_short(seconds: float) -> str:
    h = seconds / 3600.0
    a = abs(h)
    if a >= 100:
        return _minus(f"{h:.0f} h")
    if a >= 10:
        return _minus(f"{h:.1f} h")
    if a >= 1:
        return _minus(f"{h:.2f} h")
    if seconds != 0 and abs(seconds) < 36:  # under 0.01 h: in seconds (a sub-second time as such, never "0 h")
        return _minus(f"{seconds:.2g} s")
    return _minus(f"{h:.2g} h")


def _decimals_for(p: float, decimals: int) -> int:
    """More decimals when rounding would show a probability strictly between 0 and 1 as 0 % or 100 %."""
    while decimals < 8 and 0.0 < p < 1.0 and float(f"{p * 100:.{decimals}f}") in (0.0, 100.0):
        decimals += 1
    return decimals


def _percent(p: float, se: float | None = None) -> str:
    """A probability as a percentage; with its standard error when one is given and non-zero.

    The standard error is shown to two significant digits and the probability to
    the same decimal place (more if that would round it to 0 % or 100 %).
    """
    if not math.isfinite(p):
        return _num_text(p)
    if se is None or not math.isfinite(se) or se <= 0:
        d = _decimals_for(p, 1 if 0.0 < p < 1.0 else 0)
        return f"{p * 100:.{d}f} %"
    sp = se * 100.0
    d = max(0, min(4, 1 - math.floor(math.log10(sp))))
    d = _decimals_for(p, d)
    return f"{p * 100:.{d}f} % \u00b1 {sp:.{d}f} %"


def _count_text(value, where: str) -> str | None:
    """A count (samples, seed) as digits; None when missing."""
    if value is None:
        return None
    if isinstance(value, bool):
        raise MemoInputError(f"{where}: expected a number or null, got bool")
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return str(int(value)) if value.is_integer() else _num_text(value, 8)
    return _str(value, where)


_TEMPERATURE_TEXTS = {"degc": "degC", "degf": "degF", "degr": "degR", "\u00b0c": "degC", "\u00b0f": "degF",
                      "\u00b0r": "degR", "celsius": "degC", "fahrenheit": "degF", "rankine": "degR",
                      "degree_celsius": "degC", "degree_fahrenheit": "degF", "degree_rankine": "degR"}


def _case_unit(unit: str | None) -> str:
    """The unit a case wrote, with temperature words shown as their symbols (degC as \u00b0C)."""
    if not unit:
        return ""
    key = _TEMPERATURE_TEXTS.get(unit.strip().lower())
    return _UNIT_SYMBOL[key] if key else unit.strip()


def _with_unit(x: float, unit: str, digits: int = 5) -> str:
    return f"{_num_text(x, digits)} {unit}".strip()


class _Units:
    def __init__(self, unit: str | None):
        self.unit = _UNIT_ALIASES.get(str(unit).strip().lower(), "degC") if unit is not None else "degC"
        self.symbol = _UNIT_SYMBOL[self.unit]

    def convert(self, kelvin: float) -> float:
        if self.unit == "degC":
            return kelvin - 273.15
        if self.unit == "degF":
            return kelvin * 9.0 / 5.0 - 459.67
        if self.unit == "degR":
            return kelvin * 9.0 / 5.0
        return kelvin

    def short(self, kelvin: float) -> str:
        if not math.isfinite(kelvin):
            return _num_text(kelvin)
        return _minus(f"{self.convert(kelvin):.1f}") + " " + self.symbol

    def full(self, kelvin: float) -> str:
        if not math.isfinite(kelvin):
            return _num_text(kelvin)
        if self.unit == "K":
            return f"{kelvin:.2f} K"
        return f"{self.short(kelvin)} ({kelvin:.2f} K)"

    def rise(self, kelvin: float) -> str:
        if not math.isfinite(kelvin):
            return _num_text(kelvin) + " K"
        base = _minus(f"{kelvin:.1f}") + " K"
        if self.unit in ("degF", "degR"):
            return f"{base} ({_minus(f'{kelvin * 1.8:.1f}')} {self.symbol} difference)"
        return base


def _date_text() -> str:
    sde = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if sde:
        try:
            ts = int(sde)
        except ValueError:
            raise MemoInputError(f"SOURCE_DATE_EPOCH must be a whole number of seconds, got {sde!r}") from None
        return _dt.datetime.fromtimestamp(ts, _dt.timezone.utc).strftime("%Y-%m-%d")
    return _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d")


def _invariant() -> int:
    return 1 if os.environ.get("SOURCE_DATE_EPOCH", "").strip() else 0


# --------------------------------------------------------------------------- atomic write


def _atomic_write(data_fn, path) -> None:
    """Render with ``data_fn()`` first, then write to a temp file beside ``path`` and rename.

    On any exception nothing new is left at ``path`` (an earlier file there is
    left untouched) and no temporary file remains.
    """
    target = Path(path)
    data = data_fn()
    folder = target.parent if str(target.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with_umask(tmp)  # mkstemp makes 0600; give the usual permissions
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


# --------------------------------------------------------------------------- reportlab layer


def _water_level(heights: list[float], room: float) -> float:
    """The largest cap c with sum(min(h, c)) <= room (inf when everything fits)."""
    if sum(heights) <= room:
        return math.inf
    hs = sorted(heights)
    below = 0.0
    for i, h in enumerate(hs):
        c = (room - below) / (len(hs) - i)
        if c <= h:
            return max(c, 0.0)
        below += h
    return math.inf  # pragma: no cover - the sum exceeds room, so some h exceeds its share


class _CutMark:
    """The visible mark at the end of cut text (the template's wording, with the length in
    characters of the whole text), and where an earlier cut left one."""

    def __init__(self, template: str, clean):
        self.template = template
        self.clean = clean
        head, _, tail = template.partition("{n}")
        self.pattern = re.compile(" " + re.escape(clean(head)) + r"(\d+)" + re.escape(clean(tail)))

    def __call__(self, n: int) -> str:
        return self.template.format(n=n)

    def parse(self, text: str) -> tuple[str, int]:
        """Text shown before the first mark already in ``text`` (what follows it is cut again),
        and the length of the whole text that mark stands for (else of ``text``)."""
        found = self.pattern.search(text)
        if found:
            return text[:found.start()], int(found.group(1))
        return text, len(text)


def _cut_to_height(para, height: float, width: float, mark: _CutMark):
    """``para`` as plain text (in its style) cut with the visible mark at the longest length whose
    layout at ``width`` is no taller than ``height``: O(log n) layouts of text already bounded."""
    from reportlab.platypus import Paragraph

    text, total = mark.parse(para.getPlainText())
    bullet = getattr(para, "bulletText", None)

    def cut(k: int):
        return Paragraph(_xml_escape(text[:k].rstrip() + " " + mark(total)), para.style, bulletText=bullet)

    lo, hi = 0, len(text)
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if cut(mid).wrap(width, 1e9)[1] <= height:
            lo = mid
        else:
            hi = mid - 1
    return cut(lo)

_FONTS_REGISTERED = False


def _register_fonts() -> None:
    global _FONTS_REGISTERED
    if _FONTS_REGISTERED:
        return
    from reportlab.lib.fonts import addMapping
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    files = font_files()
    for role, name in _FONT_NAMES.items():
        pdfmetrics.registerFont(TTFont(name, str(files[role])))
    fam = _FONT_NAMES["regular"]
    addMapping(fam, 0, 0, _FONT_NAMES["regular"])
    addMapping(fam, 1, 0, _FONT_NAMES["bold"])
    addMapping(fam, 0, 1, _FONT_NAMES["italic"])
    addMapping(fam, 1, 1, _FONT_NAMES["bold_italic"])
    _FONTS_REGISTERED = True


_VERDICT_COLOURS = {"pass": "#2E6B30", "review": "#9A5B00", "fail": "#A11D21"}
_VERDICT_FILLS = {"pass": "#E8F3E8", "review": "#FFF1D9", "fail": "#FBE4E4"}
_CAUTION_BORDER = "#7A3E00"
_CAUTION_FILL = "#FFF3D0"
_HEAD_FILL = "#E4E9F0"
_RULE = "#9AA5B1"


class _Layout:
    """Shared styles, page furniture and building blocks for both documents."""

    def __init__(self, tpl: dict):
        _register_fonts()
        from reportlab.lib import colors
        from reportlab.lib.enums import TA_CENTER, TA_LEFT
        from reportlab.lib.pagesizes import A4, letter
        from reportlab.lib.styles import ParagraphStyle
        from reportlab.lib.units import mm

        self.tpl = tpl
        self.tx = _Text()
        self.tx.cut_mark = _CutMark(self.tpl["labels"]["truncated"], self.tx.clean)
        self.tx.substituted = 0  # reading the mark's wording is not showing it
        self.colors = colors
        self.mm = mm
        self.pagesize = A4 if tpl["layout"]["page_size"].lower() == "a4" else letter
        self.margin = 18 * mm
        self.frame_width = self.pagesize[0] - 2 * self.margin
        self.max_cell_height = (self.pagesize[1] - 2 * self.margin) * _MAX_CELL_HEIGHT_FRACTION
        self.max_box_height = (self.pagesize[1] - 2 * self.margin) * 0.8  # a one-cell box (caution, verdict)
        self.figures = 0
        f = _FONT_NAMES
        base = dict(fontName=f["regular"], fontSize=9, leading=11.5, alignment=TA_LEFT, splitLongWords=1,
                    bulletFontName=f["regular"])
        self.st = {
            "body": ParagraphStyle("body", spaceAfter=4, **base),
            "small": ParagraphStyle("small", **{**base, "fontSize": 7.8, "leading": 9.6}),
            "cell": ParagraphStyle("cell", **{**base, "fontSize": 8, "leading": 9.8}),
            "cellb": ParagraphStyle("cellb", **{**base, "fontName": f["bold"], "fontSize": 8, "leading": 9.8}),
            "head": ParagraphStyle("head", **{**base, "fontName": f["bold"], "fontSize": 8, "leading": 9.8}),
            "bullet": ParagraphStyle("bullet", leftIndent=12, bulletIndent=2, spaceAfter=2, **base),
            "h1": ParagraphStyle("h1", **{**base, "fontName": f["bold"], "fontSize": 11.5, "leading": 14},
                                 spaceBefore=10, spaceAfter=5, keepWithNext=1),
            "h1_free": ParagraphStyle("h1_free", **{**base, "fontName": f["bold"], "fontSize": 11.5, "leading": 14},
                                      spaceBefore=10, spaceAfter=5),
            "h2": ParagraphStyle("h2", **{**base, "fontName": f["bold"], "fontSize": 9.5, "leading": 12},
                                 spaceBefore=6, spaceAfter=3, keepWithNext=1),
            "site": ParagraphStyle("site", **{**base, "fontName": f["bold"], "fontSize": 9.5, "leading": 12,
                                              "textColor": colors.HexColor("#444444")}),
            "unit": ParagraphStyle("unit", **{**base, "fontSize": 8.5, "textColor": colors.HexColor("#555555")}),
            "title": ParagraphStyle("title", **{**base, "fontName": f["bold"], "fontSize": 17, "leading": 21},
                                    spaceBefore=2, spaceAfter=8),
            "caution_h": ParagraphStyle("caution_h", **{**base, "fontName": f["bold"], "fontSize": 11,
                                                        "leading": 14, "textColor": colors.HexColor(_CAUTION_BORDER)},
                                        spaceAfter=3),
            "caution": ParagraphStyle("caution", **{**base, "fontSize": 9, "leading": 11.5}, spaceAfter=3),
            "verdict": ParagraphStyle("verdict", **{**base, "fontName": f["bold"], "fontSize": 15, "leading": 19},
                                      spaceAfter=3),
            "caption": ParagraphStyle("caption", **{**base, "fontName": f["italic"], "fontSize": 7.8,
                                                    "leading": 9.6}, spaceBefore=2, spaceAfter=6),
            "center": ParagraphStyle("center", **{**base, "alignment": TA_CENTER}),
        }

    # -- helpers ---------------------------------------------------------------
    def T(self, dotted: str) -> str:
        table, key = dotted.split(".", 1)
        return self.tpl[table][key]

    def L(self, key: str, **fields) -> str:
        text = self.tpl["labels"][key]
        return text.format(**fields) if fields else text

    def P(self, markup: str, style: str = "body"):
        from reportlab.platypus import Paragraph

        return Paragraph(markup, self.st[style])

    def user(self, value, style: str = "cell", limit: int | None = _MAX_CELL_CHARS):
        """Paragraph of user-supplied text, printed literally."""
        text = "" if value is None else str(value)
        if limit is not None:
            text = self.tx.cut(text, limit)
        return self.P(self.tx.para(text), style)

    def free_text(self, value, style: str = "body") -> list:
        """Free text (notes) as paragraphs: one per blank-line-separated block, long blocks in
        pieces, so that laying it out takes time in proportion to its length."""
        return [self.P(markup, style) for markup in self.tx.pieces(value)]

    def fit_cells(self, rows: list, widths, padding: float, budget: float | None = None) -> list:
        """A table's cells with every paragraph kept within ``budget`` points of height (default
        ``max_cell_height``), since a table row cannot be split across pages and one taller than
        a page makes the whole document fail. The paragraphs of one cell share the budget: when
        their heights at the column's width (less ``padding``) add up to more, the tallest are
        cut, as plain text with the visible mark, to a common height. Cells that fit are
        returned as they are."""
        from reportlab.platypus import Paragraph

        budget = self.max_cell_height if budget is None else budget
        floor = 3 * self.st["cell"].leading

        def fit(cell, width):
            items = list(cell) if isinstance(cell, (list, tuple)) else [cell]
            if not any(isinstance(c, Paragraph) for c in items):
                return cell
            # each line holds a character at least: short cells fit without being laid out twice
            if sum(len(getattr(c, "text", "")) * c.style.leading + c.getSpaceBefore() + c.getSpaceAfter()
                   for c in items if isinstance(c, Paragraph)) <= budget - 10 * len(items):
                return cell
            fixed, heights = 0.0, []
            for c in items:
                if hasattr(c, "wrap"):
                    h = c.wrap(width, 1e9)[1] + c.getSpaceBefore() + c.getSpaceAfter()
                    if isinstance(c, Paragraph):
                        heights.append(h)
                    else:
                        fixed += h
            cap = _water_level(heights, budget - fixed)
            if math.isinf(cap):
                return cell
            cap = max(cap, floor)
            out = []
            for c in items:
                if isinstance(c, Paragraph):
                    room = cap - c.getSpaceBefore() - c.getSpaceAfter()
                    if c.wrap(width, 1e9)[1] > room:
                        c = _cut_to_height(c, room, width, self.tx.cut_mark)
                out.append(c)
            return out if isinstance(cell, (list, tuple)) else out[0]

        return [[fit(c, max(w - padding, 1.0)) for c, w in zip(row, widths)] for row in rows]

    def path(self, value, width: float, style: str = "cell"):
        """A dotted input path, broken after dots when it is wider than the cell."""
        from reportlab.pdfbase.pdfmetrics import stringWidth

        text = self.tx.clean("" if value is None else str(value)[:_MAX_CELL_CHARS])
        st = self.st[style]
        if stringWidth(text, st.fontName, st.fontSize) <= width or "." not in text:
            return self.P(_xml_escape(text), style)
        parts = [p + "." for p in text.split(".")[:-1]] + [text.split(".")[-1]]
        lines, cur = [], ""
        for part in parts:
            if cur and stringWidth(cur + part, st.fontName, st.fontSize) > width:
                lines.append(cur)
                cur = part
            else:
                cur += part
        lines.append(cur)
        return self.P("<br/>".join(_xml_escape(x) for x in lines), style)

    def prose(self, text: str, style: str = "body") -> list:
        out = []
        for kind, chunk in _template_blocks(text):
            if kind == "li":
                out.append(self._bullet(self.tx.para(chunk, keep_newlines=False), style))
            else:
                out.append(self.P(self.tx.para(chunk, keep_newlines=False), style))
        return out

    def _bullet(self, markup: str, style: str = "body"):
        from reportlab.lib.styles import ParagraphStyle
        from reportlab.platypus import Paragraph

        parent = self.st[style]
        st = ParagraphStyle(f"{parent.name}-li", parent=parent, leftIndent=12, bulletIndent=2, spaceAfter=2)
        return Paragraph(markup, st, bulletText="\u2022")

    def heading(self, number: int | None, key: str, before_table: bool = False):
        """Section heading; kept with what follows.  Before a long (splittable) table
        use ``before_table``: a conditional page break instead of keep-with-next, so
        the table starts on the current page when a few rows fit."""
        text = self.tx.para(self.T(f"headings.{key}"), keep_newlines=False)
        markup = f"{number}.&nbsp;&nbsp;{text}" if number else text
        if not before_table:
            return self.P(markup, "h1")
        from reportlab.platypus import CondPageBreak, Paragraph

        return [CondPageBreak(90), Paragraph(markup, self.st["h1_free"])]

    def table(self, rows, widths, header: bool = True, zebra: bool = True, extra_style=()):
        from reportlab.platypus import LongTable, TableStyle

        t = LongTable(self.fit_cells(rows, widths, 8), colWidths=widths, repeatRows=1 if header else 0, splitByRow=1,
                      hAlign="LEFT")
        cmds = [
            ("FONTNAME", (0, 0), (-1, -1), _FONT_NAMES["regular"]),
            ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ("LEFTPADDING", (0, 0), (-1, -1), 4),
            ("RIGHTPADDING", (0, 0), (-1, -1), 4),
            ("TOPPADDING", (0, 0), (-1, -1), 2.5),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 2.5),
            ("LINEBELOW", (0, 0), (-1, -1), 0.3, self.colors.HexColor("#C9CED6")),
            ("BOX", (0, 0), (-1, -1), 0.6, self.colors.HexColor(_RULE)),
        ]
        if header:
            cmds += [("BACKGROUND", (0, 0), (-1, 0), self.colors.HexColor(_HEAD_FILL)),
                     ("LINEBELOW", (0, 0), (-1, 0), 0.8, self.colors.HexColor(_RULE))]
        if zebra and len(rows) > 2:
            cmds.append(("ROWBACKGROUNDS", (0, 1 if header else 0), (-1, -1),
                         [self.colors.white, self.colors.HexColor("#F6F7F9")]))
        t.setStyle(TableStyle(cmds + list(extra_style)))
        return t

    def kv_table(self, pairs, label_frac: float = 0.42):
        """Two-column label / value table; values are markup already made safe."""
        w = self.frame_width
        rows = [[self.P(self.tx.para(k, keep_newlines=False), "cellb"), self.P(v, "cell")] for k, v in pairs]
        return self.table(rows, [w * label_frac, w * (1 - label_frac)], header=False, zebra=True)

    def caution_box(self):
        from reportlab.platypus import Table, TableStyle

        inner = [self.P(self.tx.para(self.T("caution.heading"), keep_newlines=False), "caution_h")]
        inner += self.prose(self.T("caution.text"), "caution")
        box = Table(self.fit_cells([[inner]], [self.frame_width], 18, self.max_box_height),
                    colWidths=[self.frame_width], hAlign="LEFT")
        box.setStyle(TableStyle([
            ("FONTNAME", (0, 0), (-1, -1), _FONT_NAMES["regular"]),
            ("BOX", (0, 0), (-1, -1), 2.2, self.colors.HexColor(_CAUTION_BORDER)),
            ("INNERGRID", (0, 0), (-1, -1), 0, self.colors.white),
            ("BACKGROUND", (0, 0), (-1, -1), self.colors.HexColor(_CAUTION_FILL)),
            ("LEFTPADDING", (0, 0), (-1, -1), 9),
            ("RIGHTPADDING", (0, 0), (-1, -1), 9),
            ("TOPPADDING", (0, 0), (-1, -1), 7),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 6),
            ("LINEBEFORE", (0, 0), (0, -1), 7, self.colors.HexColor(_CAUTION_BORDER)),
        ]))
        return box

    def chart_fonts(self):
        from screening.report.charts import ChartFonts

        return ChartFonts(regular=_FONT_NAMES["regular"], bold=_FONT_NAMES["bold"], size=7.5)

    def figure_number(self) -> int:
        self.figures += 1
        return self.figures

    def masthead(self, title_key: str) -> list:
        out = [self.P(self.tx.para(self.T("site.name"), keep_newlines=False), "site")]
        if self.T("site.unit").strip():
            out.append(self.P(self.tx.para(self.T("site.unit"), keep_newlines=False), "unit"))
        out.append(self.P(self.tx.para(self.T(f"document.{title_key}"), keep_newlines=False), "title"))
        return out

    # -- document --------------------------------------------------------------
    def build(self, story: list, case_label: str, header_title: str, meta: dict) -> bytes:
        import io

        from reportlab.lib import colors
        from reportlab.pdfbase.pdfmetrics import stringWidth
        from reportlab.pdfgen import canvas as rl_canvas
        from reportlab.platypus import SimpleDocTemplate

        from screening.report.charts import fit_text

        footer_text = self.tx.clean(self.T("footer.text"))
        page_word = self.tx.clean(self.T("footer.page_label"))
        of_word = self.tx.clean(self.T("footer.of_label"))
        site = self.tx.clean(self.T("site.name"))
        case_label = self.tx.clean(case_label)
        header_title = self.tx.clean(header_title)
        regular, bold = _FONT_NAMES["regular"], _FONT_NAMES["bold"]
        pw, ph = self.pagesize
        m = self.margin

        class _NumberedCanvas(rl_canvas.Canvas):
            def __init__(self, *args, **kwargs):
                super().__init__(*args, **kwargs)
                self._saved_pages = []

            def showPage(self):
                self._saved_pages.append(dict(self.__dict__))
                self._startPage()

            def save(self):
                total = len(self._saved_pages)
                for state in self._saved_pages:
                    self.__dict__.update(state)
                    self._furniture(total)
                    super().showPage()
                super().save()

            def _furniture(self, total):
                n = self._pageNumber
                self.saveState()
                self.setStrokeColor(colors.HexColor(_RULE))
                self.setLineWidth(0.5)
                self.line(m, m - 8, pw - m, m - 8)
                self.setFillColor(colors.HexColor("#333333"))
                self.setFont(regular, 7.5)
                counter = f"{page_word} {n} {of_word} {total}"
                width = pw - 2 * m
                # The footer text and the page counter always print in full; the case id
                # gets what room is left (it is printed in full in the title block).
                right_w = stringWidth(counter, regular, 7.5)
                centre = fit_text(footer_text, bold, 7.5, width - 2 * right_w - 24)
                centre_w = stringWidth(centre, bold, 7.5)
                left = fit_text(case_label, regular, 7.5, max(width / 2 - centre_w / 2 - 10, 30))
                self.drawString(m, m - 18, left)
                self.setFont(bold, 7.5)
                self.drawCentredString(pw / 2, m - 18, centre)
                self.setFont(regular, 7.5)
                self.drawRightString(pw - m, m - 18, counter)
                if n > 1:
                    self.setFont(regular, 7.5)
                    self.drawString(m, ph - m + 10, fit_text(f"{site} \u2014 {header_title}", regular, 7.5,
                                                             (pw - 2 * m) * 0.62))
                    self.drawRightString(pw - m, ph - m + 10, fit_text(case_label, regular, 7.5,
                                                                       (pw - 2 * m) * 0.36))
                    self.line(m, ph - m + 6, pw - m, ph - m + 6)
                self.restoreState()

        buf = io.BytesIO()
        doc = SimpleDocTemplate(
            buf, pagesize=self.pagesize, leftMargin=m, rightMargin=m, topMargin=m, bottomMargin=m,
            title=self.tx.clean(meta.get("title", "")), author=self.tx.clean(meta.get("author", "")),
            subject=self.tx.clean(meta.get("subject", "")), creator=self.tx.clean(meta.get("creator", "")),
            keywords=self.tx.clean(meta.get("keywords", "")), invariant=_invariant(),
            initialFontName=regular, initialFontSize=9, initialLeading=11.5,
        )
        doc.build(story, canvasmaker=_NumberedCanvas)
        return buf.getvalue()


def _verdict_key(verdict) -> str:
    return verdict if verdict in ("pass", "review", "fail") else ""
