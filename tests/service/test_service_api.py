"""The HTTP service through a real server on loopback (a subprocess on a free port).

Checks each endpoint against the CLI it stands for (same result object, same
field paths and messages, byte-identical memos), the run record, register
jobs, the size, row, decompression and time limits, refusal under a flood,
the token, and a shutdown that finishes or records the work in flight.
"""
from __future__ import annotations

import hashlib
import io
import json
import sqlite3
import threading
import time
import zipfile
from pathlib import Path

import pytest
import yaml

from service_helpers import DEMO, Server, demo_bytes, register_csv, slow_case_bytes, wait_job

httpx = pytest.importorskip("httpx")
pytest.importorskip("fastapi")

SDE = "1767225600"  # 2026-01-01 00:00:00 UTC: fixed memo date
YAML = {"Content-Type": "application/yaml"}
DEMO_CASES = ["fw-t204-hold-tank.yaml", "fw-r301-reactor.yaml", "fw-s17-powder-drums.yaml",
              "fw-t410-fire-water-tank.yaml", "fw-v110-solvent-receiver.yaml", "example_case.yaml",
              "fw-d52-drum-yard.yaml"]
BAD_CASE = """id: BAD-1
vessel: {shape: vertical-cylinder, diameter: 2 m}
contents:
  mass: 5
  density: 1000 kg/m^3
  specific_heat: 4.2 kJ/(kg*K)
  initial_temperature: 20 degC
heat_loss: {ambient_temperature: 20 degC, ua: 10 W/K}
limits:
  - {name: onset, temperature: hot}
"""


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    s = Server(tmp_path_factory.mktemp("api"), env={"SOURCE_DATE_EPOCH": SDE}, name="api")
    s.start()
    yield s
    s.stop()


@pytest.fixture(scope="module")
def client(server):
    with server.client() as c:
        yield c


def _cli_json(run_cli, path: Path) -> dict:
    proc = run_cli("check", str(path), "--json")
    assert proc.returncode in (0, 1), proc.stderr
    return json.loads(proc.stdout)


def _cli_problems(stderr: str) -> list[dict]:
    out = []
    for line in stderr.splitlines():
        if line.startswith("  ") and ": " in line:
            field, message = line.strip().split(": ", 1)
            out.append({"field": field, "message": message})
    return out


# ------------------------------------------------------------------ health, reference endpoints

def test_health(client):
    r = client.get("/health")
    assert r.status_code == 200
    assert r.json()["status"] == "ok"


def test_openapi_describes_the_api(client):
    doc = client.get("/openapi.json").json()
    for path in ("/v1/check", "/v1/memo", "/v1/batch", "/v1/batch/{job_id}", "/v1/runs", "/v1/runs/{run_id}",
                 "/v1/runs/{run_id}/memo", "/v1/schema/case", "/v1/rules", "/health"):
        assert path in doc["paths"], path
    assert "CaseFile" in doc["components"]["schemas"]
    body = doc["paths"]["/v1/check"]["post"]["requestBody"]["content"]
    assert {"application/yaml", "application/json"} <= set(body)
    assert "Screening estimate only" in doc["info"]["description"]


def test_case_schema_is_the_projects(client):
    from screening.case.schema import case_json_schema

    assert client.get("/v1/schema/case").json() == json.loads(json.dumps(case_json_schema()))


def test_rule_sets_are_the_shipped_files(client):
    from screening.verdict.rule_file import default_rule_set_path

    listed = {r["name"]: r for r in client.get("/v1/rules").json()["rule_sets"]}
    folder = default_rule_set_path().parent
    assert set(listed) == {p.stem for p in folder.glob("*.toml")}
    for name, item in listed.items():
        data = (folder / f"{name}.toml").read_bytes()
        assert item["sha256"] == hashlib.sha256(data).hexdigest()
        r = client.get(item["url"])
        assert r.status_code == 200 and r.content == data
    assert client.get("/v1/rules/..%2Fpyproject").status_code == 404
    assert client.get("/v1/rules/nope").status_code == 404


# ------------------------------------------------------------------ one case

@pytest.mark.parametrize("name", DEMO_CASES)
def test_check_yaml_is_the_cli_result(client, run_cli, name):
    raw = demo_bytes(name)
    r = client.post("/v1/check", content=raw, headers=YAML)
    assert r.status_code == 200, r.text
    body = r.json()
    run_id = body.pop("run_id")
    assert r.headers["x-run-id"] == run_id
    assert body == _cli_json(run_cli, DEMO / name)
    assert body["input_hash"] == hashlib.sha256(raw).hexdigest()
    assert body["verdict"] in ("pass", "review", "fail")


