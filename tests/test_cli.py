"""The command line, end to end, in temporary folders."""

import csv
import json
import zipfile

import openpyxl
import pytest

from labcheck.cli.main import main
from labcheck.demo import SECTIONS
from labcheck.report.outputs import neutralise_cell

from conftest import csv_bytes, good_dip_rows


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    code = main(["demo", "--out", str(out), "--quiet"])
    return out, code


def results_complete(out) -> bool:
    run = load(out).get("run", {})
    return run.get("complete") is True


def load(out):
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


@pytest.mark.parametrize("section", SECTIONS, ids=lambda s: s.lab)
def test_demo_end_to_end(demo, section):
    out, code = demo
    assert code == 0  # it ran as planned: its unreadable files and missing students are planted on purpose
    assert results_complete(out / section.folder / "graded")
    folder = out / section.folder
    graded = folder / "graded"
    results = load(graded)
    assert results["lab"] == section.lab
    subs = results["submissions"]
    roster = list(csv.DictReader(open(folder / "roster.csv", encoding="utf-8")))
    gradebook = list(csv.DictReader(open(graded / "gradebook.csv", encoding="utf-8")))
    # A gradebook row per roster entry, and a sheet per graded group.
    stray = [section.wrong_lab[0]] if section.wrong_lab else []
    assert sorted(r["student_id"] for r in gradebook) == sorted([r["student_id"] for r in roster] + stray)
    sheets = sorted(p.stem for p in (graded / "feedback").glob("*.html"))
    assert sheets == sorted(s["student_id"] for s in subs if s["status"] == "graded")
    by_id = {s["student_id"]: s for s in subs}
    prefix = next(iter(by_id))[:-3]
    # Every planted mistake is found where it was planted.
    for group, (mistake, key) in section.planted.items():
        rec = by_id[f"{prefix}{group:03d}"]
        step = next(s for s in rec["steps"] if s["id"] == key)
        if mistake == "missing_result":
            assert step["verdict"] == "missing"
            continue
        assert step["verdict"] == "wrong" and step["diagnosis"]["id"] == mistake, (group, step)
        if mistake == "digits_transposed":  # and the slip is carried forward, not punished twice
            assert next(s for s in rec["steps"] if s["id"] == "dip.radius_apparent")["verdict"] == "carried"
    for group in section.unreadable:
        rec = by_id[f"{prefix}{group:03d}"]
        assert rec["status"] == "unreadable" and rec["error"]
    if section.wrong_lab:
        rec = by_id[section.wrong_lab[0]]
        assert rec["status"] == "wrong_lab" and f"looks like the {section.wrong_lab[1]} template" in rec["error"]
    for group, item in section.bad_rows.items():
        assert any(f["item"] == item for f in by_id[f"{prefix}{group:03d}"]["flags"])
    for group, note_id in section.notes.items():
        assert any(q.get("id") == note_id for q in by_id[f"{prefix}{group:03d}"]["quality"])
    # Groups without a planted mistake: every step correct.
    planted = set(section.planted) | section.unreadable | {int(s[-3:]) for _, ids in section.leads for s in ids}
    planted |= {int(section.wrong_lab[0][-3:])} if section.wrong_lab else set()
    for rec in subs:
        if rec["status"] == "graded" and int(rec["student_id"][-3:]) not in planted:
            assert all(s["verdict"] == "correct" for s in rec["steps"]), rec["student_id"]
    if section.missing_student:
        assert by_id[section.missing_student[0]]["status"] == "missing"
    # The integrity screen raises the planted leads and nothing else.
    leads = json.loads((graded / "integrity.json").read_text(encoding="utf-8"))["leads"]
    assert {(l["kind"], tuple(l["students"])) for l in leads} == set(section.leads)
    # Every input file is accounted for: graded, unreadable or skipped.
    with zipfile.ZipFile(folder / section.zip_name) as z:
        members = {f"{section.zip_name}/{n}" for n in z.namelist()}
    accounted = {s["submission"] for s in subs if s["submission"]} | {s["file"] for s in results["skipped"]}
    assert members == accounted


def test_demo_shows_tune_and_diff(demo):
    out, _ = demo
    folder = out / "horizon_dip"
    assert "<- current" in (folder / "tune_report.txt").read_text(encoding="utf-8")
    assert (folder / "diff_report.txt").read_text(encoding="utf-8").split()[1] == "student(s)"
    assert (folder / "graded-tuned" / "results.json").exists()


