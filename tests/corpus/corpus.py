"""A corpus of malformed and hostile inputs, run through ``check``, ``batch``, ``memo``, the other
commands and the service, each with the outcome it must have.

Every entry names the defect it stands for (issue 22's list), builds its files in a folder of its own,
runs one command (a subprocess, so a hang or a traceback is seen as a user would see it) and states:

- the exit code (or HTTP status) expected;
- text the answer must contain: the field, cell, line or path concerned (in the output, or in
  ``errors.csv`` for register rows);
- which files it may write; anything else that changes in its folder counts as "silently wrong";
- optionally a check of the result itself (a PDF with the cut mark, an output's permissions ...).

``python tests/corpus/run_corpus.py`` runs them all and prints the table: tried, clean error, wrong
exit code, traceback, hang, silently wrong. "Clean error" counts every entry whose outcome is exactly
the expected one (for the few valid but hostile inputs, the expected result); only the first two rows
may be non-zero.
"""
from __future__ import annotations

import copy
import csv
import io
import json
import os
import re
import stat
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import yaml

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "screening" / "demo_cases"
MARK = re.compile(r"\[text cut here; (\d+) characters in all\]")  # the shipped template's cut mark


@dataclass
class Entry:
    name: str
    defect: str  # the item it stands for
    argv: list  # heatscreen arguments; "{d}" is the entry's folder
    files: Callable[[Path], None] | None = None  # builds the inputs in the folder
    exit: tuple = (2,)  # acceptable exit codes
    names: tuple = ()  # text the output (or errors.csv) must contain
    writes: tuple = ()  # glob patterns (relative to the folder) the command may create or change
    check: Callable[[Path, str], str | None] | None = None  # extra check: a problem, or None
    needs: str | None = None  # "readonly", "tmpfs": a folder kind the machine must be able to give
    fsize: int | None = None  # RLIMIT_FSIZE for the command (bytes): writes beyond fail as "file too large"
    timeout: float = 60.0
    service: dict | None = None  # instead of argv: {"method", "path", "body", "headers", "status", "names"}


# ------------------------------------------------------------------ helpers


def _demo(name: str) -> dict:
    return yaml.safe_load((DEMO / name).read_text(encoding="utf-8"))


def _yaml(d: Path, name: str, data) -> None:
    (d / name).write_text(yaml.safe_dump(data, width=10 ** 9, allow_unicode=True), encoding="utf-8")


def _case(name: str, change: Callable[[dict], None], base: str = "fw-t204-hold-tank.yaml"):
    def build(d: Path) -> None:
        c = copy.deepcopy(_demo(base))
        change(c)
        _yaml(d, name, c)

    return build


def _text(name: str, text: str | bytes):
    def build(d: Path) -> None:
        (d / name).write_bytes(text.encode("utf-8") if isinstance(text, str) else text)

    return build


def _all(*builders):
    def build(d: Path) -> None:
        for b in builders:
            b(d)

    return build


REGISTER_HEADER = ["id", "title", "contents.mass [kg]", "contents.initial_temperature [degC]", "heat_loss.ua [W/K]",
                   "limits.0.temperature [degC]"]
GOOD_ROWS = [["V-1", "tank one", "4000", "20", "80", "50"], ["V-2", "tank two", "3000", "25", "60", "55"]]


def _register(name: str, rows, header=REGISTER_HEADER, delimiter=","):
    def build(d: Path) -> None:
        buf = io.StringIO()
        w = csv.writer(buf, delimiter=delimiter, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)
        (d / name).write_text(buf.getvalue(), encoding="utf-8")
        _base(d)

    return build


def _base(d: Path) -> None:
    (d / "base.yaml").write_bytes((DEMO / "registers" / "fenmarsh-base.yaml").read_bytes())


def _xlsx(name: str, doctype: bytes, ref: bytes):
    def build(d: Path) -> None:
        import openpyxl

        wb = openpyxl.Workbook()
        ws = wb.active
        ws.append(REGISTER_HEADER)
        for row in GOOD_ROWS:
            ws.append(row)
        plain = io.BytesIO()
        wb.save(plain)
        zin = zipfile.ZipFile(io.BytesIO(plain.getvalue()))
        out = io.BytesIO()
        with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zout:
            for info in zin.infolist():
                data = zin.read(info.filename)
                if info.filename == "xl/worksheets/sheet1.xml":
                    data = doctype + data.replace(b"<t>V-1</t>", b"<t>" + ref + b"</t>", 1)
                zout.writestr(info, data)
        (d / name).write_bytes(out.getvalue())
        _base(d)

    return build


