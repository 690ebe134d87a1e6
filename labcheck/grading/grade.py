"""Grade one normalised submission against a lab spec.

For every step of every graded method:

* ``expected``: the step recomputed from the group's own observations, with
  the *recomputed* values of earlier steps;
* ``own``: the same step recomputed from the group's own *reported* values of
  earlier steps (where they reported them);
* the verdict: ``correct`` when the reported value matches ``expected``
  within the step's computation tolerance (or matches ``own`` when every
  earlier step it uses was itself correct: rounding of correct values);
  ``carried`` when it is wrong but matches ``own`` after an earlier mistake
  (error carried forward, ``carried_fraction`` of the points); ``missing``
  when nothing usable was reported or nothing can be checked; else ``wrong``,
  with a diagnosis when one of the step's known mistakes (or a generic unit
  slip) reproduces the value within the tolerance.  Nothing is guessed.

Accuracy judges the radius recomputed from the group's own observations
(their field work, not their arithmetic) against the reference.

The result is a plain dict, ready for ``results.json``: values in the step's
display unit.
"""

from __future__ import annotations

import decimal
import itertools
import math
import re
from dataclasses import dataclass, field

import numpy as np

from labcheck.model.chain import UNBOUNDED, Chain, evaluate_chain, evaluate_step, finite, quiet
from labcheck.model.uncertainty import propagate
from labcheck.reductions.stats import grubbs_test, scatter_test
from labcheck.methods import Method, Step
from labcheck.model.spec import LabSpec, StepRule
from labcheck.reading.submission import Reading, Submission
from labcheck.base.phrase import DMS, Number, ObsValue, Percent, StepDecimals, StepValue, Value, phrase
from labcheck.base.units import canonical_unit, dms_seconds_decimals, from_si, half_unit_si, parse_quantity, to_si

__all__ = ["Chain", "evaluate_chain", "method_inputs", "grade_submission", "unreadable_record", "missing_record",
           "GENERIC_SLIPS", "safe_id", "StepTrace", "judge", "rejudge", "step_points"]


from labcheck.methods.slips import _FT, GENERIC_SLIPS  # noqa: E402 (the catalogue, which the diagnosis tries)


OUTLIER_INSTRUMENT_SIGMAS = 3.0  # an outlier must also lie beyond 3σ of the instrument (common practice)

_SAFE_ID = re.compile(r"[^A-Za-z0-9_.-]+")


def safe_id(text: str) -> str:
    """A file-name-safe id: letters, digits, ``_ . -`` only, no leading dot."""
    s = _SAFE_ID.sub("_", text.strip()).strip("._") or "unnamed"
    return s[:80]


def _decimals(rule: StepRule, basis_si: float | None) -> StepDecimals:
    """How the step's values are shown (worded by the report layer): its tolerance around ``basis_si``."""
    tol = rule.tolerance
    return StepDecimals(rule.unit, rule.step.kind, tol.relative, tol.absolute_si, basis_si)


def _step_value(value_si: float | None, rule: StepRule, basis_si: float | None) -> StepValue:
    """A step's value, shown in its unit with the decimals its tolerance needs around ``basis_si``."""
    return StepValue(value_si, _decimals(rule, basis_si))


def _display(value_si: float | None, unit: str, kind: str) -> float | None:
    """An SI value in the display unit (None stays None)."""
    return None if value_si is None else float(from_si(value_si, unit, kind))


def _gather_observations(method: Method, sub: Submission, spec: LabSpec):
    """Observation name -> SI value (array for repeated ones); and name -> reason it is missing.

    Also returns, per used observation, the item key and its readings (for
    the sheet), and notes for the quality section.
    """
    values: dict = {}
    missing: dict[str, str] = {}
    used: dict[str, tuple[str, list]] = {}
    notes: list[str] = []
    for o in method.observations:
        found = None
        for key in (f"{method.id}.{o.name}", o.name):
            if sub.observations.get(key):
                found = (key, sub.observations[key], None)
                break
        if found is None:
            for alt in o.alternatives:
                for key in (f"{method.id}.{alt.name}", alt.name):
                    if sub.observations.get(key):
                        found = (key, sub.observations[key], alt.transform)
                        break
                if found:
                    break
        if found is None and o.default is not None:
            values[o.name] = _default_si(o)
            notes.append(f"{o.label}: not given; the default {o.default} is used.")
            continue
        if found is None:
            tried = [o.name] + [a.name for a in o.alternatives]
            bad = [k for k in sub.bad_items if k.split(".")[-1] in tried]
            missing[o.name] = (
                f"{o.label} ({o.name}): the row(s) given could not be read (see the notes on your rows)"
                if bad
                else f"{o.label} ({o.name}) was not given"
            )
            continue
        key, readings, transform = found
        arr = np.array([r.si for r in readings], dtype=float)
        if transform is not None:
            try:
                with np.errstate(all="ignore"):
                    arr = np.asarray(transform(arr, values), dtype=float)
            except (ValueError, KeyError) as exc:
                reason = str(exc) if isinstance(exc, ValueError) else f"it needs {exc.args[0]}"
                missing[o.name] = f"{o.label} ({o.name}) from {key}: {reason}"
                continue
            if not np.all(np.isfinite(arr)):
                missing[o.name] = f"{o.label} ({o.name}) from {key}: the values give no finite {o.label}"
                continue
        if o.repeated:
            values[o.name] = arr
        else:
            values[o.name] = float(arr.mean())
            if len(arr) > 1:
                notes.append(phrase("{label}: {n} values were given; their mean {mean} is used.", label=o.label,
                                    n=len(arr), mean=_observation_value(o, values[o.name], spec)))
        used[o.name] = (key, readings)
    return values, missing, used, notes


def _default_si(o) -> float:
    """An observation's documented default (``"10 C"``, ``"south"``) in SI."""
    if o.kind == "choice":
        return float(o.choices.index(o.default))
    number, unit = parse_quantity(o.default)
    return float(to_si(number, unit, o.kind))


def _observation_value(o, value_si: float, spec: LabSpec, digits: int = 6) -> ObsValue:
    """An observation's value as the report layer shows it (coordinates to 0.000001° or better)."""
    unit = spec.observations[o.name].unit if o.name in spec.observations else o.unit
    return ObsValue(value_si, unit, o.kind, o.hemisphere, tuple(o.choices), digits)


def method_inputs(method: Method, sub: Submission, spec: LabSpec) -> tuple[dict, dict, dict]:
    """A submission's observations and constants for ``method`` (SI), and why any are missing."""
    obs, missing, _, _ = _gather_observations(method, sub, spec)
    consts, _, _ = _constants(method, sub, spec)
    return obs, consts, missing


