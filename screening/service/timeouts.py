"""Time limits on reading a request, and a limit on failed token attempts.

uvicorn closes idle keep-alive connections but waits for ever for the rest of a request's
headers: a few hundred clients that send half a request and stop would hold every connection
slot, and every other request (``/health`` included) would get 503 while they wait. The
protocol here closes a connection whose request line and headers are not complete
``header_timeout`` seconds after their first byte (or after the connection opened); the body is
timed by the gate middleware (``body_timeout`` between parts, then 408).
"""
from __future__ import annotations

import time

from uvicorn.protocols.http.h11_impl import H11Protocol

_TIMEOUT_RESPONSE = (b"HTTP/1.1 408 Request Timeout\r\nContent-Type: application/json\r\nConnection: close\r\n"
                     b"Content-Length: %d\r\n\r\n%s")


def header_timeout_protocol(seconds: float):
    """An h11 protocol class for uvicorn (``Config(http=...)``) with a time limit on request heads."""

    class HeadTimedH11Protocol(H11Protocol):
        header_timeout = float(seconds)

        def connection_made(self, transport):
            super().connection_made(transport)
            self._head_timer = None
            self._arm_head_timer()

        def _arm_head_timer(self):
            self._cancel_head_timer()
            if self.header_timeout > 0:
                self._head_timer = self.loop.call_later(self.header_timeout, self._head_timed_out)

        def _cancel_head_timer(self):
            timer = getattr(self, "_head_timer", None)
            if timer is not None:
                timer.cancel()
                self._head_timer = None

        def _between_requests(self) -> bool:
            return self.cycle is None or self.cycle.response_complete

        def data_received(self, data: bytes) -> None:
            cycle = self.cycle
            if self._between_requests() and self._head_timer is None:
                self._arm_head_timer()  # the first bytes of the next request on a kept-alive connection
            super().data_received(data)
            if self.cycle is not cycle:  # a new request's headers are complete
                self._cancel_head_timer()

        def on_response_complete(self) -> None:
            cycle = self.cycle
            super().on_response_complete()
            if self.cycle is not cycle:  # a pipelined request already under way
                self._cancel_head_timer()

        def connection_lost(self, exc) -> None:
            self._cancel_head_timer()
            super().connection_lost(exc)

        def _head_timed_out(self) -> None:
            self._head_timer = None
            if not self._between_requests() or self.transport.is_closing():
                return
            body = (b'{"errors": [{"field": "(request)", "message": "the request line and headers were not '
                    b'received within %g s"}]}' % self.header_timeout)
            try:
                self.transport.write(_TIMEOUT_RESPONSE % (len(body), body))
            finally:
                self.transport.close()

    return HeadTimedH11Protocol


class FailureLimiter:
    """Failed token attempts per client address, as a token bucket: ``burst`` at once, then
    ``per_s`` a second. :meth:`allowed` says whether an attempt may be checked now."""

    MAX_CLIENTS = 10_000

    def __init__(self, burst: int, per_s: float):
        self.burst = max(1, int(burst))
        self.per_s = max(float(per_s), 1e-6)
        self._buckets: dict[str, tuple[float, float]] = {}

    def _level(self, client: str, now: float) -> float:
        level, since = self._buckets.get(client, (float(self.burst), now))
        return min(float(self.burst), level + (now - since) * self.per_s)

    def allowed(self, client: str) -> bool:
        return self._level(client, time.monotonic()) >= 1.0

    def retry_after(self, client: str) -> int:
        level = self._level(client, time.monotonic())
        return max(1, int((1.0 - level) / self.per_s + 0.999))

    def failed(self, client: str) -> None:
        now = time.monotonic()
        if len(self._buckets) >= self.MAX_CLIENTS and client not in self._buckets:
            self._buckets = {k: v for k, v in self._buckets.items() if self._level(k, now) < self.burst}
        self._buckets[client] = (self._level(client, now) - 1.0, now)
