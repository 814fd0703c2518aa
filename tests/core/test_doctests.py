"""The worked examples in the core's docstrings are run as tests (each reproduces its cited value).

Equivalent to ``pytest --doctest-modules screening/core``; kept as a test so that the README's one
test command runs them too.
"""
from __future__ import annotations

import doctest
import importlib
from pathlib import Path

import pytest

CORE = Path(__file__).resolve().parents[2] / "screening" / "core"
MODULES = sorted(".".join(p.relative_to(CORE.parents[1]).with_suffix("").parts).replace(".__init__", "")
                 for p in CORE.rglob("*.py"))


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE, verbose=False)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"


def test_every_published_correlation_has_an_example():
    # the public functions that implement a published law or correlation must carry a worked example
    required = {
        "screening.core.arrhenius": ["log_arrhenius_rate", "arrhenius_specific_power"],
        "screening.core.arrhenius_history": ["integrate_history"],
        "screening.core.arrhenius_history_batch": ["first_crossing_times_arrhenius", "samples_from_models"],
        "screening.core.closed_form_history": ["relaxation", "linear_balance", "temperature", "temperature_rate",
                                               "steady_temperature", "decaying_energy", "balance_of", "heat_rates"],
        "screening.core.fire_exposure": ["api521_fire_heat_input", "fire_wetted_area"],
        "screening.core.model": ["heat_capacity", "ScreeningModel"],
        "screening.core.root_finding": ["brent_root"],
        "screening.core.transient_conduction_batch": ["hot_spot_histories", "hot_spot_histories_with_mesh_check"],
        "screening.core.runaway.frank_kamenetskii": ["frank_kamenetskii_parameter", "frank_kamenetskii_critical",
                                                     "frank_kamenetskii_critical_ambient"],
        "screening.core.runaway.rates": ["heat_generation", "heat_generation_slope", "heat_loss", "kinetics_warnings"],
        "screening.core.runaway.semenov": ["semenov_critical_ambient", "steady_states"],
        "screening.core.runaway.stoessel": ["adiabatic_temperature_rise", "mtsr", "criticality_class",
                                            "tmr_probability_class", "severity_class"],
        "screening.core.runaway.tmr": ["tmr_adiabatic", "t_d24"],
        "screening.core.terms": ["conductance_and_drive", "constant_power", "fire_power", "model_terms"],
        "screening.core.time_to_limit_batch": ["first_crossing_times", "history_summary", "screen_register",
                                               "turning_times", "within_engine_range"],
        "screening.core.time_to_limit": ["time_to_limit", "time_scales", "sampling_grid", "history_shape", "first_crossing"],
        "screening.core.vessel_geometry": ["total_volume", "total_area", "maximum_height", "liquid_height",
                                           "wetted_area", "wetted_area_below", "liquid_volume_at_height",
                                           "conduction_shape"],
    }
    missing = [f"{m}.{f}" for m, fs in required.items() for f in fs
               if ">>>" not in (getattr(importlib.import_module(m), f).__doc__ or "")]
    assert not missing, f"no worked example in: {missing}"
