"""The parts of the web page that make it a workbench: the temperature history as a chart with its
text alternative, the uncertainty charts, every input as written and the derived inputs, and the
side-by-side comparison of two recorded runs.

HTML only (the routes are in :mod:`screening.service.web`); every chart is server-drawn SVG
(:mod:`screening.service.web_chart`) with a table of what it plots.
"""
from __future__ import annotations

import html
import math
from collections.abc import Mapping

from screening.case.display import SYMBOL, duration, temp
from screening.case.units import kelvin_to
from screening.report import readings
from screening.service.web_chart import COLOURS, DASHES, Chart, Line, Mark, svg_bars, svg_chart

esc = html.escape


def _num(v):
    return float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) else None


def _series(view: Mapping, key: str):
    h = view.get(key)
    if not isinstance(h, Mapping):
        return None
    ts, ks = h.get("time_s") or [], h.get("temperature_K") or []
    n = min(len(ts), len(ks))
    if n < 2:
        return None
    return list(ts[:n]), list(ks[:n])


def _to_unit(k, unit):
    return kelvin_to(k, unit) if unit != "K" else k


def history_section(r: Mapping, view: Mapping | None, prefix: str = "history", heading: bool = True) -> str:
    """The temperature history: chart (limits, detection, response marked) and its text alternative."""
    unit = (r.get("units") or {}).get("temperature", "K")
    sym = SYMBOL.get(unit, unit)
    view = view or {}
    base = _series(view, "history")
    out = [f'<h2 id="{prefix}-heading">Temperature history</h2>'] if heading else []
    if base is None:
        out.append('<p class="muted">No temperature history came with this run, so no chart is drawn.</p>')
        return "\n".join(out)
    unstirred = isinstance(r.get("conduction"), Mapping)
    lines = [Line([t / 3600 for t in base[0]], [_to_unit(k, unit) for k in base[1]],
                  "lumped (well-mixed) temperature, not valid for unstirred contents" if unstirred
                  else "contents temperature")]
    extra = []  # further histories (recovery, the unstirred body's hot spot, centre, surface) under their own names
    series = [(key, label, _series(view, key)) for key, label in (("recovery_history", "with recovery action"),)]
    cond = view.get("conduction_history") if unstirred else None
    if isinstance(cond, Mapping):
        for key, label in (("hot_spot_K", "hottest point (conduction)"), ("centre_K", "centre"),
                           ("surface_K", "surface")):
            ts, ks = cond.get("time_s") or [], cond.get(key) or []
            n = min(len(ts), len(ks))
            series.append((key, label, (list(ts[:n]), list(ks[:n])) if n >= 2 else None))
    for i, (key, label, s) in enumerate(series):
        if s is not None:
            lines.append(Line([t / 3600 for t in s[0]], [_to_unit(k, unit) for k in s[1]], label,
                              colour=COLOURS[(i + 2) % len(COLOURS)], dash=DASHES[(i + 1) % len(DASHES)], width=1.8))
            extra.append((label, s))
    marks = []
    for i, lim in enumerate(r.get("limits") or []):
        tk = _num(lim.get("temperature_K"))
        if tk is not None:
            marks.append(Mark(_to_unit(tk, unit), f"{lim.get('name')} {_to_unit(tk, unit):.1f} {sym}",
                              colour=COLOURS[1 + i % 3], dash=DASHES[1 + i % 3]))
    det, resp = _num(r.get("detection_time_s")), _num(r.get("response_time_s"))
    if det is not None and det > 0 and r.get("detection_basis") in ("alarm", "delay"):
        marks.append(Mark(det / 3600, f"detection {duration(det)}", axis="x", colour=COLOURS[3], dash="2 3"))
    if resp is not None and (det is not None or r.get("detection_basis") == "assumed"):
        total = (det or 0.0) + resp
        marks.append(Mark(total / 3600, f"detection + response {duration(total)}", axis="x", colour=COLOURS[4],
                          dash="8 3 2 3"))
    horizon = _num(r.get("horizon_s"))
    chart = Chart("Temperature history of the contents",
                  f"Contents temperature in {sym} against time in hours from the start of the scenario, with the "
                  f"limit temperatures as horizontal lines and detection and response as vertical lines. The table "
                  f"below the chart lists the limit times and every plotted point.",
                  "Time from the start of the scenario (h)", f"Temperature ({sym})", lines, marks,
                  x_range=(0.0, max(horizon / 3600, max(lines[0].xs))) if horizon else None)
    out.append(f'<figure class="chart" aria-labelledby="{prefix}-caption">{svg_chart(chart, prefix + "-chart")}'
               f'<figcaption id="{prefix}-caption">Contents temperature against time. Horizontal lines: limit '
               f'temperatures; vertical lines: detection and the end of detection + response.'
               f'{" Dashed curves: " + "; ".join(x[0] for x in extra) + "." if extra else ""}</figcaption></figure>')
    # text alternative: limit times, then every plotted point
    rows = []
    for lim in r.get("limits") or []:
        t = _num(lim.get("time_s"))
        rows.append(f'<tr><td>{esc(str(lim.get("name")))}</td><td class="n">{esc(temp(lim.get("temperature_K"), unit))}'
                    f'</td><td class="n">{esc(duration(t) if t is not None else "not reached within the horizon")}'
                    f'</td></tr>')
    if det is not None and r.get("detection_basis") in ("alarm", "delay"):
        rows.append(f'<tr><td>detection</td><td></td><td class="n">{esc(duration(det))}</td></tr>')
    if resp is not None and (det is not None or r.get("detection_basis") == "assumed"):
        rows.append(f'<tr><td>end of detection + response</td><td></td><td class="n">'
                    f'{esc(duration((det or 0.0) + resp))}</td></tr>')
    out.append(f'<table id="{prefix}-times"><caption>Times on the chart</caption><tr><th scope="col">Mark</th>'
               '<th scope="col">Temperature</th><th scope="col">Time</th></tr>' + "".join(rows) + "</table>")
    head = "".join(f'<th scope="col">{esc(x[0])} ({esc(sym)})</th>' for x in extra)
    pts = []
    extra_at = [dict(zip(s[0], s[1])) for _, s in extra]
    for t, k in zip(*base):
        cells = "".join(f'<td class="n">{_to_unit(e[t], unit):.2f}</td>' if t in e else "<td></td>" for e in extra_at)
        pts.append(f'<tr><td class="n">{t / 3600:.4f}</td><td class="n">{_to_unit(k, unit):.2f}</td>{cells}</tr>')
    out.append(f'<details id="{prefix}-points"><summary>Every plotted point ({len(pts)})</summary>'
               f'<table><caption>Plotted points of the temperature history</caption><tr><th scope="col">Time (h)</th>'
               f'<th scope="col">Contents temperature ({esc(sym)})</th>{head}</tr>{"".join(pts)}</table></details>')
    return "\n".join(out)


