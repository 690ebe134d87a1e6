"""Reading submissions: CSV, XLSX, folders, zips; caps and unsafe members."""

import zipfile

import pytest

from labcheck.demo import xlsx_bytes
from labcheck.reading.ingest import InputError, Limits, RawSubmission, Skipped, iter_submissions, read_roster, read_rows

from conftest import csv_bytes, good_dip_rows


def test_csv_and_xlsx_give_the_same_rows():
    rows = good_dip_rows()
    a = read_rows(csv_bytes(rows), "a.csv")
    b = read_rows(xlsx_bytes(rows), "b.xlsx")
    assert a.error is None and b.error is None
    assert [(r.part, r.item, r.value, r.unit) for r in a.rows] == [(r.part, r.item, r.value, r.unit) for r in b.rows]


def test_xlsx_numbers_keep_their_digits():
    raw = read_rows(xlsx_bytes([("observation", "eye_height", 12.345678901234, "m"), ("observation", "eye_height", 12.0, "m")]), "x.xlsx")
    assert [r.value for r in raw.rows] == ["12.345678901234", "12"]


def test_semicolon_csv_and_bom_and_row_numbers():
    data = "\ufeffpart;item;value;unit;note\nobservation;eye_height;12,5;m;\n\nresult;dip_mean;5.5;;\n".encode("utf-8")
    raw = read_rows(data, "s.csv")
    assert raw.error is None
    assert [(r.number, r.item, r.value) for r in raw.rows] == [(2, "eye_height", "12,5"), (4, "dip_mean", "5.5")]


@pytest.mark.parametrize(
    "data, name, message",
    [
        (b"", "e.csv", "the file is empty"),
        (b"\x00\x01\x02binary\x00", "b.csv", "binary data"),
        ("part,item,value\nobservation,eye_height,12\n".encode("utf-16-le"), "u.csv", "binary data"),  # no BOM
        (b"part,item,value\nobservation,eye_height,12\x81\n", "l.csv", "neither UTF-8 nor Windows-1252"),
        (b"name,score\nAda,10\n", "w.csv", "wrong columns: expected a header row with part, item, value"),
        (b"PK\x03\x04garbage", "z.csv", "rename it to .xlsx"),
        (b"not a workbook", "x.xlsx", "not a valid XLSX workbook"),
        (b"whatever", "notes.pdf", "not a CSV or XLSX submission"),
        (b"whatever", "old.xls", "the old .xls format"),
    ],
)
def test_unreadable_files_say_why(data, name, message):
    raw = read_rows(data, name)
    assert raw.error is not None and message in raw.error


def test_row_cap():
    rows = [("observation", "dip_angle", "5.5", "arcmin")] * 30
    raw = read_rows(csv_bytes(rows), "big.csv", Limits(max_rows=20))
    assert "too many rows" in raw.error


def make_zip(path, members: dict[str, bytes]):
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in members.items():
            z.writestr(name, data)


def test_zip_with_nested_folders_and_clutter(tmp_path):
    make_zip(tmp_path / "export.zip", {
        "lab/Ada_s1/sub.csv": csv_bytes(good_dip_rows(sid="s1")),
        "lab/Bo_s2/deep/sub.xlsx": xlsx_bytes(good_dip_rows(sid="s2")),
        "__MACOSX/lab/._sub.csv": b"\x00\x05",
        "lab/readme.txt": b"hello",
    })
    items = list(iter_submissions([tmp_path / "export.zip"]))
    subs = [i for i in items if isinstance(i, RawSubmission)]
    skipped = [i for i in items if isinstance(i, Skipped)]
    assert [s.source for s in subs] == ["export.zip/lab/Ada_s1/sub.csv", "export.zip/lab/Bo_s2/deep/sub.xlsx", "export.zip/lab/readme.txt"]
    assert subs[0].error is None and subs[1].error is None
    assert "not a CSV or XLSX" in subs[2].error
    assert len(skipped) == 1 and "__MACOSX" in skipped[0].source


def test_zip_slip_members_are_refused_and_nothing_is_written(tmp_path):
    work = tmp_path / "work"
    work.mkdir()
    zpath = work / "evil.zip"
    make_zip(zpath, {
        "../../outside.csv": csv_bytes(good_dip_rows()),
        "/etc/absolute.csv": csv_bytes(good_dip_rows()),
        "ok/fine.csv": csv_bytes(good_dip_rows()),
    })
    before = sorted(p for p in tmp_path.rglob("*"))
    items = [i for i in iter_submissions([zpath]) if isinstance(i, RawSubmission)]
    refused = [i for i in items if i.error and "refused" in i.error]
    assert len(refused) == 2
    assert all("leaves the archive" in i.error for i in refused)
    assert sorted(p for p in tmp_path.rglob("*")) == before  # nothing extracted anywhere
    assert not (tmp_path / "outside.csv").exists()


def test_zip_bomb_member_is_refused_by_size_cap(tmp_path):
    zpath = tmp_path / "bomb.zip"
    make_zip(zpath, {"big.csv": b"part,item,value\n" + b"0" * 3_000_000, "ok.csv": csv_bytes(good_dip_rows())})
    items = [i for i in iter_submissions([zpath], Limits(max_file_bytes=1_000_000)) if isinstance(i, RawSubmission)]
    assert "refused: expands to" in items[0].error
    assert items[1].error is None


def test_zip_total_cap(tmp_path):
    zpath = tmp_path / "many.zip"
    make_zip(zpath, {f"s{i}.csv": csv_bytes(good_dip_rows()) for i in range(5)})
    one = len(csv_bytes(good_dip_rows()))
    items = list(iter_submissions([zpath], Limits(max_zip_total_bytes=one * 3 + 1)))
    assert sum(1 for i in items if i.error and "total size cap" in i.error) == 2


def test_folder_input_and_missing_path(tmp_path):
    (tmp_path / "a").mkdir()
    (tmp_path / "a" / "one.csv").write_bytes(csv_bytes(good_dip_rows()))
    (tmp_path / "a" / ".DS_Store").write_bytes(b"\x00")
    items = list(iter_submissions([tmp_path / "a"]))
    assert [type(i).__name__ for i in items] == ["Skipped", "RawSubmission"]
    with pytest.raises(InputError, match="no such file or folder"):
        list(iter_submissions([tmp_path / "nope"]))


def test_roster(tmp_path):
    p = tmp_path / "roster.csv"
    p.write_text("Student_ID,Name,email\ns1,Ada,a@x\ns2,Bo,\n", encoding="utf-8")
    assert [(e.student_id, e.name) for e in read_roster(p).entries] == [("s1", "Ada"), ("s2", "Bo")]
    p.write_text("id,who\n1,Ada\n", encoding="utf-8")
    with pytest.raises(InputError, match="needs a student id column and a name column"):
        read_roster(p)
    p.write_text("student_id,name\ns1,Ada\ns1,Bo\n", encoding="utf-8")
    with pytest.raises(InputError, match="appears twice"):
        read_roster(p)
