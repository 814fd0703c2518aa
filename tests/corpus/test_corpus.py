"""The corpus of malformed inputs (``corpus.py``): every entry has exactly its expected outcome, and the
table (tried, clean error, wrong exit code, traceback, hang, silently wrong) has no row but the first two
non-zero. The command-line entries run here; the service entries (a server on 127.0.0.1) are marked slow.
"""
from __future__ import annotations

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))

from run_corpus import ROWS, format_table, run_all, table  # noqa: E402

from corpus import entries  # noqa: E402


def _check(outcomes, capsys):
    with capsys.disabled():
        print("\n" + format_table(outcomes))
    counts = table(outcomes)
    assert counts["tried"] > 0
    assert all(counts[row] == 0 for row in ROWS[2:]), format_table(outcomes)
    assert counts["clean error"] == counts["tried"]


def test_corpus_through_the_command_line(tmp_path, capsys):
    outcomes = run_all([e for e in entries() if e.service is None], root=tmp_path)
    _check(outcomes, capsys)


@pytest.mark.slow
def test_corpus_through_the_service(tmp_path, capsys):
    pytest.importorskip("fastapi")
    pytest.importorskip("httpx")
    outcomes = run_all([e for e in entries() if e.service is not None], root=tmp_path)
    _check(outcomes, capsys)


def test_every_defect_of_the_issue_has_an_entry():
    defects = {e.defect.split(" ", 1)[1] for e in entries()}
    for wanted in ("long text", "huge integers", "deeply nested JSON", "unhashable YAML key",
                   "fire environment_factor NaN", "sd: inf %", "tiny vessel diameter", "1e30 W/kg at order 1",
                   "symlink loop in case_file", "long case_file name", "cell over 131 KB", "XML bomb inside xlsx",
                   "external entity inside xlsx", "read-only output folder", "disk full", "never 500 for a valid case",
                   "Monte Carlo limit", "empty token", "Host header", "Origin: null",
                   "delimiter from the header row", "control characters", "size limits while reading",
                   "outputs never overwrite an input", "umask", "inverted tested_range",
                   "boiling point below the start", "recovery medium hotter than a limit", "bad calorimeter file"):
        assert wanted in defects, wanted
