"""Tests of the PDF review memo and register summary writer."""
from __future__ import annotations

import copy
import io
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pypdf import PdfReader

from screening.report import pdf as mw
from screening.report.memo import render_memo, write_memo
from screening.report.pdf import MemoInputError
from screening.report.register_summary import render_register_summary, write_register_summary
from screening.report.templates import TemplateError, load_templates, template_hashes

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import memo_fixtures as fx  # noqa: E402

REPO = Path(__file__).resolve().parents[2]
EPOCH = "1700000000"  # 2023-11-14 UTC
HOSTILE = "<b>bold</b> & <font color=red>x</font>"


@pytest.fixture(autouse=True)
def _fixed_date(monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)


def pdf_text(data: bytes) -> str:
    reader = PdfReader(io.BytesIO(data))
    return "\n".join(page.extract_text() for page in reader.pages)


def flat(text: str) -> str:
    return " ".join(text.split())


def pages(data: bytes) -> int:
    return len(PdfReader(io.BytesIO(data)).pages)


@pytest.fixture(scope="module")
def rendered():
    os.environ["SOURCE_DATE_EPOCH"] = EPOCH
    try:
        return {c["id"]: (c, render_memo(c)) for c in fx.all_cases()}
    finally:
        del os.environ["SOURCE_DATE_EPOCH"]


# --------------------------------------------------------------------------- content


def test_memo_has_essentials(rendered):
    tpl = load_templates()
    caution_words = flat(tpl["caution"]["text"])
    for case_id, (case, data) in rendered.items():
        assert data.startswith(b"%PDF-")
        text = flat(pdf_text(data))
        assert case_id in text
        for lim in case["limits"]:
            assert flat(lim["name"]) in text, lim["name"]
        verdict_word = tpl["labels"]["verdict_" + case["verdict"]]
        assert f"Verdict: {verdict_word}" in text
        assert tpl["caution"]["heading"] in text
        assert text.count(tpl["caution"]["heading"]) >= 2  # page 1 and repeated at the end
        assert caution_words[:80] in text
        assert "not a design calculation" in text
        assert "relief-system sizing" in text
        assert "licensed or otherwise qualified professional" in text
        n = pages(data)
        assert f"page 1 of {n}" in text and f"page {n} of {n}" in text
        assert case["input_hash"] in text
        assert case["rule_set"]["hash"] in text
        assert "2023-11-14" in text
        for w in case["warnings"]:
            assert flat(w) in text, w
        for r in case["reasons"]:
            assert flat(r) in text, r
        for item in case["inputs"]:
            assert item["text"] in text


def test_caution_box_on_page_one(rendered):
    _, data = rendered["TK-101"]
    first = flat(PdfReader(io.BytesIO(data)).pages[0].extract_text())
    assert "CAUTION: SCREENING ESTIMATE ONLY" in first
    assert first.index("CAUTION") < first.index("Scope and scenario")


def test_sections_present_by_case(rendered):
    t_closed = flat(pdf_text(rendered["TK-101"][1]))
    t_arr = flat(pdf_text(rendered["R-201"][1]))
    t_rec = flat(pdf_text(rendered["R-201-REC"][1]))
    assert "Runaway criteria" not in t_closed and "Boiling" not in t_closed.replace("Boiling point", "")
    for label in ("TMRad from initial temperature", "T_D24", "Critical ambient temperature", "by Semenov",
                  "Temperature of no return", "MTSR", "TMRad at MTSR", "Criticality class", "4 (scale 1 to 5)",
                  "Heat balance diagram", "Steady states", "Time to reach boiling", "Figure 2"):
        assert label in t_arr, label
    assert "Recovery action starts" in t_rec and "Figure 3" in t_rec
    assert "185.0 °F (358.15 K)" in t_rec and "300.0 °F difference" in t_rec
    assert "85.0 °C (358.15 K)" in t_arr
    # not-reached limits say so, with the horizon
    assert "not reached within 72 h" in t_closed or "not reached within 72.0 h" in t_closed
    # margins against detection + response
    assert "Margin after detection + response" in t_closed
    assert "17.7 h" in t_closed  # 19.69 h - 2 h


