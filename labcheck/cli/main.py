"""The ``labcheck`` command: thin wiring over the library.

Our own exceptions (a bad spec, a missing input, a full output folder) become
a one-line message; anything else is a bug and keeps its traceback.  Exit
status: 0 all graded; 1 graded with some submissions unreadable (or made from
another lab's template) or some students missing; 2 usage, input or spec
error (nothing graded, nothing written); 3 labcheck itself failed on some file
(tracebacks in labcheck-errors.log) or could not write its outputs.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
from pathlib import Path

from typing import TYPE_CHECKING

from labcheck import __version__
from labcheck.base.exitcodes import EXIT_INCOMPLETE, EXIT_LABCHECK_FAILED, EXIT_OK, EXIT_USAGE
from labcheck.base.resources import shipped_spec, specs_dir

if TYPE_CHECKING:  # imported where used: `labcheck --help` and `check` stay quick to start
    from labcheck.model.spec import LabSpec

# Every module below is imported inside the command that needs it (start-up time: docs/outputs.md).

EXAMPLES = {
    "grade": "example:\n  labcheck grade horizon_dip submissions.zip --roster roster.csv --out graded/",
    "check": "example:\n  labcheck check horizon_dip group07.csv",
    "template": "examples:\n  labcheck template horizon_dip --out dip_lab.csv\n  labcheck template lab_specs/horizon_dip.toml --out dip_lab.xlsx",
    "spec": "examples:\n  labcheck spec check my_lab.toml\n  labcheck spec list\n  labcheck spec schema",
    "demo": "example:\n  labcheck demo --out ~/labcheck-demo",
    "diff": "example:\n  labcheck diff graded-monday/ graded-retuned/",
    "tune": "examples:\n  labcheck tune horizon_dip submissions.zip\n  labcheck tune horizon_dip submissions.zip --write horizon_dip_tuned.toml",
}
DEMO_MARKER = ".labcheck-demo"


class _Colour:
    def __init__(self, stream):
        self.on = stream.isatty() and not os.environ.get("NO_COLOR") and os.environ.get("TERM") != "dumb"

    def __call__(self, text: str, code: str) -> str:
        return f"\033[{code}m{text}\033[0m" if self.on else text


def _resolve_spec(name: str) -> "LabSpec":
    """Load a spec by path, or by the id of a shipped spec (``horizon_dip``)."""
    from labcheck.model.spec import SpecError, load_spec

    p = Path(name)
    if not p.exists() and not p.suffix:
        shipped = shipped_spec(name)
        if shipped.exists():
            p = shipped
        else:
            known = ", ".join(sorted(f.stem for f in specs_dir().glob("*.toml")))
            raise SpecError(name, [("", f"no such file, and no shipped lab with this id (shipped: {known})")])
    return load_spec(p)


def _progress(total: int, stream):
    if not stream.isatty() or total < 2:
        return None
    width = 30

    def show(i: int, name: str) -> None:
        done = min(i, total)
        fill = int(width * done / total)
        label = name[-40:]
        stream.write(f"\r[{'#' * fill}{'.' * (width - fill)}] {done}/{total} {label:<40}")
        if done >= total:
            stream.write("\n")
        stream.flush()

    return show


def cmd_grade(args) -> int:
    from labcheck.run.batch import count_inputs, grade_section

    spec = _resolve_spec(args.spec)
    total = count_inputs(args.inputs) if all(Path(i).exists() for i in args.inputs) else 0
    progress = None if args.quiet else _progress(total, sys.stderr)
    run = grade_section(spec, args.inputs, args.out, args.roster, force=args.force, progress=progress, jobs=args.jobs,
                        keep=args.keep, id_column=args.id_column, name_column=args.name_column)
    if progress and total:
        sys.stderr.write("\n")
    _print_summary(run, spec, Path(args.out), args.keep)
    return run.exit_code


def _print_summary(run, spec: "LabSpec", out: Path, keep: str = "latest") -> None:
    from labcheck.report.text import run_summary_lines
    from labcheck.run.batch import ERROR_LOG

    print("\n".join(run_summary_lines(run, spec, out, keep, _Colour(sys.stdout), ERROR_LOG)))


def cmd_check(args) -> int:
    from labcheck.reading.ingest import InputError, Limits
    from labcheck.report.text import check_lines
    from labcheck.run.check import check_bytes

    spec = _resolve_spec(args.spec)
    p = Path(args.file)
    if not p.is_file():
        raise InputError(f"{p}: no such file")
    limits = Limits()
    if p.stat().st_size > limits.max_file_bytes:
        print(f"{p.name}: unreadable: file too large", file=sys.stderr)
        return 1
    checked = check_bytes(spec, p.read_bytes(), p.name, limits)
    if checked.status == "unreadable":
        print(f"{p.name}: unreadable: {checked.message}")
        return EXIT_INCOMPLETE
    if checked.status == "wrong_lab":
        print(f"{p.name}: {checked.message}")
        return EXIT_INCOMPLETE
    print("\n".join(check_lines(checked.record, spec, p.name, _Colour(sys.stdout))))
    return 0


def cmd_template(args) -> int:
    from labcheck.run.batch import OutputExistsError
    from labcheck.reading.ingest import InputError
    from labcheck.report.template import write_template

    spec = _resolve_spec(args.spec)
    out = Path(args.out)
    if out.exists() and not args.force:
        raise OutputExistsError(f"{out} exists; add --force to replace it")
    if out.suffix.lower() not in (".csv", ".xlsx"):
        raise InputError(f"{out}: the template's name must end in .csv or .xlsx")
    write_template(spec, out)
    print(f"wrote {out}: the blank template for {spec.title}")
    return 0


def cmd_spec(args) -> int:
    from labcheck.reading.ingest import InputError
    from labcheck.model.spec import load_spec

    if args.action == "list":
        for f in sorted(specs_dir().glob("*.toml")):
            spec = load_spec(f)
            print(f"{f.stem:<20} {spec.title}")
        print(f"(shipped in {specs_dir()}; copy one to make your own)")
        return 0
    if args.action == "schema":
        path = specs_dir() / "spec.schema.json"
        print(path)
        print("(a JSON Schema of the lab spec: start a spec with the line '#:schema <that path>' and an editor that "
              "checks TOML against JSON Schemas checks it as you type)", file=sys.stderr)
        return 0
    if not args.file:
        raise InputError("labcheck spec check needs a FILE")
    spec = _resolve_spec(args.file)
    print(f"{spec.path}: valid lab spec {spec.id!r}: {spec.title}")
    for rule in spec.steps.values():
        print(f"  step {rule.key:<32} {rule.points:>4g} points, tolerance {rule.tolerance.text}")
    if spec.accuracy is None:
        print("  accuracy: not judged in this lab (no [accuracy] table)")
    else:
        print(f"  accuracy: {spec.accuracy.points:g} points per method, {spec.accuracy.text}")
    return 0


def cmd_demo(args) -> int:
    from labcheck.run.batch import OutputExistsError, count_inputs, grade_section
    from labcheck.demo import SECTIONS, build_demo
    from labcheck.model.spec import load_spec

    out = Path(args.out)
    if out.exists() and any(out.iterdir()):
        if (out / DEMO_MARKER).exists() or args.force:
            for folder in [section.folder for section in SECTIONS] + [COURSE_DEMO_FOLDER]:
                if (out / folder).is_dir():
                    shutil.rmtree(out / folder)
        else:
            raise OutputExistsError(f"{out} is not empty and is not an earlier demo; choose another --out or add --force")
    out.mkdir(parents=True, exist_ok=True)
    (out / DEMO_MARKER).write_text("made by labcheck demo; safe to delete\n", encoding="utf-8")
    surprises = []
    worst = EXIT_OK
    for section in SECTIONS:
        folder = out / section.folder
        zip_path, roster = build_demo(folder, section)
        spec = load_spec(shipped_spec(section.lab))
        print(f"\nDemo section {section.code}: {zip_path.name} with {roster.name}")
        progress = None if args.quiet else _progress(count_inputs([zip_path]), sys.stderr)
        run = grade_section(spec, [zip_path], folder / "graded", roster, force=True, progress=progress, jobs=args.jobs)
        _print_summary(run, spec, folder / "graded")
        expected = (len(section.unreadable), 1 if section.missing_student else 0, 1 if section.wrong_lab else 0, 0)
        got = (run.n_unreadable, run.n_missing, run.n_wrong_lab, run.n_errors)
        if got != expected:
            surprises.append(f"section {section.code}: expected {expected[0]} unreadable, {expected[1]} missing and "
                             f"{expected[2]} from another lab's template, "
                             f"got {got[0]} unreadable, {got[1]} missing, {got[2]} wrong-lab, {got[3]} labcheck failures")
            worst = max(worst, EXIT_LABCHECK_FAILED if run.n_errors else EXIT_INCOMPLETE)
        if section.lab == "horizon_dip":
            from labcheck.demo.tune import tune_and_diff

            for line in tune_and_diff(spec, zip_path, roster, folder):
                print(line)
    surprises += _demo_course(out, args)
    print(f"\nStart with {out / SECTIONS[0].folder / 'graded' / 'section.html'}")
    if surprises:
        print("The demo did not go as planned:\n  " + "\n  ".join(surprises), file=sys.stderr)
    else:
        print("The demo ran as planned: its unreadable files, missing students and the file from another lab's "
              "template are planted on purpose.")
    return worst


COURSE_DEMO_FOLDER = "course"


def _demo_course(out: Path, args) -> list[str]:
    """The demo course, from an LMS roster to an LMS grade file and PDFs; returns what did not go as planned."""
    from labcheck.demo.course import run_course_demo
    from labcheck.report.pdf import PdfError

    print("\nDemo course GEOD 2150 (two labs, one roster, from an LMS export to an LMS import)")
    try:
        demo = run_course_demo(out / COURSE_DEMO_FOLDER, jobs=args.jobs)
    except PdfError as exc:
        return [f"the course demo could not make PDFs: {exc}"]
    print("\n".join(demo.summary_lines()))
    return demo.surprises()


def cmd_tune(args) -> int:
    from labcheck.run.batch import OutputExistsError
    from labcheck.reading.ingest import InputError, RawSubmission, iter_submissions
    from labcheck.model.spec import load_spec
    from labcheck.reading.submission import normalise
    from labcheck.grading.tune import tune, tuned_spec_text
    from labcheck.report.text import format_tune_report
    from labcheck.report.words import word

    spec = _resolve_spec(args.spec)
    subs = [normalise(item, spec) for item in iter_submissions(args.inputs)
            if isinstance(item, RawSubmission) and not item.error]
    if not subs:
        raise InputError("no readable submissions in the inputs")
    report = tune(spec, subs)
    print(format_tune_report(report, spec), end="")
    if args.write:
        if not report.suggestion:
            raise InputError("no propagated uncertainty to suggest bands from: give the instruments' sigma in the spec")
        out = Path(args.write)
        if out.exists() and not args.force:
            raise OutputExistsError(f"{out} exists; add --force to replace it")
        text = tuned_spec_text(Path(spec.path).read_text(encoding="utf-8"), word(report.suggestion["full_within"]),
                               word(report.suggestion["zero_beyond"]))
        out.write_text(text, encoding="utf-8")
        load_spec(out)  # the tuned copy must itself be a valid spec
        print(f"\n  wrote the tuned copy {out} (only [accuracy] changed); compare runs with labcheck diff")
    return 0


def cmd_diff(args) -> int:
    from labcheck.grading.compare import diff_runs, load_results
    from labcheck.report.text import format_diff

    old, new = load_results(args.old), load_results(args.new)
    d = diff_runs(old, new)
    print(format_diff(d, args.old, args.new), end="")
    return 0


def _jobs(text: str) -> int:
    n = int(text) if text.isdigit() else 0
    if n < 1:
        raise argparse.ArgumentTypeError(f"expected a whole number of processes, 1 or more, got {text!r}")
    return n


def _jobs_option(p) -> None:
    cores = os.cpu_count() or 1
    p.add_argument("--jobs", type=_jobs, default=cores, metavar="N",
                   help=f"grade in N processes (default: this machine's {cores} cores); the outputs are the same for any N")


def _column_options(p) -> None:
    p.add_argument("--id-column", metavar="HEADING", help="the roster column holding student ids (default: found)")
    p.add_argument("--name-column", metavar="HEADING", help="the roster column holding names (default: found)")


def _roster_options(p, roster: bool = True) -> None:
    if roster:
        p.add_argument("--roster", metavar="FILE",
                       help="roster CSV (an LMS export will do: its id and name columns are found by their headings)")
        _column_options(p)
    p.add_argument("--keep", choices=("latest", "earliest", "best"), default="latest",
                   help="of several files from one student, the one counted (default: latest, by the export's "
                        "time stamp, else the file's time)")


def build_parser() -> argparse.ArgumentParser:
    fmt = argparse.RawDescriptionHelpFormatter
    parser = argparse.ArgumentParser(
        prog="labcheck",
        description="Recompute and grade field-lab reductions of the Earth's figure, one feedback sheet per student.",
        epilog="Start with:  labcheck demo\nSPEC is a lab spec file or the id of a shipped one (labcheck spec list).",
        formatter_class=fmt,
    )
    parser.add_argument("--version", action="version", version=f"labcheck {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("grade", help="grade a section's submissions", epilog=EXAMPLES["grade"], formatter_class=fmt,
                       description="Grade every submission (CSV/XLSX files, folders, LMS zip exports) and write "
                                   "results.json, gradebook.csv, section.html and feedback/<student_id>.html.")
    p.add_argument("spec", metavar="SPEC", help="lab spec file or shipped lab id")
    p.add_argument("inputs", metavar="INPUT", nargs="+", help="submission file, folder or zip")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder (must be empty unless --force)")
    _roster_options(p)
    p.add_argument("--force", action="store_true",
                   help="replace an earlier run in DIR, once the new one is complete (your own files there are kept)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    _jobs_option(p)
    p.set_defaults(func=cmd_grade)

    p = sub.add_parser("check", help="grade one submission and show a table here", epilog=EXAMPLES["check"],
                       formatter_class=fmt, description="Grade one submission file and print its steps; writes nothing.")
    p.add_argument("spec", metavar="SPEC")
    p.add_argument("file", metavar="FILE")
    p.set_defaults(func=cmd_check)

    p = sub.add_parser("template", help="write the blank student template", epilog=EXAMPLES["template"],
                       formatter_class=fmt, description="Write the blank template students fill in: CSV, or XLSX when FILE ends in .xlsx.")
    p.add_argument("spec", metavar="SPEC")
    p.add_argument("--out", required=True, metavar="FILE")
    p.add_argument("--force", action="store_true", help="replace FILE if it exists")
    p.set_defaults(func=cmd_template)

    p = sub.add_parser("spec", help="check a lab spec, or list the shipped ones", epilog=EXAMPLES["spec"],
                       formatter_class=fmt, description="Validate a lab spec file and explain any error, or list the shipped specs.")
    p.add_argument("action", choices=("check", "list", "schema"),
                   help="check FILE; list the shipped specs; schema: where the spec's JSON Schema is")
    p.add_argument("file", nargs="?", metavar="FILE")
    p.set_defaults(func=cmd_spec)

    p = sub.add_parser("tune", help="see how grades move across a sweep of tolerances", epilog=EXAMPLES["tune"],
                       formatter_class=fmt, description="For each step's tolerance and the accuracy rule, how many "
                       "submissions pass and how the scores move at x1/4 to x4 of the current value; suggests accuracy "
                       "bands from the section's propagated uncertainty. Changes nothing unless --write is given.")
    p.add_argument("spec", metavar="SPEC")
    p.add_argument("inputs", metavar="INPUT", nargs="+")
    p.add_argument("--write", metavar="FILE", help="write a tuned copy of the spec with the suggested accuracy bands")
    p.add_argument("--force", action="store_true", help="replace FILE if it exists")
    p.set_defaults(func=cmd_tune)

    p = sub.add_parser("diff", help="compare two grading runs: whose grade moved", epilog=EXAMPLES["diff"],
                       formatter_class=fmt, description="Compare two runs' results.json: every student whose score, "
                       "status or any step's points changed, with old and new points. Writes nothing.")
    p.add_argument("old", metavar="OLD_DIR")
    p.add_argument("new", metavar="NEW_DIR")
    p.set_defaults(func=cmd_diff)

    p = sub.add_parser("demo", help="build and grade the bundled demo section", epilog=EXAMPLES["demo"],
                       formatter_class=fmt, description="Generate invented sections of every shipped lab (seeded: the same every time), grade them, and say where the sheets are.")
    p.add_argument("--out", default="labcheck-demo", metavar="DIR", help="folder for the demo (default: ./labcheck-demo)")
    p.add_argument("--force", action="store_true", help="use DIR even if it holds other files")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    _jobs_option(p)
    p.set_defaults(func=cmd_demo)

    from labcheck.cli.course import add_course_parser

    add_course_parser(sub, fmt, _jobs_option, _roster_options, _column_options)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    try:
        return args.func(args)
    except KeyboardInterrupt:
        print("labcheck: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:
        code = _our_error(exc)
        if code is None:
            raise  # a bug: keep its traceback
        return code


def _our_error(exc: Exception) -> int | None:
    """Our own exceptions as a one-line message and an exit status; None for anything else (a bug).

    Imported here, after the fact, so that start-up pays for none of these modules.
    """
    from labcheck.run.batch import OutputExistsError, OutputWriteError
    from labcheck.grading.compare import ResultsError
    from labcheck.reading.ingest import InputError
    from labcheck.course.record import CourseError
    from labcheck.report.pdf import PdfError
    from labcheck.model.spec import SpecError

    if isinstance(exc, (CourseError, PdfError)):
        print(f"labcheck: {exc}", file=sys.stderr)
        return EXIT_USAGE
    if isinstance(exc, SpecError):
        print(f"labcheck: spec error:\n{exc}", file=sys.stderr)
        return EXIT_USAGE
    if isinstance(exc, (InputError, OutputExistsError, ResultsError)):
        print(f"labcheck: {exc}", file=sys.stderr)
        return EXIT_USAGE
    if isinstance(exc, OutputWriteError):
        print(f"labcheck: {exc}", file=sys.stderr)
        return EXIT_LABCHECK_FAILED
    return None


if __name__ == "__main__":
    sys.exit(main())
