"""PDF review memo and register summary.

The writer only formats numbers it is given in a result dict; it does no physics.
All prose a site may change comes from the template set (``templates/memo.toml``);
this module holds layout.  reportlab is imported only when a PDF is actually
rendered, so importing this module is cheap.

Public API
----------
``render_memo(result, templates_dir=None) -> bytes``
``write_memo(result, path, templates_dir=None) -> None``  (atomic)
``render_register_summary(results, errors, templates_dir=None, summarised=False) -> bytes``
``write_register_summary(results, errors, path, templates_dir=None, summarised=False) -> None``  (atomic)
``summarise_register_results(results, templates_dir=None, start=0) -> list[dict]``  (the summary's
per-vessel rows, for callers that screen in parts and pass ``summarised=True``)
``load_templates(templates_dir=None) -> dict``
``template_hashes(templates_dir=None) -> dict[str, str]``
``default_templates_dir() -> Path``
``TemplateError``, ``MemoInputError``

Optional result keys for the uncertainty and allowable-value parts
------------------------------------------------------------------
``uncertainty`` (dict or null): Monte Carlo summary (samples, accepted, rejected,
seed, sampling, inputs, first_limit, limits with probabilities, their standard
errors and 5/50/95 % times, ranked sensitivity swings, method, note).  When
present the memo gets an "Uncertainty" section after the results, runaway,
boiling and recovery sections and before the verdict.
``uncertainty_cdf`` (or ``_uncertainty_cdf``, or ``uncertainty["_cdf"]``):
``{"time_s": [...], "probability": [...], "n": ...}``, the empirical cumulative
distribution of the time to the first limit, for the chart only.
``allowable_values`` (list or null): per scanned input, its unit text, case value,
scanned range and the values where the verdict changes (``changes``; empty means
no change), all in the case's own units; printed at the end of the results section.
Times of null mean "not reached within the horizon" throughout.
"""
from __future__ import annotations

import copy
import datetime as _dt
import hashlib
import math
import os
import tempfile
import tomllib
import unicodedata
from collections.abc import Mapping, Sequence
from pathlib import Path
from xml.sax.saxutils import escape as _xml_escape

__all__ = [
    "MemoInputError",
    "TemplateError",
    "default_templates_dir",
    "font_files",
    "load_templates",
    "render_memo",
    "render_register_summary",
    "summarise_register_results",
    "template_hashes",
    "write_memo",
    "write_register_summary",
]

TEMPLATE_FILE = "memo.toml"
_FONT_FILES = {
    "regular": "Vera.ttf",
    "bold": "VeraBd.ttf",
    "italic": "VeraIt.ttf",
    "bold_italic": "VeraBI.ttf",
}
_FONT_NAMES = {
    "regular": "HSVera",
    "bold": "HSVera-Bold",
    "italic": "HSVera-Italic",
    "bold_italic": "HSVera-BoldItalic",
}
_MAX_CELL_CHARS = 1500
_UNIT_SYMBOL = {"degC": "\u00b0C", "degF": "\u00b0F", "K": "K", "degR": "\u00b0R"}
_UNIT_ALIASES = {
    "degc": "degC", "°c": "degC", "celsius": "degC", "degree_celsius": "degC", "c": "degC",
    "degf": "degF", "°f": "degF", "fahrenheit": "degF", "degree_fahrenheit": "degF", "f": "degF",
    "k": "K", "kelvin": "K",
    "degr": "degR", "°r": "degR", "rankine": "degR", "degree_rankine": "degR", "r": "degR",
}


class TemplateError(ValueError):
    """A template file is missing, malformed, or has a key of the wrong kind."""

    def __init__(self, message: str, file: str | os.PathLike | None = None, key: str | None = None):
        self.file = str(file) if file is not None else None
        self.key = key
        where = []
        if self.file:
            where.append(f"file {self.file}")
        if key:
            where.append(f"key '{key}'")
        super().__init__(f"{message} ({', '.join(where)})" if where else message)


class MemoInputError(ValueError):
    """The result dict cannot be laid out (a value of the wrong kind)."""


# --------------------------------------------------------------------------- templates


def default_templates_dir() -> Path:
    """The shipped default template folder.

    Looks beside the package (source checkout / editable install) first, then in
    ``screening/data/templates`` (non-editable install).
    """
    here = Path(__file__).resolve().parent
    for cand in (here.parent / "templates", here / "data" / "templates"):
        if (cand / TEMPLATE_FILE).is_file():
            return cand
    raise TemplateError("default template set not found; looked in "
                        f"{here.parent / 'templates'} and {here / 'data' / 'templates'}",
                        file=TEMPLATE_FILE)


def _read_toml(path: Path) -> dict:
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise TemplateError(f"cannot read template file: {exc.strerror or exc}", file=path) from exc
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise TemplateError(f"template file is not UTF-8 (byte {exc.start})", file=path) from exc
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise TemplateError(f"malformed TOML: {exc}", file=path) from exc


def _kind(value) -> str:
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, int):
        return "whole number"
    if isinstance(value, float):
        return "number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, list):
        return "list"
    if isinstance(value, dict):
        return "table"
    return type(value).__name__


def _merge(default: dict, override: dict, path: Path, prefix: str = "") -> dict:
    out = copy.deepcopy(default)
    for key, value in override.items():
        dotted = f"{prefix}{key}"
        if key not in default:
            raise TemplateError("unknown template key (typo?)", file=path, key=dotted)
        want = default[key]
        if isinstance(want, dict):
            if not isinstance(value, dict):
                raise TemplateError(f"expected a table, got {_kind(value)}", file=path, key=dotted)
            out[key] = _merge(want, value, path, dotted + ".")
            continue
        if isinstance(want, list):
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                raise TemplateError("expected a list of texts", file=path, key=dotted)
        elif isinstance(want, bool) or isinstance(value, bool):
            if type(want) is not type(value):
                raise TemplateError(f"expected {_kind(want)}, got {_kind(value)}", file=path, key=dotted)
        elif isinstance(want, int):
            if not isinstance(value, int) or value < 0:
                raise TemplateError(f"expected a whole number ≥ 0, got {_kind(value)}", file=path, key=dotted)
        elif isinstance(want, str) and not isinstance(value, str):
            raise TemplateError(f"expected text, got {_kind(value)}", file=path, key=dotted)
        out[key] = value
    return out


def _check_values(tpl: dict, path: Path) -> None:
    size = tpl.get("layout", {}).get("page_size")
    if str(size).lower() not in ("a4", "letter"):
        raise TemplateError('page_size must be "A4" or "letter"', file=path, key="layout.page_size")
    for key in ("warnings_count", "no_warnings_count"):
        _check_format(tpl, path, "labels", key, ("n", "section"))
    for key, fields in (("not_reached", ("horizon",)), ("truncated", ("n",)), ("chart_y", ("unit",)),
                        ("chart_response_line", ("time",)), ("chart_recovery_start", ("time",)),
                        ("chart_caption", ("n",)), ("chart_dropped", ("n",)), ("critical_ambient_method", ("method",)),
                        ("criticality_class_value", ("n",)), ("hb_x", ("unit",)), ("hb_y", ("unit",)),
                        ("hb_ambient", ("temp",)), ("hb_critical_ambient", ("temp",)),
                        ("hb_critical_ambient_lumped", ("temp",)), ("hb_caption", ("n",)),
                        ("recovery_caption", ("n",)), ("glyph_note", ("n",)),
                        ("allowable_range_value", ("low", "high")), ("allowable_change", ("value", "below", "above")),
                        ("allowable_bracket", ("low", "high")), ("allowable_throughout", ("verdict",)),
                        ("unc_run", ("samples", "accepted", "rejected", "seed", "sampling")),
                        ("unc_none_of", ("n",)), ("unc_all_of", ("n",)), ("unc_limits_note", ("horizon",)),
                        ("unc_tornado_x", ("limit",)), ("unc_tornado_nominal", ("time",)),
                        ("unc_tornado_caption", ("n", "limit")), ("unc_tornado_truncated", ("shown", "total")),
                        ("unc_sens_note", ("limit",)), ("unc_cdf_nominal", ("time",)),
                        ("unc_cdf_caption", ("n", "limit", "samples")), ("unc_cdf_caption_end", ("end",)),
                        ("unc_cdf_empty", ("limit",))):
        _check_format(tpl, path, "labels", key, fields)


def _check_format(tpl: dict, path: Path, table: str, key: str, fields: tuple[str, ...]) -> None:
    text = tpl[table][key]
    try:
        text.format(**{f: "x" for f in fields})
    except (KeyError, IndexError, ValueError) as exc:
        raise TemplateError(f"bad placeholder {exc}; this text may use only "
                            + ", ".join("{" + f + "}" for f in fields), file=path, key=f"{table}.{key}") from None


def _template_paths(templates_dir) -> tuple[Path, Path | None]:
    default = default_templates_dir() / TEMPLATE_FILE
    if templates_dir is None:
        return default, None
    folder = Path(templates_dir)
    if not folder.is_dir():
        raise TemplateError("templates folder does not exist", file=folder)
    custom = folder / TEMPLATE_FILE
    if custom.resolve() == default.resolve() or not custom.exists():
        return default, None
    return default, custom


def load_templates(templates_dir: str | os.PathLike | None = None) -> dict:
    """Load the template set: the defaults, overlaid by ``templates_dir/memo.toml`` if present.

    Raises :class:`TemplateError` (naming file and key) for a malformed file, an
    unknown key, a value of the wrong kind or a bad ``{placeholder}``.
    """
    default_path, custom_path = _template_paths(templates_dir)
    tpl = _read_toml(default_path)
    checked = _merge(tpl, {}, default_path)
    _check_values(checked, default_path)
    if custom_path is not None:
        checked = _merge(checked, _read_toml(custom_path), custom_path)
        _check_values(checked, custom_path)
    return checked


def _reportlab_fonts_dir() -> Path:
    import reportlab  # the package root only; cheap

    return Path(reportlab.__file__).resolve().parent / "fonts"