def test_hostile_text_prints_literally():
    case = fx.closed_form_case()
    case["title"] = HOSTILE
    case["id"] = "TK-<i>1</i>&amp;"
    case["limits"][0]["name"] = "<font size=40>Alarm</font>"
    case["warnings"].append("check <br/> & <para> here")
    case["meta"]["notes"] = "A & B <u>underlined?</u>"
    case["inputs"][0]["text"] = "9000 <kg> & more"
    case["reasons"] = ["<strike>gone</strike>"]
    data = render_memo(case)
    text = flat(pdf_text(data))
    for s in (HOSTILE, "TK-<i>1</i>&amp;", "<font size=40>Alarm</font>", "check <br/> & <para> here",
              "A & B <u>underlined?</u>", "9000 <kg> & more", "<strike>gone</strike>"):
        assert s in text, s


def test_non_ascii_survives_and_missing_glyphs_are_visible():
    case = fx.closed_form_case()
    case["title"] = "Reaktor Müller, 5 µm Filter, 25 °C ≥ 20 °C"
    case["warnings"].append("ΔT over 10 K ⚠")
    data = render_memo(case)
    text = flat(pdf_text(data))
    assert "Reaktor Müller, 5 µm Filter, 25 °C ≥ 20 °C" in text
    assert "[U+0394]T over 10 K [U+26A0]" in text
    assert "printed as [U+XXXX] codes" in text


def test_fonts_are_embedded_truetype_only(rendered):
    for _, data in rendered.values():
        reader = PdfReader(io.BytesIO(data))
        for page in reader.pages:
            for font in page["/Resources"]["/Font"].values():
                font = font.get_object()
                assert font["/Subtype"] == "/TrueType", font["/BaseFont"]
                assert "/FontFile2" in font["/FontDescriptor"].get_object()


def test_underscored_plot_keys_accepted():
    case = fx.recovery_case()
    for key in ("history", "heat_balance", "recovery_history"):
        case["_" + key] = case.pop(key)
    text = flat(pdf_text(render_memo(case)))
    assert "Figure 3" in text and "Steady states" in text


def test_minimal_and_unknown_keys():
    data = render_memo({"id": "X-1", "whatever": [1, 2, 3], "limits": None, "inputs": None})
    text = flat(pdf_text(data))
    assert "X-1" in text and "NOT GIVEN" in text
    assert "No temperature history came with this result" in text
    assert "No limit temperatures were given" in text


def test_edge_values_render():
    case = fx.closed_form_case()
    case["units"] = {"temperature": "degR"}
    case["ua_W_per_K"] = 0.0
    case["time_constant_s"] = None
    case["steady_temperature_K"] = None
    case["limit_exceeded_at_start"] = True
    case["limits"][0]["margin_s"] = -3600.0
    case["detection_time_s"] = None  # alarm never sounds
    case["history"]["temperature_K"][5] = float("nan")
    text = flat(pdf_text(render_memo(case)))
    assert "°R" in text
    assert "n/a (no heat loss)" in text
    assert "already exceeded at the start" in text
    assert "−1.00 h" in text
    assert "alarm does not sound within the horizon" in text
    assert "1 non-finite points left out" in text
    k_case = fx.arrhenius_case()
    k_case["units"] = {"temperature": "K"}
    assert "358.15 K" in flat(pdf_text(render_memo(k_case)))


