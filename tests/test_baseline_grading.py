"""Grading the baseline labs: units, constants of a group's own tape, diagnoses, bad rows."""

import math

import pytest

from labcheck.reductions import baseline as bl
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec

from conftest import grade_rows, step

FT, LBF = 0.3048, 4.4482216152605


@pytest.fixture(scope="module")
def taped():
    return load_spec(shipped_spec("taped_baseline"))


@pytest.fixture(scope="module")
def radius_spec():
    return load_spec(shipped_spec("baseline_radius"))


READINGS_M = [30.0, 30.0, 30.0, 24.386]
HEIGHTS_M = [0.62, -1.10, 0.35, 0.0]


def taped_rows(us: bool):
    """The same field data written in metric or US customary units (exact conversions)."""
    L = (lambda m: f"{m / FT:.10g}", "ft") if us else (lambda m: f"{m:.10g}", "m")
    T = (lambda c: f"{c * 9 / 5 + 32:.10g}", "F") if us else (lambda c: f"{c:.10g}", "C")
    P = (lambda n: f"{n / LBF:.10g}", "lbf") if us else (lambda n: f"{n:.10g}", "N")
    rows = [("identity", "student_id", "t1"), ("observation", "support", "suspended"),
            ("observation", "mean_elevation", L[0](41.2), L[1])]
    for run, temp, tension in (("forward", 12.5, 80.0), ("back", 21.0, 80.0)):
        rows += [("observation", f"{run}_tape_reading", L[0](r), L[1]) for r in READINGS_M]
        rows += [("observation", f"{run}_height_difference", L[0](h), L[1]) for h in HEIGHTS_M]
        rows += [("observation", f"{run}_temperature", T[0](temp), T[1]), ("observation", f"{run}_tension", P[0](tension), P[1])]
    return rows


def test_us_customary_and_metric_give_the_same_reduced_length(taped):
    metric = grade_rows(taped, taped_rows(us=False))
    us = grade_rows(taped, taped_rows(us=True))
    assert not metric["flags"] and not us["flags"]
    for key in ("forward_horizontal_length", "back_horizontal_length", "mean_length", "sea_level_length"):
        m, u = step(metric, key)["expected"], step(us, key)["expected"]
        assert m is not None
        assert u == pytest.approx(m, abs=1e-9), key  # exact unit definitions: agreement to round-off


def test_reduction_by_hand(taped):
    # The forward run recomputed here from the formulas with the spec's tape (hand computation).
    rec = grade_rows(taped, taped_rows(us=False))
    L = sum(READINGS_M)
    c_l = L * (30.0032 - 30.0) / 30.0
    c_t = 0.0000116 * (12.5 - 20.0) * L
    c_p = (80.0 - 50.0) * L / (2.6e-6 * 200e9)
    c_s = -sum(0.20**2 * r**3 for r in READINGS_M) / (24 * 80.0**2)
    c_h = sum(math.sqrt(r**2 - h**2) - r for r, h in zip(READINGS_M, HEIGHTS_M))
    assert step(rec, "forward_horizontal_length")["expected"] == pytest.approx(L + c_l + c_t + c_p + c_s + c_h, abs=1e-9)


def test_a_groups_own_tape_in_us_units(taped):
    rows = taped_rows(us=False) + [("observation", "nominal_length", "100", "ft"),
                                   ("observation", "calibrated_length", "100.012", "ft")]
    rec = grade_rows(taped, rows)
    s = step(rec, "forward_standardisation")
    assert s["expected"] == pytest.approx(sum(READINGS_M) * 0.012 / 100, abs=1e-12)
    assert any("your own value 100.012 ft is used" in q["text"] for q in rec["quality"])
    assert any(i["value"] == "100.012 ft (yours)" for i in s["inputs"])


@pytest.mark.parametrize(
    "key, make, mistake",
    [
        ("forward_sag_correction", lambda r: "0", None),  # suspended tape: zero sag is wrong, no known cause
        ("forward_slope_correction", lambda r: f"{bl.slope_correction(READINGS_M, [math.degrees(math.asin(h / x)) for h, x in zip(HEIGHTS_M, READINGS_M)]):.5f}", "degrees_as_radians"),
    ],
)
def test_taped_diagnoses(taped, key, make, mistake):
    rows = taped_rows(us=False) + [("result", key, make(None), "m")]
    s = step(grade_rows(taped, rows), key)
    assert s["verdict"] == "wrong"
    assert (s["diagnosis"] or {}).get("id") == mistake


def test_sag_on_a_supported_tape_is_named(taped):
    rows = [r if r[1] != "support" else ("observation", "support", "supported") for r in taped_rows(us=False)]
    sag = bl.sag_correction(READINGS_M, 0.20, 80.0, 1.0)
    s = step(grade_rows(taped, rows + [("result", "forward_sag_correction", f"{sag:.5f}", "m")]), "forward_sag_correction")
    assert s["expected"] == 0.0 and s["diagnosis"]["id"] == "sag_on_supported_tape"