def font_files() -> dict[str, Path]:
    """Paths of the TrueType fonts embedded in every memo."""
    d = _reportlab_fonts_dir()
    return {role: d / name for role, name in _FONT_FILES.items()}


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def template_hashes(templates_dir: str | os.PathLike | None = None) -> dict[str, str]:
    """sha256 of every template and font file a memo would use, for the run record.

    Keys: ``"templates/default/memo.toml"``, ``"templates/custom/memo.toml"`` (only
    when ``templates_dir`` has its own file) and ``"fonts/<file>"``.
    """
    default_path, custom_path = _template_paths(templates_dir)
    out = {f"templates/default/{TEMPLATE_FILE}": _sha256(default_path)}
    if custom_path is not None:
        out[f"templates/custom/{TEMPLATE_FILE}"] = _sha256(custom_path)
    for path in font_files().values():
        out[f"fonts/{path.name}"] = _sha256(path)
    return out


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
        """Escaped text for a reportlab Paragraph: prints literally, never as markup."""
        text = _xml_escape(self.clean(value, keep_newlines=keep_newlines))
        return text.replace("\n", "<br/>")


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
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)  # mkstemp makes 0600; give the usual permissions
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


def write_memo(result: Mapping, path: str | os.PathLike, templates_dir: str | os.PathLike | None = None) -> None:
    """Render the review memo for ``result`` and write it atomically to ``path``."""
    _atomic_write(lambda: render_memo(result, templates_dir), path)


def write_register_summary(results: Sequence[Mapping], errors: Sequence, path: str | os.PathLike,
                           templates_dir: str | os.PathLike | None = None, summarised: bool = False) -> None:
    """Render the register summary and write it atomically to ``path``."""
    _atomic_write(lambda: render_register_summary(results, errors, templates_dir, summarised), path)


# --------------------------------------------------------------------------- reportlab layer

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
        self.colors = colors
        self.mm = mm
        self.pagesize = A4 if tpl["layout"]["page_size"].lower() == "a4" else letter
        self.margin = 18 * mm
        self.frame_width = self.pagesize[0] - 2 * self.margin
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
        if limit is not None and len(text) > limit:
            text = text[:limit] + " " + self.L("truncated", n=len(text))
        return self.P(self.tx.para(text), style)

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

        t = LongTable(rows, colWidths=widths, repeatRows=1 if header else 0, splitByRow=1, hAlign="LEFT")
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
        box = Table([[inner]], colWidths=[self.frame_width], hAlign="LEFT")
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
        from .memo_charts import ChartFonts

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

        from .memo_charts import fit_text

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


# --------------------------------------------------------------------------- memo


_GLYPH_SLOT = object()


def _verdict_key(verdict) -> str:
    return verdict if verdict in ("pass", "review", "fail") else ""


