"""Screen one chunk of register rows (in a worker process or in the parent)."""
from __future__ import annotations

import dataclasses
import hashlib
from dataclasses import dataclass, field
from pathlib import Path

from screening import verdict as rules_mod
from screening.case.paths import apply_updates
from screening.case.prepare import collect_inputs, prepare_case
from screening.case.schema import CaseError, FieldProblem
from screening.register.columns import VARYING_KEYS, plan_group, screen_group
from screening.register.outputs import csv_parts, dumps, results_csv_from_parts
from screening.register.reading import Column
from screening.register.rows import RowContext
from screening.register.validation import _derive_inputs, direct_prepared, validate_rows
from screening.register.vectorised import vectorised_values
from screening.report.memo import write_memo
from screening.report.register_summary import summarise_register_results
from screening.report.templates import load_templates
from screening.result import memo_view, public_result
from screening.run.daily_cycle import choose_starts
from screening.run.runaway_case import arrhenius_values
from screening.run.sadt_case import sadt_searches as storage_sadt_searches
from screening.run.conduction_case import conduction_solutions
from screening.run.screen_case import screen_prepared


@dataclass
class RowOutcome:
    row: int
    id: str | None
    result: dict | None = None  # the register summary's row for this vessel (None: not screened)
    json: bytes | None = None  # the full result object, serialised
    problems: list[FieldProblem] = field(default_factory=list)


# ------------------------------------------------------------------ screening


def _row_hash(work: "ChunkWork", cells: list[str]) -> str:
    """sha256 of what defines the row: the base case, the headers and the row's cells."""
    prefixes = work.__dict__.get("_hash_prefixes")
    if prefixes is None:
        prefixes = work.__dict__["_hash_prefixes"] = [(col.index, "\x1f" + col.header + "\x1e")
                                                      for col in work.columns]
    n = len(cells)
    text = work.base_digest + "".join(prefix + cells[index] for index, prefix in prefixes if index < n and cells[index])
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


@dataclass
class ChunkWork:
    columns: list[Column]
    base: dict
    register_dir: str
    allow_case_file: bool
    rules_path: str | None
    rows: list[list[str]]
    row_numbers: list[int]
    id_column: int | None
    bad_columns: dict
    memos_dir: str | None
    templates_dir: str | None
    base_digest: str = ""
    part_stem: str | None = None  # this chunk writes <stem>.json (results.json items) and <stem>.csv (rows)
    cell_problems: dict = field(default_factory=dict)  # row number -> cells that could not be read
    backend: str = "local"  # recorded in each results.json item ("local" or "dask")
    memo_views: bool = False  # hand back each row's memo view instead of writing memos (the cluster backend)


@dataclass
class ChunkResult:
    outcomes: list[RowOutcome]
    json_part: str | None = None
    csv_part: str | None = None
    limit_names: list[str] = field(default_factory=list)  # the results.csv limit columns of csv_part, in order
    json_bytes: bytes | None = None  # results.json items and results.csv rows not yet written to part files
    csv_text: str | None = None
    memos: list = field(default_factory=list)  # (file name, memo view) when the memos are written elsewhere


@dataclass
class ChunkTask:
    """A validated chunk: what is left to compute, as plain data and SI models (no user path, no file).

    The cluster backend sends this to a worker; :func:`compute_chunk` is a pure function of it, so a
    chunk computed again (after a lost worker) gives the same result.
    """
    outcomes: list[RowOutcome]
    columnar: dict  # row index -> (result object, its group's known rule quantities)
    prepared: list  # per row: (PreparedCase, row hash) or None
    values: dict  # row index -> the vectorised engine's numbers
    rule_set: object
    at_start_label: str  # the register summary's label (from the templates, read by the client)
    with_history: bool  # memos are wanted: results keep their histories
    backend: str = "local"
    memos_dir: str | None = None  # local runs write memos here at once; None: memo views are handed back
    templates_dir: str | None = None


def screen_chunk(work: ChunkWork) -> ChunkResult:
    """Validate, screen and judge a block of rows (runs in a worker process)."""
    with _no_gc():
        out = _compute_chunk(_validate_chunk(work))
        return write_parts(out, work.part_stem)