_LOL = b"".join(b'<!ENTITY lol%d "%s">' % (i, (b"&lol%d;" % (i - 1)) * 10) for i in range(1, 10))
XML_BOMB = b'<?xml version="1.0"?><!DOCTYPE worksheet [<!ENTITY lol0 "lol">' + _LOL + b"]>"
XXE = b'<?xml version="1.0"?><!DOCTYPE worksheet [<!ENTITY xxe SYSTEM "file:///etc/hostname">]>'


def _errors_csv(d: Path, out: str = "out") -> str:
    try:
        return (d / out / "errors.csv").read_text(encoding="utf-8")
    except OSError:
        return ""


def _pdf_marks(path: Path) -> list[int]:
    from pypdf import PdfReader

    text = " ".join("\n".join(p.extract_text() for p in PdfReader(str(path)).pages).split())
    return [int(n) for n in MARK.findall(text)]


def _has_mark(rel: str, n: int):
    def check(d: Path, output: str) -> str | None:
        p = d / rel
        if not p.is_file():
            return f"{rel} was not written"
        return None if n in _pdf_marks(p) else f"{rel} has no cut mark for {n} characters"

    return check


def _results(rel: str, count: int):
    def check(d: Path, output: str) -> str | None:
        try:
            rows = list(csv.DictReader((d / rel / "results.csv").open(encoding="utf-8")))
        except OSError:
            return f"{rel}/results.csv was not written"
        if len(rows) != count:
            return f"{len(rows)} rows screened, expected {count}: {_errors_csv(d, rel)[:300]}"
        return None

    return check


def _no_escape(d: Path, output: str) -> str | None:
    bad = [c for c in output if ord(c) < 32 and c not in "\n\t" or 0x7f <= ord(c) <= 0x9f]
    return f"{len(bad)} raw control characters printed" if bad else None


def _mode_follows_umask(rel: str):
    def check(d: Path, output: str) -> str | None:
        mask = os.umask(0o022)
        os.umask(mask)
        p = d / rel
        want_dir, want_file = 0o777 & ~mask, 0o666 & ~mask
        if stat.S_IMODE(p.stat().st_mode) != want_dir:
            return f"{rel} is {oct(stat.S_IMODE(p.stat().st_mode))}, the umask gives {oct(want_dir)}"
        for f in p.iterdir():
            if f.is_file() and stat.S_IMODE(f.stat().st_mode) != want_file:
                return f"{f.name} is {oct(stat.S_IMODE(f.stat().st_mode))}, the umask gives {oct(want_file)}"
        return None

    return check


def _all_checks(*checks):
    def check(d: Path, output: str) -> str | None:
        for c in checks:
            problem = c(d, output)
            if problem:
                return problem
        return None

    return check


def _symlink_loop(d: Path) -> None:
    os.symlink("loop-b", d / "loop-a")
    os.symlink("loop-a", d / "loop-b")


def _fifo(d: Path) -> None:
    os.mkfifo(d / "pipe.yaml")


def _sparse_csv(d: Path) -> None:
    with open(d / "huge.csv", "wb") as fh:
        fh.write(b"id,contents.mass [kg]\n")
        fh.truncate(600 * 1024 * 1024)  # sparse: no disk used, no time spent writing


def _diff_inputs(d: Path) -> None:
    for run in ("old", "new"):
        (d / run).mkdir()
        (d / run / "results.json").write_text(json.dumps([{"id": "V-1", "verdict": "pass", "limits": []}]),
                                              encoding="utf-8")


# ------------------------------------------------------------------ the entries

R = ["--base", "{d}/base.yaml", "--out", "{d}/out"]
OUT = ("out", "out/**", ".out.*", ".out.*/**")