@settings(max_examples=12, deadline=None, database=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(title=st.text(max_size=120), name=st.text(min_size=1, max_size=60), warning=st.text(max_size=200))
def test_arbitrary_text_never_breaks_the_render(title, name, warning):
    case = fx.closed_form_case()
    case["title"] = title
    case["limits"][1]["name"] = name
    case["warnings"] = [warning]
    case["meta"]["notes"] = title + "\n\n" + warning
    text = flat(pdf_text(render_memo(case)))
    assert "TK-101" in text and "W1." in text


def test_every_warning_printed():
    case = fx.closed_form_case()
    case["warnings"] = [f"warning number {i} about a non-conservative simplification" for i in range(60)]
    text = flat(pdf_text(render_memo(case)))
    for i in range(60):
        assert f"W{i + 1}. warning number {i} about" in text
    assert "Validity warnings: 60" in text


# --------------------------------------------------------------------------- layout


def test_long_inputs_table_paginates_with_header_repeated():
    case = fx.closed_form_case()
    case["inputs"] = [
        {"field": f"sources.constant[{i}].power", "text": f"{i} kW", "value_si": i * 1000.0, "unit_si": "W",
         "source": "vendor list " * (i % 5)}
        for i in range(150)
    ]
    case["inputs"].append({"field": "notes.long", "text": "x" * 400, "value_si": None, "unit_si": None,
                           "source": "word " * 2000})
    data = render_memo(case)
    reader = PdfReader(io.BytesIO(data))
    with_header = [i for i, p in enumerate(reader.pages) if "As written" in p.extract_text()]
    assert len(with_header) >= 3, with_header
    text = flat(pdf_text(data))
    assert "sources.constant[149].power" in text
    assert "149 kW" in text
    assert "characters in all" in text  # over-long cell cut visibly, not clipped
    assert "x" * 50 in text.replace(" ", "")


def test_chart_labels_do_not_overlap():
    from reportlab.graphics.shapes import String

    from screening.report.charts import ChartFonts, HLine, Series, VLine, line_chart

    mw._register_fonts()
    fonts = ChartFonts("HSVera", "HSVera-Bold", 7.5)
    hl = [HLine(50 + 0.3 * i, f"limit {i} with a rather long descriptive name", suffix=f"{50 + 0.3 * i:.1f} °C")
          for i in range(6)]
    vl = [VLine(1.0 + 0.05 * i, f"event {i} label text") for i in range(4)]
    d = line_chart(480, 250, [Series([0, 1, 2, 3], [20, 40, 60, 70], "T")], fonts, "Time (h)", "T (°C)",
                   hlines=hl, vlines=vl)
    boxes = []
    from reportlab.pdfbase.pdfmetrics import stringWidth

    def walk(node):
        for item in getattr(node, "contents", []):
            if isinstance(item, String):
                tr = getattr(node, "transform", (1, 0, 0, 1, 0, 0))
                if tr == (1, 0, 0, 1, 0, 0):
                    w = stringWidth(item.text, item.fontName, item.fontSize)
                    x = item.x - (w / 2 if item.textAnchor == "middle" else w if item.textAnchor == "end" else 0)
                    boxes.append((x, item.y, x + w, item.y + item.fontSize * 0.9, item.text))
            walk(item)

    walk(d)
    labels = [b for b in boxes if b[4].startswith(("limit", "event"))]
    assert len(labels) == 10
    for i, a in enumerate(labels):
        for b in labels[i + 1:]:
            overlap = a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]
            assert not overlap, (a, b)
        assert a[2] <= 480 + 1e-6  # inside the drawing
    assert all(b[4].endswith("°C") for b in labels if b[4].startswith("limit"))  # temperature kept


def test_spread_positions():
    from screening.report.charts import spread_positions

    got = spread_positions([10, 10.5, 11, 50, 50.2], 9, 0, 100)
    s = sorted(got)
    assert all(b - a >= 9 - 1e-9 for a, b in zip(s, s[1:]))
    assert all(0 <= g <= 100 for g in got)


# --------------------------------------------------------------------------- reproducibility


def test_byte_identical_with_source_date_epoch(rendered):
    case = fx.arrhenius_case()
    assert render_memo(case) == render_memo(copy.deepcopy(case)) == rendered["R-201"][1]


def test_byte_identical_across_processes(tmp_path, rendered):
    code = ("import sys; sys.path.insert(0, 'tests'); import memo_fixtures as fx; "
            "from screening.report.memo import write_memo; "
            f"write_memo(fx.recovery_case(), {str(tmp_path / 'x.pdf')!r})")
    env = dict(os.environ, SOURCE_DATE_EPOCH=EPOCH)
    subprocess.run([sys.executable, "-c", code], cwd=REPO, env=env, check=True, timeout=60)
    assert (tmp_path / "x.pdf").read_bytes() == rendered["R-201-REC"][1]