def reading_notes(r: Mapping) -> str:
    """How to read the key numbers: bound or not, boiling plateau, still rising, sensitive limits."""
    unit = (r.get("units") or {}).get("temperature", "K")
    notes = []
    bound = readings.adiabatic_is_bound(r)
    if readings.daily_cycle(r) is not None and bound is False:
        notes.append("The column with no heat loss (UA = 0) is not shown to be a bound here: the contents do not stay "
                     "above the daily maximum of the effective ambient (air and sun), so the surroundings may heat "
                     "them for part of the day and leaving heat loss out can give later times.")
    elif readings.daily_cycle(r) is not None and bound:
        notes.append("The column with no heat loss (UA = 0) bounds the times from below: the contents never fall "
                     "below the daily maximum of the effective ambient (air and sun).")
    elif bound is False:
        notes.append("The column with no heat loss (UA = 0) is not a bound here: the ambient is above the contents "
                     "for part of the history, so the surroundings heat them and leaving heat loss out can give "
                     "later times.")
    elif bound:
        notes.append("The column with no heat loss (UA = 0) bounds the times from below: the contents never fall "
                     "below the ambient.")
    plateau = readings.boiling_plateau(r)
    if plateau is not None:
        dry = plateau.get("time_to_dry_s")
        notes.append(f"Boiling plateau (open vessel): {temp(r.get('peak_temperature_K'), unit)} from "
                     f"{duration(plateau.get('time_to_boil_s'))} until "
                     f"{duration(dry) if dry is not None else 'the end of the horizon (not dry within it)'}; the "
                     f"steady temperature shown applies only after dry-out, if heating continued.")
    sensitive = [str(x.get("name")) for x in r.get("limits") or [] if x.get("time_s") is not None
                 and readings.near_peak(r, _num(x.get("temperature_K")))]
    if sensitive:
        notes.append(f"Sensitive to the inputs: {', '.join(sensitive)} lies within 2 % of the peak temperature rise; "
                     f"a small change in any input moves its time a lot.")
    return "".join(f'<p class="note">{esc(n)}</p>' for n in notes)