def validate_chunk(work: ChunkWork) -> ChunkTask:
    """Read, validate and prepare a block of rows (the cluster backend's client does this)."""
    with _no_gc():
        return _validate_chunk(work)


def compute_chunk(task: ChunkTask) -> ChunkResult:
    """Screen and judge a validated block of rows; reads and writes no file when ``task.memos_dir`` is None."""
    with _no_gc():
        return _compute_chunk(task)


class _no_gc:
    """The cyclic collector off: many small objects live at once, and it only slows the work down."""

    def __enter__(self):
        import gc

        self.enabled = gc.isenabled()
        gc.disable()

    def __exit__(self, *exc):
        import gc

        if self.enabled:
            gc.enable()


def _structural_problems(work: ChunkWork, row_no: int, cells: list[str]) -> list[FieldProblem]:
    """Problems of a row that no schema sees: cells that could not be read (a workbook's formulas without
    stored values), values under bad headers or under no header."""
    problems = list(work.cell_problems.get(row_no, ())) if work.cell_problems else []
    for index, header in work.bad_columns.items():
        if index < len(cells) and cells[index].strip():
            problems.append(FieldProblem(f"(column {index + 1})", f"a value under the header '{header}', "
                                         f"which is not a valid field path; the row is not screened"))
    width = work.__dict__.get("_width")
    if width is None:
        width = work.__dict__["_width"] = max([c.index for c in work.columns] + list(work.bad_columns) + [-1]) + 1
    if len(cells) > width and any(c.strip() for c in cells[width:]):
        problems.append(FieldProblem("(row)", "values in columns without a header; the row is not screened"))
    return problems


def _validate_chunk(work: ChunkWork) -> ChunkTask:
    ctx = RowContext(work.columns, work.base, work.register_dir, work.allow_case_file)
    rep_inputs: dict[int, list[dict]] = {}
    rep_prepared: dict[int, object] = {}
    rule_set = rules_mod.load_rule_set(work.rules_path)
    columnar: dict[int, tuple] = {}  # row index -> (result object, its group's known rule quantities)

    def prepared_rep(rep_index, rep_spec):
        if rep_index not in rep_prepared:
            try:
                rep_prepared[rep_index] = prepare_case(rep_spec)
            except CaseError:
                rep_prepared[rep_index] = None
        return rep_prepared[rep_index]

    def take_group(rep_index, rep_spec, fast_cols, members):
        if work.memos_dir is not None or work.memo_views:
            return members  # memos need each row's history: the general path
        rep = prepared_rep(rep_index, rep_spec)
        plan = plan_group(rep, fast_cols) if rep is not None else None
        if plan is None:
            return members
        clean, others = [], []
        for i in members:
            (others if _structural_problems(work, work.row_numbers[i], work.rows[i]) else clean).append(i)

        def rep_result(values):
            return public_result(screen_prepared(rep, None, values=values, with_history=False))

        group = screen_group(rep, rep_index, work.rows, clean, plan, lambda cells: _row_hash(work, cells), rep_result)
        if group.results:
            known = rules_mod.constant_quantities(group.template, VARYING_KEYS)
            for i, result in group.results.items():
                columnar[i] = (result, known)
        return sorted(group.left + others)

    validated = validate_rows(ctx, work.rows, build_specs=False, take_group=take_group)
    outcomes: list[RowOutcome] = []
    closed, closed_idx = [], []
    prepared_all: list = [None] * len(work.rows)
    for i, item in enumerate(validated):
        row_no = work.row_numbers[i]
        cells = work.rows[i]
        if item is None:  # screened with its uniform group
            outcomes.append(RowOutcome(row_no, columnar[i][0]["id"]))
            continue
        spec, problems, data = item[:3]
        hint = item[3] if len(item) > 3 else None
        direct = None
        if hint is not None:
            rep_index, updates = hint
            rep = prepared_rep(rep_index, validated[rep_index][0])
            if rep is not None:
                direct = direct_prepared(rep, updates)
            if direct is None:
                spec = apply_updates(validated[rep_index][0], updates)
            else:
                spec = direct.spec
        rid = spec.id if spec is not None else _row_id(work, cells, data)
        outcome = RowOutcome(row_no, rid)
        outcome.problems = list(problems) + _structural_problems(work, row_no, cells)
        if direct is not None and not outcome.problems:
            prepared_all[i] = (direct, _row_hash(work, cells))
            if not direct.model.arrhenius_sources and direct.model.daily_cycle is None:
                closed.append(direct)
                closed_idx.append(i)
        elif spec is not None and not outcome.problems:
            try:
                inputs = None
                if hint is not None:
                    rep_index, updates = hint
                    if rep_index not in rep_inputs:
                        rep_inputs[rep_index] = collect_inputs(validated[rep_index][0])
                    inputs = _derive_inputs(rep_inputs[rep_index], updates)
                prep = rep_prepared.get(i) if hint is None else None  # a representative is prepared once
                if prep is None:
                    prep = prepare_case(spec, inputs=inputs)
                prepared_all[i] = (prep, _row_hash(work, cells))
                if not prep.model.arrhenius_sources and prep.model.daily_cycle is None:
                    closed.append(prep)
                    closed_idx.append(i)
            except CaseError as exc:
                outcome.problems.extend(exc.problems)
        outcomes.append(outcome)
    values = dict(zip(closed_idx, vectorised_values(closed)))
    label = load_templates(work.templates_dir)["labels"]["register_at_start"]
    return ChunkTask(outcomes, columnar, prepared_all, values, rule_set, label, work.memos_dir is not None
                     or work.memo_views, work.backend, None if work.memo_views else work.memos_dir,
                     work.templates_dir)


