"""Bounded load on loopback (SLOW: about half a minute; it runs in CI like every other test).

200 single-case requests at once, with several register jobs sent in the
middle of them, against a real server with its default limits (2 case
workers).  Every answer must be a result, and the record must hold exactly
one run per answer, with the input's hash, and one run per screened register
row: none lost, none twice.  Latency percentiles and throughput are printed.
"""
from __future__ import annotations

import asyncio
import hashlib
import os
import sqlite3
import subprocess
import time

import pytest

from service_helpers import Server, demo_bytes, percentiles, register_csv

pytestmark = pytest.mark.slow  # fuzzing and load: minutes; CI runs them, `pytest -m "not slow"` skips them

httpx = pytest.importorskip("httpx")

CONCURRENT = 200
JOBS = 4
ROWS_PER_JOB = 10
CASES = ["fw-t204-hold-tank.yaml", "fw-t410-fire-water-tank.yaml", "fw-v110-solvent-receiver.yaml",
         "example_case.yaml", "fw-s17-powder-drums.yaml"]


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    s = Server(tmp_path_factory.mktemp("load"), env={"SOURCE_DATE_EPOCH": "1767225600"}, name="load")
    s.start()
    yield s
    s.stop()


def _cpu_seconds(pid: int) -> float:
    """User + system CPU of a process and its children (Linux /proc; 0 elsewhere)."""
    try:
        kids = subprocess.run(["ps", "-o", "pid=", "--ppid", str(pid)], capture_output=True, text=True).stdout.split()
        total = 0.0
        for p in [pid, *map(int, kids)]:
            with open(f"/proc/{p}/stat") as fh:
                fields = fh.read().rsplit(")", 1)[1].split()
            total += (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
        return total
    except (OSError, ValueError):
        return 0.0


def _bodies() -> list[bytes]:
    raw = [demo_bytes(n) for n in CASES]
    return [f"# load request {i}\n".encode() + raw[i % len(raw)] for i in range(CONCURRENT)]


async def _burst(url: str, bodies: list[bytes], registers: list[bytes], base: bytes):
    limits = httpx.Limits(max_connections=CONCURRENT + JOBS, max_keepalive_connections=CONCURRENT + JOBS)
    async with httpx.AsyncClient(base_url=url, limits=limits, timeout=httpx.Timeout(180.0)) as client:
        async def one(i: int, body: bytes):
            t0 = time.perf_counter()
            r = await client.post("/v1/check", content=body, headers={"Content-Type": "application/yaml"})
            return i, r.status_code, (r.json() if r.status_code == 200 else r.text), time.perf_counter() - t0

        async def job(reg: bytes):
            await asyncio.sleep(0.05)
            r = await client.post("/v1/batch", files={"register": ("r.csv", reg), "base": ("b.yaml", base)})
            assert r.status_code == 202, r.text
            return r.json()["job"]

        t0 = time.perf_counter()
        checks = [one(i, b) for i, b in enumerate(bodies)]
        jobs = [job(reg) for reg in registers]
        results = await asyncio.gather(*checks, *jobs)
        wall = time.perf_counter() - t0
        answers, job_ids = results[:len(bodies)], results[len(bodies):]
    # Poll with a client of its own: the burst's pooled connections may sit idle past the server's
    # keep-alive timeout (5 s) on a slow machine, and a request sent on one just as the server closes
    # it fails without an answer (ordinary HTTP keep-alive behaviour, not a lost request).
    async with httpx.AsyncClient(base_url=url, timeout=httpx.Timeout(180.0)) as client:
        states = {}
        deadline = time.monotonic() + 180
        while len(states) < len(job_ids):
            assert time.monotonic() < deadline, states
            for j in job_ids:
                doc = (await client.get(f"/v1/batch/{j}")).json()
                if doc["finished"]:
                    states[j] = doc
            await asyncio.sleep(0.2)
        jobs_wall = time.perf_counter() - t0
        return answers, states, wall, jobs_wall


def test_concurrent_checks_and_jobs_are_all_recorded_once(server, capsys):
    bodies = _bodies()
    registers = [register_csv([{"id": f"J{j}-R{r}", "contents.mass": f"{7000 + 100 * r} kg"}
                               for r in range(ROWS_PER_JOB)]) for j in range(JOBS)]
    cpu0 = _cpu_seconds(server.proc.pid)
    answers, jobs, wall, jobs_wall = asyncio.run(_burst(server.url, bodies, registers,
                                                        demo_bytes("fw-t204-hold-tank.yaml")))
    cpu = _cpu_seconds(server.proc.pid) - cpu0
    codes = [a[1] for a in answers]
    assert codes.count(200) == CONCURRENT, [a for a in answers if a[1] != 200][:3]
    run_ids = [a[2]["run_id"] for a in answers]
    assert len(set(run_ids)) == CONCURRENT
    for i, code, body, _ in answers:
        assert body["input_hash"] == hashlib.sha256(bodies[i]).hexdigest()
    assert all(doc["state"] == "done" for doc in jobs.values()), jobs

    con = sqlite3.connect(server.db)
    try:
        rows = con.execute("select id, input_hash, status from runs where kind = 'check'").fetchall()
        row_runs = con.execute("select job_id, case_id from runs where kind = 'register-row'").fetchall()
    finally:
        con.close()
    recorded = {r[0]: r[1] for r in rows}
    assert len(rows) == len(recorded) == CONCURRENT  # no run twice, none missing
    assert set(recorded) == set(run_ids)
    for i, _, body, _ in answers:
        assert recorded[body["run_id"]] == hashlib.sha256(bodies[i]).hexdigest()
    assert all(r[2] == "ok" for r in rows)
    assert len(row_runs) == len(set(row_runs)) == JOBS * ROWS_PER_JOB
    assert {j for j, _ in row_runs} == set(jobs)

    lat = percentiles([a[3] * 1000 for a in answers])
    with capsys.disabled():
        print(f"\n[load] {CONCURRENT} concurrent /v1/check on 2 workers: wall {wall:.2f} s, "
              f"{CONCURRENT / wall:.1f} req/s; latency ms p50 {lat[50]:.0f} p90 {lat[90]:.0f} p95 {lat[95]:.0f} "
              f"p99 {lat[99]:.0f} max {max(a[3] for a in answers) * 1000:.0f}; "
              f"{JOBS} register jobs x {ROWS_PER_JOB} rows done after {jobs_wall:.2f} s; server and workers used "
              f"{cpu:.1f} CPU s ({os.getloadavg()[0]:.1f} load average: wall times depend on what else runs)")


def test_single_request_latency(server, capsys):
    body = demo_bytes("fw-t204-hold-tank.yaml")
    times = []
    with server.client() as c:
        for i in range(40):
            t0 = time.perf_counter()
            r = c.post("/v1/check", content=body + f"# {i}\n".encode(), headers={"Content-Type": "application/yaml"})
            times.append((time.perf_counter() - t0) * 1000)
            assert r.status_code == 200
        memo_times = []
        for i in range(10):
            t0 = time.perf_counter()
            r = c.post("/v1/memo", content=body + f"# m{i}\n".encode(), headers={"Content-Type": "application/yaml"})
            memo_times.append((time.perf_counter() - t0) * 1000)
            assert r.status_code == 200
    p, m = percentiles(times), percentiles(memo_times)
    with capsys.disabled():
        print(f"\n[load] one at a time: /v1/check ms p50 {p[50]:.1f} p90 {p[90]:.1f} p99 {p[99]:.1f}; "
              f"/v1/memo ms p50 {m[50]:.1f} p90 {m[90]:.1f}")
    assert p[50] < 2000
