"""The course record: adjustments across regrades, the LMS export, concurrent readers, kills, PDFs.

The outside references: SQLite's own transaction guarantees are what the concurrency and kill tests lean
on (a reader in another process, a writer killed with SIGKILL); the PDFs are read back with pypdf, an
independent PDF reader, for their page count and text.
"""

import csv
import json
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pypdf
import pytest

from labcheck.course.record import DB_NAME, SCHEMA_VERSION, Course, CourseError
from labcheck.demo.course import STUDENTS, _widened, build_course_inputs
from labcheck.reading.ingest import read_roster
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    return build_course_inputs(tmp_path_factory.mktemp("inputs"))


@pytest.fixture(scope="module")
def dip_spec():
    return load_spec(shipped_spec("horizon_dip"))


def _new_course(tmp_path, inputs) -> Course:
    course = Course.create(tmp_path / "course", "test course")
    course.set_roster(read_roster(inputs.roster))
    return course


def _step(record_row, step):
    from labcheck.course.record import _record

    return next((s for s in _record(record_row)["steps"] if s["id"] == step), {"verdict": None})


def test_schema_version_foreign_keys_and_a_newer_record_refused(tmp_path, inputs):
    course = _new_course(tmp_path, inputs)
    assert course.conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert course.conn.execute("PRAGMA foreign_keys").fetchone()[0] == 1
    with pytest.raises(sqlite3.IntegrityError):  # an adjustment for a student the roster does not have
        with course.transaction() as db:
            db.execute("INSERT INTO adjustments (student_id, lab_id, points, reason, made_at) "
                       "VALUES ('nobody', 'nolab', 1, 'x', 'now')")
    course.conn.execute("PRAGMA user_version = 99")
    course.close()
    with pytest.raises(CourseError, match="newer labcheck"):
        Course.open(tmp_path / "course")
    with pytest.raises(CourseError, match="already holds a course record"):
        Course.create(tmp_path / "course")
    with pytest.raises(CourseError, match="holds no course record"):
        Course.open(tmp_path / "elsewhere")


def test_roster_update_keeps_history_and_marks_dropped(tmp_path, inputs):
    course = _new_course(tmp_path, inputs)
    assert len(course.roster()) == 12
    update = tmp_path / "update.csv"
    update.write_text("Student ID,Name,Section\nK2150-001,Amara J. Jessamy,K1\nk2150-099,New Student,K1\n",
                      encoding="utf-8")
    counts = course.set_roster(read_roster(update), replace_section="K1")
    assert counts == {"added": 1, "updated": 1, "unchanged": 0, "dropped": 5}  # 002..006 left section K1
    names = {e.student_id: e.name for e in course.roster().entries}
    assert names["k2150-001"] == "Amara J. Jessamy" and "K2150-001" not in names  # the roster's spelling kept
    assert "k2150-002" not in names and len(course.roster()) == 8
    actions = [h["action"] for h in course.history()]
    assert actions == ["course created", "roster", "roster"]


