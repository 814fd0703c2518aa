"""Helpers for the service tests: a real server in a subprocess on loopback, and a stand-in register batch.

Run as a script (``python tests/service_helpers.py serve --port N ...``) it
starts the service exactly as ``python -m screening.service`` does, after
optionally putting :func:`stub_run_batch` in place of
``screening.register.batch.run_batch`` (environment variable
``HEATSCREEN_TEST_BATCH_STUB=1``).  The worker processes are started with
``spawn``, which re-imports this file as their main module, so they get the
same stand-in.  Keep the imports at the top light for that reason.

The stand-in follows the contract of the real function (signature, output
files, summary dict); the tests of the service check the service's handling
of jobs, not the register format.
"""
from __future__ import annotations

import contextlib
import csv
import hashlib
import json
import os
import signal
import socket
import subprocess
import sys
import time
import types
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "screening" / "demo_cases"
HERE = Path(__file__).resolve()


# ------------------------------------------------------------------ stand-in register batch

def _set_dotted(data: dict, path: str, value) -> None:
    parts = path.split(".")
    node = data
    for i, part in enumerate(parts[:-1]):
        nxt = parts[i + 1]
        if isinstance(node, list):
            node = node[int(part)]
            continue
        if part not in node or not isinstance(node[part], (dict, list)):
            node[part] = [] if nxt.isdigit() else {}
        node = node[part]
    last = parts[-1]
    if isinstance(node, list):
        node[int(last)] = value
    else:
        node[last] = value


def _read_rows(path: Path) -> list[dict]:
    if path.suffix == ".xlsx":
        import openpyxl

        wb = openpyxl.load_workbook(path, read_only=True, data_only=True)
        ws = wb.worksheets[0]
        values = list(ws.iter_rows(values_only=True))
        wb.close()
        head = [str(h) for h in values[0]]
        return [{h: ("" if v is None else str(v)) for h, v in zip(head, row)} for row in values[1:]]
    with open(path, newline="", encoding="utf-8-sig") as fh:
        return list(csv.DictReader(fh))


