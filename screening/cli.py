"""The ``heatscreen`` command line: a thin shell around the screening core.

Exit codes: 0 all pass; 1 some verdict is review or fail; 2 invalid input or
usage; 3 a failure inside the tool.
"""
from __future__ import annotations

import contextlib
import csv
import json
import os
import re
import sys
import tempfile
from pathlib import Path
from typing import Optional

import typer

from screening.resources import demo_cases

app = typer.Typer(add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
                  help="Loss-of-cooling and runaway screening for vessels. Screening estimates only: not a design "
                       "or relief-sizing calculation; defer to codes, test data and qualified review.")

EXIT_OK, EXIT_REVIEW, EXIT_INVALID, EXIT_INTERNAL = 0, 1, 2, 3


class _State:
    debug = False


# Control characters (C0 but newline and tab, DEL, C1) and the bidirectional overrides and isolates: in
# text the user wrote (ids, limit names, paths) they could move the cursor, clear or rewrite lines on a
# terminal (say, the verdict line), or reorder what is shown. They are printed as \uXXXX escapes, which
# are also valid inside JSON strings.
_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]")


def terminal_safe(text: str) -> str:
    """``text`` with every control character escaped (newlines and tabs kept)."""
    return _UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


def _echo(message="", err: bool = False, nl: bool = True) -> None:
    """What the commands print: never a raw control character from the input."""
    typer.echo(terminal_safe(str(message)), err=err, nl=nl)


def _print_problems(problems, where: str | None = None) -> None:
    head = f"{where}: " if where else ""
    _echo(f"{head}invalid input ({len(problems)} problem{'s' if len(problems) != 1 else ''}):", err=True)
    for p in problems:
        _echo(f"  {p.field}: {p.message}", err=True)


def _fail_internal(exc: BaseException) -> None:
    if _State.debug:
        raise exc
    _echo(f"heatscreen: internal error: {type(exc).__name__}: {exc}. Run again with --debug for details.",
          err=True)
    raise typer.Exit(EXIT_INTERNAL)


def _exit_for(results: list[dict]) -> int:
    return EXIT_REVIEW if any(r.get("verdict") in ("review", "fail") for r in results) else EXIT_OK


def write_atomic_text(path: Path, text: str) -> None:
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=str(path.parent or "."))
    try:
        from screening.fileio import with_umask

        with_umask(tmp)  # mkstemp makes 0600; give what the umask gives new files
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def _write_output_text(path: Path, text: str, option: str) -> None:
    """Write a one-file output atomically; a path that cannot be written is the user's input problem."""
    try:
        write_atomic_text(path, text)
    except OSError as exc:
        from screening.case.schema import CaseError, FieldProblem

        raise CaseError([FieldProblem(option, f"cannot write {path}: {exc.strerror or exc}; expected a path in an "
                                              f"existing, writable folder")]) from None


def history_csv(result: dict) -> str:
    from io import StringIO

    from screening.case.units import kelvin_to

    unit = result["units"]["temperature"]
    h = result["_history"]
    buf = StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["time_s", "time_h", "temperature_K", f"temperature_{unit}", "heat_generation_W", "heat_loss_W"])
    for t, T, g, l in zip(h["time_s"], h["temperature_K"], h["generation_W"], h["loss_W"]):
        w.writerow([f"{t:.9g}", f"{t / 3600:.9g}", f"{T:.9g}", f"{kelvin_to(T, unit):.9g}", f"{g:.9g}", f"{l:.9g}"])
    return buf.getvalue()


def _guard(fn):
    """Run a command body: input problems -> exit 2, anything unexpected -> exit 3."""
    from screening.case.schema import CaseError

    try:
        return fn()
    except CaseError as exc:
        _print_problems(exc.problems)
        raise typer.Exit(EXIT_INVALID)
    except typer.Exit:
        raise
    except Exception as exc:  # noqa: BLE001
        rule_error = _rule_error(exc)
        if rule_error:
            _print_problems(rule_error, "rule set")
            raise typer.Exit(EXIT_INVALID)
        template_error = _template_error(exc)
        if template_error:
            _echo(f"templates: {template_error}", err=True)
            raise typer.Exit(EXIT_INVALID)
        from screening.errors import InputError
        from screening.fileio import environment_problem

        if isinstance(exc, InputError):  # e.g. an output path that would replace a user's files
            _echo(str(exc), err=True)
            raise typer.Exit(EXIT_INVALID)
        problem = environment_problem(exc, "heatscreen")  # the user's file system refused (disk full, ...)
        if problem is not None:
            _echo(str(problem), err=True)
            raise typer.Exit(EXIT_INVALID)
        _fail_internal(exc)