def test_adjustments_survive_a_regrade_and_the_changed_one_is_flagged(tmp_path, inputs, dip_spec):
    course = _new_course(tmp_path, inputs)
    run1, first = course.grade(dip_spec, [inputs.inputs["horizon_dip"]])
    current = course.current_results("horizon_dip")
    wrong = sorted(sid for sid, row in current.items()
                   if row["status"] == "graded" and _step(row, "dip_mean")["verdict"] == "wrong")
    assert wrong, "the demo plants a wrong dip_mean"
    target = wrong[0]
    steady = next(sid for sid, row in sorted(current.items())
                  if row["status"] == "graded" and sid != target and _step(row, "dip.radius")["verdict"] == "correct")
    course.adjust(target, "horizon_dip", 1, "copying slip", step="dip_mean")
    course.adjust(steady, "horizon_dip", 1.5, "partial credit on review", step="dip.radius")
    course.adjust(steady, "horizon_dip", -2, "late without leave")
    with pytest.raises(CourseError, match="worth 0 to 2 points"):
        course.adjust(target, "horizon_dip", 5, "too many", step="dip_mean")
    with pytest.raises(CourseError, match="no step 'no_such_step'"):
        course.adjust(target, "horizon_dip", 1, "x", step="no_such_step")
    with pytest.raises(CourseError, match="needs a reason"):
        course.adjust(target, "horizon_dip", 1, "  ", step="dip_mean")

    widened = tmp_path / "widened.toml"
    widened.write_text(_widened(Path(dip_spec.path).read_text(encoding="utf-8"), "dip_mean", "0.5 arcmin"),
                       encoding="utf-8")
    run2, second = course.grade(load_spec(widened), [inputs.inputs["horizon_dip"]])
    applied = {(a["student_id"], a["step"]): a for a in course.run_adjustments(second)}
    assert len(applied) == 3
    assert applied[(target, "dip_mean")]["changed"] == 1  # wrong -> correct since the adjustment
    assert "labcheck now gives correct with 2" in applied[(target, "dip_mean")]["note"]
    assert applied[(steady, "dip.radius")]["changed"] == 0 and applied[(steady, None)]["changed"] == 0

    # the sheets of the new run show them, with the reason
    results = json.loads((course.run_folder(second) / "results.json").read_text(encoding="utf-8"))
    rec = next(r for r in results["submissions"] if r["student_id"] == steady)
    radius = next(s for s in rec["steps"] if s["id"] == "dip.radius")
    assert rec["adjustments"]["score"] == pytest.approx(rec["score"] - radius["points"] + 1.5 - 2)
    sheet = (course.run_folder(second) / rec["sheet"]).read_text(encoding="utf-8")
    assert "Your instructor&#39;s adjustments" in sheet or "Your instructor's adjustments" in sheet
    assert "partial credit on review" in sheet and "late without leave" in sheet

    # the review list names the flagged one only
    (st,) = [s for s in course.status() if s.lab_id == "horizon_dip"]
    assert [(a["student_id"], a["step"]) for a in st.adjustments] == [(target, "dip_mean")]
    # a new adjustment on the same step replaces it (the old one withdrawn, not deleted), and clears the flag
    course.adjust(target, "horizon_dip", 2, "reviewed after the regrade", step="dip_mean")
    (st,) = [s for s in course.status() if s.lab_id == "horizon_dip"]
    assert st.adjustments == []
    assert len(course.adjustments("horizon_dip", active=False)) == 4


def _read_export(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.reader(fh))


def test_export_one_row_per_roster_student_and_totals_equal_the_record(tmp_path, inputs, dip_spec):
    course = _new_course(tmp_path, inputs)
    course.grade(dip_spec, [inputs.inputs["horizon_dip"]])
    course.grade(load_spec(shipped_spec("taped_baseline")), [inputs.inputs["taped_baseline"]])
    course.adjust(STUDENTS[1][0], "taped_baseline", -3, "=HYPERLINK(\"http://x\") a reason that looks like a formula")
    course.adjust(STUDENTS[2][0], "horizon_dip", 0, "reviewed", step="dip_mean")
    out = tmp_path / "lms.csv"
    course.write_export(out, id_header="SIS User ID", name_header="Student", with_section=True,
                        headers={"horizon_dip": "=Lab 2"}, sep=";")
    rows = [r[0].split(";") if len(r) == 1 else r for r in _read_export(out)]
    with open(out, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh, delimiter=";"))
    assert rows[0] == ["SIS User ID", "Student", "section", "'=Lab 2", "taped_baseline"]  # heading neutralised
    body = rows[1:]
    assert [r[0] for r in body] == [s[0] for s in STUDENTS]  # one row per roster student, roster order
    # The record's totals computed here independently: each current result's score, each step adjustment
    # replacing that step's points, each lab adjustment added, clamped to 0..max.
    from labcheck.course.record import _record

    for lab, col in (("horizon_dip", 3), ("taped_baseline", 4)):
        current = course.current_results(lab)
        adjustments = course.adjustments(lab)
        for r in body:
            res = current.get(r[0])
            if res is None or res["status"] != "graded":
                assert r[col] == ""
                continue
            rec = _record(res)
            total = rec["score"]
            for a in adjustments:
                if a["student_id"] != r[0]:
                    continue
                if a["step"]:
                    total += a["points"] - next(s["points"] for s in rec["steps"] if s["id"] == a["step"])
                else:
                    total += a["points"]
            assert float(r[col]) == pytest.approx(min(max(total, 0), rec["max_score"]), abs=1e-3), (lab, r[0])
    assert body[11][4] == ""  # the twelfth student sent no taped baseline: blank, not zero
    assert not any(c.startswith(("=", "+", "-", "@")) for r in rows for c in r)

    pct = tmp_path / "pct.csv"
    course.write_export(pct, as_percent=True, name_header="")
    prow = _read_export(pct)
    assert prow[0] == ["student_id", "horizon_dip", "taped_baseline"]
    assert all(r[1] == "" or 0 <= float(r[1]) <= 100 for r in prow[1:])


