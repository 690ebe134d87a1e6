"""Grading: verdicts, error carried forward, diagnosis, accuracy, bad rows.

Reference values come from the method's formulas, which tests/test_horizon_
reductions.py checks against outside sources; here the point is the grading
policy applied to them.
"""

import math

import pytest

from labcheck.reductions import horizon as hz
from labcheck.model.spec import AccuracyRule

from conftest import ARCMIN, good_dip_rows, grade_rows, step

R1 = 6371008.8


def replace(rows, item, value, unit=None):
    out = []
    for r in rows:
        if r[1] == item and r[0] in ("result", "observation"):
            r = (r[0], r[1], value, unit if unit is not None else r[3])
        out.append(r)
    return out


def test_correct_submission_gets_full_marks(spec):
    rec = grade_rows(spec, good_dip_rows())
    assert rec["methods"] == ["dip"]  # only the attempted method is graded ("any")
    assert [s["verdict"] for s in rec["steps"]] == ["correct"] * 4
    assert sum(s["points"] for s in rec["steps"]) == 8
    assert rec["max_score"] == 8 + 4 + spec.quality.points  # steps, accuracy, field-data quality


def test_slip_in_dip_mean_is_carried_forward(spec):
    # The mean of the readings is 6.0'; the student copies 6.3' and then computes correctly from it.
    rows = good_dip_rows()
    slip = 6.3
    r_app = float(hz.radius_from_dip(12.0, slip * ARCMIN)) / 1000
    rows = replace(rows, "dip_mean", str(slip))
    rows = replace(rows, "dip.radius_apparent", f"{r_app:.1f}")
    rows = replace(rows, "dip.radius", f"{0.87 * r_app:.1f}")
    rows = replace(rows, "dip.radius_error_pct", f"{100 * (0.87 * r_app * 1000 - R1) / R1:.2f}")
    rec = grade_rows(spec, rows)
    assert step(rec, "dip_mean")["verdict"] == "wrong"
    ra = step(rec, "dip.radius_apparent")
    assert ra["verdict"] == "carried"
    assert ra["points"] == ra["max_points"] * spec.carried_fraction
    assert ra["carried_expected"] == pytest.approx(r_app, rel=1e-3)
    assert "follows correctly from your own value of mean dip" in ra["explanation"]
    assert step(rec, "dip.radius")["verdict"] == "carried"
    assert step(rec, "dip.radius_error_pct")["verdict"] == "carried"


def test_rounded_but_correct_upstream_is_correct_not_carried(spec):
    # dip_mean written to 0.01' (within its tolerance), radius from that rounded value.
    rows = good_dip_rows(readings=(5.91, 6.02, 6.13, 5.97, 6.04))
    rec = grade_rows(spec, rows)
    assert [s["verdict"] for s in rec["steps"]] == ["correct"] * 4


@pytest.mark.parametrize(
    "item, make_value, mistake",
    [
        ("dip.radius", lambda r_app: r_app, "refraction_ignored"),
        ("dip.radius_apparent", lambda r_app: float(hz.radius_from_dip(12.0 / 0.3048, 6.0 * ARCMIN)) / 1000, "feet_as_metres"),
        ("dip.radius_apparent", lambda r_app: float(hz.radius_from_dip(12.0, math.degrees(6.0 * ARCMIN))) / 1000, "degrees_as_radians"),
        ("dip.radius_apparent", lambda r_app: r_app * 1000, "metres_for_km"),
    ],
)
def test_known_mistakes_are_named(spec, item, make_value, mistake):
    r_app = float(hz.radius_from_dip(12.0, 6.0 * ARCMIN)) / 1000
    rows = replace(good_dip_rows(), item, f"{make_value(r_app):.6g}")
    rec = grade_rows(spec, rows)
    s = step(rec, item)
    assert s["verdict"] == "wrong"
    assert s["diagnosis"] is not None and s["diagnosis"]["id"] == mistake


def test_hidden_height_factor_two_is_named(spec):
    s_m, h0, x = 20000.0, 16.0, 4.3
    good = float(hz.radius_from_hidden_height(s_m, h0, x)) / 1000
    rows = [("observation", "eye_height", "16", "m"), ("observation", "target_distance", "20", "km"),
            ("observation", "hidden_height", "4.3", "m"),
            ("result", "hidden_height.radius_apparent", f"{2 * good:.1f}", "km")]
    rec = grade_rows(spec, rows)
    assert rec["methods"] == ["hidden_height"]
    assert step(rec, "hidden_height.radius_apparent")["diagnosis"]["id"] == "missing_factor_two"