def _rule_error(exc):
    try:
        from screening.verdict.rule_file import RuleSetError
    except ImportError:  # pragma: no cover
        return None
    if isinstance(exc, RuleSetError):
        from screening.case.schema import FieldProblem

        return [FieldProblem(f, m) for f, m in exc.problems]
    return None


def _template_error(exc):
    if type(exc).__name__ == "TemplateError":
        return str(exc)
    return None


@app.callback()
def main(debug: bool = typer.Option(False, "--debug", help="Show a traceback on internal errors.")):
    _State.debug = debug


@app.command()
def check(case: str = typer.Argument(..., help="Case file (YAML, TOML or JSON)."),
          json_out: bool = typer.Option(False, "--json", help="Print the result as JSON."),
          history: Optional[Path] = typer.Option(None, "--history", help="Write the temperature history to a CSV file."),
          rules: Optional[str] = typer.Option(None, "--rules", help="Rule set file (TOML); default: the shipped set.")):
    """Screen one case: time to each limit, peak, steady state, criteria, verdict."""
    from screening.report.text import format_result
    from screening.result import json_safe, public_result

    def body():
        from screening.run.pipeline import screen_file

        if history is not None:
            from screening.register.output_set import check_single_output

            check_single_output(history, "--history", inputs=(case, rules))
        with _terminal_progress():  # a Monte Carlo analysis shows its progress
            result = screen_file(case, rules)
        if history is not None:
            try:
                write_atomic_text(history, history_csv(result))
            except OSError as exc:
                from screening.case.schema import CaseError, FieldProblem

                raise CaseError([FieldProblem("--history", f"cannot write {history}: {exc.strerror or exc}; "
                                                           f"expected a path in an existing, writable folder")])
        if json_out:
            _echo(json.dumps(json_safe(public_result(result)), indent=2, ensure_ascii=False, allow_nan=False))
        else:
            _echo(format_result(result))
        return _exit_for([result])

    raise typer.Exit(_guard(body))


@app.command()
def memo(case: str = typer.Argument(..., help="Case file (YAML, TOML or JSON)."),
         output: Path = typer.Option(..., "-o", "--output", help="PDF file to write."),
         rules: Optional[str] = typer.Option(None, "--rules", help="Rule set file (TOML)."),
         templates: Optional[Path] = typer.Option(None, "--templates", help="Folder of memo templates.")):
    """Write a PDF review memo for one case."""

    def body():
        from screening.register.output_set import check_single_output
        from screening.run.pipeline import screen_file

        template_file = None
        if templates is not None:
            from screening.report.templates import TEMPLATE_FILE

            template_file = Path(templates) / TEMPLATE_FILE
        check_single_output(output, "--output", inputs=(case, rules, template_file))
        with _terminal_progress():
            result = screen_file(case, rules)
        from screening.report.memo import write_memo
        from screening.result import memo_view

        try:
            write_memo(memo_view(result), output, templates_dir=templates)
        except OSError as exc:
            from screening.case.schema import CaseError, FieldProblem

            raise CaseError([FieldProblem("--output", f"cannot write {output}: {exc.strerror or exc}; expected a "
                                                      f"path in an existing, writable folder")]) from None
        _echo(f"wrote {output}")
        return _exit_for([result])

    raise typer.Exit(_guard(body))