def test_a_reader_never_sees_half_a_run(tmp_path, inputs, dip_spec):
    """A second process polls the record while `labcheck course grade` runs: every time it looks, the latest
    run it sees has all its result rows (SQLite transactions, WAL journal)."""
    course = _new_course(tmp_path, inputs)
    course.grade(dip_spec, [inputs.inputs["horizon_dip"]])
    course.close()
    db = tmp_path / "course" / DB_NAME
    reader = subprocess.Popen([sys.executable, "-c", f"""
import sqlite3, time, sys
seen, checks = set(), 0
deadline = time.time() + 120
while time.time() < deadline:
    conn = sqlite3.connect({str(db)!r}, timeout=30)
    row = conn.execute("SELECT run_id, n_results FROM runs ORDER BY run_id DESC LIMIT 1").fetchone()
    n = conn.execute("SELECT count(*) FROM results WHERE run_id = ?", (row[0],)).fetchone()[0]
    conn.close()
    checks += 1
    if n != row[1]:
        print("HALF", row, n); sys.exit(1)
    seen.add(row[0])
    if len(seen) >= 2:
        break
print("OK", sorted(seen), checks)
"""], stdout=subprocess.PIPE, text=True)
    time.sleep(0.2)
    done = subprocess.run([sys.executable, "-m", "labcheck.cli.main", "course", "grade", str(tmp_path / "course"),
                           "horizon_dip", str(inputs.inputs["horizon_dip"]), "--quiet", "--jobs", "1"],
                          capture_output=True, text=True)
    assert done.returncode in (0, 1), done.stderr
    out, _ = reader.communicate(timeout=180)
    assert reader.returncode == 0, out
    assert out.startswith("OK [1, 2]"), out


def test_a_killed_grade_leaves_the_record_as_it_was(tmp_path, inputs, dip_spec):
    course = _new_course(tmp_path, inputs)
    course.grade(dip_spec, [inputs.inputs["horizon_dip"]])
    before = course.conn.execute("SELECT count(*) FROM results").fetchone()[0], len(course.history())
    course.close()
    # Kill the grading process just before its database transaction (files written, nothing recorded).
    script = f"""
import os, signal
from labcheck.course import record as c
real = c.Course.transaction
def dying(self):
    if self.conn.execute("SELECT count(*) FROM runs").fetchone()[0] >= 1:
        os.kill(os.getpid(), signal.SIGKILL)
    return real(self)
c.Course.transaction = dying
from labcheck.cli.main import main
main(["course", "grade", {str(tmp_path / 'course')!r}, "horizon_dip", {str(inputs.inputs['horizon_dip'])!r},
      "--quiet", "--jobs", "1"])
"""
    p = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True)
    assert p.returncode == -signal.SIGKILL, p.stderr
    course = Course.open(tmp_path / "course")
    assert (course.conn.execute("SELECT count(*) FROM results").fetchone()[0], len(course.history())) == before
    assert [r["run_id"] for r in course.runs("horizon_dip")] == [1]
    # the next run passes over the unrecorded folder and takes the next number
    _, run_id = course.grade(dip_spec, [inputs.inputs["horizon_dip"]])
    assert run_id == 3 and course.run_folder(3).name == "run-003"
    assert (tmp_path / "course" / "labs" / "horizon_dip" / "run-002").is_dir()


