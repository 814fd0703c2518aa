"""The web page: plain server-rendered HTML forms, no JavaScript.

Paste or upload a case, or upload a register; see the result with its
verdict and every warning; download the memo and the results.  A case with
problems comes back beside the editor with each field path and message, and
the lines they concern marked in a numbered listing.  Every page carries the
screening caution.
"""
from __future__ import annotations

import csv
import html
import io
import json

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from screening import __version__
from screening.register.outputs import without_people_prefix
from screening.resources import demo_cases
from screening.service import CAUTION
from screening.service.core import CONTENT_TYPES, ServiceError

router = APIRouter(include_in_schema=False)

esc = html.escape

VERDICT_MEANING = {
    "pass": "no criterion of the rule set was triggered by the inputs given. A pass never shows that a vessel is "
            "safe.",
    "review": "an engineer must look at this case before it is relied on.",
    "fail": "the case as stated does not meet a criterion of the rule set.",
}

STYLE = """
:root{--ink:#1c2127;--muted:#59636e;--line:#b9c1c9;--panel:#f2f4f6;--link:#1b4f7a;--warn:#7d5200;--bad:#8c1c1c}
*{box-sizing:border-box}
body{margin:0;color:var(--ink);background:#fff;font:15px/1.45 "DejaVu Sans",Verdana,Arial,sans-serif}
a{color:var(--link)}
.top{display:flex;flex-wrap:wrap;gap:.4rem 1.4rem;align-items:baseline;padding:.55rem 1.2rem;
  border-bottom:3px double var(--ink)}
.top .name{font-weight:bold;font-size:1.05rem}
.top nav a{margin-right:1rem}
main{padding:.8rem 1.2rem 2rem;max-width:84rem}
.caution{border:1px solid var(--ink);border-left:6px solid var(--ink);padding:.45rem .8rem;margin:.2rem 0 1rem;
  background:var(--panel);font-size:.9rem}
h1{font-size:1.3rem;margin:.6rem 0}
h2{font-size:1.08rem;margin:1.3rem 0 .4rem;border-bottom:1px solid var(--line);padding-bottom:.15rem}
.cols{display:grid;grid-template-columns:minmax(0,1.15fr) minmax(0,1fr);gap:1.4rem}
@media (max-width:900px){.cols{grid-template-columns:1fr}}
textarea{width:100%;min-height:30rem;font:13px/1.4 "DejaVu Sans Mono",Consolas,monospace;border:1px solid var(--line);
  padding:.4rem}
fieldset{border:1px solid var(--line);margin:0 0 .8rem;padding:.5rem .8rem}
legend{font-weight:bold}
label{display:inline-block;margin:.2rem 1rem .2rem 0}
button{font:inherit;padding:.3rem 1.1rem;border:1px solid var(--ink);background:var(--panel);cursor:pointer}
table{border-collapse:collapse;margin:.3rem 0 .6rem}
td,th{border:1px solid var(--line);padding:.22rem .55rem;text-align:left;vertical-align:top}
th{background:var(--panel);font-weight:bold}
td.n{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
.verdict{display:inline-block;border:3px solid var(--ink);padding:.35rem .9rem;font-size:1.15rem;font-weight:bold;
  letter-spacing:.05em}
.verdict.fail{border-color:var(--bad);color:var(--bad)}
.verdict.review{border-color:var(--warn);color:var(--warn)}
.meaning{color:var(--muted);margin:.3rem 0 .6rem}
.warnings{border:1px solid var(--warn);border-left:6px solid var(--warn);padding:.3rem .8rem .3rem 1.8rem}
.warnings li{margin:.25rem 0}
.problems{border:1px solid var(--bad);border-left:6px solid var(--bad);padding:.3rem .8rem .3rem 1.8rem}
.problems li{margin:.3rem 0}
.problems code{font-weight:bold}
pre.listing{border:1px solid var(--line);padding:.3rem 0;overflow-x:auto;font:12.5px/1.45 "DejaVu Sans Mono",monospace}
pre.listing span{display:block;padding:0 .5rem}
pre.listing span.bad{background:#f7dcdc;border-left:4px solid var(--bad)}
pre.listing i{font-style:normal;color:var(--muted);display:inline-block;min-width:3.2em}
.muted{color:var(--muted)}
.mono{font-family:"DejaVu Sans Mono",monospace;font-size:.88rem}
details{margin:.6rem 0}
ul.links li{margin:.2rem 0}
figure.chart{margin:.4rem 0 1rem;border:1px solid var(--line);padding:.4rem .6rem;max-width:60rem}
figure.chart figcaption{font-size:.9rem;color:var(--muted)}
.workbench{display:grid;grid-template-columns:minmax(0,1.5fr) minmax(0,1fr);gap:1.4rem;align-items:start}
@media (max-width:1100px){.workbench{grid-template-columns:1fr}}
.workbench textarea{min-height:22rem}
.note{border-left:6px solid var(--warn);padding:.2rem .7rem;background:#fdf6e8}
.moved{background:#fdf0d8}
#inputs td:nth-child(4),#derived td:nth-child(3){min-width:12rem}
#inputs td:first-child{word-break:break-word}
:focus-visible{outline:3px solid #1b4f7a;outline-offset:2px}
.skip{position:absolute;left:-999px}.skip:focus{left:1rem;top:.5rem;background:#fff;padding:.3rem .6rem;z-index:2}
"""


# ------------------------------------------------------------------ page furniture