def entries() -> list[Entry]:
    long_title = [["T-1", "T" * 1500, "4000", "20", "80", "50"], ["I" * 3000, "tank", "3000", "25", "60", "55"]]
    e = [
        # 1. long text
        Entry("register: 1,500-character title and 3,000-character id", "1 long text",
              ["batch", "{d}/reg.csv", *R], _register("reg.csv", long_title + GOOD_ROWS), exit=(0, 1),
              writes=OUT, check=_has_mark("out/summary.pdf", 3000)),
        Entry("memo: 2,000-character source", "1 long text", ["memo", "{d}/case.yaml", "-o", "{d}/m.pdf"],
              _case("case.yaml", lambda c: c["contents"].__setitem__("mass", {"value": "9000 kg",
                                                                                "source": "W" * 2000})),
              exit=(0, 1), writes=("m.pdf",), check=_has_mark("m.pdf", 2000)),
        Entry("memo: a long limit name, title and id", "1 long text", ["memo", "{d}/case.yaml", "-o", "{d}/m.pdf"],
              _case("case.yaml", lambda c: (c.__setitem__("id", "I" * 3000), c.__setitem__("title", "T" * 6000),
                                            c["limits"][0].__setitem__("name", "L" * 3000))),
              exit=(0, 1), writes=("m.pdf",), check=_has_mark("m.pdf", 3000)),
        Entry("memo: 10,000 lines of notes", "1 long text", ["memo", "{d}/case.yaml", "-o", "{d}/m.pdf"],
              _case("case.yaml", lambda c: c["meta"].__setitem__("notes",
                                                                 "\n".join(f"note {i}" for i in range(10000)))),
              exit=(0, 1), writes=("m.pdf",), timeout=30),
        Entry("memo: a 1.5-million-character word", "1 long text", ["memo", "{d}/case.yaml", "-o", "{d}/m.pdf"],
              _case("case.yaml", lambda c: c["meta"].__setitem__("notes", "W" * 1_500_000)),
              exit=(0, 1), writes=("m.pdf",), timeout=30, check=_has_mark("m.pdf", 1_500_000)),

        # 2. input errors: exit 2 naming the field, cell or path
        Entry("YAML integer of 5,000 digits", "2 huge integers", ["check", "{d}/c.yaml"],
              _text("c.yaml", (DEMO / "fw-t204-hold-tank.yaml").read_text(encoding="utf-8")
                    .replace("horizon: 72 h", "horizon: 1" + "0" * 5000 + " h")), names=("horizon",)),
        Entry("JSON integer of 5,000 digits", "2 huge integers", ["check", "{d}/c.json"],
              _text("c.json", json.dumps(_demo("fw-t204-hold-tank.yaml")).replace('"72 h"', "1" + "0" * 5000)),
              names=("horizon",)),
        Entry("JSON nested 100,000 deep", "2 deeply nested JSON", ["check", "{d}/c.json"],
              _text("c.json", "[" * 100_000 + "]" * 100_000), names=("(file)", "nesting")),
        Entry("YAML key that is a list", "2 unhashable YAML key", ["check", "{d}/c.yaml"],
              _text("c.yaml", "? [a, b]\n: 1\nid: x\n"), names=("line 1", "key is a list")),
        Entry("YAML key that is a mapping", "2 unhashable YAML key", ["check", "{d}/c.yaml"],
              _text("c.yaml", "id: x\ncontents: {? {a: 1} : 2}\n"), names=("line 2", "key is a mapping")),
        Entry("fire environment_factor NaN", "2 fire environment_factor NaN", ["check", "{d}/c.yaml"],
              _text("c.yaml", (DEMO / "fw-t410-fire-water-tank.yaml").read_text(encoding="utf-8")
                    .replace("environment_factor: 1", "environment_factor: .nan")),
              names=("heat_sources.0.environment_factor",)),
        Entry("fire environment_factor 5", "2 fire environment_factor NaN", ["check", "{d}/c.yaml"],
              _text("c.yaml", (DEMO / "fw-t410-fire-water-tank.yaml").read_text(encoding="utf-8")
                    .replace("environment_factor: 1", "environment_factor: 5")),
              names=("heat_sources.0.environment_factor", "at most 1")),
        Entry("uncertainty sd: inf %", "2 sd: inf %", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c.__setitem__("uncertainty", {"samples": 100, "inputs": {
                  "heat_sources.0.power": {"distribution": "normal", "sd": "inf %"}}})),
              names=("uncertainty.inputs.heat_sources.0.power.sd",)),
        Entry("vessel diameter 1e-300 m", "2 tiny vessel diameter", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c["vessel"].__setitem__("diameter", "1e-300 m")), names=("vessel.diameter",)),
        Entry("vessel diameter 1e200 m", "2 tiny vessel diameter", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c["vessel"].__setitem__("diameter", "1e200 m")), names=("vessel.diameter",)),
        Entry("torispherical knuckle radius above half the diameter", "17 geometry on arrays", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c["vessel"].update(shape="horizontal-cylinder", heads="torispherical",
                                                           knuckle_radius="40 m")),
              names=("vessel.knuckle_radius", "at most half the diameter")),
        Entry("1e30 W/kg at order 1 (valid)", "2 1e30 W/kg at order 1", ["check", "{d}/c.yaml", "--json"],
              _case("c.yaml", lambda c: c["heat_sources"][0].__setitem__("specific_power", "1e30 W/kg"),
                    base="fw-r301-reactor.yaml"), exit=(0, 1), names=('"verdict": "fail"',)),
        Entry("all Monte Carlo samples impossible", "2 1e30 W/kg at order 1", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c.__setitem__("uncertainty", {"samples": 100, "inputs": {
                  "contents.mass": {"distribution": "uniform", "low": "-20 t", "high": "-10 t"}}})),
              names=("uncertainty.inputs",)),
        Entry("case_file in a symlink loop", "2 symlink loop in case_file",
              ["batch", "{d}/reg.csv", *R], _all(_register("reg.csv", [["V-1", "loop-a"]] + [["V-2", ""]],
                                                          header=["id", "case_file"]), _symlink_loop),
              names=("case_file", "loop"), writes=OUT),
        Entry("case_file name of 5,000 characters", "2 long case_file name", ["batch", "{d}/reg.csv", *R],
              _register("reg.csv", [["V-1", "x" * 5000], ["V-2", "a/" * 3000 + "b.yaml"], ["V-3", ""]],
                        header=["id", "case_file"]), names=("case_file", "too long"), writes=OUT),
        Entry("case_file naming a pipe", "2 symlink loop in case_file", ["batch", "{d}/reg.csv", *R],
              _all(_register("reg.csv", [["V-1", "pipe.yaml"]], header=["id", "case_file"]), _fifo),
              names=("case_file", "pipe"), writes=OUT, timeout=30),
        Entry("case_file naming a folder", "2 symlink loop in case_file", ["batch", "{d}/reg.csv", *R],
              _register("reg.csv", [["V-1", "."]], header=["id", "case_file"]), names=("case_file", "folder"),
              writes=OUT),
        Entry("register cell of 140,000 characters", "2 cell over 131 KB", ["batch", "{d}/reg.csv", *R],
              _register("reg.csv", [["V-1", "t", "4" * 140_000, "20", "80", "50"]] + GOOD_ROWS),
              names=("line 2", "131072")),
        Entry("xlsx with an entity bomb", "2 XML bomb inside xlsx", ["batch", "{d}/reg.xlsx", *R],
              _xlsx("reg.xlsx", XML_BOMB, b"&lol9;"), names=("DOCTYPE", "sheet1.xml")),
        Entry("xlsx with an external entity", "2 external entity inside xlsx", ["batch", "{d}/reg.xlsx", *R],
              _xlsx("reg.xlsx", XXE, b"&xxe;"), names=("DOCTYPE",)),
        Entry("xlsx that is not a zip", "2 XML bomb inside xlsx", ["batch", "{d}/reg.xlsx", *R],
              _all(_text("reg.xlsx", b"PK\x03\x04garbage"), _base), names=("reg.xlsx",)),

        # 2. the user's environment: exit 2 with the path
        Entry("batch into a read-only folder", "2 read-only output folder",
              ["batch", "{d}/reg.csv", "--base", "{d}/base.yaml", "--out", "{ro}/out"],
              _register("reg.csv", GOOD_ROWS), names=("{ro}", "read-only"), needs="readonly"),
        Entry("example into a read-only folder", "2 read-only output folder", ["example", "{ro}/x.yaml"],
              names=("{ro}/x.yaml",), needs="readonly"),
        Entry("diff --csv into a read-only folder", "2 read-only output folder",
              ["diff", "{d}/old", "{d}/new", "--csv", "{ro}/c.csv"], _diff_inputs, exit=(2,),
              names=("{ro}/c.csv",), needs="readonly"),
        Entry("demo into a read-only folder", "2 read-only output folder",
              ["demo", "--no-memos", "--out", "{ro}/demo"], names=("{ro}", "read-only"), needs="readonly",
              timeout=120),
        Entry("batch on a full disk", "2 disk full", ["batch", "{d}/reg.csv", "--base", "{d}/base.yaml", "--out",
                                                      "{full}/out"],
              _register("reg.csv", GOOD_ROWS), names=("{full}", "disk full"), needs="tmpfs"),
        Entry("batch with files limited to 20 kB", "2 disk full", ["batch", "{d}/reg.csv", *R],
              _register("reg.csv", GOOD_ROWS * 20), names=("{d}/out",), fsize=20_000),
        Entry("memo with files limited to 20 kB", "2 disk full", ["memo", "{d}/c.yaml", "-o", "{d}/m.pdf"],
              _case("c.yaml", lambda c: None), names=("--output", "{d}/m.pdf"), fsize=20_000),
        Entry("demo with files limited to 20 kB", "2 disk full", ["demo", "--out", "{d}/demo"],
              names=("--out", "{d}/demo"), fsize=20_000, timeout=120),
        Entry("diff --csv with files limited to 10 bytes", "2 disk full",
              ["diff", "{d}/old", "{d}/new", "--csv", "{d}/c.csv"], _diff_inputs, names=("--csv",), fsize=10),

        # 5. the smaller items
        Entry("semicolon register with quoted commas", "5 delimiter from the header row",
              ["batch", "{d}/reg.csv", *R],
              _text_register_semicolon(), exit=(0, 1), writes=OUT, check=_results("out", 2)),
        Entry("escape codes in id and limit name", "5 control characters", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: (c.__setitem__("id", "T-1\x1b[2J\x1b[1;1HVerdict: PASS\r"),
                                         c["limits"][0].__setitem__("name", "q\x1b]0;x\x07\u202eevil\x9b31m"))),
              exit=(0, 1), names=("\\u001b[2J",), check=_no_escape),
        Entry("escape codes in an error message", "5 control characters", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c["contents"].__setitem__("mass", "9000 \x1b[31mkg")),
              names=("contents.mass",), check=_no_escape),
        Entry("CSV register of 600 MB (sparse)", "5 size limits while reading", ["batch", "{d}/huge.csv", "--out",
                                                                                 "{d}/out"],
              _sparse_csv, names=("huge.csv", "limit"), timeout=30),
        Entry("memo -o onto its own case", "5 outputs never overwrite an input",
              ["memo", "{d}/c.yaml", "-o", "{d}/c.yaml"], _case("c.yaml", lambda c: None), names=("--output",)),
        Entry("check --history onto its own case", "5 outputs never overwrite an input",
              ["check", "{d}/c.yaml", "--history", "{d}/c.yaml"], _case("c.yaml", lambda c: None),
              names=("--history",)),
        Entry("batch --out holding its own register", "5 outputs never overwrite an input",
              ["batch", "{d}/out/results.csv", "--out", "{d}/out"], _previous_run, names=("--out", "results.csv")),
        Entry("memo -o onto its own template file", "5 outputs never overwrite an input",
              ["memo", "{d}/c.yaml", "-o", "{d}/tpl/memo.toml", "--templates", "{d}/tpl"],
              _all(_case("c.yaml", lambda c: None), _templates), names=("--output", "memo.toml")),
        Entry("batch output follows the umask", "5 umask", ["batch", "{d}/reg.csv", *R],
              _register("reg.csv", GOOD_ROWS), exit=(0, 1), writes=OUT, check=_mode_follows_umask("out")),
        Entry("memo follows the umask", "5 umask", ["memo", "{d}/c.yaml", "-o", "{d}/m.pdf"],
              _case("c.yaml", lambda c: None), exit=(0, 1), writes=("m.pdf",), check=_file_mode("m.pdf")),
        Entry("check --history follows the umask", "5 umask", ["check", "{d}/c.yaml", "--history", "{d}/h.csv"],
              _case("c.yaml", lambda c: None), exit=(0, 1), writes=("h.csv",), check=_file_mode("h.csv")),
        Entry("inverted tested_range", "5 inverted tested_range", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c["heat_sources"][1].__setitem__("tested_range", ["210 degC", "140 degC"]),
                    base="fw-r301-reactor.yaml"), names=("heat_sources.1.tested_range",)),
        Entry("open vessel boiling below the start", "5 boiling point below the start", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c["contents"].__setitem__("boiling_point", "20 degC"),
                    base="fw-t410-fire-water-tank.yaml"), names=("contents.boiling_point",)),
        Entry("closed vessel boiling below the start", "5 boiling point below the start", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c["contents"].__setitem__("boiling_point", "70 degC"),
                    base="fw-r301-reactor.yaml"), exit=(0, 1), names=("superheated",)),
        Entry("recovery medium hotter than a limit", "5 recovery medium hotter than a limit", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c["recovery"].__setitem__("medium_temperature", "125 degC"),
                    base="fw-r301-reactor.yaml"), exit=(0, 1), names=("Recovery: the recovery medium",)),

        # the cluster backend (issue 23): unsafe or incomplete scheduler settings, refused before any connection
        # (192.0.2.0/24 is a documentation network, RFC 5737: nothing is ever sent there)
        Entry("batch --scheduler plain tcp off this machine", "23 tcp:// scheduler other than loopback",
              ["batch", "{d}/reg.csv", *R, "--scheduler", "tcp://192.0.2.10:8786"], _register("reg.csv", GOOD_ROWS),
              names=("tcp://192.0.2.10:8786", "--insecure-cluster", "without authentication")),
        Entry("batch --scheduler without a scheme, off this machine", "23 tcp:// scheduler other than loopback",
              ["batch", "{d}/reg.csv", *R, "--scheduler", "192.0.2.10:8786"], _register("reg.csv", GOOD_ROWS),
              names=("192.0.2.10:8786", "refused")),
        Entry("batch --scheduler ws://", "23 unsupported scheduler scheme",
              ["batch", "{d}/reg.csv", *R, "--scheduler", "ws://127.0.0.1:8786"], _register("reg.csv", GOOD_ROWS),
              names=("ws://", "tls://")),
        Entry("batch --scheduler tls:// without certificates", "23 tls without a security configuration",
              ["batch", "{d}/reg.csv", *R, "--scheduler", "tls://192.0.2.10:8786", "--tls-ca", "{d}/none.pem"],
              _register("reg.csv", GOOD_ROWS), names=("--tls-cert", "--tls-key")),
        Entry("batch --tls-cert without --scheduler", "23 cluster options without a scheduler",
              ["batch", "{d}/reg.csv", *R, "--tls-cert", "{d}/c.pem"], _register("reg.csv", GOOD_ROWS),
              names=("--scheduler",)),

        # 4. the service's command line
        Entry("serve --token ''", "4 empty token", ["serve", "--token", "", "--db", "{d}/runs.sqlite"],
              names=("token is empty",)),
    ]
    return e + kinetics_entries() + service_entries()