def test_pdf_sheets_page_count_and_text(tmp_path, inputs, dip_spec):
    course = _new_course(tmp_path, inputs)
    course.grade(dip_spec, [inputs.inputs["horizon_dip"]])
    sid, name = STUDENTS[8][0], STUDENTS[8][1]
    course.adjust(sid, "horizon_dip", 1, "a copying slip", step="dip_mean")
    names, bundle = course.write_feedback("horizon_dip", tmp_path / "pdfs", jobs=2)
    assert sorted(names) == sorted(f"{s[0]}.pdf" for s in STUDENTS)
    import zipfile

    assert sorted(zipfile.ZipFile(bundle).namelist()) == sorted(names)
    pages = {n: len(pypdf.PdfReader(tmp_path / "pdfs" / n).pages) for n in names}
    assert max(pages.values()) <= 2, pages  # the 24-point dip lab on at most 2 A4 pages
    assert pages == course.pages
    reader = pypdf.PdfReader(tmp_path / "pdfs" / f"{sid}.pdf")
    text = " ".join(p.extract_text() for p in reader.pages)
    flat = " ".join(text.split())
    assert name in flat
    record = course.current_results("horizon_dip")[sid]
    adj = course.adjusted("horizon_dip", record)
    assert f"{adj['score']:g} / 24" in flat  # the adjusted score
    assert "a copying slip" in flat
    assert "d = (d" in flat  # the mean's formula, d = (d1 + d2 + ... + dn) / n
    assert f"{sid} · " in flat and "page 1 of" in flat  # the running footer
    box = reader.pages[0].mediabox
    assert (round(float(box.width)), round(float(box.height))) == (595, 842)  # A4 in points
    (letter,) = course.write_feedback("horizon_dip", tmp_path / "letter", page_size="letter", students=[sid])[0]
    box = pypdf.PdfReader(tmp_path / "letter" / letter).pages[0].mediabox
    assert (round(float(box.width)), round(float(box.height))) == (612, 792)  # US letter


def test_a_version_1_record_is_migrated_in_place(tmp_path):
    """A record written by schema 1 (before the identity decisions) opens with its data and the new tables."""
    from labcheck.course.record import MIGRATIONS

    folder = tmp_path / "old"
    folder.mkdir()
    conn = sqlite3.connect(folder / DB_NAME)
    conn.executescript(MIGRATIONS[0])
    conn.execute("INSERT INTO students VALUES ('s1', 'Ada', '', 1, 'then', 'then')")
    conn.execute("PRAGMA user_version = 1")
    conn.commit()
    conn.close()
    course = Course.open(folder)
    assert course.conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION >= 2
    assert [e.student_id for e in course.roster().entries] == ["s1"]
    assert course.conn.execute("SELECT count(*) FROM assignments").fetchone()[0] == 0


