"""The same Monte Carlo register locally and on a Dask LocalCluster of 1 and 2 workers on loopback.

    python benchmarks/cluster_benchmark.py                      # 100 vessels x 10,000 samples
    python benchmarks/cluster_benchmark.py --repeat 3           # best and median of 3, interleaved
    python benchmarks/cluster_benchmark.py --rows 400 --samples 10000

Every figure is a wall time of ``run_batch`` (read, validate, screen, write the output set) in this
process, against a baseline measured in the same run: the local backend in one process. It prints

- the ratio of each run to that baseline (local with two worker processes, cluster of 1 worker,
  cluster of 2 workers; each worker one process with one thread);
- the time to connect to the scheduler and check every worker's versions (once per run);
- the cluster's overhead per chunk, two ways: (wall time on a 1-worker cluster - wall time of the
  local run in one process - connecting) / number of chunks, where the client's validation overlaps
  the worker's computing; and the round trip of each chunk's task through a worker that does nothing with it
  (serialise, send, schedule, return), which is what a chunk costs beyond its computing;
- the time to start each cluster and to warm its workers (imports), which a long-lived cluster pays once.

The output sets of all runs are compared (byte for byte but the documented ``backend`` value of each
results.json item). Requires dask and distributed (``pip install -e ".[cluster]"``). This is a script,
not a test: it measures; it asserts nothing but that equality.
"""
from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

SOURCE_DATE_EPOCH = "1767225600"  # the summary PDF of every run carries the same date


def _same_output(a: Path, b: Path) -> bool:
    names = sorted(p.relative_to(a) for p in a.rglob("*") if p.is_file())
    if names != sorted(p.relative_to(b) for p in b.rglob("*") if p.is_file()):
        return False
    for name in names:
        x, y = (a / name).read_bytes(), (b / name).read_bytes()
        if name.name == "results.json":
            x = x.replace(b'"backend":"dask"', b'"backend":"local"')
            y = y.replace(b'"backend":"dask"', b'"backend":"local"')
        if x != y:
            return False
    return True


def _nothing(task) -> int:
    """A worker's share of a chunk without the computing: receive the task, answer with a number."""
    return len(task.outcomes)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--rows", type=int, default=100, help="vessels in the register (each with Monte Carlo)")
    ap.add_argument("--samples", type=int, default=10000, help="Monte Carlo samples per vessel")
    ap.add_argument("--repeat", type=int, default=1, help="runs of each backend, interleaved: best and median")
    args = ap.parse_args(argv)
    os.environ["SOURCE_DATE_EPOCH"] = SOURCE_DATE_EPOCH

    import logging

    from distributed import LocalCluster

    import register_benchmark as rb
    from screening.register.batch import run_batch
    from screening.register.cluster import ClusterOptions

    tmp = Path(tempfile.mkdtemp(prefix="heatscreen-cluster-bench-"))
    base = tmp / "base.yaml"
    base.write_text(rb.BASE + rb.UNCERTAINTY.replace("samples: 10000", f"samples: {args.samples}"), encoding="utf-8")
    register = tmp / "register.csv"
    rb.write_register(register, args.rows, seed=5)
    warm = tmp / "warm.csv"
    rb.write_register(warm, 4, seed=6)

    print(f"machine: a fixed pure-Python loop takes {rb.python_loop_seconds():.2f} s now")
    print(f"register: {args.rows} vessels x {args.samples:,} samples = {args.rows * args.samples:,} sample-cases")
    run_batch(warm, tmp / "warm-local", base_path=base, workers=1)  # this process's imports, not timed

    startup: dict[str, float] = {}
    clusters = {}
    try:
        for n in (1, 2):
            name = f"cluster-{n}"
            t0 = time.perf_counter()
            lc = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, host="127.0.0.1",
                              dashboard_address="127.0.0.1:0", silence_logs=logging.ERROR)
            clusters[name] = lc
            run_batch(warm, tmp / f"warm-{name}", base_path=base, cluster=ClusterOptions(lc.scheduler_address))
            startup[name] = time.perf_counter() - t0  # start, and the workers' imports
        return _measure(args, tmp, register, base, clusters, startup)
    finally:
        for lc in clusters.values():
            lc.close()


