"""Damaged and hostile files: each becomes that file's plain-worded record, never a crash, never a lost neighbour."""

import io
import json
import re
import struct
import zipfile

import pytest

from labcheck.run.batch import sheet_file_name
from labcheck.cli.main import main
from labcheck.demo import xlsx_bytes
from labcheck.reading.ingest import Limits, RawSubmission, iter_submissions, read_rows
from labcheck.report.outputs import neutralise_cell
from labcheck.reading.submission import normalise

from conftest import csv_bytes, good_dip_rows

ROWS = [("identity", "student_id", "s1"), ("observation", "eye_height", 12.5, "m")]


def _rewrite(data: bytes, part: str, edit) -> bytes:
    """A copy of the workbook with one part's XML text changed by ``edit``."""
    src = zipfile.ZipFile(io.BytesIO(data))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        for info in src.infolist():
            body = src.read(info)
            if info.filename == part:
                body = edit(body.decode()).encode()
            z.writestr(info.filename, body)
    return out.getvalue()


SHEET = "xl/worksheets/sheet1.xml"


def _cell(sheet_xml: str, ref: str, new: str) -> str:
    """Replace the cell ``ref`` with ``new`` (raw XML)."""
    return re.sub(rf'<c r="{ref}"[^>]*?(/>|>.*?</c>)', new, sheet_xml, count=1)


@pytest.mark.parametrize("name, edit", [
    ("number cell holding text", lambda x: _cell(x, "C3", '<c r="C3" t="n"><v>abc</v></c>')),
    ("shared string past the table", lambda x: _cell(x, "C3", '<c r="C3" t="s"><v>99999</v></c>')),
    ("date cell holding garbage", lambda x: _cell(x, "C3", '<c r="C3" t="d"><v>not-a-date</v></c>')),
    ("column past the last column", lambda x: _cell(x, "C3", '<c r="ZZZZ3"><v>1</v></c>')),
    ("cell in the last column", lambda x: _cell(x, "C3", '<c r="C3"><v>12.5</v></c><c r="XFD3"><v>1</v></c>')),
])
def test_damaged_xlsx_cells_never_escape(name, edit):
    data = _rewrite(xlsx_bytes(ROWS), SHEET, edit)
    raw = read_rows(data, "d.xlsx")
    assert isinstance(raw, RawSubmission)
    if raw.error:
        assert "cannot be read" in raw.error or "not a readable" in raw.error
    else:
        assert raw.rows[0].item == "student_id"


def test_a_workbook_with_no_sheets():
    data = _rewrite(xlsx_bytes(ROWS), "xl/workbook.xml", lambda x: re.sub(r"<sheets>.*</sheets>", "<sheets/>", x, flags=re.S))
    raw = read_rows(data, "n.xlsx")
    assert raw.error and ("no worksheet" in raw.error or "not a readable" in raw.error)


def test_the_sheet_with_the_header_is_found_and_said():
    import openpyxl

    wb = openpyxl.Workbook()
    scratch = wb.active
    scratch.title = "scratch"
    scratch.append(["working", "out", 42])
    data_ws = wb.create_sheet("Data")
    data_ws.append(["part", "item", "value", "unit"])
    data_ws.append(["observation", "eye_height", 12.5, "m"])
    buf = io.BytesIO()
    wb.save(buf)
    raw = read_rows(buf.getvalue(), "s.xlsx")
    assert raw.error is None and raw.rows[0].value == "12.5"
    assert any("'Data'" in n and "'scratch'" in n for n in raw.notes)  # the sheet says which sheet was read


def test_a_formula_with_no_saved_value_is_flagged_on_its_row(spec):
    data = _rewrite(xlsx_bytes(ROWS), SHEET, lambda x: _cell(x, "C3", '<c r="C3"><f>2*6.25</f></c>'))
    raw = read_rows(data, "f.xlsx")
    assert raw.error is None
    sub = normalise(raw, spec)
    assert [p.row for p in sub.problems] == [3] and "formula with no saved value" in sub.problems[0].message


def test_an_xlsx_part_over_its_cap_is_refused_before_expanding():
    data = _rewrite(xlsx_bytes(ROWS), SHEET, lambda x: x.replace("</sheetData>", "</sheetData>" + " " * 300_000))
    raw = read_rows(data, "big.xlsx", Limits(max_xlsx_part_bytes=100_000))
    assert raw.error and "expands to" in raw.error


def _zip(members: dict[str, bytes], method=zipfile.ZIP_DEFLATED) -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", method) as z:
        for name, body in members.items():
            z.writestr(name, body)
    return buf.getvalue()


@pytest.mark.parametrize("method", [zipfile.ZIP_DEFLATED, zipfile.ZIP_LZMA, zipfile.ZIP_BZIP2])
def test_a_corrupt_member_loses_only_itself(tmp_path, method):
    good = csv_bytes(good_dip_rows(sid="s1"))
    data = bytearray(_zip({"a.csv": good, "b.csv": good * 20, "c.csv": good}, method))
    info = zipfile.ZipFile(io.BytesIO(bytes(data))).getinfo("b.csv")
    start = info.header_offset + 30 + len(info.filename) + 20
    data[start:start + 40] = b"\xff" * 40  # corrupt b.csv's compressed stream
    (tmp_path / "x.zip").write_bytes(bytes(data))
    items = [i for i in iter_submissions([tmp_path / "x.zip"]) if isinstance(i, RawSubmission)]
    assert [i.source for i in items] == ["x.zip/a.csv", "x.zip/b.csv", "x.zip/c.csv"]
    assert items[0].error is None and items[2].error is None
    assert items[1].error and "cannot read this archive member" in items[1].error