def _constants(method: Method, sub: Submission, spec: LabSpec) -> tuple[dict, dict, list[str]]:
    """The spec's constants, with any a group gave for itself (its own tape); and notes saying so."""
    consts = dict(spec.constants_si)
    texts = dict(spec.constants_text)
    notes = []
    for c in method.constants:
        readings = sub.observations.get(c.name)
        if c.overridable and readings:
            written = f"{readings[-1].text} {readings[-1].unit}".strip()
            consts[c.name] = readings[-1].si
            texts[c.name] = f"{written} (yours)"
            notes.append(f"{c.label}: your own value {written} is used instead of the lab's "
                         f"{spec.constants_text.get(c.name, 'value')}.")
    return consts, texts, notes


def transposed_digits(written: str, right_value: float) -> bool:
    """True when ``written`` is ``right_value`` (at the same decimals) with two adjacent digits swapped."""
    s = written.strip().lstrip("+")
    if not re.fullmatch(r"-?\d+(\.\d+)?", s):
        return False
    decimals = len(s.split(".")[1]) if "." in s else 0
    t = f"{right_value:.{decimals}f}"
    a, b = s.replace("-", "").replace(".", ""), t.replace("-", "").replace(".", "")
    if len(a) != len(b) or s.startswith("-") != t.startswith("-") or a == b:
        return False
    diff = [i for i in range(len(a)) if a[i] != b[i]]
    return len(diff) == 2 and diff[1] == diff[0] + 1 and a[diff[0]] == b[diff[1]] and a[diff[1]] == b[diff[0]]


_TRANSPOSED = {
    "id": "digits_transposed",
    "label": "two digits swapped",
    "text": "Your value is the right one with two neighbouring digits swapped: a slip when copying a number.",
}


def _diagnose(rule: StepRule, spec: LabSpec, reported: float, ref_inputs: dict, own_inputs: dict | None,
              expected: float | None, own: float | None, written: tuple[str, str] | None = None) -> dict | None:
    """Name the known mistake that reproduces ``reported`` within tolerance, or None.

    ``written`` is the value and unit as the student wrote them, for slips of the pen.
    """
    step = rule.step
    tol = rule.tolerance
    bases = [("ref", ref_inputs, expected)]
    if own_inputs is not None:
        bases.append(("own", own_inputs, own))
    for variant in step.variants:
        for _, inputs, correct in bases:
            if any(n not in inputs for n in step.inputs):
                continue
            with np.errstate(all="ignore"):
                try:
                    value = finite(variant.compute(step, inputs))
                except (ValueError, ZeroDivisionError, OverflowError):
                    value = None
            # Name a mistake only when it is told apart from the right value on the same inputs.
            if value is not None and tol.matches(reported, value) and not (
                correct is not None and tol.matches(value, correct)
            ):
                return {
                    "id": variant.id,
                    "label": variant.label,
                    "text": spec.mistakes.get(variant.id, variant.explanation),
                }
    for slip in GENERIC_SLIPS.get(step.kind, ()) + GENERIC_SLIPS["any"]:
        for _, _, target in bases:
            if target is None or target == 0:
                continue
            slipped = target * slip.factor
            # A slip is evidence only when it is told apart from the right value and from zero
            # (a small correction scaled by 1/1000 is indistinguishable from a blank 0).
            if tol.matches(slipped, target) or tol.matches(slipped, 0.0):
                continue
            if tol.matches(reported, slipped):
                return {"id": slip.id, "label": slip.label, "text": spec.mistakes.get(slip.id, slip.explanation)}
    if written is not None:
        text, unit = written
        for _, _, target in bases:
            if target is not None and transposed_digits(text, float(from_si(target, unit, step.kind))):
                return dict(_TRANSPOSED, text=spec.mistakes.get("digits_transposed", _TRANSPOSED["text"]))
    return None


@dataclass
class _MethodRun:
    """What grading one method of one submission accumulates, step by step."""

    method: Method
    spec: LabSpec
    obs: dict  # observation name -> SI value (array for repeated observations)
    missing_obs: dict[str, str]  # observation name -> why it is missing
    consts: dict  # constant name -> SI value (the spec's, or the group's own)
    consts_text: dict  # constant name -> as shown
    expected: dict = field(default_factory=dict)  # step id -> recomputed SI value or None
    missing_reasons: dict[str, tuple[str, ...]] = field(default_factory=dict)  # step id -> why not recomputable

    @property
    def why_missing(self) -> dict[str, str]:
        """Step id -> the reasons it cannot be recomputed, as one sentence (each reason once)."""
        return {k: "; ".join(v) for k, v in self.missing_reasons.items()}
    reported_si: dict[str, float] = field(default_factory=dict)  # step id -> the student's value
    verdicts: dict[str, str] = field(default_factory=dict)
    sigmas: dict = field(default_factory=dict)  # step id -> propagated standard deviation (SI)
    own_values: dict = field(default_factory=dict)  # step id -> recomputed from the student's own earlier results
    reported_readings: dict = field(default_factory=dict)  # step id -> the Reading the student wrote
    traces: list = field(default_factory=list)  # StepTrace per step, in order (for labcheck tune)

    def own_inputs(self, step: Step, ref_inputs: dict) -> dict | None:
        """The step's inputs with the student's own reported earlier values, if they reported any."""
        upstream = self.method.upstream_steps(step)
        if not any(u in self.reported_si for u in upstream):
            return None
        own = dict(ref_inputs)
        for u in upstream:
            if u in self.reported_si:
                own[u] = self.reported_si[u]
        return own if all(n in own for n in step.inputs) else None