class _Memo:
    def __init__(self, result: Mapping, tpl: dict):
        if not isinstance(result, Mapping):
            raise MemoInputError(f"result: expected a dict, got {type(result).__name__}")
        self.r = result
        self.lay = _Layout(tpl)
        self.tx = self.lay.tx
        units = _mapping(result.get("units"), "units") or {}
        self.u = _Units(_str(units.get("temperature"), "units.temperature"))
        self.meta = _mapping(result.get("meta"), "meta") or {}
        self.horizon = self.num("horizon_s")
        self.limits = [self._limit(i, x) for i, x in enumerate(_seq(result.get("limits"), "limits"))]
        self.warnings = [_any_text(w) for w in _seq(result.get("warnings"), "warnings")]

    # -- access ---------------------------------------------------------------
    def num(self, key: str, src: Mapping | None = None, where: str | None = None) -> float | None:
        src = self.r if src is None else src
        return _num(src.get(key), where or key)

    def plot(self, key: str):
        """Plotting arrays: ``history`` etc., or the engine's underscored ``_history`` etc."""
        value = self.r.get(key)
        return value if value is not None else self.r.get("_" + key)

    def _limit(self, i: int, item) -> dict:
        where = f"limits[{i}]"
        m = _mapping(item, where) or {}
        return {
            "name": _str(m.get("name"), f"{where}.name") or f"limit {i + 1}",
            "temperature_K": _num(m.get("temperature_K"), f"{where}.temperature_K"),
            "time_s": _num(m.get("time_s"), f"{where}.time_s"),
            "reached": bool(m.get("reached")) if m.get("reached") is not None else m.get("time_s") is not None,
            "margin_s": _num(m.get("margin_s"), f"{where}.margin_s"),
        }

    def L(self, key, **kw):
        return self.lay.L(key, **kw)

    def esc(self, value) -> str:
        return self.tx.para(value)

    def na(self) -> str:
        return self.esc(self.L("not_applicable"))

    def temp(self, k: float | None, missing: str | None = None) -> str:
        return self.esc(self.u.full(k)) if k is not None else self.esc(missing or self.L("not_applicable"))

    def hrs(self, s: float | None, missing: str | None = None) -> str:
        return self.esc(_hours(s)) if s is not None else self.esc(missing or self.L("not_applicable"))

    def horizon_text(self) -> str:
        return _hours_short(self.horizon) if self.horizon is not None else "?"

    def markup(self, key: str, **fields) -> str:
        """A template label with its placeholders replaced by markup that is already safe.

        The template's own text is escaped; only the inserted fields carry markup."""
        import string

        out = []
        for literal, name, _spec, _conv in string.Formatter().parse(self.lay.tpl["labels"][key]):
            out.append(self.esc(literal))
            if name is not None:
                out.append(fields[name])
        return "".join(out)

    def verdict_markup(self, verdict) -> str:
        """A verdict word from the result, coloured when it is one of pass / review / fail."""
        text = _any_text(verdict)
        key = _verdict_key(text)
        if key:
            return f'<b><font color="{_VERDICT_COLOURS[key]}">{self.esc(self.L("verdict_" + key))}</font></b>'
        return f"<b>{self.esc(text or self.L('not_given'))}</b>"

    def uncertainty(self) -> Mapping | None:
        return _mapping(self.r.get("uncertainty"), "uncertainty")

    # -- sections ---------------------------------------------------------------
    def has_runaway(self) -> bool:
        keys = ("tmr_adiabatic_s", "tmr_at_mtsr_s", "t_d24_K", "critical_ambient_temperature_K",
                "critical_temperature_K", "no_return_temperature_K", "adiabatic_temperature_rise_K", "mtsr_K",
                "maximum_technical_temperature_K", "criticality_class")
        return any(self.r.get(k) is not None for k in keys) or self.plot("heat_balance") is not None

    def has_recovery(self) -> bool:
        det_given = "detection_time_s" in self.r and (self.r.get("detection_time_s") is None
                                                      or self.num("detection_time_s") != 0)
        return (self.r.get("response_time_s") is not None or det_given or self.r.get("recovery") is not None
                or self.plot("recovery_history") is not None)

    def build(self) -> bytes:
        lay = self.lay
        order = ["scope", "inputs", "method", "results", "chart"]
        if self.has_runaway():
            order.append("runaway")
        if self.r.get("boiling") is not None:
            order.append("boiling")
        if self.has_recovery():
            order.append("recovery")
        if self.uncertainty() is not None:
            order.append("uncertainty")
        order += ["verdict", "warnings", "assumptions", "caution_end", "signoff"]
        self.numbers = {key: i + 1 for i, key in enumerate(order)}

        story = []
        story += lay.masthead("title")
        story.append(self.title_block())
        story.append(self._spacer(8))
        story.append(lay.caution_box())
        story.append(self._spacer(8))
        story.append(self.summary_box())
        for key in order:
            story += getattr(self, f"sec_{key.replace('-', '_')}")()
        slot = story.index(_GLYPH_SLOT)
        if self.tx.substituted:
            story[slot] = self.lay.P(self.esc(self.L("glyph_note", n=self.tx.substituted)), "body")
        else:
            del story[slot]

        case_id = _str(self.r.get("id"), "id") or ""
        title = _str(self.r.get("title"), "title") or ""
        tool = _str(self.r.get("tool_version"), "tool_version") or ""
        meta = {
            "title": f"{case_id} \u2014 {title}" if title else case_id,
            "author": _str(self.meta.get("prepared_by"), "meta.prepared_by") or "",
            "subject": self.lay.T("document.title"),
            "creator": f"heatscreen {tool}".strip(),
            "keywords": _str(self.r.get("input_hash"), "input_hash") or "",
        }
        header = self.lay.T("document.title")
        return lay.build(story, case_id, header, meta)

    def _spacer(self, h):
        from reportlab.platypus import Spacer

        return Spacer(1, h)

    def title_block(self):
        r, meta = self.r, self.meta
        given = self.L("not_given")

        def txt(v):
            return self.esc(v) if v not in (None, "") else f"<i>{self.esc(given)}</i>"

        rule = _mapping(r.get("rule_set"), "rule_set") or {}
        rule_txt = _str(rule.get("name"), "rule_set.name")
        pairs = [
            (self.L("case_id"), f"<b>{txt(_str(r.get('id'), 'id'))}</b>"),
            (self.L("title"), txt(_str(r.get("title"), "title"))),
            (self.L("date"), self.esc(_date_text())),
            (self.L("prepared_by"), txt(_str(meta.get("prepared_by"), "meta.prepared_by"))),
            (self.L("prepared_for"), txt(_str(meta.get("prepared_for"), "meta.prepared_for"))),
            (self.L("revision"), txt(_str(meta.get("revision"), "meta.revision"))),
            (self.L("tool_version"), txt(_str(r.get("tool_version"), "tool_version"))),
            (self.L("input_hash"), txt(_str(r.get("input_hash"), "input_hash"))),
            (self.L("rule_set"), txt(rule_txt)),
        ]
        return self.lay.kv_table(pairs, label_frac=0.24)

    def verdict_parts(self):
        verdict = _str(self.r.get("verdict"), "verdict")
        key = _verdict_key(verdict)
        if key:
            word = self.L(f"verdict_{key}")
        else:
            word = verdict if verdict else self.L("verdict_missing")
        reasons = [_any_text(x) for x in _seq(self.r.get("reasons"), "reasons")]
        return key, word, reasons

    def _verdict_box(self, body: list):
        from reportlab.platypus import Table, TableStyle

        key, _, _ = self.verdict_parts()
        border = self.lay.colors.HexColor(_VERDICT_COLOURS.get(key, "#444444"))
        fill = self.lay.colors.HexColor(_VERDICT_FILLS.get(key, "#EEEEEE"))
        box = Table([[body]], colWidths=[self.lay.frame_width], hAlign="LEFT")
        box.setStyle(TableStyle([
            ("FONTNAME", (0, 0), (-1, -1), _FONT_NAMES["regular"]),
            ("BOX", (0, 0), (-1, -1), 1.6, border),
            ("BACKGROUND", (0, 0), (-1, -1), fill),
            ("LEFTPADDING", (0, 0), (-1, -1), 9),
            ("RIGHTPADDING", (0, 0), (-1, -1), 9),
            ("TOPPADDING", (0, 0), (-1, -1), 6),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 6),
        ]))
        return box

    def _verdict_lines(self) -> list:
        key, word, reasons = self.verdict_parts()
        colour = _VERDICT_COLOURS.get(key, "#333333")
        out = [self.lay.P(f'{self.esc(self.L("verdict"))}: <font color="{colour}">{self.esc(word)}</font>',
                          "verdict")]
        if reasons:
            out.append(self.lay.P(f"<b>{self.esc(self.L('reasons'))}:</b>", "body"))
            out += [self.lay._bullet(self.esc(x)) for x in reasons]
        else:
            out.append(self.lay.P(f"<i>{self.esc(self.L('no_reasons'))}</i>", "body"))
        return out

    def first_limit(self):
        reached = [x for x in self.limits if x["time_s"] is not None and x["reached"]]
        if not reached:
            return None
        return min(reached, key=lambda x: x["time_s"])

    def summary_box(self):
        body = self._verdict_lines()
        if self.r.get("limit_exceeded_at_start"):
            body.append(self.lay.P(f"<b>{self.esc(self.L('exceeded_at_start'))}</b>", "body"))
        first = self.first_limit()
        if first is not None:
            body.append(self.lay.P(
                f"<b>{self.esc(self.L('first_limit'))}:</b> {self.esc(first['name'])}, "
                f"{self.hrs(first['time_s'])}", "body"))
        elif self.limits:
            body.append(self.lay.P(self.esc(self.L("no_limit_reached")), "body"))
        n = len(self.warnings)
        sec = self.numbers["warnings"]
        wtext = self.L("warnings_count", n=n, section=sec) if n else self.L("no_warnings_count", section=sec)
        body.append(self.lay.P(f"<b>{self.esc(wtext)}</b> {self.esc(self.lay.T('caution.summary_pointer'))}",
                               "body"))
        return self._verdict_box(body)

    def sec_scope(self):
        lay = self.lay
        out = [lay.heading(self.numbers["scope"], "scope")]
        out += lay.prose(lay.T("scope.text"))
        title = _str(self.r.get("title"), "title")
        if title:
            out.append(lay.P(f"<b>{self.esc(lay.T('scope.case_title_label'))}</b> {self.esc(title)}"))
        notes = _str(self.meta.get("notes"), "meta.notes")
        if notes:
            out.append(lay.P(f"<b>{self.esc(lay.T('scope.notes_label'))}</b>"))
            for chunk in notes.split("\n\n"):
                if chunk.strip():
                    out.append(lay.P(self.esc(chunk.strip("\n"))))
        return out

    def sec_inputs(self):
        lay = self.lay
        out = lay.heading(self.numbers["inputs"], "inputs", before_table=True)
        items = _seq(self.r.get("inputs"), "inputs")
        if not items:
            out.append(lay.P(f"<i>{self.esc(self.L('no_inputs'))}</i>"))
            return out
        rows = [[lay.P(self.esc(self.L(k)), "head") for k in ("input_field", "input_text", "input_si", "input_source")]]
        w = lay.frame_width
        for i, item in enumerate(items):
            m = _mapping(item, f"inputs[{i}]") or {}
            value = m.get("value_si")
            unit = _str(m.get("unit_si"), f"inputs[{i}].unit_si") or ""
            if value is None:
                si = ""
            elif isinstance(value, bool):
                si = "true" if value else "false"
            elif isinstance(value, (int, float)):
                si = f"{_num_text(float(value), 6)} {unit}".strip()
            else:
                si = f"{value} {unit}".strip()
            rows.append([
                lay.path(m.get("field"), w * 0.27 - 8),
                lay.user(m.get("text")),
                lay.user(si),
                lay.user(m.get("source")),
            ])
        out.append(lay.table(rows, [w * 0.27, w * 0.25, w * 0.2, w * 0.28]))
        return out

    def sec_method(self):
        lay = self.lay
        return [lay.heading(self.numbers["method"], "method")] + lay.prose(lay.T("method.text"))

    def sec_results(self):
        lay = self.lay
        out = [lay.heading(self.numbers["results"], "results")]
        if self.r.get("limit_exceeded_at_start"):
            out.append(lay.P(f"<b>{self.esc(self.L('exceeded_at_start'))}</b>"))
        adiabatic = _mapping(self.r.get("adiabatic"), "adiabatic") or {}
        ad_list = []
        for i, item in enumerate(_seq(adiabatic.get("limits"), "adiabatic.limits")):
            m = _mapping(item, f"adiabatic.limits[{i}]") or {}
            ad_list.append((_str(m.get("name"), f"adiabatic.limits[{i}].name"),
                            _num(m.get("time_s"), f"adiabatic.limits[{i}].time_s")))
        # Pair adiabatic times with limits by position when the lists line up, else by name.
        if [n for n, _ in ad_list] == [x["name"] for x in self.limits]:
            ad_by_index = {i: t for i, (_, t) in enumerate(ad_list)}
        else:
            by_name = {n: t for n, t in ad_list}
            ad_by_index = {i: by_name[x["name"]] for i, x in enumerate(self.limits) if x["name"] in by_name}
        response = self.num("response_time_s")
        detection = self.num("detection_time_s")
        not_reached = self.L("not_reached", horizon=self.horizon_text())
        if self.limits:
            head = [lay.P(self.esc(self.L(k)), "head") for k in
                    ("limit", "limit_temperature", "time_to_reach", "margin", "adiabatic_time")]
            rows = [head]
            for li, lim in enumerate(self.limits, start=1):
                if lim["time_s"] is not None and lim["reached"]:
                    t_txt = self.hrs(lim["time_s"])
                else:
                    t_txt = self.esc(not_reached)
                if lim["margin_s"] is not None:
                    m_txt = self.hrs(lim["margin_s"])
                    if lim["margin_s"] < 0:
                        m_txt = f'<b><font color="{_VERDICT_COLOURS["fail"]}">{m_txt}</font></b>'
                elif not (lim["time_s"] is not None and lim["reached"]):
                    m_txt = self.na()
                elif response is None:
                    m_txt = f"<i>{self.esc(self.L('no_response_time'))}</i>"
                elif detection is None and "detection_time_s" in self.r:
                    m_txt = f"<i>{self.esc(self.L('alarm_never'))}</i>"
                else:
                    m_txt = self.na()
                if li - 1 in ad_by_index:
                    at = ad_by_index[li - 1]
                    a_txt = self.hrs(at) if at is not None else self.esc(not_reached)
                else:
                    a_txt = self.na()
                rows.append([lay.user(lim["name"], "cellb"), lay.P(self.temp(lim["temperature_K"]), "cell"),
                             lay.P(t_txt, "cell"), lay.P(m_txt, "cell"), lay.P(a_txt, "cell")])
            w = lay.frame_width
            out.append(lay.table(rows, [w * 0.22, w * 0.2, w * 0.19, w * 0.2, w * 0.19]))
            out.append(lay.P(self.esc(self.L("margin_note")), "small"))
        else:
            out.append(lay.P(f"<i>{self.esc(self.L('no_limits'))}</i>"))
        out.append(self._spacer(6))

        tau = self.num("time_constant_s")
        ua = self.num("ua_W_per_K")
        steady = self.num("steady_temperature_K")
        mixing = _str(self.r.get("mixing"), "mixing")
        biot = self.num("biot_number")
        pairs = [
            (self.L("initial_temperature"), self.temp(self.num("initial_temperature_K"))),
            (self.L("ambient_temperature"), self.temp(self.num("ambient_temperature_K"))),
            (self.L("peak_temperature"), self.temp(self.num("peak_temperature_K"))),
            (self.L("peak_time"), self.hrs(self.num("peak_time_s"))),
            (self.L("steady_temperature"), self.temp(steady, self.L("no_steady_state"))),
            (self.L("time_constant"), self.hrs(tau, self.L("adiabatic_no_loss"))),
            (self.L("adiabatic_rise"), self.esc(self.u.rise(self.num("temperature_rise_K", adiabatic,
                                                                     "adiabatic.temperature_rise_K")))
             if adiabatic.get("temperature_rise_K") is not None else self.na()),
            (self.L("heat_capacity"), self.esc(_si_prefixed(self.num("heat_capacity_J_per_K"), "J/K", 4))
             if self.r.get("heat_capacity_J_per_K") is not None else self.na()),
            (self.L("ua"), self.esc(_si_prefixed(ua, "W/K", 4)) if ua is not None else self.na()),
            (self.L("horizon"), self.hrs(self.horizon)),
            (self.L("detection_plus_response"), self._det_resp_text()),
            (self.L("mixing"), self.esc(mixing) if mixing else self.na()),
        ]
        if biot is not None or (mixing and mixing != "stirred"):
            pairs.append((self.L("biot"), self.esc(_num_text(biot, 3)) if biot is not None else self.na()))
        out.append(lay.kv_table(pairs))
        if _seq(self.r.get("allowable_values"), "allowable_values"):
            out += self.allowable_values()
        return out

    def allowable_values(self) -> list:
        """Rows of input values at which the overall verdict changes (values in the case's units)."""
        from reportlab.platypus import CondPageBreak

        lay = self.lay
        items = _seq(self.r.get("allowable_values"), "allowable_values")
        out = [CondPageBreak(90), lay.P(self.esc(lay.T("headings.allowable")), "h2")]
        w = lay.frame_width
        rows = [[lay.P(self.esc(self.L(k)), "head") for k in
                 ("allowable_input", "allowable_nominal", "allowable_range", "allowable_changes")]]
        for i, item in enumerate(items):
            where = f"allowable_values[{i}]"
            m = _mapping(item, where) or {}
            unit = _case_unit(_str(m.get("unit"), f"{where}.unit"))
            nominal = _num(m.get("nominal"), f"{where}.nominal")
            nom_txt = self.esc(_with_unit(nominal, unit)) if nominal is not None else self.esc(self.L("not_given"))
            rng = _floats(m.get("range"), f"{where}.range")
            if len(rng) == 2:
                rng_txt = self.markup("allowable_range_value", low=self.esc(_with_unit(rng[0], unit)),
                                      high=self.esc(_with_unit(rng[1], unit)))
            else:
                rng_txt = self.na()
            lines = []
            changes = _seq(m.get("changes"), f"{where}.changes")
            for j, ch in enumerate(changes):
                cw = f"{where}.changes[{j}]"
                c = _mapping(ch, cw) or {}
                value = _num(c.get("value"), f"{cw}.value")
                v_txt = f"<b>{self.esc(_with_unit(value, unit))}</b>" if value is not None else self.na()
                line = self.markup("allowable_change", value=v_txt, below=self.verdict_markup(c.get("below")),
                                   above=self.verdict_markup(c.get("above")))
                br = _floats(c.get("bracket"), f"{cw}.bracket")
                if len(br) == 2:
                    lo_t, hi_t = _with_unit(br[0], unit), _with_unit(br[1], unit)
                    if lo_t != hi_t:  # only when the location is coarser than the digits shown
                        line += " " + self.esc(self.L("allowable_bracket", low=lo_t, high=hi_t))
                lines.append(line)
            if not changes:
                text = self.esc(self.L("allowable_no_change"))
                scan = [(_mapping(x, f"{where}.scan[{k}]") or {}).get("verdict")
                        for k, x in enumerate(_seq(m.get("scan"), f"{where}.scan"))]
                if scan and all(v == scan[0] for v in scan) and scan[0] is not None:
                    text += "; " + self.markup("allowable_throughout", verdict=self.verdict_markup(scan[0]))
                lines.append(f"<i>{text}</i>")
            cell = [lay.P("<br/>".join(lines), "cell")]
            note = m.get("note")
            if note is not None:
                cell.append(lay.user(_any_text(note), "small"))
            rows.append([lay.path(m.get("input"), w * 0.29 - 8), lay.P(nom_txt, "cell"), lay.P(rng_txt, "cell"), cell])
        if len(rows) > 1:
            out.append(lay.table(rows, [w * 0.29, w * 0.12, w * 0.2, w * 0.39]))
        out += lay.prose(lay.T("allowable.text"), "small")
        return out

    def _det_resp_text(self) -> str:
        response = self.num("response_time_s")
        detection = self.num("detection_time_s")
        if response is None:
            return f"<i>{self.esc(self.L('no_response_time'))}</i>"
        if detection is None and "detection_time_s" in self.r:
            return f"<i>{self.esc(self.L('alarm_never'))}</i>"
        total = (detection or 0.0) + response
        return self.hrs(total)

    # -- charts -----------------------------------------------------------------
    def _limit_lines(self):
        from .memo_charts import LIMIT_COLOURS, LIMIT_DASHES, HLine

        out = []
        for i, lim in enumerate(self.limits):
            if lim["temperature_K"] is None or not math.isfinite(lim["temperature_K"]):
                continue
            out.append(HLine(self.u.convert(lim["temperature_K"]), self.tx.clean(lim["name"]),
                             suffix=self.tx.clean(self.u.short(lim["temperature_K"])),
                             colour=LIMIT_COLOURS[i % len(LIMIT_COLOURS)], dash=LIMIT_DASHES[i % len(LIMIT_DASHES)]))
        return out

    def _history(self, key: str):
        hist = _mapping(self.plot(key), key)
        if not hist:
            return None
        ts = _floats(hist.get("time_s"), f"{key}.time_s")
        temps = _floats(hist.get("temperature_K"), f"{key}.temperature_K")
        if not ts or not temps:
            return None
        n = min(len(ts), len(temps))
        return [t / 3600.0 for t in ts[:n]], [self.u.convert(k) for k in temps[:n]]

    def _response_line(self):
        from .memo_charts import VLine

        response = self.num("response_time_s")
        detection = self.num("detection_time_s")
        if response is None or (detection is None and "detection_time_s" in self.r):
            return []
        total = (detection or 0.0) + response
        return [VLine(total / 3600.0, self.tx.clean(self.L("chart_response_line", time=_hours_short(total))))]

    def _x_range(self, extra=()):
        xs = [self.horizon / 3600.0] if self.horizon is not None else []
        xs += [x for x in extra if math.isfinite(x)]
        return (0.0, max(xs)) if xs else None

    def _chart_width(self):
        return self.lay.frame_width

    def sec_chart(self):
        from reportlab.platypus import KeepTogether

        from .memo_charts import Series, line_chart

        lay = self.lay
        out = [lay.heading(self.numbers["chart"], "chart")]
        hist = self._history("history")
        if hist is None:
            out.append(lay.P(f"<i>{self.esc(self.L('chart_missing'))}</i>"))
            return out
        xs, ys = hist
        vlines = self._response_line()
        x_range = self._x_range([max(xs)] + [v.x * 1.04 for v in vlines])
        series = [Series(xs, ys, self.tx.clean(self.L("chart_series")))]
        drawing = line_chart(
            self._chart_width(), 250, series, lay.chart_fonts(),
            x_label=self.tx.clean(self.L("chart_x")),
            y_label=self.tx.clean(self.L("chart_y", unit=self.u.symbol)),
            hlines=self._limit_lines(), vlines=vlines, x_range=x_range, x_min_zero=True,
            x_hours=True, x_exact=True,
            clipped_note=self.tx.clean(self.L("chart_clipped")),
            dropped_note=self.tx.clean(self.L("chart_dropped", n="{n}")),
        )
        n = lay.figure_number()
        caption = self.L("chart_caption", n=n)
        if self.limits:
            caption += " " + self.L("chart_caption_limits")
        if vlines:
            caption += " " + self.L("chart_caption_response")
        out.append(KeepTogether([out.pop(), drawing, lay.P(self.esc(caption), "caption")]))
        return out

    def sec_runaway(self):
        lay = self.lay
        out = [lay.heading(self.numbers["runaway"], "runaway")]
        method = _str(self.r.get("critical_ambient_method"), "critical_ambient_method")
        method_name = {"semenov": "Semenov", "frank-kamenetskii": "Frank-Kamenetskii"}.get(method or "", method)
        ca = self.num("critical_ambient_temperature_K")
        ca_txt = self.temp(ca)
        if ca is not None and method_name:
            ca_txt += " " + self.esc(self.L("critical_ambient_method", method=method_name))
        cls = self.r.get("criticality_class")
        if cls is not None:
            if isinstance(cls, bool) or not isinstance(cls, (int, float, str)):
                raise MemoInputError("criticality_class: expected a number or null")
            cls_txt = self.esc(self.L("criticality_class_value", n=cls))
        else:
            cls_txt = self.na()
        rise = self.num("adiabatic_temperature_rise_K")
        pairs = [
            (self.L("tmr_adiabatic"), self.hrs(self.num("tmr_adiabatic_s"))),
            (self.L("t_d24"), self.temp(self.num("t_d24_K"))),
            (self.L("critical_ambient"), ca_txt),
            (self.L("critical_temperature"), self.temp(self.num("critical_temperature_K"))),
            (self.L("no_return_temperature"), self.temp(self.num("no_return_temperature_K"))),
            (self.L("adiabatic_temperature_rise"), self.esc(self.u.rise(rise)) if rise is not None else self.na()),
            (self.L("mtsr"), self.temp(self.num("mtsr_K"))),
            (self.L("mtt"), self.temp(self.num("maximum_technical_temperature_K"))),
            (self.L("tmr_at_mtsr"), self.hrs(self.num("tmr_at_mtsr_s"))),
            (self.L("criticality_class"), cls_txt),
        ]
        out.append(lay.kv_table(pairs))
        out += self.heat_balance()
        return out

    def heat_balance(self):
        from reportlab.platypus import KeepTogether

        from .memo_charts import TRACE, TRACE_2, Marker, Series, VLine, line_chart

        lay = self.lay
        out = [lay.P(self.esc(lay.T("headings.heat_balance")), "h2")]  # kept with what follows
        hb = _mapping(self.plot("heat_balance"), "heat_balance")
        if not hb:
            out.append(lay.P(f"<i>{self.esc(self.L('hb_missing'))}</i>"))
            return out
        tk = _floats(hb.get("temperature_K"), "heat_balance.temperature_K")
        gen = _floats(hb.get("generation_W"), "heat_balance.generation_W")
        loss = _floats(hb.get("loss_W"), "heat_balance.loss_W")
        n = min(len(tk), len(gen), len(loss))
        if n < 2:
            out.append(lay.P(f"<i>{self.esc(self.L('hb_missing'))}</i>"))
            return out
        tk, gen, loss = tk[:n], gen[:n], loss[:n]
        steady = _floats(hb.get("steady_states_K"), "heat_balance.steady_states_K")
        amb = _num(hb.get("ambient_K"), "heat_balance.ambient_K")
        cak = _num(hb.get("critical_ambient_K"), "heat_balance.critical_ambient_K")
        # View window: the marked temperatures plus room to show generation taking off;
        # the heat-loss line sets the vertical scale and generation beyond it is cut off.
        t_fin = [t for t in tk if math.isfinite(t)]
        keys = [t for t in steady + [amb, cak] if t is not None and math.isfinite(t)]
        t_lo, t_hi = (min(t_fin), max(t_fin)) if t_fin else (0.0, 1.0)
        if keys:
            kmax = max(keys)
            t_hi = min(t_hi, kmax + max(0.6 * (kmax - t_lo), 10.0))
            t_lo = min(t_lo, min(keys))
        inside = [i for i, t in enumerate(tk) if math.isfinite(t) and t_lo <= t <= t_hi]
        loss_in = [abs(loss[i]) for i in inside if math.isfinite(loss[i])]
        gen_in = [abs(gen[i]) for i in inside if math.isfinite(gen[i])]
        lmax = max(loss_in) if loss_in else 1.0
        gmax = max(gen_in) if gen_in else 0.0
        ytop_w = max(lmax, min(gmax, 2.5 * lmax), 1e-30)
        scale, unit = 1.0, "W"
        for factor, name in ((1e9, "GW"), (1e6, "MW"), (1e3, "kW")):
            if ytop_w >= factor * 2:
                scale, unit = factor, name
                break
        xs = [self.u.convert(t) for t in tk]
        ytop = ytop_w / scale
        ylo = min([v / scale for i in inside for v in (gen[i], loss[i]) if math.isfinite(v)] + [0.0])
        markers = []
        for i, s in enumerate(steady):
            if not math.isfinite(s):
                continue
            markers.append(Marker(self.u.convert(s), _interp(s, tk, loss) / scale, f"S{i + 1}"))
        vlines = []
        if amb is not None:
            vlines.append(VLine(self.u.convert(amb), self.tx.clean(self.L("hb_ambient", temp=self.u.short(amb))),
                                colour=lay.colors.HexColor("#455A64")))
        method = _str(self.r.get("critical_ambient_method"), "critical_ambient_method")
        ca_table = self.num("critical_ambient_temperature_K")
        lumped_only = method == "frank-kamenetskii" or (
            ca_table is not None and cak is not None and abs(ca_table - cak) > 0.05)
        ca_key = "hb_critical_ambient_lumped" if lumped_only else "hb_critical_ambient"
        if cak is not None:
            vlines.append(VLine(self.u.convert(cak),
                                self.tx.clean(self.L(ca_key, temp=self.u.short(cak))),
                                colour=lay.colors.HexColor(_VERDICT_COLOURS["fail"])))
        drawing = line_chart(
            self._chart_width(), 230,
            [Series(xs, [g / scale for g in gen], self.tx.clean(self.L("hb_generation")), colour=TRACE_2),
             Series(xs, [v / scale for v in loss], self.tx.clean(self.L("hb_loss")), colour=TRACE, dash=(5, 2))],
            lay.chart_fonts(),
            x_label=self.tx.clean(self.L("hb_x", unit=self.u.symbol)),
            y_label=self.tx.clean(self.L("hb_y", unit=unit)),
            vlines=vlines, markers=markers, y_range=(ylo, ytop * 1.05),
            x_range=(self.u.convert(t_lo), self.u.convert(t_hi)), x_exact=True,
            marker_label=self.tx.clean(self.L("hb_marker")),
            clipped_note=self.tx.clean(self.L("chart_clipped")),
            dropped_note=self.tx.clean(self.L("chart_dropped", n="{n}")),
        )
        num = lay.figure_number()
        caption = self.L("hb_caption", n=num)
        if lumped_only:
            caption += " " + self.L("hb_lumped_note")
        parts = [out.pop(), drawing, lay.P(self.esc(caption), "caption")]
        if markers:
            listed = "; ".join(f"S{i + 1} = {self.u.full(s)}" for i, s in enumerate(steady) if math.isfinite(s))
            parts.append(lay.P(f"<b>{self.esc(self.L('hb_steady_states'))}:</b> {self.esc(listed)}", "small"))
        out.append(KeepTogether(parts))
        return out

    def sec_boiling(self):
        lay = self.lay
        b = _mapping(self.r.get("boiling"), "boiling") or {}
        later = self.L("not_within_horizon")
        rate = _num(b.get("peak_boil_off_kg_per_s"), "boiling.peak_boil_off_kg_per_s")
        mass = _num(b.get("boiled_off_kg"), "boiling.boiled_off_kg")
        pairs = [
            (self.L("time_to_boil"), self.hrs(_num(b.get("time_to_boil_s"), "boiling.time_to_boil_s"), later)),
            (self.L("peak_boil_off"), self.esc(f"{_num_text(rate, 4)} kg/s ({_num_text(rate * 3600, 4)} kg/h)")
             if rate is not None else self.na()),
            (self.L("boiled_off"), self.esc(f"{_num_text(mass, 4)} kg") if mass is not None else self.na()),
            (self.L("time_to_dry"), self.hrs(_num(b.get("time_to_dry_s"), "boiling.time_to_dry_s"), later)),
        ]
        return [lay.heading(self.numbers["boiling"], "boiling"), lay.kv_table(pairs)]

    def sec_recovery(self):
        from reportlab.platypus import KeepTogether

        from .memo_charts import TRACE, TRACE_2, Series, VLine, line_chart

        lay = self.lay
        out = [lay.heading(self.numbers["recovery"], "recovery")]
        response = self.num("response_time_s")
        detection = self.num("detection_time_s")
        if detection is None and "detection_time_s" in self.r:
            det_txt = f"<b>{self.esc(self.L('alarm_never'))}</b>"
        else:
            det_txt = self.hrs(detection)
        pairs = [
            (self.L("detection_time"), det_txt),
            (self.L("response_time"), self.hrs(response, self.L("no_response_time"))),
            (self.L("detection_plus_response"), self._det_resp_text()),
        ]
        rec = _mapping(self.r.get("recovery"), "recovery")
        if rec is not None:
            names = [_str(x, f"recovery.limits_reached[{i}]") or ""
                     for i, x in enumerate(_seq(rec.get("limits_reached"), "recovery.limits_reached"))]
            pnr = rec.get("past_no_return")
            if pnr is None:
                pnr_txt = self.esc(self.L("unknown"))
            elif pnr:
                pnr_txt = f'<b><font color="{_VERDICT_COLOURS["fail"]}">{self.esc(self.L("yes"))}</font></b>'
            else:
                pnr_txt = self.esc(self.L("no"))
            pairs += [
                (self.L("recovery_start"), self.hrs(_num(rec.get("start_s"), "recovery.start_s"))),
                (self.L("recovery_peak"),
                 self.temp(_num(rec.get("peak_temperature_K"), "recovery.peak_temperature_K"))),
                (self.L("recovery_peak_time"), self.hrs(_num(rec.get("peak_time_s"), "recovery.peak_time_s"))),
                (self.L("recovery_limits"), self.esc(", ".join(names)) if names else self.esc(self.L("none"))),
                (self.L("recovery_past_no_return"), pnr_txt),
            ]
        out.append(lay.kv_table(pairs))
        rhist = self._history("recovery_history")
        if rhist is not None:
            series = []
            base = self._history("history")
            if base is not None:
                series.append(Series(base[0], base[1], self.tx.clean(self.L("chart_base_series")), colour=TRACE,
                                     dash=(4, 2), width=1.0))
            series.append(Series(rhist[0], rhist[1], self.tx.clean(self.L("chart_recovery_series")), colour=TRACE_2))
            vlines = []
            start = _num(rec.get("start_s"), "recovery.start_s") if rec else None
            if start is not None:
                vlines.append(VLine(start / 3600.0, self.tx.clean(self.L("chart_recovery_start",
                                                                        time=_hours_short(start)))))
            xs_extra = [max(rhist[0])] + [v.x * 1.04 for v in vlines]
            drawing = line_chart(
                self._chart_width(), 230, series, lay.chart_fonts(),
                x_label=self.tx.clean(self.L("chart_x")),
                y_label=self.tx.clean(self.L("chart_y", unit=self.u.symbol)),
                hlines=self._limit_lines(), vlines=vlines, x_range=self._x_range(xs_extra), x_min_zero=True,
                x_hours=True, x_exact=True,
                clipped_note=self.tx.clean(self.L("chart_clipped")),
                dropped_note=self.tx.clean(self.L("chart_dropped", n="{n}")),
            )
            n = lay.figure_number()
            out.append(self._spacer(4))
            out.append(KeepTogether([drawing, lay.P(self.esc(self.L("recovery_caption", n=n)), "caption")]))
        return out

    # -- uncertainty --------------------------------------------------------------
    def sec_uncertainty(self):
        lay = self.lay
        u = self.uncertainty() or {}
        out = [lay.heading(self.numbers["uncertainty"], "uncertainty")]
        note = u.get("note")
        if note is not None:
            out.append(lay.P(f"<b>{self.esc(self.L('unc_note'))}:</b> {self.esc(_any_text(note))}"))
        out += lay.prose(lay.T("uncertainty.text"))
        given = self.L("not_given")
        run = {k: _count_text(u.get(k), f"uncertainty.{k}") for k in ("samples", "accepted", "rejected", "seed")}
        run["sampling"] = _str(u.get("sampling"), "uncertainty.sampling")
        out.append(lay.P(self.esc(self.L("unc_run", **{k: (v if v is not None else given) for k, v in run.items()}))))
        method = u.get("method")
        if method is not None:
            out.append(lay.P(f"<b>{self.esc(self.L('unc_method'))}:</b> {self.esc(_any_text(method))}", "small"))
        out += self._unc_inputs(u)
        out += self._unc_limits(u)
        out += self._unc_sensitivity(u)
        out += self._unc_cdf(u)
        return out

    def _unc_first_limit(self, u: Mapping) -> tuple[str, dict | None]:
        """Name of the limit the charts are about, and the deterministic limit of that name."""
        name = _str(u.get("first_limit"), "uncertainty.first_limit")
        if name is not None:
            return name, next((x for x in self.limits if x["name"] == name), None)
        temps = [x for x in self.limits if x["temperature_K"] is not None]
        lim = min(temps, key=lambda x: x["temperature_K"]) if temps else None
        return (lim["name"] if lim else self.L("first_limit")), lim

    def _unc_nominal_time(self, u: Mapping) -> tuple[bool, float | None]:
        """(known, time in s or None when not reached) of the first limit with all inputs at case values."""
        _, lim = self._unc_first_limit(u)
        if lim is None:
            return False, None
        if lim["time_s"] is not None and lim["reached"]:
            return True, lim["time_s"]
        return True, None

    def _unc_inputs(self, u: Mapping) -> list:
        lay = self.lay
        items = _seq(u.get("inputs"), "uncertainty.inputs")
        if not items:
            return [] if u.get("note") is not None else [lay.P(f"<i>{self.esc(self.L('unc_no_inputs'))}</i>")]
        w = lay.frame_width
        rows = [[lay.P(self.esc(self.L(k)), "head") for k in
                 ("unc_input", "unc_distribution", "unc_parameters", "unc_nominal")]]
        known = ("low", "mode", "high", "mean", "sd", "median", "gsd")
        unitless = ("gsd",)
        skip = ("input", "distribution", "nominal", "unit_si")
        for i, item in enumerate(items):
            where = f"uncertainty.inputs[{i}]"
            m = _mapping(item, where) or {}
            unit = _str(m.get("unit_si"), f"{where}.unit_si") or ""
            keys = [k for k in known if k in m] + [k for k in m if k not in known and k not in skip]
            params = []
            for k in keys:
                v = m.get(k)
                if v is None:
                    continue
                name = self.L(f"unc_param_{k}") if f"unc_param_{k}" in self.lay.tpl["labels"] else str(k)
                if isinstance(v, (int, float)) and not isinstance(v, bool):
                    v_txt = _num_text(float(v), 6) if k in unitless else _with_unit(float(v), unit, 6)
                else:
                    v_txt = _any_text(v)
                params.append(f"{self.esc(name)} {self.esc(v_txt)}")
            nominal = _num(m.get("nominal"), f"{where}.nominal")
            rows.append([lay.path(m.get("input"), w * 0.3 - 8), lay.user(_any_text(m.get("distribution"))),
                         lay.P(", ".join(params) or self.na(), "cell"),
                         lay.P(self.esc(_with_unit(nominal, unit, 6)) if nominal is not None else self.na(), "cell")])
        return [lay.P(self.esc(lay.T("headings.unc_inputs")), "h2"),
                lay.table(rows, [w * 0.3, w * 0.14, w * 0.36, w * 0.2])]

    def _unc_prob(self, m: Mapping, key: str, where: str, n: str | None, zero_flags: list) -> str:
        p = _num(m.get(key), f"{where}.{key}")
        se = _num(m.get(key + "_standard_error"), f"{where}.{key}_standard_error")
        if p is None:
            return self.esc(self.L("unc_no_deadline")) if key == "probability_before_response" else self.na()
        text = self.esc(_percent(p, se))
        if se is not None and se == 0 and p in (0.0, 1.0):
            zero_flags.append(True)
            if n is not None:
                text += " " + self.esc(self.L("unc_none_of" if p == 0.0 else "unc_all_of", n=n))
        return text

    def _unc_limits(self, u: Mapping) -> list:
        lay = self.lay
        items = _seq(u.get("limits"), "uncertainty.limits")
        if not items:
            return [] if u.get("note") is not None else [lay.P(f"<i>{self.esc(self.L('unc_no_limits'))}</i>")]
        n = _count_text(u.get("accepted"), "uncertainty.accepted")
        first_name, _ = self._unc_first_limit(u)
        w = lay.frame_width
        rows = [[lay.P(self.esc(self.L(k)), "head") for k in
                 ("unc_limit", "unc_before", "unc_within", "unc_p05", "unc_p50", "unc_p95")]]
        zero_flags: list = []
        for i, item in enumerate(items):
            where = f"uncertainty.limits[{i}]"
            m = _mapping(item, where) or {}
            name = _str(m.get("name"), f"{where}.name") or f"limit {i + 1}"
            name_cell = [lay.user(name, "cellb")]
            if name == first_name:
                name_cell.append(lay.P(self.esc(self.L("unc_first_limit_mark")), "small"))
            cells = [name_cell,
                     lay.P(self._unc_prob(m, "probability_before_response", where, n, zero_flags), "cell"),
                     lay.P(self._unc_prob(m, "probability_within_horizon", where, n, zero_flags), "cell")]
            for k in ("p05_time_s", "p50_time_s", "p95_time_s"):
                t = _num(m.get(k), f"{where}.{k}")
                cells.append(lay.P(self.esc(_hours_short(t)) if t is not None else
                                   f"<i>{self.esc(self.L('unc_not_reached'))}</i>", "cell"))
            rows.append(cells)
        out = [lay.P(self.esc(lay.T("headings.unc_limits")), "h2"),
               lay.table(rows, [w * 0.21, w * 0.2, w * 0.2, w * 0.13, w * 0.13, w * 0.13]),
               lay.P(self.esc(self.L("unc_limits_note", horizon=self.horizon_text())), "small")]
        if zero_flags:
            out.append(lay.P(f"<b>{self.esc(self.L('unc_zero_se_note'))}</b>", "small"))
        return out

    def _unc_sensitivity(self, u: Mapping) -> list:
        from reportlab.platypus import KeepTogether

        from .memo_charts import TornadoRow, tornado_chart

        lay = self.lay
        items = _seq(u.get("sensitivity"), "uncertainty.sensitivity")
        if not items:
            return [] if u.get("note") is not None else [lay.P(f"<i>{self.esc(self.L('unc_no_sensitivity'))}</i>")]
        limit_name, _ = self._unc_first_limit(u)
        known, nominal_s = self._unc_nominal_time(u)
        w = lay.frame_width
        entries = []
        for i, item in enumerate(items):
            where = f"uncertainty.sensitivity[{i}]"
            m = _mapping(item, where) or {}
            possible = m.get("swing_possible")
            entries.append({
                "input": _str(m.get("input"), f"{where}.input") or f"input {i + 1}",
                "unit": _str(m.get("unit_si"), f"{where}.unit_si") or "",
                "low_value": _num(m.get("low_value"), f"{where}.low_value"),
                "high_value": _num(m.get("high_value"), f"{where}.high_value"),
                "low_time": _num(m.get("low_time_s"), f"{where}.low_time_s"),
                "high_time": _num(m.get("high_time_s"), f"{where}.high_time_s"),
                "rho": _num(m.get("rank_correlation"), f"{where}.rank_correlation"),
                "impossible": possible is not None and not bool(possible),
            })
        for i, e in enumerate(entries):
            for key in ("low_time", "high_time"):
                if e[key] is not None and not math.isfinite(e[key]):
                    # would otherwise be drawn as "not reached": refuse rather than mislead
                    raise MemoInputError(f"uncertainty.sensitivity[{i}].{key}_s: expected a finite number or "
                                         f"null (null = not reached), got {e[key]}")
        any_impossible = any(e["impossible"] for e in entries)
        shown = entries[:_TORNADO_ROWS]
        rows = [TornadoRow(self.tx.clean(e["input"]),
                           e["low_time"] / 3600.0 if e["low_time"] is not None else None,
                           e["high_time"] / 3600.0 if e["high_time"] is not None else None,
                           mark=" *" if e["impossible"] else "") for e in shown]
        if known and nominal_s is not None:
            nom_label = self.L("unc_tornado_nominal", time=_hours_short(nominal_s))
        elif known:
            nom_label = self.L("unc_tornado_nominal_never")
        else:
            nom_label = ""
        notes = []
        if any(e["impossible"] for e in shown):
            notes.append(self.tx.clean(self.L("unc_tornado_impossible")))
        if len(entries) > len(shown):
            notes.append(self.tx.clean(self.L("unc_tornado_truncated", shown=len(shown), total=len(entries))))
        drawing = tornado_chart(
            w, rows, lay.chart_fonts(),
            x_label=self.tx.clean(self.L("unc_tornado_x", limit=limit_name)),
            low_label=self.tx.clean(self.L("unc_tornado_low")),
            high_label=self.tx.clean(self.L("unc_tornado_high")),
            nominal=(nominal_s / 3600.0) if nominal_s is not None else None,
            nominal_label=self.tx.clean(nom_label),
            x_max=self.horizon / 3600.0 if self.horizon is not None else None,
            not_reached_label=self.tx.clean(self.L("unc_tornado_not_reached")),
            notes=notes,
        )
        fig = lay.figure_number()
        caption = self.L("unc_tornado_caption", n=fig, limit=limit_name)
        head = lay.P(self.esc(lay.T("headings.unc_sensitivity")), "h2")
        out = [KeepTogether([head, drawing, lay.P(self.esc(caption), "caption")])]

        trows = [[lay.P(self.esc(self.L(k)), "head") for k in
                  ("unc_sens_input", "unc_sens_low", "unc_sens_low_time", "unc_sens_high", "unc_sens_high_time",
                   "unc_sens_rho")]]
        not_reached = f"<i>{self.esc(self.L('unc_not_reached'))}</i>"
        for e in entries:
            name = e["input"] + (" *" if e["impossible"] else "")
            trows.append([
                lay.path(name, w * 0.28 - 8),
                lay.P(self.esc(_with_unit(e["low_value"], e["unit"], 4)) if e["low_value"] is not None else self.na(),
                      "cell"),
                lay.P(self.esc(_hours_short(e["low_time"])) if e["low_time"] is not None else not_reached, "cell"),
                lay.P(self.esc(_with_unit(e["high_value"], e["unit"], 4)) if e["high_value"] is not None
                      else self.na(), "cell"),
                lay.P(self.esc(_hours_short(e["high_time"])) if e["high_time"] is not None else not_reached, "cell"),
                lay.P(self.esc(_minus(f"{e['rho']:+.2f}")) if e["rho"] is not None else self.na(), "cell"),
            ])
        out.append(lay.table(trows, [w * 0.28, w * 0.14, w * 0.13, w * 0.14, w * 0.13, w * 0.18]))
        out.append(lay.P(self.esc(self.L("unc_sens_note", limit=limit_name)), "small"))
        if any_impossible:
            out.append(lay.P(self.esc(self.L("unc_tornado_impossible")), "small"))
        return out

    def _unc_cdf(self, u: Mapping) -> list:
        from reportlab.platypus import KeepTogether

        from .memo_charts import TRACE, Series, VLine, fit_text, line_chart

        lay = self.lay
        cdf = self.plot("uncertainty_cdf")
        if cdf is None:
            cdf = u.get("_cdf")
        cdf = _mapping(cdf, "uncertainty_cdf")
        head = lay.P(self.esc(lay.T("headings.unc_cdf")), "h2")
        limit_name, _ = self._unc_first_limit(u)
        if cdf is None:
            if u.get("note") is not None:
                return []
            return [head, lay.P(f"<i>{self.esc(self.L('unc_cdf_missing'))}</i>")]
        ts = _floats(cdf.get("time_s"), "uncertainty_cdf.time_s")
        ps = _floats(cdf.get("probability"), "uncertainty_cdf.probability")
        k = min(len(ts), len(ps))
        pts = [(t / 3600.0, p) for t, p in zip(ts[:k], ps[:k]) if math.isfinite(t) and math.isfinite(p)]
        if not pts:
            return [head, lay.P(f"<i>{self.esc(self.L('unc_cdf_empty', limit=limit_name))}</i>")]
        n_txt = _count_text(cdf.get("n"), "uncertainty_cdf.n") or _count_text(u.get("accepted"), "uncertainty.accepted")
        xs = [pts[0][0]] + [x for x, _ in pts]
        ys = [0.0] + [y for _, y in pts]
        series = [Series(xs, ys, "", colour=TRACE, width=1.5)]
        h_end = self.horizon / 3600.0 if self.horizon is not None else None
        if h_end is not None and h_end > xs[-1]:  # no further sample reaches the limit before the horizon
            series.append(Series([xs[-1], h_end], [ys[-1], ys[-1]], "", colour=TRACE, width=1.0, dash=(3, 2)))
        vlines = []
        known, nominal_s = self._unc_nominal_time(u)
        if known and nominal_s is not None:
            vlines.append(VLine(nominal_s / 3600.0, self.tx.clean(self.L("unc_cdf_nominal",
                                                                        time=_hours_short(nominal_s))),
                                colour=lay.colors.HexColor("#455A64"), dash=(1.5, 1.5)))
        deadline = self._response_line()
        vlines += deadline
        fonts = lay.chart_fonts()
        x_label = fit_text(self.tx.clean(self.L("unc_cdf_x")), fonts.bold, fonts.size, lay.frame_width * 0.8)
        drawing = line_chart(
            self._chart_width(), 220, series, fonts,
            x_label=x_label, y_label=self.tx.clean(self.L("unc_cdf_y")),
            vlines=vlines, x_range=self._x_range([xs[-1]] + [v.x * 1.04 for v in vlines]), y_range=(0.0, 1.0),
            x_min_zero=True, x_hours=True, x_exact=True,
            clipped_note=self.tx.clean(self.L("chart_clipped")),
            dropped_note=self.tx.clean(self.L("chart_dropped", n="{n}")),
        )
        fig = lay.figure_number()
        caption = self.L("unc_cdf_caption", n=fig, limit=limit_name, samples=n_txt or self.L("not_given"))
        if ys[-1] < 1.0:
            caption += " " + self.L("unc_cdf_caption_end", end=_percent(ys[-1]))
        if deadline:
            caption += " " + self.L("unc_cdf_caption_response")
        return [KeepTogether([head, drawing, lay.P(self.esc(caption), "caption")])]

    def sec_verdict(self):
        lay = self.lay
        rule = _mapping(self.r.get("rule_set"), "rule_set") or {}
        name = _str(rule.get("name"), "rule_set.name")
        digest = _str(rule.get("hash"), "rule_set.hash")
        body = self._verdict_lines()
        body.append(lay.P(f"<b>{self.esc(self.L('rule_set'))}:</b> "
                          f"{self.esc(name) if name else self.esc(self.L('not_given'))}", "body"))
        body.append(lay.P(f"<b>{self.esc(self.L('rule_set_hash'))}:</b> "
                          f"{self.esc(digest) if digest else self.esc(self.L('not_given'))}", "small"))
        return [lay.heading(self.numbers["verdict"], "verdict"), self._verdict_box(body)]

    def sec_warnings(self):
        lay = self.lay
        out = [lay.heading(self.numbers["warnings"], "warnings")]
        if self.warnings:
            for i, w in enumerate(self.warnings, start=1):
                out.append(lay.P(f"<b>W{i}.</b>&nbsp;{self.esc(w)}", "bullet"))
        else:
            out.append(lay.P(self.esc(self.L("no_warnings"))))
        out.append(_GLYPH_SLOT)  # replaced by the glyph note (or removed) once all text is laid out
        return out

    def sec_assumptions(self):
        lay = self.lay
        return [lay.heading(self.numbers["assumptions"], "assumptions")] + lay.prose(lay.T("assumptions.text"))

    def sec_caution_end(self):
        from reportlab.platypus import KeepTogether

        lay = self.lay
        return [KeepTogether([lay.heading(self.numbers["caution_end"], "caution_end"),
                              lay.P(self.esc(self.L("caution_end_intro"))), lay.caution_box()])]

    def sec_signoff(self):
        from reportlab.platypus import KeepTogether

        lay = self.lay
        head = [lay.heading(self.numbers["signoff"], "signoff")] + lay.prose(lay.T("signoff.intro"))
        out = []
        for i, role in enumerate(lay.tpl["signoff"]["roles"] or ["Reviewer"]):
            out.append(KeepTogether((head if i == 0 else []) + [self._sign_block(role), self._spacer(8)]))
        return out

    def _sign_block(self, role: str):
        from reportlab.platypus import Table, TableStyle

        lay = self.lay
        sg = lay.tpl["signoff"]
        w = lay.frame_width
        grey = lay.colors.HexColor("#555555")

        def lab(key):
            return lay.P(f"<b>{self.esc(sg[key])}</b>", "cell")

        rows = [
            [lay.P(f"<b>{self.esc(sg['role_label'])}:</b> {self.esc(role)}", "cell"), "", "", ""],
            [lab("name_label"), "", lab("date_label"), ""],
            [lab("signature_label"), "", "", ""],
            [lab("comments_label"), "", "", ""],
        ]
        rows += [["", "", "", ""] for _ in range(int(sg["comment_lines"]))]
        heights = [16, 26, 34, 24] + [20] * int(sg["comment_lines"])
        t = Table(rows, colWidths=[w * 0.16, w * 0.44, w * 0.1, w * 0.3], rowHeights=heights, hAlign="LEFT")
        cmds = [
            ("FONTNAME", (0, 0), (-1, -1), _FONT_NAMES["regular"]),
            ("BOX", (0, 0), (-1, -1), 0.9, grey),
            ("SPAN", (0, 0), (-1, 0)),
            ("BACKGROUND", (0, 0), (-1, 0), lay.colors.HexColor(_HEAD_FILL)),
            ("SPAN", (1, 2), (-1, 2)),
            ("SPAN", (0, 3), (-1, 3)),
            ("VALIGN", (0, 0), (-1, -1), "BOTTOM"),
            ("LINEBELOW", (1, 1), (1, 1), 0.6, grey),
            ("LINEBELOW", (3, 1), (3, 1), 0.6, grey),
            ("LINEBELOW", (1, 2), (-1, 2), 0.6, grey),
            ("VALIGN", (0, 3), (-1, 3), "TOP"),
            ("TOPPADDING", (0, 3), (-1, 3), 8),
            ("LEFTPADDING", (0, 0), (-1, -1), 5),
            ("RIGHTPADDING", (0, 0), (-1, -1), 8),
        ]
        for k in range(int(sg["comment_lines"])):
            cmds.append(("SPAN", (0, 4 + k), (-1, 4 + k)))
            cmds.append(("LINEBELOW", (0, 4 + k), (-1, 4 + k), 0.4, lay.colors.HexColor("#999999")))
        t.setStyle(TableStyle(cmds))
        return t


