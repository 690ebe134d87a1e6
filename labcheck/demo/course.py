"""The demo course: one invented class (GEOD 2150, sections K1 and K2) taken from an LMS export to an LMS import.

Twelve students do two labs (the dip of the horizon and a taped baseline), drawn from the demo sections'
generated field data and given the course's own ids and names.  Planted on purpose:

* a roster as an LMS exports it: ``;`` separators, "Student ID / Last Name / First Name / Section"
  headings and a "Points Possible" row;
* identities to reconcile: an id typed in capitals with a trailing space; a file in one student's folder
  whose sheet names the partner (credited to the folder's student and listed); two attempts from one
  student (the later is counted); a file with no id, e-mailed to the TA, found by its name;
* one student with no taped-baseline file;
* two adjustments (one on a step, one on a lab's total), then a regrade of the dip lab with a widened
  tolerance, after which the step adjustment is flagged for review.

Run layer: builds files and drives :class:`labcheck.course.record.Course`; prints nothing (``labcheck demo`` does).
"""

from __future__ import annotations

import csv
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from labcheck.demo import baselines, dip
from labcheck.demo.common import csv_bytes, person, semicolon_csv_bytes, xlsx_bytes

__all__ = ["CourseDemo", "run_course_demo", "STUDENTS"]

STUDENTS = [(f"k2150-{i:03d}", person(i - 1, 9), "K1" if i <= 6 else "K2") for i in range(1, 13)]
_BYTES = {"xlsx": xlsx_bytes, "csv;": semicolon_csv_bytes}


@dataclass
class CourseDemo:
    folder: Path
    roster: Path
    inputs: dict[str, Path] = field(default_factory=dict)  # lab -> zip
    runs: dict[str, list[int]] = field(default_factory=dict)
    reconciled: dict[str, int] = field(default_factory=dict)  # lab -> identities listed for review
    superseded: int = 0
    adjustments: list[str] = field(default_factory=list)
    retuned: str = ""
    flagged: int = 0
    export: Path | None = None
    pdf_folder: Path | None = None
    pdf_pages: list[int] = field(default_factory=list)
    moved: int = 0
    resolved: list[str] = field(default_factory=list)  # identity decisions the instructor made
    open_identities: int = -1  # identities still to review at the end
    problems: list[str] = field(default_factory=list)  # what did not go as planned

    def summary_lines(self) -> list[str]:
        """What the demo course did and where everything is."""
        c = self.folder
        lines = [f"  course record:   {c / 'course.sqlite'} (roster from {self.roster.name}: LMS headings, ';' separators)"]
        for lab, runs in self.runs.items():
            lines.append(f"  {lab}: run(s) {', '.join(map(str, runs))}; {self.reconciled[lab]} identit(ies) reconciled "
                         "and listed for review")
        lines.append(f"  several files from one student: {self.superseded} not counted (the latest attempt is)")
        lines += [f"  identity reviewed: {r}" for r in self.resolved]
        lines.append(f"  identities still to review after the regrades: {self.open_identities}")
        lines += [f"  adjustment: {a}" for a in self.adjustments]
        lines += [f"  regraded horizon_dip with {self.retuned}: {self.moved} student(s) moved; "
                  f"{self.flagged} adjustment(s) flagged for review",
                  f"  review list:     labcheck course status {c}",
                  f"  regrade history: labcheck course history {c} horizon_dip",
                  f"  LMS grade file:  {self.export}"]
        if self.pdf_folder:
            lines.append(f"  PDF sheets:      {self.pdf_folder} ({len(self.pdf_pages)} PDFs of at most "
                         f"{max(self.pdf_pages, default=0)} page(s), and one zip)")
        return lines

    def surprises(self) -> list[str]:
        """What did not go as planned (empty when the demo course did what it is meant to)."""
        problems = list(self.problems)
        expected = {"reconciled": {"horizon_dip": 2, "taped_baseline": 1}, "superseded": 1, "flagged": 1,
                    "open_identities": 0}
        got = {"reconciled": self.reconciled, "superseded": self.superseded, "flagged": self.flagged,
               "open_identities": self.open_identities}
        if got != expected:
            problems.append(f"course demo: expected {expected}, got {got}")
        if self.pdf_pages and max(self.pdf_pages) > 2:
            problems.append(f"course demo: a PDF sheet of {max(self.pdf_pages)} pages (2 at most planned)")
        return problems