def test_date_follows_source_date_epoch(monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "0")
    assert "1970-01-01" in pdf_text(render_memo({"id": "D"}))
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "not-a-number")
    with pytest.raises(MemoInputError):
        render_memo({"id": "D"})


# --------------------------------------------------------------------------- atomic writing


def test_write_memo_writes_file(tmp_path):
    out = tmp_path / "memo.pdf"
    write_memo(fx.closed_form_case(), out)
    assert out.read_bytes().startswith(b"%PDF-")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["memo.pdf"]


@pytest.mark.parametrize("bad", [
    {"id": "B", "peak_temperature_K": "hot"},
    {"id": "B", "limits": "not a list"},
    {"id": "B", "limits": [{"name": "x", "temperature_K": [1]}]},
    {"id": "B", "history": {"time_s": [0, 1], "temperature_K": ["a", "b"]}},
    ["not", "a", "dict"],
])
def test_failed_render_leaves_nothing(tmp_path, bad):
    out = tmp_path / "memo.pdf"
    with pytest.raises(MemoInputError):
        write_memo(bad, out)
    assert list(tmp_path.iterdir()) == []


def test_failure_while_writing_removes_temp_and_keeps_old(tmp_path, monkeypatch):
    out = tmp_path / "memo.pdf"
    out.write_bytes(b"old")

    def boom(src, dst):
        raise OSError("disk full")

    monkeypatch.setattr(mw.os, "replace", boom)
    with pytest.raises(OSError):
        write_memo(fx.closed_form_case(), out)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["memo.pdf"]
    assert out.read_bytes() == b"old"


# --------------------------------------------------------------------------- templates


def test_custom_templates_override_and_fall_back(tmp_path):
    (tmp_path / "memo.toml").write_text(
        '[site]\nname = "ACME <Works> & Co"\n[caution]\nheading = "READ THIS FIRST"\n'
        '[signoff]\nroles = ["Reviewer", "Approver"]\n', encoding="utf-8")
    data = render_memo(fx.closed_form_case(), templates_dir=tmp_path)
    text = flat(pdf_text(data))
    assert "ACME <Works> & Co" in text
    assert "READ THIS FIRST" in text
    assert "Role: Approver" in text
    assert "Scope and scenario" in text  # untouched key from the defaults
    tpl = load_templates(tmp_path)
    assert tpl["footer"]["text"] == load_templates()["footer"]["text"]


def test_templates_dir_without_file_uses_defaults(tmp_path):
    assert load_templates(tmp_path) == load_templates()


@pytest.mark.parametrize("content, key", [
    ("[site\nname = 'x'\n", None),
    ("[site]\nname = 3\n", "site.name"),
    ("[site]\nnmae = 'x'\n", "site.nmae"),
    ("[signoff]\ncomment_lines = 'four'\n", "signoff.comment_lines"),
    ("[signoff]\nroles = [1, 2]\n", "signoff.roles"),
    ("[labels]\nnot_reached = 'not within {horizn}'\n", "labels.not_reached"),
    ("[layout]\npage_size = 'A3'\n", "layout.page_size"),
    ("site = 'flat'\n", "site"),
])
def test_malformed_templates_raise(tmp_path, content, key):
    (tmp_path / "memo.toml").write_text(content, encoding="utf-8")
    with pytest.raises(TemplateError) as err:
        load_templates(tmp_path)
    assert "memo.toml" in str(err.value)
    assert err.value.file and err.value.file.endswith("memo.toml")
    if key:
        assert err.value.key == key and key in str(err.value)


def test_missing_templates_dir_raises(tmp_path):
    with pytest.raises(TemplateError):
        load_templates(tmp_path / "nope")


def test_every_default_key_documented():
    """Each key in the shipped file has a comment above it, or above its group of keys."""
    text = (REPO / "templates" / "memo.toml").read_text(encoding="utf-8")
    in_string = False
    seen_comment = False
    for line in text.splitlines():
        if in_string:
            in_string = '"""' not in line
            continue
        stripped = line.strip()
        if stripped.startswith("["):
            seen_comment = False
        elif stripped.startswith("#"):
            seen_comment = True
        elif "=" in stripped:
            assert seen_comment, f"undocumented template key: {stripped}"
            in_string = stripped.count('"""') == 1