def test_check_json_body(client, run_cli, tmp_path):
    data = yaml.safe_load(demo_bytes("fw-v110-solvent-receiver.yaml"))
    raw = json.dumps(data, indent=1).encode()
    path = tmp_path / "case.json"
    path.write_bytes(raw)
    r = client.post("/v1/check", content=raw, headers={"Content-Type": "application/json"})
    assert r.status_code == 200, r.text
    body = r.json()
    body.pop("run_id")
    assert body == _cli_json(run_cli, path)


def test_check_with_another_rule_set(client):
    r = client.post("/v1/check", params={"rules": "example-strict-site"}, content=demo_bytes("fw-t204-hold-tank.yaml"),
                    headers=YAML)
    assert r.status_code == 200
    assert r.json()["rule_set"]["name"] == "example strict site"
    r = client.post("/v1/check", params={"rules": "../../etc/passwd"}, content=b"id: x", headers=YAML)
    assert r.status_code == 422
    assert r.json()["errors"][0]["field"] == "query.rules"


def test_invalid_case_gives_the_cli_field_paths(client, run_cli, tmp_path):
    path = tmp_path / "bad.yaml"
    path.write_text(BAD_CASE)
    proc = run_cli("check", str(path))
    assert proc.returncode == 2
    expected = _cli_problems(proc.stderr)
    assert any(p["field"] == "contents.mass" for p in expected)
    r = client.post("/v1/check", content=BAD_CASE.encode(), headers=YAML)
    assert r.status_code == 422
    assert r.json() == {"errors": expected}
    r = client.post("/v1/memo", content=BAD_CASE.encode(), headers=YAML)
    assert r.status_code == 422 and r.json() == {"errors": expected}


@pytest.mark.parametrize("text, field", [
    ("id: [unclosed\n", "(file)"),
    ("", "(file)"),
    ("- just\n- a list\n", "(case)"),
    ("id: a\nid: b\n", "(file)"),
])
def test_unreadable_cases_are_422(client, text, field):
    r = client.post("/v1/check", content=text.encode(), headers=YAML)
    assert r.status_code == 422
    assert r.json()["errors"][0]["field"] == field


def test_yaml_alias_expansion_and_node_count_are_bounded(client):
    lines = ["_0: &a0 [x, x, x, x, x, x, x, x, x, x]"]
    for i in range(1, 9):  # 10**9 leaves if expanded
        lines.append(f"_{i}: &a{i} [{', '.join([f'*a{i - 1}'] * 10)}]")
    bomb = ("\n".join(lines) + "\nid: *a8\n").encode()
    assert len(bomb) < 2000
    t0 = time.monotonic()
    r = client.post("/v1/check", content=bomb, headers=YAML)
    assert r.status_code == 422  # refused by the case loader, as the CLI refuses it
    errors = r.json()["errors"]
    assert any(e["field"] == "id" or "alias" in e["message"] for e in errors), errors
    many = ("id: [" + "1," * 120_000 + "1]\n").encode()  # more nodes than the loader accepts
    r = client.post("/v1/check", content=many, headers=YAML)
    assert r.status_code == 422
    assert r.json()["errors"][0]["field"] in ("(file)", "id")
    assert time.monotonic() - t0 < 20


def test_unsupported_content_type_is_415(client):
    r = client.post("/v1/check", content=b"<case/>", headers={"Content-Type": "application/xml"})
    assert r.status_code == 415
    assert r.json()["errors"][0]["field"] == "(content-type)"


def test_oversize_body_is_413(client):
    limit = 1_000_000
    r = client.post("/v1/check", content=b"#" * (limit + 1), headers=YAML)
    assert r.status_code == 413
    assert r.json()["errors"][0]["field"] == "(body)"
    r = client.post("/v1/check", content=b"#" * limit, headers=YAML)  # at the limit: read, and empty
    assert r.status_code == 422

    def chunks():  # no Content-Length: counted as it arrives
        for _ in range(20):
            yield b"#" * 100_000

    r = client.post("/v1/check", content=chunks(), headers=YAML)
    assert r.status_code == 413
    r = client.post("/v1/memo", content=b"#" * (limit + 1), headers=YAML)
    assert r.status_code == 413
    assert client.get("/health").status_code == 200


# ------------------------------------------------------------------ memos and the record

