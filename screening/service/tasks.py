"""What runs inside a worker process: the project's own screening functions, nothing else.

Each task returns plain data (dicts, bytes) that pickles cheaply.  Problems
with the input come back as ``(kind, payload)`` messages, never as
tracebacks: ``case`` (field problems, as the CLI prints them), ``rules``,
``template``, ``limit`` (a size or row limit) and ``internal`` (our fault).

This module imports nothing heavy at the top: a worker sets its thread and
memory limits before numpy is loaded.
"""
from __future__ import annotations

import contextlib
import hashlib
import json
import os
import signal
import sys
import time
import traceback
import zipfile
from pathlib import Path

RESULT_FILES = ("results.json", "results.csv", "errors.csv", "summary.pdf", "memos.zip")


# ---------------------------------------------------------------- worker loop

_SCRATCH: Path | None = None


def _scratch() -> Path:
    """This worker's own folder for the case file it screens (names chosen here, never by a client)."""
    global _SCRATCH
    if _SCRATCH is None:
        import tempfile

        _SCRATCH = Path(tempfile.mkdtemp(prefix="heatscreen-worker-"))
    return _SCRATCH


def worker_main(conn, memory_mb: int = 0, scratch: str | None = None) -> None:
    """Entry point of a worker process: set limits, import, then serve tasks until told to stop."""
    global _SCRATCH
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the server decides when work stops
    if scratch:
        _SCRATCH = Path(scratch) / f"worker-{os.getpid()}"
        _SCRATCH.mkdir(parents=True, exist_ok=True)
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")
    if memory_mb:
        try:
            import resource

            limit = memory_mb * 1024 * 1024
            _, hard = resource.getrlimit(resource.RLIMIT_AS)
            resource.setrlimit(resource.RLIMIT_AS, (limit if hard == resource.RLIM_INFINITY else min(limit, hard), hard))
        except (ImportError, ValueError, OSError):  # pragma: no cover - not on every platform
            pass
    _warm_up()
    conn.send(("ready", os.getpid()))
    while True:
        try:
            name, args = conn.recv()
        except (EOFError, OSError):
            return  # the server is gone
        if name == "stop":
            if _SCRATCH is not None:
                import shutil

                shutil.rmtree(_SCRATCH, ignore_errors=True)
            return
        fn = TASKS.get(name)
        if fn is None:
            conn.send(("internal", f"unknown task {name!r}"))
            continue
        try:
            value = fn(progress=_progress_sender(conn), **args)
        except BaseException as exc:  # noqa: BLE001 - every failure becomes a message
            conn.send(_failure(exc))
            if isinstance(exc, (KeyboardInterrupt, SystemExit)):
                return
            continue
        conn.send(("ok", value))


def _progress_sender(conn):
    last = [0.0]

    def progress(*args, **kwargs):
        now = time.monotonic()
        if now - last[0] < 0.2:
            return
        last[0] = now
        info = {k: v for k, v in kwargs.items() if isinstance(v, (int, float, str))}
        for a in args:
            if isinstance(a, dict):
                info.update({str(k): v for k, v in a.items() if isinstance(v, (int, float, str))})
        nums = [a for a in args if isinstance(a, (int, float)) and not isinstance(a, bool)]
        if len(nums) >= 2:
            info.setdefault("done", nums[0])
            info.setdefault("total", nums[1])
        elif len(nums) == 1:
            info.setdefault("done", nums[0])
        try:
            conn.send(("progress", info))
        except (OSError, EOFError):
            pass

    return progress