def test_a_random_wrong_value_is_not_given_a_cause(spec):
    rows = replace(good_dip_rows(), "dip.radius_apparent", "5123.4")
    s = step(grade_rows(spec, rows), "dip.radius_apparent")
    assert s["verdict"] == "wrong"
    assert s["diagnosis"] is None
    assert "No known mistake reproduces your value" in s["explanation"]


def test_spec_can_reword_a_mistake(spec):
    from dataclasses import replace as dc_replace

    custom = dc_replace(spec, mistakes={"refraction_ignored": "Apply (1 - k), as shown in the lab handout."})
    r_app = float(hz.radius_from_dip(12.0, 6.0 * ARCMIN)) / 1000
    rec = grade_rows(custom, replace(good_dip_rows(), "dip.radius", f"{r_app:.1f}"))
    assert step(rec, "dip.radius")["diagnosis"]["text"] == "Apply (1 - k), as shown in the lab handout."


def test_missing_result(spec):
    rows = [r for r in good_dip_rows() if r[1] != "dip.radius"]
    rec = grade_rows(spec, rows)
    s = step(rec, "dip.radius")
    assert s["verdict"] == "missing" and s["points"] == 0 and s["explanation"] == "Not reported."
    assert step(rec, "dip.radius_error_pct")["verdict"] == "correct"


def test_missing_observation_makes_dependents_ungradable_with_reason(spec):
    rows = [r for r in good_dip_rows() if r[1] != "eye_height"]
    rec = grade_rows(spec, rows)
    assert step(rec, "dip_mean")["verdict"] == "correct"  # does not need the height
    ra = step(rec, "dip.radius_apparent")
    assert ra["verdict"] == "missing"
    assert "eye height (eye_height) was not given" in ra["explanation"]
    # Later steps are still checked against the student's own earlier values: right arithmetic on an
    # unverifiable (not wrong) earlier value is correct, never "carried" (issue 9), and says which value.
    radius = step(rec, "dip.radius")
    assert radius["verdict"] == "correct" and "your own value of apparent radius from the dip" in radius["explanation"]
    assert "Cannot be judged" in rec["accuracy"]["dip"]["explanation"]


@pytest.mark.parametrize(
    "item, value, unit, message",
    [
        ("dip_angle", "six", "arcmin", "expected a number, got 'six'"),
        ("dip_angle", "6.0", "furlongs", "unknown angle unit 'furlongs'"),
        ("dip_angle", "0 61 00", "dms", "minutes must be below 60"),
    ],
)
def test_bad_reading_is_named_and_the_rest_is_graded(spec, item, value, unit, message):
    rows = good_dip_rows() + [("observation", item, value, unit)]
    rec = grade_rows(spec, rows)
    assert rec["status"] == "graded"
    flag = next(f for f in rec["flags"] if f["item"] == item)
    assert message in flag["message"] and flag["row"] == len(rows) + 1
    assert [s["verdict"] for s in rec["steps"]] == ["correct"] * 4  # the other five readings


def test_negative_height_is_a_bad_row(spec):
    rows = replace(good_dip_rows(), "eye_height", "-12")
    rec = grade_rows(spec, rows)
    assert any("must be greater than zero" in f["message"] for f in rec["flags"])
    ra = step(rec, "dip.radius_apparent")
    assert ra["verdict"] == "missing" and "could not be read" in ra["explanation"]


def test_theodolite_zenith_angles_are_accepted(spec):
    rows = [r for r in good_dip_rows() if r[1] != "dip_angle"]
    rows += [("observation", "horizon_zenith_angle", z, "dms") for z in ("90 05 54", "90 06 00", "90 06 06", "90 06 00", "90 06 00")]
    rec = grade_rows(spec, rows)
    assert [s["verdict"] for s in rec["steps"]] == ["correct"] * 4


def test_ambiguous_bare_step_id_is_flagged(spec):
    rows = good_dip_rows() + [("result", "radius", "6000", "km")]
    rec = grade_rows(spec, rows)
    assert any("write dip.radius or hidden_height.radius" in f["message"] for f in rec["flags"])


def test_result_in_another_unit_is_converted(spec):
    rows = good_dip_rows()
    r = next(x for x in rows if x[1] == "dip.radius")
    rows = replace(rows, "dip.radius", str(float(r[2]) * 1000), "m")
    assert step(grade_rows(spec, rows), "dip.radius")["verdict"] == "correct"


def test_accuracy_rule_is_linear_between_the_bands():
    rule = AccuracyRule(4, 0.05, 0.25, "relative", "")
    assert rule.score_fraction(R1 * 1.04, R1) == 1.0
    assert rule.score_fraction(R1 * 1.15, R1) == pytest.approx(0.5)
    assert rule.score_fraction(R1 * 0.70, R1) == 0.0
    assert rule.score_fraction(float("nan"), R1) == 0.0