def peak_text(r: Mapping) -> tuple[str, str]:
    unit = (r.get("units") or {}).get("temperature", "K")
    if readings.boiling_plateau(r) is not None:
        return "Boiling plateau", f'{temp(r.get("peak_temperature_K"), unit)} from {duration(r.get("peak_time_s"))}'
    if readings.still_rising(r):
        return "Temperature at the end of the horizon", f'{temp(r.get("peak_temperature_K"), unit)} (still rising)'
    return "Peak temperature", f'{temp(r.get("peak_temperature_K"), unit)} at {duration(r.get("peak_time_s"))}'


def steady_label(r: Mapping) -> str:
    st, peak = _num(r.get("steady_temperature_K")), _num(r.get("peak_temperature_K"))
    mean = " (daily mean)" if readings.daily_cycle(r) is not None else ""
    if readings.boiling_plateau(r) is not None and st is not None and peak is not None and st > peak:
        return f"Steady temperature{mean} after dry-out"
    return f"Steady temperature{mean}"


def inputs_section(r: Mapping, view: Mapping | None) -> str:
    fields = (view or {}).get("case_fields")
    if not isinstance(fields, list):
        return ""
    rows = []
    for f in fields:
        if not isinstance(f, Mapping):
            continue
        v = _num(f.get("value_si"))
        unit = f.get("unit_si") or ""
        si = "" if v is None else f"{v:.6g} {unit if unit != '1' else ''}".strip()
        src = f.get("source") or ("default (not written in the case)" if f.get("written") is False else "")
        rows.append(f'<tr><td class="mono">{esc(str(f.get("field")))}</td><td>{esc(str(f.get("text")))}</td>'
                    f'<td class="n">{esc(si)}</td><td>{esc(str(src))}</td></tr>')
    return ('<h2 id="inputs-heading">Inputs as written</h2><table id="inputs"><tr><th scope="col">Field</th>'
            '<th scope="col">As written</th><th scope="col">SI value</th><th scope="col">Source</th></tr>'
            + "".join(rows) + "</table>")


def derived_section(view: Mapping | None) -> str:
    from screening.report.memo import derived_value_text
    from screening.report.templates import load_templates

    items = (view or {}).get("derived_inputs")
    if not isinstance(items, list) or not items:
        return ""
    tpl = load_templates()
    names, bases = tpl["derived"], tpl["derived_basis"]
    rows = []
    for d in items:
        if not isinstance(d, Mapping):
            continue
        v = _num(d.get("value_si"))
        basis = bases.get(str(d.get("basis")), "")
        try:
            basis = basis.format(**{k: str(x) for k, x in (d.get("fields") or {}).items()})
        except (KeyError, IndexError, ValueError):
            pass
        rows.append(f'<tr><th scope="row">{esc(names.get(str(d.get("key")), str(d.get("key"))))}</th>'
                    f'<td class="n">{esc(derived_value_text(v, str(d.get("unit_si") or "")) if v is not None else "—")}'
                    f'</td><td>{esc(basis)}</td></tr>')
    return ('<h2 id="derived-heading">Derived inputs</h2><p class="muted">What the tool computed from the inputs and '
            'used, to 7 significant figures.</p><table id="derived"><tr><th scope="col">Derived input</th>'
            '<th scope="col">SI value</th><th scope="col">How it was obtained</th></tr>' + "".join(rows) + "</table>")