#: Inputs drawn in the tornado chart (most influential first); every input is in the table under it.
_TORNADO_ROWS = 15


def _interp(x: float, xs: list[float], ys: list[float]) -> float:
    pairs = sorted((a, b) for a, b in zip(xs, ys) if math.isfinite(a) and math.isfinite(b))
    if not pairs:
        return float("nan")
    if x <= pairs[0][0]:
        return pairs[0][1]
    for (x0, y0), (x1, y1) in zip(pairs[:-1], pairs[1:]):
        if x0 <= x <= x1:
            return y0 if x1 == x0 else y0 + (y1 - y0) * (x - x0) / (x1 - x0)
    return pairs[-1][1]


def render_memo(result: Mapping, templates_dir: str | os.PathLike | None = None) -> bytes:
    """The review memo for one result dict, as PDF bytes.

    Raises :class:`TemplateError` for a bad template set and :class:`MemoInputError`
    for a value in ``result`` of the wrong kind.  Unknown keys are ignored and
    missing keys count as null.
    """
    tpl = load_templates(templates_dir)
    memo = _Memo(result, tpl)
    return memo.build()


# --------------------------------------------------------------------------- register summary

_HIST_EDGES_H = (0.0, 1.0, 2.0, 4.0, 8.0, 24.0, 48.0, 168.0)


