"""The register summary PDF: verdict counts, vessels by smallest margin, a histogram of
time to first limit and the cases that failed to run."""
from __future__ import annotations

import os
from collections.abc import Mapping, Sequence

from screening.report.pdf import (
    _VERDICT_COLOURS,
    MemoInputError,
    _atomic_write,
    _date_text,
    _hours,
    _Layout,
    _mapping,
    _num,
    _num_text,
    _seq,
    _str,
    _verdict_key,
)
from screening.report.templates import load_templates


def write_register_summary(results: Sequence[Mapping], errors: Sequence, path: str | os.PathLike,
                           templates_dir: str | os.PathLike | None = None, summarised: bool = False) -> None:
    """Render the register summary and write it atomically to ``path``."""
    _atomic_write(lambda: render_register_summary(results, errors, templates_dir, summarised), path)


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
                               start: int = 0, at_start_label: str | None = None) -> list[dict]:
    """The register summary's row for each result (numbered from ``start`` in messages).

    Rows of several parts, concatenated in order, can be passed to :func:`render_register_summary`
    with ``summarised=True``: the PDF is the same as from all the results at once. ``at_start_label``
    is the templates' ``labels.register_at_start``, when the caller has read them already.
    """
    if at_start_label is None:
        at_start_label = load_templates(templates_dir)["labels"]["register_at_start"]
    return _summary_rows(results, at_start_label, start)


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

        from screening.report.charts import bar_chart

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