def _identity(rows, sid: str | None, name: str) -> list[tuple]:
    out = []
    for r in rows:
        if r[0] == "identity" and r[1] == "student_id":
            if sid is not None:
                out.append((r[0], r[1], sid, r[3], r[4]))
        elif r[0] == "identity" and r[1] == "name":
            out.append((r[0], r[1], name, r[3], r[4]))
        else:
            out.append(r)
    return out


def _folder(sid: str, name: str) -> str:
    return f"{name.replace(' ', '_')}_{sid}"


def build_course_inputs(folder: Path) -> CourseDemo:
    """Write the roster and the two labs' LMS-style exports."""
    folder.mkdir(parents=True, exist_ok=True)
    demo = CourseDemo(folder, folder / "lms_roster.csv")
    with open(demo.roster, "w", encoding="utf-8", newline="") as fh:
        w = csv.writer(fh, delimiter=";")
        w.writerow(["Student ID", "Last Name", "First Name", "Section"])
        w.writerow(["Points Possible", "", "", ""])
        for sid, name, section in STUDENTS:
            first, last = name.split(" ", 1)
            w.writerow([sid, last, first, section])

    dip_groups = {g.number: g for g in dip.dip_section()}
    top = "GEOD2150_horizon_dip"
    path = folder / "horizon_dip_export.zip"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for i, (sid, name, _) in enumerate(STUDENTS, start=1):
            g = dip_groups[i]
            written = {3: "K2150-003 ", 5: STUDENTS[5][0]}.get(i, sid)  # 3: capitals; 5: the partner's id
            rows = _identity(g.rows, written, name if i != 5 else STUDENTS[5][1])
            data = _BYTES.get(g.fmt, csv_bytes)(rows)
            if i == 8:  # two attempts: a first one with the mean left unreduced, then the corrected file
                first = [r if r[1] != "dip_mean" else (r[0], r[1], "6.5", r[3], r[4]) for r in rows]
                z.writestr(f"{top}/{_folder(sid, name)}_attempt_2026-09-08-16-05/dip_K{i:02d}.csv", csv_bytes(first))
                z.writestr(f"{top}/{_folder(sid, name)}_attempt_2026-09-09-08-30/dip_K{i:02d}.csv", csv_bytes(rows))
                continue
            suffix = "xlsx" if g.fmt == "xlsx" else "csv"
            z.writestr(f"{top}/{_folder(sid, name)}/dip_K{i:02d}.{suffix}", data)
    demo.inputs["horizon_dip"] = path

    taped = baselines.taped_section()
    top = "GEOD2150_taped_baseline"
    path = folder / "taped_baseline_export.zip"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for i, g in enumerate(taped, start=1):  # eleven groups: the twelfth student sent no file
            sid, name, _ = STUDENTS[i - 1]
            if i == 7:  # e-mailed to the TA: no id on the sheet, the name written surname first
                first, last = name.split(" ", 1)
                z.writestr(f"{top}/emailed_to_TA/taped_K{i:02d}.csv", csv_bytes(_identity(g.rows, None, f"{last}, {first}")))
                continue
            suffix = "xlsx" if g.fmt == "xlsx" else "csv"
            z.writestr(f"{top}/{_folder(sid, name)}/taped_K{i:02d}.{suffix}",
                       _BYTES.get(g.fmt, csv_bytes)(_identity(g.rows, sid, name)))
    demo.inputs["taped_baseline"] = path
    return demo


def _widened(spec_text: str, step: str, tolerance: str) -> str:
    """The spec's text with one step's tolerance replaced."""
    out, inside = [], False
    for line in spec_text.splitlines(keepends=True):
        s = line.strip()
        if s.startswith("["):
            inside = s.replace('"', "") == f"[steps.{step}]"
        if inside and re.match(r"tolerance\s*=", s):
            line = f'tolerance = "{tolerance}"  # widened for the demo course regrade\n'
        out.append(line)
    return "".join(out)


