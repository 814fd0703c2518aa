"""Output folders: a batch replaces only a previous output set, never a user's files."""
from __future__ import annotations

import json
import os

import pytest
import yaml

from screening.register.batch import run_batch
from screening.register.output_set import (
    MARKER,
    OutputFolderError,
    check_output_folder,
    remove_output_set,
)

BASE = {
    "id": "BASE",
    "contents": {"mass": "9000 kg", "specific_heat": "3 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "180 W/K"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "response_time": "2 h",
}


def _register(folder):
    folder.mkdir(parents=True, exist_ok=True)
    reg = folder / "register.csv"
    reg.write_text("id,heat_loss.ua [W/K]\nA,180\nB,90\n", encoding="utf-8")
    base = folder / "base.yaml"
    base.write_text(yaml.safe_dump(BASE, sort_keys=False), encoding="utf-8")
    return reg, base


def _tree(folder):
    """Every file under a folder with its bytes (hidden files included)."""
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _no_build_leftovers(parent):
    return [p.name for p in parent.iterdir() if ".tmp-" in p.name or ".old-" in p.name]


def test_batch_into_a_folder_with_a_foreign_file_is_refused_and_the_file_kept(tmp_path):
    reg, base = _register(tmp_path / "in")
    out = tmp_path / "out"
    out.mkdir()
    (out / "notes.txt").write_text("my notes", encoding="utf-8")
    with pytest.raises(OutputFolderError) as err:
        run_batch(reg, out, base_path=base)
    assert str(out) in err.value.message and "notes.txt" in err.value.message
    assert _tree(out) == {"notes.txt": b"my notes"}  # nothing written, nothing deleted
    assert _no_build_leftovers(tmp_path) == []


def test_batch_into_a_previous_output_set_replaces_it(tmp_path):
    reg, base = _register(tmp_path / "in")
    out = tmp_path / "out"
    run_batch(reg, out, base_path=base, memos=True)
    first = _tree(out)
    assert any(name.startswith("memos/") for name in first)
    marker = json.loads((out / MARKER).read_text(encoding="utf-8"))
    assert sorted(marker["files"]) == sorted(n for n in first if n != MARKER)
    assert marker["folders"] == ["memos"]
    run_batch(reg, out, base_path=base)  # without memos this time: the old set goes whole
    second = _tree(out)
    assert not any(name.startswith("memos/") for name in second) and not (out / "memos").exists()
    assert set(second) == {MARKER, "results.json", "results.csv", "errors.csv", "summary.pdf"}
    assert _no_build_leftovers(tmp_path) == []


def test_batch_into_a_previous_output_set_with_an_added_file_is_refused(tmp_path):
    reg, base = _register(tmp_path / "in")
    out = tmp_path / "out"
    run_batch(reg, out, base_path=base, memos=True)
    (out / "memos" / "my-review.docx").write_bytes(b"review")
    before = _tree(out)
    with pytest.raises(OutputFolderError) as err:
        run_batch(reg, out, base_path=base)
    assert "memos/my-review.docx" in err.value.message
    assert _tree(out) == before


def test_the_registers_own_folder_as_out_is_refused_and_the_register_kept(tmp_path):
    folder = tmp_path / "site"
    reg, base = _register(folder)
    (folder / "drawing.pdf").write_bytes(b"%PDF-1.4 not ours")
    before = _tree(folder)
    with pytest.raises(OutputFolderError) as err:
        run_batch(reg, folder, base_path=base)
    assert "register.csv" in err.value.message and "base.yaml" in err.value.message
    assert _tree(folder) == before
    assert _no_build_leftovers(tmp_path) == []


def test_an_empty_folder_or_a_new_path_is_used(tmp_path):
    reg, base = _register(tmp_path / "in")
    empty = tmp_path / "empty"
    empty.mkdir()
    run_batch(reg, empty, base_path=base)
    run_batch(reg, tmp_path / "new" / "deeper", base_path=base)
    assert (empty / MARKER).is_file() and (tmp_path / "new" / "deeper" / MARKER).is_file()


def test_an_empty_subfolder_or_a_file_as_out_is_refused(tmp_path):
    reg, base = _register(tmp_path / "in")
    holder = tmp_path / "holder"
    (holder / "keep").mkdir(parents=True)
    with pytest.raises(OutputFolderError, match="keep/"):
        run_batch(reg, holder, base_path=base)
    assert (holder / "keep").is_dir()
    a_file = tmp_path / "results.txt"
    a_file.write_text("x")
    with pytest.raises(OutputFolderError, match="is a file"):
        run_batch(reg, a_file, base_path=base)
    assert a_file.read_text() == "x"


def test_a_marker_cannot_name_files_outside_its_folder(tmp_path):
    """A marker that lists '../x' is not a heatscreen marker: the folder is refused, nothing outside touched."""
    reg, base = _register(tmp_path / "in")
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me")
    out = tmp_path / "out"
    out.mkdir()
    (out / MARKER).write_text(json.dumps({"files": ["../victim.txt"], "folders": []}))
    with pytest.raises(OutputFolderError):
        run_batch(reg, out, base_path=base)
    assert victim.read_text() == "keep me"


def test_removing_an_old_set_leaves_a_file_that_appeared_in_it(tmp_path):
    """The old set is deleted from its marker's list, so a file added after the check survives."""
    reg, base = _register(tmp_path / "in")
    out = tmp_path / "out"
    run_batch(reg, out, base_path=base, memos=True)
    check_output_folder(out)  # passes: a previous set
    (out / "memos" / "late.txt").write_text("added during the run")
    remove_output_set(out)
    assert _tree(out) == {"memos/late.txt": b"added during the run"}


def test_a_link_to_a_previous_set_is_followed_not_replaced(tmp_path):
    reg, base = _register(tmp_path / "in")
    real = tmp_path / "real"
    run_batch(reg, real, base_path=base)
    link = tmp_path / "link"
    os.symlink(real, link)
    run_batch(reg, link, base_path=base)
    assert link.is_symlink() and (real / MARKER).is_file()


def test_replacing_an_empty_folder_leaves_nothing_beside_it(tmp_path):
    reg, base = _register(tmp_path / "in")
    (tmp_path / "out").mkdir()
    run_batch(reg, tmp_path / "out", base_path=base)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["in", "out"]