def _compute_chunk(task: ChunkTask) -> ChunkResult:
    outcomes, columnar, prepared_all, values = task.outcomes, task.columnar, task.prepared, task.values
    rule_set = task.rule_set
    screened: list[tuple[RowOutcome, dict]] = []  # rows with a result, and their result objects
    memos: list = []
    # the SADT searches of every storage row, integrated together (lock-step: the stirred rows on the Arrhenius
    # batch engine, the unstirred ones on the batched conduction integrator) before the rows are written
    try:
        sadt_searches = storage_sadt_searches([prepared_all[i][0] for i in
                                               _rows_one_by_one(task, lambda p: p.model.scenario == "storage")])
    except Exception:  # noqa: BLE001 - each row then runs its own search, and reports its own problem
        sadt_searches = {}
    # the main and adiabatic runs of every row with Arrhenius sources the vectorised engine takes, together
    arr_rows = _rows_one_by_one(task, lambda p: bool(p.model.arrhenius_sources))
    try:
        arr_values = dict(zip(arr_rows, _arrhenius_row_values([prepared_all[i][0] for i in arr_rows])))
    except Exception:  # noqa: BLE001 - each row then runs the single-case engine, and reports its own problem
        arr_values = {}
    conduction = _conduction_solutions(task)
    for i, outcome in enumerate(outcomes):
        if i in columnar:
            result, known = columnar[i]
            prep = None
        elif prepared_all[i] is None or outcome.problems:
            continue
        else:
            prep, case_hash = prepared_all[i]
            known = None
            try:
                result = screen_prepared(prep, case_hash, values=values.get(i), with_history=task.with_history,
                                         sadt_searches=sadt_searches, arrhenius_values=arr_values.get(i),
                                         conduction=conduction.get(i))
            except Exception as exc:  # noqa: BLE001 - one bad row must not lose the others
                outcome.problems.append(FieldProblem("(row)", f"internal error while screening this row: "
                                                              f"{type(exc).__name__}: {exc}"))
                continue
        rules_mod.apply_verdict(result, rules_mod.evaluate(rule_set, result, known))
        result["register_row"] = outcome.row
        result["backend"] = task.backend
        if task.with_history:
            name = f"{_safe_name(result['id'])}-row{outcome.row}.pdf"
            if task.memos_dir is not None:
                write_memo(memo_view(result), Path(task.memos_dir) / name, templates_dir=task.templates_dir)
            else:
                memos.append((name, memo_view(result)))
        public = public_result(result) if prep is not None else result
        try:
            outcome.json = dumps(public)
        except (TypeError, ValueError) as exc:
            outcome.problems.append(FieldProblem("(row)", f"internal error: result not serialisable: {exc}"))
            continue
        screened.append((outcome, public))
    return _chunk_outputs(task, outcomes, screened, memos)


