"""Every way of writing a value that docs/submissions.md lists: read right, or refused with its row named.

One row per form.  Where a form comes from a published convention the source is named; otherwise it is
marked `common practice` (how spreadsheets and students write it).  The expected values are written out
here by hand, not computed with labcheck's own parser.
"""

import math

import pytest

from labcheck.reading.ingest import read_rows
from labcheck.reading.submission import normalise

from conftest import csv_bytes

DEG = math.pi / 180


def _read(spec, value, unit, item="eye_height", part="observation", extra=()):
    rows = [("identity", "student_id", "s1"), (part, item, value, unit), *extra]
    raw = read_rows(csv_bytes(rows), "forms.csv")
    assert raw.error is None, raw.error
    return normalise(raw, spec)


def _value(sub, item):
    if item in sub.observations:
        return sub.observations[item][0].si
    return sub.results[item].si


# (value, unit cell, item, expected SI, note expected, source)
READ_RIGHT = [
    ("12.5", "m", "eye_height", 12.5, False, "common practice"),
    ("12,5", "m", "eye_height", 12.5, False, "ISO 80000-1 §7.3.1: the decimal sign is a point or a comma"),
    ("6,373.0", "km", "dip.radius", 6_373_000.0, False, "ISO 80000-1 §7.3.1 (digit groups); common practice"),
    ("6\u2009373.0", "km", "dip.radius", 6_373_000.0, False, "ISO 80000-1 §7.3.1: groups of three by a thin space"),
    ("1.234,5", "m", "eye_height", 1234.5, False, "common practice (decimal-comma locales)"),
    ("41ft", "", "eye_height", 41 * 0.3048, False, "common practice; foot = 0.3048 m exactly (1959 agreement)"),
    ("41 ft", "ft", "eye_height", 41 * 0.3048, False, "common practice"),
    ("25 km", "", "dip.radius", 25_000.0, False, "common practice"),
    ("0.03%", "", "dip.radius_error_pct", 0.03, False, "common practice"),
    ("0d 6m 18s", "arcmin", "dip_angle", (6 / 60 + 18 / 3600) * DEG, True, "common practice (docs/submissions.md)"),
    ("0d6m18s", "", "dip_angle", (6 / 60 + 18 / 3600) * DEG, False, "common practice"),
    ("0 6 20", "arcmin", "dip_angle", (6 / 60 + 20 / 3600) * DEG, True, "common practice: the template pre-fills arcmin"),
    ("0°06′20″", "arcmin", "dip_angle", (6 / 60 + 20 / 3600) * DEG, True, "ISO 80000-3 item 3-5.b: ° ′ ″"),
    ("6.3'", "arcmin", "dip_angle", 6.3 / 60 * DEG, False, "common practice: minutes under arcmin need no note"),
    ("6.3", "arcmin", "dip_angle", 6.3 / 60 * DEG, False, "common practice"),
    ("\u22126.3", "arcmin", "dip_angle", -6.3 / 60 * DEG, False, "common practice: a typographic minus (U+2212)"),
]


@pytest.mark.parametrize("value, unit, item, expected, noted, source", READ_RIGHT, ids=[r[0] for r in READ_RIGHT])
def test_forms_read_right(spec, value, unit, item, expected, noted, source):
    part = "result" if item.startswith("dip.") else "observation"
    sub = _read(spec, value, unit, item, part)
    assert not sub.problems, sub.problems
    assert _value(sub, item) == pytest.approx(expected, rel=1e-12, abs=1e-15)
    assert bool(sub.reading) == noted  # a D M S read under another angle unit is said on the sheet


# (value, unit cell, item, fragment of the message, source)
REFUSED = [
    ("7,325", "km", "dip.radius", "ambiguous", "common practice: 7325 or 7.325 cannot be told apart"),
    ("25 km", "m", "dip.radius", "says 'km' but the unit column says 'm'", "common practice"),
    ("6 20", "arcmin", "dip_angle", "could be D M S or two numbers", "common practice"),
    ("1e308", "mi", "dip.radius", "far outside any value", "IEEE 754: 1e308 mi overflows a double"),
    ("2e12", "m", "eye_height", "far outside any value", "common practice: no field lab measures 2e12 m"),
    ("9" * 400, "", "dip_angle", "finite", "IEEE 754 overflow"),
    ("12 furlongs", "", "eye_height", "not a length unit", "common practice"),
    ("twelve", "m", "eye_height", "expected a number", "common practice"),
    ("12,34,5", "m", "eye_height", "expected a number", "common practice: digit groups are threes"),
    ("0 61 00", "", "dip_angle", "minutes must be below 60", "sexagesimal notation"),
]


@pytest.mark.parametrize("value, unit, item, message, source", REFUSED, ids=[r[0][:12] for r in REFUSED])
def test_forms_refused_with_the_row_named(spec, value, unit, item, message, source):
    part = "result" if item.startswith("dip.") else "observation"
    sub = _read(spec, value, unit, item, part)
    assert len(sub.problems) == 1
    problem = sub.problems[0]
    assert problem.row == 3 and message in problem.message  # row 3: header, identity, this row
    assert item not in sub.observations and item not in sub.results


def test_a_thousands_comma_follows_the_files_own_decimal_points(spec):
    # "7,325" alone is ambiguous; in a file whose other numbers use decimal points it is 7325
    # (ISO 80000-1 §7.3.1: one decimal sign per document; common practice).
    sub = _read(spec, "7,325", "km", "dip.radius", "result", extra=[("observation", "eye_height", "12.5", "m")])
    assert not sub.problems and sub.results["dip.radius"].si == 7_325_000.0


