"""Plain-text reports for the terminal and for files: a run's summary, one submission's check table, the tune
report and the diff of two runs.

Report layer: built from records and run figures (data in, lines out); nothing here prints.  Colour is the
caller's: each function takes ``colour(text, ansi_code) -> text`` (the CLI's adds ANSI codes on a terminal).
"""

from __future__ import annotations

import os
from pathlib import Path

from labcheck.report.words import format_fixed, word

__all__ = ["run_summary_lines", "check_lines", "format_tune_report", "format_diff", "plain"]

VERDICT_COLOURS = {"correct": "32", "carried": "33", "wrong": "31", "missing": "90"}


def plain(text: str, code: str) -> str:
    """No colour."""
    return text


def run_summary_lines(run, spec, out: Path, keep: str = "latest", colour=plain, error_log: str = "") -> list[str]:
    """What a grading run did and where its outputs are."""
    c = colour
    lines = [spec.title]
    line = f"  graded {run.n_graded} of {run.n_files} files"
    lines.append(c(line, "32") if run.n_graded == run.n_files else line)
    if run.mean_percent is not None:
        lines.append(f"  mean score {run.mean_percent:.0f} %; {run.n_pass} of {run.n_counted} at or above the pass "
                     f"mark ({spec.pass_fraction:.0%})")
    if run.n_unreadable:
        lines.append(c(f"  {run.n_unreadable} unreadable file(s): reasons in section.html and results.json", "33"))
    if run.n_wrong_lab:
        lines.append(c(f"  {run.n_wrong_lab} file(s) made from another lab's template: listed in section.html", "33"))
    if run.n_missing:
        lines.append(c(f"  {run.n_missing} student(s) on the roster with no submission", "33"))
    if run.n_unmatched:
        lines.append(c(f"  {run.n_unmatched} submission(s) whose student_id is not on the roster", "33"))
    if run.n_superseded:
        lines.append(c(f"  {run.n_superseded} file(s) not counted: the same student sent another, kept by the "
                       f"'{keep}' policy (listed in section.html)", "33"))
    if run.n_reconciled:
        lines.append(c(f"  {run.n_reconciled} file(s) matched to the roster other than by an exact id: review them "
                       "in section.html", "33"))
    if run.n_skipped:
        lines.append(f"  {run.n_skipped} clutter file(s) passed over (listed in results.json)")
    if run.internal_errors:
        lines.append(c(f"  labcheck itself failed on {len(run.internal_errors)} file(s) (status 'error'): "
                       f"tracebacks in {out / error_log}; please report them", "31"))
    if run.n_leads:
        lines.append(c(f"  {run.n_leads} integrity lead(s) for your review (instructor only): "
                       f"{out / 'integrity.html'}", "33"))
    lines += [f"  section summary: {out / 'section.html'}",
              f"  feedback sheets: {out / 'feedback'}{os.sep}",
              f"  gradebook:       {out / 'gradebook.csv'}",
              f"  all results:     {out / 'results.json'}",
              "  Grades are advisory: review them before they count."]
    return lines