_RUN_HEADER = "time [s],temperature [degC],heat_flow [W/g]\n"


def _dsc_rows(n=40):
    return "".join(f"{i * 10},{40 + i},{0.1 + (1.0 if i == n // 2 else 0.0)}\n" for i in range(n))


def kinetics_entries() -> list[Entry]:
    """Bad calorimeter files for ``heatscreen kinetics``: exit 2 naming the file, the column and what is expected."""
    good = DEMO / "kinetics" / "fw-k12-dsc-02K-per-min.csv"
    return [
        Entry("kinetics: a run without a heat_flow column", "20 bad calorimeter file",
              ["kinetics", "{d}/a.csv", "{d}/a.csv"],
              _text("a.csv", "time [s],temperature [degC]\n" + "".join(f"{i},{40 + i}\n" for i in range(40))),
              names=("a.csv", "column 'heat_flow'", "is missing")),
        Entry("kinetics: a heat flow in a unit that is not a heat flow", "20 bad calorimeter file",
              ["kinetics", "{d}/a.csv", "{d}/a.csv"], _text("a.csv", "time [s],temperature [degC],heat_flow [kg]\n"
                                                          + _dsc_rows()),
              names=("column 'heat_flow'", "[kg]", "heat flow per mass")),
        Entry("kinetics: a header without units", "20 bad calorimeter file", ["kinetics", "{d}/a.csv", "{d}/a.csv"],
              _text("a.csv", "time,temperature,heat_flow\n" + _dsc_rows()), names=("a.csv", "'name [unit]'")),
        Entry("kinetics: text in a number column", "20 bad calorimeter file",
              ["kinetics", "{d}/a.csv", "{d}/a.csv"],
              _text("a.csv", _RUN_HEADER + _dsc_rows() + "400,80,oops\n"),
              names=("column 'heat_flow'", "line 42", "'oops' is not a number")),
        Entry("kinetics: an absolute heat flow without the sample mass", "20 bad calorimeter file",
              ["kinetics", "{d}/a.csv", "{d}/a.csv"],
              _text("a.csv", "time [s],temperature [degC],heat_flow [mW]\n" + _dsc_rows()),
              names=("column 'heat_flow'", "--sample-mass")),
        Entry("kinetics: time going backwards", "20 bad calorimeter file", ["kinetics", "{d}/a.csv", "{d}/a.csv"],
              _text("a.csv", _RUN_HEADER + _dsc_rows() + "5,81,0.1\n"), names=("column 'time'", "increasing")),
        Entry("kinetics: an exotherm plotted down without --exo-down", "20 bad calorimeter file",
              ["kinetics", "{d}/a.csv", str(good)],
              _text("a.csv", "time [s],temperature [degC],heat_flow [W/g]\n" + "".join(
                  f"{row.split(',')[0]},{row.split(',')[1]},{-float(row.split(',')[2]):.5f}\n"
                  for row in good.read_text(encoding="utf-8").splitlines()[3:])),
              names=("a.csv", "column 'heat_flow'", "--exo-down")),
        Entry("kinetics: one run only", "20 bad calorimeter file", ["kinetics", str(good)],
              names=("runs", "two or more")),
        Entry("kinetics: a binary file", "20 bad calorimeter file", ["kinetics", "{d}/a.csv", "{d}/a.csv"],
              _text("a.csv", b"\xff\xfe\x00\x01" * 100), names=("a.csv", "not UTF-8")),
        Entry("check as text: an Arrhenius case with an uncertainty block (allowable values not computed)",
              "20 allowable values not computed", ["check", "{d}/c.yaml"],
              _case("c.yaml", lambda c: c.__setitem__("uncertainty", {"samples": 50, "inputs": {
                  "heat_sources.0.activation_energy": {"distribution": "normal", "sd": "1 kJ/mol"}}}),
                    base="fw-s17-powder-drums.yaml"), exit=(0, 1),
              names=("Allowable values of heat_sources.0.activation_energy: not computed",)),
        Entry("kinetics: --source-out onto an input", "20 bad calorimeter file",
              ["kinetics", "{d}/a.csv", "{d}/a.csv", "--source-out", "{d}/a.csv"], _text("a.csv", _RUN_HEADER),
              names=("--source-out", "input of this command")),
    ]


