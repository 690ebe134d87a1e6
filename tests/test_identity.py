"""Identity reconciliation: one table per case the course issue names.

Every reconciliation that is not an exact id match must be reported (record["identity"] and a flag), and a
file must never be credited to a student silently.  The fuzzy name threshold is labcheck's own policy
(labcheck/reading/identity.py); the scores asserted here are rapidfuzz's token_sort_ratio, computed by rapidfuzz.
"""

import csv
import io
import json
import zipfile

import pytest
from rapidfuzz import fuzz, utils

from labcheck.run.batch import grade_section
from labcheck.reading.identity import (NAME_MATCH_MARGIN, NAME_MATCH_THRESHOLD, Roster, RosterEntry, export_time,
                                        normalise_id,
                                        reconcile)
from labcheck.reading.ingest import InputError, read_roster
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec

from conftest import csv_bytes, good_dip_rows


def _roster(*pairs):
    return Roster([RosterEntry(i, n) for i, n in pairs])


ALPHA = _roster(("s1005", "Amara Hollinsworth"), ("s1006", "Bexley Ivesdale"), ("s1007", "Jon Smith"),
                ("s1008", "Jan Smith"))
NUMERIC = _roster(("00123", "Corin Jessamy"), ("00456", "Dalia Kettleburn"))


@pytest.mark.parametrize("written, roster, credited, how", [
    ("s1005", ALPHA, "s1005", None),  # exact: nothing to report
    ("S1005 ", ALPHA, "s1005", "normalised"),  # capital and trailing space
    (" s 1005", ALPHA, "s1005", "normalised"),  # inner space
    ("ｓ１００５", ALPHA, "s1005", "normalised"),  # full-width characters (NFKC)
    ("123", NUMERIC, "00123", "normalised"),  # a spreadsheet dropped the leading zeros
    ("'00123", NUMERIC, "00123", "normalised"),  # a spreadsheet's text apostrophe
    ("0000123", NUMERIC, "00123", "normalised"),
    ("s01005", ALPHA, None, None),  # ids with letters keep their zeros: not the same id
    ("1005", ALPHA, None, None),
])
def test_id_normalisation(written, roster, credited, how):
    record = {"student_id": written, "name": "", "flags": []}
    reconcile(record, "upload/file.csv", roster)
    if credited is None:
        assert record.get("unmatched") is True
        assert record["flags"][-1]["message"] == "this student_id is not on the roster"
        return
    assert record["student_id"] == credited
    assert record.get("identity", {}).get("how") == how
    assert bool(record["flags"]) == (how is not None)  # reported whenever it was not exact


@pytest.mark.parametrize("text, sep_name", [
    ("Student ID;Username;Last Name;First Name\nS1005;ahol;Hollinsworth;Amara\ns1006;bive;Ivesdale;Bexley\n", ";"),
    ("Student ID\tUsername\tLast Name\tFirst Name\nS1005\tahol\tHollinsworth\tAmara\ns1006\tbive\tIvesdale\tBexley\n",
     "tab"),
    ("Student ID,Username,Last Name,First Name\nS1005,ahol,Hollinsworth,Amara\ns1006,bive,Ivesdale,Bexley\n", ","),
    ("Course GEOD 2150 section C\n\nstudent_number|full_name\nS1005|Amara Hollinsworth\ns1006|Bexley Ivesdale\n", "|"),
    ("SIS User ID,Student,Section\nPoints Possible,,\nS1005,Amara Hollinsworth,C\ns1006,Bexley Ivesdale,C\n", ","),
])
def test_roster_with_lms_headings(tmp_path, text, sep_name):
    p = tmp_path / "roster.csv"
    p.write_text(text, encoding="utf-8")
    roster = read_roster(p)
    assert [(e.student_id, e.name) for e in roster.entries] == [("S1005", "Amara Hollinsworth"),
                                                                  ("s1006", "Bexley Ivesdale")]
    assert roster.find("s1005").name == "Amara Hollinsworth"


