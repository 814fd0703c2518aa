"""Memo templates (all prose a site may change) and the fonts they are set in."""
from __future__ import annotations

import copy
import hashlib
import os
import tomllib
from pathlib import Path

from screening.errors import EnvironmentProblem, InputError
from screening.fileio import read_limited
from screening.resources import template_dir_candidates

MAX_TEMPLATE_BYTES = 2_000_000

TEMPLATE_FILE = "memo.toml"
_FONT_FILES = {
    "regular": "Vera.ttf",
    "bold": "VeraBd.ttf",
    "italic": "VeraIt.ttf",
    "bold_italic": "VeraBI.ttf",
}


class TemplateError(InputError, ValueError):
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


# --------------------------------------------------------------------------- templates


def default_templates_dir() -> Path:
    """The shipped default template folder.

    Looks beside the package (source checkout / editable install) first, then in
    ``screening/data/templates`` (non-editable install).
    """
    candidates = template_dir_candidates()
    for cand in candidates:
        if (cand / TEMPLATE_FILE).is_file():
            return cand
    raise TemplateError("default template set not found; looked in "
                        f"{candidates[0]} and {candidates[1]}",
                        file=TEMPLATE_FILE)


def _read_toml(path: Path) -> dict:
    try:
        raw = read_limited(path, MAX_TEMPLATE_BYTES)
    except EnvironmentProblem as exc:
        raise TemplateError(f"template file: {exc}", file=path) from None
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
                        ("cycle_sun_value", ("rise", "area", "share")),
                        ("criticality_class_value", ("n",)), ("hb_x", ("unit",)), ("hb_y", ("unit",)),
                        ("hb_ambient", ("temp",)), ("hb_critical_ambient", ("temp",)),
                        ("hb_critical_ambient_lumped", ("temp",)), ("hb_caption", ("n",)),
                        ("recovery_caption", ("n",)), ("glyph_note", ("n",)),
                        ("allowable_range_value", ("low", "high")), ("sadt_search_value", ("low", "bound", "critical")),
                        ("sadt_step_runaway", ("temp", "time")), ("allowable_change", ("value", "below", "above")),
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
