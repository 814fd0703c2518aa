"""The JSON API under /v1, and /health.

Results are exactly the object ``heatscreen check --json`` prints, plus
``run_id``.  Problems come back as ``{"errors": [{"field": ..., "message": ...}]}``
with the field paths and messages the CLI prints.
"""
from __future__ import annotations

import base64
import copy
import csv
import io
import json
import re
from enum import Enum
from typing import Any

from fastapi import APIRouter, File, Form, Query, Request, UploadFile
from fastapi.openapi.utils import get_openapi
from fastapi.responses import JSONResponse, Response
from pydantic import BaseModel, Field

from screening import __version__
from screening.register.outputs import without_people_prefix
from screening.service import CAUTION
from screening.service.core import (
    CONTENT_TYPES,
    TERMINAL_STATES,
    ServiceError,
    shipped_rule_sets,
)

router = APIRouter()

_ID = re.compile(r"^[0-9a-f]{32}$")
CASE_TYPES = {"yaml": ("application/yaml", "application/x-yaml", "text/yaml", "text/x-yaml", "text/plain"),
              "json": ("application/json",),
              "toml": ("application/toml", "text/toml", "application/x-toml")}
CAUTION_HEADER = {"X-Heatscreen-Caution": "screening estimate only; not a design or relief-sizing calculation"}

RuleName = Enum("RuleName", {n.replace("-", "_"): n for n in shipped_rule_sets()}, type=str)
RunKind = Enum("RunKind", {"check": "check", "memo": "memo", "register_row": "register-row"}, type=str)


class FieldError(BaseModel):
    field: str = Field(description="Where the problem is: a dotted path into the case (contents.mass, "
                                   "heat_sources.1.power), or (file), (body), (case), (server) ...")
    message: str


class ErrorList(BaseModel):
    errors: list[FieldError]


class JobAccepted(BaseModel):
    job: str
    state: str
    status_url: str


def _err(description: str) -> dict:
    return {"model": ErrorList, "description": description}


AUTH = {401: _err("Missing or wrong token (only when the service runs with a token)")}
BUSY = {503: _err("The service is busy or shutting down; try again after Retry-After seconds")}
CASE_ERRORS = {**AUTH, 413: _err("Body over the size limit"), 415: _err("Content type not YAML, JSON or TOML"),
               422: _err("The case is not valid: one entry per problem, with the CLI's field paths and messages"),
               **BUSY, 504: _err("Screening took longer than the time limit and was stopped")}
NOT_FOUND = {404: _err("No such run, job or file")}

RESULT_SCHEMA = {
    "type": "object",
    "description": "The object `heatscreen check --json` prints, plus run_id. SI values in keys ending _s, _K, _W.",
    "required": ["id", "limits", "warnings", "verdict", "reasons", "rule_set", "input_hash", "tool_version",
                 "run_id"],
    "properties": {
        "run_id": {"type": "string"}, "id": {"type": "string"}, "title": {"type": ["string", "null"]},
        "verdict": {"type": "string", "enum": ["pass", "review", "fail"]},
        "reasons": {"type": "array", "items": {"type": "string"}},
        "rule_set": {"type": "object"}, "warnings": {"type": "array", "items": {"type": "string"}},
        "limits": {"type": "array", "items": {"type": "object"}}, "input_hash": {"type": ["string", "null"]},
        "tool_version": {"type": "string"},
    },
    "additionalProperties": True,
}


def _case_body(description: str) -> dict:
    ref = {"$ref": "#/components/schemas/CaseFile"}
    return {"requestBody": {"required": True, "description": description, "content": {
        "application/yaml": {"schema": ref},
        "application/json": {"schema": ref},
        "application/toml": {"schema": ref},
    }}}


def case_kind(content_type: str | None) -> str:
    ct = (content_type or "").split(";", 1)[0].strip().lower()
    if not ct:
        return "yaml"
    for kind, names in CASE_TYPES.items():
        if ct in names:
            return kind
    if ct.endswith("+json"):
        return "json"
    if ct.endswith("+yaml"):
        return "yaml"
    raise ServiceError(415, [("(content-type)", f"unsupported content type {ct!r}: send the case as "
                                                f"application/yaml, application/json or application/toml")])


def _service(request: Request):
    return request.app.state.service


def _check_id(value: str, what: str) -> str:
    if not _ID.match(value or ""):
        raise ServiceError(404, [(what, f"no {what.replace('_id', '')} with this id")])
    return value