def test_roster_columns_named_by_the_instructor(tmp_path):
    p = tmp_path / "roster.csv"
    p.write_text("Student ID;Username;Preferred\n1;ahol;Amara H\n2;bive;Bex I\n", encoding="utf-8-sig")
    roster = read_roster(p, id_column="Username", name_column="preferred")
    assert [(e.student_id, e.name) for e in roster.entries] == [("ahol", "Amara H"), ("bive", "Bex I")]
    with pytest.raises(InputError, match="no column 'login'"):
        read_roster(p, id_column="login")


@pytest.mark.parametrize("text, message", [
    ("who,what\n1,2\n", "needs a student id column and a name column"),
    ("student id,name\n007,Ada\n7,Bo\n", "the same student id once case"),  # numeric ids equal without zeros
    ("student id,name\nA1,Ada\na1 ,Bo\n", "the same student id once case"),
    ("student id,name\ns1,Ada\ns1,Bo\n", "appears twice"),
    ("student id,name\n", "no students"),
])
def test_roster_refusals(tmp_path, text, message):
    p = tmp_path / "roster.csv"
    p.write_text(text, encoding="utf-8")
    with pytest.raises(InputError, match=message):
        read_roster(p)


@pytest.mark.parametrize("written, source, credited, how", [
    # the folder names one roster student, the sheet another: credited to the folder's, listed as a conflict
    ("s1006", "export/Amara_Hollinsworth_s1005/dip.csv", "s1005", "conflict"),
    # the sheet's id is not on the roster: the folder's student, reported
    ("s9999", "export/Amara_Hollinsworth_s1005/dip.csv", "s1005", "folder"),
    ("", "export/Amara_Hollinsworth_S1005/dip.csv", "s1005", "folder"),
    # the folder and the sheet agree (after normalisation): no conflict
    ("S1005", "export/Amara_Hollinsworth_s1005/dip.csv", "s1005", "normalised"),
    # two roster ids in the path: the folder tells nothing, the sheet decides
    ("s1006", "export/s1005_and_s1007/dip.csv", "s1006", None),
])
def test_folder_against_sheet(written, source, credited, how):
    record = {"student_id": written, "name": "", "flags": []}
    reconcile(record, source, ALPHA)
    assert record["student_id"] == credited
    assert record.get("identity", {}).get("how") == how
    if how == "conflict":
        assert "the sheet names s1006" in record["flags"][-1]["message"]
        assert "your instructor checks this" in record["flags"][-1]["message"]


@pytest.mark.parametrize("name, credited", [
    ("Hollinsworth, Amara", "s1005"),  # last, first
    ("Amara Holinsworth", "s1005"),  # one letter short
    ("Amra Hollinswoth", "s1005"),  # two letters short
    ("A. Hollinsworth", None),  # an initial only: below the threshold
    ("Amara", None),  # a first name alone
    ("J Smith", None),  # Jon and Jan Smith score alike: ambiguous
    ("", None),
])
def test_fuzzy_name_fallback(name, credited):
    scores = sorted((fuzz.token_sort_ratio(name, e.name, processor=utils.default_process) for e in ALPHA.entries),
                    reverse=True)
    expected_sure = bool(name) and scores[0] >= NAME_MATCH_THRESHOLD and scores[0] - scores[1] >= NAME_MATCH_MARGIN
    assert expected_sure == (credited is not None)  # the table agrees with rapidfuzz's own scores
    record = {"student_id": "", "name": name, "flags": []}
    reconcile(record, "upload/dip.csv", ALPHA)
    if credited is None:
        assert "identity" not in record and record["student_id"] == ""
    else:
        assert record["student_id"] == credited
        assert record["identity"]["how"] == "name"
        assert "matches s1005 (Amara Hollinsworth)" in record["flags"][-1]["message"]


