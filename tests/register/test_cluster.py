"""`heatscreen batch --scheduler`: the Dask backend gives the local run's output set, safely by default.

The reference for every output comparison is the default local backend run on the same machine
(its outputs are themselves pinned by tests/golden/manifest.json): the cluster's output set must be
byte-identical, file by file, except the documented ``"backend"`` value of each results.json item.
The cluster is a LocalCluster of two worker processes on loopback, started and stopped here.
"""
from __future__ import annotations

import logging
import os
import signal
import threading
from pathlib import Path

import pytest

distributed = pytest.importorskip("distributed")

from typer.testing import CliRunner  # noqa: E402

from screening.cli import app  # noqa: E402
from screening.register.batch import run_batch  # noqa: E402
from screening.register.cluster import (  # noqa: E402
    ClusterError,
    ClusterOptions,
    is_loopback,
    split_address,
    version_problem,
    versions,
)
from screening.resources import demo_cases  # noqa: E402

REGISTERS = Path(str(demo_cases().joinpath("registers")))
SOURCE_DATE_EPOCH = "1767225600"  # fixed so that memos written at different moments are comparable


@pytest.fixture(scope="module")
def cluster():
    from distributed import Client, LocalCluster

    lc = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address="127.0.0.1:0", silence_logs=logging.CRITICAL)  # HTTP on a free loopback port
    client = Client(lc, set_as_default=False)
    try:
        yield lc, client
    finally:
        client.close()
        lc.close()


