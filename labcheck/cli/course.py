"""``labcheck course ...``: the course record from the command line (wiring and printing only).

CLI layer: may import anything below.  The work is done by :mod:`labcheck.course.record`; this module reads the
options, prints what happened and where, and returns the exit status.
"""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["add_course_parser"]

EXAMPLES = """examples:
  labcheck course new geod2150 --roster lms_roster.csv
  labcheck course grade geod2150 horizon_dip section_B.zip
  labcheck course adjust geod2150 c2150-004 horizon_dip --step dip_mean --points 1 --reason "misread row 12"
  labcheck course status geod2150
  labcheck course accept geod2150 horizon_dip k2150-003
  labcheck course export geod2150 --out grades_for_lms.csv --id-header "Student ID"
  labcheck course feedback geod2150 horizon_dip --out pdfs/
  labcheck course history geod2150 horizon_dip"""


def _open(folder):
    from labcheck.course.record import Course

    return Course.open(folder)


def cmd_new(args) -> int:
    from labcheck.course.record import Course
    from labcheck.reading.ingest import read_roster

    roster = read_roster(args.roster, args.id_column, args.name_column, args.section)
    with Course.create(args.dir, args.title or "") as course:
        counts = course.set_roster(roster, args.section)
        print(f"course record started in {Path(args.dir) / 'course.sqlite'}")
        print(f"  roster: {counts['added']} student(s){' in section ' + args.section if args.section else ''}")
        print(f"  next: labcheck course grade {args.dir} SPEC INPUT...")
    return 0


def cmd_roster(args) -> int:
    from labcheck.reading.ingest import read_roster

    roster = read_roster(args.roster, args.id_column, args.name_column, args.section)
    with _open(args.dir) as course:
        counts = course.set_roster(roster, args.section if args.replace else None)
    print(f"roster: {counts['added']} added, {counts['updated']} updated, {counts['unchanged']} unchanged"
          + (f", {counts['dropped']} dropped from section {args.section}" if args.replace else ""))
    return 0


def cmd_grade(args) -> int:
    from labcheck.run.batch import count_inputs
    from labcheck.cli.main import _print_summary, _progress, _resolve_spec

    spec = _resolve_spec(args.spec)
    with _open(args.dir) as course:
        total = count_inputs(args.inputs) if all(Path(i).exists() for i in args.inputs) else 0
        progress = None if args.quiet else _progress(total, sys.stderr)
        run, run_id = course.grade(spec, args.inputs, section=args.section, keep=args.keep, jobs=args.jobs,
                                   progress=progress)
        if progress and total:
            sys.stderr.write("\n")
        print(f"run {run_id} of {spec.id} recorded in the course; it is now the current one"
              + (f" for section {args.section}" if args.section else ""))
        _print_summary(run, spec, run.out_dir, args.keep)
        applied = course.run_adjustments(run_id)
        if applied:
            changed = [a for a in applied if a["changed"] or not a["applied"]]
            print(f"  {len(applied)} adjustment(s) re-applied; {len(changed)} flagged for review "
                  f"(labcheck course status {args.dir})")
    return run.exit_code


def cmd_adjust(args) -> int:
    from labcheck.course.record import CourseError
    from labcheck.reading.ingest import read_adjustments

    with _open(args.dir) as course:
        if args.file:
            rows = read_adjustments(args.file)
            done = []
            lookup = course.adjust_lookup()  # the roster and results read once for the whole file
            for r in rows:  # each is its own transaction: a bad row is named, the ones before it stay made
                try:
                    done.append(course.adjust(r["student"], r["lab"], r["points"], r["reason"], r["step"],
                                              lookup=lookup))
                except CourseError as exc:
                    raise CourseError(f"{args.file}: row {r['row']}: {exc} ({len(done)} row(s) before it were "
                                      "recorded; correct this row and give the file again: recorded ones are "
                                      "replaced, not doubled)") from None
            print(f"{len(done)} adjustment(s) recorded from {args.file}")
            return 0
        if not (args.student and args.lab):
            raise CourseError("name the STUDENT and the LAB (or give --file CSV)")
        if args.withdraw:
            n = course.withdraw(args.student, args.lab, args.step)
            print(f"{n} adjustment(s) withdrawn")
            return 0
        if args.points is None or not args.reason:
            raise CourseError("an adjustment needs --points P and --reason TEXT")
        course.adjust(args.student, args.lab, args.points, args.reason, args.step)
        what = f"step {args.step} set to {args.points:g} points" if args.step else f"{args.points:+g} points on the lab"
        print(f"adjustment recorded: {args.student}, {args.lab}: {what} ({args.reason})")
        print("  it shows on the student's sheet at the next 'course grade' and in 'course feedback' PDFs; "
              "'course export' includes it now")
    return 0