def _failure(exc: BaseException):
    from screening.case.schema import CaseError
    from screening.service.limits import LimitExceeded

    if isinstance(exc, CaseError):
        problems = [(p.field, p.message) for p in exc.problems]
        return ("case", {"problems": problems, "lines": getattr(exc, "_lines", {})})
    if isinstance(exc, LimitExceeded):
        return ("limit", {"problems": exc.problems, "status": exc.status})
    try:
        from screening.verdict.rule_file import RuleSetError

        if isinstance(exc, RuleSetError):
            return ("rules", {"problems": [(f, m) for f, m in exc.problems]})
    except ImportError:  # pragma: no cover
        pass
    if type(exc).__name__ == "TemplateError":
        return ("template", {"message": str(exc)})
    from screening.errors import InputError

    if isinstance(exc, InputError) and type(exc).__name__ != "MemoInputError":
        # a register that cannot be read (a cell over the limit, a broken workbook ...): the user's input
        field = "register" if type(exc).__name__ == "RegisterError" else "(input)"
        return ("case", {"problems": [(field, getattr(exc, "message", None) or str(exc))], "lines": {}})
    if isinstance(exc, MemoryError):
        return ("internal", {"message": "the worker ran out of memory on this input"})
    traceback.print_exception(exc, file=sys.stderr)
    return ("internal", {"message": f"{type(exc).__name__}: {exc}"})


def _warm_up() -> None:
    """Import everything and screen the shipped example once, so the first request is fast."""
    import importlib

    from screening.resources import demo_cases

    for name in ("case.files", "case.prepare", "run.pipeline", "run.screen_case", "report.memo", "verdict.rule_file"):
        importlib.import_module(f"screening.{name}")

    try:
        raw = demo_cases().joinpath("example_case.yaml").read_bytes()
        with _source_date_epoch(0):
            task_check(raw=raw, kind="yaml", rules_path=None, sde=0, memo=True, locate=False)
    except Exception:  # noqa: BLE001 - warm-up is best effort
        traceback.print_exc()


@contextlib.contextmanager
def _source_date_epoch(sde: int | None):
    old = os.environ.get("SOURCE_DATE_EPOCH")
    if sde is not None:
        os.environ["SOURCE_DATE_EPOCH"] = str(int(sde))
    try:
        yield
    finally:
        if old is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)
        else:
            os.environ["SOURCE_DATE_EPOCH"] = old


def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def render_record() -> dict:
    """Templates (text and hash), fonts (hash) and library versions a memo is made with."""
    import reportlab

    from screening.report.templates import (
        TEMPLATE_FILE,
        default_templates_dir,
        template_hashes,
    )

    path = default_templates_dir() / TEMPLATE_FILE
    text = path.read_bytes()
    hashes = template_hashes(None)
    templates = {k: {"sha256": v, "text": text.decode("utf-8")} for k, v in hashes.items() if k.startswith("templates/")}
    fonts = {k.split("/", 1)[1]: v for k, v in hashes.items() if k.startswith("fonts/")}
    return {"templates": templates, "fonts": fonts,
            "renderer": {"reportlab": reportlab.Version, "python": sys.version.split()[0]}}


# ---------------------------------------------------------------- tasks

def task_check(raw: bytes, kind: str, rules_path: str | None, sde: int, memo: bool, locate: bool,
               progress=None) -> dict:
    """One case, screened by the CLI's own ``screen_file`` (what ``heatscreen check`` and ``memo`` run).

    The bytes go to a file in this worker's scratch folder named by kind, so the
    result is the one ``check --json`` prints for the same bytes; the memo is
    rendered as ``heatscreen memo`` renders it.
    """
    from screening.case.schema import CaseError
    from screening.report.memo import render_memo
    from screening.result import json_safe, memo_view, public_result
    from screening.run.pipeline import screen_file

    if kind not in ("yaml", "json", "toml"):
        raise ValueError(f"unknown case kind {kind!r}")
    path = _scratch() / f"case.{kind}"
    path.write_bytes(raw)
    try:
        result = screen_file(str(path), rules_path)
    except CaseError as exc:
        if locate:
            from screening.service.locate import field_lines

            exc._lines = field_lines(raw, kind, [(p.field, p.message) for p in exc.problems])
        raise
    finally:
        path.unlink(missing_ok=True)
    public = json_safe(public_result(result))  # JSON has no inf or NaN: null, with a warning naming the key
    # the memo is rendered from the stored form of its view, so that the record regenerates it exactly
    view_json = json.dumps(memo_view(result), ensure_ascii=False, allow_nan=True, separators=(",", ":"))
    pdf = None
    if memo:
        with _source_date_epoch(sde):
            pdf = render_memo(json.loads(view_json))
    return {"public": public, "memo_view_json": view_json, "memo": pdf, "memo_sha256": _sha256(pdf) if pdf else None,
            "input_hash": result.get("input_hash"), **render_record()}