def stub_run_batch(register_path, out_dir, base_path=None, rules_path=None, memos=False,
                   allow_case_file_column=True, progress=None) -> dict:
    """Stand-in for screening.register.batch.run_batch: rows are dotted-path overrides of the base case."""
    import copy

    import yaml

    from screening.case.schema import CaseError, validate_case_data
    from screening.case.prepare import prepare_case
    from screening.verdict.rule_file import apply_rules
    from screening.report.memo import render_memo
    from screening.report.register_summary import render_register_summary
    from screening.result import memo_view, public_result
    from screening.run.screen_case import screen_prepared

    out = Path(out_dir)
    rows = _read_rows(Path(register_path))
    base = yaml.safe_load(Path(base_path).read_text(encoding="utf-8")) if base_path else {}
    results, views, errors = [], [], []
    for n, row in enumerate(rows, start=2):
        delay = float(row.pop("stub_sleep", "") or 0)
        if delay:
            time.sleep(delay)
        if "case_file" in row and row["case_file"] and not allow_case_file_column:
            errors.append({"row": n, "id": row.get("id"), "field": "case_file",
                           "message": "register rows sent to the service cannot name case files"})
            continue
        data = copy.deepcopy(base)
        for key, value in row.items():
            if key and value not in (None, "") and key != "case_file":
                _set_dotted(data, key, value)
        try:
            spec = validate_case_data(data)
            result = screen_prepared(prepare_case(spec), hashlib.sha256(json.dumps(row, sort_keys=True).encode()).hexdigest())
        except CaseError as exc:
            errors += [{"row": n, "id": row.get("id"), "field": p.field, "message": p.message} for p in exc.problems]
            continue
        apply_rules(result, rules_path)
        results.append(public_result(result))
        views.append(memo_view(result))
        if progress:
            progress(n - 1, len(rows))
    (out / "results.json").write_text(json.dumps(results, indent=1), encoding="utf-8")
    with open(out / "results.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "verdict", "first_limit_s", "warnings"])
        for r in results:
            times = [lim["time_s"] for lim in r["limits"] if lim["time_s"] is not None]
            w.writerow([r["id"], r["verdict"], min(times) if times else "", len(r["warnings"])])
    with open(out / "errors.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, ["row", "id", "field", "message"])
        w.writeheader()
        w.writerows(errors)
    (out / "summary.pdf").write_bytes(render_register_summary(views, errors))
    if memos:
        (out / "memos").mkdir(exist_ok=True)
        for v in views:
            (out / "memos" / f"{v['id']}.pdf").write_bytes(render_memo(v))
    counts: dict[str, int] = {}
    for r in results:
        counts[r["verdict"]] = counts.get(r["verdict"], 0) + 1
    invalid_rows = len({e["row"] for e in errors})
    return {"rows": len(rows), "valid": len(results), "invalid": invalid_rows, "verdict_counts": counts}


def _install_stub() -> None:
    mod = types.ModuleType("screening.register.batch")
    mod.run_batch = stub_run_batch
    mod.__doc__ = "test stand-in (tests/service_helpers.py)"
    sys.modules["screening.register.batch"] = mod


if os.environ.get("HEATSCREEN_TEST_BATCH_STUB") == "1":
    _install_stub()


# ------------------------------------------------------------------ a real server in a subprocess

def free_port() -> int:
    with contextlib.closing(socket.socket(socket.AF_INET, socket.SOCK_STREAM)) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Server:
    """The service in a subprocess on 127.0.0.1, on a free port; ``stop()`` sends SIGTERM and waits."""

    def __init__(self, tmp: Path, *, token: str | None = None, env: dict | None = None, stub_batch: bool = False,
                 db: Path | None = None, name: str = "server"):
        self.tmp = Path(tmp)
        self.tmp.mkdir(parents=True, exist_ok=True)
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.token = token
        self.db = db or (self.tmp / f"{name}.sqlite")
        self.log_path = self.tmp / f"{name}.log"
        e = dict(os.environ)
        e.pop("HEATSCREEN_TOKEN", None)
        e["PYTHONPATH"] = str(REPO) + (os.pathsep + e["PYTHONPATH"] if e.get("PYTHONPATH") else "")
        e["HEATSCREEN_TEST_BATCH_STUB"] = "1" if stub_batch else "0"
        e.setdefault("HEATSCREEN_WORKER_MEMORY_MB", "3072")
        e.update(env or {})
        self.env = e
        self.proc: subprocess.Popen | None = None

    def start(self, timeout: float = 90.0) -> "Server":
        args = [sys.executable, str(HERE), "serve", "--port", str(self.port), "--db", str(self.db)]
        if self.token:
            args += ["--token", self.token]
        self._log = open(self.log_path, "ab")
        self.proc = subprocess.Popen(args, cwd=str(self.tmp), env=self.env, stdout=self._log, stderr=subprocess.STDOUT,
                                     stdin=subprocess.DEVNULL)
        self.wait_ready(timeout)
        return self

    def wait_ready(self, timeout: float) -> None:
        import httpx

        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise RuntimeError(f"the server exited with {self.proc.returncode}:\n{self.log()}")
            try:
                if httpx.get(self.url + "/health", timeout=2).status_code == 200:
                    return
            except httpx.HTTPError:
                pass
            time.sleep(0.15)
        self.stop()
        raise RuntimeError(f"the server did not answer within {timeout} s:\n{self.log()}")

    def log(self) -> str:
        try:
            return self.log_path.read_text(encoding="utf-8", errors="replace")[-20000:]
        except OSError:
            return ""

    def client(self, token: str | None | bool = True, timeout: float = 60.0):
        import httpx

        headers = {}
        tok = self.token if token is True else (token or None)
        if tok:
            headers["Authorization"] = f"Bearer {tok}"
        return httpx.Client(base_url=self.url, headers=headers, timeout=timeout)

    def stop(self, timeout: float = 60.0) -> int | None:
        if self.proc is None:
            return None
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(10)
        self._log.close()
        return self.proc.returncode

    def __enter__(self):
        return self.start()

    def __exit__(self, *exc):
        self.stop()


def demo_bytes(name: str) -> bytes:
    return (DEMO / name).read_bytes()


def slow_case_bytes() -> bytes:
    """A case whose check takes well over 0.25 s even in a warm worker: the demo reactor (stiff
    integrations) with a Monte Carlo block of 5000 samples (about 1 s on the project machine)."""
    return demo_bytes("fw-r301-reactor.yaml") + (
        b"uncertainty:\n  samples: 5000\n  seed: 1\n  inputs:\n"
        b"    heat_loss.coefficient: {distribution: uniform, low: 4 W/(m^2*K), high: 8 W/(m^2*K)}\n")


def register_csv(rows: list[dict]) -> bytes:
    import io

    keys: list[str] = []
    for r in rows:
        keys += [k for k in r if k not in keys]
    buf = io.StringIO()
    w = csv.DictWriter(buf, keys, lineterminator="\n")
    w.writeheader()
    w.writerows(rows)
    return buf.getvalue().encode("utf-8")


def wait_job(client, job_id: str, timeout: float = 120.0) -> dict:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        doc = client.get(f"/v1/batch/{job_id}").json()
        if doc.get("finished"):
            return doc
        time.sleep(0.2)
    raise AssertionError(f"job {job_id} did not finish within {timeout} s: {doc}")


def percentiles(values: list[float], ps=(50, 90, 95, 99)) -> dict[int, float]:
    xs = sorted(values)
    out = {}
    for p in ps:
        k = (len(xs) - 1) * p / 100
        lo, hi = int(k), min(int(k) + 1, len(xs) - 1)
        out[p] = xs[lo] + (xs[hi] - xs[lo]) * (k - lo)
    return out


if __name__ == "__main__" and len(sys.argv) > 1 and sys.argv[1] == "serve":
    sys.path.insert(0, str(REPO))
    from screening.service.__main__ import main

    main(sys.argv[2:])