def test_template_hashes(tmp_path):
    h = template_hashes()
    assert "templates/default/memo.toml" in h
    assert {"fonts/Vera.ttf", "fonts/VeraBd.ttf", "fonts/VeraIt.ttf", "fonts/VeraBI.ttf"} <= set(h)
    assert all(re.fullmatch(r"[0-9a-f]{64}", v) for v in h.values())
    (tmp_path / "memo.toml").write_text('[site]\nname = "x"\n', encoding="utf-8")
    h2 = template_hashes(tmp_path)
    assert "templates/custom/memo.toml" in h2


def test_import_is_cheap():
    code = "import sys, screening.report.memo, screening.report.register_summary; print(any(m.startswith('reportlab') for m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], cwd=REPO, capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


# --------------------------------------------------------------------------- register summary


def _register_cases():
    cases = []
    for i, base in enumerate(fx.all_cases() * 3):
        c = copy.deepcopy(base)
        c["id"] = f"V-{i:02d}"
        cases.append(c)
    cases[4]["limits"][0]["margin_s"] = -7200.0
    cases[7]["verdict"] = "odd"
    return cases


def test_register_summary(tmp_path):
    out = tmp_path / "register.pdf"
    errors = [{"id": "TK-ERR", "error": "contents.mass: <missing> & unit"}, "bare message"]
    write_register_summary(_register_cases(), errors, out)
    assert [p.name for p in tmp_path.iterdir()] == ["register.pdf"]
    data = out.read_bytes()
    text = flat(pdf_text(data))
    assert "CAUTION: SCREENING ESTIMATE ONLY" in text
    assert "TK-ERR" in text and "contents.mass: <missing> & unit" in text and "bare message" in text
    assert "Time to first limit (h)" in text
    # the vessel with the negative margin is listed first
    table = text[text.index("Vessels by smallest margin"):]
    assert table.index("V-04") < table.index("V-00")
    assert render_register_summary(_register_cases(), errors) == data


def test_register_failure_leaves_nothing(tmp_path):
    with pytest.raises(MemoInputError):
        write_register_summary([{"id": "x", "limits": 5}], [], tmp_path / "r.pdf")
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- uncertainty and allowable values


@pytest.fixture(scope="module")
def mc_rendered():
    os.environ["SOURCE_DATE_EPOCH"] = EPOCH
    try:
        case = fx.uncertainty_case()
        return case, render_memo(case)
    finally:
        del os.environ["SOURCE_DATE_EPOCH"]


def test_percent_format():
    assert mw._percent(0.384, 0.0034) == "38.40 % \u00b1 0.34 %"
    assert mw._percent(0.9998, 1e-4) == "99.980 % \u00b1 0.010 %"
    assert mw._percent(0.0, 0.0) == "0 %" and mw._percent(1.0, 0.0) == "100 %"
    assert mw._percent(0.99996) == "99.996 %"  # never rounded to 100 % when some samples did not
    assert mw._percent(0.00004) == "0.004 %"
    assert mw._percent(0.5) == "50.0 %"