def test_a_decimal_comma_file_reads_7_325_as_seven(spec):
    sub = _read(spec, "7,325", "km", "dip.radius", "result", extra=[("observation", "eye_height", "12,5", "m")])
    assert not sub.problems and sub.results["dip.radius"].si == pytest.approx(7325.0)


def test_a_semicolon_file_writes_decimal_commas(spec):
    text = "part;item;value;unit\nidentity;student_id;s1\nresult;dip.radius;7,325;km\n"
    sub = normalise(read_rows(text.encode(), "semi.csv"), spec)
    assert not sub.problems and sub.results["dip.radius"].si == pytest.approx(7325.0)


def test_hemisphere_letters_before_and_after():
    # docs/submissions.md shows `W 63 34 10`; 63 of 400 honest baseline submissions lost steps to it (issue 8).
    from labcheck.base.resources import shipped_spec
    from labcheck.model.spec import load_spec

    spec = load_spec(shipped_spec("baseline_radius"))
    rows = [("identity", "student_id", "s1"), ("observation", "lat_1", "N 25 45 09.7"), ("observation", "lon_1", "W 63 34 10"),
            ("observation", "lat_2", "25 46 09.7 N"), ("observation", "lon_2", "63°34'10\"W")]
    sub = normalise(read_rows(csv_bytes(rows), "h.csv"), spec)
    got = {k: v[0].si / DEG for k, v in sub.observations.items()}
    assert not sub.problems, sub.problems
    assert got["lat_1"] == pytest.approx(25 + 45 / 60 + 9.7 / 3600, abs=1e-12)
    assert got["lon_1"] == pytest.approx(-(63 + 34 / 60 + 10 / 3600), abs=1e-12)
    assert got["lat_2"] == pytest.approx(25 + 46 / 60 + 9.7 / 3600, abs=1e-12)
    assert got["lon_2"] == pytest.approx(-(63 + 34 / 60 + 10 / 3600), abs=1e-12)


def test_a_precision_written_1_to_n():
    from labcheck.base.resources import shipped_spec
    from labcheck.model.spec import load_spec

    spec = load_spec(shipped_spec("taped_baseline"))
    rows = [("identity", "student_id", "s1"), ("result", "precision_ratio", "1:7984")]
    sub = normalise(read_rows(csv_bytes(rows), "p.csv"), spec)
    assert not sub.problems and sub.results["precision_ratio"].si == 7984.0  # the 1:N form, N read (common practice)


# ---------------------------------------------------------------- CSV as spreadsheets write it

BODY = [["part", "item", "value", "unit", "note"], ["identity", "student_id", "s1", "", ""],
        ["observation", "eye_height", "12.5", "m", 'said "hello", twice']]


def _encode(delim=",", newline="\n", encoding="utf-8", sep_line=False):
    def cell(c):
        return '"' + c.replace('"', '""') + '"' if any(x in c for x in '",;\t') else c
    lines = ([f"sep={delim}"] if sep_line else []) + [delim.join(cell(c) for c in r) for r in BODY]
    return (newline.join(lines) + newline).encode(encoding)


CSV_FORMS = [
    ("LF", _encode(), "common practice"),
    ("CRLF", _encode(newline="\r\n"), "RFC 4180 §2: CRLF line breaks"),
    ("CR only", _encode(newline="\r"), "common practice: older spreadsheet CSV exports"),
    ("semicolon", _encode(";"), "common practice: decimal-comma locales"),
    ("sep= line", _encode(";", sep_line=True), "common practice: a spreadsheet's separator hint"),
    ("tab", _encode("\t"), "common practice: tab-separated text"),
    ("UTF-8 BOM", b"\xef\xbb\xbf" + _encode(), "Unicode §23.8: the byte order mark"),
    ("UTF-16 BOM", _encode(encoding="utf-16"), "Unicode §23.8: UTF-16 with its byte order mark"),
    ("CRLF UTF-16", _encode(newline="\r\n", encoding="utf-16"), "common practice: a spreadsheet's 'Unicode text'"),
]


@pytest.mark.parametrize("name, data, source", CSV_FORMS, ids=[f[0] for f in CSV_FORMS])
def test_csv_as_spreadsheets_write_it(spec, name, data, source):
    raw = read_rows(data, "f.tsv" if name == "tab" else "f.csv")
    assert raw.error is None, raw.error
    assert [(r.part, r.item, r.value, r.note) for r in raw.rows] == [
        ("identity", "student_id", "s1", ""), ("observation", "eye_height", "12.5", 'said "hello", twice')]
    assert normalise(raw, spec).observations["eye_height"][0].si == 12.5


def test_windows_1252_is_read_with_a_note(spec):
    data = "part,item,value\nidentity,name,Zoë Ångström\nobservation,eye_height,12.5\n".encode("cp1252")
    raw = read_rows(data, "w.csv")
    assert raw.error is None and raw.rows[0].value == "Zoë Ångström"
    sub = normalise(raw, spec)
    assert any("Windows-1252" in r["message"] for r in sub.reading)  # said on the sheet (common practice)


def test_a_title_row_before_the_header(spec):
    data = b"Dip lab, group 7\n\npart,item,value,unit\nobservation,eye_height,12.5,m\n"
    raw = read_rows(data, "t.csv")
    assert raw.error is None and raw.rows[0].number == 4  # the row number a spreadsheet shows
