"""Progress of long runs (a register, an allowable-value scan, a Monte Carlo analysis), reported to
whoever is listening: the command line draws a bar on an interactive terminal; otherwise nothing.

Code that does long work says what it does and how far it is::

    with progress.task("Monte Carlo", total=n) as advance:
        ...
        advance(k)

The command line installs a reporter for the duration of a command (:func:`reporting`); with none
installed (tests, the service, output piped to a file) a task costs nothing and prints nothing.
Standard library only: this module sits below every layer.
"""
from __future__ import annotations

import contextlib
import contextvars
from collections.abc import Callable, Iterator

_reporter: contextvars.ContextVar = contextvars.ContextVar("heatscreen_progress", default=None)


def active() -> bool:
    """Whether a reporter is listening (work may then report in smaller steps)."""
    return _reporter.get() is not None


@contextlib.contextmanager
def reporting(reporter) -> Iterator[None]:
    """Install ``reporter`` (an object with ``start(description, total) -> handle``; the handle has
    ``advance(n)``, ``add_total(n)`` and ``close()``) while the block runs."""
    token = _reporter.set(reporter)
    try:
        yield
    finally:
        _reporter.reset(token)


class _Advance:
    def __init__(self, handle):
        self._handle = handle

    def __call__(self, n: float = 1) -> None:
        if self._handle is not None:
            self._handle.advance(n)

    def add_total(self, n: float) -> None:
        """More work than announced (found on the way)."""
        if self._handle is not None:
            self._handle.add_total(n)


@contextlib.contextmanager
def task(description: str, total: float) -> Iterator[Callable]:
    """A unit of long work; yields ``advance(n)`` (with ``advance.add_total(n)``)."""
    reporter = _reporter.get()
    handle = reporter.start(description, total) if reporter is not None else None
    try:
        yield _Advance(handle)
    finally:
        if handle is not None:
            handle.close()