def test_uncertainty_section_content(mc_rendered):
    case, data = mc_rendered
    text = flat(pdf_text(data))
    u = case["uncertainty"]
    tpl = load_templates()
    assert "Uncertainty (Monte Carlo)" in text
    # the section sits after the results and before the verdict and the warnings
    assert text.index("4. Results") < text.index("7. Uncertainty (Monte Carlo)") < text.index("8. Verdict")
    assert text.index("8. Verdict") < text.index("9. Validity warnings")
    # what the estimate is and is not
    assert flat(tpl["uncertainty"]["text"])[:60] in text
    assert "engineering judgement" in text and "standard error" in text
    assert "does not replace the deterministic margin" in text
    for item in u["inputs"]:
        assert item["input"] in text, item["input"]
        assert item["distribution"] in text
    assert "mean 150 W/K, sd 50 W/K" in text and "low 4500 W, high 7500 W" in text
    assert "median 2000 J/(kg K), geometric sd 1.1" in text
    for lim in u["limits"]:
        for key in ("probability_before_response", "probability_within_horizon"):
            p, se = lim[key], lim[key + "_standard_error"]
            if p == 0.0 and se == 0.0:  # no hit: the one-sided 95 % upper bound instead (checked below)
                continue
            assert flat(mw._percent(p, se)) in text, (lim["name"], key)
        for key in ("p05_time_s", "p50_time_s", "p95_time_s"):
            if lim[key] is not None:
                assert mw._hours_short(lim[key]) in text
    assert "56.25 % \u00b1 0.81 %" in text  # the first limit, before detection + response
    assert "not reached" in text
    # p = 0 with a zero standard error: how many samples, and the one-sided 95 % upper bound 1 - 0.05^(1/N)
    # (exact Clopper-Pearson bound for no successes, about 3/N: the "rule of three"; Hanley and Lippman-Hand,
    # JAMA 249 (1983) 1743, from memory)
    bound = 1.0 - 0.05 ** (1.0 / u["accepted"])
    assert abs(bound - 3.0 / u["accepted"]) < 0.05 * bound
    assert f"none of {u['accepted']} samples; below {flat(mw._percent(bound))}" in text
    assert "0.0000 ± 0.0000" not in text and "0 % ± 0 %" not in text
    # run line and method
    assert (f"Samples drawn: 4000; screened: {u['accepted']}; rejected as physically impossible: "
            f"{u['rejected']}; seed: 11; sampling: random.") in text
    assert f"n = {u['accepted']}" in text
    # sensitivity: chart and table, the impossible swing end flagged
    assert "Sensitivity of the time to the first limit" in text
    assert "Time to reach High temperature alarm (h)" in text
    assert "vessel.wall_heat_capacity *" in text and "physically impossible; the case value was used" in text
    assert "all inputs at case values: 19.7 h" in text
    assert "\u22120.65" in text  # rank correlation of the power, with a true minus sign
    # cumulative distribution chart
    assert "Distribution of the time to the first limit" in text
    assert "Share of samples that reached the limit" in text
    assert f"Share of the {u['accepted']} screened samples" in text
    assert "so it ends at 97.4 %" in text
    assert "Figure 2." in text and "Figure 3." in text
    assert "[U+" not in text  # every glyph printed is in the embedded fonts
    # every warning still printed, caution still at both ends
    for w in case["warnings"]:
        assert flat(w) in text
    assert text.count(tpl["caution"]["heading"]) >= 2


def test_allowable_values_content(mc_rendered):
    case, data = mc_rendered
    text = flat(pdf_text(data))
    assert "Allowable values" in text
    results = text[text.index("4. Results"):text.index("5. Temperature history")]
    assert "Allowable values" in results  # in the results section
    for entry in case["allowable_values"]:
        assert entry["input"] in results.replace("heat_loss. ambient", "heat_loss.ambient")
    assert "25 °C" in results and "−5 °C to 55 °C" in results
    assert "at 18.71 °C: PASS below, REVIEW above" in results
    assert "at 31.342 °C: REVIEW below, FAIL above" in results
    assert "at 121.14 W/K: FAIL below, REVIEW above" in results
    assert "at 15.018 t: REVIEW below, PASS above" in results
    assert "no change within the scanned range; REVIEW throughout" in results
    assert "not a design or operating limit" in results
    assert "Scanned at 41 points" in results


def test_without_new_keys_renders_as_before(rendered):
    for case_id, (case, data) in rendered.items():
        c = copy.deepcopy(case)
        c["uncertainty"] = None
        c["uncertainty_cdf"] = None
        c["allowable_values"] = None
        assert render_memo(c) == data, case_id
        text = flat(pdf_text(data))
        assert "Uncertainty (Monte Carlo)" not in text and "Allowable values" not in text
    c = copy.deepcopy(rendered["TK-101"][0])
    c["allowable_values"] = []
    assert render_memo(c) == rendered["TK-101"][1]


