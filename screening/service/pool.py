"""A bounded pool of worker processes with a time limit on every task.

Screening never runs on the event loop.  Each task goes to one of a fixed
number of worker processes (started with ``spawn``, so they share nothing with
the server's threads).  A task that overruns its time limit, or whose worker
dies, costs only that worker: it is killed and a fresh one takes its place.
Requests beyond ``max_waiting`` waiting for a worker, or that wait longer than
``wait_timeout``, are refused with :class:`PoolBusy` (the service answers 503).

The pool's own threads only wait on pipes; the event loop awaits them.
"""
from __future__ import annotations

import asyncio
import logging
import multiprocessing
import threading
import time
from concurrent.futures import ThreadPoolExecutor
from typing import Any, Callable

log = logging.getLogger("heatscreen.service")

READY_TIMEOUT = 120.0  # a fresh worker imports numpy, scipy, pint and reportlab


class PoolBusy(Exception):
    """No worker free soon enough, or too many requests already waiting."""


class PoolClosed(Exception):
    """The pool is shutting down."""


class TaskTimeout(Exception):
    """The task overran its time limit; its worker was killed and replaced."""


class WorkerCrashed(Exception):
    """The worker died while running the task (killed, out of memory, ...)."""


class TaskFailed(Exception):
    """The task ran and reported a problem: ``kind`` and ``payload`` come from the worker."""

    def __init__(self, kind: str, payload: Any):
        super().__init__(kind)
        self.kind = kind
        self.payload = payload


class _Worker:
    def __init__(self, ctx, name: str, memory_mb: int, scratch: str | None = None):
        from screening.service import tasks

        parent, child = ctx.Pipe(duplex=True)
        self.proc = ctx.Process(target=tasks.worker_main, args=(child, memory_mb, scratch), name=name, daemon=True)
        self.proc.start()
        child.close()
        self.conn = parent
        self.name = name
        if not parent.poll(READY_TIMEOUT):
            self.kill()
            raise WorkerCrashed(f"worker {name} did not start within {READY_TIMEOUT:.0f} s")
        try:
            msg = parent.recv()
        except (EOFError, OSError):
            self.kill()
            raise WorkerCrashed(f"worker {name} exited while starting (exit code {self.proc.exitcode})") from None
        if msg[0] != "ready":  # pragma: no cover - protocol error
            self.kill()
            raise WorkerCrashed(f"worker {name} sent {msg[0]!r} instead of ready")
        self.pid = msg[1]

    def run(self, task: str, args: dict, timeout: float, on_progress: Callable | None):
        deadline = time.monotonic() + timeout
        try:
            self.conn.send((task, args))
        except (OSError, EOFError):
            raise WorkerCrashed(f"worker {self.name} is gone") from None
        while True:
            remaining = deadline - time.monotonic()
            if remaining <= 0:
                raise TaskTimeout(f"{task} ran longer than {timeout:g} s")
            try:
                ready = self.conn.poll(min(remaining, 0.25))
                if ready:
                    msg = self.conn.recv()
                elif not self.proc.is_alive():
                    raise EOFError
                else:
                    continue
            except (EOFError, OSError):
                code = self.proc.exitcode
                raise WorkerCrashed(f"the worker stopped while running {task} (exit code {code})") from None
            if msg[0] == "progress":
                if on_progress is not None:
                    try:
                        on_progress(msg[1])
                    except Exception:  # noqa: BLE001 - progress reporting must not break a task
                        log.exception("progress callback failed")
                continue
            if msg[0] == "ok":
                return msg[1]
            raise TaskFailed(msg[0], msg[1])

    def stop(self, wait: float = 5.0) -> None:
        try:
            self.conn.send(("stop", None))
        except (OSError, EOFError):
            pass
        self.proc.join(wait)
        if self.proc.is_alive():
            self.kill()
        else:
            self.conn.close()

    def kill(self) -> None:
        if self.proc.is_alive():
            self.proc.kill()
        self.proc.join(10)
        try:
            self.conn.close()
        except OSError:  # pragma: no cover
            pass