def cmd_assign(args) -> int:
    with _open(args.dir) as course:
        name = course.assign(args.lab, args.file, args.student, args.reason or "")
    print(f"{name} will count for {args.student} in {args.lab} from the next 'labcheck course grade'")
    return 0


def cmd_accept(args) -> int:
    with _open(args.dir) as course:
        course.accept(args.lab, args.student)
    print(f"{args.student}'s identity in {args.lab} marked as reviewed")
    return 0


def cmd_status(args) -> int:
    with _open(args.dir) as course:
        labs = course.status()
        print(f"{course.title}: {len(course.roster())} student(s) on the roster, {len(labs)} lab(s) graded")
        if not labs:
            print(f"  nothing graded yet: labcheck course grade {args.dir} SPEC INPUT...")
        for st in labs:
            if args.lab and st.lab_id != args.lab:
                continue
            print(f"\n{st.lab_id}: {st.title}")
            for run in st.runs:
                scope = f"section {run['section']}" if run["section"] else "all sections"
                print(f"  current run {run['run_id']} ({scope}, {run['finished_at']}): {course.folder / run['folder']}")
            print(f"  graded {st.graded}; {st.to_review} item(s) to review")
            _list("missing (no file)", st.missing, lambda w: f"{w['student_id']} {w['name']}")
            _list("unreadable or another lab's file", st.unreadable,
                  lambda w: f"{w['student_id'] or '(no id)'}: {w['submission']}: {w['reason']}")
            _list("identity to review", st.identity, lambda w: f"{w['student_id']}: {w['detail']}")
            _list("files not counted (the same student sent another)", st.superseded,
                  lambda w: f"{w['student_id']}: {w['submission']}")
            _list("integrity leads (instructor only; see integrity.html)", st.leads,
                  lambda w: f"{w['student_id']} {w['name']}: {w['leads']} lead(s)")
            _list("steps no known mistake explains", st.unexplained, lambda w: f"{w['student_id']}: {w['step']}")
            _list("adjustments to review", st.adjustments,
                  lambda a: f"{a['student_id']} {a['step'] or '(lab total)'} {a['points']:g}: {a['change']}")
    return 0


def _list(title: str, items: list, line) -> None:
    if items:
        print(f"  {title}: {len(items)}")
        for it in items:
            print(f"    {line(it)}")


def _header(text: str) -> tuple[str, str]:
    from labcheck.course.record import CourseError

    if "=" not in text:
        raise CourseError(f"--header {text!r}: write it as LAB=HEADING")
    lab, heading = text.split("=", 1)
    return lab.strip(), heading


def cmd_export(args) -> int:
    from labcheck.course.record import CourseError

    out = Path(args.out)
    if out.exists() and not args.force:
        raise CourseError(f"{out} exists; give --force to replace it")
    sep = {"comma": ",", "semicolon": ";", "tab": "\t"}[args.sep]
    with _open(args.dir) as course:
        n, labs = course.write_export(out, as_percent=args.scale == "percent", id_header=args.id_header,
                                      name_header=args.name_header, with_section=args.with_section,
                                      headers=dict(_header(h) for h in args.header or []), labs=args.lab, sep=sep,
                                      points_possible=args.points_possible)
    print(f"wrote {out}: {n} student(s) x {len(labs)} lab(s), "
          f"{'percent of each lab' if args.scale == 'percent' else 'points'} with adjustments; blank = no graded file")
    return 0