# ------------------------------------------------------------------ health and reference

@router.get("/health", tags=["service"], summary="Health check (no token needed)",
            responses={200: {"content": {"application/json": {"example": {"status": "ok"}}}}})
async def health(request: Request) -> dict:
    svc = getattr(request.app.state, "service", None)
    return {"status": "ok" if svc is not None and not svc.closing else "stopping", "version": __version__}


@router.get("/v1/status", tags=["service"], summary="Workers, queues and counters", responses={**AUTH})
async def status(request: Request) -> dict:
    svc = _service(request)
    pools = {}
    for pool in (svc.pool, svc.batch_pool):
        pools[pool.name] = {"workers": pool.size, "busy": pool.busy, "waiting": pool.waiting, **pool.stats}
    return {"version": __version__, "pools": pools, "jobs_waiting": sum(1 for s in svc.jobs.values() if s.task is None),
            "jobs_running": sum(1 for s in svc.jobs.values() if s.task is not None),
            "limits": {k: getattr(svc.settings, k) for k in (
                "max_case_bytes", "max_register_bytes", "max_register_rows", "check_timeout", "memo_timeout",
                "batch_timeout", "max_queue", "max_jobs_queued")}}


@router.get("/v1/schema/case", tags=["reference"], summary="JSON Schema of the case-file format",
            responses={**AUTH})
async def case_schema(request: Request) -> JSONResponse:
    return JSONResponse(_service(request).case_schema())


@router.get("/v1/rules", tags=["reference"], summary="The rule sets this service offers", responses={**AUTH})
async def rule_sets(request: Request) -> dict:
    return {"rule_sets": [{"name": r.name, "title": r.title, "description": r.description, "sha256": r.sha256,
                           "url": f"/v1/rules/{r.name}"} for r in _service(request).rule_sets.values()]}


@router.get("/v1/rules/{name}", tags=["reference"], summary="One rule set file (TOML)",
            responses={**AUTH, **NOT_FOUND, 200: {"content": {"application/toml": {}}}})
async def rule_set_file(request: Request, name: str) -> Response:
    rs = _service(request).rule_sets.get(name)
    if rs is None:
        raise ServiceError(404, [("name", f"no rule set named {name!r}")])
    return Response(rs.data, media_type="application/toml", headers={"X-Rule-Set-Sha256": rs.sha256})


# ------------------------------------------------------------------ one case

@router.post("/v1/check", tags=["screening"], summary="Screen one case",
             description="The body is a case file (YAML, JSON or TOML, by Content-Type). The answer is the object "
                         "`heatscreen check --json` prints, plus `run_id`; the run is recorded. " + CAUTION,
             responses={200: {"content": {"application/json": {"schema": RESULT_SCHEMA}}}, **CASE_ERRORS},
             openapi_extra=_case_body("A case file, as `heatscreen check` reads it"))
async def check(request: Request, rules: RuleName = Query(RuleName("default"), description="Shipped rule set")):
    raw = await request.body()
    ct = request.headers.get("content-type")
    res = await _service(request).screen(raw, case_kind(ct), ct, rules.value)
    return JSONResponse({**res.public, "run_id": res.run_id},
                        headers={"X-Run-Id": res.run_id, "Location": f"/v1/runs/{res.run_id}", **CAUTION_HEADER})


@router.post("/v1/memo", tags=["screening"], summary="Screen one case and return its PDF review memo",
             responses={200: {"content": {"application/pdf": {}}, "description": "The memo (the run is recorded)"},
                        **CASE_ERRORS},
             openapi_extra=_case_body("A case file, as `heatscreen memo` reads it"))
async def memo(request: Request, rules: RuleName = Query(RuleName("default"), description="Shipped rule set")):
    raw = await request.body()
    ct = request.headers.get("content-type")
    res = await _service(request).screen(raw, case_kind(ct), ct, rules.value, memo=True)
    name = _safe_name(res.public.get("id")) or "memo"
    return Response(res.memo, media_type="application/pdf",
                    headers={"X-Run-Id": res.run_id, "Location": f"/v1/runs/{res.run_id}",
                             "Content-Disposition": f'attachment; filename="{name}.pdf"',
                             "X-Verdict": str(res.public.get("verdict")), **CAUTION_HEADER})


def _safe_name(value) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "_", str(value or ""))[:80].strip("._")