def _summary_rows(results, at_start_label: str, start: int = 0) -> list[dict]:
    rows = []
    for i, res in enumerate(_seq(results, "results"), start=start):
        if not isinstance(res, Mapping):
            raise MemoInputError(f"results[{i}]: expected a dict, got {type(res).__name__}")
        rows.append(_summarise(i, res, at_start_label))
    return rows


def summarise_register_results(results: Sequence[Mapping], templates_dir: str | os.PathLike | None = None,
                               start: int = 0) -> list[dict]:
    """The register summary's row for each result (numbered from ``start`` in messages).

    Rows of several parts, concatenated in order, can be passed to :func:`render_register_summary`
    with ``summarised=True``: the PDF is the same as from all the results at once.
    """
    return _summary_rows(results, load_templates(templates_dir)["labels"]["register_at_start"], start)


def _summarise(i: int, res: Mapping, at_start_label: str) -> dict:
    where = f"results[{i}]"
    times, margins = [], []
    for j, item in enumerate(_seq(res.get("limits"), f"{where}.limits")):
        m = _mapping(item, f"{where}.limits[{j}]") or {}
        t = _num(m.get("time_s"), f"{where}.limits[{j}].time_s")
        reached = m.get("reached")
        if t is not None and (reached is None or reached):
            times.append((t, _str(m.get("name"), f"{where}.limits[{j}].name") or f"limit {j + 1}"))
        mg = _num(m.get("margin_s"), f"{where}.limits[{j}].margin_s")
        if mg is not None:
            margins.append(mg)
    first = min(times) if times else None
    if res.get("limit_exceeded_at_start") and (first is None or first[0] > 0):
        first = (0.0, at_start_label)
    return {
        "id": _str(res.get("id"), f"{where}.id") or f"#{i + 1}",
        "title": _str(res.get("title"), f"{where}.title") or "",
        "verdict": _str(res.get("verdict"), f"{where}.verdict"),
        "first": first,
        "margin": min(margins) if margins else None,
        "warnings": len(_seq(res.get("warnings"), f"{where}.warnings")),
        "has_limits": bool(_seq(res.get("limits"), f"{where}.limits")),
    }