def check_lines(record: dict, spec, name: str, colour=plain) -> list[str]:
    """One graded submission as a table of steps (``labcheck check``)."""
    c = colour
    lines = [f"{spec.title}: {name}  ({record['name'] or '?'}, {record['student_id'] or 'no student_id'})"]
    for f in record["reading"]:
        where = f"  row {f['row']}: {f['item']} = {f['value']!r}: " if f["row"] is not None else "  "
        lines.append(f"{where}{f['message']}")
    for f in record["flags"]:
        lines.append(c(f"  row {f['row']}: {f['item']} = {f['value']!r}: {f['message']}", "33"))
    head = f"  {'step':<32} {'recomputed':>14} {'yours':>14}  {'verdict':<16} {'points':>7}"
    lines += [head, "  " + "-" * (len(head) - 2)]
    for s in record["steps"]:
        exp = format_fixed(s["expected"], s["decimals"], s["unit"])
        rep = format_fixed(s["reported"], s["decimals"], s["unit"])
        verdict = c(f"{s['verdict']:<16}", VERDICT_COLOURS[s["verdict"]])
        lines.append(f"  {s['id']:<32} {exp:>14} {rep:>14}  {verdict} {s['points']:>3g}/{s['max_points']:<3g}")
        if s["diagnosis"]:
            lines.append(f"      likely cause: {s['diagnosis']['label']}: {s['diagnosis']['text']}")
        elif s["verdict"] in ("wrong", "carried"):
            lines.append(f"      {s['explanation']}")
    for mid, acc in record["accuracy"].items():
        lines.append(f"  accuracy ({mid}): {acc['explanation']} {acc['points']:g}/{acc['max_points']:g}")
    qs = record.get("quality_score")
    if qs:
        lines.append(f"  field-data quality: {qs['points']:g}/{qs['max_points']:g} ({qs['passed']} of {qs['checks']} "
                     "checks passed)")
        for q in record["quality"]:
            if q.get("check"):
                lines.append(f"      {'ok ' if q['ok'] else 'not'} {q['text']}")
    lines.append(f"  score {record['score']:g} / {record['max_score']:g} (advisory)")
    return lines


def format_tune_report(report, spec) -> str:
    """The tune report as text (for the terminal or a file)."""
    out = [f"{spec.title}: {report.n} readable submissions; pass mark {spec.pass_fraction:.0%}",
           "Each row: the tolerance tried, then how many students the step finds correct / carried / wrong, the mean "
           "score and how many students pass. Nothing is changed."]
    for key, rows in report.steps.items():
        out.append(f"\n  {key}")
        for r in rows:
            mark = "  <- current" if r.multiplier == 1 else ""
            out.append(f"    ×{r.multiplier:<5g} {word(r.tolerance):<22} {r.correct:>4} / {r.carried:>3} / {r.wrong:>3}"
                       f"   mean {r.mean_percent:5.1f} %   pass {r.n_pass}/{report.n}{mark}")
    if report.accuracy:
        out.append(f"\n  accuracy ({spec.accuracy.text})")
        for r in report.accuracy:
            mark = "  <- current" if r.multiplier == 1 else ""
            out.append(f"    ×{r.multiplier:<5g} {word(r.tolerance):<22} students with full points {r.correct:>4}   mean {r.mean_percent:5.1f} %"
                       f"   pass {r.n_pass}/{report.n}{mark}")
    if report.suggestion:
        sg = report.suggestion
        out.append(f"\n  The section's results carry a median propagated uncertainty of {sg['median_sigma_pct']:.2g} % "
                   f"(1 sigma). Suggested bands: full_within = \"{word(sg['full_within'])}\", zero_beyond = \"{word(sg['zero_beyond'])}\" "
                   "(2 and 4 sigma), or write them in sigmas: \"2 sigma\", \"4 sigma\".")
    return "\n".join(out) + "\n"


def format_diff(d, old_name: str, new_name: str) -> str:
    """The diff of two runs as text."""
    out = []
    if d.old_lab != d.new_lab:
        out.append(f"warning: the runs grade different labs ({d.old_lab} and {d.new_lab})")
    out.append(f"{len(d.changed)} student(s) changed, {d.unchanged} unchanged"
               + ("; the lab spec differs between the runs" if d.spec_changed else "; same lab spec"))
    for ch in d.changed:
        delta = f"{ch.delta:+g}" if ch.delta is not None else f"{ch.old_status} -> {ch.new_status}"
        old = "—" if ch.old_score is None else f"{ch.old_score:g}"
        new = "—" if ch.new_score is None else f"{ch.new_score:g}"
        out.append(f"  {ch.key:<16} {ch.name:<24} {old:>7} -> {new:<7} ({delta})")
        for st in ch.steps:
            verdicts = f"{st['old_verdict']} -> {st['new_verdict']}" if st["old_verdict"] or st["new_verdict"] else ""
            out.append(f"      {st['id']:<36} {st['old_points']} -> {st['new_points']} points  {verdicts}")
    out += [f"  {key}: only in {old_name}" for key in d.only_old]
    out += [f"  {key}: only in {new_name}" for key in d.only_new]
    return "\n".join(out) + "\n"


