"""The memo command as a user runs it: real cases, rules, templates, failures."""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

pypdf = pytest.importorskip("pypdf")

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "screening" / "demo_cases"


def run(*args, env=None, cwd=None):
    full_env = dict(os.environ)
    full_env.update(env or {})
    return subprocess.run([sys.executable, "-m", "screening.cli", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd or ROOT, env=full_env, timeout=180)


def pdf_text(path: Path) -> str:
    reader = pypdf.PdfReader(str(path))
    return " ".join(" ".join((page.extract_text() or "").split()) for page in reader.pages)


@pytest.mark.parametrize("name", ["fw-t204-hold-tank", "fw-r301-reactor"])
def test_memo_of_demo_case_contains_id_limits_verdict_caution(tmp_path, name):
    out = tmp_path / "memo.pdf"
    proc = run("memo", DEMO / f"{name}.yaml", "-o", out)
    assert proc.returncode in (0, 1), proc.stderr
    text = pdf_text(out)
    import yaml

    case = yaml.safe_load((DEMO / f"{name}.yaml").read_text(encoding="utf-8"))
    assert case["id"] in text
    for lim in case["limits"]:
        assert lim["name"] in text
    assert "not a design" in text.lower()
    assert "qualified" in text.lower()
    check = run("check", DEMO / f"{name}.yaml", "--json")
    import json

    verdict = json.loads(check.stdout)["verdict"]
    assert verdict.upper() in text.upper()


def test_memo_is_byte_identical_with_source_date_epoch(tmp_path):
    a, b = tmp_path / "a.pdf", tmp_path / "b.pdf"
    env = {"SOURCE_DATE_EPOCH": "1767225600"}
    assert run("memo", DEMO / "fw-t204-hold-tank.yaml", "-o", a, env=env).returncode in (0, 1)
    assert run("memo", DEMO / "fw-t204-hold-tank.yaml", "-o", b, env=env).returncode in (0, 1)
    assert a.read_bytes() == b.read_bytes()


def test_bad_case_leaves_no_pdf(tmp_path):
    bad = tmp_path / "bad.yaml"
    bad.write_text("id: X\ncontents: {mass: -5 kg, specific_heat: 2 kJ/(kg*K), initial_temperature: 20 degC}\n"
                   "heat_loss: {ambient_temperature: 20 degC, ua: 5 W/K}\nlimits: [{name: a, temperature: 50 degC}]\n")
    out = tmp_path / "memo.pdf"
    proc = run("memo", bad, "-o", out)
    assert proc.returncode == 2
    assert "contents.mass" in proc.stderr
    assert "Traceback" not in proc.stderr
    assert not out.exists()
    assert list(tmp_path.iterdir()) == [bad]


def test_hostile_title_prints_literally(tmp_path):
    case = tmp_path / "hostile.yaml"
    case.write_text("id: 'H-1 <b>x</b>'\ntitle: '<b>bold</b> & <font color=red>x</font> µ ü °'\n"
                    "contents: {mass: 100 kg, specific_heat: 2 kJ/(kg*K), initial_temperature: 20 degC}\n"
                    "heat_loss: {ambient_temperature: 20 degC, ua: 5 W/K}\n"
                    "heat_sources: [{kind: constant, power: 1 kW}]\n"
                    "limits: [{name: '<i>limit</i> & co', temperature: 50 degC}]\nresponse_time: 1 h\n",
                    encoding="utf-8")
    out = tmp_path / "memo.pdf"
    proc = run("memo", case, "-o", out)
    assert proc.returncode in (0, 1), proc.stderr
    text = pdf_text(out)
    assert "<b>bold</b> & <font color=red>x</font>" in text
    assert "<i>limit</i> & co" in text
    assert "µ ü °" in text


def test_custom_rules_change_the_verdict(tmp_path):
    rules = tmp_path / "strict.toml"
    rules.write_text('[rule_set]\nname = "always review"\n\n[[rule]]\nid = "everything"\nquantity = "peak_temperature"\n'
                     'compare = ">"\nthreshold = "0 K"\nverdict = "review"\nreason = "site reviews every vessel"\n'
                     'source = "site choice"\n', encoding="utf-8")
    base = run("check", DEMO / "fw-t204-hold-tank.yaml", "--json")
    custom = run("check", DEMO / "fw-t204-hold-tank.yaml", "--json", "--rules", rules)
    import json

    default = json.loads(base.stdout)  # review under the default rules: it settles 0.2 K below a limit
    assert default["verdict"] == "review" and any("settle" in r for r in default["reasons"])
    data = json.loads(custom.stdout)
    assert data["verdict"] == "review" and custom.returncode == 1
    assert not any("settle" in r for r in data["reasons"])
    assert data["rule_set"]["name"] == "always review"
    assert any("site reviews every vessel" in r for r in data["reasons"])


def test_bad_rule_file_exit_2(tmp_path):
    rules = tmp_path / "bad.toml"
    rules.write_text('[rule_set]\nname = "x"\n[[rule]]\nid = "r1"\nquantity = "no_such_thing"\ncompare = "<"\n'
                     'threshold = "1 h"\nverdict = "fail"\nreason = "x"\nsource = "site choice"\n')
    proc = run("check", DEMO / "fw-t204-hold-tank.yaml", "--rules", rules)
    assert proc.returncode == 2
    assert "no_such_thing" in proc.stderr
    assert "Traceback" not in proc.stderr


def test_custom_templates_folder(tmp_path):
    tdir = tmp_path / "site"
    tdir.mkdir()
    (tdir / "memo.toml").write_text('[site]\nname = "Invented Site Zeta"\n', encoding="utf-8")
    out = tmp_path / "memo.pdf"
    proc = run("memo", DEMO / "fw-t204-hold-tank.yaml", "-o", out, "--templates", tdir)
    assert proc.returncode in (0, 1), proc.stderr
    assert "Invented Site Zeta" in pdf_text(out)


def test_demo_writes_memos(tmp_path):
    out = tmp_path / "demo"
    proc = run("demo", "--out", out)
    assert proc.returncode == 0, proc.stderr
    pdfs = sorted(p.name for p in out.glob("*.pdf"))
    assert "FW-T204.pdf" in pdfs and "FW-R301.pdf" in pdfs
