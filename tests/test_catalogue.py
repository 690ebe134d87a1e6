"""The mistake catalogue, exhaustively: every known mistake is named when made, and nothing is guessed.

For each lab, honest groups of the demo section (generated from known truth)
are taken; for every step and every known mistake of it, the group's
reported value is replaced by the value that mistake produces from the
group's own inputs, and the grader must name that mistake (or one that
produces the same value within the step's tolerance: then the two cannot be
told apart).  A value off by an arbitrary 7.31 % must get no named cause.
"""

import math

import pytest

from labcheck.demo import SECTIONS
from labcheck.grading.grade import GENERIC_SLIPS, evaluate_chain, grade_submission, method_inputs
from labcheck.report.words import worded
from labcheck.reading.ingest import read_rows
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec
from labcheck.reading.submission import normalise
from labcheck.base.units import from_si

from conftest import csv_bytes


def honest_groups(section):
    bad = set(section.planted) | section.unreadable | set(section.bad_rows) | set(section.notes)
    return [g for g in section.generate() if g.number not in bad]


def with_result(rows, key, value_text, unit):
    kept = [r for r in rows if not (r[0] == "result" and r[1] == key)]
    return kept + [("result", key, value_text, unit, "")]


def grade(spec, rows):
    return worded(grade_submission(normalise(read_rows(csv_bytes(rows), "x.csv"), spec), spec))


def cases():
    for section in SECTIONS:
        spec = load_spec(shipped_spec(section.lab))
        for rule in spec.steps.values():
            for variant in rule.step.variants:
                yield pytest.param(section, spec, rule, variant, id=f"{section.lab}:{rule.key}:{variant.id}")


def variant_value(spec, rule, variant, group):
    """The value ``variant`` gives on ``group``'s own inputs, or None where it does not apply."""
    sub = normalise(read_rows(csv_bytes(group.rows), "x.csv"), spec)
    obs, consts, missing = method_inputs(rule.method, sub, spec)
    chain = evaluate_chain(rule.method, obs, consts, missing)
    expected = chain.expected.get(rule.step.id)
    if expected is None:
        return None, None
    try:
        value = float(variant.compute(rule.step, chain.inputs[rule.step.id]))
    except (ValueError, ZeroDivisionError):
        return None, None
    if not math.isfinite(value) or rule.tolerance.matches(value, expected):
        return None, None  # not applicable here, or indistinguishable from the right value
    return value, chain


@pytest.mark.parametrize("section, spec, rule, variant", list(cases()))
def test_every_known_mistake_is_named(section, spec, rule, variant):
    for group in honest_groups(section):
        value, chain = variant_value(spec, rule, variant, group)
        if value is None:
            continue
        shown = float(from_si(value, rule.unit, rule.step.kind))
        rec = grade(spec, with_result(group.rows, rule.key, repr(shown), "" if rule.unit == "1" else rule.unit))
        step = next(s for s in rec["steps"] if s["id"] == rule.key)
        assert step["verdict"] == "wrong", (group.number, step)
        named = step["diagnosis"]
        assert named is not None, (group.number, step["explanation"])
        if named["id"] != variant.id:  # only acceptable when the named mistake gives the same value
            other = next((v for v in rule.step.variants if v.id == named["id"]), None)
            assert other is not None, f"named {named['id']} for {variant.id}"
            other_value = float(other.compute(rule.step, chain.inputs[rule.step.id]))
            assert rule.tolerance.matches(value, other_value), f"named {named['id']} for {variant.id}"
        return
    pytest.skip(f"{variant.id} does not apply to any honest group of the {section.lab} demo")


@pytest.mark.parametrize("section", SECTIONS, ids=lambda s: s.lab)
def test_an_arbitrary_wrong_value_gets_no_cause(section):
    spec = load_spec(shipped_spec(section.lab))
    group = honest_groups(section)[0]
    rec = grade(spec, group.rows)
    guessed = []
    for s in rec["steps"]:
        if s["expected"] is None or s["expected"] == 0:
            continue
        wrong = s["expected"] * 1.0731  # no unit factor, no slip, no known formula error
        r2 = grade(spec, with_result(group.rows, s["id"], repr(wrong), "" if s["unit"] == "1" else s["unit"]))
        step = next(x for x in r2["steps"] if x["id"] == s["id"])
        if step["verdict"] == "wrong" and step["diagnosis"] is not None:
            guessed.append((s["id"], step["diagnosis"]["id"]))
    assert not guessed


@pytest.mark.parametrize("kind", ["length", "angle"])
def test_generic_slips_are_named(kind):
    section = next(s for s in SECTIONS if s.lab == ("taped_baseline" if kind == "length" else "noon_shadow"))
    spec = load_spec(shipped_spec(section.lab))
    group = honest_groups(section)[0]
    rec = grade(spec, group.rows)
    step = next(s for s in rec["steps"] if spec.steps[s["id"]].step.kind == kind and s["expected"] and abs(s["expected"]) > 1)
    for slip in GENERIC_SLIPS[kind] + GENERIC_SLIPS["any"]:
        value = step["expected"] * slip.factor
        r2 = grade(spec, with_result(group.rows, step["id"], repr(value), step["unit"]))
        named = next(x for x in r2["steps"] if x["id"] == step["id"])["diagnosis"]
        assert named is not None and named["id"] == slip.id, (slip.id, named)