@dataclass
class StepTrace:
    """What a step's verdict depends on, kept so that ``labcheck tune`` can re-judge it under another
    tolerance without regrading (see :func:`judge`).  Values in SI."""

    key: str
    step_id: str
    points: float  # the spec's points for the step
    reported: float | None
    expected: float | None
    unbounded: bool  # the recomputation is +infinite (runs that agree to the last digit)
    widen: float
    candidates: object  # ((value, set of earlier steps whose own value it used), ...), or a function giving them
    reported_steps: frozenset  # the method's steps the student reported
    floor: object = None  # None, a function giving the written-value floor, or it: see written_floor()
    _settled: bool = False  # settle() was called: candidates are held as arrays once first needed
    _values: object = None  # then: every candidate's value, as a numpy array
    _used: tuple = ()  # then: every candidate's set of earlier steps

    def honest_values(self):
        """The candidates, computed on first need (most steps match the recomputed value and never need them),
        and each only when the one before it did not match (see :class:`_Memo`)."""
        if callable(self.candidates):
            self.candidates = _Memo(self.candidates())
        return self.candidates

    def written_floor(self):
        """When the student's earlier results as written make this step unbounded somewhere within half a
        unit of their last digits (where the student's unrounded values must lie; a ratio over the
        difference of two lengths written alike): (low, the earlier steps used), low being the smallest value
        found, or None when none is finite; any value from low up is then honest.  None otherwise."""
        if callable(self.floor):
            self.floor = self.floor()
        return self.floor

    def settle(self) -> None:
        """From now on, when the candidates are first needed, compute them all and hold them as an array
        (``labcheck tune`` re-judges each step many times: one vectorised test per judgement instead of a
        loop over the candidates)."""
        self._settled = True

    def first_honest(self, tol, reported: float, widen: float):
        """(value, set of earlier steps it used) of the first candidate within ``tol``, or None."""
        if self._settled and self._values is None:
            values = tuple(self.honest_values())
            self._values = np.array([v for v, _ in values], dtype=float)
            self._used = tuple(u for _, u in values)
        if self._values is not None:
            i = tol.first_match(reported, self._values, widen)
            return None if i < 0 else (self._values[i], self._used[i])
        for value, used in self.honest_values():
            if tol.matches(reported, value, widen):
                return value, used
        return None


class _Memo:
    """A sequence computed as far as it is read, and kept: :func:`judge` stops at the first honest value
    that matches (the rest are never computed), and ``labcheck tune`` reads on where it needs to."""

    def __init__(self, items):
        self._items = iter(items)
        self._done: list = []

    def __iter__(self):
        i = 0
        while True:
            if i < len(self._done):
                yield self._done[i]
            else:
                item = next(self._items, _END)
                if item is _END:
                    return
                self._done.append(item)
                yield item
            i += 1


_END = object()


def judge(tol, trace: StepTrace, verdicts: dict) -> tuple[str, frozenset | None]:
    """The verdict of a step under tolerance ``tol``, given the verdicts of the earlier steps: the grading
    rule itself (``_verdict`` words it; ``tune`` re-applies it), and the earlier steps a match used."""
    rep, exp, widen = trace.reported, trace.expected, trace.widen
    if rep is None:
        return "missing", None
    if exp is not None and tol.matches(rep, exp, widen):
        return "correct", None
    if exp is None and trace.unbounded and rep > 0:
        return "correct", None
    found = trace.first_honest(tol, rep, widen)
    if found is not None:
        return _carried_or_correct(trace, found[1], verdicts), found[1]
    floor = trace.written_floor()
    if floor is not None and rep > 0 and (floor[0] is None or rep >= floor[0] or tol.matches(rep, floor[0], widen)):
        return _carried_or_correct(trace, floor[1], verdicts), floor[1]
    return ("missing" if exp is None else "wrong"), None


def rejudge(trace: StepTrace, judged: tuple[str, frozenset | None], verdicts: dict) -> str:
    """The verdict :func:`judge` gives under the same tolerance as ``judged`` (its earlier answer), when only
    the earlier steps' verdicts have changed: which value matched depends on the tolerance alone, so only
    whether the earlier steps it used are now wrong can change (``labcheck tune`` sweeping an earlier step)."""
    verdict, used = judged
    return verdict if used is None else _carried_or_correct(trace, used, verdicts)


def step_points(spec: LabSpec, points: float, verdict: str) -> float:
    """A step's points for its verdict: all when correct, the spec's ``carried_fraction`` when carried,
    none otherwise (the one rule, for the record and for ``labcheck tune``)."""
    return round(points * {"correct": 1.0, "carried": spec.carried_fraction}.get(verdict, 0.0), 3)


def _carried_or_correct(trace: StepTrace, used, verdicts: dict) -> str:
    """A match that used the student's own earlier values is carried when any of them was wrong."""
    wrong = [u for u in used if verdicts.get(u) in ("wrong", "carried") and u in trace.reported_steps]
    return "carried" if wrong else "correct"


def _verdict(run: _MethodRun, rule: StepRule, rep: Reading | None, exp, own, ref_inputs, own_inputs, sub: Submission,
             widen: float = 0.0, widen_text: str = ""):
    """(verdict, explanation, diagnosis) for one step; see the module docstring for the rules.

    ``widen`` [SI] is added to the spec's tolerance for observations converted by hand and the
    method's model error (``widen_text`` says so on the sheet).
    """
    step, tol = rule.step, rule.tolerance
    tol_text = phrase("{tol}{widen}", tol=tol.text, widen=widen_text)
    if rep is None:
        run.traces.append(StepTrace(rule.key, step.id, rule.points, None, exp, False, widen, (), frozenset()))
        also = ""
        if exp is None and step.id in run.why_missing:
            also = f" It cannot be recomputed from your observations either: {run.why_missing[step.id]}."
        if rule.key in sub.bad_items:
            return "missing", "Your value could not be read (see the notes on your rows)." + also, None
        return "missing", "Not reported." + also, None
    trace = StepTrace(rule.key, step.id, rule.points, rep.si, exp, run.missing_reasons.get(step.id) == (UNBOUNDED,),
                      widen, lambda: _candidates(run, step, ref_inputs), frozenset(run.reported_si),
                      floor=lambda: _written_floor(run, step, ref_inputs))
    run.traces.append(trace)
    verdict, matched = judge(tol, trace, run.verdicts)
    if verdict == "correct" and matched is None and exp is not None:
        return "correct", phrase("Matches the value recomputed from your observations (tolerance {tol}).",
                                 tol=tol_text), None
    if verdict == "correct" and matched is None:
        return "correct", ("Recomputed from your observations this value is unbounded (the quantities it divides by "
                           "agree to the last digit), so any positive value you report is consistent with them."), None
    if verdict in ("correct", "carried") and matched is not None and trace.first_honest(tol, rep.si, widen) is None:
        # Matched by the floor: the student's earlier values as written make this step unbounded.
        low, _ = trace.written_floor()
        labels = [run.method.step(u).label for u in step.inputs if u in matched]
        names = " and ".join(labels) if len(labels) <= 2 else ", ".join(labels[:-1]) + " and " + labels[-1]
        basis = exp if exp is not None else (low if low is not None else rep.si)
        bound = "any positive value" if low is None else phrase("any value from {lo} up",
                                                                lo=_step_value(low, rule, basis))
        text = phrase("Your {names} as written cannot be told apart at the digits you wrote, so this value "
                      "follows from them only as a bound: {bound} is consistent with them (tolerance {tol}).",
                      names=names, bound=bound, tol=tol_text)
        if verdict == "carried":
            text = phrase("{text} Some of those values were wrong: error carried forward.", text=text)
        return verdict, text, None
    if verdict == "correct":
        if exp is None:
            used = ", ".join(run.method.step(u).label for u in sorted(matched)) or "earlier steps"
            return "correct", phrase(
                "Follows correctly from your own value of {used} (tolerance {tol}); it cannot be recomputed "
                "from your observations: {why}.", used=used, tol=tol_text,
                why=run.why_missing.get(step.id, "inputs missing")), None
        return "correct", phrase(
            "Follows from your own earlier values, which were correct within their tolerance (tolerance {tol}).",
            tol=tol_text), None
    if verdict == "carried":
        wrong_upstream = [u for u in sorted(matched) if run.verdicts.get(u) in ("wrong", "carried") and u in run.reported_si]
        names = ", ".join(run.method.step(u).label for u in wrong_upstream)
        return "carried", (
            f"Differs from the recomputed value, but follows correctly from your own value of {names}: "
            "error carried forward."
        ), None
    if exp is None:
        return "missing", f"Cannot be checked: {run.why_missing.get(step.id, 'inputs missing')}.", None
    diff = abs(rep.si - exp)
    rel_pct = diff / abs(exp) * 100 if exp else None
    rel = "" if rel_pct is None else phrase(" ({pct})", pct=Percent(rel_pct))
    explanation = phrase("Differs from the recomputed value by {diff}{rel}; the tolerance is {tol}.",
                         diff=_step_value(diff, rule, exp), rel=rel, tol=tol_text)
    diagnosis = _diagnose(rule, run.spec, rep.si, ref_inputs, own_inputs, exp, own, (rep.text, rep.unit))
    if diagnosis is None:
        explanation = phrase("{text} No known mistake reproduces your value: compare your working with the formula "
                             "and the inputs shown.", text=explanation)
    return "wrong", explanation, diagnosis