def test_identity_decisions_assign_and_accept(tmp_path, inputs):
    course = _new_course(tmp_path, inputs)
    taped = load_spec(shipped_spec("taped_baseline"))
    course.grade(taped, [inputs.inputs["taped_baseline"]])
    (st,) = course.status()
    assert [w["student_id"] for w in st.identity] == [STUDENTS[6][0]]  # found by name: listed
    course.accept("taped_baseline", STUDENTS[6][0])
    (st,) = course.status()
    assert st.identity == []
    with pytest.raises(CourseError, match="no identity to review"):
        course.accept("taped_baseline", STUDENTS[0][0])
    # The instructor credits student 1's file to student 12 (who sent none): from the next run on.
    name = course.assign("taped_baseline", "taped_K01.csv", STUDENTS[11][0], "uploaded to the wrong account")
    assert name.endswith(f"{STUDENTS[0][0]}/taped_K01.csv")
    with pytest.raises(CourseError, match="names 2 files|no file"):
        course.assign("taped_baseline", "nothing_like_this.csv", STUDENTS[11][0], "x")
    course.grade(taped, [inputs.inputs["taped_baseline"]])
    current = course.current_results("taped_baseline")
    assert current[STUDENTS[11][0]]["submission"] == name and current[STUDENTS[11][0]]["identity"] == "instructor"
    assert current[STUDENTS[0][0]]["status"] == "missing"
    (st,) = course.status()
    assert st.identity == []  # the instructor's own decision is not put back on the review list


def test_course_commands_from_the_command_line(tmp_path, inputs, capsys):
    from labcheck.cli.main import main

    c = str(tmp_path / "c")
    assert main(["course", "new", c, "--roster", str(inputs.roster)]) == 0
    assert main(["course", "grade", c, "horizon_dip", str(inputs.inputs["horizon_dip"]), "--quiet", "--jobs", "2"]) == 0
    adj = tmp_path / "adj.csv"
    adj.write_text("student_id;lab;step;points;reason\nK2150-002;horizon_dip;;1;good field book\n"
                   f"{STUDENTS[3][0]};horizon_dip;dip_mean;1;reviewed\n", encoding="utf-8")
    assert main(["course", "adjust", c, "--file", str(adj)]) == 0
    bad = tmp_path / "bad.csv"
    bad.write_text("student_id,lab,step,points,reason\nnobody,horizon_dip,,1,x\n", encoding="utf-8")
    assert main(["course", "adjust", c, "--file", str(bad)]) == 2
    assert "row 2: no student 'nobody'" in capsys.readouterr().err
    assert main(["course", "status", c]) == 0
    out = capsys.readouterr().out
    assert "horizon_dip" in out and "identity to review: 2" in out and "files not counted" in out
    assert main(["course", "export", c, "--out", str(tmp_path / "x.csv"), "--scale", "percent",
                 "--header", "horizon_dip=Dip lab"]) == 0
    assert _read_export(tmp_path / "x.csv")[0] == ["student_id", "name", "Dip lab"]
    assert main(["course", "export", c, "--out", str(tmp_path / "x.csv")]) == 2  # exists: --force needed
    assert main(["course", "history", c, "horizon_dip"]) == 0
    assert "nothing to compare yet" in capsys.readouterr().out
    assert main(["course", "status", str(tmp_path / "nowhere")]) == 2
    assert "holds no course record" in capsys.readouterr().err
    assert main(["course", "adjust", c, STUDENTS[0][0], "no_lab", "--points", "1", "--reason", "x"]) == 2
    assert "no lab 'no_lab'" in capsys.readouterr().err


def test_page_size_from_the_spec(tmp_path, inputs, dip_spec):
    text = Path(dip_spec.path).read_text(encoding="utf-8").replace('course = ', 'page_size = "letter"\ncourse = ', 1)
    spec_file = tmp_path / "letter.toml"
    spec_file.write_text(text, encoding="utf-8")
    course = _new_course(tmp_path, inputs)
    course.grade(load_spec(spec_file), [inputs.inputs["horizon_dip"]])
    (name,) = course.write_feedback("horizon_dip", tmp_path / "pdfs", students=[STUDENTS[0][0]])[0]
    box = pypdf.PdfReader(tmp_path / "pdfs" / name).pages[0].mediabox
    assert (round(float(box.width)), round(float(box.height))) == (612, 792)
    bad = tmp_path / "bad.toml"
    bad.write_text(text.replace('page_size = "letter"', 'page_size = "A5"'), encoding="utf-8")
    from labcheck.model.spec import SpecError

    with pytest.raises(SpecError, match='page_size.*expected "A4" or "letter"'):
        load_spec(bad)


