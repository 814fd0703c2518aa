"""How a register is cut into chunks: every row in exactly one chunk, in order; integrated rows in fewer chunks.

Chunking changes only the speed, never a result: tests/register/test_register_drums.py compares every row of
random drum registers with ``check --json`` of the same case, whatever chunk the row fell in.
"""
from __future__ import annotations

from pathlib import Path

import pytest

from screening.register import batch
from screening.register.reading import read_register


@pytest.mark.parametrize("n", [0, 1, 7, 499, 500, 4001, 12345])
@pytest.mark.parametrize("workers", [1, 2])
@pytest.mark.parametrize("integrated", [False, True])
def test_chunks_cover_every_row_once_in_order(n, workers, integrated):
    spans = batch._chunks(n, workers, integrated)
    rows = [i for a, b in spans for i in range(a, b)]
    assert rows == list(range(n))
    assert all(b - a <= batch.CHUNK_ROWS for a, b in spans)
    if integrated and n:
        assert len(spans) == max(workers, -(-n // batch.CHUNK_ROWS)) or len(spans) <= workers


def test_integrated_rows_are_recognised(tmp_path: Path):
    reg = tmp_path / "r.csv"
    reg.write_text("id,contents.mass [kg]\nA,10\n", encoding="utf-8")
    register = read_register(reg)
    assert batch._integrated_rows({"heat_sources": [{"kind": "arrhenius"}]}, register)
    assert batch._integrated_rows({"contents": {"mixing": "unstirred"}}, register)
    assert not batch._integrated_rows({"heat_sources": [{"kind": "constant"}]}, register)
    reg.write_text("id,heat_sources.0.kind\nA,constant\nB,Autocatalytic\n", encoding="utf-8")
    assert batch._integrated_rows({}, read_register(reg))