def _hand_converted(method: Method, spec: LabSpec, used: dict, sub: Submission) -> tuple[dict, dict]:
    """Observations written in another unit than the lab's, which students may convert by hand: name ->
    half a unit in the last written digit [SI], and name -> the unit it was written in."""
    bounds, units = {}, {}
    for name, (_, readings) in used.items():
        o = method.observation(name)
        if o.kind in ("choice", "datetime"):
            continue
        lab_unit = canonical_unit(spec.observations[name].unit)
        converted = [r for r in readings if canonical_unit(r.unit) != lab_unit and not {r.unit, lab_unit} <= {"deg", "dms"}]
        halves = [half_unit_si(r.text, r.unit, o.kind) for r in converted]
        halves = [h for h in halves if h]
        if halves:
            bounds[name] = max(halves)
            units[name] = canonical_unit(converted[0].unit)
    return bounds, units


def _rounding_allowance(run: _MethodRun, rule: StepRule, converted: dict) -> tuple[float, str]:
    """How far a step may honestly differ beyond its tolerance [SI], and the words for the sheet.

    (a) Observations written in another unit than the lab's are converted by hand: half a unit in the
    last digit written, carried through the chain by first-order propagation (GUM, JCGM 100:2008,
    5.1.2), summed as a worst case.  ``converted`` holds each such observation's effect on this step,
    for those the step depends on and that the student wrote in another unit than they reported the
    step in (a group that taped in feet and reported in feet converted nothing by hand).  Earlier
    results need no allowance: the student's values as written, and as they would be unrounded, are
    tried exactly (see :func:`_candidates`), and where what they wrote leaves a step unbounded the
    written-value floor applies (see :func:`_written_floor`).  (b) The reference reduction's model error
    (``Step.model_error_si``).
    """
    step = rule.step
    total = sum(converted.values())
    reasons = [f"your {run.method.observation(name).label} (converted by hand)" for name in converted]
    if step.model_error_si:
        total += step.model_error_si
        reasons.append("the reference method's own model error")
    if not total or not math.isfinite(total):
        return 0.0, ""
    base = rule.tolerance.allowed(run.expected.get(step.id) or 0.0)
    if total < 0.05 * base:  # negligible beside the tolerance: not worth a word on the sheet
        return total, ""
    words = "the method's model error" if not converted else f"the precision of {', '.join(reasons)} as written"
    return total, phrase(", widened by {by} for {words}", by=Value(total, rule.unit, step.kind, 2), words=words)


_MAX_COMBINATIONS = 81


_PLAIN_DECIMAL = re.compile(r"^[+-]?\d+(?:\.(\d+))?$")


def _box_corner(run: _MethodRun, u: str, half: float, sign: int) -> float:
    """The written value of earlier step ``u`` moved by half a unit of its last digit (``half``, SI), in SI.

    A plain decimal is moved in decimal and then converted, so that two values written alike land on the
    same float (181.186 + 0.0005 and 181.187 - 0.0005 are both 181.1865, and their difference exactly 0,
    where binary arithmetic leaves a few units in the last place and a finite but meaningless ratio)."""
    reading = run.reported_readings.get(u)
    m = _PLAIN_DECIMAL.match(reading.text.strip()) if reading is not None else None
    if m is not None:
        try:
            written_half = decimal.Decimal(5).scaleb(-len(m.group(1) or "") - 1)  # in the written unit
            moved = float(decimal.Decimal(reading.text.strip()) + sign * written_half)
            value = float(to_si(moved, reading.unit, run.method.step(u).kind))
            if math.isfinite(value) and abs(value - run.reported_si[u]) <= 2 * half:
                return value
        except (ArithmeticError, ValueError, TypeError, KeyError):
            pass
    return run.reported_si[u] + sign * half


def _written_floor(run: _MethodRun, step: Step, ref_inputs: dict):
    """See :meth:`StepTrace.written_floor`.  The written values are the student's own unrounded ones rounded,
    so theirs lie within half a unit of them: the step is evaluated at the written values and at the 2**k
    corners of that box (k <= 6 written inputs).

    Unbounded at the written values or at a corner: every value from the smallest positive corner value up
    is honest (near the singular point the step grows without bound, and the box minus that point is
    connected for k >= 2, each half of it holding a corner for k = 1).  Bounded on the box: None, for the
    spec's tolerance is meant to cover rounding there (widening it by the box let the catalogue's
    inverted sea-level factor pass, and a dip mean written "6.0" would make a box of 0.1 arcmin)."""
    upstream = [u for u in step.inputs if u in run.method.step_ids]
    halves = {u: half_unit_si(r.text, r.unit, run.method.step(u).kind) for u in upstream
              if (r := run.reported_readings.get(u)) is not None}
    written = [u for u in upstream if halves.get(u)]
    if not written or len(written) > 6:
        return None
    inputs = {**ref_inputs, **{u: run.reported_si[u] for u in upstream if u in run.reported_si}}
    if any(n not in inputs or inputs[n] is None for n in step.inputs):
        return None
    unbounded = evaluate_step(step, inputs)[1] == UNBOUNDED
    corners = []
    for signs in itertools.product((-1, 1), repeat=len(written)):
        value, why = evaluate_step(step, {**inputs, **{u: _box_corner(run, u, halves[u], sign)
                                                       for u, sign in zip(written, signs)}})
        if why == UNBOUNDED:
            unbounded = True
        elif value is None:
            return None  # the box reaches where the step has no value: nothing safe to say
        else:
            corners.append(value)
    if unbounded:
        positive = [v for v in corners if v > 0]
        return (min(positive) if positive else None), frozenset(written)
    return None  # bounded on the box: the spec's tolerance is meant to cover rounding there