# ------------------------------------------------------------------ the record

@router.get("/v1/runs", tags=["record"], summary="List recorded runs, newest first", responses={**AUTH})
async def list_runs(request: Request, limit: int = Query(50, ge=1, le=500), offset: int = Query(0, ge=0, le=10**9),
                    kind: RunKind | None = Query(None), job: str | None = Query(None, max_length=32)) -> dict:
    rows, total = await _service(request).store.list_runs(limit, offset, kind.value if kind else None, job)
    for r in rows:
        r["run_id"] = r.pop("id")
        r["url"] = f"/v1/runs/{r['run_id']}"
    return {"runs": rows, "total": total, "limit": limit, "offset": offset}


def run_document(run) -> dict:
    data = run.input_bytes
    text = None
    b64 = None
    if data is not None:
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError:
            b64 = base64.b64encode(data).decode("ascii")
    templates = {k: v.get("sha256") for k, v in json.loads(run.templates_json or "{}").items()}
    doc = {
        "run_id": run.id, "seq": run.seq, "created_at": run.created_at, "kind": run.kind, "status": run.status,
        "job": run.job_id,
        "input": None if data is None else {"content_type": run.input_content_type, "kind": run.input_kind,
                                            "sha256": run.input_hash, "bytes": len(data), "text": text,
                                            "base64": b64},
        "input_hash": run.input_hash, "tool_version": run.tool_version,
        "rule_set": {"file": run.rule_set_file, "name": run.rule_set_name, "hash": run.rule_set_hash},
        "templates": templates, "fonts": json.loads(run.fonts_json or "{}"),
        "renderer": json.loads(run.renderer_json or "{}"),
        "source_date_epoch": run.source_date_epoch, "memo_date": run.memo_date,
        "verdict": run.verdict, "result": json.loads(run.result_json) if run.result_json else None,
        "memo": {"sha256": run.memo_sha256, "stored": run.memo is not None} if run.status == "ok" and
        run.memo_view_json else None,
        "error": run.error, "elapsed_s": run.elapsed_s,
        "links": {"self": f"/v1/runs/{run.id}"},
    }
    if data is not None:
        doc["links"]["input"] = f"/v1/runs/{run.id}/input"
    if doc["memo"] is not None:
        doc["links"]["memo"] = f"/v1/runs/{run.id}/memo"
    if run.job_id:
        doc["links"]["job"] = f"/v1/batch/{run.job_id}"
    return doc


@router.get("/v1/runs/{run_id}", tags=["record"], summary="One recorded run: inputs as sent, hashes, result, memo",
            responses={**AUTH, **NOT_FOUND})
async def get_run(request: Request, run_id: str) -> dict:
    run = await _service(request).store.get_run(_check_id(run_id, "run_id"))
    if run is None:
        raise ServiceError(404, [("run_id", "no run with this id")])
    return run_document(run)


@router.get("/v1/runs/{run_id}/input", tags=["record"], summary="The case exactly as it was sent",
            responses={**AUTH, **NOT_FOUND, 200: {"content": {"application/octet-stream": {}}}})
async def get_run_input(request: Request, run_id: str) -> Response:
    run = await _service(request).store.get_run(_check_id(run_id, "run_id"))
    if run is None or run.input_bytes is None:
        raise ServiceError(404, [("run_id", "no run with this id has a stored input")])
    media = {"yaml": "application/yaml", "json": "application/json", "toml": "application/toml"}.get(
        run.input_kind or "", "application/octet-stream")
    ext = {"application/yaml": "yaml", "application/json": "json", "application/toml": "toml"}.get(media, "bin")
    return Response(run.input_bytes, media_type=media,
                    headers={"Content-Disposition": f'attachment; filename="{run.id}.{ext}"',
                             "X-Input-Sha256": run.input_hash or ""})


@router.get("/v1/runs/{run_id}/memo", tags=["record"], summary="The run's memo (regenerated byte-identically on request)",
            description="Without `regenerate`, the stored memo (made and stored on first request for a run that had "
                        "none). With `regenerate=true` the memo is rendered again from the record with its stored "
                        "memo date; X-Memo-Identical tells whether it matches the stored one byte for byte.",
            responses={**AUTH, **NOT_FOUND, **BUSY, 200: {"content": {"application/pdf": {}}}})