@pytest.mark.parametrize("path, stamp", [
    ("export/s1005_attempt_2026-10-03-14-22-10/dip.csv", "2026-10-03 14:22:10"),
    ("export/s1005/20261003T142210_dip.csv", "2026-10-03 14:22:10"),
    ("export/s1005/dip 2026-10-03 09.05.csv", "2026-10-03 09:05:00"),
    ("export/20261003/dip.csv", None),  # a bare date could be an all-digit id: not a time stamp
    ("export/s1005/dip.csv", None),
    ("export/2026-13-03-14-22/dip.csv", None),  # month 13
])
def test_export_time_stamps(path, stamp):
    got = export_time(path)
    assert (got.strftime("%Y-%m-%d %H:%M:%S") if got else None) == stamp


def _zip(path, members):
    with zipfile.ZipFile(path, "w") as zf:
        for name, data, when in members:
            zf.writestr(zipfile.ZipInfo(name, date_time=when), data)


@pytest.fixture(scope="module")
def dip_spec():
    return load_spec(shipped_spec("horizon_dip"))


def _gradebook(folder):
    with open(folder / "gradebook.csv", newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


@pytest.mark.parametrize("keep, kept", [("latest", "second"), ("earliest", "first"), ("best", "first")])
def test_several_submissions_one_row_per_student(tmp_path, dip_spec, keep, kept):
    roster = tmp_path / "roster.csv"
    roster.write_text("Student ID,Name\ns1005,Amara Hollinsworth\ns1006,Bexley Ivesdale\n", encoding="utf-8")
    good = csv_bytes(good_dip_rows(sid="s1005", name="Amara Hollinsworth"))
    worse = csv_bytes([r if r[1] != "dip_mean" else ("result", "dip_mean", "7.5", "arcmin")
                       for r in good_dip_rows(sid="S1005", name="Amara Hollinsworth")])
    other = csv_bytes(good_dip_rows(sid="s1006", name="Bexley Ivesdale"))
    # the earlier upload is the better one; file times say which is later (no stamp in the path)
    _zip(tmp_path / "export.zip", [("a/first.csv", good, (2026, 10, 3, 9, 0, 0)),
                                   ("b/second.csv", worse, (2026, 10, 4, 9, 0, 0)),
                                   ("c/other.csv", other, (2026, 10, 3, 9, 0, 0))])
    run = grade_section(dip_spec, [tmp_path / "export.zip"], tmp_path / "out", roster, keep=keep)
    rows = _gradebook(tmp_path / "out")
    assert sorted(r["student_id"] for r in rows) == ["s1005", "s1006"]  # one row per student
    mine = next(r for r in rows if r["student_id"] == "s1005")
    assert mine["submission"].endswith(f"{kept}.csv")
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    (sup,) = results["superseded"]
    assert sup["student_id"] == "s1005" and sup["policy"] == keep
    assert sup["kept"].endswith(f"{kept}.csv") and not sup["submission"].endswith(f"{kept}.csv")
    assert run.n_superseded == 1 and results["run"]["counts"]["superseded"] == 1
    assert (run.n_graded, run.n_counted) == (3, 2)  # the pass count and the mean are over the files that count
    from labcheck.report.text import run_summary_lines

    assert f"{run.n_pass} of 2 at or above the pass mark" in "\n".join(run_summary_lines(run, dip_spec, tmp_path))
    assert len(results["submissions"]) == 3  # nothing lost: every file's record is still there
    assert run.n_missing == 0


def test_a_broken_reupload_never_hides_a_grade(tmp_path, dip_spec):
    roster = tmp_path / "roster.csv"
    roster.write_text("student_id,name\ns1005,Amara Hollinsworth\n", encoding="utf-8")
    good = csv_bytes(good_dip_rows(sid="s1005", name="Amara Hollinsworth"))
    _zip(tmp_path / "export.zip", [("Amara_s1005_2026-10-03-09-00/dip.csv", good, (2026, 10, 3, 9, 0, 0)),
                                   ("Amara_s1005_2026-10-05-09-00/dip.csv", b"\x00\x01garbage", (2026, 10, 5, 9, 0, 0))])
    grade_section(dip_spec, [tmp_path / "export.zip"], tmp_path / "out", roster)
    (row,) = _gradebook(tmp_path / "out")
    assert row["status"] == "graded" and row["submission"].endswith("09-00/dip.csv")
    assert "2026-10-03" in row["submission"]


def test_identity_problems_are_listed_in_the_batch(tmp_path, dip_spec):
    roster = tmp_path / "roster.csv"
    roster.write_text("Student ID;Last Name;First Name\ns1005;Hollinsworth;Amara\ns1006;Ivesdale;Bexley\n"
                      "s1007;Smith;Jon\n", encoding="utf-8")
    files = {
        "export/Amara_Hollinsworth_s1005/dip.csv": good_dip_rows(sid="s1006", name="Bexley Ivesdale"),  # conflict
        "export/x/by_name.csv": good_dip_rows(sid="", name="Smith, Jon"),  # fuzzy
        "export/y/caps.csv": good_dip_rows(sid=" S1006", name="Bexley Ivesdale"),  # normalised
    }
    _zip(tmp_path / "export.zip", [(k, csv_bytes(v), (2026, 10, 3, 9, 0, 0)) for k, v in files.items()])
    grade_section(dip_spec, [tmp_path / "export.zip"], tmp_path / "out", roster)
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    how = {r["submission"].rsplit("/", 1)[-1]: (r["student_id"], r.get("identity", {}).get("how"))
           for r in results["submissions"] if r["submission"]}
    assert how == {"dip.csv": ("s1005", "conflict"), "by_name.csv": ("s1007", "name"), "caps.csv": ("s1006", "normalised")}
    assert results["run"]["counts"]["missing"] == 0


def test_diff_compares_the_files_that_count(tmp_path, dip_spec):
    """Two runs of a section where one student sent two files: diff compares the counted one only."""
    from labcheck.grading.compare import diff_runs, load_results

    roster = tmp_path / "roster.csv"
    roster.write_text("student_id,name\ns1005,Amara Hollinsworth\n", encoding="utf-8")
    good = csv_bytes(good_dip_rows(sid="s1005", name="Amara Hollinsworth"))
    worse = csv_bytes([r if r[1] != "dip_mean" else ("result", "dip_mean", "7.5", "arcmin")
                       for r in good_dip_rows(sid="s1005", name="Amara Hollinsworth")])
    # the worse file is the earlier one, listed last in the archive: a dict keyed by id alone would keep it
    _zip(tmp_path / "export.zip", [("b/first.csv", worse, (2026, 10, 3, 9, 0, 0)),
                                   ("a/second.csv", good, (2026, 10, 4, 9, 0, 0))])
    grade_section(dip_spec, [tmp_path / "export.zip"], tmp_path / "latest", roster, keep="latest")
    grade_section(dip_spec, [tmp_path / "export.zip"], tmp_path / "earliest", roster, keep="earliest")
    one, two = load_results(tmp_path / "latest"), load_results(tmp_path / "earliest")
    good_score = next(r["score"] for r in one["submissions"] if r["submission"].endswith("second.csv"))
    worse_score = next(r["score"] for r in one["submissions"] if r["submission"].endswith("first.csv"))
    assert good_score > worse_score
    d = diff_runs(one, two)  # the counted file changed from the good one to the worse one
    (change,) = d.changed
    assert (change.key, change.old_score, change.new_score) == ("s1005", good_score, worse_score)
    assert diff_runs(one, one).changed == []


# ---------------------------------------------------------------- property tests (hypothesis)

from hypothesis import HealthCheck, given, settings, strategies as st  # noqa: E402

_IDS = st.from_regex(r"[A-Za-z]{0,2}[0-9]{1,6}(-[0-9]{1,3})?", fullmatch=True)
_NAMES = st.text(alphabet=st.characters(whitelist_categories=("L",), max_codepoint=0x24F), min_size=1, max_size=12)
ROSTER_PROPS = settings(max_examples=150, deadline=None, derandomize=True,
                        suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])