def uncertainty_section(r: Mapping, view: Mapping | None) -> str:
    u = r.get("uncertainty")
    if not isinstance(u, Mapping):
        return ""
    view = view or {}
    out = ['<h2 id="uncertainty-heading">Uncertainty (Monte Carlo)</h2>']
    n = u.get("accepted") or u.get("samples")
    rows = []
    for lim in u.get("limits") or []:
        cells = []
        for key in ("probability_before_response", "probability_within_horizon"):
            p, se = _num(lim.get(key)), _num(lim.get(key + "_standard_error"))
            if p is None:
                cells.append("—")
            elif p in (0.0, 1.0) and not se and n:
                b = 1.0 - 0.05 ** (1.0 / n)
                cells.append(f"none of {n}; below {b * 100:.2g} % (one-sided 95 % bound)" if p == 0.0 else
                             f"all {n}; above {(1 - b) * 100:.4g} % (one-sided 95 % bound)")
            else:
                cells.append(f"{p * 100:.2f} %" + (f" ± {se * 100:.2f} %" if se else ""))
        rows.append(f'<tr><td>{esc(str(lim.get("name")))}</td><td class="n">{esc(cells[0])}</td>'
                    f'<td class="n">{esc(cells[1])}</td></tr>')
    out.append('<table id="uncertainty-limits"><tr><th scope="col">Limit</th><th scope="col">Reached before detection '
               '+ response</th><th scope="col">Reached within the horizon</th></tr>' + "".join(rows) + "</table>")
    cdf = view.get("uncertainty_cdf")
    first = str(u.get("first_limit") or "the first limit")
    if isinstance(cdf, Mapping) and cdf.get("time_s"):
        ts = [t / 3600 for t in cdf.get("time_s")]
        ps = list(cdf.get("probability") or [])
        k = min(len(ts), len(ps))
        chart = Chart(f"Distribution of the time to reach {first}",
                      f"Share of the {n} screened samples that have reached {first} by each time (hours).",
                      "Time from the start of the scenario (h)", "Share of samples", [
                          Line([ts[0]] + ts[:k], [0.0] + ps[:k], "share of samples", step=True)],
                      x_range=(0.0, max(_num(r.get("horizon_s")) or 0, 1) / 3600), y_range=(0.0, 1.0))
        out.append(f'<figure class="chart">{svg_chart(chart, "cdf-chart", height=300)}<figcaption>Share of the '
                   f'samples that have reached {esc(first)} by each time (empirical cumulative distribution). Its '
                   f'5, 50 and 95 % times are in the text report below.</figcaption></figure>')
    sens = [s for s in u.get("sensitivity") or [] if isinstance(s, Mapping)]
    if sens:
        bars = [(str(s.get("input")), (_num(s.get("low_time_s")) or None) and s["low_time_s"] / 3600,
                 (_num(s.get("high_time_s")) or None) and s["high_time_s"] / 3600) for s in sens[:15]]
        nominal = next((_num(x.get("time_s")) for x in r.get("limits") or [] if x.get("name") == u.get("first_limit")),
                       None)
        horizon = _num(r.get("horizon_s"))
        out.append(f'<figure class="chart">{svg_bars(bars, nominal / 3600 if nominal else None, "sensitivity-chart", f"Sensitivity of the time to reach {first}", "Each uncertain input in turn at its low and high value, the others at their case values; bars span the two times (hours). Dashed line: all inputs at case values.", f"Time to reach {first} (h)", horizon / 3600 if horizon else None)}'
                   f'<figcaption>Time to reach {esc(first)} with each uncertain input at its low and at its high '
                   f'value; a bar drawn to the end means not reached within the horizon.</figcaption></figure>')
        trs = "".join(f'<tr><td class="mono">{esc(name)}</td><td class="n">'
                      f'{esc(duration(lo * 3600) if lo is not None else "not reached")}</td><td class="n">'
                      f'{esc(duration(hi * 3600) if hi is not None else "not reached")}</td></tr>' for name, lo, hi in bars)
        out.append('<table id="sensitivity"><caption>Plotted swings</caption><tr><th scope="col">Input</th>'
                   '<th scope="col">Time at low value</th><th scope="col">Time at high value</th></tr>' + trs + "</table>")
    return "\n".join(out)


# ------------------------------------------------------------------ comparison of two runs

def _field_map(view: Mapping | None) -> dict:
    out = {}
    for f in (view or {}).get("case_fields") or []:
        if isinstance(f, Mapping):
            out[str(f.get("field"))] = str(f.get("text"))
    return out