def test_memo_is_the_cli_memo_and_regenerates_byte_identically(client, run_cli, tmp_path, monkeypatch):
    raw = demo_bytes("fw-t204-hold-tank.yaml")
    r = client.post("/v1/memo", content=raw, headers=YAML)
    assert r.status_code == 200, r.text
    assert r.headers["content-type"] == "application/pdf"
    pdf = r.content
    assert pdf.startswith(b"%PDF")
    run_id = r.headers["x-run-id"]
    # the same bytes as `heatscreen memo` with the same memo date
    monkeypatch.setenv("SOURCE_DATE_EPOCH", SDE)
    out = tmp_path / "memo.pdf"
    proc = run_cli("memo", str(DEMO / "fw-t204-hold-tank.yaml"), "-o", str(out))
    assert proc.returncode in (0, 1), proc.stderr
    assert out.read_bytes() == pdf
    # stored, and made again from the record
    stored = client.get(f"/v1/runs/{run_id}/memo")
    assert stored.content == pdf
    again = client.get(f"/v1/runs/{run_id}/memo", params={"regenerate": "true"})
    assert again.status_code == 200
    assert again.headers["x-memo-regenerated"] == "true"
    assert again.headers["x-memo-identical"] == "true"
    assert again.content == pdf


def test_check_run_gets_its_memo_from_the_record(client):
    raw = demo_bytes("fw-s17-powder-drums.yaml")
    run_id = client.post("/v1/check", content=raw, headers=YAML).json()["run_id"]
    assert client.get(f"/v1/runs/{run_id}").json()["memo"] == {"sha256": None, "stored": False}
    first = client.get(f"/v1/runs/{run_id}/memo")
    assert first.status_code == 200 and first.content.startswith(b"%PDF")
    doc = client.get(f"/v1/runs/{run_id}").json()
    assert doc["memo"] == {"sha256": hashlib.sha256(first.content).hexdigest(), "stored": True}
    assert client.get(f"/v1/runs/{run_id}/memo", params={"regenerate": True}).content == first.content
    direct = client.post("/v1/memo", content=raw, headers=YAML)
    assert direct.content == first.content  # same input, same memo date: same bytes


def test_run_record_holds_everything_the_memo_needs(client):
    from screening import __version__
    from screening.report.templates import template_hashes
    from screening.verdict.rule_file import default_rule_set_path

    raw = b"\xef\xbb\xbf# odd spacing kept as sent\r\n" + demo_bytes("fw-v110-solvent-receiver.yaml").replace(b"\n", b"\r\n")
    r = client.post("/v1/check", content=raw, headers=YAML)
    assert r.status_code == 200, r.text
    result = r.json()
    run_id = result.pop("run_id")
    doc = client.get(f"/v1/runs/{run_id}").json()
    assert doc["status"] == "ok" and doc["kind"] == "check"
    assert doc["input"]["sha256"] == hashlib.sha256(raw).hexdigest() == doc["input_hash"]
    assert doc["input"]["bytes"] == len(raw)
    assert client.get(f"/v1/runs/{run_id}/input").content == raw
    assert doc["tool_version"] == __version__
    default_rules = default_rule_set_path().read_bytes()
    assert doc["rule_set"] == {"file": "default", "name": result["rule_set"]["name"],
                               "hash": hashlib.sha256(default_rules).hexdigest()}
    hashes = template_hashes(None)
    assert doc["templates"] == {k: v for k, v in hashes.items() if k.startswith("templates/")}
    assert doc["fonts"] == {k.split("/", 1)[1]: v for k, v in hashes.items() if k.startswith("fonts/")}
    assert doc["source_date_epoch"] == int(SDE) and doc["memo_date"] == "2026-01-01"
    assert doc["result"] == result and doc["verdict"] == result["verdict"]
    listed = client.get("/v1/runs", params={"limit": 500}).json()
    assert run_id in {x["run_id"] for x in listed["runs"]}


def test_unknown_runs_are_404(client):
    assert client.get("/v1/runs/" + "0" * 32).status_code == 404
    assert client.get("/v1/runs/not-an-id").status_code == 404
    assert client.get("/v1/runs/" + "0" * 32 + "/memo").status_code == 404
    assert client.get("/v1/batch/" + "0" * 32).status_code == 404


def test_record_is_sqlite_in_wal_mode(server):
    con = sqlite3.connect(server.db)
    try:
        assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    finally:
        con.close()


# ------------------------------------------------------------------ registers