@app.command()
def batch(register: Path = typer.Argument(..., help="Register of vessels (.csv or .xlsx), one row per case."),
          out: Path = typer.Option(..., "--out", help="Folder for results.json, results.csv, errors.csv, summary.pdf."),
          base: Optional[Path] = typer.Option(None, "--base", help="Base case file supplying what a row does not."),
          rules: Optional[str] = typer.Option(None, "--rules", help="Rule set file (TOML)."),
          memos: bool = typer.Option(False, "--memos", help="Also write one memo per case into OUT/memos/."),
          templates: Optional[Path] = typer.Option(None, "--templates", help="Folder of memo templates."),
          scheduler: Optional[str] = typer.Option(
              None, "--scheduler", help="Screen on a Dask cluster: the scheduler's address (tls://HOST:PORT; "
                                        "tcp:// only on loopback unless --insecure-cluster). Default: "
                                        "$HEATSCREEN_SCHEDULER if set, else this machine. Needs heatscreen[cluster]."),
          insecure_cluster: bool = typer.Option(
              False, "--insecure-cluster", help="Allow a plain tcp:// scheduler address other than loopback "
                                                "(no authentication, no encryption: a trusted, isolated network only)."),
          tls_ca: Optional[Path] = typer.Option(None, "--tls-ca", help="tls://: CA certificate (PEM) that signed the "
                                                                       "scheduler's and workers' certificates."),
          tls_cert: Optional[Path] = typer.Option(None, "--tls-cert", help="tls://: this client's certificate (PEM)."),
          tls_key: Optional[Path] = typer.Option(None, "--tls-key", help="tls://: this client's private key (PEM).")):
    """Screen every row of a register; bad rows are reported by row and field, good rows still screened."""

    def body():
        from screening.register.batch import run_batch
        from screening.register.reading import RegisterError

        cluster = None
        if scheduler or os.environ.get("HEATSCREEN_SCHEDULER", "").strip() or insecure_cluster or tls_ca \
                or tls_cert or tls_key:
            from screening.register.cluster import options_from

            cluster = options_from(scheduler, insecure_cluster, tls_ca, tls_cert, tls_key)
            for warning in cluster.check():
                _echo(warning, err=True)
            _echo(f"screening on cluster {cluster.address}"
                  + (" (from HEATSCREEN_SCHEDULER)" if cluster.from_environment else ""), err=True)
        try:
            with _terminal_progress() as reporter:
                summary = run_batch(register, out, base_path=base, rules_path=rules, memos=memos,
                                    progress=_BatchBar(reporter) if reporter is not None else None,
                                    templates_dir=templates, cluster=cluster)
        except RegisterError as exc:
            _echo(f"register: {exc.message}", err=True)
            return EXIT_INVALID
        counts = summary["verdict_counts"]
        _echo(f"{summary['rows']} rows: {summary['valid']} screened ({counts.get('pass', 0)} pass, "
              f"{counts.get('review', 0)} review, {counts.get('fail', 0)} fail), {summary['invalid']} invalid. "
              f"Wrote {out}/results.json, results.csv, errors.csv, summary.pdf"
              + (" and memos/" if memos else "") + ".")
        if summary["invalid"]:
            _echo(f"See {out}/errors.csv for the invalid rows (row number, field, message).", err=True)
        return summary["exit_code"]

    raise typer.Exit(_guard(body))


class _RichReporter:
    """Progress bars on stderr (rich): what runs, how far, the rate and the time left. Only on a terminal."""

    def __init__(self, stream):
        from rich.console import Console
        from rich.progress import (
            BarColumn,
            MofNCompleteColumn,
            Progress,
            ProgressColumn,
            TextColumn,
            TimeElapsedColumn,
            TimeRemainingColumn,
        )
        from rich.text import Text

        class RateColumn(ProgressColumn):
            def render(self, task):
                return Text("" if task.speed is None else f"{task.speed:.3g}/s")

        self.progress = Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(), RateColumn(),
                                 TimeElapsedColumn(), TextColumn("left"), TimeRemainingColumn(),
                                 console=Console(file=stream, stderr=True), transient=False)

    def start(self, description: str, total: float):
        progress = self.progress
        task_id = progress.add_task(description, total=total)

        class Handle:
            def advance(self, n):
                progress.advance(task_id, n)

            def add_total(self, n):
                progress.update(task_id, total=progress.tasks[task_id].total + n)

            def close(self):
                progress.update(task_id, completed=progress.tasks[task_id].total)

        return Handle()


