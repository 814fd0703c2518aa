"""Worker processes that never outlive the process that started them.

A pool's workers wait on a pipe whose writing end they inherited, so when their parent is killed
outright (kill -9, the out-of-memory killer) they would wait, or go on computing, for ever. Each
worker asks the kernel to kill it when its parent dies (Linux ``PR_SET_PDEATHSIG``) and, where
that is not available, watches its parent from a thread. :func:`stop_pool` ends a pool's workers
at once when the parent itself stops early (an error, Ctrl-C, SIGTERM).
"""
from __future__ import annotations

import os
import signal
import sys
import threading

_PR_SET_PDEATHSIG = 1


def die_with_parent(parent_pid: int) -> None:
    """Pool initializer: end this process when ``parent_pid`` (the process that made the pool) ends."""
    if sys.platform.startswith("linux"):
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
        except (OSError, AttributeError):  # pragma: no cover - no prctl: the thread below still watches
            pass
    if os.getppid() != parent_pid:  # the parent died before the request took effect
        os._exit(1)
    _watch(parent_pid)


def _watch(parent_pid: int, every_s: float = 1.0) -> None:
    """A daemon thread that ends the process once its parent has gone (it is then re-parented)."""

    def run():
        import time

        while True:
            time.sleep(every_s)
            if os.getppid() != parent_pid:
                os._exit(1)

    threading.Thread(target=run, name="heatscreen-parent-watch", daemon=True).start()


def stop_pool(pool) -> None:
    """Cancel a ``ProcessPoolExecutor``'s pending work and end its worker processes now, rather than
    letting the chunks under way run to their end."""
    processes = list((getattr(pool, "_processes", None) or {}).values())  # the executor keeps no public list
    pool.shutdown(wait=False, cancel_futures=True)
    for proc in processes:
        try:
            proc.terminate()
        except (OSError, ValueError, AttributeError):
            pass
    for proc in processes:
        try:
            proc.join(5)
            if proc.is_alive():
                proc.kill()
        except (OSError, ValueError, AttributeError, AssertionError):
            pass


def exit_on_signals(signals=("SIGTERM", "SIGHUP")) -> None:
    """Turn these signals into ``SystemExit(128 + number)`` in this (the main) process, so that its
    cleanup (``finally`` blocks, temporary folders) runs as it does for Ctrl-C; a worker forked from
    it that receives one simply exits."""
    main = os.getpid()

    def handler(signum, _frame):
        if os.getpid() != main:
            os._exit(128 + signum)
        raise SystemExit(128 + signum)

    for name in signals:
        sig = getattr(signal, name, None)
        if sig is not None:
            try:
                signal.signal(sig, handler)
            except (OSError, ValueError):  # not the main thread, or not allowed here
                pass