def _register(rows=3, extra=()):
    base_rows = [{"id": f"REG-{i}", "contents.mass": f"{8000 + 500 * i} kg",
                  "contents.initial_temperature": f"{28 + i} degC"} for i in range(rows)]
    return register_csv(base_rows + list(extra))


def test_register_job_lifecycle(client):
    reg = _register(3, [{"id": "REG-BAD", "contents.mass": "heavy"},
                        {"id": "REG-FILE", "case_file": "/etc/passwd"},
                        {"id": "=REG-EQ", "contents.mass": "-5 kg"}])
    r = client.post("/v1/batch", files={"register": ("plant.csv", reg, "text/csv"),
                                        "base": ("base.yaml", demo_bytes("fw-t204-hold-tank.yaml"), "application/yaml")},
                    data={"memos": "true"})
    assert r.status_code == 202, r.text
    job = r.json()["job"]
    assert r.headers["location"] == f"/v1/batch/{job}"
    doc = wait_job(client, job)
    assert doc["state"] == "done", doc
    summary = {k: v for k, v in doc["summary"].items() if k in ("rows", "valid", "invalid", "verdict_counts")}
    assert summary == {"rows": 6, "valid": 3, "invalid": 3, "verdict_counts": doc["summary"]["verdict_counts"]}
    assert "out_dir" not in doc["summary"]
    links = doc["links"]
    results = client.get(links["results_json"]).json()
    assert [x["id"] for x in results] == ["REG-0", "REG-1", "REG-2"]
    assert all(x["verdict"] in ("pass", "review", "fail") and "warnings" in x for x in results)
    assert client.get(links["results_csv"]).text.startswith("id,row,verdict")
    errors = client.get(links["errors_json"]).json()["errors"]
    assert {e["id"] for e in errors} == {"REG-BAD", "REG-FILE", "=REG-EQ"}  # JSON: ids as written
    assert any(e["field"] == "case_file" for e in errors)
    errors_csv = client.get(links["errors_csv"]).text
    assert "REG-BAD" in errors_csv
    assert "'=REG-EQ" in errors_csv  # CSV for spreadsheets: formula guard (OWASP "CSV Injection")
    assert client.get(links["summary_pdf"]).content.startswith(b"%PDF")
    z = zipfile.ZipFile(io.BytesIO(client.get(links["memos_zip"]).content))
    assert sorted(z.namelist()) == ["REG-0-row2.pdf", "REG-1-row3.pdf", "REG-2-row4.pdf"]
    assert all(z.read(n).startswith(b"%PDF") for n in z.namelist())
    rows = client.get("/v1/runs", params={"job": job}).json()
    assert rows["total"] == 3
    assert {x["case_id"] for x in rows["runs"]} == {"REG-0", "REG-1", "REG-2"}
    assert all(x["kind"] == "register-row" for x in rows["runs"])


def test_register_xlsx_job(client):
    openpyxl = pytest.importorskip("openpyxl")
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["id", "contents.mass"])
    ws.append(["XL-1", "9000 kg"])
    ws.append(["XL-2", "7000 kg"])
    buf = io.BytesIO()
    wb.save(buf)
    r = client.post("/v1/batch", files={"register": ("plant.xlsx", buf.getvalue(), "application/octet-stream"),
                                        "base": ("base.yaml", demo_bytes("fw-t204-hold-tank.yaml"))})
    assert r.status_code == 202, r.text
    doc = wait_job(client, r.json()["job"])
    assert doc["state"] == "done" and doc["register"]["format"] == "xlsx"
    assert "memos_zip" not in doc["links"]
    assert len(client.get(doc["links"]["results_json"]).json()) == 2


def _zip_bomb() -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("[Content_Types].xml", "<Types/>")
        z.writestr("xl/worksheets/sheet1.xml", b"\0" * 60_000_000)
    return buf.getvalue()


def test_spreadsheet_decompression_bomb_is_refused(client):
    bomb = _zip_bomb()
    assert len(bomb) < 200_000
    r = client.post("/v1/batch", files={"register": ("plant.xlsx", bomb)})
    assert r.status_code == 413
    assert r.json()["errors"][0]["field"] == "register"
    assert "expands" in r.json()["errors"][0]["message"]


