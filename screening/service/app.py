"""The heatscreen HTTP service: FastAPI app, its gatekeeping, and ``serve()``.

``serve(host, port, db, token)`` is what ``heatscreen serve`` calls.  It binds
to 127.0.0.1 unless told otherwise.  With a token every endpoint but
``/health`` wants ``Authorization: Bearer TOKEN`` (the web page also accepts a
cookie set by its own token form, so a browser can use it).
"""
from __future__ import annotations

import asyncio
import hmac
import ipaddress
import logging
import os
import sys
from contextlib import asynccontextmanager

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from starlette.exceptions import HTTPException as StarletteHTTPException

from screening import __version__
from screening.service import CAUTION
from screening.service.core import Service, ServiceError
from screening.service.settings import Settings
from screening.service.timeouts import FailureLimiter, header_timeout_protocol
from screening.service.ui_cookie import UI_COOKIE, ui_cookie_value

log = logging.getLogger("heatscreen.service")

SMALL_BODY = 64 * 1024
DRAIN_LIMIT = 64 * 1024 * 1024  # read and discard at most this much of a refused body, so the client sees the answer


def _ui_path(path: str) -> bool:
    return path == "/" or path.startswith("/ui/")


class Gate:
    """Pure ASGI middleware: token check, request-size limit, and response headers for every request."""

    def __init__(self, app, settings: Settings):
        self.app = app
        self.settings = settings
        self.token = settings.token
        self.cookie = ui_cookie_value(settings.token) if settings.token else None
        self.hosts = allowed_hosts(settings)
        self.failures = FailureLimiter(settings.auth_failures_burst, settings.auth_failures_per_s)

    def limit_for(self, path: str) -> int:
        s = self.settings
        if path in ("/v1/check", "/v1/memo"):
            return s.max_case_bytes
        if path == "/ui/check":
            return 2 * s.max_case_bytes + SMALL_BODY
        if path in ("/v1/batch", "/ui/batch"):
            return s.max_register_bytes + s.max_case_bytes + SMALL_BODY
        return SMALL_BODY

    def authorized(self, headers: dict, path: str) -> bool:
        auth = headers.get("authorization", "")
        scheme, _, value = auth.partition(" ")
        if scheme.lower() == "bearer" and hmac.compare_digest(value.strip().encode("utf-8", "replace"),
                                                              self.token.encode("utf-8")):
            return True
        if _ui_path(path):
            from http.cookies import SimpleCookie

            try:
                jar = SimpleCookie(headers.get("cookie", ""))
            except Exception:  # noqa: BLE001 - a malformed cookie header is no cookie
                return False
            morsel = jar.get(UI_COOKIE)
            if morsel is not None and hmac.compare_digest(morsel.value.encode(), self.cookie.encode()):
                return True
        return False

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            return await self.app(scope, receive, send)
        path = scope["path"]
        headers = {k.decode("latin-1").lower(): v.decode("latin-1") for k, v in scope["headers"]}
        send = self._with_headers(send, path)
        limit = self.limit_for(path)
        if self.hosts is not None and not host_allowed(headers.get("host", ""), self.hosts,
                                                       self.settings.bind_port):
            return await self._refuse(scope, receive, send, 400, "(host)",
                                      "the Host header names an address this service is not bound to (a page "
                                      "on another site may be trying to reach it); use the address it listens on")
        client = (scope.get("client") or ("?", 0))[0]
        if self.token and path not in ("/health", "/ui/login") and not self.authorized(headers, path):
            await _drain(receive, limit)
            if "authorization" in headers:  # a wrong token, not merely none: a guess
                if not self.failures.allowed(client):
                    return await self._too_many(scope, receive, send, client)
                self.failures.failed(client)
            return await self._unauthorized(scope, receive, send, path)
        if path == "/ui/login" and scope["method"] == "POST" and self.token:
            if not self.failures.allowed(client):
                await _drain(receive, limit)
                return await self._too_many(scope, receive, send, client)
            send = self._count_login_failure(send, client)
        if scope["method"] in ("POST", "PUT", "PATCH", "DELETE"):
            declared = headers.get("content-length", "")
            if declared.isdigit() and int(declared) > limit:
                if int(declared) <= DRAIN_LIMIT:
                    await _drain(receive, DRAIN_LIMIT)
                return await self._too_large(scope, receive, send, path, limit)
            body = bytearray()
            more = True
            while more:
                try:
                    message = await asyncio.wait_for(receive(), self.settings.body_timeout or None)
                except asyncio.TimeoutError:
                    return await self._refuse(scope, receive, send, 408, "(body)",
                                              f"no part of the request body arrived for "
                                              f"{self.settings.body_timeout:g} s", close=True)
                if message["type"] == "http.disconnect":
                    return
                body += message.get("body", b"")
                more = message.get("more_body", False)
                if len(body) > limit:
                    await _drain(receive, DRAIN_LIMIT, already=len(body), more=more)
                    return await self._too_large(scope, receive, send, path, limit)
            receive = _replay(bytes(body), receive)
        return await self.app(scope, receive, send)

    def _count_login_failure(self, send, client: str):
        """A login form answered 401 (a wrong token) counts as a failed attempt of its client."""

        async def wrapped(message):
            if message["type"] == "http.response.start" and message.get("status") == 401:
                self.failures.failed(client)
            await send(message)

        return wrapped

    async def _refuse(self, scope, receive, send, status: int, field: str, message: str, close: bool = False):
        headers = {"Connection": "close"} if close else None
        response = JSONResponse({"errors": [{"field": field, "message": message}]}, status_code=status,
                                headers=headers)
        await response(scope, receive, send)

    async def _too_many(self, scope, receive, send, client: str):
        wait = self.failures.retry_after(client)
        response = JSONResponse({"errors": [{"field": "(authorization)",
                                             "message": f"too many wrong tokens from this address; try again in "
                                                        f"{wait} s"}]},
                                status_code=429, headers={"Retry-After": str(wait)})
        await response(scope, receive, send)

    def _with_headers(self, send, path):
        async def wrapped(message):
            if message["type"] == "http.response.start":
                hdrs = list(message.get("headers", []))
                names = {k.lower() for k, _ in hdrs}
                # same-origin, not no-referrer, for the web page: a form posted under no-referrer carries
                # "Origin: null", which the forms refuse (it is also what a page on another site can send)
                policy = b"same-origin" if _ui_path(path) else b"no-referrer"
                extra = [(b"x-content-type-options", b"nosniff"), (b"referrer-policy", policy),
                         (b"x-frame-options", b"DENY"), (b"cache-control", b"no-store")]
                if _ui_path(path):
                    extra.append((b"content-security-policy",
                                  b"default-src 'none'; style-src 'unsafe-inline'; img-src 'self' data:; "
                                  b"form-action 'self'; frame-ancestors 'none'; base-uri 'none'"))
                hdrs += [(k, v) for k, v in extra if k not in names]
                message = {**message, "headers": hdrs}
            await send(message)

        return wrapped

    async def _unauthorized(self, scope, receive, send, path):
        if _ui_path(path) and scope["method"] == "GET":
            from screening.service.web import login_page

            response = login_page(status=401)
        else:
            response = JSONResponse({"errors": [{"field": "(authorization)",
                                                 "message": "this service wants Authorization: Bearer <token>"}]},
                                    status_code=401, headers={"WWW-Authenticate": 'Bearer realm="heatscreen"'})
        await response(scope, receive, send)

    async def _too_large(self, scope, receive, send, path, limit):
        message = f"the request body is larger than {limit} bytes"
        if _ui_path(path):
            from screening.service.web import message_page

            response = message_page("Too large", message, status=413)
        else:
            response = JSONResponse({"errors": [{"field": "(body)", "message": message}]}, status_code=413,
                                    headers={"Connection": "close"})
        await response(scope, receive, send)


