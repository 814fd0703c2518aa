"""The package's layers, checked from its source with ``ast`` (every import, including those inside functions).

Rules (the contributor guide's architecture map):
1. no import cycle between modules;
2. a module imports only its own layer or a lower one:
   core < case, result < run, verdict < report, register < service, cli
   (``errors``, ``resources`` and the package root are below everything);
   nothing imports the CLI, and ``verdict`` does not import ``run``;
3. a name with a single leading underscore is imported only inside its own subpackage;
4. shipped files are found through ``screening.resources``, not ``__file__``.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "screening"

RANK = {"": 0, "errors": 0, "fileio": 0, "workers": 0, "resources": 0, "progress": 0, "core": 1, "case": 2, "result": 2, "run": 3, "verdict": 3,
        "report": 4, "register": 4, "service": 5, "cli": 5}


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _imports(name: str, path: Path, modules: dict[str, Path]) -> list[tuple[str, list[str], int]]:
    """(imported module, names taken from it, line) for every import of the package in one module."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    is_pkg = path.name == "__init__.py"
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = name.split(".") if is_pkg else name.split(".")[:-1]
                base = base[:len(base) - (node.level - 1)]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            if not (mod == "screening" or mod.startswith("screening.")):
                continue
            for alias in node.names:
                sub = f"{mod}.{alias.name}"
                if sub in modules:  # `from screening.core import runaway`: a module
                    out.append((sub, [], node.lineno))
                else:
                    out.append((mod, [alias.name], node.lineno))
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name == "screening" or alias.name.startswith("screening."):
                    out.append((alias.name, [], node.lineno))
    return out


def _layer(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


def _graph():
    modules = _modules()
    return modules, {m: _imports(m, p, modules) for m, p in modules.items()}


def test_no_import_cycles():
    modules, graph = _graph()
    edges = {m: sorted({t for t, _, _ in imps if t in modules and t != m}) for m, imps in graph.items()}
    # a package's __init__ is imported by its submodules implicitly; only explicit imports count here
    state: dict[str, int] = {}
    stack: list[str] = []
    cycles = []

    def visit(m):
        state[m] = 1
        stack.append(m)
        for t in edges[m]:
            if state.get(t) == 1:
                cycles.append(stack[stack.index(t):] + [t])
            elif t not in state:
                visit(t)
        stack.pop()
        state[m] = 2

    for m in sorted(edges):
        if m not in state:
            visit(m)
    assert not cycles, "import cycles:\n" + "\n".join(" -> ".join(c) for c in cycles)


def test_imports_go_downward_only():
    modules, graph = _graph()
    problems = []
    for m, imps in graph.items():
        src = _layer(m)
        for target, _, line in imps:
            dst = _layer(target)
            if dst == "cli" and m != "screening.cli":
                problems.append(f"{m}:{line} imports the CLI ({target})")
            elif src == "verdict" and dst == "run":
                problems.append(f"{m}:{line}: verdict imports run ({target})")
            elif src != dst and RANK[dst] > RANK[src]:
                problems.append(f"{m}:{line}: layer {src or 'root'} imports the higher layer {dst} ({target})")
    assert not problems, "\n".join(problems)


def test_private_names_stay_in_their_subpackage():
    modules, graph = _graph()
    problems = []
    for m, imps in graph.items():
        for target, names, line in imps:
            for n in names:
                if n.startswith("_") and not n.startswith("__") and _layer(target) != _layer(m):
                    problems.append(f"{m}:{line} imports the private name {n} from {target}")
    assert not problems, "\n".join(problems)


def test_every_layer_is_known():
    modules, _ = _graph()
    unknown = sorted({_layer(m) for m in modules} - set(RANK))
    assert not unknown, f"modules outside the layer table: {unknown}; add them to RANK and the contributor guide"


def test_shipped_files_are_found_through_resources():
    offenders = [_module_name(p) for p in PACKAGE.rglob("*.py")
                 if p.name != "resources.py" and "Path(__file__)" in p.read_text(encoding="utf-8")]
    assert not offenders, f"use screening.resources instead of Path(__file__) in: {offenders}"


@pytest.mark.parametrize("case", ["fw-t204-hold-tank.yaml", "fw-d52-drum-yard.yaml"])
def test_check_of_a_closed_form_case_loads_no_heavy_module(case):
    """`heatscreen check` on a closed-form case stays fast: no stiff integrator, PDF library or web stack
    (fw-d52: with the daily cycle of the air and the sun, and the worst of 24 hourly starts)."""
    import subprocess
    import sys

    code = ("import sys, io, contextlib\n"
            "from screening.cli import run\n"
            f"sys.argv = ['heatscreen', 'check', 'screening/demo_cases/{case}', '--json']\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            "    try:\n        run()\n    except SystemExit:\n        pass\n"
            "heavy = ('scipy.integrate', 'scipy.optimize', 'reportlab', 'fastapi', 'openpyxl', 'sympy', 'dask', "
            "'distributed')\n"
            "print(sorted({m for m in sys.modules if m.startswith(heavy)}))\n")
    out = subprocess.run([sys.executable, "-c", code], cwd=PACKAGE.parent, capture_output=True, text=True,
                         check=True, timeout=120)
    assert out.stdout.strip() == "[]", out.stdout
