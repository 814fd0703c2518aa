"""Golden outputs: record what heatscreen prints and writes, and compare it byte for byte later.

A restructuring that moves code must not move a single output byte. Run this before the
change and after it:

    python tests/golden/golden_outputs.py record /tmp/golden-before
    ... restructure ...
    python tests/golden/golden_outputs.py record /tmp/golden-after
    python tests/golden/golden_outputs.py compare /tmp/golden-before /tmp/golden-after
    python tests/golden/golden_outputs.py compare /tmp/golden-before /tmp/golden-after --numeric

or compare the working tree against the committed manifest (sha256 of every output):

    python tests/golden/golden_outputs.py check          # exit 1 and a list of differences

``record DIR`` writes every output file into DIR and ``DIR/manifest.json`` (name -> sha256);
``update-manifest DIR`` copies that manifest to ``tests/golden/manifest.json``. The manifest
records the versions of Python, numpy, scipy, pint and reportlab it was made with: memo bytes
depend on reportlab, and the last digits of some numbers on numpy and scipy, so a manifest is
only comparable on the same versions (``check`` says so when they differ).

What is covered: ``check`` (text, ``--json`` and ``--history``) of every demo and test case,
``memo`` of every case with SOURCE_DATE_EPOCH fixed, ``batch`` of the demo register (CSV and
XLSX) and of generated registers of several shapes (simple columns, tank geometry, drums with
an Arrhenius source, uncertain inputs) with memos, ``diff`` of two runs, ``margin``,
``example``, ``schema``, and the service's ``/openapi.json``. Intended changes of output
(later issues) re-record the manifest in the same commit and say why.
"""
from __future__ import annotations

import csv
import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "screening" / "demo_cases"
MANIFEST = Path(__file__).resolve().parent / "manifest.json"
sys.path.insert(0, str(ROOT))  # the in-process outputs (openapi.json) come from this tree, not an installed copy
SOURCE_DATE_EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, fixed so memos are reproducible


def _cases() -> list[Path]:
    demo = sorted(DEMO.glob("*.yaml"))
    data = sorted((ROOT / "tests" / "data").glob("*.yaml"))
    return demo + data


def _env() -> dict:
    env = dict(os.environ)
    env["SOURCE_DATE_EPOCH"] = SOURCE_DATE_EPOCH
    env["PYTHONHASHSEED"] = "0"
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env.setdefault("COLUMNS", "120")
    return env


def _heatscreen(args: list[str], cwd: Path) -> subprocess.CompletedProcess:
    cmd = [sys.executable, "-c", "from screening.cli import run; run()", *args]
    return subprocess.run(cmd, cwd=cwd, env=_env(), capture_output=True, timeout=900)


def _save_run(out: Path, name: str, proc: subprocess.CompletedProcess, cwd: Path) -> None:
    """stdout, stderr and exit code of one command, with the scratch folder's path made neutral."""
    def neutral(b: bytes) -> bytes:
        return b.replace(str(cwd).encode(), b"<work>")
    (out / f"{name}.stdout").write_bytes(neutral(proc.stdout))
    (out / f"{name}.stderr").write_bytes(neutral(proc.stderr))
    (out / f"{name}.exit").write_text(f"{proc.returncode}\n")


def _copy_tree(src: Path, dst: Path, prefix: str) -> None:
    for p in sorted(src.rglob("*")):
        if p.is_file():
            rel = p.relative_to(src).as_posix().replace("/", "__")
            shutil.copyfile(p, dst / f"{prefix}__{rel}")


