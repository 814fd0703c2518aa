"""Run the corpus of malformed inputs (``corpus.py``) and print the table.

    python tests/corpus/run_corpus.py            # every entry, the table and the entries that were not clean
    python tests/corpus/run_corpus.py --no-service

Each command runs in a subprocess in a folder of its own, with a time limit (a hang is killed with
its whole process group). Service entries go to one server started on 127.0.0.1 for the run and
stopped at the end. Read-only and full folders come from small tmpfs mounts where the machine allows
them (as root), else a folder without write permission (not root); entries that need one the machine
cannot give are skipped and listed.
"""
from __future__ import annotations

import argparse
import contextlib
import fnmatch
import json
import os
import resource
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from corpus import REPO, Entry, entries  # noqa: E402

ROWS = ("tried", "clean error", "wrong exit code", "traceback", "hang", "silently wrong")


@dataclass
class Outcome:
    entry: Entry
    kind: str  # one of ROWS[1:], or "skipped"
    detail: str = ""
    seconds: float = 0.0


# ------------------------------------------------------------------ folders a command cannot write


def _mount_tmpfs(path: Path, options: str) -> bool:
    if os.geteuid() != 0 or not shutil.which("mount"):
        return False
    path.mkdir(parents=True, exist_ok=True)
    p = subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", str(path)], capture_output=True)
    return p.returncode == 0


def _umount(path: Path) -> None:
    subprocess.run(["umount", str(path)], capture_output=True)


@contextlib.contextmanager
def special_folders(root: Path):
    """{"readonly": path or None, "tmpfs": path or None}: a read-only folder and a nearly full one."""
    made = {}
    mounted = []
    ro = root / "readonly"
    if _mount_tmpfs(ro, "size=64k,ro"):
        mounted.append(ro)
        made["readonly"] = ro
    elif os.geteuid() != 0:
        ro.mkdir(parents=True, exist_ok=True)
        ro.chmod(0o555)
        made["readonly"] = ro
    full = root / "full"
    if _mount_tmpfs(full, "size=16k"):
        mounted.append(full)
        made["tmpfs"] = full
    try:
        yield made
    finally:
        for m in mounted:
            _umount(m)
        if ro.exists() and not mounted:
            ro.chmod(0o755)


# ------------------------------------------------------------------ one entry


def _snapshot(folder: Path) -> dict[str, str]:
    out = {}
    for top, dirs, names in os.walk(folder):
        for name in names + [d for d in dirs if os.path.islink(os.path.join(top, d))]:
            p = Path(top) / name
            rel = p.relative_to(folder).as_posix()
            try:
                if p.is_symlink() or not p.is_file():
                    out[rel] = "special"
                else:
                    st = p.stat()
                    out[rel] = f"{st.st_size}:{st.st_mtime_ns}:{stat_mode(st)}"
            except OSError:
                out[rel] = "unreadable"
        for d in dirs:
            out[(Path(top) / d).relative_to(folder).as_posix() + "/"] = "dir"
    return out


def stat_mode(st) -> str:
    return oct(st.st_mode & 0o7777)


def _changed(before: dict, after: dict, allowed: tuple) -> list[str]:
    keys = set(before) | set(after)
    bad = []
    for k in sorted(keys):
        if before.get(k) == after.get(k):
            continue
        name = k.rstrip("/")
        if any(fnmatch.fnmatch(name, pat) for pat in allowed):
            continue
        bad.append(k)
    return bad


def _fill(arg: str, folder: Path, special: dict) -> str:
    return (arg.replace("{d}", str(folder)).replace("{ro}", str(special.get("readonly") or "/nonexistent"))
            .replace("{full}", str(special.get("tmpfs") or "/nonexistent")))


def run_entry(entry: Entry, folder: Path, special: dict, server=None) -> Outcome:
    if entry.needs and not special.get(entry.needs):
        return Outcome(entry, "skipped", f"this machine cannot give a {entry.needs} folder")
    folder.mkdir(parents=True, exist_ok=True)
    if entry.files:
        entry.files(folder)
    watched = [folder] + [special[k] for k in ("readonly", "tmpfs") if special.get(k)]
    before = [_snapshot(w) for w in watched]
    t0 = time.monotonic()
    if entry.service is not None:
        status, output = _run_service(entry, server)
        seconds = time.monotonic() - t0
        expected = (entry.service["status"],)
        code = status
        names = tuple(entry.service.get("names", ()))
        if status is None:
            return Outcome(entry, "hang", output, seconds)
        if status == "failed" or (isinstance(status, int) and status >= 500):
            return Outcome(entry, "traceback", f"{status}: {output[:300]}", seconds)
    else:
        code, output, hung = _run_cli(entry, folder, special)
        seconds = time.monotonic() - t0
        if hung:
            return Outcome(entry, "hang", f"killed after {entry.timeout:g} s", seconds)
        expected = entry.exit
        names = tuple(_fill(n, folder, special) for n in entry.names)
        if "Traceback (most recent call last)" in output or code == 3 or "internal error" in output:
            return Outcome(entry, "traceback", f"exit {code}: {output[-400:]}", seconds)
    if code not in expected:
        return Outcome(entry, "wrong exit code", f"exit {code}, expected {expected}: {output[-400:]}", seconds)
    text = output + ("\n" + _errors(folder) if entry.service is None else "")
    missing = [n for n in names if n not in text]
    if missing:
        return Outcome(entry, "silently wrong", f"the answer does not name {missing}: {text[-400:]}", seconds)
    after = [_snapshot(w) for w in watched]
    for w, b, a in zip(watched, before, after):
        changed = _changed(b, a, entry.writes if w == folder else ())
        if changed:
            return Outcome(entry, "silently wrong", f"changed on disk in {w}: {changed[:5]}", seconds)
    if entry.check is not None:
        problem = entry.check(folder, output)
        if problem:
            return Outcome(entry, "silently wrong", problem, seconds)
    return Outcome(entry, "clean error", "", seconds)