def test_uncertainty_memo_reproducible(tmp_path, mc_rendered):
    case, data = mc_rendered
    assert render_memo(copy.deepcopy(case)) == data
    code = ("import sys; sys.path.insert(0, 'tests'); import memo_fixtures as fx; "
            "from screening.report.memo import write_memo; "
            f"write_memo(fx.uncertainty_case(), {str(tmp_path / 'mc.pdf')!r})")
    env = dict(os.environ, SOURCE_DATE_EPOCH=EPOCH)
    subprocess.run([sys.executable, "-c", code], cwd=REPO, env=env, check=True, timeout=120)
    assert (tmp_path / "mc.pdf").read_bytes() == data


def test_engine_style_underscored_cdf_accepted(mc_rendered):
    case, data = mc_rendered
    c = copy.deepcopy(case)
    c["_uncertainty_cdf"] = c.pop("uncertainty_cdf")
    assert render_memo(c) == data
    c = copy.deepcopy(case)
    c["uncertainty"]["_cdf"] = c.pop("uncertainty_cdf")
    assert render_memo(c) == data


def test_uncertainty_not_computed_note():
    case = fx.closed_form_case()
    case["uncertainty"] = {"samples": 10000, "seed": 20261201, "sampling": "latin-hypercube", "rejected": 0,
                           "limits": [], "sensitivity": [],
                           "note": "Not computed: the vectorised integrator does not model boiling credit."}
    text = flat(pdf_text(render_memo(case)))
    assert "Uncertainty (Monte Carlo)" in text
    assert "Note: Not computed: the vectorised integrator does not model boiling credit." in text
    assert "screened: not given" in text and "sampling: latin-hypercube" in text
    assert "Figure 2" not in text  # no charts without data


def test_uncertainty_edge_values():
    case = fx.uncertainty_case()
    u = case["uncertainty"]
    u["first_limit"] = "Flash point"  # not reached with the case values
    u["sensitivity"][0]["high_time_s"] = None
    u["sensitivity"][1]["low_time_s"] = None
    u["sensitivity"][1]["high_time_s"] = None
    u["sensitivity"][2]["rank_correlation"] = None
    u["limits"][0]["probability_before_response"] = None
    u["limits"][0]["probability_before_response_standard_error"] = None
    u["limits"][1]["probability_within_horizon"] = 1.0
    u["limits"][1]["probability_within_horizon_standard_error"] = 0.0
    u["sensitivity"] += [{"input": f"heat_sources.{i}.power", "low_value": 1.0, "high_value": 2.0, "unit_si": "W",
                          "low_time_s": 1e5, "high_time_s": 1.1e5, "rank_correlation": 0.0, "swing_s": 1e4,
                          "swing_possible": True} for i in range(20)]
    case["uncertainty_cdf"] = {"time_s": [], "probability": [], "n": u["accepted"]}
    text = flat(pdf_text(render_memo(case)))
    assert "all inputs at case values: not reached" in text
    assert "not reached within the horizon (bar drawn to the horizon)" in text
    assert "n/a (no response time given)" in text
    # all samples: the one-sided 95 % lower bound 0.05^(1/N) (exact Clopper-Pearson, from memory)
    assert f"all {u['accepted']} samples; above {flat(mw._percent(0.05 ** (1.0 / u['accepted'])))}" in text
    assert "The chart shows the 15 most influential inputs; all 27 are in the table below." in text
    assert "heat_sources.19.power" in text  # every input is in the table
    assert "No sample reaches Flash point within the horizon" in text
    del case["uncertainty_cdf"]
    assert "No distribution of times came with this result" in flat(pdf_text(render_memo(case)))


def test_hostile_text_in_uncertainty_and_allowable_values():
    case = fx.uncertainty_case()
    u = case["uncertainty"]
    u["inputs"][0]["input"] = "<b>heat</b>.ua&amp;"
    u["inputs"][0]["distribution"] = "<i>normal</i>"
    u["sensitivity"][0]["input"] = "<font size=30>power</font>"
    u["limits"][0]["name"] = "<u>alarm</u> & more"
    u["method"] = "Monte <br/> Carlo & co"
    u["note"] = "<para>note</para> & ΔT"
    case["allowable_values"][0]["input"] = "<strike>ambient</strike>"
    case["allowable_values"][0]["unit"] = "<sup>m</sup>"
    case["allowable_values"][0]["changes"][0]["below"] = "<b>odd</b>"
    text = flat(pdf_text(render_memo(case)))
    for s in ("<b>heat</b>.ua&amp;", "<i>normal</i>", "<font size=30>power</font>", "<u>alarm</u> & more",
              "Monte <br/> Carlo & co", "<para>note</para> & [U+0394]T", "<strike>ambient</strike>",
              "<sup>m</sup>", "<b>odd</b> below"):
        assert s.replace(" ", "") in text.replace(" ", ""), s  # narrow cells may wrap anywhere


