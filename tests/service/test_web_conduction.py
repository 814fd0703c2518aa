"""The web page of an unstirred result shows the hot-spot history (chart and table) and what the times are.

Check values: the hot-filled bag demo (its hot-spot time checked against the core solver in
tests/run/test_conduction_case.py); here only what the page carries.
"""
from __future__ import annotations

import json
from pathlib import Path

from screening.result import json_safe, memo_view, public_result
from screening.run.pipeline import screen_file
from screening.service.web import result_html

BAG = Path(__file__).resolve().parents[2] / "screening" / "demo_cases" / "fw-b08-hot-filled-bag.yaml"


def test_the_result_page_shows_the_hot_spot_history():
    result = screen_file(str(BAG))
    public = json.loads(json.dumps(json_safe(public_result(result))))
    view = json.loads(json.dumps(json_safe(memo_view(result))))  # as the run record stores it
    page = result_html(public, view)
    assert 'id="hot-spot-chart"' in page and 'id="hot-spot-history"' in page
    assert "the times are those of the hottest point" in page
    hot_spot_chart = page[page.index('id="hot-spot-chart"'):]
    assert hot_spot_chart[:hot_spot_chart.index("</svg>")].count("<polyline") == 3  # hot spot, centre, surface
    # the history chart of the page draws the same three curves beside the lumped line, which it labels as such
    assert "hottest point (conduction)" in page and "not valid for unstirred contents" in page
    # without the history (an old run record) the page still shows the note, without the chart
    page = result_html(public)
    assert "hottest point" in page and "hot-spot-chart" not in page
