"""Tolerance tuning (``labcheck tune``): how grades move across a sweep of tolerances.

Nothing here changes a spec unless asked: the report says, for each step's
computation tolerance and for the accuracy rule, how many submissions pass
and how the section's score distribution moves at ×¼, ×½, ×1, ×2 and ×4 of
the current value; it suggests accuracy bands from the section's own
propagated uncertainties.  A step's verdict depends only on its own
tolerance, the earlier steps' verdicts and values, so each submission is
graded once and every sweep point re-judges the stored values.
"""

from __future__ import annotations

import re
import statistics
from dataclasses import dataclass

from labcheck.grading.grade import grade_submission, judge, rejudge, step_points
from labcheck.model.spec import AccuracyRule, LabSpec, Tolerance
from labcheck.base.phrase import Number, Value, phrase
from labcheck.base.units import parse_quantity

__all__ = ["MULTIPLIERS", "TuneReport", "tune", "tuned_spec_text"]

MULTIPLIERS = (0.25, 0.5, 1.0, 2.0, 4.0)


@dataclass
class SweepRow:
    multiplier: float
    tolerance: str
    correct: int
    carried: int
    wrong: int
    mean_percent: float
    n_pass: int


@dataclass
class TuneReport:
    n: int
    steps: dict  # step key -> list[SweepRow]
    accuracy: list  # list[SweepRow] (tolerance = band text)
    suggestion: dict | None  # {"full_within", "zero_beyond", "median_sigma_pct"}


def _scaled(tol: Tolerance, m: float) -> Tolerance:
    """The tolerance times ``m``; its text (worded by the report layer) the value tried in the spec's own unit
    ("0.005 arcmin")."""
    if tol.relative is not None:
        return Tolerance(phrase("{v} %", v=Number(tol.relative * m * 100, ".3g")), relative=tol.relative * m)
    if m == 1:
        return tol
    number, unit = parse_quantity(tol.text)
    text = phrase("{v} {unit}", v=Number(number * m, ".3g"), unit=unit) if unit else Number(number * m, ".3g")
    return Tolerance(text, absolute_si=(tol.absolute_si or 0.0) * m)