@pytest.mark.parametrize("key, value", [
    ("uncertainty", "not a dict"),
    ("uncertainty", {"limits": "x"}),
    ("uncertainty", {"limits": [{"name": "a", "probability_within_horizon": "high"}]}),
    ("uncertainty", {"sensitivity": [{"input": "a", "low_time_s": [1]}]}),
    ("uncertainty", {"sensitivity": [{"input": "a", "low_time_s": float("nan")}]}),
    ("uncertainty_cdf", {"time_s": ["a"], "probability": [0.5]}),
    ("allowable_values", 5),
    ("allowable_values", [{"input": "a", "changes": [{"value": "high"}]}]),
])
def test_bad_uncertainty_values_raise(key, value):
    case = fx.closed_form_case()
    case["uncertainty"] = {"samples": 10}
    case[key] = value
    with pytest.raises(MemoInputError):
        render_memo(case)


def test_tornado_labels_do_not_overlap():
    from reportlab.graphics.shapes import Polygon, String
    from reportlab.pdfbase.pdfmetrics import stringWidth

    from screening.report.charts import ChartFonts, TornadoRow, tornado_chart

    mw._register_fonts()
    fonts = ChartFonts("HSVera", "HSVera-Bold", 7.5)
    rows = [TornadoRow(f"heat_sources.{i}.a_long_parameter_name_that_needs_wrapping_{i}", 2.0 + i, None if i % 3 == 0
                       else 30.0 - i, mark=" *" if i == 2 else "") for i in range(8)]
    rows.append(TornadoRow("heat_loss.ua", None, None))
    d = tornado_chart(480, rows, fonts, "Time to reach the limit (h)", "time with the input at its low value",
                      "time with the input at its high value", nominal=12.0, nominal_label="case values: 12.0 h",
                      x_max=72.0, not_reached_label="not reached within the horizon",
                      notes=["* one end is physically impossible"])
    boxes, triangles = [], 0
    for item in d.contents:
        if isinstance(item, String):
            w = stringWidth(item.text, item.fontName, item.fontSize)
            x = item.x - (w / 2 if item.textAnchor == "middle" else w if item.textAnchor == "end" else 0)
            boxes.append((x, item.y, x + w, item.y + item.fontSize * 0.9, item.text))
        elif isinstance(item, Polygon):
            triangles += 1
    assert triangles == 3 + 2 + 1  # one per not-reached end (two on the last row) and one in the legend
    for i, a in enumerate(boxes):
        assert a[0] >= 0 and a[2] <= 480 + 1e-6 and 0 <= a[1] and a[3] <= d.height, a
        for b in boxes[i + 1:]:
            overlap = a[0] < b[2] - 0.01 and b[0] < a[2] - 0.01 and a[1] < b[3] - 0.01 and b[1] < a[3] - 0.01
            assert not overlap, (a, b)
    texts = [b[4] for b in boxes]
    assert any(t.endswith("*") for t in texts)  # footnote mark kept after shortening
    assert "heat_loss.ua" in texts and "case values: 12.0 h" in texts


def test_default_template_text_is_in_the_embedded_fonts():
    """Every character of the shipped prose and labels has a glyph in all four Vera faces."""
    covered = mw._Text().covered
    tpl = load_templates()

    def walk(node, where):
        if isinstance(node, dict):
            for k, v in node.items():
                yield from walk(v, f"{where}.{k}" if where else k)
        elif isinstance(node, list):
            for i, v in enumerate(node):
                yield from walk(v, f"{where}[{i}]")
        elif isinstance(node, str):
            yield where, node

    for where, text in walk(tpl, ""):
        missing = {ch for ch in text if ch not in "\n" and ord(ch) not in covered}
        assert not missing, (where, missing)