def _candidates(run: _MethodRun, step: Step, ref_inputs: dict):
    """The step's honest values from the student's own earlier results, each with the earlier steps whose
    own value it used: (value, set of step ids), in a fixed order.

    For each earlier result the step uses, the student may have carried the recomputed value, the value
    as they wrote it, or their own unrounded value (recomputed from their own written inputs); every
    combination other than all-recomputed is tried (at most 81).  The options are taken now; each value
    is computed as it is read (an iterator).
    """
    upstream = [n for n in step.inputs if n in run.method.step_ids]
    if any(n not in ref_inputs and n not in run.reported_si for n in step.inputs):
        return iter(())  # an observation or constant is missing: nothing to recompute from
    options = []
    for u in upstream:
        opts = [(ref_inputs[u], False)] if u in ref_inputs else []
        for v in (run.reported_si.get(u), run.own_values.get(u)):
            if v is not None and all(abs(v - o[0]) > 0 for o in opts):
                opts.append((v, True))
        options.append(opts)
    if not upstream:
        return iter(())
    return _combinations(step, dict(ref_inputs), upstream, options)


def _combinations(step: Step, ref_inputs: dict, upstream: list, options: list):
    for n, combo in enumerate(itertools.product(*options)):
        if n >= _MAX_COMBINATIONS:
            break
        if not any(own for _, own in combo):
            continue
        inputs = {**ref_inputs, **{u: v for u, (v, _) in zip(upstream, combo)}}
        value = evaluate_step(step, inputs)[0]  # enters numpy's error state itself when read outside grading
        if value is not None:
            yield value, {u for u, (_, own) in zip(upstream, combo) if own}


def _inputs_shown(run: _MethodRun, step: Step) -> list[dict]:
    """The step's inputs as the sheet shows them: recomputed value, and the student's own where different."""
    method, spec = run.method, run.spec
    shown = []
    for name in step.inputs:
        entry = {"name": name}
        if name in method.step_ids:
            s2 = method.step(name)
            r2 = spec.steps[spec.step_key(method.id, name)]
            yours = run.reported_si.get(name)
            exp2 = run.expected.get(name)
            decimals = _decimals(r2, exp2 if exp2 is not None else yours)
            entry.update(label=s2.label, origin="earlier step", value=StepValue(exp2, decimals),
                         yours=StepValue(yours, decimals) if yours is not None else None)
        elif name in run.consts:
            entry.update(label=method.constant(name).label, origin="constant", value=run.consts_text[name], yours=None)
        else:
            o = method.observation(name)
            val = run.obs.get(name)
            if val is None:
                text = "missing"
            elif np.ndim(val):
                text = f"{len(val)} values" if not o.spread else f"{len(val)} readings"
            else:
                text = _observation_value(o, val, spec)
            entry.update(label=o.label, origin="observation", value=text, yours=None)
        shown.append(entry)
    return shown


def _accuracy(run: _MethodRun, sub: Submission) -> tuple[dict | None, list[dict]]:
    """The recomputed result against the method's reference, under the spec's accuracy rule.

    Also returns notes for the instructor comparing a group's observation with
    the reference's own value of it (e.g. measured and ellipsoid distances).
    """
    method, spec = run.method, run.spec
    reference = method.reference
    if not spec.judges_accuracy(method):
        return None, []
    rule = spec.steps[spec.step_key(method.id, method.result_step)]
    kind = rule.step.kind
    value = run.expected.get(method.result_step)
    acc = spec.accuracy
    ref_inputs = {}
    missing = [run.missing_obs.get(n, f"{n} was not given") for n in reference.inputs
               if n not in run.obs and n not in run.consts]
    for n in reference.inputs:
        ref_inputs[n] = run.obs[n] if n in run.obs else run.consts.get(n)
    ref_out = None
    if not missing:
        with np.errstate(all="ignore"):
            try:
                ref_out = reference.func(*(ref_inputs[n] for n in reference.inputs))
            except ValueError as exc:
                missing.append(str(exc))
    ref = finite(ref_out["value"]) if ref_out else None
    details, notes = [], []
    if ref_out:
        for key, label, k, unit in reference.extras:
            details.append({"label": label, "value": Value(ref_out[key], unit, k, 8)})
        for key, obs_name in reference.compare:
            if obs_name in run.obs and key in ref_out:
                o = method.observation(obs_name)
                unit = spec.observations[obs_name].unit
                mine, theirs = float(np.mean(run.obs[obs_name])), float(ref_out[key])
                notes.append({
                    "method": method.id, "observation": obs_name, "ok": True,
                    "text": phrase("{label}: measured {mine}; the stations' coordinates give {theirs} on the "
                                   "ellipsoid ({pct} %).", label=o.label, mine=Value(mine, unit, o.kind, 6),
                                   theirs=Value(theirs, unit, o.kind, 6),
                                   pct=Number(100 * (mine - theirs) / theirs, "+.2f")),
                })
    if value is None or ref is None:
        frac, err_pct = 0.0, None
        why = run.why_missing.get(method.result_step) if value is None else "; ".join(missing)
        text = phrase("Cannot be judged: {why}.", why=why or "the result could not be recomputed")
    else:
        sigma = run.sigmas.get(method.result_step)
        frac = acc.score_fraction(value, ref, sigma)
        if kind == "angle":  # a percentage of a latitude means nothing: give the difference
            err_pct = None
            text = phrase("Your observations give {value}, {off} {side} the {ref_label} {ref}.",
                          value=Value(value, rule.unit, kind, 7), off=Value(abs(value - ref), rule.unit, kind, 2),
                          side="above" if value > ref else "below", ref_label=reference.label,
                          ref=Value(ref, rule.unit, kind, 7))
        else:
            err_pct = 100.0 * (value - ref) / ref
            text = phrase("Your observations give {value}, {pct} {side} the {ref_label} {ref}.",
                          value=Value(value, rule.unit, kind, 6), pct=Percent(abs(err_pct)),
                          side="above" if err_pct > 0 else "below", ref_label=reference.label,
                          ref=Value(ref, rule.unit, kind, 8))
    sigma = run.sigmas.get(method.result_step)
    if sigma and value is not None and ref is not None:
        text = phrase("{text} From your instruments' precision the result is uncertain by ± {pm} (one standard "
                      "deviation); the difference is {off} σ.", text=text, pm=Value(sigma, rule.unit, kind, 2),
                      off=Number(abs(value - ref) / sigma, ".1f"))
    elif acc.kind == "sigma" and value is not None:
        text = phrase("{text} No uncertainty could be propagated, so the sigma rule cannot be applied.", text=text)
    diagnosis = None
    if value is not None and ref is not None and frac < 1.0:
        diagnosis = _observation_unit_slip(run, ref, sigma)
        if diagnosis:
            text = phrase("{text} Likely cause: {cause}", text=text, cause=diagnosis["text"])
    rep = sub.results.get(rule.key)
    return {
        "method": method.id,
        "step": rule.key,
        "sigma": _display(sigma, rule.unit, kind) if sigma else None,
        "sigmas_off": round(abs(value - ref) / sigma, 3) if sigma and value is not None and ref is not None else None,
        "unit": rule.unit,
        "reference_label": reference.label,
        "reference": _display(ref, rule.unit, kind),
        "reference_details": details,
        "reference_explanation": reference.explanation,
        "recomputed": _display(value, rule.unit, kind),
        "reported": _display(rep.si, rule.unit, kind) if rep is not None else None,
        "error_pct": round(err_pct, 4) if err_pct is not None else None,
        "difference": _display(value - ref, rule.unit, kind) if value is not None and ref is not None else None,
        "rule": acc.text,
        "points": round(acc.points * frac, 3),
        "max_points": acc.points,
        "explanation": text,
        "diagnosis": diagnosis,
    }, notes