@ROSTER_PROPS
@given(st.lists(st.tuples(_IDS, _NAMES, _NAMES), min_size=1, max_size=12, unique_by=lambda t: t[0].lower()),
       st.sampled_from([",", ";", "\t", "|"]), st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "cp1252"]),
       st.sampled_from([("Student ID", None), ("SIS User ID", None), ("username", None), ("student_number", None)]),
       st.booleans(), st.booleans())
def test_any_roster_as_an_lms_writes_it_reads_back(tmp_path_factory, students, sep, encoding, id_heading,
                                                  first_last, title_row):
    """A roster written with any separator, encoding and common heading reads back to the same students, or is
    refused with a message (never another exception)."""
    ids = [normalise_id(s[0], all(x[0].isdigit() for x in students)) for s in students]
    if len(set(ids)) < len(ids):
        return  # ids equal once normalised: a different (tested) refusal
    folder = tmp_path_factory.mktemp("roster")
    rows = []
    if title_row:
        rows.append(["GEOD 2150 roster"])
    if first_last:
        rows.append([id_heading[0], "First Name", "Last Name"])
        rows += [[i, f, l] for i, f, l in students]
    else:
        rows.append([id_heading[0], "Name"])
        rows += [[i, f"{f} {l}"] for i, f, l in students]
    buf = io.StringIO()
    csv.writer(buf, delimiter=sep).writerows(rows)
    try:
        data = buf.getvalue().encode(encoding)
    except UnicodeEncodeError:
        return  # a name cp1252 cannot hold
    path = folder / "roster.csv"
    path.write_bytes(data)
    roster = read_roster(path)
    assert [(e.student_id, e.name) for e in roster.entries] == [(i, f"{f} {l}") for i, f, l in students]
    for i, _, _ in students:  # every id finds its student written in capitals with spaces around it
        assert roster.find(f"  {i.upper()} ").student_id == i