def _write_registers(work: Path) -> list[tuple[str, Path, Path, list[str]]]:
    """Registers of several shapes, generated deterministically (no random module state)."""
    regs = []
    # 1. the demo register as shipped, and the same rows as an Excel workbook
    regs.append(("demo-csv", DEMO / "registers" / "fenmarsh-register.csv",
                 DEMO / "registers" / "fenmarsh-base.yaml", ["--memos"]))
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    with open(DEMO / "registers" / "fenmarsh-register.csv", newline="") as fh:
        for row in csv.reader(fh):
            ws.append(row)
    xlsx = work / "fenmarsh-register.xlsx"
    wb.save(xlsx)
    regs.append(("demo-xlsx", xlsx, DEMO / "registers" / "fenmarsh-base.yaml", []))

    # 2. a uniform register of simple rows (the columnar path), 400 rows
    simple = work / "simple.csv"
    with open(simple, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "contents.mass [kg]", "contents.specific_heat [kJ/(kg*K)]",
                    "contents.initial_temperature [degC]", "heat_loss.ambient_temperature [degF]",
                    "heat_loss.ua [W/K]", "heat_sources.0.power [kW]", "heat_sources.1.power [kW]",
                    "heat_sources.1.time_constant [h]", "limits.0.temperature [degC]", "response_time"])
        for i in range(400):
            w.writerow([f"S-{i:04d}", 1000 + (i * 739) % 29000, round(1.8 + (i * 0.037) % 2.4, 3),
                        15 + (i * 7) % 25, 68 + (i * 3) % 30, 0 if i % 97 == 0 else 20 + (i * 53) % 580,
                        round((i * 0.13) % 5, 2), round(1 + (i * 3.7) % 99, 2), round(0.5 + (i * 0.61) % 23.5, 2),
                        45 + (i * 11) % 75, ["1 h", "30 min", "4 h", ""][i % 4]])
    regs.append(("simple", simple, DEMO / "registers" / "fenmarsh-base.yaml", []))

    # 3. tanks described by geometry, with a surface coefficient on the wetted area
    tanks = work / "tanks.csv"
    tanks_base = work / "tanks-base.yaml"
    tanks_base.write_text(
        "id: BASE\n"
        "vessel: {shape: vertical-cylinder, diameter: 2 m, length: 3 m, heads: ellipsoidal}\n"
        "contents: {fill: 70 %, density: 1000 kg/m^3, specific_heat: 3 kJ/(kg*K), initial_temperature: 25 degC}\n"
        "heat_loss: {ambient_temperature: 30 degC, coefficient: 5 W/(m^2*K), area: wetted}\n"
        "heat_sources:\n  - {kind: constant, power: 2 kW}\n  - {kind: decaying, power: 20 kW, time_constant: 3 h}\n"
        "limits: [{name: onset, temperature: 60 degC}]\nresponse_time: 2 h\n")
    shapes = ["vertical-cylinder", "horizontal-cylinder", "sphere", "vertical-cylinder"]
    heads = ["ellipsoidal", "torispherical", "", "flat"]
    with open(tanks, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "vessel.shape", "vessel.diameter [m]", "vessel.length [m]", "vessel.heads",
                    "contents.fill [%]", "heat_loss.coefficient [W/(m^2*K)]", "heat_sources.1.power [kW]"])
        for i in range(60):
            k = i % 4
            w.writerow([f"T-{i:03d}", shapes[k], round(1.2 + (i * 0.17) % 2.5, 2),
                        "" if shapes[k] == "sphere" else round(2 + (i * 0.31) % 6, 2), heads[k],
                        20 + (i * 7) % 75, round(2 + (i * 0.9) % 10, 1), round(5 + (i * 2.3) % 60, 1)])
    regs.append(("tanks", tanks, tanks_base, []))

    # 4. drums of a self-reactive powder (one Arrhenius source, storage)
    drums = work / "drums.csv"
    with open(drums, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "contents.fill [%]", "heat_loss.ambient_temperature [degC]"])
        for i in range(12):
            w.writerow([f"D-{i:02d}", 60 + (i * 3) % 35, 25 + (i * 2) % 20])
    regs.append(("drums", drums, DEMO / "fw-s17-powder-drums.yaml", []))

    # 5. rows with uncertain inputs (Monte Carlo per row)
    unc_base = work / "uncertain-base.yaml"
    unc_base.write_text((DEMO / "registers" / "fenmarsh-base.yaml").read_text() +
                        "uncertainty:\n  samples: 500\n  seed: 3\n  inputs:\n"
                        "    heat_loss.ua: {distribution: uniform, low: 100 W/K, high: 300 W/K}\n"
                        "    heat_sources.1.power: {distribution: normal, sd: 10 %}\n")
    unc = work / "uncertain.csv"
    with open(unc, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "contents.mass [kg]", "heat_sources.1.power [kW]"])
        for i in range(8):
            w.writerow([f"U-{i}", 2000 + i * 1500, 5 + i * 4])
    regs.append(("uncertain", unc, unc_base, []))
    return regs


