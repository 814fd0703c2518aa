"""Service settings: limits, time limits and where the run record lives.

``serve()`` takes host, port, database and token; everything else has a
default that suits the 2-core reference machine and can be changed through
``HEATSCREEN_*`` environment variables (read once, at start).
"""
from __future__ import annotations

import os
from dataclasses import dataclass, field, fields
from pathlib import Path

DEFAULT_DB_FILE = "heatscreen-runs.sqlite"


@dataclass
class Settings:
    db_url: str = f"sqlite:///{DEFAULT_DB_FILE}"
    token: str | None = None
    data_dir: Path = field(default_factory=lambda: Path("heatscreen-runs-jobs"))

    # worker processes
    workers: int = 2                  # for single cases and memos
    batch_workers: int = 1            # for register jobs
    worker_memory_mb: int = 4096      # address-space cap of each worker process (0: none)

    # time limits, seconds
    check_timeout: float = 30.0       # one case, screening only
    memo_timeout: float = 60.0        # one case with its memo
    batch_timeout: float = 900.0      # one register job
    queue_wait: float = 60.0          # longest wait for a free worker before 503
    shutdown_grace: float = 30.0      # how long a shutdown waits for work in flight
    header_timeout: float = 10.0      # a request's line and headers, from their first byte; then the connection closes
    body_timeout: float = 30.0        # longest wait for the next part of a request body; then 408

    # failed token attempts (login form and Authorization header), per client address
    auth_failures_burst: int = 20     # allowed at once
    auth_failures_per_s: float = 2.0  # allowed again per second; beyond: 429

    # queues
    max_queue: int = 256              # requests waiting for a worker; beyond: 503
    max_jobs_queued: int = 16         # register jobs waiting; beyond: 503
    limit_concurrency: int = 512      # open connections; beyond: 503 (uvicorn)

    # sizes
    max_case_bytes: int = 1_000_000
    max_register_bytes: int = 10_000_000
    max_register_rows: int = 2_000
    max_xlsx_uncompressed: int = 50_000_000
    max_xlsx_members: int = 500
    max_xlsx_ratio: int = 150         # uncompressed / compressed, for members over 1 MB

    # the Host header: names (besides the bound address and, on loopback, localhost) requests may use,
    # comma-separated; a wildcard bind (0.0.0.0, ::) without them accepts any Host
    allowed_hosts: str = ""
    bind_host: str | None = None      # set by serve(): the address and port the service listens on
    bind_port: int | None = None

    @property
    def is_sqlite(self) -> bool:
        return self.db_url.startswith("sqlite")

    @classmethod
    def from_env(cls, db: str | None = None, token: str | None = None, environ=None) -> "Settings":
        env = os.environ if environ is None else environ
        s = cls()
        for f in fields(cls):
            key = "HEATSCREEN_" + f.name.upper()
            if f.name in ("db_url", "token", "data_dir", "bind_host", "bind_port") or key not in env:
                continue
            raw = env[key].strip()
            kind = type(getattr(s, f.name))
            try:
                value = kind(raw)
            except ValueError:
                raise SystemExit(f"heatscreen serve: {key}={raw!r} is not a valid {kind.__name__}") from None
            if isinstance(value, (int, float)) and value < 0:
                raise SystemExit(f"heatscreen serve: {key} must not be negative")
            setattr(s, f.name, value)
        s.workers = max(1, s.workers)
        s.batch_workers = max(1, s.batch_workers)
        db = db or env.get("HEATSCREEN_DB") or DEFAULT_DB_FILE
        if "://" in db:
            s.db_url = db
            s.data_dir = Path(env.get("HEATSCREEN_DATA_DIR") or "heatscreen-runs-jobs")
        else:
            path = Path(db).expanduser().resolve()
            s.db_url = f"sqlite:///{path}"
            s.data_dir = Path(env.get("HEATSCREEN_DATA_DIR") or path.with_name(path.stem + "-jobs"))
        tok = token if token is not None else env.get("HEATSCREEN_TOKEN")
        if tok is not None and not tok.strip():
            # an empty token would silently turn authentication off
            raise SystemExit(f"heatscreen serve: {EMPTY_TOKEN}")
        s.token = tok or None
        return s


EMPTY_TOKEN = ("the token is empty (--token '' or HEATSCREEN_TOKEN=''); give a token, or leave out both --token "
               "and HEATSCREEN_TOKEN to run without one")