def _arrhenius_row_values(prepared_cases) -> list:
    """The vectorised engine's runs of rows with Arrhenius sources, all rows together: a row with a daily cycle
    first gets its start time of day (the hourly starts of every such row in one run, as ``check`` chooses
    it), and its values carry that start."""
    cycled = [i for i, p in enumerate(prepared_cases) if p.model.daily_cycle is not None]
    chosen = dict(zip(cycled, choose_starts([prepared_cases[i] for i in cycled])))
    cases = [chosen[i][0] if i in chosen else p for i, p in enumerate(prepared_cases)]
    out = arrhenius_values(cases)
    for i in cycled:
        if out[i] is not None:
            out[i] = dataclasses.replace(out[i], start_info=chosen[i][1])
    return out


def _rows_one_by_one(task: ChunkTask, keep) -> list[int]:
    """Indices of the rows screened one by one (prepared, without problems, not in a columnar group) whose
    prepared case passes ``keep``: the rows whose engine work a chunk does together beforehand."""
    return [i for i, item in enumerate(task.prepared) if item is not None and i not in task.columnar
            and not task.outcomes[i].problems and keep(item[0])]


def _conduction_solutions(task: ChunkTask) -> dict:
    """Row index -> conduction solution, for the chunk's unstirred rows integrated in one batch (issue 17).

    Rows with a daily cycle are left out (their start time of day is chosen when they are screened); a row
    whose batch fails is solved on its own when it is screened, where any error is that row's.
    """
    rows = _rows_one_by_one(task, lambda p: p.model.mixing == "unstirred" and p.model.daily_cycle is None)
    if len(rows) < 2:
        return {}
    try:
        solved = conduction_solutions([task.prepared[i][0] for i in rows])
    except (ValueError, RuntimeError):
        return {}
    return dict(zip(rows, solved))


def _chunk_outputs(task: ChunkTask, outcomes: list[RowOutcome], screened: list, memos: list) -> ChunkResult:
    """The chunk's summary rows, its results.json items and its results.csv rows."""
    publics = [public for _, public in screened]
    for (outcome, _), row in zip(screened, summarise_register_results(publics, at_start_label=task.at_start_label)):
        outcome.result = row
    parts = [csv_parts(public) for public in publics]
    names = _limit_names(parts)
    out = ChunkResult(outcomes, limit_names=names, memos=memos)
    out.json_bytes = b",\n".join(o.json for o in outcomes if o.json is not None)
    out.csv_text = results_csv_from_parts(parts, names, header=False)
    return out


def write_parts(out: ChunkResult, part_stem: str | None) -> ChunkResult:
    """Write a chunk's results.json items and results.csv rows to ``<stem>.json`` and ``<stem>.csv``
    (handing back files, not bytes, is cheaper than pickling them); without a stem the items stay
    on the outcomes."""
    if part_stem is None:
        out.json_bytes = out.csv_text = None
        return out
    out.json_part, out.csv_part = part_stem + ".json", part_stem + ".csv"
    with open(out.json_part, "wb") as fh:
        fh.write(out.json_bytes)
    for o in out.outcomes:
        o.json = None  # written
    with open(out.csv_part, "w", encoding="utf-8", newline="") as fh:
        fh.write(out.csv_text)
    out.json_bytes = out.csv_text = None
    return out


def _limit_names(parts: list) -> list[str]:
    """Limit names in order of first appearance."""
    names: dict[str, None] = {}
    for _, limits, _ in parts:
        for name in limits:
            names.setdefault(name)
    return list(names)


def _safe_name(text: str) -> str:
    keep = "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in str(text))
    return keep[:80] or "case"


def _row_id(work: ChunkWork, cells, data) -> str | None:
    if work.id_column is not None and work.id_column < len(cells) and cells[work.id_column]:
        return cells[work.id_column]
    if isinstance(data, dict) and data.get("id") is not None:
        return str(data["id"])
    if isinstance(work.base, dict) and work.base.get("id") is not None:
        return str(work.base["id"])
    return None
