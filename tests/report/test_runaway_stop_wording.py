"""A history that stops in a runaway shows where it stopped, not a "peak" and a "time of peak".

Cases: the hot-filled bag demo (its hot spot runs away in the conduction solution), and a zero-order source
without a heat of reaction, whose lumped history passes the ceiling temperature (2000 K) where the integration
stops; that the temperature climbs without bound there follows from the balance (release without depletion,
common practice: a zero-order source with no heat of reaction never stops releasing heat).
"""
from __future__ import annotations

import io
from pathlib import Path

import pytest
import yaml
from pypdf import PdfReader

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.report.memo import render_memo
from screening.report.readings import stops_in_runaway
from screening.report.text import format_result
from screening.result import memo_view
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules

DEMO = Path(__file__).resolve().parents[2] / "screening" / "demo_cases"

CEILING = {
    "id": "T-CEIL", "title": "zero-order source without a heat of reaction",
    "contents": {"mass": "200 kg", "specific_heat": "1.5 kJ/(kg*K)", "initial_temperature": "40 degC"},
    "heat_loss": {"ambient_temperature": "40 degC", "ua": "2 W/K"},
    "heat_sources": [{"kind": "arrhenius", "role": "decomposition", "specific_power": "0.5 W/kg",
                      "reference_temperature": "60 degC", "activation_energy": "120 kJ/mol", "order": 0}],
    "limits": [{"name": "onset", "temperature": "80 degC"}],
    "horizon": "30 d", "scenario": "storage",
}


def _result(data: bytes) -> dict:
    loaded = load_case_bytes(data, "yaml")
    r = screen_prepared(prepare_case(loaded.spec), loaded.input_hash)
    apply_rules(r, None)
    return r


def _memo_text(r: dict, monkeypatch) -> str:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    return " ".join("\n".join(p.extract_text() for p in PdfReader(io.BytesIO(render_memo(memo_view(r)))).pages)
                    .split())


@pytest.mark.parametrize("which", ["bag", "ceiling"])
def test_a_runaway_is_not_shown_as_a_peak(which, monkeypatch):
    data = (DEMO / "fw-b08-hot-filled-bag.yaml").read_bytes() if which == "bag" else \
        yaml.safe_dump(CEILING).encode()
    r = _result(data)
    assert stops_in_runaway(r)
    if which == "ceiling":
        assert r["stop_reason"] == "ceiling" and r["peak_temperature_K"] == pytest.approx(2000.0)
    text = format_result(r)
    assert "solution stops at" in text and "not a peak" in text
    assert "\nPeak " not in text
    memo = _memo_text(r, monkeypatch)
    assert "Runs away: the solution stops at" in memo and "not a peak" in memo
    assert "Time of peak" not in memo


def test_a_history_that_peaks_keeps_its_peak_rows(monkeypatch):
    r = _result((DEMO / "fw-t204-hold-tank.yaml").read_bytes())
    assert not stops_in_runaway(r)
    assert "Time of peak" in _memo_text(r, monkeypatch) or "still rising" in _memo_text(r, monkeypatch)


def test_the_daily_cycle_method_text_follows_how_the_case_is_solved(monkeypatch):
    # unstirred powder drums in the sun (the FW-S17 demo with a daily cycle): the surface of the conduction body
    # sees the cycle; the method must not say the contents are one lumped mass solved exactly in closed form
    data = yaml.safe_load((DEMO / "fw-s17-powder-drums.yaml").read_text(encoding="utf-8"))
    data["heat_loss"]["daily_range"] = "12 K"
    data["horizon"] = "10 d"
    data["sun"] = {"peak_irradiance": "800 W/m^2", "absorptivity": 0.6, "exposed_area": "projected",
                   "day_length": "14 h", "outer_coefficient": "15 W/(m^2*K)"}
    memo = _memo_text(_result(yaml.safe_dump(data).encode()), monkeypatch)
    assert "the surface of the conduction body sees the same effective ambient" in memo
    assert "solved exactly, piece by piece" not in memo and "taken as one lumped mass" not in memo
    drums = _memo_text(_result((DEMO / "fw-d52-drum-yard.yaml").read_bytes()), monkeypatch)  # closed form, stirred
    assert "solved exactly, piece by piece" in drums and "taken as one lumped mass" in drums
