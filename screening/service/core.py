"""What the API and the web page share: screen one case, make a memo, run register jobs.

Every computation goes to a worker process (``pool.py``) running the
project's own functions (``tasks.py``).  Every screening run is recorded
(``store.py``) before its answer is sent, so an answer the client sees always
has its record.
"""
from __future__ import annotations

import asyncio
import datetime as dt
import hashlib
import json
import logging
import os
import shutil
import time
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from screening import __version__
from screening.service.limits import (
    LimitExceeded,
    RegisterLimits,
    check_csv_rows,
    check_xlsx,
    register_format,
)
from screening.service.pool import (
    PoolBusy,
    PoolClosed,
    TaskFailed,
    TaskTimeout,
    WorkerCrashed,
    WorkerPool,
)
from screening.service.settings import Settings
from screening.service.store import RunStore, now_iso

log = logging.getLogger("heatscreen.service")

CONTENT_TYPES = {"results.json": "application/json", "results.csv": "text/csv; charset=utf-8",
                 "errors.csv": "text/csv; charset=utf-8", "summary.pdf": "application/pdf",
                 "memos.zip": "application/zip"}
TERMINAL_STATES = ("done", "invalid", "failed", "timeout", "interrupted")


class ServiceError(Exception):
    """An answer other than success: HTTP status, (field, message) problems, extra headers."""

    def __init__(self, status: int, problems: list[tuple[str, str]], *, headers: dict | None = None,
                 lines: dict | None = None, run_id: str | None = None):
        super().__init__("; ".join(f"{f}: {m}" for f, m in problems))
        self.status = status
        self.problems = [(str(f), str(m)) for f, m in problems]
        self.headers = headers or {}
        self.lines = lines or {}
        self.run_id = run_id

    def body(self) -> dict:
        return {"errors": [{"field": f, "message": m} for f, m in self.problems]}


@dataclass(frozen=True)
class RuleSetFile:
    name: str          # the file's stem: what clients choose by
    path: Path
    title: str
    description: str
    sha256: str
    data: bytes


