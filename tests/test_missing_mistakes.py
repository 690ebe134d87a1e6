"""The mistakes issue 9 found unnamed: semi-diameter left out (sextant, and a gnomon's umbra tip),
corrections left out or applied twice, and unit slips in an observation that show only in the result.

Each is planted in an honest demo group's own numbers: the wrong value is computed here from that
group's recomputed inputs by the mistake's meaning (not by the variant's code), and must be named.
"""

import math

from labcheck.demo import SECTIONS
from labcheck.grading.grade import evaluate_chain, grade_submission, method_inputs
from labcheck.report.words import worded
from labcheck.reading.ingest import read_rows
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec, parse_spec
from labcheck.reading.submission import normalise

from conftest import csv_bytes
from test_catalogue import honest_groups, with_result

ARCMIN = math.radians(1 / 60)


def _section(lab):
    return next(s for s in SECTIONS if s.lab == lab)


def _inputs(spec, method, rows):
    sub = normalise(read_rows(csv_bytes(rows), "x.csv"), spec)
    obs, consts, missing = method_inputs(method, sub, spec)
    return evaluate_chain(method, obs, consts, missing)


def _grade(spec, rows):
    return worded(grade_submission(normalise(read_rows(csv_bytes(rows), "x.csv"), spec), spec))


def _step(rec, key):
    return next(s for s in rec["steps"] if s["id"] == key)


def test_sextant_semi_diameter_left_out_is_named():
    # The case: observed altitude 49.225253° against 49.493442°: the semi-diameter (16′) left out.
    spec = load_spec(shipped_spec("noon_sight"))
    method = spec.methods[0]
    named = 0
    for group in honest_groups(_section("noon_sight")):
        chain = _inputs(spec, method, group.rows)
        ins = chain.inputs["observed_altitude"]
        if chain.expected.get("observed_altitude") is None:
            continue
        # Ho without the semi-diameter: Ha − R + PA (the navigator's order, meaning of the mistake).
        wrong = math.degrees(ins["apparent_altitude"] - ins["refraction"] + ins["parallax"])
        rec = _grade(spec, with_result(group.rows, "observed_altitude", f"{wrong:.6f}", "deg"))
        step = _step(rec, "observed_altitude")
        assert step["verdict"] in ("wrong", "carried") and step["diagnosis"]["id"] == "semi_diameter_left_out"
        named += 1
    assert named >= 3


def test_gnomon_umbra_tip_semi_diameter_left_out_is_named():
    # The case: zenith_centre 49.10856° against 49.37350° on a spec that measures the umbra's tip.
    text = shipped_spec("noon_shadow").read_text(encoding="utf-8")
    spec = parse_spec(text.replace('shadow_edge = "penumbra_centre"', 'shadow_edge = "umbra_tip"').encode(), "umbra.toml")
    method = spec.methods[0]
    named = 0
    for group in honest_groups(_section("noon_shadow")):
        chain = _inputs(spec, method, group.rows)
        z = chain.expected.get("zenith_observed")
        if z is None:
            continue
        rec = _grade(spec, with_result(group.rows, "zenith_centre", f"{math.degrees(z):.6f}", "deg"))
        step = _step(rec, "zenith_centre")
        assert step["verdict"] in ("wrong", "carried") and step["diagnosis"]["id"] == "semi_diameter_left_out"
        named += 1
    assert named >= 3


def test_sextant_corrections_left_out_are_named():
    spec = load_spec(shipped_spec("noon_sight"))
    method = spec.methods[0]
    group = next(g for g in honest_groups(_section("noon_sight"))
                 if _inputs(spec, method, g.rows).expected.get("observed_altitude") is not None
                 and abs(_inputs(spec, method, g.rows).inputs["index_corrected"]["index_error"]) > 0.3 * ARCMIN
                 and _inputs(spec, method, g.rows).inputs["apparent_altitude"]["horizon"] < 0.5)
    ins = _inputs(spec, method, group.rows).inputs
    cases = {
        "index_corrected": ("index_error_left_out", ins["index_corrected"]["altitude_mean"]),
        "apparent_altitude": ("dip_left_out", ins["apparent_altitude"]["index_corrected"]),
        "observed_altitude": ("refraction_left_out", ins["observed_altitude"]["apparent_altitude"]
                              + ins["observed_altitude"]["semi_diameter"] + ins["observed_altitude"]["parallax"]),
    }
    for key, (mistake, wrong) in cases.items():
        rec = _grade(spec, with_result(group.rows, key, f"{math.degrees(wrong):.6f}", "deg"))
        assert _step(rec, key)["diagnosis"]["id"] == mistake, key


def test_an_eye_height_in_feet_is_named_at_the_accuracy_level():
    # The result is 3.28 times too large: the eye height was written in feet with the unit m.
    spec = load_spec(shipped_spec("horizon_dip"))
    group = honest_groups(_section("horizon_dip"))[0]
    rows = []
    for r in group.rows:
        if r[1] == "eye_height" and r[0] == "observation":
            rows.append((r[0], r[1], f"{float(r[2]) / 0.3048:.1f}", "m", ""))
        elif r[0] != "result":
            rows.append(r)
    rec = _grade(spec, rows)
    acc = rec["accuracy"]["dip"]
    assert acc["points"] < acc["max_points"]
    assert acc["diagnosis"]["id"] == "observation_feet_as_metres" and acc["diagnosis"]["observation"] == "eye_height"
    assert "Likely cause" in acc["explanation"]


def test_an_arbitrary_result_error_names_no_unit_slip():
    # A 7.31 % error in the eye height is no unit slip: nothing is named (the catalogue test's rule).
    spec = load_spec(shipped_spec("horizon_dip"))
    group = honest_groups(_section("horizon_dip"))[0]
    rows = [(r[0], r[1], f"{float(r[2]) * 1.0731:.2f}", r[3], "") if r[1] == "eye_height" else r for r in group.rows
            if r[0] != "result"]
    acc = _grade(spec, rows)["accuracy"]["dip"]
    assert acc["diagnosis"] is None


def test_angles_written_in_dms_are_shown_back_in_dms():
    # A surveyor reads "92.0053 dms" as 92°00′53″: D M S comes back as D°M′S″ at the precision written
    # (one more decimal for a mean); rows of face pairs are captioned per pair, not per span.
    spec = load_spec(shipped_spec("trig_heighting"))
    group = honest_groups(_section("trig_heighting"))[0]
    rec = _grade(spec, group.rows)
    shown = {o["name"]: o for o in rec["observations"]}
    dms_rows = [o for o in rec["observations"] if any("°" in r["as_written"] or r["as_written"].endswith("dms")
                                                       for r in o["readings"])]
    assert dms_rows
    for o in dms_rows:
        assert "dms" not in o["value"], o["value"]
        assert "°" in o["value"] or o["value_note"].startswith("one per"), o["value"]
    for o in shown.values():
        if o["value_note"].startswith("one per"):
            assert o["value_note"] in ("one per pair", "one per span")
    assert all("dms" not in q["text"] for q in rec["quality"])