def _measure(args, tmp: Path, register: Path, base: Path, clusters: dict, startup: dict) -> int:
    import statistics

    from distributed import Client

    from screening.register import batch as batch_mod
    from screening.register import cluster as cluster_mod
    from screening.register.batch import run_batch
    from screening.register.chunks import compute_chunk
    from screening.register.cluster import ClusterOptions

    kwargs = {"local-1": {"workers": 1}, "local-2": {"workers": 2},
              "cluster-1": {"cluster": ClusterOptions(clusters["cluster-1"].scheduler_address)},
              "cluster-2": {"cluster": ClusterOptions(clusters["cluster-2"].scheduler_address)}}
    threads = {"local-1": 1, "local-2": 2, "cluster-1": 1, "cluster-2": 2}
    chunks = {name: len(batch_mod._chunks(args.rows, n)) for name, n in threads.items()}
    walls: dict[str, list] = {name: [] for name in kwargs}
    for r in range(args.repeat):  # interleaved, so that a slow spell of a shared machine hits every backend
        for name, kw in kwargs.items():
            t0 = time.perf_counter()
            run_batch(register, tmp / f"{name}-{r}", base_path=base, **kw)
            walls[name].append(time.perf_counter() - t0)

    connect: dict[str, float] = {}
    round_trip: dict[str, float] = {}
    for name in ("cluster-1", "cluster-2"):
        opts = kwargs[name]["cluster"]
        t0 = time.perf_counter()
        cluster_mod.DaskBackend(opts).__enter__().close()  # connect, check every worker's versions, close
        connect[name] = time.perf_counter() - t0
        # the round trip of each real chunk task through a worker that does nothing with it: the tasks
        # are those of the same register, captured (and computed here) in a run of their own
        tasks = []

        def capture(self, task, key):
            tasks.append(task)
            chunk = compute_chunk(task)

            class Done:
                def result(self):
                    return "here", cluster_mod.versions(), chunk

                def release(self):
                    pass

            return Done()

        saved = cluster_mod.DaskBackend._submit
        cluster_mod.DaskBackend._submit = capture
        try:
            run_batch(register, tmp / f"capture-{name}", base_path=base, cluster=opts)
        finally:
            cluster_mod.DaskBackend._submit = saved
        with Client(clusters[name], set_as_default=False) as client:
            t0 = time.perf_counter()
            for task in tasks:
                client.submit(_nothing, task, pure=False).result()
            round_trip[name] = (time.perf_counter() - t0) / max(1, len(tasks))

    same = all(_same_output(tmp / "local-1-0", tmp / f"{name}-{r}") for name in kwargs for r in range(args.repeat))
    best = {name: min(w) for name, w in walls.items()}
    base_wall = best["local-1"]
    print()
    print(f"  {'backend':<34} {'best s':>8} {'median s':>9} {'ratio':>7} {'chunks':>7}   (ratio: best / baseline's best)")
    labels = {"local-1": "local, one process (baseline)", "local-2": "local, two worker processes",
              "cluster-1": "LocalCluster, 1 worker (loopback)", "cluster-2": "LocalCluster, 2 workers (loopback)"}
    for name, label in labels.items():
        print(f"  {label:<34} {best[name]:>8.2f} {statistics.median(walls[name]):>9.2f} "
              f"{best[name] / base_wall:>7.2f} {chunks[name]:>7}")
    print()
    print(f"cluster of 2 / local with 2 processes (best): {best['cluster-2'] / best['local-2']:.2f}")
    for name in ("cluster-1", "cluster-2"):
        print(f"connecting and checking the workers' versions, once per run ({name}): {connect[name] * 1000:.0f} ms")
    per_chunk = (best["cluster-1"] - base_wall - connect["cluster-1"]) / chunks["cluster-1"]
    print(f"overhead per chunk, (1-worker cluster - local one process - connecting) / chunks: "
          f"{per_chunk * 1000:+.0f} ms")
    for name in ("cluster-1", "cluster-2"):
        print(f"round trip of one chunk's task through a worker that does nothing ({name}): "
              f"{round_trip[name] * 1000:.1f} ms")
    for name in ("cluster-1", "cluster-2"):
        print(f"{name}: start and warm-up (once per cluster, not in the wall times) {startup[name]:.1f} s")
    print(f"output sets identical to the baseline's (but the backend record): {same}")
    print(f"machine after the runs: a fixed pure-Python loop takes {_loop():.2f} s")
    return 0


def _loop() -> float:
    import register_benchmark as rb

    return rb.python_loop_seconds()


if __name__ == "__main__":
    raise SystemExit(main())
