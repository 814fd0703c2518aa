"""The review memo for one screened case, as PDF.

The writer only formats numbers it is given in a result dict; it does no physics.
All prose a site may change comes from the template set (``templates/memo.toml``);
this module holds layout.  reportlab is imported only when a PDF is actually
rendered, so importing this module is cheap.

Public API (with :mod:`screening.report.register_summary` and :mod:`screening.report.templates`)
------------------------------------------------------------------------------------------
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

import math
import os
from collections.abc import Mapping

from screening.report.pdf import (
    _FONT_NAMES,
    _HEAD_FILL,
    _VERDICT_COLOURS,
    _VERDICT_FILLS,
    MemoInputError,
    _any_text,
    _atomic_write,
    _case_unit,
    _count_text,
    _date_text,
    _floats,
    _hours,
    _hours_short,
    _Layout,
    _mapping,
    _minus,
    _num,
    _num_text,
    _percent,
    _seq,
    _si_prefixed,
    _str,
    _Units,
    _verdict_key,
    _with_unit,
)
from screening.report import readings
from screening.report.templates import load_templates


def write_memo(result: Mapping, path: str | os.PathLike, templates_dir: str | os.PathLike | None = None) -> None:
    """Render the review memo for ``result`` and write it atomically to ``path``."""
    _atomic_write(lambda: render_memo(result, templates_dir), path)


# --------------------------------------------------------------------------- memo


_GLYPH_SLOT = object()


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
            "margin_note": _str(m.get("margin_note"), f"{where}.margin_note"),
            "time_note": _str(m.get("time_note"), f"{where}.time_note"),
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
                "maximum_technical_temperature_K", "criticality_class", "critical_medium_temperature_K",
                "runaway_summary")
        return any(self.r.get(k) is not None for k in keys) or self.plot("heat_balance") is not None

    def detection_basis(self) -> str | None:
        return _str(self.r.get("detection_basis"), "detection_basis")

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
        if "sadt_K" in self.r:
            order.append("sadt")
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
        box = Table(self.lay.fit_cells([[body]], [self.lay.frame_width], 18, self.lay.max_box_height),
                    colWidths=[self.lay.frame_width], hAlign="LEFT")
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
            out += lay.free_text(notes)
        return out

    def sec_inputs(self):
        lay = self.lay
        out = lay.heading(self.numbers["inputs"], "inputs", before_table=True)
        fields = self.r.get("case_fields")
        items = _seq(fields if fields is not None else self.r.get("inputs"),
                     "case_fields" if fields is not None else "inputs")
        if not items:
            out.append(lay.P(f"<i>{self.esc(self.L('no_inputs'))}</i>"))
            return out + self._derived_table()
        rows = [[lay.P(self.esc(self.L(k)), "head") for k in ("input_field", "input_text", "input_si", "input_source")]]
        w = lay.frame_width
        where = "case_fields" if fields is not None else "inputs"
        for i, item in enumerate(items):
            m = _mapping(item, f"{where}[{i}]") or {}
            value = m.get("value_si")
            unit = _str(m.get("unit_si"), f"{where}[{i}].unit_si") or ""
            if value is None:
                si = ""
            elif isinstance(value, bool):
                si = "true" if value else "false"
            elif isinstance(value, (int, float)):
                si = f"{_num_text(float(value), 6)} {unit if unit != '1' else ''}".strip()
            else:
                si = f"{value} {unit}".strip()
            source = m.get("source")
            if m.get("written") is False and source is None:
                source_cell = lay.P(f"<i>{self.esc(self.L('input_default'))}</i>", "cell")
            else:
                source_cell = lay.user(source)
            rows.append([
                lay.path(m.get("field"), w * 0.27 - 8),
                lay.user(m.get("text")),
                lay.user(si),
                source_cell,
            ])
        out.append(lay.table(rows, [w * 0.27, w * 0.25, w * 0.2, w * 0.28]))
        if fields is not None:
            out.append(lay.P(self.esc(self.L("inputs_note")), "small"))
        return out + self._derived_table()

    def _derived_table(self) -> list:
        """What the tool computed from the inputs and used, at 7 significant figures."""
        from reportlab.platypus import CondPageBreak

        lay = self.lay
        items = _seq(self.r.get("derived_inputs"), "derived_inputs")
        if not items:
            return []
        names, bases = lay.tpl["derived"], lay.tpl["derived_basis"]
        w = lay.frame_width
        rows = [[lay.P(self.esc(self.L(k)), "head") for k in ("derived_name", "derived_value", "derived_basis")]]
        for i, item in enumerate(items):
            where = f"derived_inputs[{i}]"
            m = _mapping(item, where) or {}
            key = _str(m.get("key"), f"{where}.key") or ""
            value = _num(m.get("value_si"), f"{where}.value_si")
            unit = _str(m.get("unit_si"), f"{where}.unit_si") or ""
            text = self.na() if value is None else self.esc(derived_value_text(value, unit))
            basis_key = _str(m.get("basis"), f"{where}.basis") or key
            fields = _mapping(m.get("fields"), f"{where}.fields") or {}
            basis = bases.get(basis_key, "")
            try:
                basis = basis.format(**{k: _any_text(v) for k, v in fields.items()})
            except (KeyError, IndexError, ValueError):
                pass
            rows.append([lay.P(self.esc(names.get(key, key)), "cellb"), lay.P(text, "cell"), lay.user(basis)])
        return [CondPageBreak(90), lay.P(self.esc(self.L("derived_heading")), "h2"),
                lay.table(rows, [w * 0.34, w * 0.28, w * 0.38]),
                lay.P(self.esc(self.L("derived_note")), "small")]

    def _conduction(self) -> dict | None:
        return _mapping(self.r.get("conduction"), "conduction")

    def _conduction_note(self) -> list:
        """Unstirred contents: what the times are, how well the mesh converged, the lumped times beside them."""
        cond = self._conduction()
        if cond is None:
            return []
        change = _num(cond.get("mesh_relative_change"), "conduction.mesh_relative_change")
        if change is not None:
            mesh = self.L("conduction_mesh", change=f"{change * 100:.2g} %")
        elif cond.get("mesh_converged") is None:
            mesh = self.L("conduction_mesh_none")
        else:
            mesh = self.L("conduction_mesh_one")
        lumped = _mapping(self.r.get("lumped"), "lumped") or {}
        parts = []
        for i, item in enumerate(_seq(lumped.get("limits"), "lumped.limits")):
            m = _mapping(item, f"lumped.limits[{i}]") or {}
            t = _num(m.get("time_s"), f"lumped.limits[{i}].time_s")
            parts.append(f"{_str(m.get('name'), f'lumped.limits[{i}].name')}: "
                         + (_hours_short(t) if t is not None else self.L("not_reached", horizon=self.horizon_text())))
        geometry = _str(cond.get("geometry"), "conduction.geometry") or "?"
        half = _num(cond.get("half_thickness_m"), "conduction.half_thickness_m")
        biot = _num(cond.get("biot_number"), "conduction.biot_number")
        text = self.L("conduction_note", geometry=geometry,
                      size="half-thickness" if geometry == "slab" else "radius",
                      half_thickness=f"{half:.4g} m" if half is not None else "?",
                      biot=_num_text(biot, 3) if biot is not None else "?", mesh=mesh,
                      lumped="; ".join(parts) or self.L("not_applicable"))
        approx = _str(cond.get("geometry_approximation"), "conduction.geometry_approximation")
        if approx:
            text += f" Geometry approximated: {approx} (conservative)."
        if cond.get("runs_away") is True:
            text += " " + self.L("conduction_runs_away")
        return [self.lay.P(self.esc(text), "small")]

    def sec_method(self):
        lay = self.lay
        out = [lay.heading(self.numbers["method"], "method")] + lay.prose(lay.T("method.text"))
        if self._conduction() is not None:
            out += lay.prose(lay.T("method.unstirred"))
        if self.r.get("daily_cycle") is not None:
            out += lay.prose(lay.T("method.daily_cycle"))
            if self._conduction() is not None:
                how = "daily_cycle_unstirred"
            else:
                how = "daily_cycle_numeric" if self.r.get("method") == "numeric" else "daily_cycle_closed_form"
            out += lay.prose(lay.T("method." + how))
        return out

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
        sensitive: list[str] = []
        if self.limits:
            head = [lay.P(self.esc(self.L(k)), "head") for k in
                    ("limit", "limit_temperature", "time_to_reach", "margin", "adiabatic_time")]
            rows = [head]
            for li, lim in enumerate(self.limits, start=1):
                if lim["time_s"] is not None and lim["reached"]:
                    t_txt = self.hrs(lim["time_s"])
                    if self._near_peak(lim):
                        t_txt += f"<br/><i>{self.esc(self.L('sensitive_short'))}</i>"
                        sensitive.append(lim["name"])
                    if lim.get("time_note"):
                        t_txt += f"<br/><i>{self.esc(lim['time_note'])}</i>"
                else:
                    t_txt = self.esc(not_reached)
                if lim["margin_s"] is not None:
                    m_txt = self.hrs(lim["margin_s"])
                    if lim["margin_s"] < 0:
                        m_txt = f'<b><font color="{_VERDICT_COLOURS["fail"]}">{m_txt}</font></b>'
                    if lim["margin_note"]:
                        m_txt += f"<br/><i>{self.esc(self.L('margin_detection_assumed'))}</i>"
                elif not (lim["time_s"] is not None and lim["reached"]):
                    m_txt = self.na()
                elif response is None:
                    m_txt = f"<i>{self.esc(self.L('no_response_time'))}</i>"
                elif self.detection_basis() == "unmonitored":
                    m_txt = f"<i>{self.esc(self.L('detection_unmonitored_short'))}</i>"
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
            if sensitive:
                out.append(lay.P(f"<b>{self.esc(self.L('sensitive_note', limits=', '.join(sensitive)))}</b>",
                                 "small"))
            bound = self._adiabatic_is_bound()
            if bound is not None and ad_by_index:
                amb = self.u.full(readings.bound_ambient(self.r))
                cycle = readings.daily_cycle(self.r) is not None
                if bound:
                    key = "adiabatic_bound_note"
                    amb = self.L("adiabatic_cycle_ambient", temp=amb) if cycle else amb
                else:
                    key = "adiabatic_not_bound_note_cycle" if cycle else "adiabatic_not_bound_note"
                out.append(lay.P(self.esc(self.L(key, ambient=amb, start=self.u.full(self._start_temperature()))),
                                 "small"))
            if self.detection_basis() == "assumed":
                out.append(lay.P(f"<b>{self.esc(self.L('detection_assumed_note'))}</b>", "small"))
            elif self.detection_basis() == "unmonitored":
                out.append(lay.P(f"<b>{self.esc(self.L('detection_unmonitored'))}</b>", "small"))
        else:
            out.append(lay.P(f"<i>{self.esc(self.L('no_limits'))}</i>"))
        out += self._conduction_note()
        start = _mapping(self.r.get("start_release"), "start_release")
        if start is not None:
            st = _num(start.get("temperature_K"), "start_release.temperature_K")
            out.append(lay.P(self.esc(self.L("start_release_note", temp=self.u.full(st) if st is not None else "?")),
                             "small"))
        out.append(self._spacer(6))

        tau = self.num("time_constant_s")
        ua = self.num("ua_W_per_K")
        steady = self.num("steady_temperature_K")
        mixing = _str(self.r.get("mixing"), "mixing")
        biot = self.num("biot_number")
        cycle = _mapping(self.r.get("daily_cycle"), "daily_cycle")
        ambient_label = self.L("ambient_daily_mean") if cycle is not None else self.L("ambient_temperature")
        pairs = [
            (self.L("initial_temperature"), self.temp(self.num("initial_temperature_K"))),
            (ambient_label, self.temp(self.num("ambient_temperature_K"))),
            *(self._cycle_pairs(cycle) if cycle is not None else []),
        ]
        pairs += self._peak_and_steady_pairs(steady, cycle is not None)
        tau_label = self.L("time_constant_lumped") if mixing == "unstirred" and tau is not None else self.L("time_constant")
        pairs.append((tau_label, self.hrs(tau, self.L("adiabatic_no_loss"))))
        rise = self.num("temperature_rise_K", adiabatic, "adiabatic.temperature_rise_K")
        if rise is not None and rise > 0:  # only where decaying heat gives one (never a 0 K "rise")
            pairs.append((self.L("adiabatic_rise"), self.esc(self.u.rise(rise))))
        pairs += [
            (self.L("heat_capacity"), self.esc(_si_prefixed(self.num("heat_capacity_J_per_K"), "J/K", 4))
             if self.r.get("heat_capacity_J_per_K") is not None else self.na()),
            (self.L("ua"), self.esc(_si_prefixed(ua, "W/K", 4)) if ua is not None else self.na()),
            (self.L("horizon"), self.hrs(self.horizon)),
            (self.L("detection_plus_response"), self._det_resp_text()),
            (self.L("mixing"), self.esc(mixing) if mixing else self.na()),
        ]
        if biot is not None or (mixing and mixing != "stirred"):
            pairs.append((self.L("biot_lumped" if self._conduction() is not None else "biot"),
                          self.esc(_num_text(biot, 3)) if biot is not None else self.na()))
        out.append(lay.kv_table(pairs))
        if _seq(self.r.get("allowable_values"), "allowable_values"):
            out += self.allowable_values()
        return out

    def _cycle_pairs(self, cycle: dict) -> list:
        """Rows for the daily cycle of the air and the sun (only when the case has one)."""
        def hours(key):
            v = _num(cycle.get(key), f"daily_cycle.{key}")
            return self.esc(f"{v / 3600.0:.4g} h") if v is not None else self.na()

        rng = _num(cycle.get("daily_range_K"), "daily_cycle.daily_range_K")
        pairs = [(self.L("cycle_air_range"), self.esc(self.u.rise(rng)) if rng is not None else self.na()),
                 (self.L("cycle_warmest_time"), hours("warmest_time_of_day_s"))]
        sun = _mapping(cycle.get("sun"), "daily_cycle.sun")
        if sun is not None:
            rise = _num(sun.get("sol_air_rise_K"), "daily_cycle.sun.sol_air_rise_K")
            area = _num(sun.get("exposed_area_m2"), "daily_cycle.sun.exposed_area_m2")
            share = _num(sun.get("exposed_share"), "daily_cycle.sun.exposed_share")
            pairs.append((self.L("cycle_sun"), self.esc(
                self.L("cycle_sun_value", rise=self.u.rise(rise) if rise is not None else "?",
                       area=f"{area:.4g}" if area is not None else "?",
                       share=f"{share * 100:.3g}" if share is not None else "?"))))
        pairs.append((self.L("cycle_effective_max"), self.temp(_num(cycle.get("effective_ambient_max_K"),
                                                                    "daily_cycle.effective_ambient_max_K"))))
        basis = _str(cycle.get("start_time_basis"), "daily_cycle.start_time_basis") or ""
        start = _num(cycle.get("start_time_of_day_s"), "daily_cycle.start_time_of_day_s")
        pairs.append((self.L("cycle_start"), self.esc(f"{start / 3600.0:.4g} h ({basis})") if start is not None
                      else self.na()))
        return pairs

    def _start_temperature(self) -> float | None:
        return readings.start_temperature(self.r)

    def _near_peak(self, lim: dict) -> bool:
        return readings.near_peak(self.r, lim["temperature_K"])

    def _adiabatic_is_bound(self) -> bool | None:
        return readings.adiabatic_is_bound(self.r)

    def _boiling_plateau(self) -> Mapping | None:
        return _mapping(readings.boiling_plateau(self.r), "boiling")

    def _peak_and_steady_pairs(self, steady: float | None, daily_cycle: bool = False) -> list:
        """Peak (or boiling plateau, or temperature at the horizon) and steady rows; with a daily cycle the steady
        temperature is the daily mean of the periodic state."""
        peak, t_peak = self.num("peak_temperature_K"), self.num("peak_time_s")
        steady_key = "steady_daily_mean" if daily_cycle else "steady_temperature"
        plateau = self._boiling_plateau()
        if plateau is not None:
            t_boil = _num(plateau.get("time_to_boil_s"), "boiling.time_to_boil_s")
            t_dry = _num(plateau.get("time_to_dry_s"), "boiling.time_to_dry_s")
            until = self.hrs(t_dry) if t_dry is not None else self.esc(self.L("plateau_no_dry_out"))
            pairs = [(self.L("boiling_plateau"), self.markup("boiling_plateau_value", temp=self.temp(peak),
                                                             start=self.hrs(t_boil), until=until))]
            if steady is not None and peak is not None and steady > peak:
                pairs.append((self.L("steady_after_dry_out_daily_mean" if daily_cycle else "steady_after_dry_out"),
                              self.temp(steady)))
            else:
                pairs.append((self.L(steady_key), self.temp(steady, self.L("no_steady_state"))))
            return pairs
        if readings.stops_in_runaway(self.r):  # the solution stops in the runaway: not a peak
            pairs = [(self.L("runaway_stop_temperature"), self.markup("runaway_stop_value", temp=self.temp(peak),
                                                                      time=self.hrs(t_peak)))]
        elif readings.still_rising(self.r):  # no peak within the horizon: still rising, towards the steady state or without bound
            pairs = [(self.L("horizon_temperature"), self.temp(peak))]
        else:
            pairs = [(self.L("peak_temperature"), self.temp(peak)), (self.L("peak_time"), self.hrs(t_peak))]
        pairs.append((self.L(steady_key), self.temp(steady, self.L(
            "steady_unstirred" if self._conduction() is not None else "no_steady_state"))))
        return pairs

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
        if self.detection_basis() == "unmonitored":
            return f"<i>{self.esc(self.L('detection_unmonitored_short'))}</i>"
        if response is None:
            return f"<i>{self.esc(self.L('no_response_time'))}</i>"
        if detection is None and "detection_time_s" in self.r:
            return f"<i>{self.esc(self.L('alarm_never'))}</i>"
        total = (detection or 0.0) + response
        text = self.hrs(total)
        if self.detection_basis() == "assumed":
            text += f" <i>({self.esc(self.L('margin_detection_assumed'))})</i>"
        return text

    # -- charts -----------------------------------------------------------------
    def _limit_lines(self):
        from screening.report.charts import LIMIT_COLOURS, LIMIT_DASHES, HLine

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
        from screening.report.charts import VLine

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

        from screening.report.charts import Series, line_chart

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
        series, conduction_xs = self._conduction_series(series)
        if conduction_xs:
            x_range = self._x_range([max(conduction_xs), max(xs)] + [v.x * 1.04 for v in vlines])
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
        if conduction_xs:
            caption += " " + self.L("chart_caption_conduction")
        out.append(KeepTogether([out.pop(), drawing, lay.P(self.esc(caption), "caption")]))
        return out

    def _conduction_series(self, lumped: list):
        """Unstirred contents: hot spot, centre (where it differs) and surface, with the lumped line dashed."""
        from screening.report.charts import FRAME, TRACE, TRACE_2, Series

        hist = _mapping(self.plot("conduction_history"), "conduction_history")
        if not hist:
            return lumped, []
        ts = _floats(hist.get("time_s"), "conduction_history.time_s")
        if not ts:
            return lumped, []
        xs = [t / 3600.0 for t in ts]
        curves = {}
        for key in ("hot_spot_K", "centre_K", "surface_K"):
            values = _floats(hist.get(key), f"conduction_history.{key}")
            if values:
                n = min(len(xs), len(values))
                curves[key] = (xs[:n], [self.u.convert(k) for k in values[:n]], values[:n])
        if "hot_spot_K" not in curves:
            return lumped, []
        out = [Series(curves["hot_spot_K"][0], curves["hot_spot_K"][1], self.tx.clean(self.L("chart_series_hot_spot")),
                      TRACE, 1.6)]
        hot = curves["hot_spot_K"][2]
        if "centre_K" in curves and any(abs(a - b) > 0.05 for a, b in zip(curves["centre_K"][2], hot)):
            out.append(Series(curves["centre_K"][0], curves["centre_K"][1], self.tx.clean(self.L("chart_series_centre")),
                              TRACE, 1.0, (1, 2)))
        if "surface_K" in curves:
            out.append(Series(curves["surface_K"][0], curves["surface_K"][1],
                              self.tx.clean(self.L("chart_series_surface")), TRACE_2, 1.2))
        for s in lumped:
            out.append(Series(s.xs, s.ys, self.tx.clean(self.L("chart_series_lumped")), FRAME, 1.0, (4, 3)))
        return out, xs

    def sec_runaway(self):
        lay = self.lay
        out = [lay.heading(self.numbers["runaway"], "runaway")]
        scenario = _str(self.r.get("scenario"), "scenario")
        if scenario == "cooling-failure":
            pairs = self._cooling_failure_pairs()
        elif scenario == "storage":
            pairs = self._storage_pairs()
        elif scenario == "heat-up":
            pairs = self._heat_up_pairs()
        else:
            pairs = self._legacy_pairs()
        pairs = self._scenario_head() + pairs + self._medium_pairs()
        out.append(lay.kv_table(pairs))
        summary = _str(self.r.get("runaway_summary"), "runaway_summary")
        if summary:
            out.append(lay.user(summary, "body", limit=None))
        out += self.heat_balance()
        return out

    def _scenario_head(self) -> list:
        scenario = _str(self.r.get("scenario"), "scenario")
        if not scenario:
            return []
        key = {"cooling-failure": "scenario_cooling_failure", "storage": "scenario_storage",
               "heat-up": "scenario_heat_up"}.get(scenario)
        pairs = [(self.L("scenario"), self.esc(self.L(key)) if key else self.esc(scenario))]
        for role, label in (("synthesis_sources", "synthesis_sources"), ("decomposition_sources",
                                                                         "decomposition_sources")):
            names = [_str(x, f"{role}[{i}]") or "" for i, x in enumerate(_seq(self.r.get(role), role))]
            if names:
                pairs.append((self.L(label), self.esc("; ".join(names))))
        return pairs

    def _rise(self, key: str) -> str:
        v = self.num(key)
        return self.esc(self.u.rise(v)) if v is not None else self.na()

    def _class_text(self) -> str:
        cls = self.r.get("criticality_class")
        if cls is not None:
            if isinstance(cls, bool) or not isinstance(cls, (int, float, str)):
                raise MemoInputError("criticality_class: expected a number or null")
            return self.esc(self.L("criticality_class_value", n=cls))
        classes = [c for c in _seq(self.r.get("criticality_classes_possible"), "criticality_classes_possible")]
        if classes:
            names = [str(c) for c in classes]
            return self.esc(self.L("criticality_classes_open", classes=f"{', '.join(names[:-1])} / {names[-1]}"))
        return self.na()

    def _cooling_failure_pairs(self) -> list:
        pairs = [(self.L("process_temperature"), self.temp(self.num("initial_temperature_K")))]
        for i, part in enumerate(_seq(self.r.get("mtsr_parts"), "mtsr_parts")):
            m = _mapping(part, f"mtsr_parts[{i}]") or {}
            rise = _num(m.get("temperature_rise_K"), f"mtsr_parts[{i}].temperature_rise_K")
            frac = _num(m.get("accumulated_fraction"), f"mtsr_parts[{i}].accumulated_fraction")
            label = self.L("mtsr_part", source=_str(m.get("source"), f"mtsr_parts[{i}].source") or "?",
                           kind=_str(m.get("kind"), f"mtsr_parts[{i}].kind") or "?")
            value = self.esc(self.u.rise(rise)) if rise is not None else self.na()
            if frac is not None:
                value += " " + self.esc(self.L("accumulated_share", share=_percent(frac)))
            pairs.append((label, value))
        basis = _str(self.r.get("mtt_basis"), "mtt_basis")
        pairs += [
            (self.L("mtsr"), self.temp(self.num("mtsr_K"))),
            (self.L("mtt") + (f" ({basis})" if basis else ""), self.temp(self.num("maximum_technical_temperature_K"))),
        ]
        if _seq(self.r.get("decomposition_sources"), "decomposition_sources"):
            pairs += [
                (self.L("t_d24"), self.temp(self.num("t_d24_K"))),
                (self.L("tmr_at_mtsr"), self.hrs(self.num("tmr_at_mtsr_s"))),
            ]
            shares = _seq(self.r.get("decomposition_shares_at_mtsr"), "decomposition_shares_at_mtsr")
            if len(shares) > 1:
                for i, sh in enumerate(shares):
                    m = _mapping(sh, f"decomposition_shares_at_mtsr[{i}]") or {}
                    share = _num(m.get("share"), f"decomposition_shares_at_mtsr[{i}].share")
                    pairs.append((self.L("share_at_mtsr", source=_str(m.get("source"), "source") or "?"),
                                  self.esc(_percent(share)) if share is not None else self.na()))
            above = self.r.get("mtsr_above_no_return")
            nr = self.temp(self.num("no_return_temperature_K"))
            if above is not None:
                nr += " " + self.esc(self.L("mtsr_above_no_return" if above else "mtsr_below_no_return"))
            unbounded = self.r.get("decomposition_rise_unbounded") is True
            pairs += [
                (self.L("tmr_at_process"), self.hrs(self.num("tmr_adiabatic_s"))),
                (self.L("decomposition_rise"), self.esc(self.L("unbounded")) if unbounded
                 else self._rise("decomposition_temperature_rise_K")),
                (self.L("final_temperature"), self.temp(self.num("final_temperature_K"))),
                (self.L("final_minus_process"), self._rise("final_minus_process_K")),
                (self.L("no_return_decomposition"), nr),
            ]
        else:
            pairs.append((self.L("t_d24"), self.esc(self.L("t_d24_must_be_measured"))))
        pairs.append((self.L("criticality_class"), self._class_text()))
        return pairs

    def _storage_pairs(self) -> list:
        method = _str(self.r.get("critical_ambient_method"), "critical_ambient_method")
        method_name = {"semenov": "Semenov", "frank-kamenetskii": "Frank-Kamenetskii"}.get(method or "", method)
        ca = self.num("critical_ambient_temperature_K")
        ca_txt = self.temp(ca)
        if ca is not None and method_name:
            ca_txt += " " + self.esc(self.L("critical_ambient_method", method=method_name))
        gas = [_str(x, f"gas_generating_sources[{i}]") or ""
               for i, x in enumerate(_seq(self.r.get("gas_generating_sources"), "gas_generating_sources"))]
        if gas:
            gas_txt = self.esc(self.L("gas_closed" if self.r.get("gas_in_closed_package") else "gas_open",
                                      sources="; ".join(gas)))
        else:
            gas_txt = self.esc(self.L("gas_none"))
        unbounded = self.r.get("decomposition_rise_unbounded") is True
        pairs = [
            (self.L("ambient_temperature"), self.temp(self.num("ambient_temperature_K"))),
            (self.L("critical_ambient"), ca_txt),
            (self.L("critical_ambient_margin"), self._rise("critical_ambient_margin_K")),
        ]
        if self.r.get("daily_cycle") is not None:  # the criteria use the daily maximum of air and sun
            pairs[0] = (self.L("ambient_daily_mean"), self.temp(self.num("ambient_temperature_K")))
            pairs[2:2] = [(self.L("criteria_ambient"), self.temp(self.num("criteria_ambient_K")))]
            pairs.append((self.L("margin_daily_mean"), self._rise("critical_ambient_margin_at_daily_mean_K")))
        if method == "semenov":
            pairs += [(self.L("critical_temperature"), self.temp(self.num("critical_temperature_K"))),
                      (self.L("no_return_temperature"), self.temp(self.num("no_return_temperature_K")))]
        pairs += [
            (self.L("storage_temperature"), self.temp(self.num("storage_temperature_K"))),
            (self.L("tmr_at_storage"), self.hrs(self.num("tmr_at_storage_temperature_s"))),
            (self.L("t_d24"), self.temp(self.num("t_d24_K"))),
            (self.L("tmr_adiabatic"), self.hrs(self.num("tmr_adiabatic_s"))),
            (self.L("decomposition_rise"), self.esc(self.L("unbounded")) if unbounded
             else self._rise("decomposition_temperature_rise_K")),
            (self.L("gas_generation"), gas_txt),
        ]
        return pairs

    def _heat_up_pairs(self) -> list:
        pairs = []
        if _seq(self.r.get("decomposition_sources"), "decomposition_sources"):
            pairs += [(self.L("tmr_adiabatic"), self.hrs(self.num("tmr_adiabatic_s"))),
                      (self.L("t_d24"), self.temp(self.num("t_d24_K")))]
        if self.num("no_return_temperature_K") is not None:
            pairs.append((self.L("no_return_temperature"), self.temp(self.num("no_return_temperature_K"))))
        return pairs

    def _medium_pairs(self) -> list:
        tmc = self.num("critical_medium_temperature_K")
        tm = self.num("heating_medium_temperature_K")
        if tmc is None and tm is None:
            return []
        tm_txt = self.temp(tm)
        if self.r.get("medium_above_t_d24") is True:
            tm_txt += " " + self.esc(self.L("medium_above_t_d24"))
        return [(self.L("heating_medium_temperature"), tm_txt),
                (self.L("critical_medium_temperature"), self.temp(tmc))]

    def _legacy_pairs(self) -> list:
        method = _str(self.r.get("critical_ambient_method"), "critical_ambient_method")
        method_name = {"semenov": "Semenov", "frank-kamenetskii": "Frank-Kamenetskii"}.get(method or "", method)
        ca = self.num("critical_ambient_temperature_K")
        ca_txt = self.temp(ca)
        if ca is not None and method_name:
            ca_txt += " " + self.esc(self.L("critical_ambient_method", method=method_name))
        rise = self.num("adiabatic_temperature_rise_K")
        return [
            (self.L("tmr_adiabatic"), self.hrs(self.num("tmr_adiabatic_s"))),
            (self.L("t_d24"), self.temp(self.num("t_d24_K"))),
            (self.L("critical_ambient"), ca_txt),
            (self.L("critical_temperature"), self.temp(self.num("critical_temperature_K"))),
            (self.L("no_return_temperature"), self.temp(self.num("no_return_temperature_K"))),
            (self.L("adiabatic_temperature_rise"), self.esc(self.u.rise(rise)) if rise is not None else self.na()),
            (self.L("mtsr"), self.temp(self.num("mtsr_K"))),
            (self.L("mtt"), self.temp(self.num("maximum_technical_temperature_K"))),
            (self.L("tmr_at_mtsr"), self.hrs(self.num("tmr_at_mtsr_s"))),
            (self.L("criticality_class"), self._class_text()),
        ]

    def heat_balance(self):
        from reportlab.platypus import KeepTogether

        from screening.report.charts import (
            TRACE,
            TRACE_2,
            Marker,
            Series,
            VLine,
            line_chart,
        )

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

    def sec_sadt(self):
        """The package's SADT, control and emergency temperatures, and the 5 °C steps tried (storage cases)."""
        lay = self.lay
        out = [lay.heading(self.numbers["sadt"], "sadt")]
        block = _mapping(self.r.get("sadt"), "sadt") or {}
        method = _str(block.get("method"), "sadt.method")
        pairs = [(self.L("sadt"), self.temp(self.num("sadt_K"), self.esc(self.L("sadt_not_given"))))]
        if method in ("lumped", "conduction"):
            pairs.append((self.L("sadt_method"), self.esc(self.L(f"sadt_method_{method}"))))
        pairs += [(self.L("control_temperature"), self.temp(self.num("control_temperature_K"))),
                  (self.L("emergency_temperature"), self.temp(self.num("emergency_temperature_K")))]
        low, bound = _num(block.get("lowest_K"), "sadt.lowest_K"), _num(block.get("bound_K"), "sadt.bound_K")
        if low is not None and bound is not None:
            crit = _num(block.get("critical_ambient_K"), "sadt.critical_ambient_K")
            pairs.append((self.L("sadt_search"), self.esc(self.L(
                "sadt_search_value", low=self.temp(low), bound=self.temp(bound),
                critical=self.temp(crit) if crit is not None else self.na()))))
        control = _mapping(block.get("temperature_control_required"), "sadt.temperature_control_required") or {}
        note = _str(control.get("note"), "sadt.temperature_control_required.note")
        if note:
            pairs.append((self.L("sadt_temperature_control"), self.esc(note)))
        sadt_note = _str(self.r.get("sadt_note"), "sadt_note")
        if sadt_note:
            pairs.append((self.L("sadt_notes"), self.esc(sadt_note)))
        out.append(lay.kv_table(pairs))
        trials = _seq(block.get("trials"), "sadt.trials")
        if trials:
            w = lay.frame_width
            rows = [[lay.P(self.esc(self.L(k)), "head") for k in ("sadt_step_ambient", "sadt_step_centre",
                                                                   "sadt_step_rise")]]
            for i, item in enumerate(trials):
                where = f"sadt.trials[{i}]"
                t = _mapping(item, where) or {}
                amb = _num(t.get("ambient_K"), f"{where}.ambient_K")
                end = _num(t.get("centre_at_7_days_K"), f"{where}.centre_at_7_days_K")
                if end is not None:
                    centre = self.temp(end)
                else:
                    centre = self.esc(self.L("sadt_step_runaway", temp=self.temp(_num(
                        t.get("peak_centre_K"), f"{where}.peak_centre_K")), time=self.hrs(_num(
                            t.get("stopped_at_s"), f"{where}.stopped_at_s"))))
                rise = _num(t.get("rise_time_s"), f"{where}.rise_time_s")
                rise_txt = self.hrs(rise) if rise is not None else self.esc(self.L("sadt_step_no_rise"))
                rows.append([lay.P(self.temp(amb), "cell"), lay.P(centre, "cell"), lay.P(rise_txt, "cell")])
            out.append(self._spacer(6))
            out.append(lay.table(rows, [w * 0.3, w * 0.4, w * 0.3]))
        out += lay.prose(lay.T("sadt.text"), "small")
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

        from screening.report.charts import TRACE, TRACE_2, Series, VLine, line_chart

        lay = self.lay
        out = [lay.heading(self.numbers["recovery"], "recovery")]
        response = self.num("response_time_s")
        detection = self.num("detection_time_s")
        if self.detection_basis() == "unmonitored":
            det_txt = f"<b>{self.esc(self.L('detection_unmonitored_short'))}</b>"
        elif detection is None and "detection_time_s" in self.r:
            det_txt = f"<b>{self.esc(self.L('alarm_never'))}</b>"
        else:
            det_txt = self.hrs(detection)
            if self.detection_basis() == "assumed":
                det_txt += f" <b>({self.esc(self.L('margin_detection_assumed'))})</b>"
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
        if se is not None and se == 0 and p in (0.0, 1.0):
            zero_flags.append(True)
            count = _num(self.uncertainty().get("accepted"), "uncertainty.accepted") if self.uncertainty() else None
            if count is not None and count >= 1:
                bound = zero_hit_upper_bound(int(count))  # one-sided 95 % (Clopper-Pearson with no hits)
                key = "unc_zero_bound" if p == 0.0 else "unc_all_bound"
                return self.esc(self.L(key, n=n or str(int(count)),
                                       bound=_percent(bound if p == 0.0 else 1.0 - bound)))
            text = self.esc(_percent(p, se))
            if n is not None:
                text += " " + self.esc(self.L("unc_none_of" if p == 0.0 else "unc_all_of", n=n))
            return text
        return self.esc(_percent(p, se))

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

        from screening.report.charts import TornadoRow, tornado_chart

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

        from screening.report.charts import TRACE, Series, VLine, fit_text, line_chart

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
        out = [lay.heading(self.numbers["assumptions"], "assumptions")] + lay.prose(lay.T("assumptions.text"))
        if self._conduction() is not None:
            out += lay.prose(lay.T("assumptions.unstirred"))
        own = [_any_text(a) for a in _seq(self.r.get("assumptions"), "assumptions")]
        if own:
            out.append(lay.P(f"<b>{self.esc(self.L('case_assumptions'))}</b>", "body"))
            for i, a in enumerate(own, start=1):
                out.append(lay.P(f"<b>A{i}.</b>&nbsp;{self.esc(a)}", "bullet"))
        return out

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


def zero_hit_upper_bound(n: int) -> float:
    """One-sided 95 % upper bound on a probability when none of n samples is a hit: 1 - 0.05^(1/n) (about 3/n).

    The Clopper-Pearson bound for zero successes (the "rule of three" in its exact form)."""
    return 1.0 - 0.05 ** (1.0 / n)


def derived_value_text(value: float, unit: str) -> str:
    """A derived input at 7 significant figures in SI, with kW beside large powers."""
    text = f"{_num_text(value, 7)} {unit}".strip() if unit != "1" else _num_text(value, 7)
    if unit == "W" and abs(value) >= 1000:
        text += f" ({_num_text(value / 1000.0, 7)} kW)"
    return text


def render_memo(result: Mapping, templates_dir: str | os.PathLike | None = None) -> bytes:
    """The review memo for one result dict, as PDF bytes.

    Raises :class:`TemplateError` for a bad template set and :class:`MemoInputError`
    for a value in ``result`` of the wrong kind.  Unknown keys are ignored and
    missing keys count as null.
    """
    tpl = load_templates(templates_dir)
    memo = _Memo(result, tpl)
    return memo.build()
