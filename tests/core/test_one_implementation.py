"""Each piece of physics is written once: the Arrhenius law and the assembly of the balance terms.

A second copy would be a wrong answer in one path only the day someone changes the other, so
these tests fail when an engine stops using the shared function or a copy appears elsewhere.
(A structural check of the project itself: the physics is checked against outside references in
the other tests of this folder.)
"""
from __future__ import annotations

import ast
import re
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[2] / "screening"


def _imports_name(module: str, source_module: str, name: str) -> bool:
    tree = ast.parse((PACKAGE / module).read_text(encoding="utf-8"))
    return any(isinstance(n, ast.ImportFrom) and n.module == source_module and any(a.name == name for a in n.names)
               for n in ast.walk(tree))


def _sources(skip: set[str]):
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE).as_posix()
        if rel not in skip:
            yield rel, path.read_text(encoding="utf-8")


def test_every_engine_takes_the_arrhenius_law_from_one_place():
    for module in ("core/runaway/rates.py", "core/arrhenius_history.py", "core/arrhenius_history_batch.py"):
        assert _imports_name(module, "screening.core.arrhenius", "log_arrhenius_rate"), module


def test_no_second_copy_of_the_arrhenius_exponent():
    # ln q_ref - (E/R) (1/T - 1/T_ref) written out: E/R (or a name for it) times (1/T ... or (inverse T ...
    pattern = re.compile(r"(activation_energy\s*/\s*GAS_CONSTANT|\be_?r\b|\bP\.er\b)\s*\*\s*\(\s*(1(\.0)?\s*/\s*\w+\s*-|inv\w*\s*-)")
    copies = [f"{rel}: {m.group(0)!r}" for rel, text in _sources({"core/arrhenius.py"})
              for m in pattern.finditer(text)]
    assert not copies, "the Arrhenius law is written out again; call log_arrhenius_rate:\n" + "\n".join(copies)


def test_every_engine_takes_the_balance_terms_from_one_place():
    users = {
        "core/closed_form_history.py": ("conductance_and_drive", "constant_power"),
        "core/arrhenius_history.py": ("conductance_and_drive", "constant_power"),
        "core/arrhenius_history_batch.py": ("constant_power",),
        "run/closed_form_group.py": ("model_terms",),  # C, G, Q0 and P_const of a group of one
        "run/runaway_case.py": ("constant_power",),
        "run/monte_carlo.py": ("conductance_and_drive", "heat_capacity"),
        "register/vectorised.py": ("model_terms",),
        "register/columns.py": ("conductance_and_drive", "heat_capacity"),
    }
    for module, names in users.items():
        for name in names:
            assert _imports_name(module, "screening.core.terms", name), f"{module} does not use terms.{name}"


def test_no_second_copy_of_the_terms_assembly():
    patterns = [
        re.compile(r"sum\([^)]*\bfor \w+ in [\w.]*(constant_sources|fire_sources)\)"),  # constant power
        re.compile(r"sum\([^)]*\bfor \w+ in [\w.]*heating_media\)"),  # media conductance or drive
        re.compile(r"\bua\s*\*\s*[\w.\[\]\"']*(ambient_temperature|\bTa\b)"),  # UA Ta of the drive
        re.compile(r"(mass|\bm)\s*\*\s*[\w.\[\]\"']*(specific_heat|\bcp\b)[\w\]\"']*\s*\+"),  # m c + wall
    ]
    allowed = {"core/terms.py", "core/model.py"}
    copies = [f"{rel}: {m.group(0)!r}" for rel, text in _sources(allowed) for p in patterns for m in p.finditer(text)]
    assert not copies, "the balance terms are assembled again; use screening.core.terms:\n" + "\n".join(copies)


def test_every_engine_takes_the_conversion_function_from_one_place():
    # f(alpha) = (1 - alpha)^n (alpha^m + z): the autocatalytic factor comes from core.arrhenius in every engine
    for module in ("core/runaway/rates.py", "core/runaway/autocatalytic.py", "core/arrhenius_history.py",
                   "core/arrhenius_history_batch.py"):
        assert _imports_name(module, "screening.core.arrhenius", "autocatalytic_term"), module


_AUTOCATALYTIC_FACTOR = re.compile(
    r"(\*\*\s*\(?\s*[\w.\[\]\"']*\b(autocatalytic_order|m|am|P\.am)\b[\w.\[\]\"']*\s*\)?\s*\)?"  # alpha ** m
    r"\s*\+\s*[\w.(\[\"']*\b(initiation|ln_initiation|z|az|P\.az)\b)"  # + z (or exp(p["ln_initiation"]))
    r"|(power\([^()]*\b(autocatalytic_order|m|am)\b[^()]*\)\s*\+\s*[\w.(]*\b(initiation|z|az)\b)")


def test_the_copy_pattern_finds_the_autocatalytic_factor():
    # the pattern below must recognise the one implementation itself and the usual spellings of a copy
    text = (PACKAGE / "core/arrhenius.py").read_text(encoding="utf-8")
    assert _AUTOCATALYTIC_FACTOR.search(text)
    for copy in ("g = a ** m + z", "x ** s.autocatalytic_order + s.initiation", "np.power(X, P.am) + P.az",
                 "(alpha ** (m) + z)", 'a ** p["autocatalytic_order"] + math.exp(p["ln_initiation"])'):
        assert _AUTOCATALYTIC_FACTOR.search(copy), copy


def test_no_second_copy_of_the_autocatalytic_factor():
    copies = [f"{rel}: {m.group(0)!r}" for rel, text in _sources({"core/arrhenius.py"})
              for m in _AUTOCATALYTIC_FACTOR.finditer(text)]
    assert not copies, ("the factor alpha^m + z is written out again; call core.arrhenius.autocatalytic_term:\n"
                        + "\n".join(copies))