def _result_items(r: Mapping) -> list[tuple[str, str, object]]:
    """(key, label, value) of the results worth comparing: verdict, limit times, peak, steady, criteria."""
    unit = (r.get("units") or {}).get("temperature", "K")
    items = [("verdict", "Verdict", str(r.get("verdict") or "—"))]
    for lim in r.get("limits") or []:
        t = _num(lim.get("time_s"))
        items.append((f"limit:{lim.get('name')}", f"Time to '{lim.get('name')}'",
                      duration(t) if t is not None else "not reached"))
        m = _num(lim.get("margin_s"))
        if m is not None:
            items.append((f"margin:{lim.get('name')}", f"Margin of '{lim.get('name')}'", duration(m)))
    for key, label in (("peak_temperature_K", "Peak (or highest) temperature"),
                       ("steady_temperature_K", "Steady temperature"), ("mtsr_K", "MTSR"), ("t_d24_K", "T_D24"),
                       ("critical_ambient_temperature_K", "Critical ambient")):
        if r.get(key) is not None:
            items.append((key, label, temp(r.get(key), unit)))
    for key, label in (("tmr_at_mtsr_s", "TMRad at MTSR"), ("tmr_adiabatic_s", "TMRad from the initial temperature"),
                       ("tmr_at_storage_temperature_s", "TMRad at the storage temperature")):
        if r.get(key) is not None:
            items.append((key, label, duration(r.get(key))))
    if r.get("criticality_class") is not None:
        items.append(("criticality_class", "Criticality class", str(r.get("criticality_class"))))
    items.append(("warnings", "Number of warnings", str(len(r.get("warnings") or []))))
    return items


def compare_html(a: tuple, b: tuple) -> str:
    """Two runs side by side: (run, result, view) each; inputs that differ first, then results that moved."""
    (run_a, ra, va), (run_b, rb, vb) = a, b
    fa, fb = _field_map(va), _field_map(vb)
    keys = list(fa) + [k for k in fb if k not in fa]
    diff = [(k, fa.get(k), fb.get(k)) for k in keys if fa.get(k) != fb.get(k)]
    head = (f'<tr><th scope="col">Field</th><th scope="col">Run <a href="/ui/runs/{esc(run_a.id)}">{esc(run_a.id[:12])}'
            f'</a></th><th scope="col">Run <a href="/ui/runs/{esc(run_b.id)}">{esc(run_b.id[:12])}</a></th></tr>')
    out = [f'<h1>Compare two runs</h1><p>Run A: <span class="mono">{esc(run_a.id[:12])}</span> '
           f'({esc(str(ra.get("id")))}, {esc(run_a.created_at)}); run B: <span class="mono">{esc(run_b.id[:12])}</span> '
           f'({esc(str(rb.get("id")))}, {esc(run_b.created_at)}).</p>',
           f'<h2 id="inputs-differ">Inputs that differ ({len(diff)})</h2>']
    if diff:
        out.append('<table id="input-diff">' + head + "".join(
            f'<tr class="moved"><td class="mono">{esc(k)}</td><td>{esc(x if x is not None else "(not given)")}</td>'
            f'<td>{esc(y if y is not None else "(not given)")}</td></tr>' for k, x, y in diff) + "</table>")
    elif not fa or not fb:
        out.append('<p class="muted">One of the runs has no list of inputs (recorded by an older version).</p>')
    else:
        out.append("<p>Every input is the same.</p>")
    ia, ib = {k: (lab, v) for k, lab, v in _result_items(ra)}, {k: (lab, v) for k, lab, v in _result_items(rb)}
    rkeys = list(ia) + [k for k in ib if k not in ia]
    rows, moved = [], 0
    for k in rkeys:
        lab = (ia.get(k) or ib.get(k))[0]
        x, y = (ia.get(k) or (None, "—"))[1], (ib.get(k) or (None, "—"))[1]
        cls = ' class="moved"' if x != y else ""
        moved += x != y
        rows.append(f'<tr{cls}><th scope="row">{esc(lab)}</th><td>{esc(str(x))}</td><td>{esc(str(y))}</td>'
                    f'<td>{"moved" if x != y else "same"}</td></tr>')
    out.append(f'<h2 id="results-moved">Results ({moved} moved)</h2><table id="result-diff"><tr><th scope="col">Result'
               f'</th><th scope="col">Run A</th><th scope="col">Run B</th><th scope="col">Change</th></tr>'
               + "".join(rows) + "</table>")
    out.append('<div class="cols"><section aria-labelledby="hist-a"><h2 id="hist-a">Run A: temperature history</h2>'
               + history_section(ra, va, "a-history", heading=False)
               + '</section><section aria-labelledby="hist-b"><h2 id="hist-b">Run B: temperature history</h2>'
               + history_section(rb, vb, "b-history", heading=False) + "</section></div>")
    return "\n".join(out)