_CHECK_NOTES = {"noon_timing", "face_pair_closure"}  # method notes that count as quality checks

# Unit slips in an observation that show only in the result: (kind, factor the written value is of the
# right one, id, words).  Feet and metres (0.3048 m exactly), km and m, degrees, arcminutes and radians.
_OBSERVATION_SLIPS = (
    ("length", 1 / _FT, "observation_feet_as_metres", "written in feet but read as metres (×3.28)"),
    ("length", _FT, "observation_metres_as_feet", "written in metres but converted as if in feet (×0.3048)"),
    ("length", 1000.0, "observation_metres_for_km", "written in metres where the unit says km (×1000)"),
    ("length", 0.001, "observation_km_for_metres", "written in km where the unit says m (×1/1000)"),
    ("angle", 60.0, "observation_arcmin_for_degrees", "written in arcminutes where the unit says degrees (×60)"),
    ("angle", 1 / 60.0, "observation_degrees_for_arcmin", "written in degrees where the unit says arcminutes (×1/60)"),
    ("angle", 180 / math.pi, "observation_degrees_for_radians", "in degrees where radians were expected (×57.3)"),
    ("angle", math.pi / 180, "observation_radians_for_degrees", "in radians where degrees were expected (×1/57.3)"),
)


def _observation_unit_slip(run: _MethodRun, ref: float, sigma: float | None) -> dict | None:
    """An observation whose unit slip alone explains a result far from the reference, or None.

    Each numeric observation is undone by each slip of its kind and the method recomputed: a slip is
    named only when exactly one (observation, slip) brings the result within the full-points band.
    """
    method, acc = run.method, run.spec.accuracy
    hits = []
    for o in method.observations:
        if o.name not in run.obs or o.kind not in ("length", "angle"):
            continue
        for kind, factor, slip_id, words in _OBSERVATION_SLIPS:
            if kind != o.kind:
                continue
            obs = {**run.obs, o.name: np.asarray(run.obs[o.name], dtype=float) / factor if o.repeated
                   else run.obs[o.name] / factor}
            fixed = evaluate_chain(method, obs, run.consts).expected.get(method.result_step)
            if fixed is not None and acc.score_fraction(fixed, ref, sigma) >= 1.0:
                hits.append((o, slip_id, words))
    if len(hits) != 1:
        return None
    o, slip_id, words = hits[0]
    return {"id": slip_id, "observation": o.name,
            "label": f"{o.label} {words.split(' (')[0]}",
            "text": f"your {o.label} ({o.name}) looks {words}: read that way, your result lands within the "
                    "full-points band. Check the unit you wrote it in."}


def _reported_sigmas(run: "_MethodRun", sub: Submission) -> list[dict]:
    """Grade the uncertainties students report (``<step>_sigma``) against the propagated ones."""
    spec, method = run.spec, run.method
    out = []
    for key in spec.reported_sigma:
        rule = spec.steps[key]
        if rule.method.id != method.id:
            continue
        item = f"{key}_sigma"
        rep = sub.results.get(item)
        prop = run.sigmas.get(rule.step.id)
        f = spec.sigma_within_factor
        dec = _decimals(rule, prop)
        if rep is None:
            verdict, text = "missing", "Your uncertainty for this step was not reported."
        elif not prop:
            verdict, text = "missing", "No uncertainty could be propagated for this step to compare yours with."
        else:
            ratio = abs(rep.si) / prop
            ok = 1 / f <= ratio <= f
            verdict = "correct" if ok else "wrong"
            text = phrase("Your uncertainty is {ratio} times the one propagated from the instruments' standard "
                          "deviations ({prop}); the lab accepts a factor of {f} either way.{advice}",
                          ratio=Number(ratio, ".2g"), prop=StepValue(prop, dec), f=Number(f, "g"),
                          advice="" if ok else " Propagate each reading's uncertainty through the formula, and "
                                               "remember that the mean of n readings has σ/√n.")
        out.append({
            "id": item, "method": method.id, "step": f"{rule.step.id}_sigma", "label": f"your uncertainty of the {rule.step.label}",
            "unit": rule.unit, "formula": "σ² = Σ (∂f/∂xᵢ · σᵢ)²", "source": "first-order propagation (GUM, JCGM 100:2008, §5.1)",
            "inputs": [], "expected": _display(prop, rule.unit, rule.step.kind) if prop else None,
            "reported": _display(abs(rep.si), rule.unit, rule.step.kind) if rep else None,
            "reported_as": f"{rep.text} {rep.unit}".strip() if rep else None, "reported_row": rep.row if rep else None,
            "carried_expected": None, "tolerance": phrase("within a factor {f}", f=Number(f, "g")), "sigma": None,
            "decimals": dec,
            "verdict": verdict, "points": spec.reported_sigma_points if verdict == "correct" else 0.0,
            "max_points": spec.reported_sigma_points, "diagnosis": None, "explanation": text,
        })
    return out


