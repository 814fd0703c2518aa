"""The service under careless or hostile clients (issue 22): never 500 for a valid case, time limits on
reading a request, an empty token refused, wrong tokens rate limited, the Host header and form origins
checked. Every test talks to a real server on 127.0.0.1 only; the slow-client tests open a bounded
number of connections for a bounded time and close them themselves.
"""
from __future__ import annotations

import math
import socket
import time

import pytest
import yaml

from service_helpers import DEMO, Server

httpx = pytest.importorskip("httpx")
pytest.importorskip("fastapi")

TOKEN = "robust-token"
YAML = {"Content-Type": "application/yaml"}
HEAD_TIMEOUT = 2.0
BODY_TIMEOUT = 2.0


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    s = Server(tmp_path_factory.mktemp("robust"), token=TOKEN, name="robust",
               env={"HEATSCREEN_HEADER_TIMEOUT": str(HEAD_TIMEOUT), "HEATSCREEN_BODY_TIMEOUT": str(BODY_TIMEOUT),
                    "HEATSCREEN_AUTH_FAILURES_BURST": "4", "HEATSCREEN_AUTH_FAILURES_PER_S": "0.5"})
    s.start()
    yield s
    s.stop()


@pytest.fixture(scope="module")
def client(server):
    with server.client() as c:
        yield c


def _port(server) -> int:
    return int(server.url.rsplit(":", 1)[1])


# ------------------------------------------------------------------ never 500 for a valid case


def test_unstirred_adiabatic_case_is_answered(client):
    """Unstirred contents with no heat loss: the Frank-Kamenetskii surface Biot number is infinite (no surface
    coefficient). It was in the result as inf, and the service answered 500 without the run id."""
    case = yaml.safe_load((DEMO / "fw-s17-powder-drums.yaml").read_text(encoding="utf-8"))
    case["heat_loss"] = {"ambient_temperature": "38 degC", "ua": "0 W/K"}
    r = client.post("/v1/check", content=yaml.safe_dump(case), headers=YAML)
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["run_id"]
    assert body["frank_kamenetskii"]["surface_biot_number"] is None
    assert not any("not finite numbers" in w for w in body["warnings"]), "the source is fixed, not only masked"


@pytest.mark.slow
def test_arrhenius_case_with_20000_samples(client):
    """The README's uncertainty example has 20,000 samples; with an Arrhenius source above 10,000 samples the
    integrator asked for worker processes inside the service's (daemonic) worker and the service answered 500."""
    case = yaml.safe_load((DEMO / "fw-r301-reactor.yaml").read_text(encoding="utf-8"))
    case["uncertainty"] = {"samples": 20000, "seed": 11, "inputs": {
        "heat_loss.ambient_temperature": {"distribution": "normal", "sd": "2 K"},
        "heat_sources.1.activation_energy": {"distribution": "lognormal", "gsd": 1.05}}}
    r = client.post("/v1/check", content=yaml.safe_dump(case), headers=YAML, timeout=120)
    assert r.status_code == 200, r.text
    assert r.json()["uncertainty"]["accepted"] == 20000


def test_all_samples_impossible_is_a_case_error(client):
    case = yaml.safe_load((DEMO / "fw-t204-hold-tank.yaml").read_text(encoding="utf-8"))
    case["uncertainty"] = {"samples": 100, "inputs": {
        "contents.mass": {"distribution": "uniform", "low": "-20 t", "high": "-10 t"}}}
    r = client.post("/v1/check", content=yaml.safe_dump(case), headers=YAML)
    assert r.status_code == 422, r.text
    assert r.json()["errors"][0]["field"] == "uncertainty.inputs"


# ------------------------------------------------------------------ reading a request


def _half_request(port: int) -> socket.socket:
    s = socket.create_connection(("127.0.0.1", port), timeout=5)
    s.sendall(b"GET /health HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Slow: ")
    return s


@pytest.mark.slow
def test_half_sent_headers_do_not_hold_the_service(server):
    """520 connections that send half a request and stop (more than the 512 connections the service takes at
    once): while they are open new requests may be refused, but the service closes them after the header
    time limit, and /health answers again while the clients still hold their sockets. Bounded: 520 sockets,
    about 6 s."""
    port = _port(server)
    socks = [_half_request(port) for _ in range(520)]
    try:
        time.sleep(HEAD_TIMEOUT + 2.5)
        r = httpx.get(server.url + "/health", timeout=10)
        assert r.status_code == 200
        closed = 0
        for s in socks:
            s.settimeout(1.0)
            try:
                data = s.recv(4096)
            except OSError:
                continue
            closed += data == b"" or data.startswith(b"HTTP/1.1 408")
        assert closed == len(socks)
    finally:
        for s in socks:
            s.close()


def test_headers_sent_a_byte_at_a_time_are_cut_off(server):
    port = _port(server)
    s = socket.create_connection(("127.0.0.1", port), timeout=10)
    t0 = time.monotonic()
    try:
        with pytest.raises(OSError):
            for ch in b"GET /health HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Drip: " + b"a" * 60:
                s.sendall(bytes([ch]))
                time.sleep(0.25)
        assert time.monotonic() - t0 < HEAD_TIMEOUT + 5
    finally:
        s.close()