@pytest.fixture(autouse=True)
def fixed_date(monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", SOURCE_DATE_EPOCH)  # PDFs written at different moments compare


@pytest.fixture
def two_workers(cluster):
    lc, client = cluster
    client.wait_for_workers(2, timeout=60)  # a worker killed by an earlier test is back
    return lc, client


def _uncertain_register(folder: Path, rows: int = 12, samples: int = 400) -> tuple[Path, Path]:
    """Rows with Monte Carlo over two inputs (the golden outputs' uncertain register, larger)."""
    base = folder / "uncertain-base.yaml"
    base.write_text((REGISTERS / "fenmarsh-base.yaml").read_text(encoding="utf-8")
                    + f"uncertainty:\n  samples: {samples}\n  seed: 3\n  inputs:\n"
                    "    heat_loss.ua: {distribution: uniform, low: 100 W/K, high: 300 W/K}\n"
                    "    heat_sources.1.power: {distribution: normal, sd: 10 %}\n", encoding="utf-8")
    register = folder / "uncertain.csv"
    lines = ["id,contents.mass [kg],heat_sources.1.power [kW]"]
    lines += [f"U-{i},{2000 + i * 1500},{5 + i * 4}" for i in range(rows)]
    lines.append("U-bad,-5,7")  # an invalid row: reported in errors.csv by both backends
    register.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return register, base


def _assert_same_output_set(local: Path, remote: Path) -> None:
    names = sorted(p.relative_to(local).as_posix() for p in local.rglob("*") if p.is_file())
    assert names == sorted(p.relative_to(remote).as_posix() for p in remote.rglob("*") if p.is_file())
    assert "results.json" in names
    for name in names:
        a, b = (local / name).read_bytes(), (remote / name).read_bytes()
        if name == "results.json":
            assert a.count(b'"backend":"local"') == b.count(b'"backend":"dask"') > 0
            b = b.replace(b'"backend":"dask"', b'"backend":"local"')  # the one documented difference
        assert a == b, f"{name} differs between the local run and the cluster run"


def test_cluster_output_set_is_byte_identical_to_the_local_run(two_workers, tmp_path, monkeypatch):
    lc, _ = two_workers
    opts = ClusterOptions(lc.scheduler_address)
    # Monte Carlo rows (the engine the backend is for), with an invalid row
    register, base = _uncertain_register(tmp_path)
    local = run_batch(register, tmp_path / "local", base_path=base, workers=1)
    remote = run_batch(register, tmp_path / "dask", base_path=base, cluster=opts)
    assert {k: v for k, v in local.items() if k != "out_dir"} == {k: v for k, v in remote.items() if k != "out_dir"}
    assert local["invalid"] == 1 and local["valid"] == 12
    _assert_same_output_set(tmp_path / "local", tmp_path / "dask")
    # the demo register (uniform groups through the columnar path, invalid rows)
    demo = REGISTERS / "fenmarsh-register.csv"
    run_batch(demo, tmp_path / "demo-local", base_path=REGISTERS / "fenmarsh-base.yaml")
    run_batch(demo, tmp_path / "demo-dask", base_path=REGISTERS / "fenmarsh-base.yaml", cluster=opts)
    _assert_same_output_set(tmp_path / "demo-local", tmp_path / "demo-dask")
    # memos: the workers hand back memo views and the client writes the PDFs (a few rows: memos are slow)
    few = tmp_path / "few.csv"
    few.write_text("".join(demo.read_text(encoding="utf-8").splitlines(keepends=True)[:5]), encoding="utf-8")
    run_batch(few, tmp_path / "memo-local", base_path=REGISTERS / "fenmarsh-base.yaml", memos=True)
    run_batch(few, tmp_path / "memo-dask", base_path=REGISTERS / "fenmarsh-base.yaml", memos=True, cluster=opts)
    assert len(list((tmp_path / "memo-dask" / "memos").iterdir())) == 4
    _assert_same_output_set(tmp_path / "memo-local", tmp_path / "memo-dask")


def test_a_worker_killed_mid_run_changes_nothing(two_workers, tmp_path):
    lc, client = two_workers
    register, base = _uncertain_register(tmp_path, rows=16, samples=3000)
    reference = run_batch(register, tmp_path / "local", base_path=base, workers=1)
    pids = client.run(os.getpid)
    killed = []
    stop = threading.Event()

    def killer():  # as soon as a worker has a chunk under way, kill its process outright
        while not stop.is_set() and not killed:
            busy = [w for w, keys in client.processing().items() if keys and w in pids]
            if busy:
                os.kill(pids[busy[0]], signal.SIGKILL)
                killed.append(busy[0])
            stop.wait(0.005)

    watch = threading.Thread(target=killer, daemon=True)
    watch.start()
    try:
        remote = run_batch(register, tmp_path / "dask", base_path=base,
                           cluster=ClusterOptions(lc.scheduler_address))
    finally:
        stop.set()
        watch.join(10)
    assert killed, "no worker was seen computing a chunk: nothing was killed"
    assert killed[0] not in client.scheduler_info()["workers"]  # that worker was lost (its nanny starts another)
    assert remote["valid"] == reference["valid"] == 16
    _assert_same_output_set(tmp_path / "local", tmp_path / "dask")


def test_a_worker_with_other_versions_is_refused(two_workers, tmp_path):
    lc, client = two_workers
    register, base = _uncertain_register(tmp_path, rows=2, samples=50)
    worker = sorted(client.scheduler_info()["workers"])[0]

    def set_numpy_version(text):
        import numpy

        if text is None:
            numpy.__version__ = numpy.__dict__.pop("_heatscreen_test_version")
        else:
            numpy._heatscreen_test_version = numpy.__version__
            numpy.__version__ = text
        return numpy.__version__

    import numpy

    client.run(set_numpy_version, "0.0.test", workers=[worker])
    try:
        with pytest.raises(ClusterError) as err:
            run_batch(register, tmp_path / "out", base_path=base, cluster=ClusterOptions(lc.scheduler_address))
    finally:
        assert client.run(set_numpy_version, None, workers=[worker])[worker] == numpy.__version__
    message = str(err.value)
    assert worker in message and "numpy 0.0.test on the worker" in message and f"{numpy.__version__} here" in message
    assert not (tmp_path / "out").exists()  # refused before anything was written

    # through the command line: exit 2 and the message, no traceback
    client.run(set_numpy_version, "0.0.test", workers=[worker])
    try:
        res = CliRunner().invoke(app, ["batch", str(register), "--out", str(tmp_path / "out"), "--base", str(base),
                                       "--scheduler", lc.scheduler_address])
    finally:
        client.run(set_numpy_version, None, workers=[worker])
    assert res.exit_code == 2, res.output
    assert "numpy 0.0.test on the worker" in res.output and "Traceback" not in res.output


def test_a_worker_whose_versions_change_after_the_start_is_caught_on_its_chunks(two_workers, tmp_path, monkeypatch):
    """Each chunk comes back with its worker's versions (a worker that joins after the start is checked too)."""
    from screening.register import cluster as cluster_mod

    lc, client = two_workers
    register, base = _uncertain_register(tmp_path, rows=6, samples=50)

    def set_scipy_version(text):
        import scipy

        if text is None:
            scipy.__version__ = scipy.__dict__.pop("_heatscreen_test_version")
        else:
            scipy._heatscreen_test_version = scipy.__version__
            scipy.__version__ = text

    real_enter = cluster_mod.DaskBackend.__enter__

    def enter_then_change(self):
        out = real_enter(self)  # every worker checked at the start ...
        client.run(set_scipy_version, "0.0.late")  # ... then changed, as a worker joining later would be
        return out

    monkeypatch.setattr(cluster_mod.DaskBackend, "__enter__", enter_then_change)
    try:
        with pytest.raises(ClusterError, match="scipy 0.0.late on the worker"):
            run_batch(register, tmp_path / "out", base_path=base, cluster=ClusterOptions(lc.scheduler_address))
    finally:
        client.run(set_scipy_version, None)
    assert not (tmp_path / "out").exists()


def test_versions_compared_name_by_name():
    ours = versions()
    assert set(ours) == {"heatscreen", "numpy", "scipy", "python"}
    assert version_problem("tcp://127.0.0.1:1", dict(ours), ours) is None
    theirs = dict(ours, scipy="0.1", heatscreen="0.0.9 (source 000000000000)")
    message = version_problem("tcp://127.0.0.1:1", theirs, ours)
    assert "scipy 0.1 on the worker" in message and f"{ours['scipy']} here" in message
    assert "heatscreen 0.0.9 (source 000000000000) on the worker" in message and "numpy" not in message
    assert "python missing on the worker" in version_problem("w", {k: v for k, v in ours.items() if k != "python"},
                                                             ours)


def test_scheduler_from_the_environment_is_announced(two_workers, tmp_path, monkeypatch):
    lc, _ = two_workers
    register, base = _uncertain_register(tmp_path, rows=2, samples=50)
    monkeypatch.setenv("HEATSCREEN_SCHEDULER", lc.scheduler_address)
    res = CliRunner().invoke(app, ["batch", str(register), "--out", str(tmp_path / "out"), "--base", str(base)])
    assert res.exit_code == 2, res.output  # the invalid row
    assert f"screening on cluster {lc.scheduler_address} (from HEATSCREEN_SCHEDULER)" in res.output
    assert b'"backend":"dask"' in (tmp_path / "out" / "results.json").read_bytes()


# ------------------------------------------------------------------ addresses (no connection attempted)

# 192.0.2.0/24 and 203.0.113.0/24 are documentation networks (RFC 5737); 127.0.0.0/8 is loopback
# (RFC 1122 section 3.2.1.3) and ::1 the IPv6 loopback (RFC 4291 section 2.5.3).
@pytest.mark.parametrize("address,loopback", [
    ("tcp://127.0.0.1:8786", True), ("tcp://127.8.9.10:8786", True), ("tcp://localhost:8786", True),
    ("tcp://[::1]:8786", True), ("127.0.0.1:8786", True),
    ("tcp://192.0.2.10:8786", False), ("192.0.2.10:8786", False), ("tcp://[2001:db8::1]:8786", False),
    ("tcp://scheduler.example:8786", False), ("tcp://127.0.0.1.example:8786", False),
])
def test_loopback_is_recognised_without_resolving(address, loopback):
    assert is_loopback(split_address(address)[1]) is loopback


@pytest.fixture
def no_connection(monkeypatch):
    """Fail the test if anything tries to open a Dask connection."""
    import distributed

    def refuse(*args, **kwargs):
        raise AssertionError("a connection was attempted")

    monkeypatch.setattr(distributed.Client, "__init__", refuse)
    monkeypatch.delenv("HEATSCREEN_SCHEDULER", raising=False)


@pytest.mark.parametrize("address", ["tcp://192.0.2.10:8786", "203.0.113.7:8786"])
def test_a_plain_tcp_address_off_this_machine_is_refused(address, tmp_path, no_connection):
    register, base = _uncertain_register(tmp_path, rows=2, samples=50)
    res = CliRunner().invoke(app, ["batch", str(register), "--out", str(tmp_path / "out"), "--base", str(base),
                                   "--scheduler", address])
    assert res.exit_code == 2, res.output
    assert "plain tcp:// address other than loopback is refused" in res.output
    assert "--insecure-cluster" in res.output and "Traceback" not in res.output
    assert not (tmp_path / "out").exists()


def test_the_environment_variable_is_checked_the_same_way(tmp_path, no_connection, monkeypatch):
    register, base = _uncertain_register(tmp_path, rows=2, samples=50)
    monkeypatch.setenv("HEATSCREEN_SCHEDULER", "tcp://192.0.2.10:8786")
    res = CliRunner().invoke(app, ["batch", str(register), "--out", str(tmp_path / "out"), "--base", str(base)])
    assert res.exit_code == 2 and "HEATSCREEN_SCHEDULER tcp://192.0.2.10:8786" in res.output, res.output


def test_insecure_flag_allows_it_with_a_warning(tmp_path, no_connection, monkeypatch):
    from screening.register import cluster as cluster_mod

    attempts = []

    def enter(self):
        attempts.append(self.options.address)
        raise ClusterError("stopped here by the test")

    monkeypatch.setattr(cluster_mod.DaskBackend, "__enter__", enter)
    register, base = _uncertain_register(tmp_path, rows=2, samples=50)
    res = CliRunner().invoke(app, ["batch", str(register), "--out", str(tmp_path / "out"), "--base", str(base),
                                   "--scheduler", "tcp://192.0.2.10:8786", "--insecure-cluster"])
    assert attempts == ["tcp://192.0.2.10:8786"]
    assert res.exit_code == 2 and "stopped here by the test" in res.output
    assert "without authentication or encryption" in res.output
    assert "screening on cluster tcp://192.0.2.10:8786" in res.output


def test_tls_needs_its_files_before_connecting(tmp_path, no_connection, monkeypatch):
    import dask

    monkeypatch.setattr(dask, "config", dask.config)  # the keys below are unset in a clean configuration
    with dask.config.set({"distributed.comm.tls.ca-file": None, "distributed.comm.tls.client.cert": None,
                          "distributed.comm.tls.client.key": None}):
        with pytest.raises(ClusterError, match="missing --tls-ca, --tls-cert, --tls-key"):
            ClusterOptions("tls://192.0.2.10:8786").check()
        with pytest.raises(ClusterError, match="--tls-ca .*no such file"):
            ClusterOptions("tls://192.0.2.10:8786", tls_ca=str(tmp_path / "none.pem"), tls_cert="c.pem",
                           tls_key="k.pem").check()
    for bad in ("ws://127.0.0.1:8786", "ucx://127.0.0.1:8786", "tcp://:8786"):
        with pytest.raises(ClusterError):
            ClusterOptions(bad).check()


def test_an_unreachable_scheduler_is_an_input_problem(tmp_path, monkeypatch):
    """Nothing listens on the discard port of loopback (port 9, RFC 863, not served here): exit 2, nothing written."""
    from screening.register import cluster as cluster_mod

    monkeypatch.setattr(cluster_mod, "CONNECT_TIMEOUT_S", 1.0)
    register, base = _uncertain_register(tmp_path, rows=2, samples=50)
    with pytest.raises(ClusterError, match="cannot reach the scheduler at tcp://127.0.0.1:9"):
        run_batch(register, tmp_path / "out", base_path=base, cluster=ClusterOptions("tcp://127.0.0.1:9"))
    assert not (tmp_path / "out").exists()


def test_tls_options_without_a_scheduler_are_refused(tmp_path, no_connection):
    register, base = _uncertain_register(tmp_path, rows=2, samples=50)
    res = CliRunner().invoke(app, ["batch", str(register), "--out", str(tmp_path / "out"), "--base", str(base),
                                   "--insecure-cluster"])
    assert res.exit_code == 2 and "give --scheduler ADDRESS" in res.output, res.output


def test_the_local_backend_imports_no_dask(tmp_path):
    """The default stays local and needs no extra package: a local batch loads neither dask nor distributed."""
    import subprocess
    import sys

    register, base = _uncertain_register(tmp_path, rows=2, samples=50)
    code = ("import sys, io, contextlib\n"
            "from screening.cli import run\n"
            f"sys.argv = ['heatscreen', 'batch', {str(register)!r}, '--out', {str(tmp_path / 'out')!r}, "
            f"'--base', {str(base)!r}]\n"
            "with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):\n"
            "    try:\n        run()\n    except SystemExit:\n        pass\n"
            "print(sorted({m.split('.')[0] for m in sys.modules if m.startswith(('dask', 'distributed'))}))\n")
    env = {k: v for k, v in os.environ.items() if k != "HEATSCREEN_SCHEDULER"}
    out = subprocess.run([sys.executable, "-c", code], cwd=Path(__file__).resolve().parents[2], env=env,
                         capture_output=True, text=True, check=True, timeout=120)
    assert out.stdout.strip() == "[]", out.stdout
    assert (tmp_path / "out" / "results.json").is_file()


def test_what_leaves_the_client_names_no_user_path(tmp_path, monkeypatch):
    """The tasks a cluster would get, pickled as Dask sends them: no folder of the user's in them (the
    register's, the per-row case files', the rule file's, the templates'); computed from those bytes
    alone they open no user file and no file for writing, and give the local run's output set."""
    import pickle
    import shutil
    import sys

    from screening.register import cluster as cluster_mod
    from screening.register.chunks import compute_chunk
    from screening.resources import rule_set_candidates, template_dir_candidates

    secret = tmp_path / "site-secret-folder"
    (secret / "cases").mkdir(parents=True)
    register, base = _uncertain_register(secret, rows=4, samples=60)
    (secret / "cases" / "heavy.yaml").write_text("contents: {mass: 30000 kg}\n", encoding="utf-8")
    lines = register.read_text(encoding="utf-8").splitlines()
    lines = [lines[0] + ",case_file"] + [line + "," for line in lines[1:]]
    lines[1] += "cases/heavy.yaml"
    lines[2] += "cases/missing-file.yaml"  # a row that is not screened: its message names the file
    register.write_text("\n".join(lines) + "\n", encoding="utf-8")
    rules = secret / "rules.toml"
    shutil.copy(next(p for p in rule_set_candidates() if p.is_file()), rules)
    templates = secret / "templates"
    shutil.copytree(next(p for p in template_dir_candidates() if p.is_dir()), templates)

    sent = []
    opened = []  # files a worker's computation opens (Python's audit events), while computing
    watching = []
    sys.addaudithook(lambda event, args: opened.append(args[:2]) if watching and event == "open" else None)

    class Done:
        def __init__(self, payload):
            self.payload = payload

        def result(self):
            task = pickle.loads(self.payload)
            watching.append(True)
            try:
                chunk = compute_chunk(task)
            finally:
                watching.clear()
            return "worker-in-test", cluster_mod.versions(), chunk

        def release(self):
            pass

    def enter(self):
        return self

    def submit(self, task, key):
        payload = pickle.dumps(task, protocol=5)
        sent.append(payload)
        return Done(payload)

    monkeypatch.setattr(cluster_mod.DaskBackend, "__enter__", enter)
    monkeypatch.setattr(cluster_mod.DaskBackend, "close", lambda self: None)
    monkeypatch.setattr(cluster_mod.DaskBackend, "threads", lambda self: 2)
    monkeypatch.setattr(cluster_mod.DaskBackend, "_submit", submit)
    for memos in (False, True):
        kw = dict(base_path=base, rules_path=str(rules), templates_dir=templates, memos=memos)
        run_batch(register, tmp_path / f"local{memos}", workers=2, **kw)
        run_batch(register, tmp_path / f"sent{memos}", cluster=ClusterOptions("tcp://127.0.0.1:1"), **kw)
        _assert_same_output_set(tmp_path / f"local{memos}", tmp_path / f"sent{memos}")
        errors = (tmp_path / f"sent{memos}" / "errors.csv").read_text(encoding="utf-8")
        assert "missing-file.yaml" in errors and "U-bad" in errors  # the messages kept back are written
    assert len(sent) >= 4
    probe = tmp_path / "probe.txt"  # the hook sees what it should: a file opened while watching is recorded
    watching.append(True)
    probe.write_text("x", encoding="utf-8")
    watching.clear()
    assert opened.pop()[0] == str(probe)
    assert not [p for p, mode in opened if str(tmp_path) in str(p)], "a worker opened a user's file"
    assert not [(p, mode) for p, mode in opened if isinstance(mode, str) and set(mode) & set("wax+")], \
        "a worker opened a file for writing"
    for payload in sent:
        for text in ("site-secret-folder", "missing-file.yaml", "heavy.yaml", "rules.toml"):
            assert text.encode() not in payload, f"{text} sent to a worker"


def _certificates(folder: Path) -> dict:
    """A throw-away CA and one certificate for 127.0.0.1 (scheduler, worker and client), made with openssl."""
    import shutil
    import subprocess

    if shutil.which("openssl") is None:
        pytest.skip("openssl is needed to make test certificates")

    def run(*args):
        subprocess.run(["openssl", *args], check=True, capture_output=True, cwd=folder, timeout=60)

    run("req", "-x509", "-newkey", "rsa:2048", "-nodes", "-keyout", "ca.key", "-out", "ca.pem", "-days", "2",
        "-subj", "/CN=heatscreen-test-ca")
    (folder / "ext.cnf").write_text("subjectAltName=IP:127.0.0.1,DNS:localhost\nbasicConstraints=CA:FALSE\n"
                                    "extendedKeyUsage=serverAuth,clientAuth\n", encoding="utf-8")
    run("req", "-newkey", "rsa:2048", "-nodes", "-keyout", "node.key", "-out", "node.csr", "-subj", "/CN=127.0.0.1")
    run("x509", "-req", "-in", "node.csr", "-CA", "ca.pem", "-CAkey", "ca.key", "-CAcreateserial", "-out",
        "node.pem", "-days", "2", "-extfile", "ext.cnf")
    return {"ca": str(folder / "ca.pem"), "cert": str(folder / "node.pem"), "key": str(folder / "node.key")}


def test_tls_cluster_with_certificates_from_options_or_dask_configuration(tmp_path):
    import dask
    from distributed import LocalCluster
    from distributed.security import Security

    certs_dir = tmp_path / "certs"
    certs_dir.mkdir()
    c = _certificates(certs_dir)
    security = Security(tls_ca_file=c["ca"], tls_scheduler_cert=c["cert"], tls_scheduler_key=c["key"],
                        tls_worker_cert=c["cert"], tls_worker_key=c["key"], tls_client_cert=c["cert"],
                        tls_client_key=c["key"], require_encryption=True)
    register, base = _uncertain_register(tmp_path, rows=3, samples=60)
    run_batch(register, tmp_path / "local", base_path=base)
    with LocalCluster(n_workers=1, threads_per_worker=1, processes=True, host="127.0.0.1", protocol="tls://",
                      security=security, dashboard_address="127.0.0.1:0", silence_logs=logging.CRITICAL) as lc:
        assert lc.scheduler_address.startswith("tls://127.0.0.1:")
        res = CliRunner().invoke(app, ["batch", str(register), "--out", str(tmp_path / "options"), "--base",
                                       str(base), "--scheduler", lc.scheduler_address, "--tls-ca", c["ca"],
                                       "--tls-cert", c["cert"], "--tls-key", c["key"]])
        assert res.exit_code == 2, res.output  # the invalid row
        assert "without authentication" not in res.output  # no warning for tls://
        _assert_same_output_set(tmp_path / "local", tmp_path / "options")
        with dask.config.set({"distributed.comm.tls.ca-file": c["ca"], "distributed.comm.tls.client.cert": c["cert"],
                              "distributed.comm.tls.client.key": c["key"]}):
            run_batch(register, tmp_path / "config", base_path=base, cluster=ClusterOptions(lc.scheduler_address))
        _assert_same_output_set(tmp_path / "local", tmp_path / "config")
