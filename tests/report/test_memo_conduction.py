"""The memo of unstirred contents shows the hot-spot history and says what the times are.

Check values: the hot-filled bag of the issue (screening/demo_cases/fw-b08-hot-filled-bag.yaml), whose hot-spot
time is checked against the core solver in tests/run/test_conduction_case.py; here only what the memo carries.
"""
from __future__ import annotations

import io
from pathlib import Path

import pytest
from pypdf import PdfReader

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.report.memo import render_memo
from screening.result import memo_view
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules

BAG = Path(__file__).resolve().parents[2] / "screening" / "demo_cases" / "fw-b08-hot-filled-bag.yaml"


@pytest.fixture(scope="module")
def bag_result():
    loaded = load_case_bytes(BAG.read_bytes(), "yaml")
    result = screen_prepared(prepare_case(loaded.spec), loaded.input_hash)
    apply_rules(result, None)
    return result


def test_memo_shows_the_hot_spot_history_and_what_the_times_are(bag_result, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    view = memo_view(bag_result)
    assert len(view["conduction_history"]["hot_spot_K"]) == len(view["conduction_history"]["time_s"]) > 100
    text = " ".join("\n".join(p.extract_text() for p in PdfReader(io.BytesIO(render_memo(view))).pages).split())
    assert "the times above are those of the hottest point" in text
    assert "sphere, radius 0.6205 m" in text
    assert "hot spot" in text and "surface" in text and "lumped (well mixed), for comparison" in text  # legend
    assert "The hot spot runs away" in text
    assert "not computed for the unstirred body" in text  # no lumped steady state presented as the body's
    assert "also solved as a body that conducts heat" in text  # the method says so


def test_memo_of_a_stirred_case_has_no_conduction_series(bag_result, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    view = memo_view(bag_result)
    view.pop("conduction_history")
    view.pop("conduction")
    text = " ".join("\n".join(p.extract_text() for p in PdfReader(io.BytesIO(render_memo(view))).pages).split())
    assert "the times above are those of the hottest point" not in text
    assert "lumped (well mixed), for comparison" not in text and "conducts heat" not in text