async def _drain(receive, cap: int, already: int = 0, more: bool = True) -> None:
    seen = already
    while more and seen <= cap:
        message = await receive()
        if message["type"] != "http.request":
            return
        seen += len(message.get("body", b""))
        more = message.get("more_body", False)


def _replay(body: bytes, receive):
    sent = False

    async def replay():
        nonlocal sent
        if not sent:
            sent = True
            return {"type": "http.request", "body": body, "more_body": False}
        return await receive()

    return replay


def _problems_from_validation(exc: RequestValidationError) -> list[dict]:
    out = []
    for err in exc.errors():
        loc = [str(p) for p in err.get("loc", ()) if p not in ("body",)] or ["(request)"]
        out.append({"field": ".".join(loc), "message": str(err.get("msg", "invalid value"))})
    return out


def create_app(settings: Settings) -> FastAPI:
    @asynccontextmanager
    async def lifespan(app: FastAPI):
        service = Service(settings)
        await service.start()
        app.state.service = service
        log.info("heatscreen service ready: %d case workers, %d register worker(s), record %s",
                 settings.workers, settings.batch_workers, _safe_url(settings.db_url))
        try:
            yield
        finally:
            log.info("heatscreen service stopping")
            await service.stop()
            log.info("heatscreen service stopped")

    app = FastAPI(
        title="heatscreen screening service",
        version=__version__,
        description=("Loss-of-cooling and runaway screening for process vessels, over HTTP: the same results as "
                     "`heatscreen check --json`, memos as `heatscreen memo`, registers as background jobs. "
                     "Every run is recorded.\n\n**" + CAUTION + "**"),
        docs_url=None, redoc_url=None, openapi_url="/openapi.json", lifespan=lifespan)
    app.state.settings = settings

    @app.exception_handler(ServiceError)
    async def _service_error(request: Request, exc: ServiceError):
        if _ui_path(request.url.path):
            from screening.service.web import message_page

            return message_page("Request refused", "; ".join(m for _, m in exc.problems), status=exc.status)
        headers = dict(exc.headers)
        if exc.run_id:
            headers["X-Run-Id"] = exc.run_id
        return JSONResponse(exc.body(), status_code=exc.status, headers=headers)

    @app.exception_handler(RequestValidationError)
    async def _validation_error(request: Request, exc: RequestValidationError):
        return JSONResponse({"errors": _problems_from_validation(exc)}, status_code=422)

    @app.exception_handler(StarletteHTTPException)
    async def _http_error(request: Request, exc: StarletteHTTPException):
        if _ui_path(request.url.path) and exc.status_code == 404:
            from screening.service.web import message_page

            return message_page("Not found", str(exc.detail), status=404)
        return JSONResponse({"errors": [{"field": "(request)", "message": str(exc.detail)}]},
                            status_code=exc.status_code, headers=getattr(exc, "headers", None))

    @app.exception_handler(Exception)
    async def _internal(request: Request, exc: Exception):
        log.exception("internal error on %s %s", request.method, request.url.path)
        return JSONResponse({"errors": [{"field": "(server)", "message": "internal error; see the server log"}]},
                            status_code=500)

    from screening.service.api import install_openapi
    from screening.service.api import router as api_router
    from screening.service.web import router as web_router

    app.include_router(api_router)
    app.include_router(web_router)
    install_openapi(app)
    app.add_middleware(Gate, settings=settings)
    return app