async def get_run_memo(request: Request, run_id: str, regenerate: bool = Query(False)) -> Response:
    pdf, info = await _service(request).memo_for_run(_check_id(run_id, "run_id"), regenerate)
    headers = {"Content-Disposition": f'attachment; filename="{run_id}.pdf"', "X-Memo-Sha256": info["sha256"],
               "X-Memo-Identical": "true" if info["identical"] else "false",
               "X-Memo-Regenerated": "true" if info["regenerated"] else "false", **CAUTION_HEADER}
    if info["stored_sha256"]:
        headers["X-Stored-Memo-Sha256"] = info["stored_sha256"]
    if info["fonts_changed"]:
        headers["X-Fonts-Changed"] = ",".join(info["fonts_changed"])
    return Response(pdf, media_type="application/pdf", headers=headers)


# ------------------------------------------------------------------ registers

@router.post("/v1/batch", tags=["registers"], status_code=202, response_model=JobAccepted,
             summary="Screen a register (CSV or .xlsx) as a background job",
             description="Multipart form: `register` (the file), optional `base` (a case file the rows complete), "
                         "`rules` (a shipped rule set), `memos` (also write one memo per row). Register rows cannot "
                         "name case files. Poll the status URL. " + CAUTION,
             responses={**AUTH, 413: _err("A file over its size or row limit, or a workbook that would expand "
                                          "too far"),
                        422: _err("Missing or unreadable files, unknown rule set"), **BUSY})
async def batch(request: Request,
                register_file: UploadFile = File(..., alias="register", description="The register: CSV or .xlsx"),
                base: UploadFile | None = File(None, description="Optional base case (YAML, JSON or TOML)"),
                rules: RuleName = Form(RuleName("default")), memos: bool = Form(False)):
    svc = _service(request)
    s = svc.settings
    reg = await register_file.read(s.max_register_bytes + 1)
    base_bytes = None
    base_name = None
    if base is not None and (base.filename or base.size):
        base_bytes = await base.read(s.max_case_bytes + 1)
        base_name = base.filename
    job_id = await svc.submit_batch(reg, register_file.filename, base_bytes, base_name, rules.value, memos)
    url = f"/v1/batch/{job_id}"
    return JSONResponse({"job": job_id, "state": "queued", "status_url": url}, status_code=202,
                        headers={"Location": url})


@router.get("/v1/batch", tags=["registers"], summary="Recent register jobs", responses={**AUTH})
async def list_jobs(request: Request, limit: int = Query(50, ge=1, le=500)) -> dict:
    jobs = await _service(request).store.list_jobs(limit)
    for j in jobs:
        j["job"] = j.pop("id")
        j["url"] = f"/v1/batch/{j['job']}"
    return {"jobs": jobs}


FILE_ROUTES = {"results.json": "results.json", "results.csv": "results.csv", "errors.csv": "errors.csv",
               "summary.pdf": "summary.pdf", "memos.zip": "memos.zip"}


async def job_document(svc, job_id: str) -> dict:
    job = await svc.store.get_job(_check_id(job_id, "job_id"))
    if job is None:
        raise ServiceError(404, [("job_id", "no job with this id")])
    files = await svc.store.job_files(job_id) if job.state == "done" else []
    names = {f["name"] for f in files}
    base = f"/v1/batch/{job_id}"
    links = {"self": base}
    if job.state == "done":
        links["runs"] = f"/v1/runs?job={job_id}"
        for name in FILE_ROUTES:
            if name in names:
                links[name.replace(".", "_")] = f"{base}/{name}"
    if "errors.csv" in names or job.state == "invalid":
        links["errors_json"] = f"{base}/errors.json"
    return {
        "job": job.id, "state": job.state, "finished": job.state in TERMINAL_STATES,
        "created_at": job.created_at, "started_at": job.started_at, "finished_at": job.finished_at,
        "register": {"name": job.register_name, "format": job.register_format, "sha256": job.register_hash,
                     "bytes": len(job.register_bytes)},
        "base": None if job.base_bytes is None else {"kind": job.base_kind, "sha256": job.base_hash,
                                                     "bytes": len(job.base_bytes)},
        "rule_set": {"file": job.rule_set_file, "hash": job.rule_set_hash}, "memos": job.memos,
        "source_date_epoch": job.source_date_epoch, "tool_version": job.tool_version,
        "progress": svc.job_progress(job_id), "summary": json.loads(job.summary_json or "null"),
        "errors": [{"field": f, "message": m} for f, m in json.loads(job.problems_json or "[]")] or None,
        "error": job.error, "files": files, "links": links,
    }


