"""Commands that write files never delete or replace a user's file or folder (exit 2 instead)."""
from __future__ import annotations

import yaml

from screening.register.batch import run_batch
from screening.register.output_set import MARKER

CASE = {
    "id": "T-1",
    "contents": {"mass": "9000 kg", "specific_heat": "3 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "180 W/K"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
}


def _case(tmp_path):
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(CASE, sort_keys=False), encoding="utf-8")
    return path


def _refused(proc, *names):
    assert proc.returncode == 2, (proc.returncode, proc.stdout, proc.stderr)
    assert "Traceback" not in proc.stderr and "internal error" not in proc.stderr
    for name in names:
        assert str(name) in proc.stderr, proc.stderr


def test_batch_into_a_folder_with_a_foreign_file_exits_2_and_names_it(run_cli, tmp_path):
    case = _case(tmp_path)
    reg = tmp_path / "register.csv"
    reg.write_text("id,heat_loss.ua [W/K]\nA,180\n", encoding="utf-8")
    out = tmp_path / "out"
    out.mkdir()
    (out / "plan.xlsx").write_bytes(b"not ours")
    proc = run_cli("batch", reg, "--out", out, "--base", case)
    _refused(proc, out, "plan.xlsx")
    assert sorted(p.name for p in out.iterdir()) == ["plan.xlsx"] and (out / "plan.xlsx").read_bytes() == b"not ours"
    # the register's own folder
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir() if p.is_file()}
    proc = run_cli("batch", reg, "--out", tmp_path, "--base", case)
    _refused(proc, "register.csv")
    assert {p.name: p.read_bytes() for p in tmp_path.iterdir() if p.is_file()} == before


def test_memo_and_history_do_not_replace_the_case_file(run_cli, tmp_path):
    case = _case(tmp_path)
    text = case.read_bytes()
    _refused(run_cli("memo", case, "-o", case), "case.yaml")
    _refused(run_cli("check", case, "--history", case), "case.yaml")
    assert case.read_bytes() == text
    folder = tmp_path / "a-folder"
    folder.mkdir()
    _refused(run_cli("memo", case, "-o", folder), "a-folder")
    _refused(run_cli("check", case, "--history", folder), "a-folder")
    assert folder.is_dir() and not any(folder.iterdir())
    # the documented output: a history file at that path is written (and replaced by the next run)
    hist = tmp_path / "history.csv"
    hist.write_text("old")
    proc = run_cli("check", case, "--history", hist)
    assert proc.returncode in (0, 1), proc.stderr
    assert hist.read_text().startswith("time_s,")


def test_diff_csv_does_not_replace_a_file_of_an_output_set(run_cli, tmp_path):
    case = _case(tmp_path)
    reg = tmp_path / "register.csv"
    reg.write_text("id,heat_loss.ua [W/K]\nA,180\n", encoding="utf-8")
    run_batch(reg, tmp_path / "run1", base_path=case)
    run_batch(reg, tmp_path / "run2", base_path=case)
    sets = {p: p.read_bytes() for run in ("run1", "run2") for p in (tmp_path / run).iterdir()}
    _refused(run_cli("diff", tmp_path / "run1", tmp_path / "run2", "--csv", tmp_path / "run2" / "results.json"),
             "results.json")
    _refused(run_cli("diff", tmp_path / "run1", tmp_path / "run2", "--csv", tmp_path / "run1" / "results.csv"),
             "results.csv")
    _refused(run_cli("diff", tmp_path / "run1", tmp_path / "run2", "--csv", tmp_path / "run1" / MARKER), MARKER)
    _refused(run_cli("diff", tmp_path / "run1", tmp_path / "run2", "--csv", tmp_path / "nowhere" / "d.csv"),
             "--csv")  # a folder that does not exist: exit 2 with the option named, not an internal error
    assert {p: p.read_bytes() for run in ("run1", "run2") for p in (tmp_path / run).iterdir()} == sets


def test_example_does_not_replace_an_existing_file(run_cli, tmp_path):
    mine = tmp_path / "my-vessel.yaml"
    mine.write_text("id: MINE  # being edited\n", encoding="utf-8")
    _refused(run_cli("example", mine), "my-vessel.yaml")
    assert mine.read_text(encoding="utf-8") == "id: MINE  # being edited\n"
    _refused(run_cli("example", tmp_path), str(tmp_path))
    fresh = tmp_path / "fresh.yaml"
    assert run_cli("example", fresh).returncode == 0 and fresh.read_text(encoding="utf-8").strip()
    assert run_cli("example", fresh).returncode == 0  # the same text again: nothing lost


def test_demo_out_is_an_output_set(run_cli, tmp_path):
    out = tmp_path / "demo"
    (out / "register").mkdir(parents=True)
    (out / "register" / "site-register.csv").write_text("id\nMINE\n", encoding="utf-8")
    proc = run_cli("demo", "--no-memos", "--out", out, timeout=300)
    _refused(proc, "register/site-register.csv")
    assert (out / "register" / "site-register.csv").read_text(encoding="utf-8") == "id\nMINE\n"
    fresh = tmp_path / "demo2"
    for _ in range(2):  # a second run replaces the first
        proc = run_cli("demo", "--no-memos", "--out", fresh, timeout=300)
        assert proc.returncode == 0, proc.stderr
    assert (fresh / MARKER).is_file() and (fresh / "register" / "results.csv").is_file()