def _errors(folder: Path) -> str:
    texts = []
    for p in folder.glob("*/errors.csv"):
        with contextlib.suppress(OSError):
            texts.append(p.read_text(encoding="utf-8"))
    return "\n".join(texts)


def _run_cli(entry: Entry, folder: Path, special: dict) -> tuple[int | None, str, bool]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    env.pop("HEATSCREEN_TOKEN", None)
    env["COLUMNS"] = "200"
    args = [sys.executable, "-m", "screening.cli", *(_fill(a, folder, special) for a in entry.argv)]

    def limits():
        if entry.fsize is not None:
            resource.setrlimit(resource.RLIMIT_FSIZE, (entry.fsize, entry.fsize))

    proc = subprocess.Popen(args, cwd=str(folder), env=env, stdout=subprocess.PIPE, stderr=subprocess.STDOUT,
                            stdin=subprocess.DEVNULL, start_new_session=True, preexec_fn=limits)
    try:
        out, _ = proc.communicate(timeout=entry.timeout)
        return proc.returncode, out.decode("utf-8", "replace"), False
    except subprocess.TimeoutExpired:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(proc.pid, signal.SIGKILL)
        proc.communicate()
        return None, "", True


def _run_service(entry: Entry, server) -> tuple[int | None, str]:
    import httpx

    spec = entry.service
    headers = dict(spec.get("headers") or {})
    with server.client(timeout=entry.timeout) as client:
        try:
            if spec.get("register") is not None:  # a register job: its final state ("done", "invalid" ...)
                from service_helpers import wait_job

                name, data = spec["register"]
                r = client.post("/v1/batch", files={"register": (name, data)})
                if r.status_code != 202:
                    return r.status_code, r.text
                doc = wait_job(client, r.json()["job"], entry.timeout)
                return doc["state"], json.dumps(doc)
            if spec.get("form") is not None:
                r = client.request(spec["method"], spec["path"], data=spec["form"], headers=headers)
            else:
                r = client.request(spec["method"], spec["path"], content=spec.get("body"), headers=headers)
        except httpx.TimeoutException:
            return None, f"no answer within {entry.timeout:g} s"
        except httpx.HTTPError as exc:
            return 599, f"connection failed: {exc!r}"
    return r.status_code, r.text


# ------------------------------------------------------------------ the whole corpus


@contextlib.contextmanager
def maybe_server(root: Path, wanted: bool):
    if not wanted:
        yield None
        return
    try:
        import fastapi  # noqa: F401
        import httpx  # noqa: F401
    except ImportError:
        yield None
        return
    from service_helpers import Server

    s = Server(root / "server", name="corpus")
    s.start()
    try:
        yield s
    finally:
        s.stop()


def run_all(selected: list[Entry] | None = None, service: bool = True, workers: int = 2,
            root: Path | None = None) -> list[Outcome]:
    todo = selected if selected is not None else entries()
    if not service:
        todo = [e for e in todo if e.service is None]
    own = root is None
    root = Path(tempfile.mkdtemp(prefix="heatscreen-corpus-")) if own else root
    try:
        with special_folders(root / "special") as special, \
                maybe_server(root, any(e.service is not None for e in todo)) as server:
            def one(i_e):
                i, e = i_e
                if e.service is not None and server is None:
                    return Outcome(e, "skipped", "the service extra (fastapi, httpx) is not installed")
                return run_entry(e, root / f"e{i:03d}", special, server)

            with ThreadPoolExecutor(max_workers=workers) as pool:
                return list(pool.map(one, enumerate(todo)))
    finally:
        if own:
            shutil.rmtree(root, ignore_errors=True)


def table(outcomes: list[Outcome]) -> dict[str, int]:
    counted = [o for o in outcomes if o.kind != "skipped"]
    counts = {row: 0 for row in ROWS}
    counts["tried"] = len(counted)
    for o in counted:
        counts[o.kind] += 1
    return counts


def format_table(outcomes: list[Outcome]) -> str:
    counts = table(outcomes)
    lines = [f"{row:<16} {counts[row]:>4}" for row in ROWS]
    skipped = [o for o in outcomes if o.kind == "skipped"]
    if skipped:
        lines.append(f"(skipped {len(skipped)}: " + "; ".join(f"{o.entry.name}: {o.detail}" for o in skipped) + ")")
    bad = [o for o in outcomes if o.kind not in ("clean error", "skipped")]
    for o in bad:
        lines.append(f"  {o.kind}: {o.entry.name} [{o.entry.defect}]: {o.detail}")
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--no-service", action="store_true", help="leave out the service entries")
    parser.add_argument("--verbose", action="store_true", help="list every entry with its outcome and time")
    args = parser.parse_args(argv)
    outcomes = run_all(service=not args.no_service)
    if args.verbose:
        for o in outcomes:
            print(f"{o.kind:<16} {o.seconds:6.2f} s  {o.entry.defect:<36} {o.entry.name}")
        print()
    print(format_table(outcomes))
    counts = table(outcomes)
    return 0 if all(counts[row] == 0 for row in ROWS[2:]) else 1


if __name__ == "__main__":
    sys.exit(main())