def test_bad_support_word_and_slope_count(taped):
    rows = [r if r[1] != "support" else ("observation", "support", "hanging") for r in taped_rows(us=False)]
    rows = [r for r in rows if not (r[1] == "back_height_difference" and r[2] == "0")]
    rec = grade_rows(taped, rows)
    assert any("expected one of supported, suspended, got 'hanging'" in f["message"] for f in rec["flags"])
    sag = step(rec, "forward_sag_correction")
    assert "tape support (support)" in sag["explanation"] or sag["verdict"] == "missing"
    back_slope = step(rec, "back_slope_correction")
    assert back_slope["verdict"] == "missing"
    assert "one height difference per tape reading, or one for all" in back_slope["explanation"]


# ---------------------------------------------------------------- radius ---

STATION_ROWS = [("observation", "lat_1", "57°48'44.42\"N", ""), ("observation", "lon_1", "33°36'51.12\"W", ""),
                ("observation", "lat_2", "57.90871", "deg"), ("observation", "lon_2", "-33.60377", "deg"),
                ("observation", "ground_distance", "10.75", "km")]


def radius_results(distance_km=10.75, dms=True):
    lat1, lon1 = 57 + 48 / 60 + 44.42 / 3600, -(33 + 36 / 60 + 51.12 / 3600)
    lat2, lon2 = 57.90871, -33.60377
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dphi, dlam = p2 - p1, math.radians(lon2 - lon1)
    hav = float(bl.haversine(p1, p2, dphi, dlam))
    theta = float(bl.central_angle_from_haversine(hav))
    return dict(dphi=dphi, dlam=dlam, hav=hav, theta=theta, radius=distance_km / theta)


def test_radius_lab_with_hemisphere_letters(radius_spec):
    v = radius_results()
    rows = STATION_ROWS + [("result", "delta_lat", f"{math.degrees(v['dphi']):.7f}", "deg"),
                           ("result", "delta_lon", f"{math.degrees(v['dlam']):.7f}", "deg"),
                           ("result", "haversine", f"{v['hav']:.6g}", ""),
                           ("result", "central_angle", f"{math.degrees(v['theta']):.7g}", "deg"),
                           ("result", "radius", f"{v['radius']:.6g}", "km")]
    rec = grade_rows(radius_spec, rows)
    assert not rec["flags"]
    assert [s["verdict"] for s in rec["steps"]] == ["correct"] * 5
    acc = rec["accuracy"]["baseline_radius"]
    assert 6380 < acc["reference"] < 6390  # Euler's radius near 57.8°N along this line (M ≈ 6381, N ≈ 6394 km)
    assert "Euler's formula" in acc["reference_explanation"]


@pytest.mark.parametrize(
    "key, value, mistake",
    [
        ("central_angle", lambda v: math.degrees(math.asin(math.sqrt(v["hav"]))), "missing_factor_two"),
        ("central_angle", lambda v: math.degrees(2 * math.asin(v["hav"])), "missing_square_root"),
        ("radius", lambda v: 10.75 / math.degrees(v["theta"]), "degrees_as_radians"),
        ("radius", lambda v: 10.75 / 1.852 * 1.609344 / v["theta"], "nmi_as_mi"),
        ("haversine", lambda v: math.sin(v["dphi"]) ** 2 + math.cos(math.radians(57.81)) * math.cos(math.radians(57.91)) * math.sin(v["dlam"]) ** 2, "haversine_halves_missing"),
    ],
)
def test_radius_diagnoses(radius_spec, key, value, mistake):
    v = radius_results()
    distance = [("observation", "ground_distance", f"{10.75 / 1.852:.6f}", "nmi")] if mistake == "nmi_as_mi" else []
    rows = [r for r in STATION_ROWS if not (distance and r[1] == "ground_distance")] + distance
    rows += [("result", key, f"{value(v):.7g}", "km" if key == "radius" else "deg" if key == "central_angle" else "")]
    s = step(grade_rows(radius_spec, rows), key)
    assert s["verdict"] == "wrong" and s["diagnosis"]["id"] == mistake


def test_latitude_out_of_range_is_a_bad_row(radius_spec):
    rows = [r if r[1] != "lat_2" else ("observation", "lat_2", "95.2", "deg") for r in STATION_ROWS]
    rec = grade_rows(radius_spec, rows)
    assert any("outside the physical range" in f["message"] and f["item"] == "lat_2" for f in rec["flags"])
    assert "Cannot be judged" in rec["accuracy"]["baseline_radius"]["explanation"]