def cmd_feedback(args) -> int:
    from labcheck.course.record import CourseError

    out = Path(args.out)
    if out.exists() and any(out.iterdir()) and not args.force:
        raise CourseError(f"{out} is not empty; give --force to write into it")
    progress = None if args.quiet else (lambda n, name: sys.stderr.write(f"\r  {n} PDF(s)"))
    with _open(args.dir) as course:
        made, bundle = course.write_feedback(args.lab, out, args.page, progress, jobs=args.jobs, students=args.student)
    if made and progress:
        sys.stderr.write("\n")
    print(f"wrote {len(made)} PDF(s) to {out} (named by student id) and {bundle}")
    print("  Grades are advisory until you have reviewed them; integrity leads are never on these sheets.")
    return 0


def cmd_history(args) -> int:
    from labcheck.report.text import format_diff
    from labcheck.grading.compare import diff_runs, load_results
    from labcheck.course.record import CourseError

    with _open(args.dir) as course:
        course._lab(args.lab)
        runs = [r["run_id"] for r in course.runs(args.lab)]
        if args.runs:
            old, new = args.runs
            for r in (old, new):
                if r not in runs:
                    raise CourseError(f"lab {args.lab} has no run {r}; its runs are {', '.join(map(str, runs))}")
        elif len(runs) < 2:
            print(f"{args.lab} has {len(runs)} run(s); nothing to compare yet")
            for event in course.history():
                print(f"  {event['at']}  {event['action']}: {event['detail']}")
            return 0
        else:
            old, new = runs[-2], runs[-1]
        d = diff_runs(load_results(course.run_folder(old)), load_results(course.run_folder(new)))
        print(format_diff(d, f"run {old}", f"run {new}"))
        applied = course.run_adjustments(new)
        if applied:
            print(f"\nadjustments re-applied in run {new}:")
            for a in applied:
                state = "flagged: " + a["note"] if a["changed"] or not a["applied"] else "unchanged step"
                print(f"  {a['student_id']} {a['step'] or '(lab total)'} {a['points']:g} ({a['reason']}): {state}")
    return 0