def _text_register_semicolon():
    text = ("id;contents.mass [kg];contents.initial_temperature [degC];heat_loss.ua [W/K];"
            "limits.0.temperature [degC];title\n"
            "V-1;4000;20;80;50;'x', 'y', 'z'\n"
            "V-2;3000;25;60;55;'p', 'q'\n")
    return _all(_text("reg.csv", text), _base)


def _previous_run(d: Path) -> None:
    """An output set of an earlier run (marker and all), to be read back as a register."""
    out = d / "out"
    out.mkdir()
    (out / "results.csv").write_text("id,contents.mass [kg]\nV-1,4000\n", encoding="utf-8")
    (out / ".heatscreen-output-set.json").write_text(json.dumps({"command": "batch", "files": ["results.csv"],
                                                                  "folders": []}), encoding="utf-8")


def _templates(d: Path) -> None:
    (d / "tpl").mkdir()
    (d / "tpl" / "memo.toml").write_bytes((REPO / "screening" / "data" / "templates" / "memo.toml").read_bytes())


def _file_mode(rel: str):
    def check(d: Path, output: str) -> str | None:
        mask = os.umask(0o022)
        os.umask(mask)
        mode = stat.S_IMODE((d / rel).stat().st_mode)
        return None if mode == 0o666 & ~mask else f"{rel} is {oct(mode)}, the umask gives {oct(0o666 & ~mask)}"

    return check


