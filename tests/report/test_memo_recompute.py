"""A reviewer can redo the calculation from the memo alone.

Every field written in each demo case appears in its memo (text extracted with pypdf), and the
first-limit times of FW-T204 and FW-V110 and the MTSR, T_D24 and TMRad at MTSR of FW-R301 are
recomputed from numbers read out of the memo's text, not from the case file or the result.

References for the recomputation:
- lumped heat balance C dT/dt = P0 + P1 exp(-t/a) + ua_m (Tm - T) - UA (T - Ta) integrated with
  scipy's solve_ivp (a general-purpose reference library) at tight tolerances, crossing found by an event;
- MTSR = Tp + X_ac * dh / c_p (Stoessel, *Thermal Safety of Chemical Processes*, 2008; from memory);
- TMRad = c_p R T^2 / (q(T) E) (Townsend and Tou, Thermochimica Acta 37 (1980) 1-30), q(T) the
  zero-order specific power q0 exp(-E/R (1/T - 1/Tref)); T_D24 where TMRad = 24 h (trade term),
  solved with scipy's brentq.
"""
from __future__ import annotations

import math
import re

import pytest
import yaml

pypdf = pytest.importorskip("pypdf")

from screening.report.memo import render_memo  # noqa: E402
from screening.resources import demo_cases  # noqa: E402
from screening.result import memo_view  # noqa: E402
from screening.run.pipeline import screen_file  # noqa: E402

R = 8.314462618  # J/(mol K), CODATA 2018
NUM = r"(−?-?[0-9]+(?:\.[0-9]*)?(?:e[+\-−]?[0-9]+)?)"


def _memo(name: str):
    path = demo_cases() / f"{name}.yaml"
    result = screen_file(str(path))
    import io

    reader = pypdf.PdfReader(io.BytesIO(render_memo(memo_view(result))))
    text = "\n".join(p.extract_text() for p in reader.pages)
    return path, result, text


def _flat(text: str) -> str:
    """Whitespace collapsed; a path broken after a dot (table cells wrap there) joined again."""
    t = re.sub(r"\s+", " ", text)
    return re.sub(r"\. (?=[a-z_0-9])", ".", t)


def _float(s: str) -> float:
    return float(s.replace("−", "-"))


def _input_si(text: str, field: str, unit: str) -> float:
    """The SI value of one row of the inputs table: field, as written, SI value with unit, source."""
    m = re.search(re.escape(field) + r" .+? " + NUM + " " + re.escape(unit) + r"(?: |$)", text)
    assert m, f"{field} [{unit}] not found in the memo"
    return _float(m.group(1))


def _derived(text: str, label: str, unit: str) -> float:
    m = re.search(re.escape(label) + r" " + NUM + " " + re.escape(unit) + r"(?: |$)", text)
    assert m, f"derived input {label!r} not found in the memo"
    return _float(m.group(1))