@contextlib.contextmanager
def _terminal_progress():
    """Bars on stderr when stderr is an interactive terminal; nothing otherwise (stdout never changes)."""
    if not sys.stderr.isatty():
        yield None
        return
    from screening import progress

    reporter = _RichReporter(sys.stderr)
    with reporter.progress, progress.reporting(reporter):
        yield reporter


class _BatchBar:
    """``run_batch``'s progress callback (rows done, rows in all) as a task of the terminal's bars."""

    def __init__(self, reporter):
        self.reporter, self.handle, self.done = reporter, None, 0

    def __call__(self, done: int, total: int) -> None:
        if self.handle is None:
            self.handle = self.reporter.start("batch: rows", total)
        self.handle.advance(done - self.done)
        self.done = done


@app.command()
def diff(old: Path = typer.Argument(..., help="Output folder of the earlier batch run."),
         new: Path = typer.Argument(..., help="Output folder of the later batch run."),
         csv_out: Optional[Path] = typer.Option(None, "--csv", help="Also write the changes as CSV."),
         margin_tolerance: float = typer.Option(0.01, "--margin-tolerance",
                                                help="Smallest margin change that counts, in hours.")):
    """List vessels whose verdict, margin or inputs changed between two batch runs."""

    def body():
        from screening.register.diff import diff_runs, format_table, to_csv

        if csv_out is not None:
            from screening.register.output_set import check_single_output

            check_single_output(csv_out, "--csv", inputs=(Path(old) / "results.json", Path(new) / "results.json"))
        changes = diff_runs(old, new, margin_tolerance_s=margin_tolerance * 3600.0)
        _echo(format_table(changes))
        if csv_out is not None:
            _write_output_text(csv_out, to_csv(changes), "--csv")
        return EXIT_REVIEW if changes else EXIT_OK

    raise typer.Exit(_guard(body))


@app.command()
def margin(case: str = typer.Argument(..., help="Case file (YAML, TOML or JSON)."),
           vary: str = typer.Option(..., "--vary", help="Dotted path of the input to vary, e.g. "
                                                         "heat_loss.ambient_temperature, contents.mass, heat_loss.ua, "
                                                         "heat_sources.0.power, response_time."),
           low: Optional[str] = typer.Option(None, "--low", help="Low end of the scan, with a unit or as % of the "
                                                                 "case value (default: a wide range around it)."),
           high: Optional[str] = typer.Option(None, "--high", help="High end of the scan, with a unit or as %."),
           points: Optional[int] = typer.Option(None, "--points", min=3, max=2001, help="Scan points."),
           rules: Optional[str] = typer.Option(None, "--rules", help="Rule set file (TOML)."),
           json_out: bool = typer.Option(False, "--json", help="Print the result as JSON.")):
    """Allowable values: where one input's value changes the case's overall verdict."""

    def body():
        from screening.case.files import load_case_file
        from screening.case.prepare import prepare_case
        from screening.run.allowable_values import (
            find_allowable_values,
            format_allowable,
            locate_input,
            parse_bound,
        )

        loaded = load_case_file(case)
        spec = loaded.spec.model_copy(update={"uncertainty": None})
        prepared = prepare_case(spec)
        _, q, _ = locate_input(prepared.spec, vary)
        lo = parse_bound(low, q, "--low") if low is not None else None
        hi = parse_bound(high, q, "--high") if high is not None else None
        with _terminal_progress():
            report = find_allowable_values(prepared, vary, lo, hi, points, rules)
        if json_out:
            _echo(json.dumps(report, indent=2, ensure_ascii=False, allow_nan=False))
        else:
            _echo(format_allowable(report))
        return EXIT_OK

    raise typer.Exit(_guard(body))