def page(title: str, body: str, status: int = 200, refresh: int | None = None) -> HTMLResponse:
    meta = f'<meta http-equiv="refresh" content="{int(refresh)}">' if refresh else ""
    doc = f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
{meta}<title>{esc(title)} · heatscreen</title><style>{STYLE}</style></head>
<body><a class="skip" href="#main">Skip to the content</a><header class="top"><span class="name">heatscreen</span><span class="muted">screening service {esc(__version__)}</span>
<nav><a href="/">Case</a><a href="/ui/register">Register</a><a href="/ui/runs">Runs</a><a href="/ui/jobs">Jobs</a>
<a href="/ui/compare">Compare runs</a><a href="/ui/rules">Rule sets</a><a href="/ui/schema.json">Case schema</a></nav></header>
<main id="main"><p class="caution" role="note"><strong>Caution.</strong> {esc(CAUTION)}</p>
{body}</main></body></html>"""
    return HTMLResponse(doc, status_code=status)


def message_page(title: str, message: str, status: int = 400) -> HTMLResponse:
    return page(title, f'<h1>{esc(title)}</h1><p class="problems" role="alert">{esc(message)}</p>'
                       f'<p><a href="/">Back to the case page</a></p>', status=status)


def login_page(status: int = 401, wrong: bool = False) -> HTMLResponse:
    note = '<p class="problems" role="alert">That token is not the one this service was started with.</p>' if wrong else ""
    return page("Token needed", f"""<h1>This service wants its token</h1>{note}
<form method="post" action="/ui/login"><label>Token <input type="password" name="token" autocomplete="off"
 required></label> <button type="submit">Continue</button></form>
<p class="muted">API clients send <span class="mono">Authorization: Bearer TOKEN</span> instead.</p>""",
                status=status)


def _svc(request: Request):
    return request.app.state.service


def _same_origin(request: Request) -> None:
    """A form must come from this service's own page: an Origin of another site, or "null" (what a
    sandboxed or local-file page sends), is refused. The page's referrer policy (same-origin) makes
    browsers send its real origin."""
    origin = request.headers.get("origin")
    if origin:
        host = request.headers.get("host", "")
        if origin not in (f"http://{host}", f"https://{host}"):
            raise ServiceError(403, [("(origin)", "form posted from another site" if origin != "null" else
                                      "form posted from a page without an origin (Origin: null)")])


def _rule_options(svc, chosen: str = "default") -> str:
    return "".join(f'<option value="{esc(r.name)}"{" selected" if r.name == chosen else ""}>{esc(r.title)}</option>'
                   for r in svc.rule_sets.values())


def _demo_names() -> list[str]:
    folder = demo_cases()
    return sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".yaml"))


def _demo_text(name: str) -> str | None:
    if name not in _demo_names():
        return None
    return demo_cases().joinpath(f"{name}.yaml").read_text(encoding="utf-8")


# ------------------------------------------------------------------ case page

def case_form(svc, text: str = "", rules: str = "default", fmt: str = "auto", problems=None, lines=None,
              status: int = 200) -> HTMLResponse:
    fmts = "".join(f'<option value="{v}"{" selected" if v == fmt else ""}>{t}</option>'
                   for v, t in (("auto", "by file name or content"), ("yaml", "YAML"), ("json", "JSON"),
                                ("toml", "TOML")))
    demos = "".join(f'<li><a href="/?demo={esc(n)}">{esc(n)}</a></li>' for n in _demo_names())
    side = f"""<h2>Start from a demo case</h2><ul class="links">{demos}</ul>
<p class="muted">Cases are YAML (or JSON or TOML): every quantity is text with a unit, such as
<span class="mono">"9000 kg"</span> or <span class="mono">"75 degF"</span>. <span class="mono">heatscreen example</span>
prints an annotated case; the <a href="/ui/schema.json">case schema</a> lists every field.</p>"""
    if problems:
        side = _problems_html(problems, lines or {}, text)
    body = f"""<h1>Screen one case</h1>