def shipped_rule_sets() -> dict[str, RuleSetFile]:
    """The rule sets that ship with heatscreen, by file stem.  Clients name one; they never give a path."""
    from screening.verdict.rule_file import default_rule_set_path

    folder = default_rule_set_path().parent
    out = {}
    for path in sorted(folder.glob("*.toml")):
        data = path.read_bytes()
        try:
            head = tomllib.loads(data.decode("utf-8")).get("rule_set", {})
        except (UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:  # offered all the same: using it says why
            log.error("shipped rule set %s cannot be read: %s", path.name, exc)
            head = {"name": f"{path.stem} (unreadable)"}
        if not isinstance(head, dict):
            head = {}
        out[path.stem] = RuleSetFile(path.stem, path, str(head.get("name", path.stem)),
                                     str(head.get("description", "")).strip(), hashlib.sha256(data).hexdigest(), data)
    if "default" in out:  # the default first
        out = {"default": out["default"], **{k: v for k, v in out.items() if k != "default"}}
    return out


def memo_date(sde: int) -> str:
    return dt.datetime.fromtimestamp(int(sde), dt.timezone.utc).strftime("%Y-%m-%d")


def source_date_epoch() -> int:
    """The memo date for a new run: the server's SOURCE_DATE_EPOCH if set, else now."""
    raw = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if raw:
        try:
            return int(raw)
        except ValueError:
            pass
    return int(time.time())


@dataclass
class Screened:
    run_id: str
    public: dict
    memo: bytes | None
    elapsed_s: float


@dataclass
class JobState:
    progress: dict = field(default_factory=dict)
    task: asyncio.Task | None = None


class Service:
    def __init__(self, settings: Settings):
        self.settings = settings
        self.store = RunStore(settings.db_url)
        scratch = str(settings.data_dir / "scratch")
        self.pool = WorkerPool("cases", settings.workers, memory_mb=settings.worker_memory_mb,
                               max_waiting=settings.max_queue, wait_timeout=settings.queue_wait, scratch=scratch)
        self.batch_pool = WorkerPool("registers", settings.batch_workers, memory_mb=settings.worker_memory_mb,
                                     max_waiting=settings.max_jobs_queued + settings.batch_workers,
                                     wait_timeout=settings.batch_timeout * (settings.max_jobs_queued + 1),
                                     scratch=scratch)
        self.rule_sets = shipped_rule_sets()
        self.register_limits = RegisterLimits(settings.max_register_rows, settings.max_xlsx_uncompressed,
                                              settings.max_xlsx_members, settings.max_xlsx_ratio)
        self.jobs: dict[str, JobState] = {}
        self._job_queue: asyncio.Queue[str] | None = None
        self._runners: list[asyncio.Task] = []
        self.closing = False
        self.started = False
        self._schema: dict | None = None

    # ------------------------------------------------------------ lifecycle
    async def start(self) -> None:
        loop = asyncio.get_running_loop()
        await loop.run_in_executor(None, self.store.create)
        self.settings.data_dir.mkdir(parents=True, exist_ok=True)
        await loop.run_in_executor(None, shutil.rmtree, self.settings.data_dir / "scratch", True)  # left by a crash
        await asyncio.gather(self.pool.start(), self.batch_pool.start())
        self._job_queue = asyncio.Queue()
        for job_id in await self.store.jobs_in_state("running"):
            await self.store.update_job(job_id, state="interrupted", finished_at=now_iso(),
                                        error="the server stopped while this job was running; send the register again")
        for job_id in await self.store.jobs_in_state("queued"):
            log.info("resuming queued register job %s", job_id)
            self._enqueue(job_id)
        self._runners = [asyncio.create_task(self._job_runner(i)) for i in range(self.settings.batch_workers)]
        self.started = True

    async def stop(self) -> None:
        """Finish or record the work in flight: running jobs get the grace period, then are marked interrupted.

        Jobs still queued stay queued in the record and run when the service starts again.
        """
        self.closing = True
        self.batch_pool.closed = True  # no new register tasks, and no replacement for a worker stopped now
        grace = self.settings.shutdown_grace
        running = [s.task for s in self.jobs.values() if s.task is not None and not s.task.done()]
        if running:
            log.info("waiting up to %g s for %d register job(s) in flight", grace, len(running))
            _, pending = await asyncio.wait(running, timeout=grace)
            if pending:
                self.batch_pool.kill_busy()
                await asyncio.wait(pending, timeout=30)
        for r in self._runners:
            r.cancel()
        await asyncio.gather(*self._runners, return_exceptions=True)
        await asyncio.gather(self.pool.close(grace), self.batch_pool.close(0))
        self.store.close()

    def rule_set(self, name: str | None) -> RuleSetFile:
        name = name or "default"
        rs = self.rule_sets.get(name)
        if rs is None:
            raise ServiceError(422, [("rules", f"unknown rule set {name!r}; the service offers: "
                                               f"{', '.join(self.rule_sets)}")])
        return rs

    def case_schema(self) -> dict:
        if self._schema is None:
            from screening.case.schema import case_json_schema

            self._schema = case_json_schema()
        return self._schema

    # ------------------------------------------------------------ one case
    async def screen(self, raw: bytes, kind: str, content_type: str | None, rules: str | None, *,
                     memo: bool = False, locate: bool = False) -> Screened:
        """Screen one case in a worker and record the run; raise ServiceError for anything but success."""
        rs = self.rule_set(rules)
        if len(raw) > self.settings.max_case_bytes:
            raise ServiceError(413, [("(body)", f"the case is larger than {self.settings.max_case_bytes} bytes")])
        sde = source_date_epoch()
        run_kind = "memo" if memo else "check"
        record = dict(kind=run_kind, input_bytes=raw, input_kind=kind, input_content_type=content_type,
                      input_hash=hashlib.sha256(raw).hexdigest(), tool_version=__version__,
                      rule_set_file=rs.name, rule_set_hash=rs.sha256, rule_set_bytes=rs.data,
                      source_date_epoch=sde, memo_date=memo_date(sde))
        timeout = self.settings.memo_timeout if memo else self.settings.check_timeout
        t0 = time.perf_counter()
        try:
            out = await self.pool.run("check", dict(raw=raw, kind=kind, rules_path=str(rs.path), sde=sde,
                                                    memo=memo, locate=locate), timeout)
        except TaskFailed as exc:
            await self._raise_for_failure(exc, record, t0)
        except TaskTimeout:
            run_id = await self.store.add_run(status="timeout", elapsed_s=time.perf_counter() - t0,
                                              error=f"stopped after the time limit of {timeout:g} s", **record)
            raise ServiceError(504, [("(case)", f"screening this case took longer than the time limit of "
                                                f"{timeout:g} s and was stopped (run {run_id})")],
                               run_id=run_id) from None
        except WorkerCrashed as exc:
            run_id = await self.store.add_run(status="error", elapsed_s=time.perf_counter() - t0, error=str(exc),
                                              **record)
            raise ServiceError(500, [("(server)", f"the worker screening this case stopped unexpectedly (run "
                                                  f"{run_id}); see the server log")], run_id=run_id) from None
        except PoolBusy as exc:
            raise ServiceError(503, [("(server)", f"the service is busy ({exc}); try again shortly")],
                               headers={"Retry-After": "5"}) from None
        except PoolClosed:
            raise ServiceError(503, [("(server)", "the service is shutting down")],
                               headers={"Retry-After": "30"}) from None
        elapsed = time.perf_counter() - t0
        public = out["public"]
        rule_set = public.get("rule_set") or {}
        try:
            run_id = await self.store.add_run(
                status="ok", case_id=public.get("id"), rule_set_name=rule_set.get("name"),
                templates_json=json.dumps(out["templates"]), fonts_json=json.dumps(out["fonts"]),
                renderer_json=json.dumps(out["renderer"]),
                result_json=json.dumps(public, ensure_ascii=False, allow_nan=True),
                memo_view_json=out["memo_view_json"], verdict=public.get("verdict"),
                warning_count=len(public.get("warnings") or []), memo=out["memo"], memo_sha256=out["memo_sha256"],
                elapsed_s=elapsed, **{**record, "rule_set_hash": rule_set.get("hash") or rs.sha256})
        except Exception as exc:  # noqa: BLE001 - an answer without its record is not given
            log.exception("could not record a run")
            raise ServiceError(500, [("(server)", f"the result could not be recorded ({type(exc).__name__}); "
                                                  f"it is not returned")]) from None
        return Screened(run_id, public, out["memo"], elapsed)

    async def _raise_for_failure(self, exc: TaskFailed, record: dict, t0: float):
        payload = exc.payload or {}
        if exc.kind == "case":
            raise ServiceError(422, payload["problems"], lines=payload.get("lines")) from None
        if exc.kind == "limit":
            raise ServiceError(payload.get("status", 413), payload["problems"]) from None
        message = payload.get("message") if isinstance(payload, dict) else None
        if exc.kind == "rules":
            message = "; ".join(f"{f}: {m}" for f, m in payload.get("problems", []))
        run_id = await self.store.add_run(status="error", elapsed_s=time.perf_counter() - t0,
                                          error=f"{exc.kind}: {message}", **record)
        log.error("run %s failed inside the tool: %s: %s", run_id, exc.kind, message)
        if exc.kind == "rules":
            raise ServiceError(500, [("(server)", f"the shipped rule set {record['rule_set_file']!r} is not valid, so "
                                                  f"no verdict can be given (run {run_id}): {message}")],
                               run_id=run_id) from None
        raise ServiceError(500, [("(server)", f"internal error while screening (run {run_id}); the details are in "
                                              f"the server log and the run record")], run_id=run_id) from None

    # ------------------------------------------------------------ memos from the record
    async def memo_for_run(self, run_id: str, regenerate: bool = False) -> tuple[bytes, dict]:
        """The run's memo: the stored one, or rendered again from the record (and stored if it was missing).

        Returns (pdf, info) with info = {"sha256", "stored_sha256", "identical", "regenerated", "fonts_changed"}.
        """
        run = await self.store.get_run(run_id)
        if run is None or run.status != "ok" or run.memo_view_json is None:
            raise ServiceError(404, [("run_id", "no screening run with this id has a memo to give")])
        info = {"stored_sha256": run.memo_sha256, "regenerated": False, "fonts_changed": []}
        if run.memo is not None and not regenerate:
            info.update(sha256=run.memo_sha256, identical=True)
            return run.memo, info
        templates = json.loads(run.templates_json or "{}")
        tpl = templates.get("templates/default/memo.toml") or {}
        try:
            out = await self.pool.run("memo", dict(view_json=run.memo_view_json, sde=run.source_date_epoch,
                                                   template_text=tpl.get("text"), template_sha256=tpl.get("sha256")),
                                      self.settings.memo_timeout)
        except PoolBusy as exc:
            raise ServiceError(503, [("(server)", f"the service is busy ({exc}); try again shortly")],
                               headers={"Retry-After": "5"}) from None
        except PoolClosed:
            raise ServiceError(503, [("(server)", "the service is shutting down")]) from None
        except (TaskFailed, TaskTimeout, WorkerCrashed) as exc:
            log.error("memo for run %s failed: %r", run_id, exc)
            raise ServiceError(500, [("(server)", "the memo could not be made; see the server log")]) from None
        stored_fonts = json.loads(run.fonts_json or "{}")
        info["fonts_changed"] = sorted(k for k, v in out["fonts"].items() if stored_fonts.get(k) not in (None, v))
        info.update(sha256=out["memo_sha256"], regenerated=True,
                    identical=run.memo_sha256 is None or run.memo_sha256 == out["memo_sha256"])
        if run.memo is None:
            await self.store.set_memo(run_id, out["memo"], out["memo_sha256"])
            info["stored_sha256"] = out["memo_sha256"]
        return out["memo"], info

    # ------------------------------------------------------------ register jobs
    async def submit_batch(self, register: bytes, register_name: str | None, base: bytes | None,
                           base_name: str | None, rules: str | None, memos: bool) -> str:
        from screening.case.files import kind_of

        s = self.settings
        rs = self.rule_set(rules)
        if self.closing:
            raise ServiceError(503, [("(server)", "the service is shutting down")], headers={"Retry-After": "30"})
        if not register:
            raise ServiceError(422, [("register", "the register file is empty")])
        if len(register) > s.max_register_bytes:
            raise ServiceError(413, [("register", f"the register is larger than {s.max_register_bytes} bytes")])
        if base is not None and len(base) > s.max_case_bytes:
            raise ServiceError(413, [("base", f"the base case is larger than {s.max_case_bytes} bytes")])
        try:
            fmt = register_format(register, register_name)
            if fmt == "xlsx":
                await asyncio.get_running_loop().run_in_executor(None, check_xlsx, register, self.register_limits)
            else:
                check_csv_rows(register, self.register_limits)
        except LimitExceeded as exc:
            raise ServiceError(exc.status, exc.problems) from None
        waiting = sum(1 for st in self.jobs.values() if st.task is None)
        if waiting >= s.max_jobs_queued:
            raise ServiceError(503, [("(server)", f"{waiting} register jobs are already waiting; try again later")],
                               headers={"Retry-After": "30"})
        base_kind = kind_of(base_name or "base.yaml") if base is not None else None
        job_id = await self.store.add_job(
            register_bytes=register, register_name=(register_name or "")[:200] or None, register_format=fmt,
            register_hash=hashlib.sha256(register).hexdigest(), base_bytes=base, base_kind=base_kind,
            base_hash=hashlib.sha256(base).hexdigest() if base is not None else None, rule_set_file=rs.name,
            rule_set_hash=rs.sha256, rule_set_bytes=rs.data, memos=bool(memos),
            source_date_epoch=source_date_epoch(), tool_version=__version__)
        self._enqueue(job_id)
        return job_id

    def _enqueue(self, job_id: str) -> None:
        self.jobs[job_id] = JobState()
        self._job_queue.put_nowait(job_id)

    async def _job_runner(self, index: int) -> None:
        while not self.closing:
            job_id = await self._job_queue.get()
            if self.closing:
                break
            state = self.jobs.setdefault(job_id, JobState())
            state.task = asyncio.create_task(self._run_job(job_id, state))
            try:
                await asyncio.shield(state.task)  # a cancelled runner leaves the job to stop()
            except asyncio.CancelledError:
                raise
            except Exception as exc:  # noqa: BLE001 - one job must not stop the runner
                log.exception("register job %s", job_id)
                try:
                    await self.store.update_job(job_id, state="failed", finished_at=now_iso(),
                                                error=f"internal error: {type(exc).__name__}")
                except Exception:  # noqa: BLE001
                    log.exception("could not record the failure of job %s", job_id)
            self.jobs.pop(job_id, None)

    async def _run_job(self, job_id: str, state: JobState) -> None:
        folder = self.settings.data_dir / "jobs" / job_id
        try:
            await self._run_job_in(job_id, state, folder)
        finally:
            await asyncio.get_running_loop().run_in_executor(None, shutil.rmtree, folder, True)

    async def _run_job_in(self, job_id: str, state: JobState, folder: Path) -> None:
        job = await self.store.get_job(job_id)
        if job is None or job.state != "queued":
            return
        inputs = folder / "input"
        register_file = f"register.{job.register_format}"
        base_file = f"base.{job.base_kind}" if job.base_bytes is not None else None

        def lay_out():
            shutil.rmtree(folder, ignore_errors=True)
            inputs.mkdir(parents=True)
            (inputs / register_file).write_bytes(job.register_bytes)
            if base_file:
                (inputs / base_file).write_bytes(job.base_bytes)

        loop = asyncio.get_running_loop()
        await loop.run_in_executor(None, lay_out)
        rs = self.rule_sets.get(job.rule_set_file) or self.rule_set("default")
        await self.store.update_job(job_id, state="running", started_at=now_iso())
        limits = self.register_limits.__dict__
        try:
            out = await self.batch_pool.run(
                "batch", dict(job_dir=str(folder), register_file=register_file, base_file=base_file,
                              rules_path=str(rs.path), memos=job.memos, sde=job.source_date_epoch, limits=limits),
                self.settings.batch_timeout, on_progress=lambda p: state.progress.update(p))
        except TaskFailed as exc:
            payload = exc.payload or {}
            if exc.kind in ("case", "limit", "rules"):
                await self.store.update_job(job_id, state="invalid", finished_at=now_iso(),
                                            problems_json=json.dumps(payload.get("problems", [])))
            else:
                await self.store.update_job(job_id, state="failed", finished_at=now_iso(),
                                            error=_scrub(str(payload.get("message", exc.kind)), folder))
            return
        except TaskTimeout:
            await self.store.update_job(job_id, state="timeout", finished_at=now_iso(),
                                        error=f"the job ran longer than {self.settings.batch_timeout:g} s and was stopped")
            return
        except (WorkerCrashed, PoolClosed) as exc:
            if self.closing:
                await self.store.update_job(job_id, state="interrupted", finished_at=now_iso(),
                                            error="the server shut down before the job finished; send it again")
            else:
                await self.store.update_job(job_id, state="failed", finished_at=now_iso(), error=str(exc))
            return
        templates = json.dumps(out.get("templates") or {})
        files, rows = await loop.run_in_executor(None, _collect_outputs, out["files"], job, templates)
        await self.store.finish_job(job_id, files, rows, state="done", summary_json=json.dumps(out["summary"]),
                                    templates_json=templates)

    def job_progress(self, job_id: str) -> dict | None:
        st = self.jobs.get(job_id)
        if st is None:
            return None
        if st.task is None:
            waiting = [j for j, s in self.jobs.items() if s.task is None]
            return {"position": waiting.index(job_id) + 1 if job_id in waiting else None}
        return dict(st.progress)


def _scrub(text: str, folder: Path) -> str:
    return text.replace(str(folder), "(job)")


def _collect_outputs(paths: dict[str, str], job, templates_json: str) -> tuple[dict, list[dict]]:
    """Read a job's output files, and one run record per screened row of results.json."""
    files = {}
    for name, path in paths.items():
        if name in CONTENT_TYPES:
            files[name] = (CONTENT_TYPES[name], Path(path).read_bytes())
    rows = []
    if "results.json" in files:
        try:
            data = json.loads(files["results.json"][1])
        except ValueError:
            data = None
        if isinstance(data, dict):
            data = data.get("results")
        for r in data if isinstance(data, list) else []:
            if not isinstance(r, dict):
                continue
            rs = r.get("rule_set") if isinstance(r.get("rule_set"), dict) else {}
            rows.append(dict(kind="register-row", status="ok", input_kind="register-row", input_bytes=None,
                             input_hash=r.get("input_hash") if isinstance(r.get("input_hash"), str) else None,
                             case_id=str(r.get("id")) if r.get("id") is not None else None,
                             tool_version=str(r.get("tool_version") or __version__), rule_set_file=job.rule_set_file,
                             rule_set_name=rs.get("name"), rule_set_hash=rs.get("hash") or job.rule_set_hash,
                             source_date_epoch=job.source_date_epoch, memo_date=memo_date(job.source_date_epoch),
                             result_json=json.dumps(r, ensure_ascii=False, allow_nan=True),
                             verdict=r.get("verdict") if isinstance(r.get("verdict"), str) else None,
                             warning_count=len(r.get("warnings") or []) if isinstance(r.get("warnings"), list) else None,
                             templates_json=templates_json))
    return files, rows