@ROSTER_PROPS
@given(st.binary(max_size=400))
def test_any_bytes_as_a_roster_are_read_or_refused_plainly(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("roster") / "roster.csv"
    path.write_bytes(b"Student ID;Name\n" + data)
    try:
        read_roster(path)
    except InputError:
        pass


@ROSTER_PROPS
@given(st.text(max_size=40), st.text(max_size=40), st.text(max_size=60))
def test_reconcile_never_credits_silently(written, name, source):
    """Whatever a sheet and a path say, a file is credited to a roster student only with a reason recorded,
    unless its id matched exactly."""
    record = {"student_id": written, "name": name, "flags": []}
    reconcile(record, source, ALPHA)
    if record["student_id"] in ALPHA and record["student_id"] != written:
        assert record["identity"]["credited"] == record["student_id"] and record["flags"]
    if record.get("identity"):
        assert record["identity"]["how"] in ("normalised", "folder", "conflict", "name")


def test_a_date_in_a_folder_name_never_finds_a_numeric_student():
    """A numeric roster's ids are matched in a path only with their own digits: an export's date
    (``attempt_2026_10_31``) never credits student 00010."""
    roster = _roster(("00003", "Corin Jessamy"), ("00010", "Dalia Kettleburn"), ("00123", "Emrys Larkspur"))
    record = {"student_id": "", "name": "", "flags": []}
    reconcile(record, "export/Smith_Ann_attempt_2026_10_31/lab.csv", roster)  # only "10" could be an id
    assert record["student_id"] == "" and "identity" not in record
    record = {"student_id": "", "name": "", "flags": []}
    reconcile(record, "export/Larkspur_Emrys_00123_attempt_2026_10_03/lab.csv", roster)
    assert record["student_id"] == "00123" and record["identity"]["how"] == "folder"
    record = {"student_id": "123", "name": "", "flags": []}  # the sheet's id may drop the zeros; the path may not
    reconcile(record, "export/unsorted/lab.csv", roster)
    assert record["student_id"] == "00123" and record["identity"]["how"] == "normalised"
