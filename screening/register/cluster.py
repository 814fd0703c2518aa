"""The Dask distributed backend of ``heatscreen batch --scheduler ADDRESS`` (the ``[cluster]`` extra).

Who does what:

- the client (the machine running ``heatscreen batch``) reads every file (the register, the base case,
  per-row case files, the rule set, the templates), validates and prepares each chunk of rows, and
  sends it to the cluster as a :class:`~screening.register.chunks.ChunkTask`: SI models, the parsed
  rule set, the rows' identities and plain numbers, with no path of the user's;
- a worker runs :func:`~screening.register.chunks.compute_chunk` on it (screening, Monte Carlo,
  verdicts, the results.json and results.csv text of the rows, memo views when memos are wanted) and
  hands the result back; it reads no user file and writes nothing;
- the client writes the part files, the memos and the output set, and swaps it in.

A task is a pure function of what it is sent: Monte Carlo seeds come from each row's case
(``uncertainty.seed``), never from a worker, a clock or the order of completion, so a chunk that a
lost worker's replacement computes again gives the same bytes.

Safety by default: a ``tcp://`` address other than a loopback one is refused unless the caller passes
``insecure=True`` (``--insecure-cluster``), because Dask's TCP comms carry pickled tasks and results
without authentication or encryption (whoever reaches the scheduler can run code on the workers and,
through the results, on this client). ``tls://`` needs a CA certificate, a client certificate and its
key, from the command line or from Dask's own configuration (``distributed.comm.tls``).

Every worker's heatscreen (version and a digest of its source), numpy, scipy and Python versions are
compared with the client's before the run starts, and again on every chunk that comes back (a worker
that joins later is checked too).

dask and distributed are imported only here and only when a cluster is used: the default local
backend needs neither.
"""
from __future__ import annotations

import hashlib
import ipaddress
import os
import uuid
from dataclasses import dataclass
from functools import lru_cache

from screening.errors import InputError

ENV_VAR = "HEATSCREEN_SCHEDULER"
CONNECT_TIMEOUT_S = 20.0
WORKER_WAIT_S = 30.0
INSTALL_HINT = "pip install 'heatscreen[cluster]' (dask and distributed)"
INSECURE_WARNING = ("warning: {address} is plain TCP: Dask's TCP comms carry pickled tasks and results without "
                    "authentication or encryption, so anyone who can reach the scheduler or a worker can read the "
                    "register's data and run code on the workers and on this machine. Use tls:// with "
                    "certificates outside a trusted, isolated network.")


class ClusterError(InputError):
    """The cluster cannot be used as asked (an address refused, no scheduler, a worker's versions differ): exit 2."""


@dataclass
class ClusterOptions:
    """How ``batch`` reaches a Dask scheduler: its address and the TLS files (read by the client only)."""

    address: str
    insecure: bool = False
    tls_ca: str | None = None
    tls_cert: str | None = None
    tls_key: str | None = None
    from_environment: bool = False

    def check(self) -> list[str]:
        """Refuse an address that is unsafe or not understood (no connection attempted); the warnings to print."""
        scheme, host = split_address(self.address)
        where = ENV_VAR if self.from_environment else "--scheduler"
        if scheme == "tcp" and not is_loopback(host):
            if not self.insecure:
                raise ClusterError(
                    f"{where} {self.address}: a plain tcp:// address other than loopback is refused: Dask's TCP "
                    f"comms carry pickled tasks without authentication or encryption. Use tls:// with "
                    f"--tls-ca, --tls-cert and --tls-key (or Dask's distributed.comm.tls configuration), or pass "
                    f"--insecure-cluster if the network is trusted and isolated.")
            return [INSECURE_WARNING.format(address=self.address)]
        if scheme == "tls":
            self.tls_files()  # every file named and present, before any connection
        return []

    def tls_files(self) -> tuple[str, str, str]:
        """The CA, client certificate and key: from the options, else from Dask's configuration."""
        ca, cert, key = self.tls_ca, self.tls_cert, self.tls_key
        if not (ca and cert and key):
            cfg = _dask_tls_config()
            ca, cert, key = ca or cfg[0], cert or cfg[1], key or cfg[2]
        missing = [name for name, value in (("--tls-ca", ca), ("--tls-cert", cert), ("--tls-key", key)) if not value]
        if missing:
            raise ClusterError(f"--scheduler {self.address}: tls:// needs a CA certificate, a client certificate and "
                               f"its key; missing {', '.join(missing)} (or distributed.comm.tls.ca-file, "
                               f"distributed.comm.tls.client.cert and .key in Dask's configuration)")
        for option, path in (("--tls-ca", ca), ("--tls-cert", cert), ("--tls-key", key)):
            if not os.path.isfile(path):
                raise ClusterError(f"{option} {path}: no such file; expected a PEM file")
        return ca, cert, key