class WorkerPool:
    """``size`` worker processes; :meth:`run` sends one task to a free one."""

    def __init__(self, name: str, size: int, *, memory_mb: int = 0, max_waiting: int = 256,
                 wait_timeout: float = 60.0, scratch: str | None = None):
        self.name = name
        self.scratch = scratch
        self.size = size
        self.memory_mb = memory_mb
        self.max_waiting = max_waiting
        self.wait_timeout = wait_timeout
        self._ctx = multiprocessing.get_context("spawn")
        self._threads = ThreadPoolExecutor(size + 1, thread_name_prefix=f"hs-{name}")
        self._idle: asyncio.Queue | None = None
        self._loop: asyncio.AbstractEventLoop | None = None
        self._busy: set[_Worker] = set()
        self._lock = threading.Lock()
        self._serial = 0
        self.closed = False
        self.waiting = 0
        self.stats = {"completed": 0, "timeouts": 0, "crashes": 0, "refused": 0, "replaced": 0}

    # ------------------------------------------------------------ lifecycle
    async def start(self) -> None:
        self._loop = asyncio.get_running_loop()
        self._idle = asyncio.Queue()
        workers = await asyncio.gather(*[self._loop.run_in_executor(self._threads, self._spawn)
                                         for _ in range(self.size)])
        for w in workers:
            self._idle.put_nowait(w)

    def _spawn(self) -> _Worker:
        with self._lock:
            self._serial += 1
            name = f"heatscreen-{self.name}-{self._serial}"
        last = None
        for _ in range(3):
            try:
                return _Worker(self._ctx, name, self.memory_mb, self.scratch)
            except WorkerCrashed as exc:
                last = exc
                log.error("%s", exc)
        raise last  # type: ignore[misc]

    async def close(self, grace: float = 0.0) -> None:
        """Refuse new tasks, let running ones finish for up to ``grace`` seconds, then stop every worker."""
        self.closed = True
        deadline = time.monotonic() + grace
        while self._busy and time.monotonic() < deadline:
            await asyncio.sleep(0.05)
        self.kill_busy()
        idle = []
        while self._idle is not None and not self._idle.empty():
            idle.append(self._idle.get_nowait())
        loop = asyncio.get_running_loop()
        await asyncio.gather(*[loop.run_in_executor(None, w.stop) for w in idle])
        self._threads.shutdown(wait=False, cancel_futures=True)

    def kill_busy(self) -> None:
        """Kill the workers that are running a task (their tasks end with WorkerCrashed)."""
        for w in list(self._busy):
            if w.proc.is_alive():
                w.proc.kill()

    @property
    def busy(self) -> int:
        return len(self._busy)

    # ------------------------------------------------------------ running tasks
    async def run(self, task: str, args: dict, timeout: float, on_progress: Callable | None = None):
        """Run ``task`` in a worker and return its value.

        Raises PoolBusy, PoolClosed, TaskTimeout, WorkerCrashed or TaskFailed.
        """
        if self.closed:
            raise PoolClosed()
        if self.waiting >= self.max_waiting:
            self.stats["refused"] += 1
            raise PoolBusy(f"{self.waiting} requests are already waiting for a worker")
        self.waiting += 1
        try:
            worker = await asyncio.wait_for(self._idle.get(), self.wait_timeout)
        except (TimeoutError, asyncio.TimeoutError):
            self.stats["refused"] += 1
            raise PoolBusy(f"no worker became free within {self.wait_timeout:g} s") from None
        finally:
            self.waiting -= 1
        if self.closed:
            self._give_back(worker)
            raise PoolClosed()
        self._busy.add(worker)
        fut = self._loop.run_in_executor(self._threads, self._execute, worker, task, args, timeout, on_progress)
        return await fut

    def _execute(self, worker: _Worker, task, args, timeout, on_progress):
        """In a pool thread: run the task; on timeout or crash replace the worker. Always hands a worker back."""
        replacement = worker
        try:
            value = worker.run(task, args, timeout, on_progress)
            self.stats["completed"] += 1
            return value
        except TaskFailed:
            self.stats["completed"] += 1
            raise
        except (TaskTimeout, WorkerCrashed) as exc:
            self.stats["timeouts" if isinstance(exc, TaskTimeout) else "crashes"] += 1
            log.warning("worker %s (pid %s): %s; replacing it", worker.name, worker.pid, exc)
            worker.kill()
            replacement = None
            if not self.closed:
                try:
                    replacement = self._spawn()
                    self.stats["replaced"] += 1
                except WorkerCrashed:
                    log.error("could not start a replacement worker; the %s pool is one smaller", self.name)
            raise
        finally:
            self._busy.discard(worker)
            if replacement is not None:
                self._loop.call_soon_threadsafe(self._give_back, replacement)

    def _give_back(self, worker: _Worker) -> None:
        if self.closed:
            self._loop.run_in_executor(None, worker.stop)
        else:
            self._idle.put_nowait(worker)