def _openapi() -> bytes:
    from screening.service.app import create_app
    from screening.service.settings import Settings

    with tempfile.TemporaryDirectory() as tmp:
        app = create_app(Settings.from_env(db=str(Path(tmp) / "runs.sqlite"), environ={}))
        doc = app.openapi()
    return json.dumps(doc, indent=2, sort_keys=True).encode()


def record(out: Path) -> dict:
    out = Path(out)
    if out.exists():
        shutil.rmtree(out)
    out.mkdir(parents=True)
    with tempfile.TemporaryDirectory(prefix="heatscreen-golden-") as tmp:
        work = Path(tmp)
        for case in _cases():
            stem = f"{case.parent.name}__{case.stem}"
            _save_run(out, f"check-text__{stem}", _heatscreen(["check", str(case)], work), work)
            _save_run(out, f"check-json__{stem}", _heatscreen(["check", str(case), "--json"], work), work)
            hist = work / f"{stem}-history.csv"
            _save_run(out, f"check-history__{stem}",
                      _heatscreen(["check", str(case), "--history", str(hist)], work), work)
            if hist.exists():
                shutil.copyfile(hist, out / f"history__{stem}.csv")
            memo = work / f"{stem}.pdf"
            _save_run(out, f"memo__{stem}", _heatscreen(["memo", str(case), "-o", str(memo)], work), work)
            if memo.exists():
                shutil.copyfile(memo, out / f"memo__{stem}.pdf")
        for name, reg, base, extra in _write_registers(work):
            dest = work / f"batch-{name}"
            proc = _heatscreen(["batch", str(reg), "--out", str(dest), "--base", str(base),
                                *extra], work)
            _save_run(out, f"batch__{name}", proc, work)
            if dest.exists():
                _copy_tree(dest, out, f"batch-{name}")
        # diff of two runs: the demo register against the simple one's base with changed rows
        _save_run(out, "diff__demo-vs-xlsx",
                  _heatscreen(["diff", str(work / "batch-demo-csv"), str(work / "batch-demo-xlsx"),
                               "--csv", str(work / "changes.csv")], work), work)
        if (work / "changes.csv").exists():
            shutil.copyfile(work / "changes.csv", out / "diff__changes.csv")
        t204 = DEMO / "fw-t204-hold-tank.yaml"
        _save_run(out, "margin__t204-ambient",
                  _heatscreen(["margin", str(t204), "--vary", "heat_loss.ambient_temperature"], work), work)
        _save_run(out, "margin__t204-mass-json",
                  _heatscreen(["margin", str(t204), "--vary", "contents.mass", "--low", "5 t", "--high", "40 t",
                               "--json"], work), work)
        _save_run(out, "example", _heatscreen(["example"], work), work)
        _save_run(out, "schema", _heatscreen(["schema"], work), work)
        _save_run(out, "check-missing-file", _heatscreen(["check", str(work / "nope.yaml")], work), work)
        bad = work / "bad.yaml"
        bad.write_text("id: BAD\ncontents: {mass: 12 kg/m, specific_heat: -3 J/(kg*K), initial_temperature: 20}\n")
        _save_run(out, "check-bad-case", _heatscreen(["check", str(bad)], work), work)
    (out / "openapi.json").write_bytes(_openapi())
    manifest = {"versions": _versions(),
                "files": {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
                          for p in sorted(out.iterdir()) if p.name != "manifest.json"}}
    (out / "manifest.json").write_text(json.dumps(manifest, indent=1, sort_keys=True) + "\n")
    return manifest