def run_course_demo(folder: Path, jobs: int = 1, pdfs: bool = True) -> CourseDemo:
    """Build the course and take it through every step; returns what happened and where."""
    from labcheck.course.record import Course, _record
    from labcheck.grading.adjust import step_state
    from labcheck.reading.ingest import read_roster
    from labcheck.base.resources import shipped_spec
    from labcheck.model.spec import load_spec

    demo = build_course_inputs(folder / "inputs")
    course_dir = folder / "geod2150"
    demo.folder = course_dir
    with Course.create(course_dir, "GEOD 2150 Field Methods in Geodesy (demo)") as course:
        course.set_roster(read_roster(demo.roster))
        for lab in ("horizon_dip", "taped_baseline"):
            spec = load_spec(shipped_spec(lab))
            run, run_id = course.grade(spec, [demo.inputs[lab]], jobs=jobs)
            demo.runs[lab] = [run_id]
            demo.reconciled[lab] = run.n_reconciled
            demo.superseded += run.n_superseded

        # The identities, reviewed: two accepted as labcheck reconciled them; the e-mailed file credited by hand.
        for sid in (STUDENTS[2][0], STUDENTS[4][0]):
            course.accept("horizon_dip", sid)
        emailed = course.assign("taped_baseline", "emailed_to_TA/taped_K07.csv", STUDENTS[6][0],
                                "e-mailed to the TA; the student confirmed it in class")
        demo.resolved = [f"horizon_dip: {STUDENTS[2][0]} and {STUDENTS[4][0]} accepted",
                         f"taped_baseline: {emailed.rsplit('/', 1)[-1]} assigned to {STUDENTS[6][0]}"]

        # Two adjustments: a step of the dip lab (the student whose mean has two digits swapped), the taped lab's total.
        current = course.current_results("horizon_dip")
        target = next((sid for sid, row in sorted(current.items()) if row["status"] == "graded"
                       and (step_state(_record(row), "dip_mean") or (None,))[0] == "wrong"), None)
        if target is None:
            demo.problems.append("no dip student with a wrong dip_mean to adjust")
        else:
            course.adjust(target, "horizon_dip", 1, "a copying slip between the field book and the sheet; "
                          "the working is right", step="dip_mean")
            demo.adjustments.append(f"{target}: horizon_dip step dip_mean set to 1 point")
        course.adjust(STUDENTS[1][0], "taped_baseline", 1, "field book complete and checked in class")
        demo.adjustments.append(f"{STUDENTS[1][0]}: taped_baseline total +1")

        # Regrade the dip lab with a widened dip_mean tolerance: the adjusted step changes, so it is flagged.
        shipped = shipped_spec("horizon_dip")
        tuned = folder / "horizon_dip_widened.toml"
        tuned.write_text(_widened(shipped.read_text(encoding="utf-8"), "dip_mean", "0.5 arcmin"), encoding="utf-8")
        demo.retuned = "dip_mean tolerance 0.02 arcmin -> 0.5 arcmin"
        run, run_id = course.grade(load_spec(tuned), [demo.inputs["horizon_dip"]], jobs=jobs)
        demo.runs["horizon_dip"].append(run_id)
        demo.flagged = sum(1 for a in course.run_adjustments(run_id) if a["changed"])

        from labcheck.grading.compare import diff_runs, load_results

        d = diff_runs(load_results(course.run_folder(demo.runs["horizon_dip"][0])),
                      load_results(course.run_folder(run_id)))
        demo.moved = len(d.changed)

        _, run_id = course.grade(load_spec(shipped_spec("taped_baseline")), [demo.inputs["taped_baseline"]], jobs=jobs)
        demo.runs["taped_baseline"].append(run_id)
        demo.open_identities = sum(len(st.identity) for st in course.status())
        demo.export = folder / "grades_for_lms.csv"
        course.write_export(demo.export, as_percent=True, id_header="Student ID", name_header="Name",
                            headers={"horizon_dip": "Lab 2: Dip of the horizon (%)",
                                     "taped_baseline": "Lab 3: Taped baseline (%)"})
        if pdfs:
            demo.pdf_folder = folder / "feedback_pdfs_horizon_dip"
            names, _ = course.write_feedback("horizon_dip", demo.pdf_folder, jobs=jobs)
            demo.pdf_pages = [course.pages[n] for n in names]
    return demo