def test_register_limits_and_bad_uploads(client):
    too_many = register_csv([{"id": f"R{i}", "contents.mass": "1 kg"} for i in range(2001)])
    r = client.post("/v1/batch", files={"register": ("big.csv", too_many)})
    assert r.status_code == 413 and "rows" in r.json()["errors"][0]["message"]
    r = client.post("/v1/batch", files={"register": ("fake.xlsx", b"id,mass\n")})
    assert r.status_code == 422
    r = client.post("/v1/batch", data={"memos": "true"})
    assert r.status_code == 422 and r.json()["errors"][0]["field"] == "register"
    r = client.post("/v1/batch", files={"register": ("x.csv", b"")})
    assert r.status_code == 422
    r = client.post("/v1/batch", files={"register": ("x.csv", b"id\n")}, data={"rules": "nope"})
    assert r.status_code == 422
    r = client.post("/v1/batch", files={"register": ("x.csv", b"#" * 10_100_000)})
    assert r.status_code == 413


def test_register_refused_as_a_whole_is_recorded_invalid(client):
    # an xlsx that passes the zip checks but cannot be opened as a workbook
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr("[Content_Types].xml", "<Types/>")
    r = client.post("/v1/batch", files={"register": ("plant.xlsx", buf.getvalue())})
    assert r.status_code == 202
    doc = wait_job(client, r.json()["job"])
    assert doc["state"] in ("invalid", "failed")
    assert doc["errors"] or doc["error"]


def test_real_register_batch_has_the_expected_signature():
    import inspect

    try:
        from screening.register.batch import run_batch
    except ImportError:
        pytest.skip("screening.register.batch is not in this tree yet")
    params = inspect.signature(run_batch).parameters
    for name in ("register_path", "out_dir", "base_path", "rules_path", "memos", "allow_case_file_column",
                 "progress"):
        assert name in params, name


# ------------------------------------------------------------------ token

@pytest.fixture(scope="module")
def token_server(tmp_path_factory):
    s = Server(tmp_path_factory.mktemp("token"), token="s3cret-token", env={"HEATSCREEN_WORKERS": "1"}, name="token")
    s.start()
    yield s
    s.stop()


def test_token_is_wanted_everywhere_but_health(token_server):
    with token_server.client(token=False) as anon, token_server.client(token="wrong") as wrong, \
            token_server.client() as ok:
        assert anon.get("/health").status_code == 200
        for method, path in [("GET", "/openapi.json"), ("GET", "/v1/runs"), ("GET", "/v1/rules"),
                             ("GET", "/v1/schema/case"), ("GET", "/v1/status"), ("GET", "/v1/runs/" + "0" * 32),
                             ("GET", "/v1/batch/" + "0" * 32), ("GET", "/"), ("GET", "/ui/runs")]:
            for c in (anon, wrong):
                r = c.request(method, path)
                assert r.status_code == 401, (path, r.status_code)
        r = anon.post("/v1/check", content=demo_bytes("fw-t204-hold-tank.yaml"), headers=YAML)
        assert r.status_code == 401 and r.headers["www-authenticate"].startswith("Bearer")
        assert r.json()["errors"][0]["field"] == "(authorization)"
        assert wrong.post("/v1/memo", content=b"id: x", headers=YAML).status_code == 401
        assert anon.post("/v1/batch", files={"register": ("x.csv", b"id\n")}).status_code == 401
        assert anon.post("/v1/check", content=b"#" * 1_500_000, headers=YAML).status_code == 401
        r = ok.post("/v1/check", content=demo_bytes("fw-t204-hold-tank.yaml"), headers=YAML)
        assert r.status_code == 200
        assert ok.get(f"/v1/runs/{r.json()['run_id']}").status_code == 200
        doc = ok.get("/openapi.json").json()
        assert doc["security"] == [{"bearer": []}] and doc["paths"]["/health"]["get"]["security"] == []


def test_web_page_token_form(token_server):
    with token_server.client(token=False) as anon:
        page = anon.get("/")
        assert page.status_code == 401 and "token" in page.text.lower()
        assert anon.post("/ui/login", data={"token": "wrong"}).status_code == 401
        r = anon.post("/ui/login", data={"token": "s3cret-token"})
        assert r.status_code == 303 and "heatscreen_ui" in r.headers["set-cookie"]
        assert "httponly" in r.headers["set-cookie"].lower()
        assert anon.get("/").status_code == 200  # the cookie now opens the web page ...
        assert anon.get("/v1/runs").status_code == 401  # ... but not the API


# ------------------------------------------------------------------ time limit and flood