def _versions() -> dict:
    import numpy
    import pint
    import reportlab
    import scipy

    return {"python": sys.version.split()[0], "numpy": numpy.__version__, "scipy": scipy.__version__,
            "pint": pint.__version__, "reportlab": reportlab.Version}


def compare(a: dict, b: dict) -> list[str]:
    fa, fb = a["files"], b["files"]
    problems = [f"only in the first: {n}" for n in sorted(set(fa) - set(fb))]
    problems += [f"only in the second: {n}" for n in sorted(set(fb) - set(fa))]
    problems += [f"differs: {n}" for n in sorted(set(fa) & set(fb)) if fa[n] != fb[n]]
    return problems


_NUMBER = re.compile(rb"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")


def _tokens(path: Path) -> list:
    """The file as a list of tokens: numbers as floats, everything else as bytes (PDFs: their text)."""
    data = path.read_bytes()
    if path.suffix == ".pdf":
        from pypdf import PdfReader

        data = "\n".join(page.extract_text() or "" for page in PdfReader(str(path)).pages).encode()
    out, pos = [], 0
    for m in _NUMBER.finditer(data):
        out.append(data[pos:m.start()])
        out.append(float(m.group()))
        pos = m.end()
    out.append(data[pos:])
    return out


def numeric_difference(a: Path, b: Path) -> tuple[float | None, str]:
    """Largest relative difference between the numbers of two files whose text is otherwise the same.

    Returns (None, why) when they differ in more than numbers (a word, a count of numbers). Hashes (64
    hex digits) are text. Relative difference: |x - y| / max(|x|, |y|), 0 when both are 0.
    """
    ta, tb = _tokens(a), _tokens(b)
    if len(ta) != len(tb):
        return None, "different number of tokens"
    worst = 0.0
    for x, y in zip(ta, tb):
        if isinstance(x, float) and isinstance(y, float):
            if x != y:
                worst = max(worst, abs(x - y) / max(abs(x), abs(y)))
        elif x != y:
            return None, f"text differs: {x[-40:]!r} vs {y[-40:]!r}"
    return worst, ""


def main(argv: list[str]) -> int:
    if len(argv) >= 2 and argv[0] == "record":
        m = record(Path(argv[1]))
        print(f"recorded {len(m['files'])} outputs in {argv[1]}")
        return 0
    if len(argv) == 4 and argv[0] == "compare" and argv[3] == "--numeric":
        a = json.loads((Path(argv[1]) / "manifest.json").read_text())
        b = json.loads((Path(argv[2]) / "manifest.json").read_text())
        for line in compare(a, b):
            name = line.split(": ", 1)[1]
            if line.startswith("differs"):
                worst, why = numeric_difference(Path(argv[1]) / name, Path(argv[2]) / name)
                print(f"{name}: " + (f"numbers only, largest relative difference {worst:.3g}" if worst is not None
                                     else f"NOT NUMERIC: {why}"))
            else:
                print(line)
        return 0
    if len(argv) == 3 and argv[0] == "compare":
        a = json.loads((Path(argv[1]) / "manifest.json").read_text())
        b = json.loads((Path(argv[2]) / "manifest.json").read_text())
        problems = compare(a, b)
    elif len(argv) == 2 and argv[0] == "update-manifest":
        shutil.copyfile(Path(argv[1]) / "manifest.json", MANIFEST)
        print(f"manifest updated from {argv[1]}")
        return 0
    elif argv[:1] == ["check"]:
        committed = json.loads(MANIFEST.read_text())
        with tempfile.TemporaryDirectory() as tmp:
            now = record(Path(tmp) / "now")
        if committed["versions"] != now["versions"]:
            print(f"note: manifest made with {committed['versions']}, this run with {now['versions']}")
        problems = compare(committed, now)
    else:
        print(__doc__)
        return 2
    for p in problems:
        print(p)
    print("identical" if not problems else f"{len(problems)} difference(s)")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