def _quality(method: Method, spec: LabSpec, used: dict, notes: list[str], expected: dict) -> list[dict]:
    """Field-data quality: checks (scored) and notes (not scored).

    Checks: enough readings; the readings' scatter against the instrument's σ
    (two-sided chi-square test at the spec's α); outliers by Grubbs' test,
    flagged and never dropped; forward/back precision against the spec's standard.
    """
    q = spec.quality
    out = []

    def check(name, ok, text, check_id, **numbers):
        out.append({"method": method.id, "observation": name, "ok": ok, "text": text, "id": check_id, "check": True,
                    **numbers})

    for name, (_, readings) in used.items():
        o = method.observation(name)
        rule = spec.observations[name]
        n = len(readings)
        if o.repeated or rule.min_readings > 1:
            ok = n >= rule.min_readings
            check(name, ok, f"{o.label}: {n} reading{'s' if n != 1 else ''}"
                  + ("" if ok else f"; the lab asks for at least {rule.min_readings}") + ".", "reading_count")
        if n < 2 or not o.spread or o.kind == "choice":
            continue
        values = [r.si for r in readings]
        if rule.sigma_si:
            t = scatter_test(values, rule.sigma_si)
            base = phrase("{label}: readings scatter by {sd} (standard deviation of {n}); the instrument's is {sigma}",
                          label=o.label, sd=Value(t["sd"], rule.unit, o.kind, 2), n=n, sigma=rule.sigma_text)
            ps = {"p_high": t["p_high"], "p_low": t["p_low"]}
            if t["p_high"] < q.alpha:
                check(name, False, phrase("{base}. Scatter this large happens by chance with probability {p} "
                                          "(chi-square test): check for a misread or a moved instrument.", base=base,
                                          p=Number(t["p_high"], ".2g")), "scatter_high", **ps)
            elif t["p_low"] < q.alpha:
                # Careful work is no fault: not scored, and worded as a plain observation.  An unusually
                # small scatter stays a lead on the instructor's integrity page only.
                out.append({"method": method.id, "observation": name, "ok": True, "id": "scatter_low", "check": False,
                            "text": phrase("{base}: closer agreement than the instrument's stated σ leads one to "
                                           "expect. Well done; no points depend on it.", base=base), **ps})
            else:
                check(name, True, phrase("{base}: consistent (chi-square test, p = {p}).", base=base,
                                         p=Number(min(t["p_high"], t["p_low"]) * 2, ".2g")), "scatter", **ps)
        else:
            sd = float(np.std(values, ddof=1))
            out.append({"method": method.id, "observation": name, "ok": True, "id": "scatter", "check": False,
                        "text": phrase("{label}: readings scatter by {sd} (standard deviation of {n}).", label=o.label,
                                       sd=Value(sd, rule.unit, o.kind, 2), n=n)})
        g = grubbs_test(values, q.outlier_alpha)
        if g is not None and rule.sigma_si:
            # Grubbs' test knows no scale: among readings far tighter than the instrument, a reading 0.6″
            # away "stands apart".  It is an outlier only if it also lies beyond 3σ of the instrument
            # from the mean of the others (common practice: a 3σ rejection limit).
            others = [v for i, v in enumerate(values) if i != g["index"]]
            if abs(values[g["index"]] - float(np.mean(others))) <= OUTLIER_INSTRUMENT_SIGMAS * rule.sigma_si:
                g = None
        if g is not None:
            r = readings[g["index"]]
            check(name, False, phrase("{label}: the reading on row {row} ({written}) stands apart from the others "
                                      "(Grubbs' test: G = {g} > {critical} for {n} readings at α = {alpha}). It is kept "
                                      "in your mean: check it against your field book.", label=o.label, row=r.row,
                                      written=f"{r.text} {r.unit}", g=Number(g["G"], ".2f"),
                                      critical=Number(g["critical"], ".2f"), n=n, alpha=Number(q.outlier_alpha, "")),
                  "outlier")
    if q.precision_standard and expected.get("precision_ratio") is not None:
        n_ratio = expected["precision_ratio"]
        ok = n_ratio >= q.precision_standard
        check(None, ok, phrase("Forward and back runs agree to 1:{n}; the lab's standard is 1:{standard}{end}",
                               n=Number(n_ratio, ",.0f"), standard=Number(q.precision_standard, ",.0f"),
                               end="." if ok else ": re-tape the line or look for a blunder."), "precision_ratio")
    out += [{"method": method.id, "observation": None, "ok": True, "text": note, "check": False} for note in notes]
    return out


def _observations_shown(method: Method, spec: LabSpec, obs: dict, used: dict) -> list[dict]:
    shown = []
    for name, (key, readings) in used.items():
        o = method.observation(name)
        if o.repeated and not o.spread:  # one value per span: no single value stands for them
            text, note = f"{len(readings)} value{'s' if len(readings) != 1 else ''}", f"one per {o.per}"
        else:
            value = obs[name] if o.kind == "choice" else float(np.mean(obs[name]))
            text, note = _observation_value(o, value, spec, 6), "mean" if len(readings) > 1 else ""
            written = [dms_seconds_decimals(r.text) for r in readings if r.unit == "dms"]
            if o.kind == "angle" and written and all(w is not None for w in written):
                # Shown back as written: D°M′S″ to the seconds' decimals written (one more for a mean).
                text = DMS(value, min(3, max(written) + (1 if len(readings) > 1 else 0)))
        shown.append({
            "method": method.id,
            "name": name,
            "item": key,
            "label": o.label,
            "readings": [{"row": r.row, "as_written": f"{r.text} {r.unit}".strip()} for r in readings],
            "value": text,
            "value_note": note,
        })
    return shown


