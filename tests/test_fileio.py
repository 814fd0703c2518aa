"""Reading users' files with limits, the operating system's refusals in words, umask-respecting outputs,
text made safe for a terminal, and JSON without inf or NaN."""
from __future__ import annotations

import errno
import json
import math
import os
import stat

import pytest

from screening.errors import EnvironmentProblem, InputError
from screening.fileio import environment_problem, os_problem, read_limited, short_path, with_umask
from screening.result import json_safe


def test_read_limited_reads_and_refuses_what_is_too_large(tmp_path):
    p = tmp_path / "a.yaml"
    p.write_bytes(b"x" * 100)
    assert read_limited(p, 100) == b"x" * 100
    with pytest.raises(EnvironmentProblem, match="larger than 99 bytes"):
        read_limited(p, 99)


def test_read_limited_refuses_a_sparse_giant_without_reading_it(tmp_path):
    p = tmp_path / "huge.csv"
    with open(p, "wb") as fh:
        fh.truncate(10 ** 12)  # a terabyte that takes no disk
    with pytest.raises(EnvironmentProblem, match="larger than"):
        read_limited(p, 1000)


@pytest.mark.parametrize("make, reason", [
    (lambda d: d / "missing.yaml", "no such file"),
    (lambda d: d, "folder"),
    (lambda d: d / ("x" * 5000), "too long"),
    (lambda d: str(d / "a\x00b"), "not allowed in a file name"),
])
def test_read_limited_says_why_in_words(tmp_path, make, reason):
    with pytest.raises(EnvironmentProblem) as info:
        read_limited(make(tmp_path), 100)
    assert reason in str(info.value)
    assert isinstance(info.value, InputError)


def test_read_limited_symlink_loop_and_pipe(tmp_path):
    os.symlink("b", tmp_path / "a")
    os.symlink("a", tmp_path / "b")
    with pytest.raises(EnvironmentProblem, match="loop"):
        read_limited(tmp_path / "a", 100)
    os.mkfifo(tmp_path / "pipe")
    with pytest.raises(EnvironmentProblem, match="not a regular file"):
        read_limited(tmp_path / "pipe", 100, regular_only=True)


def test_environment_problem_names_the_file_and_the_reason():
    exc = OSError(errno.ENOSPC, "No space left on device", "/data/out/results.json")
    problem = environment_problem(exc, "--out /data/out")
    assert "disk full" in str(problem) and "/data/out/results.json" in str(problem)
    assert environment_problem(OSError(errno.EROFS, "x"), "w").reason == "the file system is read-only"
    assert environment_problem(ValueError("x"), "w") is None
    assert environment_problem(OSError(errno.EIO, "I/O error"), "w") is None  # not the user's doing
    assert os_problem(OSError(errno.ELOOP, "x")) == "symbolic links point in a loop"


def test_short_path_cuts_and_escapes():
    text = short_path("/a/" + "x" * 1000 + "\x1b[2J")
    assert len(text) < 260 and "\x1b" not in text and "\\x1b" in text and "1007 characters" in text


def test_with_umask(tmp_path):
    p = tmp_path / "f"
    p.write_text("x")
    os.chmod(p, 0o600)
    old = os.umask(0o027)
    try:
        with_umask(p)
        assert stat.S_IMODE(p.stat().st_mode) == 0o640
        d = tmp_path / "d"
        d.mkdir(mode=0o700)
        with_umask(d, folder=True)
        assert stat.S_IMODE(d.stat().st_mode) == 0o750
    finally:
        os.umask(old)


def test_json_safe_nulls_non_finite_values_and_names_them():
    public = {"id": "A", "warnings": ["first"], "peak": math.inf, "nested": {"xs": [1.0, math.nan]}}
    out = json_safe(public)
    json.dumps(out, allow_nan=False)
    assert out["peak"] is None and out["nested"]["xs"] == [1.0, None]
    assert out["warnings"][0] == "first" and "peak, nested.xs.1" in out["warnings"][1]
    assert public["peak"] == math.inf, "the input is not changed"
    finite = {"id": "A", "warnings": [], "x": 1.0}
    assert json_safe(finite) is finite


def test_terminal_safe_escapes_control_characters():
    from screening.cli import terminal_safe

    text = "id T-1\x1b[2J\rPASS\x07 \x9b31m \u202eevil\nnext\tcol"
    safe = terminal_safe(text)
    assert "\x1b" not in safe and "\r" not in safe and "\x9b" not in safe and "\u202e" not in safe
    assert "\\u001b[2J" in safe and "\nnext\tcol" in safe
    # the escapes are JSON escapes: a JSON text stays valid and means the same
    doc = json.dumps({"id": "\x9b\x1b"}, ensure_ascii=False)
    assert json.loads(terminal_safe(doc)) == {"id": "\x9b\x1b"}