@app.command()
def serve(host: str = typer.Option("127.0.0.1", "--host", help="Address to bind (127.0.0.1 keeps it on this machine)."),
          port: int = typer.Option(8000, "--port", help="TCP port."),
          db: Optional[str] = typer.Option(None, "--db", metavar="FILE",
                                           help="Run record: SQLite file (default heatscreen-runs.sqlite) or a "
                                                "SQLAlchemy URL."),
          token: Optional[str] = typer.Option(None, "--token", envvar="HEATSCREEN_TOKEN",
                                              help="Token every endpoint but /health wants.")):
    """Run the HTTP API and web page (screening estimates only)."""
    if token is None and "HEATSCREEN_TOKEN" in os.environ:  # set but empty: typer reads it as not given
        token = os.environ["HEATSCREEN_TOKEN"]
    if token is not None and not token.strip():
        from screening.service.settings import EMPTY_TOKEN

        _echo(f"heatscreen serve: {EMPTY_TOKEN}", err=True)
        raise typer.Exit(EXIT_INVALID)
    try:
        from screening.service.app import serve as run_service
    except ImportError as exc:
        _echo(f"heatscreen serve needs the service extra: pip install -e '.[service]' ({exc})", err=True)
        raise typer.Exit(EXIT_INVALID)
    run_service(host, port, db, token)


@app.command()
def example(output: Optional[Path] = typer.Argument(None, help="Where to write it (default: print); an existing "
                                                                "file is not replaced.")):
    """Write an annotated example case to start from."""
    text = demo_cases().joinpath("example_case.yaml").read_text(encoding="utf-8")
    if output is None:
        _echo(text, nl=False)
        return

    def body():
        from screening.register.output_set import check_single_output

        check_single_output(output, "OUTPUT")
        try:
            same = output.exists() and output.read_bytes() == text.encode("utf-8")
        except OSError:
            same = False
        if output.exists() and not same:
            # the example is a starting point: a file already there is likely a case being edited
            _echo(f"OUTPUT {output} already exists; heatscreen example does not replace a file. Give a new "
                  f"file name, or delete the file first.", err=True)
            return EXIT_INVALID
        _write_output_text(output, text, "OUTPUT")
        _echo(f"wrote {output}")
        return EXIT_OK

    raise typer.Exit(_guard(body))