def add_course_parser(sub, fmt, jobs_option, roster_options, column_options) -> None:
    """The ``course`` command and its sub-commands."""
    p = sub.add_parser("course", help="keep a course record: roster, labs, runs, adjustments, export, PDFs",
                       formatter_class=fmt, epilog=EXAMPLES,
                       description="A course record in a folder (course.sqlite and each run's outputs): grade "
                                   "labs into it, adjust grades with reasons, review what needs it, export for "
                                   "an LMS and hand out PDFs.")
    cs = p.add_subparsers(dest="course_command", metavar="ACTION")
    p.set_defaults(func=lambda a: (p.print_help(), 2)[1])

    q = cs.add_parser("new", help="start a course record from a roster", formatter_class=fmt)
    q.add_argument("dir", metavar="DIR")
    q.add_argument("--roster", required=True, metavar="FILE", help="roster CSV (an LMS export will do)")
    q.add_argument("--section", metavar="NAME", help="the section these students are in")
    q.add_argument("--title", metavar="TEXT", help="the course's name (default: the folder's)")
    column_options(q)
    q.set_defaults(func=cmd_new)

    q = cs.add_parser("roster", help="add students, or update names and sections", formatter_class=fmt)
    q.add_argument("dir", metavar="DIR")
    q.add_argument("roster", metavar="FILE")
    q.add_argument("--section", metavar="NAME")
    q.add_argument("--replace", action="store_true",
                   help="students of --section who are not in FILE are marked dropped (kept in the record)")
    column_options(q)
    q.set_defaults(func=cmd_roster)

    q = cs.add_parser("grade", help="grade a lab into the course (every run kept; the latest is current)",
                      formatter_class=fmt)
    q.add_argument("dir", metavar="DIR")
    q.add_argument("spec", metavar="SPEC", help="lab spec file or shipped lab id")
    q.add_argument("inputs", metavar="INPUT", nargs="+")
    q.add_argument("--section", metavar="NAME", help="grade against this section's roster only")
    roster_options(q, roster=False)
    q.add_argument("--quiet", action="store_true", help="no progress bar")
    jobs_option(q)
    q.set_defaults(func=cmd_grade)

    q = cs.add_parser("adjust", help="adjust a grade, with a reason (or many from a CSV)", formatter_class=fmt,
                      description="With --step, the step's points become P (0 to its maximum); without, P is "
                                  "added to the lab's total (negative to deduct).  A new adjustment of the same "
                                  "student, lab and step replaces the earlier one.  --file takes a CSV with "
                                  "the columns student_id, lab, step, points, reason.")
    q.add_argument("dir", metavar="DIR")
    q.add_argument("student", metavar="STUDENT", nargs="?")
    q.add_argument("lab", metavar="LAB", nargs="?")
    q.add_argument("--step", metavar="ID")
    q.add_argument("--points", type=float, metavar="P")
    q.add_argument("--reason", metavar="TEXT", help="shown on the student's sheet")
    q.add_argument("--withdraw", action="store_true", help="withdraw the adjustment on this step (or the lab's)")
    q.add_argument("--file", metavar="CSV")
    q.set_defaults(func=cmd_adjust)

    q = cs.add_parser("assign", help="credit a file to a student (a misfiled upload, or the file that counts)",
                      formatter_class=fmt,
                      description="From the next 'course grade' on, FILE (its path as listed in results.json, or "
                                  "a unique end of it) counts for STUDENT, whatever its sheet or folder says, and "
                                  "before any other file of that student.")
    q.add_argument("dir", metavar="DIR")
    q.add_argument("lab", metavar="LAB")
    q.add_argument("file", metavar="FILE")
    q.add_argument("student", metavar="STUDENT")
    q.add_argument("--reason", required=True, metavar="TEXT")
    q.set_defaults(func=cmd_assign)

    q = cs.add_parser("accept", help="mark a student's identity reconciliation as reviewed", formatter_class=fmt)
    q.add_argument("dir", metavar="DIR")
    q.add_argument("lab", metavar="LAB")
    q.add_argument("student", metavar="STUDENT")
    q.set_defaults(func=cmd_accept)

    q = cs.add_parser("status", help="what to review: missing, unreadable, identities, leads, flagged adjustments",
                      formatter_class=fmt)
    q.add_argument("dir", metavar="DIR")
    q.add_argument("--lab", metavar="LAB")
    q.set_defaults(func=cmd_status)

    q = cs.add_parser("export", help="one row per student, one column per lab, for an LMS's grade import",
                      formatter_class=fmt)
    q.add_argument("dir", metavar="DIR")
    q.add_argument("--out", required=True, metavar="FILE")
    q.add_argument("--scale", choices=("points", "percent"), default="points")
    q.add_argument("--id-header", default="student_id", metavar="TEXT", help="heading of the id column")
    q.add_argument("--name-header", default="name", metavar="TEXT", help="heading of the name column ('' for none)")
    q.add_argument("--with-section", action="store_true", help="add a section column")
    q.add_argument("--header", action="append", metavar="LAB=HEADING", help="a lab's column heading (repeatable)")
    q.add_argument("--lab", action="append", metavar="LAB", help="only these labs (repeatable; default all)")
    q.add_argument("--sep", choices=("comma", "semicolon", "tab"), default="comma")
    q.add_argument("--points-possible", action="store_true",
                   help="a second row with each lab's maximum (100 in percent), as some LMS imports want")
    q.add_argument("--force", action="store_true", help="replace FILE")
    q.set_defaults(func=cmd_export)

    q = cs.add_parser("feedback", help="every student's sheet as a PDF, and one zip of them", formatter_class=fmt)
    q.add_argument("dir", metavar="DIR")
    q.add_argument("lab", metavar="LAB")
    q.add_argument("--out", required=True, metavar="DIR")
    q.add_argument("--page", choices=("A4", "letter"), help="paper size (default: the spec's page_size, else A4)")
    q.add_argument("--student", action="append", metavar="ID", help="only this student's sheet (repeatable)")
    q.add_argument("--force", action="store_true", help="write into a folder that is not empty")
    q.add_argument("--quiet", action="store_true", help="no count of PDFs as they are made")
    jobs_option(q)
    q.set_defaults(func=cmd_feedback)

    q = cs.add_parser("history", help="compare two runs of a lab: who moved, which adjustments were re-applied",
                      formatter_class=fmt)
    q.add_argument("dir", metavar="DIR")
    q.add_argument("lab", metavar="LAB")
    q.add_argument("--runs", nargs=2, type=int, metavar=("OLD", "NEW"), help="default: the last two")
    q.set_defaults(func=cmd_history)
