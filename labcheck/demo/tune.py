"""The demo's tune and diff on the dip section: a tune report, a tuned spec copy, a regrade with it and the
diff of the two runs.  Demo layer: writes its files and returns the lines to show (the CLI prints them).
"""

from __future__ import annotations

from pathlib import Path

from labcheck.grading.compare import diff_runs, load_results
from labcheck.grading.tune import tune, tuned_spec_text
from labcheck.model.spec import LabSpec, load_spec
from labcheck.reading.ingest import RawSubmission, iter_submissions
from labcheck.reading.submission import normalise
from labcheck.report.text import format_diff, format_tune_report
from labcheck.report.words import word
from labcheck.run.batch import grade_section

__all__ = ["tune_and_diff"]


def tune_and_diff(spec: LabSpec, zip_path: Path, roster: Path, folder: Path) -> list[str]:
    """Write tune_report.txt, the tuned spec, graded-tuned/ and diff_report.txt in ``folder``; say what was done."""
    subs = [normalise(i, spec) for i in iter_submissions([zip_path]) if isinstance(i, RawSubmission) and not i.error]
    report = tune(spec, subs)
    (folder / "tune_report.txt").write_text(format_tune_report(report, spec), encoding="utf-8")
    if not report.suggestion:
        return []
    tuned = folder / "horizon_dip_tuned.toml"
    full, zero = word(report.suggestion["full_within"]), word(report.suggestion["zero_beyond"])
    tuned.write_text(tuned_spec_text(Path(spec.path).read_text(encoding="utf-8"), full, zero), encoding="utf-8")
    grade_section(load_spec(tuned), [zip_path], folder / "graded-tuned", roster, force=True)
    d = diff_runs(load_results(folder / "graded"), load_results(folder / "graded-tuned"))
    (folder / "diff_report.txt").write_text(format_diff(d, "graded", "graded-tuned"), encoding="utf-8")
    return [f"  tune: suggested accuracy bands {full} / {zero} "
            f"(report: {folder / 'tune_report.txt'}); regraded with them into {folder / 'graded-tuned'}",
            f"  diff: {len(d.changed)} student(s) would change ({folder / 'diff_report.txt'})"]