def test_methods_required_all_scores_the_missing_method(spec):
    from dataclasses import replace as dc_replace

    rec = grade_rows(dc_replace(spec, methods_required="all"), good_dip_rows())
    assert rec["methods"] == ["dip", "hidden_height"]
    assert rec["max_score"] == 22 + spec.quality.points
    assert step(rec, "hidden_height.radius")["verdict"] == "missing"


def test_dms_with_a_blank_unit_is_read_as_dms(spec):
    # Regression: a D M S dip with a blank unit (template unit arcmin) was refused as ambiguous.
    rows = [r if r[1] != "dip_angle" else ("observation", "dip_angle", "0°06'00\"", "") for r in good_dip_rows()]
    rec = grade_rows(spec, rows)
    assert not rec["flags"]
    assert [s["verdict"] for s in rec["steps"]] == ["correct"] * 4


@pytest.mark.parametrize(
    "written, right, expected",
    [("8.16", 8.6067, True), ("6731", 6371.2, True), ("-2.34", -2.43, True), ("8.61", 8.6067, False),
     ("8.06", 8.6067, False), ("6137", 6371.0, False), ("2.34", -2.43, False), ("1e3", 1000.0, False)],
)
def test_transposed_digits(written, right, expected):
    # Definition of a transposition (common practice in checking copied figures).
    from labcheck.grading.grade import transposed_digits

    assert transposed_digits(written, right) is expected


def test_transposed_mean_is_named(spec):
    rows = [r if r[1] != "dip_mean" else ("result", "dip_mean", "6.00", "arcmin") for r in good_dip_rows(readings=(6.0, 6.1, 6.1, 6.0, 6.1))]
    rows = [r if r[1] != "dip_mean" else ("result", "dip_mean", "6.60", "arcmin") for r in rows]  # right: 6.06
    s = step(grade_rows(spec, rows), "dip_mean")
    assert s["verdict"] == "wrong" and s["diagnosis"]["id"] == "digits_transposed"


def test_a_slip_that_lands_on_zero_is_not_a_diagnosis(spec):
    # Regression: a blank-like 0 for a small value was named "km written where metres are asked"
    # because value/1000 fell inside the tolerance of 0.  A slip must be told apart from zero.
    from labcheck.grading.grade import GENERIC_SLIPS, _diagnose

    rule = spec.steps["dip_mean"]
    tiny = 0.01 * ARCMIN  # smaller than the 0.02' tolerance after any scale slip below 1
    assert _diagnose(rule, spec, 0.0, {}, None, tiny, None) is None
    assert any(s.factor < 1 for s in GENERIC_SLIPS["angle"])


def test_missing_reasons_are_given_once(spec):
    # Regression: a reason repeated once per path through the step graph.
    rec = grade_rows(spec, [("identity", "student_id", "s9"), ("observation", "dip_angle", "6.0", "arcmin")])
    text = rec["accuracy"]["dip"]["explanation"]
    assert text.count("eye height (eye_height) was not given") == 1


def test_scatter_and_outlier_checks(spec):
    # Readings far tighter than a 20" instrument allows are noted (chi-square lower tail), a wild
    # reading is flagged by Grubbs' test and kept in the mean.
    tight = grade_rows(spec, good_dip_rows(readings=(6.0, 6.0, 6.01, 6.0, 6.0)))
    low = [q for q in tight["quality"] if q.get("id") == "scatter_low"]
    # Careful work is no fault (issue 9): noted, never scored, never worded as a doubt.
    assert low and low[0]["ok"] and not low[0]["check"] and "independent" not in low[0]["text"]
    assert tight["quality_score"]["passed"] == tight["quality_score"]["checks"]
    same = grade_rows(spec, good_dip_rows(readings=(6.0, 6.0, 6.0, 6.0, 6.0)))
    assert not any("e-" in q["text"] or "0.0000" in q["text"] for q in same["quality"])  # no float noise
    wild = grade_rows(spec, good_dip_rows(readings=(6.0, 6.1, 5.9, 6.0, 6.05, 5.95, 7.9)))
    outlier = [q for q in wild["quality"] if q.get("id") == "outlier"]
    assert outlier and "row" in outlier[0]["text"] and "kept in your mean" in outlier[0]["text"]
    assert step(wild, "dip_mean")["expected"] == pytest.approx((6.0 + 6.1 + 5.9 + 6.0 + 6.05 + 5.95 + 7.9) / 7, rel=1e-12)
    assert wild["quality_score"]["passed"] < wild["quality_score"]["checks"]
