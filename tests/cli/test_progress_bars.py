"""Progress bars (rich) on stderr only when stderr is a terminal; stdout (--json, --csv) unchanged.

A pseudo-terminal (``os.openpty``) stands in for the terminal on stderr while stdout is a pipe.
"""
from __future__ import annotations

import os
import select
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "screening" / "demo_cases"

pytestmark = pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs a pseudo-terminal")


def _run(args, tty: bool, cwd: Path):
    env = {**os.environ, "COLUMNS": "120", "PYTHONPATH": str(REPO)}
    cmd = [sys.executable, "-m", "screening.cli", *map(str, args)]
    if not tty:
        p = subprocess.run(cmd, capture_output=True, cwd=cwd, env=env, timeout=600)
        return p.returncode, p.stdout, p.stderr.decode("utf-8", "replace")
    master, slave = os.openpty()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=slave, stdin=subprocess.DEVNULL, cwd=cwd, env=env)
    os.close(slave)
    err = bytearray()
    out = bytearray()
    fds = {master: err, proc.stdout.fileno(): out}
    while fds:
        ready, _, _ = select.select(list(fds), [], [], 5.0)
        for fd in ready:
            try:
                chunk = os.read(fd, 65536)
            except OSError:  # the terminal's other end is closed: the process has ended
                chunk = b""
            if chunk:
                fds[fd] += chunk
            else:
                del fds[fd]
    proc.wait(timeout=600)
    os.close(master)
    return proc.returncode, bytes(out), err.decode("utf-8", "replace")


def test_monte_carlo_bar_on_a_terminal_and_json_unchanged(tmp_path):
    case = DEMO / "fw-t302-monomer-tank.yaml"
    code_plain, out_plain, err_plain = _run(["check", case, "--json"], tty=False, cwd=tmp_path)
    code_tty, out_tty, err_tty = _run(["check", case, "--json"], tty=True, cwd=tmp_path)
    assert code_plain == code_tty
    assert out_tty == out_plain  # stdout byte for byte
    assert "Monte Carlo: 20000 samples" in err_tty and "/s" in err_tty and "left" in err_tty
    assert "Monte Carlo" not in err_plain and err_plain == ""


def test_margin_bar_on_a_terminal_only(tmp_path):
    args = ["margin", DEMO / "fw-t204-hold-tank.yaml", "--vary", "heat_loss.ambient_temperature", "--json",
            "--points", "9"]
    _, out_plain, err_plain = _run(args, tty=False, cwd=tmp_path)
    _, out_tty, err_tty = _run(args, tty=True, cwd=tmp_path)
    assert out_tty == out_plain
    assert "margin: heat_loss.ambient_temperature" in err_tty
    assert err_plain == ""


def test_batch_bar_on_a_terminal_and_csv_unchanged(tmp_path):
    reg = DEMO / "registers" / "fenmarsh-register.csv"
    base = DEMO / "registers" / "fenmarsh-base.yaml"
    _, _, err_plain = _run(["batch", reg, "--base", base, "--out", tmp_path / "a"], tty=False, cwd=tmp_path)
    _, _, err_tty = _run(["batch", reg, "--base", base, "--out", tmp_path / "b"], tty=True, cwd=tmp_path)
    assert (tmp_path / "a" / "results.csv").read_bytes() == (tmp_path / "b" / "results.csv").read_bytes()
    assert "batch: rows" in err_tty
    assert "batch: rows" not in err_plain