@app.command()
def kinetics(
        runs: list[Path] = typer.Argument(..., help="Calorimeter runs: CSV files whose header gives each column "
                                                    "with its unit in square brackets (time, temperature, heat_flow; "
                                                    "adiabatic runs: time, temperature, optionally self_heat_rate)."),
        json_out: bool = typer.Option(False, "--json", help="Print the result as JSON."),
        exo_down: bool = typer.Option(False, "--exo-down", help="The instrument plots exotherms negative."),
        sample_mass: Optional[str] = typer.Option(None, "--sample-mass", help="Sample mass, for an absolute heat "
                                                                            "flow (e.g. '3.2 mg'); with --adiabatic, "
                                                                            "for phi."),
        limits: Optional[tuple[str, str]] = typer.Option(None, "--range", help="Integration limits LOW HIGH "
                                                                               "(temperatures; times with "
                                                                               "--isothermal)."),
        mass_fraction: Optional[str] = typer.Option(None, "--mass-fraction", help="Share of the tested substance "
                                                                                "in the case's contents (e.g. "
                                                                                "'40 %'): scales the heat."),
        isothermal: bool = typer.Option(False, "--isothermal", help="The runs are isothermal holds."),
        adiabatic: bool = typer.Option(False, "--adiabatic", help="One adiabatic (accelerating-rate) run."),
        phi: Optional[float] = typer.Option(None, "--phi", help="Thermal-inertia factor of the adiabatic run."),
        sample_specific_heat: Optional[str] = typer.Option(None, "--sample-specific-heat",
                                                           help="Adiabatic run: the sample's specific heat."),
        cell_mass: Optional[str] = typer.Option(None, "--cell-mass", help="Adiabatic run: mass of the cell, for phi."),
        cell_specific_heat: Optional[str] = typer.Option(None, "--cell-specific-heat",
                                                         help="Adiabatic run: the cell's specific heat, for phi."),
        onset_threshold: Optional[str] = typer.Option(None, "--onset-threshold",
                                                      help="Adiabatic run: detection threshold of the self-heat "
                                                           "rate (default '0.02 K/min')."),
        temperature_of_interest: Optional[str] = typer.Option(
            None, "--temperature-of-interest", help="Lowest temperature of interest (e.g. storage), where the "
                                                    "models' TMRad are compared (default: low end of the data)."),
        specific_heat: Optional[str] = typer.Option(None, "--specific-heat", help="Specific heat of the contents "
                                                                                 "for the TMRad comparison "
                                                                                 "(default 2 kJ/(kg*K))."),
        source_out: Optional[Path] = typer.Option(None, "--source-out", help="Write the heat-source block and "
                                                                             "its uncertainty entries (YAML)."),
        source_index: int = typer.Option(0, "--source-index", min=0, help="Position of the source in the case's "
                                                                          "heat_sources (for the uncertainty "
                                                                          "paths)."),
        label: Optional[str] = typer.Option(None, "--label", help="Label of the source block."),
        plot: Optional[Path] = typer.Option(None, "--plot", help="Draw the data against the fitted models (PDF)."),
):
    """Kinetics from calorimeter runs: DSC at several heating rates, isothermal or adiabatic runs."""

    def body():
        from screening.case.calorimeter_runs import parse_option_quantity, read_run
        from screening.case.schema import CaseError, FieldProblem
        from screening.report.kinetics_text import format_kinetics
        from screening.result import json_safe
        from screening.run.kinetics_analysis import KineticsOptions, analyse_adiabatic, analyse_dsc

        if isothermal and adiabatic:
            raise CaseError([FieldProblem("--isothermal", "give --isothermal or --adiabatic, not both")])
        if adiabatic and len(runs) != 1:
            raise CaseError([FieldProblem("--adiabatic", f"{len(runs)} runs given; expected one adiabatic run")])
        for option, path in (("--source-out", source_out), ("--plot", plot)):
            if path is not None:
                from screening.register.output_set import check_single_output

                check_single_output(path, option, inputs=runs)
        q = lambda text, dim, opt: None if text is None else parse_option_quantity(text, dim, opt)  # noqa: E731
        fraction = 1.0 if mass_fraction is None else q(mass_fraction, "fraction", "--mass-fraction")
        if not 0 < fraction <= 1:
            raise CaseError([FieldProblem("--mass-fraction", f"'{mass_fraction}' must be above 0 and at most 100 %")])
        window = None
        if limits is not None:
            dim = "time" if isothermal else "temperature"
            window = (q(limits[0], dim, "--range"), q(limits[1], dim, "--range"))
            if not window[0] < window[1]:
                raise CaseError([FieldProblem("--range", f"the low end ({limits[0]}) is not below the high end "
                                                         f"({limits[1]}); expected LOW HIGH")])
        threshold = None
        if onset_threshold is not None:
            from screening.case.calorimeter_runs import rate_quantity

            threshold = rate_quantity(onset_threshold, "--onset-threshold")
        options = KineticsOptions(
            exo_down=exo_down, sample_mass=q(sample_mass, "mass", "--sample-mass"), limits=window,
            mass_fraction=fraction, isothermal=isothermal,
            temperature_of_interest=q(temperature_of_interest, "temperature", "--temperature-of-interest"),
            specific_heat=q(specific_heat, "specific_heat", "--specific-heat"), source_index=source_index,
            label=label, phi=phi, sample_specific_heat=q(sample_specific_heat, "specific_heat",
                                                         "--sample-specific-heat"),
            cell_mass=q(cell_mass, "mass", "--cell-mass"),
            cell_specific_heat=q(cell_specific_heat, "specific_heat", "--cell-specific-heat"),
            **({"onset_threshold": threshold} if threshold is not None else {}))
        kind = "adiabatic" if adiabatic else "dsc"
        data = [read_run(path, kind, sample_mass=None if adiabatic else options.sample_mass) for path in runs]
        if sys.stderr.isatty() and not adiabatic:
            _echo(f"fitting the n-th-order and autocatalytic models to {len(data)} runs ...", err=True)
        result = analyse_adiabatic(data[0], options) if adiabatic else analyse_dsc(data, options)
        if source_out is not None:
            from screening.run.kinetics_analysis import source_yaml

            _write_output_text(source_out, source_yaml(result), "--source-out")
        if plot is not None:
            from screening.report.kinetics_plot import write_kinetics_plot

            try:
                write_kinetics_plot(plot, result)
            except OSError as exc:
                raise CaseError([FieldProblem("--plot", f"cannot write {plot}: {exc.strerror or exc}; expected a "
                                                        f"path in an existing, writable folder")]) from None
        if json_out:
            public = {k: v for k, v in result.items() if not k.startswith("_")}
            _echo(json.dumps(json_safe(public), indent=2))
        else:
            _echo(format_kinetics(result))
            for path, what in ((source_out, "source block"), (plot, "plot")):
                if path is not None:
                    _echo(f"wrote the {what} to {path}")
        return EXIT_OK

    raise typer.Exit(_guard(body))


