"""The run record: every screening run and register job, through SQLAlchemy.

SQLite by default (WAL journal, so readers never block the writer), or any
database SQLAlchemy reaches (``postgresql://...``).  All writes go through one
writer thread, so concurrent runs are recorded one after another and none is
lost to a lock; reads use their own connections.

A run keeps what is needed to make its memo again byte for byte: the input as
sent and its hash, the tool version, the rule set (name, hash and file), the
templates (text and hash), the fonts' hashes, the memo date
(SOURCE_DATE_EPOCH), the memo view (result plus history) and the memo itself
once one has been made.
"""
from __future__ import annotations

import asyncio
import datetime as dt
import json
import uuid
from concurrent.futures import ThreadPoolExecutor
from typing import Any, Callable

from sqlalchemy import (
    Boolean,
    Float,
    ForeignKey,
    Integer,
    LargeBinary,
    String,
    Text,
    create_engine,
    event,
    func,
    select,
    update,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, Session, mapped_column

SCHEMA_VERSION = 1


def now_iso() -> str:
    return dt.datetime.now(dt.timezone.utc).isoformat(timespec="microseconds").replace("+00:00", "Z")


def new_id() -> str:
    return uuid.uuid4().hex


class Base(DeclarativeBase):
    pass


class Run(Base):
    __tablename__ = "runs"

    id: Mapped[str] = mapped_column(String(32), primary_key=True)
    seq: Mapped[int | None] = mapped_column(Integer, index=True)  # order of recording
    created_at: Mapped[str] = mapped_column(String(40), index=True)
    kind: Mapped[str] = mapped_column(String(20))            # check | memo | register-row
    status: Mapped[str] = mapped_column(String(20))          # ok | timeout | error
    job_id: Mapped[str | None] = mapped_column(String(32), ForeignKey("jobs.id"), index=True)
    input_bytes: Mapped[bytes | None] = mapped_column(LargeBinary)
    input_kind: Mapped[str | None] = mapped_column(String(10))
    input_content_type: Mapped[str | None] = mapped_column(String(100))
    input_hash: Mapped[str | None] = mapped_column(String(64), index=True)
    case_id: Mapped[str | None] = mapped_column(Text)
    tool_version: Mapped[str] = mapped_column(String(40))
    rule_set_file: Mapped[str | None] = mapped_column(String(100))
    rule_set_name: Mapped[str | None] = mapped_column(Text)
    rule_set_hash: Mapped[str | None] = mapped_column(String(64))
    rule_set_bytes: Mapped[bytes | None] = mapped_column(LargeBinary)
    templates_json: Mapped[str | None] = mapped_column(Text)
    fonts_json: Mapped[str | None] = mapped_column(Text)
    renderer_json: Mapped[str | None] = mapped_column(Text)
    source_date_epoch: Mapped[int | None] = mapped_column(Integer)
    memo_date: Mapped[str | None] = mapped_column(String(10))
    result_json: Mapped[str | None] = mapped_column(Text)
    memo_view_json: Mapped[str | None] = mapped_column(Text)
    verdict: Mapped[str | None] = mapped_column(String(10), index=True)
    warning_count: Mapped[int | None] = mapped_column(Integer)
    memo: Mapped[bytes | None] = mapped_column(LargeBinary)
    memo_sha256: Mapped[str | None] = mapped_column(String(64))
    error: Mapped[str | None] = mapped_column(Text)
    elapsed_s: Mapped[float | None] = mapped_column(Float)


class Job(Base):
    __tablename__ = "jobs"

    id: Mapped[str] = mapped_column(String(32), primary_key=True)
    created_at: Mapped[str] = mapped_column(String(40), index=True)
    started_at: Mapped[str | None] = mapped_column(String(40))
    finished_at: Mapped[str | None] = mapped_column(String(40))
    state: Mapped[str] = mapped_column(String(20), index=True)  # queued running done invalid failed timeout interrupted
    register_bytes: Mapped[bytes] = mapped_column(LargeBinary)
    register_name: Mapped[str | None] = mapped_column(Text)      # the client's file name, shown only
    register_format: Mapped[str] = mapped_column(String(10))
    register_hash: Mapped[str] = mapped_column(String(64))
    base_bytes: Mapped[bytes | None] = mapped_column(LargeBinary)
    base_kind: Mapped[str | None] = mapped_column(String(10))
    base_hash: Mapped[str | None] = mapped_column(String(64))
    rule_set_file: Mapped[str | None] = mapped_column(String(100))
    rule_set_hash: Mapped[str | None] = mapped_column(String(64))
    rule_set_bytes: Mapped[bytes | None] = mapped_column(LargeBinary)
    memos: Mapped[bool] = mapped_column(Boolean, default=False)
    source_date_epoch: Mapped[int] = mapped_column(Integer)
    tool_version: Mapped[str] = mapped_column(String(40))
    templates_json: Mapped[str | None] = mapped_column(Text)
    summary_json: Mapped[str | None] = mapped_column(Text)
    problems_json: Mapped[str | None] = mapped_column(Text)
    error: Mapped[str | None] = mapped_column(Text)


class JobFile(Base):
    __tablename__ = "job_files"

    job_id: Mapped[str] = mapped_column(String(32), ForeignKey("jobs.id"), primary_key=True)
    name: Mapped[str] = mapped_column(String(40), primary_key=True)
    content_type: Mapped[str] = mapped_column(String(60))
    sha256: Mapped[str] = mapped_column(String(64))
    size: Mapped[int] = mapped_column(Integer)
    data: Mapped[bytes] = mapped_column(LargeBinary)


class Meta(Base):
    __tablename__ = "heatscreen_meta"

    key: Mapped[str] = mapped_column(String(40), primary_key=True)
    value: Mapped[str] = mapped_column(Text)


def _sqlite_pragmas(dbapi_conn, _record):
    cur = dbapi_conn.cursor()
    cur.execute("PRAGMA journal_mode=WAL")
    cur.execute("PRAGMA synchronous=NORMAL")
    cur.execute("PRAGMA busy_timeout=30000")
    cur.execute("PRAGMA foreign_keys=ON")
    cur.close()


class RunStore:
    """The record.  ``write`` runs a function on the single writer thread; ``read`` on a reader thread."""

    def __init__(self, url: str):
        self.url = url
        kwargs: dict[str, Any] = {}
        if url.startswith("sqlite"):
            kwargs["connect_args"] = {"check_same_thread": False, "timeout": 30}
        self.engine = create_engine(url, **kwargs)
        if url.startswith("sqlite"):
            event.listen(self.engine, "connect", _sqlite_pragmas)
        self._writer = ThreadPoolExecutor(1, thread_name_prefix="hs-db-writer")
        self._readers = ThreadPoolExecutor(4, thread_name_prefix="hs-db-reader")

    # ------------------------------------------------------------ plumbing
    def create(self) -> None:
        Base.metadata.create_all(self.engine)
        with Session(self.engine) as s, s.begin():
            if s.get(Meta, "schema_version") is None:
                s.add(Meta(key="schema_version", value=str(SCHEMA_VERSION)))

    async def write(self, fn: Callable[[Session], Any]):
        def job():
            with Session(self.engine, expire_on_commit=False) as s, s.begin():
                return fn(s)

        return await asyncio.get_running_loop().run_in_executor(self._writer, job)

    async def read(self, fn: Callable[[Session], Any]):
        def job():
            with Session(self.engine, expire_on_commit=False) as s:
                return fn(s)

        return await asyncio.get_running_loop().run_in_executor(self._readers, job)

    def close(self) -> None:
        self._writer.shutdown(wait=True)
        self._readers.shutdown(wait=True)
        self.engine.dispose()

    # ------------------------------------------------------------ runs
    async def add_run(self, **fields) -> str:
        run_id = fields.pop("id", None) or new_id()

        def fn(s: Session):
            seq = (s.scalar(select(func.max(Run.seq))) or 0) + 1
            s.add(Run(id=run_id, seq=seq, created_at=fields.pop("created_at", None) or now_iso(), **fields))
            return run_id

        return await self.write(fn)

    async def add_runs(self, rows: list[dict]) -> list[str]:
        def fn(s: Session):
            seq = s.scalar(select(func.max(Run.seq))) or 0
            ids = []
            for row in rows:
                seq += 1
                rid = row.pop("id", None) or new_id()
                s.add(Run(id=rid, seq=seq, created_at=row.pop("created_at", None) or now_iso(), **row))
                ids.append(rid)
            return ids

        return await self.write(fn)

    async def set_memo(self, run_id: str, memo: bytes, sha: str) -> None:
        await self.write(lambda s: s.execute(update(Run).where(Run.id == run_id, Run.memo.is_(None))
                                             .values(memo=memo, memo_sha256=sha)))

    async def get_run(self, run_id: str) -> Run | None:
        return await self.read(lambda s: s.get(Run, run_id))

    async def list_runs(self, limit: int = 50, offset: int = 0, kind: str | None = None,
                        job_id: str | None = None) -> tuple[list[dict], int]:
        cols = (Run.id, Run.seq, Run.created_at, Run.kind, Run.status, Run.case_id, Run.verdict, Run.warning_count,
                Run.input_hash, Run.rule_set_name, Run.job_id, Run.memo_sha256)

        def fn(s: Session):
            q = select(*cols)
            cq = select(func.count()).select_from(Run)
            if kind:
                q, cq = q.where(Run.kind == kind), cq.where(Run.kind == kind)
            if job_id:
                q, cq = q.where(Run.job_id == job_id), cq.where(Run.job_id == job_id)
            rows = s.execute(q.order_by(Run.seq.desc()).limit(limit).offset(offset)).all()
            return [dict(r._mapping) for r in rows], s.scalar(cq)

        return await self.read(fn)

    # ------------------------------------------------------------ jobs
    async def add_job(self, **fields) -> str:
        job_id = new_id()

        def fn(s: Session):
            s.add(Job(id=job_id, created_at=now_iso(), state="queued", **fields))
            return job_id

        return await self.write(fn)

    async def update_job(self, job_id: str, **fields) -> None:
        await self.write(lambda s: s.execute(update(Job).where(Job.id == job_id).values(**fields)))

    async def finish_job(self, job_id: str, files: dict[str, tuple[str, bytes]], rows: list[dict], **fields) -> None:
        import hashlib

        def fn(s: Session):
            for name, (ctype, data) in files.items():
                s.merge(JobFile(job_id=job_id, name=name, content_type=ctype, sha256=hashlib.sha256(data).hexdigest(),
                                size=len(data), data=data))
            seq = s.scalar(select(func.max(Run.seq))) or 0
            for row in rows:
                seq += 1
                s.add(Run(id=new_id(), seq=seq, created_at=now_iso(), job_id=job_id, **row))
            s.execute(update(Job).where(Job.id == job_id).values(finished_at=now_iso(), **fields))

        await self.write(fn)

    async def get_job(self, job_id: str) -> Job | None:
        return await self.read(lambda s: s.get(Job, job_id))

    async def job_files(self, job_id: str) -> list[dict]:
        def fn(s: Session):
            rows = s.execute(select(JobFile.name, JobFile.content_type, JobFile.sha256, JobFile.size)
                             .where(JobFile.job_id == job_id).order_by(JobFile.name)).all()
            return [dict(r._mapping) for r in rows]

        return await self.read(fn)

    async def job_file(self, job_id: str, name: str) -> JobFile | None:
        return await self.read(lambda s: s.get(JobFile, (job_id, name)))

    async def jobs_in_state(self, *states: str) -> list[str]:
        return await self.read(lambda s: list(s.scalars(select(Job.id).where(Job.state.in_(states))
                                                       .order_by(Job.created_at))))

    async def list_jobs(self, limit: int = 50) -> list[dict]:
        def fn(s: Session):
            rows = s.execute(select(Job.id, Job.created_at, Job.finished_at, Job.state, Job.register_name,
                                    Job.summary_json).order_by(Job.created_at.desc()).limit(limit)).all()
            out = []
            for r in rows:
                d = dict(r._mapping)
                d["summary"] = json.loads(d.pop("summary_json") or "null")
                out.append(d)
            return out

        return await self.read(fn)