def test_demo_sheets_carry_safety_and_escape_student_text(demo):
    out, _ = demo
    html = (out / "horizon_dip" / "graded" / "feedback" / "b2150-005.html").read_text(encoding="utf-8")
    assert "solar filter" in html and "licensed surveyor" in html
    assert "<b>check with TA</b>" not in html
    assert "&lt;b&gt;check with TA&lt;/b&gt; &amp; redo?" in html
    section = (out / "horizon_dip" / "graded" / "section.html").read_text(encoding="utf-8")
    assert "<svg" in section and "not a valid XLSX workbook" in section


def test_demo_is_the_same_every_time(tmp_path):
    for section in SECTIONS:
        assert [g.rows for g in section.generate()] == [g.rows for g in section.generate()]


def test_gradebook_neutralises_formulas(tmp_path, capsys):
    rows = good_dip_rows(sid="=HYPERLINK(\"http://x\")", name="@SUM(A1)")
    (tmp_path / "in").mkdir()
    (tmp_path / "in" / "evil.csv").write_bytes(csv_bytes(rows))
    assert main(["grade", "horizon_dip", str(tmp_path / "in"), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    text = (tmp_path / "out" / "gradebook.csv").read_text(encoding="utf-8")
    row = list(csv.reader(text.splitlines()))[1]
    assert row[0].startswith("'=") and row[1] == "'@SUM(A1)"
    sheet = next((tmp_path / "out" / "feedback").glob("*.html"))
    assert "/" not in sheet.name and sheet.parent.name == "feedback"


@pytest.mark.parametrize("text, expected", [("=1+1", "'=1+1"), ("+44", "'+44"), ("-3", "'-3"), ("@x", "'@x"), ("ok", "ok"), ("\tx", "'\tx")])
def test_neutralise_cell(text, expected):
    assert neutralise_cell(text) == expected


def test_exit_codes_and_overwrite_refusal(tmp_path, capsys):
    good = tmp_path / "good"
    good.mkdir()
    (good / "a.csv").write_bytes(csv_bytes(good_dip_rows(sid="s1")))
    out = tmp_path / "out"
    assert main(["grade", "horizon_dip", str(good), "--out", str(out), "--quiet"]) == 0
    # A second run into the same folder is refused without --force ...
    assert main(["grade", "horizon_dip", str(good), "--out", str(out), "--quiet"]) == 2
    assert "not empty" in capsys.readouterr().err
    # ... and allowed with it.
    assert main(["grade", "horizon_dip", str(good), "--out", str(out), "--quiet", "--force"]) == 0
    # An unreadable file: graded with exit 1, the batch goes on.
    (good / "b.csv").write_bytes(b"\x00\x01binary")
    assert main(["grade", "horizon_dip", str(good), "--out", str(tmp_path / "o2"), "--quiet"]) == 1
    subs = load(tmp_path / "o2")["submissions"]
    assert [s["status"] for s in subs] == ["graded", "unreadable"]
    # A malformed spec: exit 2, nothing graded.
    bad = tmp_path / "bad.toml"
    bad.write_text('id = "x"\n', encoding="utf-8")
    assert main(["grade", str(bad), str(good), "--out", str(tmp_path / "o3")]) == 2
    err = capsys.readouterr().err
    assert "bad.toml: title: missing" in err
    assert not (tmp_path / "o3").exists()
    # A missing input path: exit 2.
    assert main(["grade", "horizon_dip", str(tmp_path / "nope"), "--out", str(tmp_path / "o4")]) == 2


def test_roster_lists_missing_and_unmatched(tmp_path):
    (tmp_path / "in").mkdir()
    (tmp_path / "in" / "a.csv").write_bytes(csv_bytes(good_dip_rows(sid="s1")))
    (tmp_path / "in" / "b.csv").write_bytes(csv_bytes(good_dip_rows(sid="stranger")))
    roster = tmp_path / "roster.csv"
    roster.write_text("student_id,name\ns1,Ada\ns2,Bo\n", encoding="utf-8")
    code = main(["grade", "horizon_dip", str(tmp_path / "in"), "--roster", str(roster), "--out", str(tmp_path / "out"), "--quiet"])
    assert code == 1
    subs = {s["student_id"]: s for s in load(tmp_path / "out")["submissions"]}
    assert subs["s2"]["status"] == "missing"
    assert any("not on the roster" in f["message"] for f in subs["stranger"]["flags"])


def test_output_folder_inside_input_is_not_reread(tmp_path):
    (tmp_path / "a.csv").write_bytes(csv_bytes(good_dip_rows(sid="s1")))
    assert main(["grade", "horizon_dip", str(tmp_path), "--out", str(tmp_path / "graded"), "--quiet"]) == 0
    assert main(["grade", "horizon_dip", str(tmp_path), "--out", str(tmp_path / "graded"), "--quiet", "--force"]) == 0
    assert len(load(tmp_path / "graded")["submissions"]) == 1


@pytest.mark.parametrize("suffix", ["csv", "xlsx"])
def test_template_round_trip(tmp_path, suffix, capsys):
    path = tmp_path / f"t.{suffix}"
    assert main(["template", "horizon_dip", "--out", str(path)]) == 0
    if suffix == "csv":
        rows = list(csv.reader(path.read_text(encoding="utf-8").splitlines()))
    else:
        rows = [[c if c is not None else "" for c in r] for r in openpyxl.load_workbook(path).active.iter_rows(values_only=True)]
    assert rows[0] == ["part", "item", "value", "unit", "note", "description"]
    items = [(r[0], r[1]) for r in rows[1:]]
    for needed in [("identity", "student_id"), ("observation", "eye_height"), ("observation", "dip_angle"),
                   ("observation", "horizon_zenith_angle"), ("observation", "target_distance"),
                   ("observation", "hidden_height"), ("result", "dip_mean"), ("result", "dip.radius"),
                   ("result", "hidden_height.radius")]:
        assert needed in items
    assert all(r[5] for r in rows[1:])  # every row has its one-line description
    # The blank template itself grades without error (everything missing).
    assert main(["check", "horizon_dip", str(path)]) == 0
    assert main(["template", "horizon_dip", "--out", str(path)]) == 2  # no silent overwrite


def test_check_prints_a_table(tmp_path, capsys):
    p = tmp_path / "g.csv"
    p.write_bytes(csv_bytes(good_dip_rows()))
    assert main(["check", "horizon_dip", str(p)]) == 0
    out = capsys.readouterr().out
    assert "dip.radius_apparent" in out and "correct" in out and "(advisory)" in out
    assert out.count("correct") >= 4 and "wrong" not in out


def test_spec_check_and_list(tmp_path, capsys):
    assert main(["spec", "list"]) == 0
    assert "horizon_dip" in capsys.readouterr().out
    assert main(["spec", "check", "horizon_dip"]) == 0
    bad = tmp_path / "b.toml"
    bad.write_text("title = 3\n", encoding="utf-8")
    assert main(["spec", "check", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "b.toml: title: expected a title string, got 3" in err


@pytest.mark.parametrize("command", ["grade", "check", "template", "spec", "demo"])
def test_help_has_an_example(command, capsys):
    with pytest.raises(SystemExit) as info:
        main([command, "--help"])
    assert info.value.code == 0
    assert "example" in capsys.readouterr().out


def test_a_crash_on_one_file_does_not_stop_the_batch(tmp_path, monkeypatch, capsys):
    import labcheck.run.check as check  # where a batch grades each file (labcheck check's own path)

    real = check.grade_submission

    def flaky(sub, spec):
        if sub.source.endswith("b.csv"):
            raise RuntimeError("simulated bug")
        return real(sub, spec)

    monkeypatch.setattr(check, "grade_submission", flaky)
    (tmp_path / "in").mkdir()
    for name, sid in (("a.csv", "s1"), ("b.csv", "s2"), ("c.csv", "s3")):
        (tmp_path / "in" / name).write_bytes(csv_bytes(good_dip_rows(sid=sid)))
    code = main(["grade", "horizon_dip", str(tmp_path / "in"), "--out", str(tmp_path / "out"), "--quiet"])
    assert code == 3  # labcheck itself failed on a file: its own exit status
    subs = load(tmp_path / "out")["submissions"]
    assert [s["status"] for s in subs] == ["graded", "error", "graded"]
    assert "fault in labcheck" in subs[1]["error"] and "simulated bug" not in subs[1]["error"]
    log = (tmp_path / "out" / "labcheck-errors.log").read_text()
    assert "Traceback" in log and "simulated bug" in log and "in/b.csv" in log  # kept for the instructor
    assert "labcheck-errors.log" in capsys.readouterr().out
    assert (tmp_path / "out" / "feedback" / "s3.html").exists()


def test_spec_check_of_a_lab_without_accuracy(capsys):
    # Regression: spec check crashed on a lab with no [accuracy] table.
    assert main(["spec", "check", "trig_heighting"]) == 0
    assert "accuracy: not judged in this lab" in capsys.readouterr().out


def test_every_shipped_spec_checks(capsys):
    from labcheck.base.resources import specs_dir

    for f in sorted(specs_dir().glob("*.toml")):
        assert main(["spec", "check", str(f)]) == 0, f.name


def test_diff_lists_exactly_the_students_a_tolerance_change_moves(tmp_path, capsys):
    # Two runs of one section; the second with a tighter tolerance on dip.radius_apparent.
    # Which students move is worked out here from the first run's own numbers.
    from labcheck.base.resources import shipped_spec

    (tmp_path / "in").mkdir()
    rows_list = {
        "s1": good_dip_rows(sid="s1"),
        "s2": [r if r[1] != "dip.radius_apparent" else (r[0], r[1], str(round(float(r[2]) * 1.003, 1)), r[3]) for r in good_dip_rows(sid="s2")],
        "s3": [r if r[1] != "dip.radius_apparent" else (r[0], r[1], str(round(float(r[2]) * 0.9985, 1)), r[3]) for r in good_dip_rows(sid="s3")],
    }
    for sid, rows in rows_list.items():
        (tmp_path / "in" / f"{sid}.csv").write_bytes(csv_bytes(rows))
    assert main(["grade", "horizon_dip", str(tmp_path / "in"), "--out", str(tmp_path / "a"), "--quiet"]) == 0
    tight = tmp_path / "tight.toml"
    text = shipped_spec("horizon_dip").read_text(encoding="utf-8")
    tight.write_text(text.replace('[steps."dip.radius_apparent"]\npoints = 3\ntolerance = "0.5 %"',
                                  '[steps."dip.radius_apparent"]\npoints = 3\ntolerance = "0.2 %"'), encoding="utf-8")
    assert main(["grade", str(tight), str(tmp_path / "in"), "--out", str(tmp_path / "b"), "--quiet"]) == 0
    first = load(tmp_path / "a")["submissions"]
    moved = set()
    for rec in first:
        s = next(x for x in rec["steps"] if x["id"] == "dip.radius_apparent")
        if abs(s["reported"] - s["expected"]) > 0.002 * abs(s["expected"]):
            moved.add(rec["student_id"])
    assert moved == {"s2"}  # 0.3 % off moves; 0.15 % off does not
    capsys.readouterr()
    assert main(["diff", str(tmp_path / "a"), str(tmp_path / "b")]) == 0
    out = capsys.readouterr().out
    assert out.startswith("1 student(s) changed, 2 unchanged; the lab spec differs")
    assert "s2" in out and "s1 " not in out and "s3" not in out
    assert "dip.radius_apparent" in out and "3.0 -> 0.0 points  correct -> wrong" in out


def test_demo_groups_that_write_as_people_do_are_read_right(demo):
    # The dip section plants honest groups writing a decimal-comma CSV, a D M S reading under the
    # template's arcmin, and a unit typed in a value cell: all correct, and the D M S read is said.
    from labcheck.demo import dip

    out, _ = demo
    by_id = {s["student_id"]: s for s in load(out / "horizon_dip" / "graded")["submissions"]}
    for group in (dip.SEMICOLON_GROUP, dip.DMS_UNDER_ARCMIN_GROUP, dip.UNIT_IN_VALUE_GROUP):
        rec = by_id[f"b2150-{group:03d}"]
        assert rec["status"] == "graded" and not rec["flags"], rec["flags"]
        assert all(s["verdict"] == "correct" for s in rec["steps"])
    notes = by_id[f"b2150-{dip.DMS_UNDER_ARCMIN_GROUP:03d}"]["reading"]
    assert len(notes) == 1 and "read as D M S" in notes[0]["message"] and notes[0]["item"] == "dip_angle"
    sheet = (out / "horizon_dip" / "graded" / "feedback" / f"b2150-{dip.DMS_UNDER_ARCMIN_GROUP:03d}.html").read_text()
    assert "How your file was read" in sheet
