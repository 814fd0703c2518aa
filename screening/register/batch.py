"""Screen a whole register of vessels: every row accounted for.

Pipeline: read the register, turn each row into a case mapping (base case,
optional per-row case file, then the row's cells), validate it with the same
schema as a case file, prepare the SI model, screen all closed-form rows at
once with the vectorised engine (rows with Arrhenius sources one by one),
apply the rule set, and write the output set atomically.

Validation is fast because rows that share a structure (the same filled
columns and the same non-quantity values such as heat-source kinds) are
validated in full once; for the other rows of the group only the quantity
cells are parsed and range-checked, with the same validator the schema uses.
A row whose cells fail that check is validated in full, so its errors are
exactly those a case file would get.
"""
from __future__ import annotations

import hashlib
import json
import math
import os
import shutil
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path

from screening import verdict as rules_mod
from screening.fileio import environment_problem, short_path
from screening.workers import die_with_parent, stop_pool
from screening.register.chunks import ChunkResult, ChunkWork, RowOutcome, screen_chunk, validate_chunk, write_parts
from screening.register.output_set import (
    check_inputs_outside,
    check_output_folder,
    discard,
    new_build_folder,
    swap_in,
    write_marker,
)
from screening.register.outputs import (
    _append_file,
    _write_results_csv,
    errors_csv,
)
from screening.register.reading import Register, read_register
from screening.register.rows import load_base
from screening.report.memo import write_memo
from screening.report.register_summary import write_register_summary

PARALLEL_THRESHOLD = 4000  # rows; below this a single process is faster than starting workers


@dataclass
class BatchSummary:
    rows: int
    valid: int
    invalid: int
    verdict_counts: dict
    exit_code: int
    out_dir: str

    def as_dict(self) -> dict:
        return {"rows": self.rows, "valid": self.valid, "invalid": self.invalid,
                "verdict_counts": self.verdict_counts, "exit_code": self.exit_code, "out_dir": self.out_dir}


def run_batch(register_path, out_dir, base_path=None, rules_path=None, memos=False, allow_case_file_column=True,
              progress=None, templates_dir=None, workers: int | None = None, cluster=None) -> dict:
    """Screen a register and write the output set; returns a summary dict.

    Raises OutputFolderError (``out_dir`` holds files that are not a previous output set),
    RegisterError (the file cannot be read at all), CaseError (the base case cannot be read)
    or RuleSetError (bad rule file) before anything is written.

    ``cluster`` (a :class:`screening.register.cluster.ClusterOptions`) screens the chunks on a Dask
    cluster: this process still reads, validates and writes everything; ClusterError (exit 2) when the
    address is refused, the scheduler cannot be reached or a worker's versions differ from ours.
    """
    if cluster is not None:
        cluster.check()  # an unsafe address is refused before anything else
    target = check_output_folder(out_dir)  # before any work: nothing is written into a folder it may not replace
    check_inputs_outside(target, (register_path, base_path, rules_path, templates_dir))
    rules_mod.load_rule_set(rules_path)  # fail early, before any work
    register = read_register(register_path)
    base = load_base(base_path)
    out = Path(out_dir)
    backend = None
    if cluster is not None:
        from screening.register.cluster import DaskBackend

        backend = DaskBackend(cluster).__enter__()  # connected, every worker's versions checked: nothing written yet
    try:
        tmp = new_build_folder(target)
        try:
            summary = _run_into(register, base, tmp, out, rules_path, memos, allow_case_file_column, progress,
                                templates_dir, workers, backend)
            write_marker(tmp, "batch")
            swap_in(tmp, target)
        except BaseException as exc:
            discard(tmp)
            problem = environment_problem(exc, f"--out {short_path(out)}: cannot write the output set in "
                                               f"{short_path(target.parent)}")
            if problem is not None and problem is not exc:  # e.g. the disk full: the user's environment, exit 2
                raise problem from None
            raise
    finally:
        if backend is not None:
            backend.close()
    return summary.as_dict()


CHUNK_ROWS = 5000  # at most this many rows per chunk: smaller chunks keep a worker's data in cache


ENGINE_PARALLEL_THRESHOLD = 500  # rows; registers of integrated rows (Arrhenius, conduction) gain from 2 workers from here
INTEGRATED_KINDS = ("arrhenius", "autocatalytic")


def _chunks(n: int, workers: int, integrated: bool = False) -> list[tuple[int, int]]:
    """Row spans of the chunks: four per worker; one per worker for integrated rows.

    A chunk's integrated rows (Arrhenius sources, conduction) are solved together, and each integration
    costs a fixed time per step of the batch besides its cost per row: fewer, larger chunks are much
    cheaper (2,000 drums: 6.6 s of CPU in one chunk, 9.9 s in four).
    """
    if n == 0:
        return [(0, 0)]
    per_worker = 1 if integrated else 4
    size = max(1, min(CHUNK_ROWS, math.ceil(n / max(1, workers * per_worker))))
    return [(a, min(n, a + size)) for a in range(0, n, size)]


def _integrated_rows(base: dict, register: Register) -> bool:
    """Whether the register's rows look like integrated ones: the base case or a row's cell names a
    temperature-dependent source kind, or unstirred contents (a guess used only to size the chunks)."""
    def named(value) -> bool:
        text = str(value).strip().lower()
        return text in INTEGRATED_KINDS or text == "unstirred"

    if isinstance(base, dict):
        sources = base.get("heat_sources")
        if isinstance(sources, list) and any(isinstance(s, dict) and named(s.get("kind")) for s in sources):
            return True
        contents = base.get("contents")
        if isinstance(contents, dict) and named(contents.get("mixing")):
            return True
    wanted = [c.index for c in register.columns if c.path and c.path[-1] in ("kind", "mixing")]
    return any(index < len(cells) and named(cells[index]) for index in wanted for cells in register.rows[:1000])