def test_sections_graded_apart_and_a_failed_grade_costs_nothing(tmp_path, inputs, dip_spec):
    """Each section's run covers its own students: the other section is not 'missing' from it, and the export
    takes each student's result from the run that covers them.  A grade with no usable input changes nothing."""
    import zipfile

    course = _new_course(tmp_path, inputs)
    k1 = {s[0] for s in STUDENTS if s[2] == "K1"}
    parts = {}
    with zipfile.ZipFile(inputs.inputs["horizon_dip"]) as z:
        for section in ("K1", "K2"):
            ids = {s[0] for s in STUDENTS if s[2] == section}
            parts[section] = tmp_path / f"{section}.zip"
            with zipfile.ZipFile(parts[section], "w") as out:
                for info in z.infolist():
                    if any(i in info.filename for i in ids):
                        out.writestr(info, z.read(info))
    run1, _ = course.grade(dip_spec, [parts["K1"]], section="K1")
    assert run1.n_missing == 0  # K2's students are not on K1's roster
    assert set(course.current_results("horizon_dip")) == k1
    course.grade(dip_spec, [parts["K2"]], section="K2")
    current = course.current_results("horizon_dip")
    assert set(current) == {s[0] for s in STUDENTS}
    assert {current[s]["run_id"] for s in k1} == {1} and {current[s[0]]["run_id"] for s in STUDENTS
                                                            if s[0] not in k1} == {2}
    with pytest.raises(CourseError, match="no section 'K9'"):
        course.grade(dip_spec, [parts["K1"]], section="K9")
    empty = tmp_path / "empty"
    empty.mkdir()
    from labcheck.reading.ingest import InputError

    before = course.conn.execute("SELECT count(*) FROM runs").fetchone()[0]
    with pytest.raises(InputError, match="found no submission files"):
        course.grade(dip_spec, [empty])
    assert course.conn.execute("SELECT count(*) FROM runs").fetchone()[0] == before
    assert sorted(p.name for p in (tmp_path / "course" / "labs" / "horizon_dip").iterdir()) == ["run-001", "run-002"]


def test_export_points_possible_row(tmp_path, inputs, dip_spec):
    course = _new_course(tmp_path, inputs)
    course.grade(load_spec(shipped_spec("taped_baseline")), [inputs.inputs["taped_baseline"]])
    out = tmp_path / "pp.csv"
    course.write_export(out, points_possible=True)
    rows = _read_export(out)
    graded = [r for r in course.current_results("taped_baseline").values() if r["status"] == "graded"]
    assert rows[1] == ["Points Possible", "", f"{graded[0]['max_score']:g}"]
    assert len(rows) == 2 + len(STUDENTS) and all(float(r[2]) <= float(rows[1][2]) for r in rows[2:] if r[2])
    course.write_export(out, points_possible=True, as_percent=True)
    assert _read_export(out)[1] == ["Points Possible", "", "100"]
    # the dip lab grades the methods each group attempted: maxima differ, so points need percent
    course.grade(dip_spec, [inputs.inputs["horizon_dip"]])
    maxima = {r["max_score"] for r in course.current_results("horizon_dip").values() if r["status"] == "graded"}
    assert len(maxima) > 1  # the demo has groups that did one method or both
    before = out.read_bytes()
    with pytest.raises(CourseError, match="different maximum scores"):
        course.write_export(out, points_possible=True)
    # refused part-way through writing: the previous export is whole and no partial file is left beside it
    assert out.read_bytes() == before and sorted(p.name for p in tmp_path.glob("pp.csv*")) == ["pp.csv"]