def options_from(scheduler: str | None, insecure: bool, tls_ca=None, tls_cert=None, tls_key=None,
                 environ=None) -> ClusterOptions | None:
    """The cluster options of a ``batch`` command: ``--scheduler`` first, else ``HEATSCREEN_SCHEDULER``."""
    environ = os.environ if environ is None else environ
    from_env = False
    if not scheduler:
        scheduler = (environ.get(ENV_VAR) or "").strip() or None
        from_env = scheduler is not None
    if scheduler is None:
        if tls_ca or tls_cert or tls_key or insecure:
            raise ClusterError("--tls-ca, --tls-cert, --tls-key and --insecure-cluster apply to a cluster: give "
                               "--scheduler ADDRESS (or set HEATSCREEN_SCHEDULER)")
        return None
    return ClusterOptions(scheduler.strip(), insecure, _text(tls_ca), _text(tls_cert), _text(tls_key), from_env)


def _text(path) -> str | None:
    return None if path is None else str(path)


def split_address(address: str) -> tuple[str, str]:
    """(scheme, host) of a scheduler address; an address without a scheme is tcp, as in Dask."""
    text = address.strip()
    scheme, sep, rest = text.partition("://")
    if not sep:
        scheme, rest = "tcp", text
    scheme = scheme.lower()
    if scheme not in ("tcp", "tls"):
        raise ClusterError(f"--scheduler {address}: unsupported scheme '{scheme}://'; expected tls://HOST:PORT "
                           f"(or tcp://127.0.0.1:PORT on this machine)")
    hostport = rest.split("/", 1)[0]
    if hostport.startswith("["):  # [IPv6]:port
        host = hostport[1:].split("]", 1)[0]
    elif hostport.count(":") > 1:  # a bare IPv6 address
        host = hostport
    else:
        host = hostport.rsplit(":", 1)[0] if ":" in hostport else hostport
    if not host:
        raise ClusterError(f"--scheduler {address}: no host; expected for example tls://scheduler.example:8786")
    return scheme, host


def is_loopback(host: str) -> bool:
    """A loopback host written as such (127.0.0.0/8, ::1, localhost); names are not resolved."""
    if host.lower() == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def _dask_tls_config() -> tuple[str | None, str | None, str | None]:
    try:
        import dask
    except ImportError:
        return None, None, None
    get = dask.config.get
    return (get("distributed.comm.tls.ca-file", None), get("distributed.comm.tls.client.cert", None),
            get("distributed.comm.tls.client.key", None))


# ------------------------------------------------------------------ versions


@lru_cache(maxsize=1)
def _source_digest() -> str:
    """sha256 of the package's Python source: two installs of the same version may still differ."""
    from screening.resources import PACKAGE_DIR

    h = hashlib.sha256()
    for path in sorted(PACKAGE_DIR.rglob("*.py")):
        if "__pycache__" in path.parts:
            continue
        h.update(path.relative_to(PACKAGE_DIR).as_posix().encode("utf-8") + b"\0")
        h.update(path.read_bytes())
    return h.hexdigest()[:12]


def versions() -> dict[str, str]:
    """What must be the same on the client and every worker for the same bytes to come back."""
    import platform

    import numpy
    import scipy

    import screening

    return {"heatscreen": f"{screening.__version__} (source {_source_digest()})", "numpy": numpy.__version__,
            "scipy": scipy.__version__, "python": ".".join(platform.python_version_tuple()[:2])}


def version_problem(worker: str, theirs: dict, ours: dict) -> str | None:
    """The refusal message when a worker's versions differ from the client's, else None."""
    differ = [f"{name} {theirs.get(name, 'missing')} on the worker, {ours[name]} here" for name in ours
              if theirs.get(name) != ours[name]]
    if not differ:
        return None
    return (f"worker {worker} differs from this client: {'; '.join(differ)}. Install the same versions on every "
            f"worker (results would not be the same as a local run).")


def _remote_compute(task):
    """The task a worker runs: the chunk's result and the worker's versions (checked by the client)."""
    from distributed import get_worker

    from screening.register.chunks import compute_chunk

    return get_worker().address, versions(), compute_chunk(task)


# ------------------------------------------------------------------ the client side


