"""labcheck's XLSX reader, parsing parts whole or streamed, reads exactly the cells openpyxl reads (issue 12).

The reference is openpyxl's read-only, data_only reader with labcheck's former cell-to-text rule,
kept here.  Workbooks: every group of every demo section, every shipped lab's blank template, and a
workbook with the cell types a spreadsheet program writes (numbers, dates, times, booleans, errors,
formulas with saved values, shared, inline and rich-text strings, a second sheet).
"""

import datetime as dt
import io
import zipfile

import openpyxl
import pytest

from labcheck.demo import SECTIONS, xlsx_bytes
from labcheck.reading.ingest import read_rows
from labcheck.base.resources import specs_dir
from labcheck.model.spec import load_spec
from labcheck.report.template import write_template
from labcheck.reading.xlsx import UNSAVED_FORMULA, Book

WIDTH = 6


def _reference_text(value) -> str:
    """openpyxl's value as labcheck turned it into text before its own reader."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        return str(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return str(value)


def _openpyxl_rows(data: bytes, sheet_index: int = 0) -> list[list[str]]:
    wb = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    try:
        ws = wb.worksheets[sheet_index]
        rows = [[_reference_text(v) for v in row] for row in ws.iter_rows(max_col=WIDTH, values_only=True)]
    finally:
        wb.close()
    return [_trim(r) for r in rows]


def _ours(data: bytes, sheet_index: int = 0, marks_blank: bool = True) -> list[list[str]]:
    """Our cells; a formula with no saved value (which openpyxl reads as blank) as blank unless asked."""
    book = Book(zipfile.ZipFile(io.BytesIO(data)))
    rows = book.read_sheet(book.sheets[sheet_index][1], WIDTH, 100_000)
    return [_trim(["" if marks_blank and c == UNSAVED_FORMULA else c for c in r]) for r in rows]


def _trim(row):
    row = list(row)
    while row and row[-1] == "":
        row.pop()
    return row


def _strip_trailing_empty_rows(rows):
    while rows and not rows[-1]:
        rows.pop()
    return rows


@pytest.fixture(params=["tree", "streamed"])
def mode(request, monkeypatch):
    """Both ways the reader parses a part: whole (a small part) and streamed (one over TREE_BYTES)."""
    from labcheck.reading import xlsx

    if request.param == "streamed":
        monkeypatch.setattr(xlsx, "TREE_BYTES", 0)
    return request.param


def _workbooks():
    for section in SECTIONS:
        for group in section.generate():
            yield f"{section.lab}:{group.number}", xlsx_bytes(group.rows)


@pytest.mark.parametrize("name, data", list(_workbooks()), ids=lambda x: x if isinstance(x, str) else "")
def test_demo_workbooks_read_the_same(name, data, mode):
    assert _strip_trailing_empty_rows(_ours(data)) == _strip_trailing_empty_rows(_openpyxl_rows(data))


@pytest.mark.parametrize("spec_file", sorted(specs_dir().glob("*.toml")), ids=lambda p: p.stem)
def test_blank_templates_read_the_same(tmp_path, spec_file, mode):
    out = tmp_path / "t.xlsx"
    write_template(load_spec(spec_file), out)
    data = out.read_bytes()
    assert _strip_trailing_empty_rows(_ours(data)) == _strip_trailing_empty_rows(_openpyxl_rows(data))


def test_every_cell_type_reads_the_same(tmp_path, mode):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["part", "item", "value", "unit", "note"])
    ws.append(["observation", "eye_height", 12.5, "m", "a float"])
    ws.append(["observation", "eye_height", 12, "m", "an integer"])
    ws.append(["observation", "eye_height", 1e-7, "m", "tiny"])
    ws.append(["observation", "eye_height", 123456789012345678.0, "m", "huge"])
    ws.append(["identity", "date", dt.datetime(2026, 9, 21, 12, 47, 30), "", "a date-time"])
    ws.append(["identity", "date", dt.date(2026, 9, 21), "", "a date"])
    ws.append(["identity", "date", dt.time(12, 47, 30), "", "a time"])
    ws.append(["observation", "support", True, "", "a boolean"])
    ws.append(["observation", "eye_height", "=2*6.25", "m", "a formula"])
    ws.append([])
    ws.append(["result", "dip_mean", "6,0", "arcmin", "text"])
    ws["B20"] = "far below"
    ws2 = wb.create_sheet("Second")
    ws2.append(["part", "item", "value"])
    path = tmp_path / "types.xlsx"
    wb.save(path)
    data = path.read_bytes()
    ours, theirs = _ours(data, marks_blank=False), _openpyxl_rows(data)
    # openpyxl writes no saved value for its formula: we mark it, openpyxl reads None.
    formula_row = 9
    assert ours[formula_row][2] == "\x00unsaved-formula\x00" and theirs[formula_row][2] == ""
    ours[formula_row][2] = ""
    assert _strip_trailing_empty_rows(ours) == _strip_trailing_empty_rows(theirs)
    assert _ours(data, 1) == _openpyxl_rows(data, 1)


def test_a_hostile_entity_expansion_is_refused(mode):
    # "Billion laughs" in a worksheet part: expat (≥ 2.4) refuses the amplification; the file is unreadable,
    # quickly, and nothing escapes (the tests of issue 8 cover the other XML faults).
    data = xlsx_bytes([("observation", "eye_height", "12.5", "m")])
    src = zipfile.ZipFile(io.BytesIO(data))
    bomb = ('<?xml version="1.0"?><!DOCTYPE w [<!ENTITY a "aaaaaaaaaa">' +
            "".join(f'<!ENTITY {chr(98 + i)} "{("&" + chr(97 + i) + ";") * 10}">' for i in range(9)) +
            ']><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
            '<row r="1"><c r="A1" t="inlineStr"><is><t>&j;</t></is></c></row></sheetData></worksheet>')
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w") as z:
        for info in src.infolist():
            z.writestr(info.filename, bomb if info.filename == "xl/worksheets/sheet1.xml" else src.read(info))
    raw = read_rows(out.getvalue(), "bomb.xlsx")
    assert raw.error is not None


def test_a_formula_in_the_note_costs_the_note_not_the_row(spec):
    # The demo's hostile note "=1+1 <b>…</b>" is saved by openpyxl as a formula with no value: the
    # row's value must still be read (only a formula in part, item, value or unit makes the row unusable).
    from labcheck.reading.submission import normalise

    data = xlsx_bytes([("identity", "site", "Upper Harrowby", "", "=1+1 <b>check</b>"),
                       ("observation", "eye_height", "12.5", "m", "")])
    sub = normalise(read_rows(data, "n.xlsx"), spec)
    assert sub.identity["site"] == "Upper Harrowby" and not sub.problems