def test_an_adjustments_file_reads_the_roster_and_results_once(tmp_path, inputs, monkeypatch):
    # Regression: every row of `course adjust --file` rebuilt the roster and the lab's current results,
    # so a file of n rows cost n times the roster.  The lookups are now made once per file; every row is
    # still its own transaction and is recorded.
    from labcheck.cli.main import main

    c = str(tmp_path / "c")
    assert main(["course", "new", c, "--roster", str(inputs.roster)]) == 0
    assert main(["course", "grade", c, "horizon_dip", str(inputs.inputs["horizon_dip"]), "--quiet", "--jobs", "1"]) == 0
    calls = {"all_students": 0, "current_results": 0}
    for name in calls:
        real = getattr(Course, name)

        def counted(self, *a, _real=real, _name=name, **k):
            calls[_name] += 1
            return _real(self, *a, **k)

        monkeypatch.setattr(Course, name, counted)
    rows = [f"{sid};horizon_dip;;{k % 3};row {k}" for k, (sid, *_rest) in enumerate(STUDENTS * 3)]
    adj = tmp_path / "adj.csv"
    adj.write_text("student_id;lab;step;points;reason\n" + "\n".join(rows) + "\n", encoding="utf-8")
    assert main(["course", "adjust", c, "--file", str(adj)]) == 0
    assert calls == {"all_students": 1, "current_results": 1}
    with Course.open(c) as course:
        active = course.conn.execute("SELECT student_id, points, reason FROM adjustments WHERE withdrawn_at IS NULL "
                                     "ORDER BY student_id").fetchall()
        made = course.conn.execute("SELECT count(*) FROM adjustments").fetchone()[0]
    assert made == len(rows)  # each row recorded; a later row for the same student replaces the earlier one
    assert len(active) == len(STUDENTS)
    last = {sid: (k % 3, f"row {k}") for k, (sid, *_rest) in enumerate(STUDENTS * 3)}
    assert {r["student_id"]: (r["points"], r["reason"]) for r in active} == last


def test_a_killed_feedback_run_leaves_every_pdf_whole(tmp_path, inputs, dip_spec):
    # Killed in the middle of writing a PDF: every <student>.pdf in the folder is a whole PDF (the previous
    # run's or this one's), and the zip is the previous run's, whole.  A cut-off file is left only as .part.
    course = _new_course(tmp_path, inputs)
    course.grade(dip_spec, [inputs.inputs["horizon_dip"]])
    names, bundle = course.write_feedback("horizon_dip", tmp_path / "pdfs", jobs=1)
    zip_before = bundle.read_bytes()
    course.close()
    script = f"""
import os, signal
import weasyprint
real = weasyprint.Document.write_pdf
calls = []
def dying(self, target=None, **kw):
    calls.append(target)
    if len(calls) == 3:  # half of the third PDF written, then killed
        data = real(self, None, **kw)
        with open(target, "wb") as fh:
            fh.write(data[: len(data) // 2])
            fh.flush()
        os.kill(os.getpid(), signal.SIGKILL)
    return real(self, target, **kw)
weasyprint.Document.write_pdf = dying
from labcheck.cli.main import main
raise SystemExit(main(["course", "feedback", {str(tmp_path / 'course')!r}, "horizon_dip", "--out",
                       {str(tmp_path / 'pdfs')!r}, "--force", "--jobs", "1"]))
"""
    p = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True)
    assert p.returncode == -signal.SIGKILL, p.stderr
    pdfs = sorted((tmp_path / "pdfs").glob("*.pdf"))
    assert sorted(p.name for p in pdfs) == sorted(names)
    for pdf in pdfs:
        assert len(pypdf.PdfReader(pdf).pages) >= 1, pdf.name  # whole: pypdf reads it to the end
    assert bundle.read_bytes() == zip_before
    assert len(list((tmp_path / "pdfs").glob("*.part"))) == 1
    # Run again: it finishes, and the cut-off .part is gone.
    with Course.open(tmp_path / "course") as course:
        again, bundle = course.write_feedback("horizon_dip", tmp_path / "pdfs", jobs=1)
    assert sorted(again) == sorted(names)
    assert not list((tmp_path / "pdfs").glob("*.part"))
    assert all(len(pypdf.PdfReader(tmp_path / "pdfs" / n).pages) >= 1 for n in again)