def tune(spec: LabSpec, submissions: list) -> TuneReport:
    """Sweep every step's tolerance and the accuracy bands over ``submissions`` (normalised).

    Each submission is graded once; every sweep point then re-judges the stored values (the grader's own
    :func:`~labcheck.grading.grade.judge`), step by step in method order so that "carried" follows the earlier
    verdicts: the figures equal those of a full regrade at each point (tests/test_tune.py), without
    regrading, rendering or quality tests per point.
    """
    traced = []
    for sub in submissions:
        traces: list = []
        traced.append((grade_submission(sub, spec, traces), traces))
    base = [rec for rec, _ in traced]
    pass_pct = 100.0 * spec.pass_fraction

    def summarise(scores, maxes):
        pcts = [100.0 * s / m for s, m in zip(scores, maxes) if m]
        return (statistics.fmean(pcts) if pcts else 0.0), sum(p >= pass_pct - 1e-9 for p in pcts)

    def change(t, verdict, old):
        return step_points(spec, t.points, verdict) - old

    # Per submission and method: its traces in order, each with the points the sheet gave and the verdict
    # and score change under the spec's own tolerances.  A step is judged on its own tolerance and the
    # earlier steps' verdicts only, so sweeping step k leaves every step before k as it is: those are
    # taken from here, and only k and the steps after it are judged again (the score changes are still
    # added one by one in method order, so the sums are the same floats as a full re-judging gives).
    prepared: dict = {}
    for n, (rec, traces) in enumerate(traced):
        points = {s["id"]: s["points"] for s in rec["steps"]}
        for method_id, method_traces in traces:
            judged: dict = {}
            rows = []
            for t in method_traces:
                t.settle()  # candidates as an array once needed: the swept step is judged at every point
                answer = judge(spec.steps[t.key].tolerance, t, judged)
                judged[t.step_id] = answer[0]
                old = points[t.key]
                rows.append((t, answer, old, change(t, answer[0], old)))
            prepared.setdefault(method_id, []).append((n, rows))

    steps = {}
    for key, rule in spec.steps.items():
        rows_out = []
        for m in MULTIPLIERS:
            tried = _scaled(rule.tolerance, m)
            verdicts = []
            scores = [rec["score"] for rec, _ in traced]
            for n, rows in prepared.get(rule.method.id, ()):
                start = next((i for i, row in enumerate(rows) if row[0].key == key), len(rows))
                score = scores[n]
                judged = {}
                for t, answer, _, changed in rows[:start]:
                    judged[t.step_id] = answer[0]
                    score += changed
                for t, answer, old, _ in rows[start:]:
                    if t.key == key:
                        verdict = judge(tried, t, judged)[0]
                        verdicts.append(verdict)
                    else:  # its own tolerance as graded: only the earlier verdicts may have moved it
                        verdict = rejudge(t, answer, judged)
                    judged[t.step_id] = verdict
                    score += change(t, verdict, old)
                scores[n] = score
            mean, n_pass = summarise(scores, [rec["max_score"] for rec, _ in traced])
            rows_out.append(SweepRow(m, tried.text, verdicts.count("correct"), verdicts.count("carried"),
                                     verdicts.count("wrong"), mean, n_pass))
        steps[key] = rows_out

    accuracy_rows = []
    if spec.accuracy is not None:
        acc = spec.accuracy
        for m in MULTIPLIERS:
            rule = AccuracyRule(acc.points, acc.full_within * m, acc.zero_beyond * m, acc.kind, acc.text)
            scores, maxes, within = [], [], 0
            for rec in base:
                score = rec["score"] or 0.0
                fracs = []
                for a in (rec.get("accuracy") or {}).values():
                    if a["recomputed"] is None or a["reference"] is None:
                        continue
                    frac = rule.score_fraction(a["recomputed"], a["reference"], a.get("sigma"))
                    score += a["max_points"] * frac - a["points"]
                    fracs.append(frac)
                within += bool(fracs) and all(f == 1.0 for f in fracs)  # students, not methods
                scores.append(score)
                maxes.append(rec["max_score"])
            mean, n_pass = summarise(scores, maxes)
            if acc.kind in ("relative", "sigma"):
                unit, scale = ("%", 100) if acc.kind == "relative" else ("sigma", 1)
                text = phrase("{full} / {zero} {unit}", full=Number(acc.full_within * m * scale, ".3g"),
                              zero=Number(acc.zero_beyond * m * scale, ".3g"), unit=unit)
            else:  # absolute bands, in the result's own display unit
                first = next(iter(spec.steps.values()))
                result = spec.steps[spec.step_key(first.method.id, first.method.result_step)]
                text = phrase("{full} / {zero}", full=Value(acc.full_within * m, result.unit, result.step.kind, 3),
                              zero=Value(acc.zero_beyond * m, result.unit, result.step.kind, 3))
            accuracy_rows.append(SweepRow(m, text, within, 0, 0, mean, n_pass))

    suggestion = None
    rel_sigmas = [100.0 * a["sigma"] / abs(a["recomputed"]) for rec in base for a in (rec.get("accuracy") or {}).values()
                  if a.get("sigma") and a.get("recomputed")]
    if rel_sigmas:
        med = statistics.median(rel_sigmas)
        suggestion = {"median_sigma_pct": med, "full_within": phrase("{v} %", v=Number(2 * med, ".2g")),
                      "zero_beyond": phrase("{v} %", v=Number(4 * med, ".2g"))}
    return TuneReport(len(submissions), steps, accuracy_rows, suggestion)


def tuned_spec_text(spec_text: str, full_within: str, zero_beyond: str) -> str:
    """The spec's text with the [accuracy] bands replaced; everything else kept as written."""
    out, in_accuracy = [], False
    for line in spec_text.splitlines(keepends=True):
        stripped = line.strip()
        if stripped.startswith("["):
            in_accuracy = stripped == "[accuracy]"
        if in_accuracy and re.match(r"full_within\s*=", stripped):
            line = f'full_within = "{full_within}"  # tuned by labcheck tune\n'
        elif in_accuracy and re.match(r"zero_beyond\s*=", stripped):
            line = f'zero_beyond = "{zero_beyond}"  # tuned by labcheck tune\n'
        out.append(line)
    return "".join(out)