def _leaves(obj, prefix=""):
    if isinstance(obj, dict):
        if set(obj) <= {"value", "source"} and "value" in obj:
            yield prefix, obj["value"]
            if obj.get("source"):
                yield prefix + " (source)", obj["source"]
            return
        for k, v in obj.items():
            yield from _leaves(v, f"{prefix}.{k}" if prefix else str(k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _leaves(v, f"{prefix}.{i}")
    else:
        yield prefix, obj


DEMOS = sorted(p.name[:-5] for p in demo_cases().iterdir() if p.name.endswith(".yaml"))


@pytest.mark.parametrize("name", DEMOS)
def test_every_field_of_each_demo_case_is_in_its_memo(name):
    path, _, text = _memo(name)
    flat = _flat(text).replace(" ", "")
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    missing = []
    for field, value in _leaves(data):
        shown = "true" if value is True else "false" if value is False else str(value)
        if isinstance(value, float) and value.is_integer():
            shown = str(int(value))
        bare = field.removesuffix(" (source)")
        top = bare.split(".")[0]
        if top not in ("id", "title", "meta") and bare.replace(" ", "") not in flat:
            missing.append(f"{field} (path)")
        if shown.replace(" ", "") not in flat:
            missing.append(f"{field} = {shown!r}")
    assert not missing, missing


def test_fire_memo_states_wetted_area_heat_input_factor_and_drainage():
    _, result, text = _memo("fw-t410-fire-water-tank")
    t = _flat(text)
    fire = result["fire"][0]
    area = _derived(t, "Wetted area counted for the fire", "m^2")
    q = _derived(t, "Fire heat input Q", "W")
    assert area == pytest.approx(fire["wetted_area_m2"], rel=1e-6)
    assert q == pytest.approx(fire["power_W"], rel=1e-6)
    # API 521 / ISO 23251 with adequate drainage and fire-fighting: Q = 43,200 F A^0.82 (from memory)
    assert q == pytest.approx(43_200 * 1.0 * area ** 0.82, rel=1e-6)
    assert q / 1000 == pytest.approx(879.158, rel=1e-5)  # the figure the JSON gave (879 kW on 39.4 m^2)
    assert "Environment factor F used 1 " in t
    assert "43,200 F A^0.82" in t and "adequate drainage and fire-fighting" in t
    assert "heat_sources.0.drainage_and_firefighting true" in t


def test_reactor_memo_shows_each_sources_kind_role_order_and_gas():
    _, _, text = _memo("fw-r301-reactor")
    t = _flat(text)
    for i, (role, order) in enumerate((("synthesis", "1"), ("decomposition", "0"))):
        assert f"heat_sources.{i}.kind arrhenius" in t
        assert f"heat_sources.{i}.role {role}" in t
        assert f"heat_sources.{i}.order {order}" in t
    assert "heat_sources.1.gas_generating true" in t
    assert "vessel.venting closed" in t and "heat_loss.area wetted" in t


def _first_crossing(C, P0, decaying, media, UA, Ta, T0, limit, horizon):
    from scipy.integrate import solve_ivp

    def rhs(t, T):
        q = P0 + sum(p * math.exp(-t / a) for p, a in decaying)
        q += sum(ua * (tm - T[0]) for ua, tm in media)
        return [(q - UA * (T[0] - Ta)) / C]

    def hit(t, T):
        return T[0] - limit

    hit.terminal, hit.direction = True, 1
    sol = solve_ivp(rhs, (0.0, horizon), [T0], method="LSODA", rtol=1e-11, atol=1e-9, events=hit)
    assert sol.t_events[0].size, "the limit is not reached in the reference integration"
    return float(sol.t_events[0][0])


def _printed_hours(text: str, limit_name: str) -> float:
    m = re.search(re.escape(limit_name) + r" [0-9.]+ °[CF] \([0-9.]+ K\) " + NUM + " h", text)
    assert m, limit_name
    return _float(m.group(1))


def test_fw_t204_first_limit_time_recomputed_from_the_memo_text():
    _, result, text = _memo("fw-t204-hold-tank")
    t = _flat(text)
    C = _derived(t, "Total heat capacity C", "J/K")
    UA = _derived(t, "Heat-loss coefficient UA used", "W/K")
    P0 = _input_si(t, "heat_sources.0.power", "W")
    P1 = _input_si(t, "heat_sources.1.power", "W")
    a = _input_si(t, "heat_sources.1.time_constant", "s")
    Ta = _input_si(t, "heat_loss.ambient_temperature", "K")
    T0 = _input_si(t, "contents.initial_temperature", "K")
    limit = _input_si(t, "limits.0.temperature", "K")
    horizon = _input_si(t, "horizon", "s")
    # the derived numbers are the products a reviewer would form: C = m cp + m_w cp_w, UA = h A
    m, cp = _input_si(t, "contents.mass", "kg"), _input_si(t, "contents.specific_heat", "J/(kg*K)")
    mw, cw = _input_si(t, "vessel.wall_mass", "kg"), _input_si(t, "vessel.wall_specific_heat", "J/(kg*K)")
    assert C == pytest.approx(m * cp + mw * cw, rel=1e-6)
    assert UA == pytest.approx(_input_si(t, "heat_loss.coefficient", "W/(m^2*K)")
                               * _derived(t, "Heat-loss area", "m^2"), rel=1e-6)
    t_ref = _first_crossing(C, P0, [(P1, a)], [], UA, Ta, T0, limit, horizon)
    first = min((x for x in result["limits"] if x["time_s"] is not None), key=lambda x: x["time_s"])
    assert first["name"] == "quality limit"
    assert t_ref == pytest.approx(first["time_s"], rel=1e-3)
    assert _printed_hours(t, "quality limit") == pytest.approx(t_ref / 3600, abs=0.006)


def test_fw_v110_first_limit_time_recomputed_from_the_memo_text():
    _, result, text = _memo("fw-v110-solvent-receiver")
    t = _flat(text)
    C = _derived(t, "Total heat capacity C", "J/K")
    UA = _derived(t, "Heat-loss coefficient UA used", "W/K")
    ua_m = _input_si(t, "heat_sources.0.ua", "W/K")
    Tm = _input_si(t, "heat_sources.0.medium_temperature", "K")
    Ta = _input_si(t, "heat_loss.ambient_temperature", "K")
    T0 = _input_si(t, "contents.initial_temperature", "K")
    limit = _input_si(t, "limits.0.temperature", "K")
    horizon = _input_si(t, "horizon", "s")
    # C from the derived mass (fill x volume x density) and the specific heat as written
    m = _derived(t, "Contents mass", "kg")
    fill = float(re.search(r"contents\.fill 65 % " + NUM, t).group(1))
    assert m == pytest.approx(fill * _derived(t, "Vessel volume", "m^3")
                              * _input_si(t, "contents.density", "kg/m^3"), rel=1e-5)
    assert C == pytest.approx(m * _input_si(t, "contents.specific_heat", "J/(kg*K)"), rel=1e-5)  # inputs: 6 digits
    t_ref = _first_crossing(C, 0.0, [], [(ua_m, Tm)], UA, Ta, T0, limit, horizon)
    first = min((x for x in result["limits"] if x["time_s"] is not None), key=lambda x: x["time_s"])
    assert first["name"] == "flash point plus 10 degF"
    assert t_ref == pytest.approx(first["time_s"], rel=1e-3)
    assert _printed_hours(t, "flash point plus 10 degF") == pytest.approx(t_ref / 3600, abs=0.006)


def _printed_kelvin(text: str, label: str) -> float:
    m = re.search(re.escape(label) + r" [0-9.−-]+ °C \(" + NUM + r" K\)", text)
    assert m, label
    return _float(m.group(1))


def test_fw_r301_mtsr_t_d24_and_tmr_at_mtsr_recomputed_from_the_memo_text():
    from scipy.optimize import brentq

    _, result, text = _memo("fw-r301-reactor")
    t = _flat(text)
    cp = _derived(t, "Specific heat used for MTSR and TMRad", "J/(kg*K)")
    Tp = _input_si(t, "contents.initial_temperature", "K")
    dh_s = _input_si(t, "heat_sources.0.specific_heat_of_reaction", "J/kg")
    x_ac = float(re.search(r"heat_sources\.0\.accumulated_fraction 35 % " + NUM, t).group(1))
    q0 = _input_si(t, "heat_sources.1.specific_power", "W/kg")
    Tref = _input_si(t, "heat_sources.1.reference_temperature", "K")
    E = _input_si(t, "heat_sources.1.activation_energy", "J/mol")
    assert "heat_sources.1.order 0" in t  # zero order: q does not fall with conversion

    mtsr = Tp + x_ac * dh_s / cp  # Stoessel (2008), from memory

    def tmr(T):  # Townsend and Tou (1980)
        q = q0 * math.exp(-E / R * (1.0 / T - 1.0 / Tref))
        return cp * R * T * T / (q * E)

    t_d24 = brentq(lambda T: tmr(T) - 24 * 3600.0, 300.0, 700.0, xtol=1e-12)
    tmr_mtsr = tmr(mtsr)
    assert mtsr == pytest.approx(result["mtsr_K"], rel=1e-6)
    assert t_d24 == pytest.approx(result["t_d24_K"], rel=1e-6)
    assert tmr_mtsr == pytest.approx(result["tmr_at_mtsr_s"], rel=1e-3)
    # and against what the memo prints (to its printed precision)
    assert _printed_kelvin(t, "MTSR (maximum temperature of synthesis reaction)") == pytest.approx(mtsr, abs=0.006)
    assert _printed_kelvin(t, "T_D24 (TMRad = 24 h)") == pytest.approx(t_d24, abs=0.006)
    m = re.search(r"TMRad at MTSR " + NUM + " h", t)
    assert m and _float(m.group(1)) == pytest.approx(tmr_mtsr / 3600, rel=5e-3)