@app.command()
def schema():
    """Print the JSON Schema of the case-file format."""
    from screening.case.schema import case_json_schema

    _echo(json.dumps(case_json_schema(), indent=2))


@app.command()
def demo(out: Path = typer.Option(Path("heatscreen-demo"), "--out", help="Folder for the demo memos."),
         memos: bool = typer.Option(True, "--memos/--no-memos", help="Write a memo for each demo case.")):
    """Screen the bundled demo cases (an invented site) and print the results."""
    from screening.report.text import format_result
    from screening.run.pipeline import screen_file

    def body():
        from screening.register.batch import run_batch
        from screening.register.output_set import (
            check_output_folder,
            discard,
            new_build_folder,
            swap_in,
            write_marker,
        )

        target = check_output_folder(out)  # the demo's files go in as one set, like a register's
        folder = demo_cases()
        names = sorted(p.name for p in folder.iterdir() if p.name.endswith(".yaml") and p.name != "example_case.yaml")
        results = []
        for name in names:
            path = str(folder.joinpath(name))
            result = screen_file(path)
            results.append(result)
            _echo(format_result(result))
            _echo("")
        build = new_build_folder(target)
        try:
            wrote_memos = False
            if memos:
                try:
                    from screening.report.memo import write_memo
                except ImportError:
                    write_memo = None
                if write_memo is not None:
                    from screening.result import memo_view

                    demo_templates = Path(str(folder.joinpath("templates")))
                    for r in results:
                        write_memo(memo_view(r), build / f"{r['id']}.pdf", templates_dir=demo_templates)
                    wrote_memos = True
            registers = folder.joinpath("registers")
            summary = run_batch(Path(str(registers.joinpath("fenmarsh-register.csv"))), build / "register",
                                base_path=Path(str(registers.joinpath("fenmarsh-base.yaml"))), memos=memos,
                                templates_dir=Path(str(folder.joinpath("templates"))))
            write_marker(build, "demo")
            swap_in(build, target)
        except BaseException as exc:
            discard(build)
            from screening.fileio import environment_problem, short_path

            problem = environment_problem(exc, f"--out {short_path(out)}: cannot write the demo's files in "
                                               f"{short_path(target.parent)}")
            if problem is not None and problem is not exc:
                raise problem from None
            raise
        reg_out = out / "register"
        if wrote_memos:
            _echo(f"wrote {len(results)} memos to {out}/")
        counts = summary["verdict_counts"]
        _echo(f"Demo register: {summary['rows']} rows, {summary['valid']} screened ({counts['pass']} pass, "
              f"{counts['review']} review, {counts['fail']} fail), {summary['invalid']} invalid on purpose "
              f"(see {reg_out}/errors.csv); results, summary.pdf" + (" and memos" if memos else "")
              + f" in {reg_out}/")
        _echo("Summary of the demo cases:")
        for r in results:
            first = min((l["time_s"] for l in r["limits"] if l["time_s"] is not None), default=None)
            from screening.case.display import duration

            _echo(f"  {r['id']:<12} {str(r.get('verdict', '')).upper():<7} first limit "
                  f"{duration(first) if first is not None else 'not reached'}")
        return EXIT_OK

    raise typer.Exit(_guard(body))


def run():  # console-script entry point
    from screening.workers import exit_on_signals

    exit_on_signals()  # SIGTERM / SIGHUP run the same cleanup as Ctrl-C (temporary folders removed)
    try:
        app()
    except KeyboardInterrupt:
        _echo("interrupted", err=True)
        sys.exit(130)
    except SystemExit:
        raise
    except BaseException as exc:  # noqa: BLE001 - never a traceback unless asked for
        if "--debug" in sys.argv:
            raise
        _echo(f"heatscreen: internal error: {type(exc).__name__}: {exc}. Run again with --debug for details.",
              err=True)
        sys.exit(EXIT_INTERNAL)


if __name__ == "__main__":
    run()