<div class="cols"><form method="post" action="/ui/check" enctype="multipart/form-data" id="case-form">
<fieldset><legend>Case file</legend>
<label for="case_text">Paste the case</label>
<textarea id="case_text" name="case_text" spellcheck="false" aria-describedby="problems">{esc(text)}</textarea>
<p><label>or upload a file <input type="file" id="case_file" name="case_file" accept=".yaml,.yml,.json,.toml"></label></p>
<p><label>Format <select name="format">{fmts}</select></label>
<label>Rule set <select name="rules" id="rules">{_rule_options(svc, rules)}</select></label></p>
<p><button type="submit" id="screen">Screen</button></p></fieldset></form>
<section id="side">{side}</section></div>"""
    return page("Screen a case", body, status=status)


def _problems_html(problems, lines: dict, text: str) -> str:
    items = []
    for field, message in problems:
        line = lines.get(field)
        where = f'<a href="#L{line}">line {line}</a> ' if line else ""
        items.append(f'<li data-field="{esc(field)}">{where}<code>{esc(field)}</code>: {esc(message)}</li>')
    listing = _listing(text, {v for v in lines.values() if v})
    return (f'<h2 id="problems">Problems ({len(problems)})</h2><p>The case was not screened. Correct these and '
            f'screen it again:</p><ul class="problems" role="alert">{"".join(items)}</ul>' + listing)


def _listing(text: str, marked: set[int], context: int = 3) -> str:
    if not text or not marked:
        return ""
    lines = text.splitlines()
    show = set()
    for m in marked:
        show.update(range(max(1, m - context), min(len(lines), m + context) + 1))
    out, last = [], 0
    for n in sorted(show):
        if last and n > last + 1:
            out.append('<span class="muted">…</span>')
        cls = ' class="bad"' if n in marked else ""
        out.append(f'<span id="L{n}"{cls}><i>{n}</i>{esc(lines[n - 1]) if n <= len(lines) else ""}</span>')
        last = n
    return f'<h2>Where</h2><pre class="listing" aria-label="case lines with problems">{"".join(out)}</pre>'


@router.get("/", response_class=HTMLResponse)
async def home(request: Request, demo: str | None = None):
    text = _demo_text(demo) if demo else ""
    return case_form(_svc(request), text or "")


def _kind_for(fmt: str, filename: str | None, raw: bytes) -> str:
    if fmt in ("yaml", "json", "toml"):
        return fmt
    name = (filename or "").lower()
    if name.endswith(".json"):
        return "json"
    if name.endswith(".toml"):
        return "toml"
    if name.endswith((".yaml", ".yml")):
        return "yaml"
    return "json" if raw.lstrip()[:1] in (b"{", b"[") else "yaml"


@router.post("/ui/check")
async def ui_check(request: Request):
    _same_origin(request)
    svc = _svc(request)
    limit = svc.settings.max_case_bytes
    form = await request.form(max_files=1, max_fields=8, max_part_size=limit + 1)
    upload = form.get("case_file")
    text = str(form.get("case_text") or "")
    rules = str(form.get("rules") or "default")
    fmt = str(form.get("format") or "auto")
    previous = str(form.get("previous") or "")  # the run this case was edited from (offered for comparison)
    filename = None
    raw = text.replace("\r\n", "\n").encode("utf-8")
    if upload is not None and not isinstance(upload, str) and upload.filename:
        raw = await upload.read(limit + 1)
        filename = upload.filename
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError:
            text = ""
    if not raw.strip():
        return case_form(svc, text, rules, fmt, problems=[("(file)", "paste a case or choose a file")], status=422)
    kind = _kind_for(fmt, filename, raw)
    try:
        source = "uploaded file" if filename else "pasted text, line ends as LF"
        res = await svc.screen(raw, kind, f"application/{kind}; from=web page ({source})", rules, locate=True)
    except ServiceError as exc:
        if exc.status in (413, 422):
            return case_form(svc, text, rules, fmt, problems=exc.problems, lines=exc.lines, status=exc.status)
        raise
    from screening.service.api import _ID

    after = f"?previous={previous}" if previous and _ID.match(previous) and previous != res.run_id else ""
    return RedirectResponse(f"/ui/runs/{res.run_id}{after}", status_code=303)


# ------------------------------------------------------------------ results

def _fmt(v, digits: int = 4) -> str:
    if v is None:
        return "—"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        return f"{v:.{digits}g}"
    return esc(str(v))


def conduction_history_html(r: dict, history: dict | None) -> str:
    """Unstirred contents: the hot-spot, centre and surface history as a small chart and a table."""
    from screening.case.display import duration, temp
    from screening.case.units import kelvin_to

    if not isinstance(r.get("conduction"), dict) or not isinstance(history, dict):
        return ""
    u = (r.get("units") or {}).get("temperature", "K")
    try:
        ts = [float(x) for x in history["time_s"]]
        curves = {k: [float(x) for x in history[k]] for k in ("hot_spot_K", "centre_K", "surface_K")}
    except (KeyError, TypeError, ValueError):
        return ""
    if len(ts) < 2 or any(len(v) != len(ts) for v in curves.values()):
        return ""
    width, height, pad = 640.0, 220.0, 36.0
    t_end = ts[-1] or 1.0
    lo = min(min(v) for v in curves.values())
    hi = max(max(v) for v in curves.values())
    limits = [lim.get("temperature_K") for lim in r.get("limits") or [] if isinstance(lim.get("temperature_K"), float)]
    hi = max([hi] + [x for x in limits if x < hi + 200])
    span = (hi - lo) or 1.0

    def pts(values):
        step = max(1, len(ts) // 300)
        return " ".join(f"{pad + (t / t_end) * (width - 2 * pad):.1f},{height - pad - (v - lo) / span * (height - 2 * pad):.1f}"
                        for t, v in list(zip(ts, values))[::step] + [(ts[-1], values[-1])])

    lines = [f'<polyline fill="none" stroke="#1A4C8B" stroke-width="2" points="{pts(curves["hot_spot_K"])}"/>',
             f'<polyline fill="none" stroke="#1A4C8B" stroke-width="1" stroke-dasharray="2,3" '
             f'points="{pts(curves["centre_K"])}"/>',
             f'<polyline fill="none" stroke="#C26A00" stroke-width="1.5" points="{pts(curves["surface_K"])}"/>']
    for x in limits:
        if lo <= x <= hi:
            y = height - pad - (x - lo) / span * (height - 2 * pad)
            lines.append(f'<line x1="{pad}" x2="{width - pad}" y1="{y:.1f}" y2="{y:.1f}" stroke="#A11D21" '
                         f'stroke-dasharray="6,2"/>')
    axes = (f'<line x1="{pad}" y1="{height - pad}" x2="{width - pad}" y2="{height - pad}" stroke="#777"/>'
            f'<line x1="{pad}" y1="{pad}" x2="{pad}" y2="{height - pad}" stroke="#777"/>'
            f'<text x="{pad}" y="{height - 8}" font-size="11">0</text>'
            f'<text x="{width - pad}" y="{height - 8}" font-size="11" text-anchor="end">{esc(duration(t_end))}</text>'
            f'<text x="4" y="{pad - 6}" font-size="11">{esc(temp(hi, u))}</text>'
            f'<text x="4" y="{height - pad + 14}" font-size="11">{esc(temp(lo, u))}</text>')
    svg = (f'<svg id="hot-spot-chart" role="img" aria-label="Hot-spot history" width="{width:.0f}" '
           f'height="{height:.0f}" viewBox="0 0 {width:.0f} {height:.0f}">{axes}{"".join(lines)}</svg>')
    rows = []
    picks = sorted({round(i * (len(ts) - 1) / 12) for i in range(13)})
    for i in picks:
        rows.append(f'<tr><td class="n">{esc(duration(ts[i]))}</td>' + "".join(
            f'<td class="n">{kelvin_to(curves[k][i], u):.1f}</td>' for k in ("hot_spot_K", "centre_K", "surface_K"))
            + "</tr>")
    sym = temp(300.0, u).split(" ")[1] if u != "K" else "K"
    return ('<h2>Hot-spot history (unstirred contents, transient conduction)</h2>'
            '<p>The limit times above are those of the hottest point. Solid blue: hot spot; dotted blue: centre; '
            'orange: surface; red dashed: limits.</p>' + svg +
            f'<table id="hot-spot-history"><tr><th>Time</th><th>Hot spot ({esc(sym)})</th><th>Centre ({esc(sym)})</th>'
            f'<th>Surface ({esc(sym)})</th></tr>' + "".join(rows) + "</table>")


def result_html(r: dict, view: dict | None = None) -> str:
    """The result of one run; ``view`` (the memo's view of it: history, every field, derived inputs) adds the
    chart, the inputs as written and the derived inputs."""
    from screening.case.display import dtemp, duration, temp
    from screening.report.text import criteria_rows, format_result
    from screening.service import web_workbench as wb

    u = (r.get("units") or {}).get("temperature", "K")
    verdict = str(r.get("verdict") or "")
    rs = r.get("rule_set") or {}
    out = [f'<h1 id="case-title">{esc(str(r.get("id", "")))}'
           + (f' — {esc(str(r["title"]))}' if r.get("title") else "") + "</h1>"]
    if verdict:
        out.append(f'<p><span class="verdict {esc(verdict)}" id="verdict">Verdict: {esc(verdict.upper())}</span></p>'
                   f'<p class="meaning">{esc(verdict.capitalize())}: {esc(VERDICT_MEANING.get(verdict, ""))} '
                   f'Rule set: {esc(str(rs.get("name", "?")))} '
                   f'<span class="mono">(sha256 {esc(str(rs.get("hash", ""))[:16])}…)</span>.</p>')
        reasons = r.get("reasons") or []
        if reasons:
            out.append("<h2>Reasons</h2><ul>" + "".join(f"<li>{esc(x)}</li>" for x in reasons) + "</ul>")
    warnings = r.get("warnings") or []
    out.append(f'<h2 id="warnings">Warnings ({len(warnings)})</h2>')
    if warnings:
        out.append('<p>These are part of the answer: each says where the estimate may be optimistic or out of '
                   'its range.</p><ul class="warnings">' + "".join(f"<li>{esc(w)}</li>" for w in warnings) + "</ul>")
    else:
        out.append("<p>No warnings were raised for this case.</p>")
    horizon = r.get("horizon_s")
    rows = []
    adiabatic = {a.get("name"): a.get("time_s") for a in (r.get("adiabatic") or {}).get("limits", []) or []}
    for lim in r.get("limits") or []:
        t = lim.get("time_s")
        when = duration(t) if t is not None else f"not reached within {duration(horizon)}"
        if t is not None and lim.get("time_note"):
            when += f' ({lim["time_note"]})'
        margin = lim.get("margin_s")
        mtxt = "—" if margin is None else (duration(abs(margin)) + (" short" if margin < 0 else ""))
        if margin is not None and lim.get("margin_note"):
            mtxt += f' ({lim["margin_note"]})'
        ad = adiabatic.get(lim.get("name"))
        rows.append(f'<tr><td>{esc(str(lim.get("name")))}</td><td class="n">{esc(temp(lim.get("temperature_K"), u))}'
                    f'</td><td class="n">{esc(when)}</td><td class="n">{esc(mtxt)}</td>'
                    f'<td class="n">{esc(duration(ad) if ad is not None else "not reached")}</td></tr>')
    out.append('<h2>Time to each limit</h2><table id="limits"><tr><th>Limit</th><th>Temperature</th>'
               '<th>Reached after</th><th>Margin after detection and response</th><th>No heat loss (UA = 0)</th>'
               '</tr>' + "".join(rows) + "</table>")
    out.append('<p class="muted">"Not reached within the horizon" means only that: the limit may be reached later.</p>')
    out.append(wb.reading_notes(r))
    out.append(wb.history_section(r, view))
    if isinstance(r.get("conduction"), dict):
        c = r["conduction"]
        lumped = "; ".join(f'{x.get("name")}: {duration(x.get("time_s")) if x.get("time_s") is not None else "not reached"}'
                           for x in (r.get("lumped") or {}).get("limits") or [])
        out.append(f'<p id="conduction-note">Unstirred contents: the times are those of the hottest point, from a '
                   f'transient conduction solution ({esc(str(c.get("geometry")))}, '
                   f'{"half-thickness" if c.get("geometry") == "slab" else "radius"} {_fmt(c.get("half_thickness_m"))}'
                   f' m, surface Biot number {_fmt(c.get("biot_number"), 3)}'
                   + (f'; geometry approximated: {esc(str(c["geometry_approximation"]))}, conservative'
                      if c.get("geometry_approximation") else "")
                   + f'). Lumped (well-mixed) times, not valid for unstirred contents: {esc(lumped or "—")}.</p>')
        out.append(conduction_history_html(r, (view or {}).get("conduction_history")))
    if r.get("detection_note"):
        out.append(f'<p><b>{esc(str(r["detection_note"]))}</b></p>')
    tc = r.get("time_constant_s")
    key = [("Initial temperature", temp(r.get("initial_temperature_K"), u)),
           ("Ambient temperature", temp(r.get("ambient_temperature_K"), u)),
           ("Horizon", duration(horizon)),
           wb.peak_text(r),
           (wb.steady_label(r), temp(r.get("steady_temperature_K"), u) if r.get("steady_temperature_K") is not None
            else "not computed for the unstirred body" if isinstance(r.get("conduction"), dict)
            else "none (no stable steady state)"),
           ("Time constant", duration(tc) if tc is not None else "none (adiabatic)"),
           ("Heat capacity", f'{_fmt(r.get("heat_capacity_J_per_K"))} J/K'),
           ("Heat-loss conductance UA", f'{_fmt(r.get("ua_W_per_K"))} W/K'),
           ("Scenario", str(r.get("scenario") or "—")),
           ("Detection", {"assumed": "assumed at t = 0 (no detection block)",
                          "unmonitored": "none (storage not monitored)"}.get(
               r.get("detection_basis"), duration(r.get("detection_time_s")) if r.get("detection_time_s") is not None
               else "—")),
           ("Response time", duration(r.get("response_time_s"))),
           ("Method", str(r.get("method") or "—")), ("Mixing", str(r.get("mixing") or "—")),
           ("Biot number", _fmt(r.get("biot_number"), 3))]
    cycle = r.get("daily_cycle") if isinstance(r.get("daily_cycle"), dict) else None
    if cycle is not None:  # the daily cycle of the air and the sun
        key[1] = ("Ambient temperature (daily mean)", temp(r.get("ambient_temperature_K"), u))
        sun = cycle.get("sun") if isinstance(cycle.get("sun"), dict) else None
        key[2:2] = [("Daily range of the air", dtemp(cycle.get("daily_range_K"), u)),
                    ("Sol-air rise at noon (contents' share)", dtemp(sun.get("sol_air_rise_K"), u) if sun else "no sun"),
                    ("Effective ambient, daily maximum", temp(cycle.get("effective_ambient_max_K"), u)),
                    ("Criteria ambient", temp(r.get("criteria_ambient_K"), u)),
                    ("Start time of day", f'{_fmt((cycle.get("start_time_of_day_s") or 0.0) / 3600.0)} h '
                                          f'({cycle.get("start_time_basis")})')]
    out.append("<h2>Key numbers</h2><table>" + "".join(f"<tr><th>{esc(k)}</th><td>{esc(v)}</td></tr>" for k, v in key)
               + "</table>")
    try:
        crit = criteria_rows(r, u)
    except Exception:  # noqa: BLE001 - a malformed result shows without the criteria table
        crit = []
    if crit or r.get("runaway_summary"):
        out.append("<h2>Runaway criteria</h2>")
        if r.get("runaway_summary"):
            out.append(f'<p>{esc(str(r["runaway_summary"]))}</p>')
        out.append("<table>" + "".join(f"<tr><th>{esc(k)}</th><td>{esc(v)}</td></tr>" for k, v in crit) + "</table>")
    assumptions = r.get("assumptions") or []
    if assumptions:
        out.append("<h2>Assumptions</h2><ul>" + "".join(f"<li>{esc(a)}</li>" for a in assumptions) + "</ul>")
    inputs = r.get("inputs") or []
    listed = wb.inputs_section(r, view)
    if listed:
        out.append(listed)
    elif inputs:
        out.append("<h2>Inputs as written</h2><table><tr><th>Field</th><th>As written</th><th>SI value</th>"
                   "<th>Source</th></tr>" + "".join(
                       f'<tr><td class="mono">{esc(str(i.get("field")))}</td><td>{esc(str(i.get("text")))}</td>'
                       f'<td class="n">{_fmt(i.get("value_si"), 6)} {esc(str(i.get("unit_si") or ""))}</td>'
                       f'<td>{esc(str(i.get("source") or "not stated"))}</td></tr>' for i in inputs if isinstance(i, dict))
                   + "</table>")
    out.append(wb.derived_section(view))
    out.append(wb.uncertainty_section(r, view))
    try:
        text = format_result(r)
    except Exception:  # noqa: BLE001 - the text report is a convenience
        text = None
    if text:
        out.append(f'<details><summary>The same result as <span class="mono">heatscreen check</span> prints it'
                   f'</summary><pre class="mono">{esc(text)}</pre></details>')
    return "\n".join(out)


def _view_of(run) -> dict | None:
    """The memo's view of a run (history, every field, derived inputs), when it was recorded."""
    if not run.memo_view_json:
        return None
    try:
        view = json.loads(run.memo_view_json)
    except ValueError:
        return None
    return view if isinstance(view, dict) else None


def _edit_form(svc, run) -> str:
    """'Edit and screen again': the run's own case text in an editor, sent back as a new run."""
    if run.input_bytes is None or run.input_kind not in ("yaml", "json", "toml"):
        return ""
    try:
        text = run.input_bytes.decode("utf-8-sig")
    except UnicodeDecodeError:
        return ""
    return f"""<section aria-labelledby="edit-heading" id="edit"><h2 id="edit-heading">Edit and screen again</h2>
<p class="muted">Change the case below and screen it again; the new run keeps a link to this one so the two can be
compared side by side.</p>
<form method="post" action="/ui/check" enctype="multipart/form-data" id="rerun-form">
<input type="hidden" name="previous" value="{esc(run.id)}"><input type="hidden" name="format" value="{esc(run.input_kind)}">
<label for="case_text">Case ({esc(run.input_kind.upper())})</label>
<textarea id="case_text" name="case_text" spellcheck="false">{esc(text)}</textarea>
<p><label>Rule set <select name="rules" id="rules">{_rule_options(svc, run.rule_set_file or "default")}</select></label>
<button type="submit" id="screen-again">Screen again</button></p></form></section>"""


@router.get("/ui/runs/{run_id}", response_class=HTMLResponse)
async def ui_run(request: Request, run_id: str, previous: str | None = None):
    from screening.service.api import _ID, _check_id

    svc = _svc(request)
    run = await svc.store.get_run(_check_id(run_id, "run_id"))
    if run is None:
        return message_page("Not found", "There is no run with this id.", status=404)
    result = json.loads(run.result_json) if run.result_json else None
    parts = []
    if previous and _ID.match(previous) and previous != run.id:
        parts.append(f'<p class="note" id="compare-offer">This run was edited from run '
                     f'<a href="/ui/runs/{esc(previous)}" class="mono">{esc(previous[:12])}</a>. '
                     f'<a id="compare-link" href="/ui/compare?a={esc(previous)}&amp;b={esc(run.id)}">Compare the two '
                     f'side by side</a>.</p>')
    if result is None:
        parts.append(f'<h1>Run {esc(run.id)}</h1><p class="problems" role="alert">This run did not give a result: '
                     f'{esc(run.status)}. {esc(run.error or "")}</p>')
    else:
        edit = _edit_form(svc, run)
        main = result_html(result, _view_of(run))
        parts.append(f'<div class="workbench"><div>{main}</div><div>{edit}</div></div>' if edit else main)
    downloads = []
    if result is not None and run.memo_view_json:
        downloads.append(f'<li><a id="memo-link" href="/ui/runs/{run.id}/memo.pdf">Review memo (PDF)</a></li>')
    if result is not None:
        downloads.append(f'<li><a href="/ui/runs/{run.id}/result.json">Result (JSON, as '
                         f'<span class="mono">check --json</span>)</a></li>')
    if run.input_bytes is not None:
        downloads.append(f'<li><a href="/ui/runs/{run.id}/input">The case as sent</a></li>')
    if run.job_id:
        downloads.append(f'<li><a href="/ui/jobs/{run.job_id}">The register job this row belongs to</a></li>')
    parts.append('<h2>Downloads</h2><ul class="links">' + "".join(downloads) + "</ul>")
    parts.append(f"""<h2>Record</h2><table class="mono">
<tr><th>Run</th><td id="run-id">{esc(run.id)}</td></tr><tr><th>Recorded</th><td>{esc(run.created_at)}</td></tr>
<tr><th>Kind</th><td>{esc(run.kind)}</td></tr><tr><th>Input sha256</th><td>{esc(run.input_hash or "—")}</td></tr>
<tr><th>Tool version</th><td>{esc(run.tool_version)}</td></tr>
<tr><th>Rule set</th><td>{esc(run.rule_set_name or run.rule_set_file or "—")} {esc(run.rule_set_hash or "")}</td></tr>
<tr><th>Memo date</th><td>{esc(run.memo_date or "—")} (SOURCE_DATE_EPOCH {esc(str(run.source_date_epoch))})</td></tr>
</table>""")
    return page(f"Run {run.id[:8]}", "\n".join(parts), status=200)


@router.get("/ui/runs/{run_id}/memo.pdf")
async def ui_memo(request: Request, run_id: str):
    from screening.service.api import _check_id

    pdf, info = await _svc(request).memo_for_run(_check_id(run_id, "run_id"))
    return Response(pdf, media_type="application/pdf",
                    headers={"Content-Disposition": f'attachment; filename="memo-{run_id[:12]}.pdf"',
                             "X-Memo-Sha256": info["sha256"]})


@router.get("/ui/runs/{run_id}/result.json")
async def ui_result_json(request: Request, run_id: str):
    from screening.service.api import _check_id

    run = await _svc(request).store.get_run(_check_id(run_id, "run_id"))
    if run is None or not run.result_json:
        return message_page("Not found", "There is no result for this run.", status=404)
    body = {**json.loads(run.result_json), "run_id": run.id}
    return Response(json.dumps(body, indent=2, ensure_ascii=False), media_type="application/json",
                    headers={"Content-Disposition": f'attachment; filename="result-{run_id[:12]}.json"'})


@router.get("/ui/runs/{run_id}/input")
async def ui_input(request: Request, run_id: str):
    from screening.service.api import _check_id

    run = await _svc(request).store.get_run(_check_id(run_id, "run_id"))
    if run is None or run.input_bytes is None:
        return message_page("Not found", "There is no stored input for this run.", status=404)
    ext = run.input_kind if run.input_kind in ("yaml", "json", "toml") else "txt"
    return Response(run.input_bytes, media_type="application/octet-stream",
                    headers={"Content-Disposition": f'attachment; filename="case-{run_id[:12]}.{ext}"'})


@router.get("/ui/runs", response_class=HTMLResponse)
async def ui_runs(request: Request, offset: int = 0):
    offset = max(0, min(offset, 10**9))
    rows, total = await _svc(request).store.list_runs(100, offset)
    trs = "".join(
        f'<tr><td class="mono"><a href="/ui/runs/{esc(r["id"])}">{esc(r["id"][:12])}</a></td>'
        f'<td>{esc(r["created_at"])}</td><td>{esc(r["kind"])}</td><td>{esc(str(r["case_id"] or "—"))}</td>'
        f'<td>{esc(str(r["verdict"] or r["status"]))}</td><td class="n">{_fmt(r["warning_count"])}</td></tr>'
        for r in rows)
    nxt = f'<p><a href="/ui/runs?offset={offset + 100}">Older runs</a></p>' if offset + 100 < total else ""
    return page("Runs", f"""<h1>Recorded runs ({total})</h1><table><tr><th>Run</th><th>Recorded (UTC)</th><th>Kind</th>
<th>Case</th><th>Verdict</th><th>Warnings</th></tr>{trs}</table>{nxt}""")


@router.get("/ui/compare", response_class=HTMLResponse)
async def ui_compare(request: Request, a: str | None = None, b: str | None = None):
    from screening.service.api import _check_id
    from screening.service.web_workbench import compare_html

    svc = _svc(request)
    if a and b:
        runs = []
        for rid, which in ((a, "a"), (b, "b")):
            run = await svc.store.get_run(_check_id(rid, "run_id"))
            if run is None or not run.result_json:
                return message_page("Not found", f"Run {which.upper()} has no result to compare.", status=404)
            runs.append((run, json.loads(run.result_json), _view_of(run)))
        return page("Compare runs", compare_html(runs[0], runs[1]))
    rows, _ = await svc.store.list_runs(100, 0)
    ok = [r for r in rows if r["status"] == "ok"]

    def options(selected):
        return "".join(f'<option value="{esc(r["id"])}"{" selected" if r["id"] == selected else ""}>'
                       f'{esc(r["created_at"])} · {esc(str(r["case_id"] or "—"))} · {esc(str(r["verdict"] or ""))} · '
                       f'{esc(r["id"][:12])}</option>' for r in ok)

    first = ok[1]["id"] if len(ok) > 1 else None
    second = ok[0]["id"] if ok else None
    return page("Compare runs", f"""<h1>Compare two runs</h1>
<p>Pick two recorded runs: the page lists the inputs that differ and the results that moved, with both temperature
histories side by side.</p>
<form method="get" action="/ui/compare" id="compare-form"><p><label>Run A <select name="a" id="run-a">{options(first)}
</select></label></p><p><label>Run B <select name="b" id="run-b">{options(second)}</select></label></p>
<p><button type="submit" id="compare">Compare</button></p></form>""")


# ------------------------------------------------------------------ registers

@router.get("/ui/register", response_class=HTMLResponse)
async def ui_register(request: Request):
    svc = _svc(request)
    s = svc.settings
    return page("Screen a register", f"""<h1>Screen a register</h1>
<form method="post" action="/ui/batch" enctype="multipart/form-data" id="register-form">
<fieldset><legend>Register</legend>
<p><label>Register file (CSV or .xlsx) <input type="file" name="register" id="register" accept=".csv,.xlsx" required>
</label></p>
<p><label>Base case, completed by each row (optional) <input type="file" name="base" id="base"
 accept=".yaml,.yml,.json,.toml"></label></p>
<p><label>Rule set <select name="rules">{_rule_options(svc)}</select></label>
<label><input type="checkbox" name="memos" value="true"> also make one memo per row</label></p>
<p><button type="submit" id="submit-register">Screen the register</button></p></fieldset></form>
<p class="muted">At most {s.max_register_rows} rows and {s.max_register_bytes // 1_000_000} MB. Rows cannot name case
files. The register is screened in the background; its page shows the progress and then the results.</p>""")


@router.post("/ui/batch")
async def ui_batch(request: Request):
    _same_origin(request)
    svc = _svc(request)
    s = svc.settings
    form = await request.form(max_files=2, max_fields=8, max_part_size=s.max_register_bytes + 1)
    reg = form.get("register")
    if reg is None or isinstance(reg, str) or not reg.filename:
        return message_page("No register", "Choose a register file (CSV or .xlsx).", status=422)
    data = await reg.read(s.max_register_bytes + 1)
    base = form.get("base")
    base_bytes = base_name = None
    if base is not None and not isinstance(base, str) and base.filename:
        base_bytes = await base.read(s.max_case_bytes + 1)
        base_name = base.filename
    memos = str(form.get("memos") or "").lower() in ("true", "on", "1", "yes")
    job_id = await svc.submit_batch(data, reg.filename, base_bytes, base_name, str(form.get("rules") or "default"),
                                    memos)
    return RedirectResponse(f"/ui/jobs/{job_id}", status_code=303)


@router.get("/ui/jobs", response_class=HTMLResponse)
async def ui_jobs(request: Request):
    jobs = await _svc(request).store.list_jobs(100)
    trs = "".join(f'<tr><td class="mono"><a href="/ui/jobs/{esc(j["id"])}">{esc(j["id"][:12])}</a></td>'
                  f'<td>{esc(j["created_at"])}</td><td>{esc(j["register_name"] or "—")}</td><td>{esc(j["state"])}</td>'
                  f'<td class="n">{_fmt((j["summary"] or {}).get("rows") if isinstance(j["summary"], dict) else None)}'
                  f'</td></tr>' for j in jobs)
    return page("Jobs", f"""<h1>Register jobs</h1><table><tr><th>Job</th><th>Sent (UTC)</th><th>Register</th>
<th>State</th><th>Rows</th></tr>{trs}</table>""")


@router.get("/ui/jobs/{job_id}", response_class=HTMLResponse)
async def ui_job(request: Request, job_id: str):
    from screening.service.api import job_document

    svc = _svc(request)
    doc = await job_document(svc, job_id)
    state = doc["state"]
    parts = [f'<h1>Register job <span class="mono">{esc(job_id[:12])}</span></h1>',
             f'<p>State: <strong id="job-state">{esc(state)}</strong>'
             f'{" — this page refreshes itself" if not doc["finished"] else ""}</p>']
    prog = doc.get("progress") or {}
    if prog.get("total"):
        parts.append(f'<p>Screened {esc(str(prog.get("done")))} of {esc(str(prog.get("total")))} rows.</p>')
    elif prog.get("position"):
        parts.append(f'<p>Waiting: number {esc(str(prog["position"]))} in the queue.</p>')
    if doc.get("error"):
        parts.append(f'<p class="problems" role="alert">{esc(doc["error"])}</p>')
    if doc.get("errors") and state == "invalid":
        parts.append('<h2>Problems with the register</h2><ul class="problems" role="alert">' + "".join(
            f'<li><code>{esc(e["field"])}</code>: {esc(e["message"])}</li>' for e in doc["errors"]) + "</ul>")
    summary = doc.get("summary")
    if isinstance(summary, dict):
        counts = summary.get("verdict_counts") or {}
        parts.append("<h2>Summary</h2><table>" + "".join(
            f"<tr><th>{esc(k)}</th><td class='n'>{_fmt(summary.get(k))}</td></tr>" for k in ("rows", "valid", "invalid"))
            + "".join(f"<tr><th>verdict {esc(str(k))}</th><td class='n'>{_fmt(v)}</td></tr>"
                      for k, v in counts.items()) + "</table>")
    if state == "done":
        links = "".join(f'<li><a href="/ui/jobs/{job_id}/files/{esc(f["name"])}">{esc(f["name"])}</a> '
                        f'<span class="muted">({f["size"]} bytes)</span></li>' for f in doc["files"])
        parts.append(f'<h2>Downloads</h2><ul class="links" id="job-files">{links}</ul>')
        parts.append(await _job_rows_html(svc, job_id))
    return page(f"Job {job_id[:8]}", "\n".join(parts), refresh=None if doc["finished"] else 2)


async def _job_rows_html(svc, job_id: str) -> str:
    from screening.case.display import duration

    out = []
    f = await svc.store.job_file(job_id, "results.json")
    data = None
    if f is not None:
        try:
            data = json.loads(f.data)
        except ValueError:
            data = None
    if isinstance(data, dict):
        data = data.get("results")
    if isinstance(data, list) and data:
        recorded, _ = await svc.store.list_runs(len(data) + 10, 0, job_id=job_id)
        run_of = {r["case_id"]: r["id"] for r in recorded}
        rows = []
        for r in data:
            if not isinstance(r, dict):
                continue
            times = [lim.get("time_s") for lim in r.get("limits") or [] if isinstance(lim, dict)
                     and isinstance(lim.get("time_s"), (int, float))]
            warns = r.get("warnings") or []
            rid = run_of.get(str(r.get("id")))
            name = esc(str(r.get("id")))
            cell = f'<a href="/ui/runs/{esc(rid)}">{name}</a>' if rid else name
            rows.append(f'<tr><td>{cell}</td><td>{esc(str(r.get("verdict") or "—"))}</td>'
                        f'<td class="n">{esc(duration(min(times)) if times else "not reached")}</td>'
                        f'<td><ul>{"".join(f"<li>{esc(str(w))}</li>" for w in warns)}</ul></td></tr>')
        out.append('<h2>Screened rows</h2><table id="job-rows"><tr><th>Case</th><th>Verdict</th><th>First limit</th>'
                   '<th>Warnings</th></tr>' + "".join(rows) + "</table>")
    e = await svc.store.job_file(job_id, "errors.csv")
    if e is not None:
        rows = [[without_people_prefix(c) for c in row]  # shown as written, without the spreadsheet guard
                for row in csv.reader(io.StringIO(e.data.decode("utf-8-sig", "replace")))]
        if len(rows) > 1:
            head = "".join(f"<th>{esc(c)}</th>" for c in rows[0])
            body = "".join("<tr>" + "".join(f"<td>{esc(c)}</td>" for c in row) + "</tr>" for row in rows[1:])
            out.append(f'<h2>Rows not screened ({len(rows) - 1})</h2><table id="job-errors"><tr>{head}</tr>{body}'
                       f'</table>')
    return "\n".join(out)


@router.get("/ui/jobs/{job_id}/files/{name}")
async def ui_job_file(request: Request, job_id: str, name: str):
    from screening.service.api import _check_id

    if name not in CONTENT_TYPES:
        return message_page("Not found", "No such file.", status=404)
    f = await _svc(request).store.job_file(_check_id(job_id, "job_id"), name)
    if f is None:
        return message_page("Not found", "This job has no such file.", status=404)
    return Response(f.data, media_type=f.content_type,
                    headers={"Content-Disposition": f'attachment; filename="{job_id[:12]}-{name}"'})


# ------------------------------------------------------------------ reference pages

@router.get("/ui/rules", response_class=HTMLResponse)
async def ui_rules(request: Request):
    rows = "".join(f'<tr><td><a href="/ui/rules/{esc(r.name)}">{esc(r.title)}</a></td><td>{esc(r.description)}</td>'
                   f'<td class="mono">{esc(r.sha256[:16])}…</td></tr>' for r in _svc(request).rule_sets.values())
    return page("Rule sets", f"<h1>Rule sets</h1><table><tr><th>Rule set</th><th>Description</th><th>sha256</th></tr>"
                             f"{rows}</table>")


@router.get("/ui/rules/{name}", response_class=HTMLResponse)
async def ui_rule(request: Request, name: str):
    rs = _svc(request).rule_sets.get(name)
    if rs is None:
        return message_page("Not found", "No such rule set.", status=404)
    return page(rs.title, f'<h1>{esc(rs.title)}</h1><p class="mono">sha256 {esc(rs.sha256)}</p>'
                          f'<pre class="mono">{esc(rs.data.decode("utf-8", "replace"))}</pre>')


@router.get("/ui/schema.json")
async def ui_schema(request: Request):
    return Response(json.dumps(_svc(request).case_schema(), indent=2), media_type="application/json")


@router.get("/ui/login", response_class=HTMLResponse)
async def ui_login_form(request: Request):
    return login_page(status=200)


@router.post("/ui/login")
async def ui_login(request: Request):
    import hmac

    from screening.service.ui_cookie import UI_COOKIE, ui_cookie_value

    _same_origin(request)
    settings = request.app.state.settings
    form = await request.form(max_files=0, max_fields=2, max_part_size=4096)
    given = str(form.get("token") or "")
    if not settings.token:
        return RedirectResponse("/", status_code=303)
    if not hmac.compare_digest(given.encode("utf-8"), settings.token.encode("utf-8")):
        return login_page(status=401, wrong=True)
    resp = RedirectResponse("/", status_code=303)
    resp.set_cookie(UI_COOKIE, ui_cookie_value(settings.token), httponly=True, samesite="strict", path="/")
    return resp