def _safe_url(url: str) -> str:
    """The database URL without a password, for the log."""
    if "@" in url and "://" in url:
        scheme, rest = url.split("://", 1)
        return f"{scheme}://***@{rest.rsplit('@', 1)[1]}"
    return url


_LOOPBACK_NAMES = ("localhost", "127.0.0.1", "::1")
_WILDCARDS = ("0.0.0.0", "::", "")


def allowed_hosts(settings: Settings) -> set[str] | None:
    """Host names (lower case, without port) requests may give; None: any (no bound address known,
    or a wildcard bind without HEATSCREEN_ALLOWED_HOSTS)."""
    extra = {h.strip().lower().strip("[]") for h in settings.allowed_hosts.split(",") if h.strip()}
    bound = (settings.bind_host or "").strip().lower().strip("[]")
    if settings.bind_host is None or (bound in _WILDCARDS and not extra):
        return None
    names = set(extra)
    if bound not in _WILDCARDS:
        names.add(bound)
    if bound in _WILDCARDS or _is_loopback(bound):
        names.update(_LOOPBACK_NAMES)
    return names


def host_allowed(header: str, names: set[str], port: int | None) -> bool:
    """Whether a Host header names one of ``names`` (a port, if given, must be the bound one)."""
    value = header.strip().lower()
    if not value:
        return False
    if value.startswith("["):  # [v6]:port
        host, _, rest = value[1:].partition("]")
        given_port = rest[1:] if rest.startswith(":") else None
    elif value.count(":") == 1:
        host, given_port = value.split(":")
    else:
        host, given_port = value, None
    if given_port is not None and port is not None and given_port != str(port):
        return False
    return host.rstrip(".") in names


def _is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def serve(host: str = "127.0.0.1", port: int = 8000, db: str | None = None, token: str | None = None) -> None:
    """Run the service until interrupted (Ctrl-C or SIGTERM finish or record the work in flight)."""
    import uvicorn

    settings = Settings.from_env(db=db, token=token)
    settings.bind_host, settings.bind_port = host, port
    logging.basicConfig(level=logging.INFO, format="%(asctime)s %(levelname)s %(name)s: %(message)s",
                        stream=sys.stderr)
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")  # inherited by the worker processes
    if not _is_loopback(host):
        log.warning("listening on %s, not loopback: the service has no TLS; %s", host,
                    "a token is set" if settings.token else "NO TOKEN IS SET, anyone who can reach it can use it")
    print(f"heatscreen service on http://{host}:{port}/  (record: {_safe_url(settings.db_url)})", file=sys.stderr)
    print(CAUTION, file=sys.stderr)
    config = uvicorn.Config(create_app(settings), host=host, port=port, lifespan="on", log_level="info",
                            access_log=False, server_header=False, proxy_headers=False,
                            limit_concurrency=settings.limit_concurrency,
                            timeout_graceful_shutdown=int(settings.shutdown_grace) or None, timeout_keep_alive=5,
                            http=header_timeout_protocol(settings.header_timeout))
    uvicorn.Server(config).run()