def test_body_that_stops_coming_gets_408(server):
    port = _port(server)
    s = socket.create_connection(("127.0.0.1", port), timeout=15)
    try:
        s.sendall(b"POST /v1/check HTTP/1.1\r\nHost: 127.0.0.1\r\nAuthorization: Bearer " + TOKEN.encode()
                  + b"\r\nContent-Type: application/yaml\r\nContent-Length: 1000\r\n\r\nid: half\n")
        t0 = time.monotonic()
        answer = b""
        while True:  # until the server closes the connection (the head and the body may come apart)
            part = s.recv(4096)
            if not part:
                break
            answer += part
        assert answer.startswith(b"HTTP/1.1 408")
        assert b"(body)" in answer
        assert time.monotonic() - t0 < BODY_TIMEOUT + 5
    finally:
        s.close()


def test_kept_alive_connection_still_works(client):
    for _ in range(3):
        assert client.get("/health").status_code == 200
        assert client.get("/v1/rules").status_code == 200


# ------------------------------------------------------------------ tokens, hosts, origins


def test_empty_token_is_an_error(run_cli, tmp_path):
    p = run_cli("serve", "--token", "", "--db", tmp_path / "x.sqlite", timeout=60)
    assert p.returncode == 2 and "token is empty" in p.stderr
    import os
    import subprocess
    import sys

    from service_helpers import REPO

    env = dict(os.environ, HEATSCREEN_TOKEN="", PYTHONPATH=str(REPO))
    p = subprocess.run([sys.executable, "-m", "screening.cli", "serve", "--db", str(tmp_path / "y.sqlite")],
                       env=env, capture_output=True, text=True, timeout=60, cwd=str(tmp_path))
    assert p.returncode == 2 and "token is empty" in p.stderr


def test_wrong_tokens_are_rate_limited(server):
    """Burst of 4, then one every 2 s, per client address (the service's default is 20 and 2/s; the issue
    measured 940 guesses/s). The right token still works while guesses are refused."""
    with server.client(token="wrong") as wrong, server.client() as ok:
        codes = [wrong.get("/v1/rules").status_code for _ in range(8)]
        assert codes[:1] == [401] and codes[-1] == 429, codes
        r = wrong.get("/v1/rules")
        assert r.status_code == 429 and int(r.headers["retry-after"]) >= 1
        assert ok.get("/v1/rules").status_code == 200
        forms = [wrong.post("/ui/login", data={"token": "guess"}, headers={"Authorization": ""}).status_code
                 for _ in range(3)]
        assert 429 in forms, forms


def test_host_header_must_name_the_bound_address(server, client):
    port = _port(server)
    assert client.get("/health").status_code == 200
    assert client.get("/health", headers={"Host": f"localhost:{port}"}).status_code == 200
    r = client.get("/v1/rules", headers={"Host": f"attacker.example:{port}"})
    assert r.status_code == 400 and r.json()["errors"][0]["field"] == "(host)"
    assert client.get("/health", headers={"Host": f"127.0.0.1:{port + 1}"}).status_code == 400


def test_forms_refuse_origin_null_and_other_sites(server, client):
    port = _port(server)
    case = (DEMO / "fw-t204-hold-tank.yaml").read_text(encoding="utf-8")
    for origin in ("null", "http://attacker.example"):
        r = client.post("/ui/check", data={"case_text": case}, headers={"Origin": origin})
        assert r.status_code == 403, (origin, r.status_code)
    r = client.post("/ui/check", data={"case_text": case}, headers={"Origin": f"http://127.0.0.1:{port}"})
    assert r.status_code in (200, 303), r.status_code  # the result page, or a redirect to it
    # the page asks browsers to send its real origin with its forms (no-referrer would make it "null")
    assert client.get("/").headers["referrer-policy"] == "same-origin"


# ------------------------------------------------------------------ the last line of defence


def test_non_finite_values_become_null_with_a_warning(monkeypatch, tmp_path):
    """If a result ever holds inf or NaN again, the answer still goes out: null, and a warning naming the key."""
    import screening.run.pipeline as pipeline
    from screening.service import tasks

    def fake(path, rules_path=None):
        return {"id": "X", "verdict": "pass", "warnings": ["w"], "peak_temperature_K": math.nan,
                "limits": [{"name": "a", "time_s": math.inf}], "_history": {"time_s": [math.nan]}}

    monkeypatch.setattr(pipeline, "screen_file", fake)
    monkeypatch.setattr(tasks, "_scratch", lambda: tmp_path)
    out = tasks.task_check(b"id: X\n", "yaml", None, 0, False, False)
    public = out["public"]
    assert public["peak_temperature_K"] is None and public["limits"][0]["time_s"] is None
    assert "peak_temperature_K" in public["warnings"][-1] and "limits.0.time_s" in public["warnings"][-1]
    import json

    json.dumps(public, allow_nan=False)
