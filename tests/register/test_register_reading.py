"""Reading registers (issue 22): the delimiter comes from the header row, limits apply while reading, and
workbooks that declare a document type are refused."""
from __future__ import annotations

import csv
import io
import zipfile

import pytest

from screening.register.reading import RegisterError, read_register

HEADER = "id;contents.mass [kg];contents.initial_temperature [degC];title"


def test_semicolons_with_quoted_commas(tmp_path):
    """csv.Sniffer takes this register for comma-separated (the titles' apostrophes look like quotes)."""
    p = tmp_path / "r.csv"
    p.write_text(f"{HEADER}\nV-1;4000;20;'x', 'y', 'z'\nV-2;3000;25;'p', 'q'\n", encoding="utf-8")
    sniffed = csv.Sniffer().sniff(p.read_text(encoding="utf-8"), delimiters=",;\t").delimiter
    reg = read_register(p)
    assert [c.dotted for c in reg.columns] == ["id", "contents.mass", "contents.initial_temperature", "title"]
    assert reg.rows == [["V-1", "4000", "20", "'x', 'y', 'z'"], ["V-2", "3000", "25", "'p', 'q'"]]
    assert not reg.header_problems
    assert sniffed == ","  # what the old reader would have used (from Python's csv module)


@pytest.mark.parametrize("delimiter", [",", ";", "\t"])
def test_delimiter_from_the_header_row(tmp_path, delimiter):
    p = tmp_path / "r.csv"
    p.write_text(delimiter.join(["id", "title", "contents.mass [kg]"]) + "\n"
                 + delimiter.join(["A", '"a, b; c\td"', "10"]) + "\n", encoding="utf-8")
    reg = read_register(p)
    assert reg.rows == [["A", "a, b; c\td", "10"]]


def test_one_column_register(tmp_path):
    p = tmp_path / "r.csv"
    p.write_text("id\nA;B\n", encoding="utf-8")
    assert read_register(p).rows == [["A;B"]]


def test_a_cell_over_the_csv_limit_names_its_line(tmp_path):
    p = tmp_path / "r.csv"
    p.write_text("id,title\nA,short\nB," + "t" * 140_000 + "\n", encoding="utf-8")
    with pytest.raises(RegisterError, match="line 3: a cell holds more than"):
        read_register(p)


def test_a_register_over_the_size_limit_is_refused_before_reading(tmp_path, monkeypatch):
    import screening.register.reading as reading

    monkeypatch.setattr(reading, "MAX_CSV_BYTES", 100)
    p = tmp_path / "r.csv"
    p.write_text("id\n" + "A\n" * 100, encoding="utf-8")
    with pytest.raises(RegisterError, match="more than the limit of 100 bytes"):
        read_register(p)


def test_rows_are_counted_while_reading(tmp_path, monkeypatch):
    import screening.register.reading as reading

    monkeypatch.setattr(reading, "MAX_ROWS", 10)
    p = tmp_path / "r.csv"
    p.write_text("id\n" + "A\n" * 50, encoding="utf-8")
    with pytest.raises(RegisterError, match="more than 10 rows"):
        read_register(p)


def test_latin1_register_still_read(tmp_path):
    p = tmp_path / "r.csv"
    p.write_bytes("id,title\nA,r\xe9servoir\n".encode("latin-1"))
    assert read_register(p).rows == [["A", "r\xe9servoir"]]


def _workbook_with(prologue: bytes) -> bytes:
    import openpyxl

    wb = openpyxl.Workbook()
    wb.active.append(["id", "contents.mass [kg]"])
    wb.active.append(["A", 10])
    buf = io.BytesIO()
    wb.save(buf)
    zin = zipfile.ZipFile(io.BytesIO(buf.getvalue()))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w") as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                data = prologue + data
            zout.writestr(info, data)
    return out.getvalue()


@pytest.mark.parametrize("prologue", [
    b'<?xml version="1.0"?><!DOCTYPE worksheet [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;">]>',
    b'<?xml version="1.0"?><!DOCTYPE worksheet [<!ENTITY x SYSTEM "file:///etc/hostname">]>',
    '<?xml version="1.0" encoding="UTF-16"?><!DOCTYPE worksheet>'.encode("utf-16"),
])
def test_workbooks_with_a_document_type_are_refused(tmp_path, prologue):
    p = tmp_path / "r.xlsx"
    p.write_bytes(_workbook_with(prologue))
    with pytest.raises(RegisterError, match="DOCTYPE"):
        read_register(p)


def test_a_plain_workbook_is_read(tmp_path):
    p = tmp_path / "r.xlsx"
    p.write_bytes(_workbook_with(b""))
    assert read_register(p).rows == [["A", "10"]]


def test_a_broken_workbook_is_a_register_error(tmp_path):
    p = tmp_path / "r.xlsx"
    data = bytearray(_workbook_with(b""))
    p.write_bytes(bytes(data).replace(b"worksheet", b"worksheeT"))
    with pytest.raises(RegisterError):
        read_register(p)
