"""What a killed batch leaves behind: no worker process outlives its parent, no temporary folder outlives
the run (SIGTERM) or the next run (kill -9), and the output folder holds the old or the new set at every
moment of the swap."""
from __future__ import annotations

import csv
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from screening.register import output_set as os_mod
from screening.register.output_set import MARKER, recover_leftovers, swap_in, write_marker

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "screening" / "demo_cases"

linux_only = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")


def _register(path: Path, copies: int) -> None:
    rows = list(csv.reader((DEMO / "registers" / "fenmarsh-register.csv").read_text(encoding="utf-8").splitlines()))
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(rows[0])
        for i in range(copies):
            for r in rows[1:]:
                w.writerow([f"{r[0]}-{i}"] + r[1:])


def _start_batch(tmp_path: Path, copies: int = 30) -> subprocess.Popen:
    reg = tmp_path / "reg.csv"
    _register(reg, copies)
    env = dict(os.environ, PYTHONPATH=str(REPO))
    # --memos with more than 8 rows: two worker processes
    return subprocess.Popen([sys.executable, "-m", "screening.cli", "batch", str(reg), "--out", str(tmp_path / "out"),
                             "--base", str(DEMO / "registers" / "fenmarsh-base.yaml"), "--memos"],
                            cwd=str(tmp_path), env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                            start_new_session=True)


def _children(pid: int) -> list[int]:
    out = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == pid:
                out.append(int(entry.name))
    return out


def _alive(pid: int) -> bool:
    """Running (a zombie that nobody has reaped yet has ended)."""
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


def _wait(predicate, timeout: float) -> bool:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if predicate():
            return True
        time.sleep(0.1)
    return predicate()


def _build_folders(tmp_path: Path) -> list[str]:
    return sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".out."))


@linux_only
def test_kill_9_leaves_no_orphan_workers_and_the_next_run_clears_the_folder(tmp_path):
    proc = _start_batch(tmp_path)
    try:
        assert _wait(lambda: len(_children(proc.pid)) >= 2, 60), "the batch did not start its two workers"
        workers = _children(proc.pid)
        assert _wait(lambda: _build_folders(tmp_path), 30)
        proc.send_signal(signal.SIGKILL)
        proc.wait(10)
        # the workers die with their parent (within the watch interval at most)
        assert _wait(lambda: not any(_alive(w) for w in workers), 15), [w for w in workers if _alive(w)]
    finally:
        for pid in [proc.pid] + _children(proc.pid):
            try:
                os.kill(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
    assert _build_folders(tmp_path), "kill -9 leaves the build folder (nothing can run in the process)"
    # the next run for the same output folder clears what the dead run left
    small = tmp_path / "small.csv"
    _register(small, 1)
    p = subprocess.run([sys.executable, "-m", "screening.cli", "batch", str(small), "--out", str(tmp_path / "out"),
                        "--base", str(DEMO / "registers" / "fenmarsh-base.yaml")],
                       cwd=str(tmp_path), env=dict(os.environ, PYTHONPATH=str(REPO)), capture_output=True, text=True,
                       timeout=120)
    assert p.returncode in (0, 1, 2), p.stderr
    assert (tmp_path / "out" / "results.csv").is_file()
    assert _build_folders(tmp_path) == []


@linux_only
def test_sigterm_stops_the_workers_and_removes_the_build_folder(tmp_path):
    proc = _start_batch(tmp_path)
    try:
        assert _wait(lambda: len(_children(proc.pid)) >= 2, 60)
        workers = _children(proc.pid)
        assert _wait(lambda: _build_folders(tmp_path), 30)
        t0 = time.monotonic()
        proc.send_signal(signal.SIGTERM)
        code = proc.wait(30)
        assert time.monotonic() - t0 < 20, "the workers are stopped, not left to finish their chunks"
    finally:
        for pid in [proc.pid] + _children(proc.pid):
            try:
                os.kill(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
    assert code == 128 + signal.SIGTERM
    assert _wait(lambda: not any(_alive(w) for w in workers), 15)
    assert _build_folders(tmp_path) == []
    assert not (tmp_path / "out").exists()


# ------------------------------------------------------------------ the swap


def _set(folder: Path, text: str) -> Path:
    folder.mkdir()
    (folder / "results.csv").write_text(text)
    write_marker(folder, "batch")
    return folder


def test_swap_replaces_the_old_set(tmp_path):
    target = _set(tmp_path / "out", "old")
    build = _set(tmp_path / ".out.tmp-1-x", "new")
    swap_in(build, target)
    assert (target / "results.csv").read_text() == "new"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


@pytest.mark.parametrize("exchange", [True, False], ids=["renameat2", "two-renames"])
def test_a_failure_during_the_swap_leaves_the_old_set_in_place(tmp_path, monkeypatch, exchange):
    target = _set(tmp_path / "out", "old")
    build = _set(tmp_path / ".out.tmp-1-x", "new")
    real = os.replace
    calls = []

    def failing(a, b):
        calls.append((a, b))
        if Path(a) == build:
            raise OSError(5, "simulated failure")
        return real(a, b)

    if exchange:
        monkeypatch.setattr(os_mod, "_exchange", lambda a, b: (_ for _ in ()).throw(OSError(5, "simulated failure")))
    else:
        monkeypatch.setattr(os_mod, "_exchange", lambda a, b: False)
        monkeypatch.setattr(os_mod.os, "replace", failing)
    with pytest.raises(OSError):
        swap_in(build, target)
    assert (target / "results.csv").read_text() == "old"


def test_a_previous_set_left_aside_by_a_dead_run_is_put_back(tmp_path):
    """Where the two names cannot be exchanged in one step, a run killed between its two renames leaves the old
    set under a hidden name; the next run for the target puts it back before anything else."""
    done = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    dead = int(done.stdout)
    aside = _set(tmp_path / f".out.old-{dead}-abcd1234", "old")
    build = tmp_path / f".out.tmp-{dead}-zz9"
    build.mkdir()
    (build / "results.json").write_text("[")
    (build / "notes-of-mine.txt").write_text("not ours")
    recover_leftovers(tmp_path / "out")
    assert (tmp_path / "out" / "results.csv").read_text() == "old"
    assert not aside.exists()
    assert sorted(p.name for p in build.iterdir()) == ["notes-of-mine.txt"], "only heatscreen's files are removed"


def test_folders_of_live_runs_are_left_alone(tmp_path):
    live = _set(tmp_path / f".out.tmp-{os.getppid()}-abc", "in progress")
    recover_leftovers(tmp_path / "out")
    assert (live / "results.csv").read_text() == "in progress"
    assert (live / MARKER).exists()


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="renameat2 is Linux's")
def test_exchange_swaps_two_names_in_one_step(tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    a.mkdir()
    b.mkdir()
    (a / "x").write_text("a")
    (b / "x").write_text("b")
    if not os_mod._exchange(a, b):
        pytest.skip("this file system cannot exchange names")
    assert (a / "x").read_text() == "b" and (b / "x").read_text() == "a"