@pytest.fixture(scope="module")
def tight_server(tmp_path_factory):
    env = {"HEATSCREEN_WORKERS": "1", "HEATSCREEN_CHECK_TIMEOUT": "0.25", "HEATSCREEN_MAX_QUEUE": "2"}
    s = Server(tmp_path_factory.mktemp("tight"), env=env, name="tight")
    s.start()
    yield s
    s.stop()


@pytest.mark.slow
def test_runaway_computation_is_stopped_and_the_worker_replaced(tight_server):
    with tight_server.client() as c:
        slow = slow_case_bytes()  # stiff integrations and Monte Carlo: well over 0.25 s
        r = c.post("/v1/check", content=slow, headers=YAML)
        assert r.status_code == 504, r.text
        run_id = r.headers["x-run-id"]
        assert c.get(f"/v1/runs/{run_id}").json()["status"] == "timeout"
        r = c.post("/v1/check", content=demo_bytes("fw-t204-hold-tank.yaml"), headers=YAML)
        assert r.status_code == 200
        stats = c.get("/v1/status").json()["pools"]["cases"]
        assert stats["timeouts"] >= 1 and stats["replaced"] >= 1


def test_flood_is_refused_with_503_and_the_server_stays_up(tight_server):
    slow = slow_case_bytes()
    codes: list[int] = []
    lock = threading.Lock()

    def one():
        with tight_server.client(timeout=120) as c:
            r = c.post("/v1/check", content=slow, headers=YAML)
            with lock:
                codes.append(r.status_code)
                if r.status_code == 503:
                    assert r.headers.get("retry-after")

    threads = [threading.Thread(target=one) for _ in range(20)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(180)
    assert len(codes) == 20
    assert set(codes) <= {503, 504}, codes
    assert codes.count(503) >= 10
    with tight_server.client() as c:
        assert c.get("/health").status_code == 200
        assert c.post("/v1/check", content=demo_bytes("fw-t204-hold-tank.yaml"), headers=YAML).status_code == 200


# ------------------------------------------------------------------ shutdown

def _job_state(db: Path, job_id: str) -> str:
    con = sqlite3.connect(db)
    try:
        return con.execute("select state from jobs where id = ?", (job_id,)).fetchone()[0]
    finally:
        con.close()


@pytest.mark.slow
def test_shutdown_finishes_requests_and_records_jobs_in_flight(tmp_path):
    env = {"HEATSCREEN_SHUTDOWN_GRACE": "2", "HEATSCREEN_WORKERS": "1"}
    s = Server(tmp_path, env=env, name="shutdown", stub_batch=True).start()
    try:
        with s.client() as c:
            slow = register_csv([{"id": "S-1", "stub_sleep": "30"}])
            running = c.post("/v1/batch", files={"register": ("slow.csv", slow),
                                                 "base": ("b.yaml", demo_bytes("fw-t204-hold-tank.yaml"))}).json()["job"]
            queued = c.post("/v1/batch", files={"register": ("q.csv", _register(2)),
                                                "base": ("b.yaml", demo_bytes("fw-t204-hold-tank.yaml"))}).json()["job"]
            deadline = time.monotonic() + 30
            while c.get(f"/v1/batch/{running}").json()["state"] != "running":
                assert time.monotonic() < deadline
                time.sleep(0.1)
            answer = {}

            def in_flight():  # a request under way when the signal comes is answered
                with s.client(timeout=60) as c2:
                    answer["r"] = c2.post("/v1/check", content=demo_bytes("fw-r301-reactor.yaml"), headers=YAML)

            t = threading.Thread(target=in_flight)
            t.start()
            time.sleep(0.3)
            t0 = time.monotonic()
            code = s.stop()
            t.join(60)
            assert time.monotonic() - t0 < 40
        assert code in (0, -15), s.log()  # uvicorn ends by re-raising the signal it handled
        assert answer["r"].status_code == 200
        run_id = answer["r"].json()["run_id"]
        con = sqlite3.connect(s.db)
        assert con.execute("select status from runs where id = ?", (run_id,)).fetchone()[0] == "ok"
        con.close()
        assert _job_state(s.db, running) == "interrupted"
        assert _job_state(s.db, queued) == "queued"
    finally:
        s.stop()
    # started again on the same record, the queued job runs
    s2 = Server(tmp_path, env=env, db=s.db, name="restart", stub_batch=True).start()
    try:
        with s2.client() as c:
            assert wait_job(c, queued)["state"] == "done"
            doc = c.get(f"/v1/batch/{running}").json()
            assert doc["state"] == "interrupted" and doc["error"]
    finally:
        s2.stop()