def _grade_method(method: Method, sub: Submission, spec: LabSpec,
                  traces: list | None = None) -> tuple[list[dict], dict, list[dict], list[dict]]:
    obs, missing_obs, used, obs_notes = _gather_observations(method, sub, spec)
    consts, consts_text, const_notes = _constants(method, sub, spec)
    chain = evaluate_chain(method, obs, consts, missing_obs)
    run = _MethodRun(method, spec, obs, missing_obs, consts, consts_text,
                     expected=chain.expected, missing_reasons=chain.missing_reasons)
    sigmas = {}
    if spec.has_uncertainty:
        counts = {name: len(readings) for name, (_, readings) in used.items()}
        sigmas = propagate(method, obs, consts, spec.observation_sigma,
                           {k: v for k, v in spec.constant_sigma.items() if k in consts}, counts, base=chain.expected)
    run.sigmas = sigmas
    hand, hand_units = _hand_converted(method, spec, used, sub)
    # Each observation's effect on every step, apart: a step counts only those it depends on and that
    # were written in another unit than the student reported the step in (see _rounding_allowance).
    from_hand = {name: propagate(method, obs, consts, {name: u}, {}, bound=True, base=chain.expected)
                 for name, u in hand.items()}
    records = []
    for rule in spec.steps_of(method):
        step = rule.step
        ref_inputs = chain.inputs[step.id]
        exp = chain.expected[step.id]
        own_inputs = run.own_inputs(step, ref_inputs)
        own = evaluate_step(step, own_inputs)[0] if own_inputs is not None else None

        rep = sub.results.get(rule.key)
        if rep is not None:
            run.reported_si[step.id] = rep.si
            run.reported_readings[step.id] = rep
        converted = {name: effect.get(step.id) or 0.0 for name, effect in from_hand.items()
                     if effect.get(step.id) and (rep is None or canonical_unit(rep.unit) != hand_units[name])}
        widen, widen_text = _rounding_allowance(run, rule, converted)
        verdict, explanation, diagnosis = _verdict(run, rule, rep, exp, own, ref_inputs, own_inputs, sub,
                                                   widen, widen_text)
        if own is not None:
            run.own_values[step.id] = own
        run.verdicts[step.id] = verdict
        show_own = own is not None and (exp is None or not rule.tolerance.matches(own, exp))
        records.append({
            "id": rule.key,
            "method": method.id,
            "step": step.id,
            "label": step.label,
            "unit": rule.unit,
            "formula": step.formula,
            "source": step.source,
            "inputs": _inputs_shown(run, step),
            "expected": _display(exp, rule.unit, step.kind),
            "reported": _display(rep.si, rule.unit, step.kind) if rep is not None else None,
            "reported_as": f"{rep.text} {rep.unit}".strip() if rep is not None else None,
            "reported_row": rep.row if rep is not None else None,
            "carried_expected": _display(own, rule.unit, step.kind) if show_own else None,
            "tolerance": rule.tolerance.text,
            "tolerance_widened_by": _display(widen, rule.unit, step.kind) if widen else None,
            "sigma": _display(sigmas.get(step.id), rule.unit, step.kind) if sigmas.get(step.id) else None,
            "decimals": _decimals(rule, exp if exp is not None else (rep.si if rep else None)),
            "verdict": verdict,
            "points": step_points(spec, rule.points, verdict),
            "max_points": rule.points,
            "diagnosis": diagnosis,
            "explanation": explanation,
        })
    if traces is not None:
        traces.append((method.id, run.traces))
    own_sigma = _reported_sigmas(run, sub)
    accuracy, reference_notes = _accuracy(run, sub)
    quality = _quality(method, spec, used, obs_notes + const_notes, chain.expected) + reference_notes
    if method.notes is not None:
        written = {name: readings[-1].text for name, (_, readings) in used.items()}
        for note_id, ok, text in method.notes(obs, consts, written):
            quality.append({"method": method.id, "observation": None, "ok": ok, "text": text, "id": note_id,
                            "check": note_id in _CHECK_NOTES})
    return records + own_sigma, accuracy, quality, _observations_shown(method, spec, obs, used)


def _attempted(method: Method, sub: Submission, spec: LabSpec) -> bool:
    """A method counts as attempted when any of its own observations or results is given."""
    shared = set()
    for other in spec.methods:
        if other is not method:
            shared |= {o.name for o in other.observations}
    names = set()
    for o in method.observations:
        if o.name not in shared:
            names.add(o.name)
            names |= {a.name for a in o.alternatives}
    keys = set(sub.observations) | sub.bad_items
    if any(k.split(".")[-1] in names or k.startswith(method.id + ".") for k in keys):
        return True
    return any(r.method.id == method.id and (r.key in sub.results or r.key in sub.bad_items) for r in spec.steps.values())


def grade_submission(sub: Submission, spec: LabSpec, traces: list | None = None) -> dict:
    """Grade a normalised submission; returns its results record (see docs/outputs.md).

    ``traces``, when given, receives (method id, [StepTrace, ...]) per graded method, for ``tune``.
    """
    if spec.methods_required == "all":
        methods = list(spec.methods)
    else:
        methods = [m for m in spec.methods if _attempted(m, sub, spec)] or list(spec.methods)
    steps, accuracy, quality, observations = [], {}, [], []
    with quiet():  # one numpy error state for all of the submission's evaluations
        for m in methods:
            s, a, q, o = _grade_method(m, sub, spec, traces)
            steps += s
            if a is not None:
                accuracy[m.id] = a
            quality += q
            observations += o
    checks = [q for q in quality if q.get("check")]
    quality_score = None
    if spec.quality.points and checks:
        passed = sum(1 for q in checks if q["ok"])
        quality_score = {"points": round(spec.quality.points * passed / len(checks), 3),
                         "max_points": spec.quality.points, "passed": passed, "checks": len(checks)}
    score = sum(s["points"] for s in steps) + sum(a["points"] for a in accuracy.values())
    max_score = sum(s["max_points"] for s in steps) + sum(a["max_points"] for a in accuracy.values())
    if quality_score:
        score += quality_score["points"]
        max_score += quality_score["max_points"]
    flags = [p.as_dict() for p in sub.problems]
    return {
        "submission": sub.source,
        "student_id": sub.identity.get("student_id", ""),
        "name": sub.identity.get("name", ""),
        "group": sub.identity.get("group", ""),
        "date": sub.identity.get("date", ""),
        "site": sub.identity.get("site", ""),
        "status": "graded",
        "error": None,
        "methods": [m.id for m in methods],
        "score": round(score, 2),
        "max_score": round(max_score, 2),
        "steps": steps,
        "accuracy": accuracy,
        "quality": quality,
        "quality_score": quality_score,
        "flags": flags,
        "reading": sub.reading,
        "observations": observations,
        "notes": sub.notes,
    }


def unreadable_record(source: str, error: str) -> dict:
    """The record for a file that could not be read at all."""
    return {
        "submission": source, "student_id": "", "name": "", "group": "", "date": "", "site": "",
        "status": "unreadable", "error": error, "methods": [], "score": None, "max_score": None,
        "steps": [], "accuracy": {}, "quality": [], "quality_score": None, "flags": [], "reading": [], "observations": [], "notes": [],
    }


def missing_record(student_id: str, name: str) -> dict:
    """The record for a roster entry with no submission."""
    rec = unreadable_record("", "no submission found for this student")
    rec.update(student_id=student_id, name=name, status="missing", submission=None)
    return rec
