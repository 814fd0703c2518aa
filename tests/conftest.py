"""Shared fixtures: the test-data folder, running a case text end to end, and the CLI."""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "data"


@pytest.fixture
def data_dir() -> Path:
    """tests/data: case files used by the tests."""
    return DATA


@pytest.fixture
def screen_text():
    """Screen a case given as text: load_case_bytes -> prepare_case -> screen_prepared -> result dict."""
    from screening.case.files import load_case_bytes
    from screening.case.prepare import prepare_case
    from screening.run.screen_case import screen_prepared

    def run(text: str | bytes, kind: str = "yaml") -> dict:
        raw = text.encode("utf-8") if isinstance(text, str) else text
        loaded = load_case_bytes(raw, kind)
        return screen_prepared(prepare_case(loaded.spec), loaded.input_hash)

    return run


@pytest.fixture
def run_cli():
    """Run ``python -m screening.cli ARGS`` in a subprocess from the repository root."""

    def run(*args: str, cwd: str | Path | None = None, timeout: float = 120.0) -> subprocess.CompletedProcess:
        env = dict(os.environ)
        env["PYTHONPATH"] = str(REPO) + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
        return subprocess.run([sys.executable, "-m", "screening.cli", *map(str, args)], cwd=str(cwd or REPO),
                              env=env, capture_output=True, text=True, timeout=timeout)

    return run