def task_memo(view_json: str, sde: int, template_text: str | None, template_sha256: str | None,
              progress=None) -> dict:
    """Render a memo again from a stored run: same view, same date, same templates."""
    import tempfile

    from screening.report.memo import render_memo
    from screening.report.templates import TEMPLATE_FILE, template_hashes

    view = json.loads(view_json)
    current = template_hashes(None).get(f"templates/default/{TEMPLATE_FILE}")
    with _source_date_epoch(sde):
        if template_text is None or template_sha256 == current:
            pdf = render_memo(view)
        else:  # the shipped templates changed since the run: use the stored copy
            with tempfile.TemporaryDirectory(prefix="heatscreen-tpl-") as tmp:
                Path(tmp, TEMPLATE_FILE).write_text(template_text, encoding="utf-8")
                pdf = render_memo(view, templates_dir=tmp)
    return {"memo": pdf, "memo_sha256": _sha256(pdf), "fonts": render_record()["fonts"]}


def task_batch(job_dir: str, register_file: str, base_file: str | None, rules_path: str | None, memos: bool,
               sde: int, limits: dict, progress=None) -> dict:
    """One register job, by the project's register batch; outputs stay in ``job_dir/out``."""
    from screening.service.limits import (
        LimitExceeded,
        RegisterLimits,
        check_csv_rows,
        check_xlsx,
        check_xlsx_rows,
    )

    lim = RegisterLimits(**limits)
    job = Path(job_dir)
    reg = job / "input" / register_file
    data = reg.read_bytes()
    if reg.suffix == ".xlsx":
        check_xlsx(data, lim)
        check_xlsx_rows(reg, lim)
    else:
        check_csv_rows(data, lim)
    try:
        from screening.register.batch import run_batch
    except ImportError:
        raise LimitExceeded([("register", "register screening is not available in this installation")],
                            status=501) from None
    out = job / "out"
    out.mkdir(parents=True, exist_ok=True)
    base = str(job / "input" / base_file) if base_file else None
    with _source_date_epoch(sde):
        summary = run_batch(str(reg), str(out), base_path=base, rules_path=rules_path, memos=memos,
                            allow_case_file_column=False, progress=progress)
    summary = {k: v for k, v in summary.items() if k != "out_dir"}  # no server paths to clients
    memo_dir = out / "memos"
    if memos and memo_dir.is_dir():
        _zip_memos(memo_dir, out / "memos.zip", sde)
    files = {name: str(out / name) for name in RESULT_FILES if (out / name).is_file()}
    return {"summary": _jsonable(summary), "files": files, "templates": render_record()["templates"]}


def _zip_memos(folder: Path, target: Path, sde: int) -> None:
    """A reproducible zip: sorted names, fixed dates (the memo date), fixed permissions."""
    import datetime as dt

    stamp = dt.datetime.fromtimestamp(max(int(sde), 315532800), dt.timezone.utc).timetuple()[:6]
    with zipfile.ZipFile(target, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        for pdf in sorted(folder.glob("*.pdf")):
            info = zipfile.ZipInfo(pdf.name, date_time=stamp)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            zf.writestr(info, pdf.read_bytes())


def _jsonable(value):
    try:
        return json.loads(json.dumps(value, default=str))
    except (TypeError, ValueError):
        return {"value": str(value)}


TASKS = {"check": task_check, "memo": task_memo, "batch": task_batch}