def _run_into(register: Register, base: dict, tmp: Path, out: Path, rules_path, memos, allow_case_file, progress,
              templates_dir, workers, cluster=None) -> BatchSummary:
    import gc

    enabled = gc.isenabled()
    gc.disable()  # hundreds of thousands of small objects: the cyclic collector only costs time here
    try:
        return _run_into_body(register, base, tmp, out, rules_path, memos, allow_case_file, progress,
                              templates_dir, workers, cluster)
    finally:
        if enabled:
            gc.enable()


def _run_into_body(register: Register, base: dict, tmp: Path, out: Path, rules_path, memos, allow_case_file,
                   progress, templates_dir, workers, cluster=None) -> BatchSummary:
    id_col = next((c.index for c in register.columns if c.path == ("id",)), None)
    memos_dir = None
    if memos:
        memos_dir = tmp / "memos"
        memos_dir.mkdir()
    n = len(register.rows)
    integrated = cluster is None and not memos and _integrated_rows(base, register)
    if cluster is not None:
        workers = cluster.threads()  # chunks as a local run with as many worker processes would make
    elif workers is None:
        heavy = ((memos and n >= 8) or (isinstance(base.get("uncertainty"), dict) and n >= 20)
                 or (integrated and n >= ENGINE_PARALLEL_THRESHOLD))
        workers = min(2, os.cpu_count() or 1) if (n >= PARALLEL_THRESHOLD or heavy) else 1
    spans = _chunks(n, workers, integrated)

    base_digest = hashlib.sha256(json.dumps(base, sort_keys=True, default=str).encode("utf-8")).hexdigest()

    parts_dir = tmp / ".parts"
    parts_dir.mkdir()

    def work(a, b):
        numbers = register.row_numbers[a:b]
        cell_problems = {n: register.cell_problems[n] for n in numbers if n in register.cell_problems} \
            if register.cell_problems else {}
        if cluster is not None:  # validated here; the workers get memo views back to this process, no path
            return ChunkWork(register.columns, base, str(register.path.parent), allow_case_file, rules_path,
                             register.rows[a:b], numbers, id_col, register.bad_columns, None,
                             str(templates_dir) if templates_dir else None, base_digest, None, cell_problems,
                             backend="dask", memo_views=memos_dir is not None)
        return ChunkWork(register.columns, base, str(register.path.parent), allow_case_file, rules_path,
                         register.rows[a:b], numbers, id_col, register.bad_columns,
                         str(memos_dir) if memos_dir else None, str(templates_dir) if templates_dir else None,
                         base_digest, str(parts_dir / f"part-{a:09d}"), cell_problems)

    outcomes: list[RowOutcome] = []
    chunks: list[ChunkResult] = []
    json_out = open(tmp / "results.json", "wb")
    json_out.write(b"[")

    def take(chunk: ChunkResult, done: int) -> None:
        """Collect a finished chunk, in order; its results.json items are appended at once."""
        outcomes.extend(chunk.outcomes)
        chunks.append(chunk)
        if chunk.json_part is not None and os.path.getsize(chunk.json_part):
            if json_out.tell() > 1:
                json_out.write(b",\n")
            _append_file(json_out, chunk.json_part)
        if progress:
            progress(done, n)

    try:
        if workers > 1 and len(spans) > 1:
            import multiprocessing

            if multiprocessing.current_process().daemon:
                workers = 1  # a daemonic worker (e.g. the service's) cannot start processes of its own
        if cluster is not None:
            for (a, b), chunk in cluster.screen(spans, lambda a, b: validate_chunk(work(a, b))):
                write_parts(chunk, str(parts_dir / f"part-{a:09d}"))
                for name, view in chunk.memos:  # the memos are written here, by this process only
                    write_memo(view, memos_dir / name, templates_dir=templates_dir)
                chunk.memos = []
                take(chunk, b)
        elif workers <= 1 or len(spans) == 1:
            for a, b in spans:
                take(screen_chunk(work(a, b)), b)
        else:
            pool = ProcessPoolExecutor(max_workers=workers, initializer=die_with_parent, initargs=(os.getpid(),))
            try:
                futures = [pool.submit(screen_chunk, work(a, b)) for a, b in spans]
                for (a, b), fut in zip(spans, futures):
                    take(fut.result(), b)
            except BaseException:
                stop_pool(pool)  # an error or a signal: the workers stop now, not after their chunks
                raise
            finally:
                pool.shutdown(wait=True)
        json_out.write(b"]\n")
    finally:
        json_out.close()
    results = [o.result for o in outcomes if o.result is not None]
    errors = [{"row": 1, "id": None, "field": p.field, "message": p.message} for p in register.header_problems]
    errors += [{"row": o.row, "id": o.id, "field": p.field, "message": p.message}
               for o in outcomes for p in o.problems]
    _write_results_csv(tmp / "results.csv", chunks)
    shutil.rmtree(parts_dir, ignore_errors=True)
    (tmp / "errors.csv").write_text(errors_csv(errors), encoding="utf-8", newline="")

    write_register_summary(results, errors, tmp / "summary.pdf", templates_dir=templates_dir, summarised=True)
    counts = {"pass": 0, "review": 0, "fail": 0}
    for r in results:
        counts[r.get("verdict", "review")] = counts.get(r.get("verdict", "review"), 0) + 1
    invalid = sum(1 for o in outcomes if o.result is None)
    code = 2 if (invalid or register.header_problems) else (1 if counts["review"] or counts["fail"] else 0)
    return BatchSummary(rows=n, valid=len(results), invalid=invalid, verdict_counts=counts, exit_code=code,
                        out_dir=str(out))