class DaskBackend:
    """A connection to a Dask scheduler for one run: ``with DaskBackend(options) as cluster: ...``."""

    def __init__(self, options: ClusterOptions):
        self.options = options
        self.client = None
        self.ours = versions()

    def __enter__(self) -> "DaskBackend":
        try:
            from distributed import Client
        except ImportError:
            raise ClusterError(f"--scheduler needs the cluster backend: {INSTALL_HINT}") from None
        security = None
        if split_address(self.options.address)[0] == "tls":
            from distributed.security import Security

            ca, cert, key = self.options.tls_files()
            security = Security(tls_ca_file=ca, tls_client_cert=cert, tls_client_key=key, require_encryption=True)
        try:
            self.client = Client(self.options.address, security=security, timeout=CONNECT_TIMEOUT_S,
                                 set_as_default=False)
        except (OSError, TimeoutError, ValueError) as exc:
            raise ClusterError(f"cannot reach the scheduler at {self.options.address}: {exc}") from None
        try:
            try:
                self.client.wait_for_workers(1, timeout=WORKER_WAIT_S)
            except TimeoutError:
                raise ClusterError(f"no worker joined the scheduler at {self.options.address} within "
                                   f"{WORKER_WAIT_S:.0f} s; start workers with `dask worker "
                                   f"{self.options.address}`") from None
            for worker, theirs in sorted(self.client.run(versions).items()):
                self._check(worker, theirs)
        except BaseException:
            self.close()
            raise
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        if self.client is not None:
            try:
                self.client.close(timeout=10)
            except Exception:  # noqa: BLE001 - closing a broken connection: nothing more to do
                pass
            self.client = None

    def _check(self, worker: str, theirs: dict) -> None:
        problem = version_problem(worker, theirs, self.ours)
        if problem:
            raise ClusterError(problem)

    def threads(self) -> int:
        """Worker threads in the cluster now (sets the number of chunks)."""
        info = self.client.scheduler_info(n_workers=-1) if _takes_n_workers(self.client) \
            else self.client.scheduler_info()
        return max(1, sum(w.get("nthreads", 1) for w in info.get("workers", {}).values()))

    def screen(self, spans, make_task):
        """Yield ``((a, b), ChunkResult)`` in order: each chunk validated here (``make_task(a, b)``),
        sent as soon as it is ready (the workers compute while the client validates the next one),
        and checked for its worker's versions when it comes back."""
        run = uuid.uuid4().hex[:12]
        sent = []
        try:
            for a, b in spans:
                task, kept = detach(make_task(a, b))
                sent.append(((a, b), self._submit(task, f"heatscreen-{run}-{a:09d}"), kept))
            for i, (span, fut, kept) in enumerate(sent):
                worker, theirs, chunk = self._result(fut, span)
                self._check(worker, theirs)
                sent[i] = None
                fut.release()
                yield span, reattach(chunk, kept)
        finally:
            pending = [item[1] for item in sent if item is not None]
            if pending and self.client is not None:
                try:
                    self.client.cancel(pending)
                except Exception:  # noqa: BLE001 - the connection may be gone already
                    pass

    def _result(self, fut, span):
        """A chunk's result; the cluster's failures (not the rows') as ClusterError, with what to do."""
        from concurrent.futures import CancelledError

        from distributed import KilledWorker

        try:
            return fut.result()
        except KilledWorker as exc:
            raise ClusterError(f"the cluster at {self.options.address} lost the workers computing register data rows "
                               f"{span[0] + 1} to {span[1]} several times ({exc}); a worker may be running out of "
                               f"memory: give workers more memory, or fewer threads each") from None
        except (OSError, TimeoutError, CancelledError) as exc:
            raise ClusterError(f"lost the cluster at {self.options.address} during the run: "
                               f"{type(exc).__name__}: {exc}; nothing was written") from None

    def _submit(self, task, key: str):
        return self.client.submit(_remote_compute, task, key=key, pure=False)


def detach(task):
    """The task as it may leave this machine: no path of the user's (the rule file's path, the templates
    folder, messages about rows that are not screened, which may name a row's case file); and what was
    taken out, for :func:`reattach`."""
    import dataclasses

    from screening.case.schema import FieldProblem

    kept = {}
    outcomes = []
    for i, outcome in enumerate(task.outcomes):
        if outcome.problems:  # not screened: only the client needs its messages
            kept[i] = outcome.problems
            outcome = dataclasses.replace(outcome, problems=[FieldProblem("(row)", "not screened")])
        outcomes.append(outcome)
    rule_set = task.rule_set
    if getattr(rule_set, "path", None) is not None:
        rule_set = dataclasses.replace(rule_set, path=None)
    return dataclasses.replace(task, outcomes=outcomes, rule_set=rule_set, memos_dir=None, templates_dir=None), kept


def reattach(chunk, kept: dict):
    """A chunk's result with the messages :func:`detach` kept back."""
    for i, problems in kept.items():
        chunk.outcomes[i].problems = problems
    return chunk


def _takes_n_workers(client) -> bool:
    import inspect

    try:
        return "n_workers" in inspect.signature(client.scheduler_info).parameters
    except (TypeError, ValueError):
        return False