class _Register:
    def __init__(self, results, errors, tpl: dict, summarised: bool = False):
        self.lay = _Layout(tpl)
        self.tx = self.lay.tx
        self.rows = list(results) if summarised else _summary_rows(results, self.L("register_at_start"))
        self.errors = []
        for i, err in enumerate(_seq(errors, "errors")):
            self.errors.append(self._error(i, err))

    @staticmethod
    def _error(i: int, err) -> tuple[str, str]:
        if isinstance(err, Mapping):
            case = next((str(err[k]) for k in ("id", "case", "path", "file") if err.get(k) is not None), f"#{i + 1}")
            msg = next((str(err[k]) for k in ("error", "message", "detail") if err.get(k) is not None), None)
            if msg is None:
                msg = "; ".join(f"{k}: {v}" for k, v in err.items())
            return case, msg
        return f"#{i + 1}", str(err)

    def L(self, key, **kw):
        return self.lay.L(key, **kw)

    def esc(self, v) -> str:
        return self.tx.para(v)

    def verdict_word(self, verdict) -> tuple[str, str]:
        key = _verdict_key(verdict)
        if key:
            return key, self.L(f"verdict_{key}")
        return "", verdict or self.L("verdict_missing")

    def build(self) -> bytes:
        from reportlab.platypus import KeepTogether, Spacer

        lay = self.lay
        story = lay.masthead("register_title")
        pairs = [
            (self.L("date"), self.esc(_date_text())),
            (self.L("register_cases"), self.esc(str(len(self.rows)))),
            (self.L("register_errors_count"), self.esc(str(len(self.errors)))),
        ]
        story.append(lay.kv_table(pairs, label_frac=0.24))
        story.append(Spacer(1, 8))
        story.append(lay.caution_box())

        n = 0

        def head(key, before_table=False):
            nonlocal n
            n += 1
            return lay.heading(n, key, before_table)

        # Counts per verdict.
        counts = {"pass": 0, "review": 0, "fail": 0}
        other = 0
        for row in self.rows:
            k = _verdict_key(row["verdict"])
            if k:
                counts[k] += 1
            else:
                other += 1
        crow = [[lay.P(self.esc(self.L("verdict")), "head"), lay.P(self.esc(self.L("register_count")), "head")]]
        for k in ("fail", "review", "pass"):
            crow.append([lay.P(f'<b><font color="{_VERDICT_COLOURS[k]}">{self.esc(self.L("verdict_" + k))}</font></b>',
                               "cell"), lay.P(str(counts[k]), "cell")])
        if other:
            crow.append([lay.P(self.esc(self.L("register_other")), "cell"), lay.P(str(other), "cell")])
        crow.append([lay.P(self.esc(self.L("register_errors_row")), "cell"), lay.P(str(len(self.errors)), "cell")])
        w = lay.frame_width
        story.append(KeepTogether([head("register_counts"), lay.table(crow, [w * 0.4, w * 0.15])]))

        # Vessels ordered by smallest margin.
        story += head("register_table", True)
        if self.rows:
            import heapq

            inf = float("inf")
            # the first rows of the sorted order (heapq.nsmallest equals sorted(...)[:n], ties in input order)
            ordered = heapq.nsmallest(REGISTER_TABLE_ROWS, self.rows, key=lambda r: (
                r["margin"] is None, r["margin"] if r["margin"] is not None else inf, r["first"] is None,
                r["first"][0] if r["first"] else inf, r["id"]))
            header = [lay.P(self.esc(self.L(k)), "head") for k in
                      ("register_rank", "case_id", "title", "verdict", "first_limit", "register_time_first",
                       "register_smallest_margin", "register_warnings")]
            rows = [header]
            for i, r in enumerate(ordered[:REGISTER_TABLE_ROWS], start=1):
                key, word = self.verdict_word(r["verdict"])
                colour = _VERDICT_COLOURS.get(key, "#333333")
                if r["first"] is not None:
                    ft, fname = r["first"]
                    f_name, f_time = self.esc(fname), self.esc(_hours(ft))
                else:
                    f_name = self.esc(self.L("none")) if r["has_limits"] else self.esc(self.L("not_applicable"))
                    f_time = self.esc(self.L("register_not_reached"))
                if r["margin"] is not None:
                    mt = self.esc(_hours(r["margin"]))
                    if r["margin"] < 0:
                        mt = f'<b><font color="{_VERDICT_COLOURS["fail"]}">{mt}</font></b>'
                else:
                    mt = self.esc(self.L("not_applicable"))
                rows.append([lay.P(str(i), "cell"), lay.user(r["id"], "cellb"), lay.user(r["title"]),
                             lay.P(f'<b><font color="{colour}">{self.esc(word)}</font></b>', "cell"),
                             lay.P(f_name, "cell"), lay.P(f_time, "cell"), lay.P(mt, "cell"),
                             lay.P(str(r["warnings"]), "cell")])
            fr = (0.05, 0.12, 0.2, 0.09, 0.16, 0.13, 0.13, 0.12)
            story.append(lay.table(rows, [w * f for f in fr]))
            story.append(lay.P(self.esc(self.L("register_order_note")), "small"))
            if len(self.rows) > REGISTER_TABLE_ROWS:
                story.append(lay.P(self.esc(self.L("register_table_truncated", shown=REGISTER_TABLE_ROWS,
                                                   rest=len(self.rows) - REGISTER_TABLE_ROWS)), "small"))
        else:
            story.append(lay.P(f"<i>{self.esc(self.L('register_no_results'))}</i>"))

        # Histogram of time to first limit.
        story += self._histogram(head("register_histogram"))

        # Errors.
        story += head("register_errors", True)
        if self.errors:
            erows = [[lay.P(self.esc(self.L("register_error_case")), "head"),
                      lay.P(self.esc(self.L("register_error_message")), "head")]]
            erows += [[lay.user(c, "cellb"), lay.user(m)] for c, m in self.errors[:REGISTER_TABLE_ROWS]]
            story.append(lay.table(erows, [w * 0.3, w * 0.7]))
            if len(self.errors) > REGISTER_TABLE_ROWS:
                story.append(lay.P(self.esc(self.L("register_errors_truncated", shown=REGISTER_TABLE_ROWS,
                                                   rest=len(self.errors) - REGISTER_TABLE_ROWS)), "small"))
        else:
            story.append(lay.P(self.esc(self.L("register_no_errors"))))

        story.append(KeepTogether([head("caution_end"), lay.P(self.esc(self.L("caution_end_intro"))),
                                   lay.caution_box()]))
        if self.tx.substituted:
            story.append(lay.P(self.esc(self.L("glyph_note", n=self.tx.substituted)), "small"))
        label = f"{self.L('register_cases')}: {len(self.rows)}"
        meta = {"title": lay.T("document.register_title"), "subject": lay.T("document.register_title"),
                "creator": "heatscreen"}
        return lay.build(story, label, lay.T("document.register_title"), meta)

    def _histogram(self, heading) -> list:
        from reportlab.platypus import KeepTogether

        from .memo_charts import bar_chart

        lay = self.lay
        edges = _HIST_EDGES_H
        cats = [f"{_num_text(a, 4)}\u2013{_num_text(b, 4)} h" for a, b in zip(edges[:-1], edges[1:])]
        cats.append(f"> {_num_text(edges[-1], 4)} h")
        cats.append(self.L("register_not_reached"))
        counts = [0] * len(cats)
        for r in self.rows:
            if r["first"] is None:
                counts[-1] += 1
                continue
            h = r["first"][0] / 3600.0
            for k in range(len(edges) - 1):
                if h < edges[k + 1]:
                    counts[k] += 1
                    break
            else:
                counts[-2] += 1
        drawing = bar_chart(lay.frame_width, 190, [self.tx.clean(c) for c in cats], counts, lay.chart_fonts(),
                            x_label=self.tx.clean(self.L("register_hist_x")),
                            y_label=self.tx.clean(self.L("register_hist_y")),
                            special=[False] * (len(cats) - 1) + [True])
        return [KeepTogether([heading, drawing])]


#: Rows of the vessel and error tables in a register summary; the rest are in the CSV files.
REGISTER_TABLE_ROWS = 250


def render_register_summary(results: Sequence[Mapping], errors: Sequence = (),
                            templates_dir: str | os.PathLike | None = None, summarised: bool = False) -> bytes:
    """A summary PDF for many screened vessels: verdict counts, vessels by smallest
    margin, a histogram of time to first limit and the cases that failed to run.

    With ``summarised=True``, ``results`` are rows from :func:`summarise_register_results`.
    """
    tpl = load_templates(templates_dir)
    return _Register(results, errors, tpl, summarised).build()