@router.get("/v1/batch/{job_id}", tags=["registers"], summary="State of a register job, with links to its results",
            responses={**AUTH, **NOT_FOUND})
async def get_job(request: Request, job_id: str) -> dict:
    return await job_document(_service(request), job_id)


async def _job_file(request: Request, job_id: str, name: str) -> Response:
    svc = _service(request)
    f = await svc.store.job_file(_check_id(job_id, "job_id"), name)
    if f is None:
        raise ServiceError(404, [("job_id", f"job {job_id} has no {name} (not finished, or not asked for)")])
    headers = {"X-Sha256": f.sha256, **CAUTION_HEADER}
    if not name.endswith(".json"):
        headers["Content-Disposition"] = f'attachment; filename="{job_id}-{name}"'
    return Response(f.data, media_type=f.content_type, headers=headers)


def _file_route(name: str):
    media = CONTENT_TYPES[name].split(";")[0]

    async def endpoint(request: Request, job_id: str) -> Response:
        return await _job_file(request, job_id, name)

    endpoint.__name__ = "job_" + name.replace(".", "_")
    router.add_api_route(f"/v1/batch/{{job_id}}/{name}", endpoint, methods=["GET"], tags=["registers"],
                         summary=f"The job's {name}",
                         responses={**AUTH, **NOT_FOUND, 200: {"content": {media: {}}}})


for _name in FILE_ROUTES:
    _file_route(_name)


@router.get("/v1/batch/{job_id}/errors.json", tags=["registers"], summary="The job's errors as JSON",
            description="The rows that could not be screened (errors.csv as a list of objects), or for a register "
                        "refused as a whole, its problems.", responses={**AUTH, **NOT_FOUND})
async def job_errors_json(request: Request, job_id: str) -> dict:
    svc = _service(request)
    job = await svc.store.get_job(_check_id(job_id, "job_id"))
    if job is None:
        raise ServiceError(404, [("job_id", "no job with this id")])
    if job.state == "invalid":
        return {"job": job_id, "errors": [{"field": f, "message": m} for f, m in json.loads(job.problems_json or "[]")]}
    f = await svc.store.job_file(job_id, "errors.csv")
    if f is None:
        raise ServiceError(404, [("job_id", f"job {job_id} has no errors file (not finished)")])
    rows = csv.DictReader(io.StringIO(f.data.decode("utf-8-sig")))
    # JSON for programs: the cells as they were, without the apostrophe the CSV adds for spreadsheets
    return {"job": job_id, "errors": [{k: without_people_prefix(v) if isinstance(v, str) else v for k, v in r.items()}
                                      for r in rows]}


# ------------------------------------------------------------------ OpenAPI

def install_openapi(app) -> None:
    """The generated description, with the case-file JSON Schema as component ``CaseFile``."""

    def openapi() -> dict[str, Any]:
        if app.openapi_schema:
            return app.openapi_schema
        from screening.case.schema import case_json_schema

        doc = get_openapi(title=app.title, version=app.version, description=app.description, routes=app.routes)
        doc["paths"] = {p: v for p, v in doc["paths"].items() if not (p == "/" or p.startswith("/ui/"))}
        schema = copy.deepcopy(case_json_schema())
        defs = schema.pop("$defs", {})
        schema.pop("$schema", None)
        comps = doc.setdefault("components", {}).setdefault("schemas", {})
        for name, sub in defs.items():
            comps[name] = _rewrite_refs(sub)
        comps["CaseFile"] = _rewrite_refs(schema)
        doc["components"].setdefault("securitySchemes", {})["bearer"] = {
            "type": "http", "scheme": "bearer", "description": "Only when the service runs with a token"}
        if getattr(app.state, "settings", None) is not None and app.state.settings.token:
            doc["security"] = [{"bearer": []}]
            doc["paths"]["/health"]["get"]["security"] = []
        app.openapi_schema = doc
        return doc

    app.openapi = openapi


def _rewrite_refs(node):
    if isinstance(node, dict):
        return {k: (v.replace("#/$defs/", "#/components/schemas/") if k == "$ref" and isinstance(v, str)
                    else _rewrite_refs(v)) for k, v in node.items()}
    if isinstance(node, list):
        return [_rewrite_refs(v) for v in node]
    return node