# ------------------------------------------------------------------ through the service


def _case_bytes(change: Callable[[dict], None], base: str = "fw-t204-hold-tank.yaml") -> bytes:
    c = copy.deepcopy(_demo(base))
    change(c)
    return yaml.safe_dump(c, width=10 ** 9).encode("utf-8")


def _built(build, name: str) -> bytes:
    """The bytes a file builder writes (for a request body)."""
    import tempfile

    with tempfile.TemporaryDirectory() as tmp:
        build(Path(tmp))
        return (Path(tmp) / name).read_bytes()


def service_entries() -> list[Entry]:
    Y = {"Content-Type": "application/yaml"}
    J = {"Content-Type": "application/json"}

    def post(body, status, names=(), headers=Y, path="/v1/check"):
        return {"method": "POST", "path": path, "body": body, "headers": headers, "status": status, "names": names}

    unstirred = _case_bytes(lambda c: c.__setitem__("heat_loss", {"ambient_temperature": "38 degC", "ua": "0 W/K"}),
                            base="fw-s17-powder-drums.yaml")
    return [
        Entry("service: unstirred contents without heat loss (infinite Biot number)", "4 never 500 for a valid case",
              [], service=post(unstirred, 200, ("run_id",))),
        Entry("service: YAML integer of 5,000 digits", "2 huge integers", [],
              service=post((DEMO / "fw-t204-hold-tank.yaml").read_bytes().replace(b"horizon: 72 h",
                                                                                 b"horizon: 1" + b"0" * 5000 + b" h"),
                           422, ("horizon",))),
        Entry("service: JSON nested 100,000 deep", "2 deeply nested JSON", [],
              service=post(b"[" * 100_000 + b"]" * 100_000, 422, ("nesting",), headers=J)),
        Entry("service: YAML key that is a list", "2 unhashable YAML key", [],
              service=post(b"? [a, b]\n: 1\nid: x\n", 422, ("key is a list",))),
        Entry("service: fire environment_factor NaN", "2 fire environment_factor NaN", [],
              service=post((DEMO / "fw-t410-fire-water-tank.yaml").read_bytes().replace(
                  b"environment_factor: 1", b"environment_factor: .nan"), 422, ("heat_sources.0.environment_factor",))),
        Entry("service: vessel diameter 1e-300 m", "2 tiny vessel diameter", [],
              service=post(_case_bytes(lambda c: c["vessel"].__setitem__("diameter", "1e-300 m")), 422,
                           ("vessel.diameter",))),
        Entry("service: all Monte Carlo samples impossible", "2 1e30 W/kg at order 1", [],
              service=post(_case_bytes(lambda c: c.__setitem__("uncertainty", {"samples": 100, "inputs": {
                  "contents.mass": {"distribution": "uniform", "low": "-20 t", "high": "-10 t"}}})), 422,
                  ("uncertainty.inputs",))),
        Entry("service: 1e30 W/kg at order 1 (valid)", "2 1e30 W/kg at order 1", [],
              service=post(_case_bytes(lambda c: c["heat_sources"][0].__setitem__("specific_power", "1e30 W/kg"),
                                       base="fw-r301-reactor.yaml"), 200, ("run_id",))),
        Entry("service: inverted tested_range", "5 inverted tested_range", [],
              service=post(_case_bytes(lambda c: c["heat_sources"][1].__setitem__("tested_range",
                                                                                  ["210 degC", "140 degC"]),
                                       base="fw-r301-reactor.yaml"), 422, ("heat_sources.1.tested_range",))),
        Entry("service: Arrhenius case with 20,000 samples", "4 Monte Carlo limit", [],
              service=post(_case_bytes(lambda c: c.__setitem__("uncertainty", {"samples": 20000, "inputs": {
                  "heat_loss.ambient_temperature": {"distribution": "normal", "sd": "2 K"}}}),
                  base="fw-r301-reactor.yaml"), 200, ('"accepted":20000',)), timeout=120),
        Entry("service: register with an entity bomb", "2 XML bomb inside xlsx", [],
              service={"register": ("bomb.xlsx", _built(_xlsx("reg.xlsx", XML_BOMB, b"&lol9;"), "reg.xlsx")),
                       "status": 422, "names": ("DOCTYPE",)}),
        Entry("service: register cell of 140,000 characters", "2 cell over 131 KB", [],
              service={"register": ("reg.csv", _built(_register("reg.csv", [["V-1", "t", "4" * 140_000, "20", "80",
                                                                              "50"]]), "reg.csv")),
                       "status": "invalid", "names": ("line 2", "131072")}),
        Entry("service: a Host header of another site", "4 Host header", [],
              service={"method": "GET", "path": "/v1/rules", "body": None, "headers": {"Host": "attacker.example"},
                       "status": 400, "names": ("(host)",)}),
        Entry("service: a form posted with Origin: null", "4 Origin: null", [],
              service={"method": "POST", "path": "/ui/check", "form": {"case_text": "id: x"},
                       "headers": {"Origin": "null"}, "status": 403, "names": ("Origin: null",)}),
    ]