def test_a_zip_declaring_a_million_members_is_refused_unopened(tmp_path):
    # An end-of-central-directory record (PKWARE APPNOTE 4.3.16) claiming 65,535 entries in a zip64 record of 10^6.
    eocd64 = struct.pack("<4sQ2H2L4Q", b"PK\x06\x06", 44, 45, 45, 0, 0, 10**6, 10**6, 46 * 10**6, 0)
    locator = struct.pack("<4sLQL", b"PK\x06\x07", 0, 0, 1)
    eocd = struct.pack("<4s4H2LH", b"PK\x05\x06", 0, 0, 0xFFFF, 0xFFFF, 0xFFFFFFFF, 0xFFFFFFFF, 0)
    (tmp_path / "m.zip").write_bytes(eocd64 + locator + eocd)
    items = list(iter_submissions([tmp_path / "m.zip"]))
    assert len(items) == 1 and "declares 1000000 files" in items[0].error


def test_a_submission_from_another_labs_template(tmp_path, capsys):
    from labcheck.base.resources import shipped_spec
    from labcheck.model.spec import load_spec
    from labcheck.report.template import template_rows

    taped = load_spec(shipped_spec("taped_baseline"))
    rows = [(p, i, "12.5" if p != "identity" else "s9", u) for p, i, v, u, n, d in template_rows(taped)]
    (tmp_path / "in").mkdir()
    (tmp_path / "in" / "t.csv").write_bytes(csv_bytes(rows))
    (tmp_path / "in" / "ok.csv").write_bytes(csv_bytes(good_dip_rows(sid="s1")))
    code = main(["grade", "horizon_dip", str(tmp_path / "in"), "--out", str(tmp_path / "out"), "--quiet"])
    assert code == 1
    subs = json.loads((tmp_path / "out" / "results.json").read_text())["submissions"]
    wrong = next(s for s in subs if s["submission"].endswith("t.csv"))
    assert wrong["status"] == "wrong_lab" and "looks like the taped_baseline template" in wrong["error"]
    assert "another lab&#39;s template" in (tmp_path / "out" / "section.html").read_text()  # autoescaped
    assert main(["check", "horizon_dip", str(tmp_path / "in" / "t.csv")]) == 1
    assert "looks like the taped_baseline template" in capsys.readouterr().out


@pytest.mark.parametrize("text, inert", [
    ("=1+1", "'=1+1"), (";=1+1", ";'=1+1"), ("Ada;=HYPERLINK(1)", "Ada;'=HYPERLINK(1)"), ("x,@SUM(A1)", "x,'@SUM(A1)"),
    ("\t=1", "'\t'=1"), ("Ada Lovelace", "Ada Lovelace"), ("O'Brien-Smith", "O'Brien-Smith"),
])
def test_cells_are_neutralised_after_any_separator(text, inert):
    # OWASP, "CSV Injection": a cell must not start a formula, nor could after a separator a program splits on.
    assert neutralise_cell(text) == inert


def test_gradebook_quotes_every_cell(tmp_path):
    (tmp_path / "in").mkdir()
    rows = good_dip_rows(sid="s1", name=";=1+1")
    (tmp_path / "in" / "a.csv").write_bytes(csv_bytes(rows))
    main(["grade", "horizon_dip", str(tmp_path / "in"), "--out", str(tmp_path / "out"), "--quiet"])
    lines = (tmp_path / "out" / "gradebook.csv").read_text().splitlines()
    assert all(line.startswith('"') and line.endswith('"') for line in lines)
    assert '";\'=1+1"' in lines[1]


@pytest.mark.parametrize("sid, name", [("CON", "id-CON.html"), ("nul", "id-nul.html"), ("COM1", "id-COM1.html"),
                                       ("lpt9.txt", "id-lpt9.txt.html"), ("s1. ", "s1.html"), ("..", "unnamed.html")])
def test_sheet_names_are_safe_on_every_system(sid, name):
    # Windows reserved device names (Microsoft, "Naming Files, Paths, and Namespaces"); trailing dots and spaces.
    assert sheet_file_name(sid, set()) == name


def test_sheet_names_stay_unique_case_insensitively():
    used: set[str] = set()
    assert [sheet_file_name(s, used) for s in ("Ab", "aB", "AB")] == ["Ab.html", "aB-2.html", "AB-3.html"]


@pytest.mark.parametrize("lab, item, values, unit", [
    # Found by the fuzzer: readings huge but finite made the scatter overflow in the quality notes,
    # the propagated uncertainty overflow, and an infinity reach the record.
    ("horizon_dip", "dip_angle", ["9e11", "-9e11", "5.9"], "arcmin"),
    ("horizon_dip", "dip_angle", ["1e-150", "1e-150", "1e-150"], "arcmin"),
    ("taped_baseline", "forward_tape_reading", ["9e11", "1e-150", "30.0"], "m"),
])
def test_extreme_but_finite_readings_are_graded_or_refused_never_a_fault(tmp_path, lab, item, values, unit):
    from labcheck.run.batch import _SectionRun
    from labcheck.base.resources import shipped_spec
    from labcheck.model.spec import load_spec

    spec = load_spec(shipped_spec(lab))
    rows = [("identity", "student_id", "s1"), ("observation", "eye_height", "12.5", "m")]
    rows += [("observation", item, v, unit) for v in values]
    runner = _SectionRun(spec, tmp_path / "out", tmp_path, None, None)
    outcome = runner._process(read_rows(csv_bytes(rows), "x.csv"))
    assert not runner.run.internal_errors, runner.run.internal_errors
    assert json.loads(outcome.text)["status"] == "graded"
