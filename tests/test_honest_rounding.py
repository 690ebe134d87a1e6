"""Honest students who round are never marked wrong, and never falsely "carried".

For four labs, submissions are computed here by an independent implementation of the published
formulas (written out below, not labcheck's functions; the sun from pvlib's SPA), rounded step by step
as students round: each reported value to 3-5 significant figures (more where the lab's tolerance asks
for more: a student reports to the precision the lab states), the next step computed from either the
rounded or the unrounded value, and observations written in another unit converted by hand and
rounded too.  Seeds come from hypothesis (derandomized); each run grades a few hundred submissions.
"""

import math
import random
from datetime import datetime, timedelta, timezone

import numpy as np
from hypothesis import example, HealthCheck, assume, given, settings, strategies as st
from pvlib import spa

from labcheck.grading.grade import grade_submission
from labcheck.report.words import worded
from labcheck.reading.ingest import read_rows
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec
from labcheck.reading.submission import normalise

from conftest import csv_bytes

HONEST = settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=list(HealthCheck))
FT = 0.3048  # international foot (1959 agreement)


class Student:
    """Rounds as a student does, reports rows, and picks rounded or unrounded values to carry on with."""

    def __init__(self, rnd, spec):
        self.rnd, self.spec, self.rows = rnd, spec, [("identity", "student_id", "s1")]

    def figures(self, x, tol_abs):
        """Round x to 3-5 significant figures, or more until half a unit is within half the tolerance."""
        n = self.rnd.choice((3, 4, 5))
        while True:
            if x == 0:
                return 0.0, 6
            decimals = n - 1 - math.floor(math.log10(abs(x)))
            if 0.5 * 10.0 ** -decimals <= 0.5 * tol_abs or n > 12:
                return round(x, decimals), max(decimals, 0)
            n += 1

    def report(self, key, x, unit, tol_abs):
        """Write x (in ``unit``) rounded; return the value the student carries on with."""
        rounded, decimals = self.figures(x, tol_abs)
        self.rows.append(("result", key, f"{rounded:.{decimals}f}", unit))
        return rounded if self.rnd.random() < 0.5 else x

    def tol(self, key, x_display, unit_factor=1.0):
        """The step's tolerance in the display unit at value x_display."""
        t = self.spec.steps[key].tolerance
        return abs(x_display) * t.relative if t.relative is not None else t.absolute_si / unit_factor


def grade(spec, rows):
    raw = read_rows(csv_bytes(rows), "honest.csv")
    assert raw.error is None, raw.error
    return worded(grade_submission(normalise(raw, spec), spec))


def assert_honest(record):
    bad = [(s["id"], s["verdict"], s["reported_as"], s["expected"], s["explanation"]) for s in record["steps"]
           if s["verdict"] in ("wrong", "carried")]
    assert not bad, bad
    assert not record["flags"], record["flags"]


# ------------------------------------------------------------------ dip of the horizon

DIP = load_spec(shipped_spec("horizon_dip"))
ARCMIN = math.radians(1 / 60)


@HONEST
@given(st.integers(0, 2**32))
def test_dip_lab(seed):
    rnd = random.Random(seed)
    st_ = Student(rnd, DIP)
    h_true = rnd.uniform(5.0, 60.0)
    k = 0.13  # the spec's refraction coefficient
    # The dip from the tangent-line geometry with refraction: cos d = R' / (R' + h), R' = R/(1 − k).
    r_app = 6371008.8 / (1 - k)
    d_true = math.acos(r_app / (r_app + h_true)) / ARCMIN
    readings = [round(d_true + rnd.gauss(0, 0.15), 1) for _ in range(rnd.randint(3, 8))]
    if rnd.random() < 0.3:  # eye height taped in feet; converted by hand
        h_ft = round(h_true / FT, 1)
        st_.rows.append(("observation", "eye_height", f"{h_ft:.1f}", "ft"))
        h = round(h_ft * FT, rnd.choice((2, 3)))
    else:
        h = round(h_true, 2)
        st_.rows.append(("observation", "eye_height", f"{h:.2f}", "m"))
    st_.rows += [("observation", "dip_angle", f"{r:.1f}", "arcmin") for r in readings]
    mean = st_.report("dip_mean", sum(readings) / len(readings), "arcmin", st_.tol("dip_mean", 0, ARCMIN))
    d = mean * ARCMIN
    ra_km = h / (1 / math.cos(d) - 1) / 1000  # R' = h / (sec d − 1)
    ra_km = st_.report("dip.radius_apparent", ra_km, "km", st_.tol("dip.radius_apparent", ra_km))
    r_km = (1 - k) * ra_km
    r_km = st_.report("dip.radius", r_km, "km", st_.tol("dip.radius", r_km))
    err = 100 * (r_km - 6371.0088) / 6371.0088
    st_.report("dip.radius_error_pct", err, "%", st_.tol("dip.radius_error_pct", err))
    assert_honest(grade(DIP, st_.rows))


# ------------------------------------------------------------------ radius from a baseline

RADIUS = load_spec(shipped_spec("baseline_radius"))


def _dms(x_deg, hemi):
    a = abs(x_deg)
    d = int(a)
    m = int((a - d) * 60)
    s = round((a - d - m / 60) * 3600, 1)
    if s >= 60:
        s, m = 0.0, m + 1
    if m >= 60:
        m, d = 0, d + 1
    return f"{d} {m:02d} {s:04.1f} {hemi[0] if x_deg >= 0 else hemi[1]}"


@HONEST
@given(st.integers(0, 2**32))
def test_baseline_radius_lab(seed):
    rnd = random.Random(seed)
    st_ = Student(rnd, RADIUS)
    lat1, lon1 = rnd.uniform(-60, 60), rnd.uniform(-170, 170)
    lat2, lon2 = lat1 + rnd.uniform(-0.8, 0.8), lon1 + rnd.uniform(-0.8, 0.8)
    dms = rnd.random() < 0.5
    coords = {}
    for name, value, hemi in (("lat_1", lat1, "NS"), ("lon_1", lon1, "EW"), ("lat_2", lat2, "NS"), ("lon_2", lon2, "EW")):
        if dms:
            text = _dms(value, hemi)
            st_.rows.append(("observation", name, text, ""))
            parts = text.split()
            v = int(parts[0]) + int(parts[1]) / 60 + float(parts[2]) / 3600
            coords[name] = round(v if parts[3] in "NE" else -v, 6)  # converted by hand to 6 decimals
        else:
            coords[name] = round(value, 6)
            st_.rows.append(("observation", name, f"{coords[name]:.6f}", "deg"))
    # The ground distance as measured: the sphere's arc at R = 6371 km, with a little field error.
    p1, p2 = math.radians(coords["lat_1"]), math.radians(coords["lat_2"])
    dl = math.radians(coords["lon_2"] - coords["lon_1"])
    arc = 6371.0 * math.acos(min(1.0, math.sin(p1) * math.sin(p2) + math.cos(p1) * math.cos(p2) * math.cos(dl)))
    s_km = round(arc * (1 + rnd.gauss(0, 0.002)), 3)
    st_.rows.append(("observation", "ground_distance", f"{s_km:.3f}", "km"))
    dlat = st_.report("delta_lat", coords["lat_2"] - coords["lat_1"], "deg", st_.tol("delta_lat", 0, DEG))
    dlon = st_.report("delta_lon", coords["lon_2"] - coords["lon_1"], "deg", st_.tol("delta_lon", 0, DEG))
    hav = math.sin(math.radians(dlat) / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(math.radians(dlon) / 2) ** 2
    hav = st_.report("haversine", hav, "", st_.tol("haversine", hav))
    theta = math.degrees(2 * math.asin(math.sqrt(hav)))
    theta = st_.report("central_angle", theta, "deg", st_.tol("central_angle", theta))
    radius = s_km / math.radians(theta)
    st_.report("radius", radius, "km", st_.tol("radius", radius))
    assert_honest(grade(RADIUS, st_.rows))


DEG = math.radians(1)


# ------------------------------------------------------------------ taped baseline

TAPED = load_spec(shipped_spec("taped_baseline"))
# The spec's constants, written out (lab_specs/taped_baseline.toml).
NOM, CAL, TS, PS, AREA, E, W, ALPHA = 30.0, 30.0032, 20.0, 50.0, 2.6e-6, 200e9, 0.20, 0.0000116


@HONEST
@given(st.integers(0, 2**32))
@example(446570506)  # forward and back written as 169.311 m both: the precision ratio is only bounded below
@example(438272209)  # the same at 173.474 m
@example(2421592561)  # 181.186 and 181.187 m: within half a unit of each other's, so the same
@example(1744458416)  # the same, a third time
def test_taped_baseline_lab(seed):
    assert_honest(grade(TAPED, _honest_taped_rows(seed)))


def test_a_precision_ratio_below_the_written_floor_is_still_wrong():
    # Regression (honest students marked wrong): with forward and back written to the same last digit,
    # the precision ratio can be any value from mean / (half a unit each) up, and the grader said
    # "wrong" to honest ratios the written lengths allow.  A ratio below that floor is still wrong.
    rows = _honest_taped_rows(446570506)
    ok = grade(TAPED, rows)
    ratio = next(s for s in ok["steps"] if s["id"] == "precision_ratio")
    assert ratio["verdict"] == "correct" and "any value from 169" in ratio["explanation"], ratio["explanation"]
    low = [r if r[1] != "precision_ratio" else (*r[:2], "50000", *r[3:]) for r in rows]
    wrong = next(s for s in grade(TAPED, low)["steps"] if s["id"] == "precision_ratio")
    assert wrong["verdict"] == "wrong"


def _honest_taped_rows(seed):
    """An honest taped-baseline submission (the published corrections, written from the formulas here)."""
    rnd = random.Random(seed)
    st_ = Student(rnd, TAPED)
    n = rnd.randint(4, 9)
    spans = [round(rnd.uniform(15.0, 29.9), 3) for _ in range(n)]
    suspended = rnd.random() < 0.5
    elevation = round(rnd.uniform(0, 900), 1)
    st_.rows += [("observation", "support", "suspended" if suspended else "supported", ""),
                 ("observation", "mean_elevation", f"{elevation}", "m")]
    lengths = {}
    for run in ("forward", "back"):
        readings = spans if run == "forward" else [round(x + rnd.gauss(0, 0.002), 3) for x in reversed(spans)]
        slopes = [round(rnd.uniform(-4, 4), 1) for _ in readings]
        st_.rows += [("observation", f"{run}_tape_reading", f"{x:.3f}", "m") for x in readings]
        st_.rows += [("observation", f"{run}_slope_angle", f"{a:.1f}", "deg") for a in slopes]
        if rnd.random() < 0.3:  # a thermometer in °F, converted by hand (the 55 °F → 12.8 °C)
            t_f = rnd.randint(35, 95)
            st_.rows.append(("observation", f"{run}_temperature", f"{t_f}", "F"))
            t = round((t_f - 32) * 5 / 9, 1)
        else:
            t = round(rnd.uniform(2, 35), 1)
            st_.rows.append(("observation", f"{run}_temperature", f"{t:.1f}", "C"))
        p = rnd.choice((50, 60, 70, 80, 100))
        st_.rows.append(("observation", f"{run}_tension", f"{p}", "N"))
        L = st_.report(f"{run}_measured", sum(readings), "m", st_.tol(f"{run}_measured", 0))
        c_l = st_.report(f"{run}_standardisation", L * (CAL - NOM) / NOM, "m", st_.tol(f"{run}_standardisation", 0))
        c_t = st_.report(f"{run}_temperature_correction", ALPHA * (t - TS) * L, "m",
                         st_.tol(f"{run}_temperature_correction", 0))
        c_p = st_.report(f"{run}_tension_correction", (p - PS) * L / (AREA * E), "m",
                         st_.tol(f"{run}_tension_correction", 0))
        sag = -sum(W**2 * x**3 / (24 * p**2) for x in readings) if suspended else 0.0
        c_s = st_.report(f"{run}_sag_correction", sag, "m", st_.tol(f"{run}_sag_correction", 0))
        slope = sum(x * (math.cos(math.radians(a)) - 1) for x, a in zip(readings, slopes))
        c_h = st_.report(f"{run}_slope_correction", slope, "m", st_.tol(f"{run}_slope_correction", 0))
        lengths[run] = st_.report(f"{run}_horizontal_length", L + c_l + c_t + c_p + c_s + c_h, "m",
                                  st_.tol(f"{run}_horizontal_length", 0))
    H = st_.report("mean_length", (lengths["forward"] + lengths["back"]) / 2, "m", st_.tol("mean_length", 0))
    diff = abs(lengths["forward"] - lengths["back"])
    if diff > 0:
        ratio = H / diff
        st_.report("precision_ratio", ratio, "", st_.tol("precision_ratio", ratio))
    sea = H * 6371008.8 / (6371008.8 + elevation)
    st_.report("sea_level_length", sea, "m", st_.tol("sea_level_length", 0))
    return st_.rows


# ------------------------------------------------------------------ sextant noon sight

SIGHT = load_spec(shipped_spec("noon_sight"))


@HONEST
@given(st.integers(0, 2**32))
def test_noon_sight_lab(seed):
    rnd = random.Random(seed)
    st_ = Student(rnd, SIGHT)
    lat, lon = rnd.uniform(-55, 55), rnd.uniform(-170, 170)
    day = datetime(2026, 1, 1, tzinfo=timezone.utc) + timedelta(days=rnd.randint(0, 364))
    # Local apparent noon from pvlib's SPA (transit), the sight within a minute of it.
    transit = spa.transit_sunrise_sunset(np.array([day.timestamp()]), lat, lon, 69.0, 1)[0][0]
    when = datetime.fromtimestamp(float(transit) + rnd.uniform(-60, 60), timezone.utc).replace(microsecond=0)
    unix = np.array([when.timestamp()])
    _, _, dec = spa.solar_position(unix, lat, lon, 0, 1010, 10, 69.0, 0.5667, sst=True)
    dec = float(dec[0])
    r_au = float(spa.earthsun_distance(unix, 69.0, 1)[0])
    south = lat > dec
    z_true = abs(lat - dec)
    # Forward: true altitude -> what the sextant reads (lower limb, sea horizon, eye height h).
    h_eye = round(rnd.uniform(2, 15), 1)
    ho = 90 - z_true
    sd = 959.63 / 3600 / r_au
    # Invert Ho = Ha − R(Ha) + SD + PA by fixed-point iteration (Bennett: R = cot(h + 7.31/(h + 4.4)) arcmin).
    ha = ho
    for _ in range(20):
        refr = 1 / math.tan(math.radians(ha + 7.31 / (ha + 4.4))) / 60
        pa = 8.794 / 3600 / r_au * math.cos(math.radians(ha))
        ha = ho + refr - sd - pa
    hs_true = ha + 1.76 * math.sqrt(h_eye) / 60  # dip 1.76'·√h (the almanac's rule)
    ie = round(rnd.uniform(-3, 3), 1)  # arcmin, "off the arc" negative
    sights = [hs_true + ie / 60 + rnd.gauss(0, 0.3) / 60 for _ in range(rnd.randint(3, 5))]
    texts = []
    for s in sights:
        d = int(s)
        m = round((s - d) * 60, 1)
        if m >= 60:
            d, m = d + 1, 0.0
        texts.append((d, m))
        st_.rows.append(("observation", "sextant_altitude", f"{d}°{m:04.1f}'", ""))
    st_.rows += [("observation", "index_error", f"{ie}", "arcmin"), ("observation", "horizon", "sea", ""),
                 ("observation", "limb", "lower", ""), ("observation", "eye_height", f"{h_eye}", "m"),
                 ("observation", "observed_at", when.isoformat().replace("+00:00", "Z"), ""),
                 ("observation", "lon", f"{lon:.4f}", "deg"), ("observation", "lat", f"{lat:.4f}", "deg"),
                 ("observation", "sun_direction", "south" if south else "north", "")]
    read = [d + m / 60 for d, m in texts]
    am = 1 / 60
    hs = st_.report("altitude_mean", sum(read) / len(read), "deg", st_.tol("altitude_mean", 0, DEG))
    ic = st_.report("index_corrected", hs - ie / 60, "deg", st_.tol("index_corrected", 0, DEG))
    ha = st_.report("apparent_altitude", ic - 1.76 * math.sqrt(h_eye) / 60, "deg", st_.tol("apparent_altitude", 0, DEG))
    refr = 1 / math.tan(math.radians(ha + 7.31 / (ha + 4.4)))  # arcmin at 1010 hPa and 10 °C (the defaults)
    refr = st_.report("refraction", refr, "arcmin", st_.tol("refraction", 0, ARCMIN))
    sd_m = st_.report("semi_diameter", sd * 60, "arcmin", st_.tol("semi_diameter", 0, ARCMIN))
    pa_m = st_.report("parallax", 8.794 / 60 / r_au * math.cos(math.radians(ha)), "arcmin", st_.tol("parallax", 0, ARCMIN))
    ho = st_.report("observed_altitude", ha + (-refr + sd_m + pa_m) * am, "deg", st_.tol("observed_altitude", 0, DEG))
    dec_r = st_.report("declination", dec, "deg", st_.tol("declination", 0, DEG))
    z = st_.report("zenith_distance", 90 - ho, "deg", st_.tol("zenith_distance", 0, DEG))
    st_.report("latitude", dec_r + z if south else dec_r - z, "deg", st_.tol("latitude", 0, DEG))
    assert_honest(grade(SIGHT, st_.rows))


# ------------------------------------------------------------------ the issue's own cases

def _taped_rows(temperature=("11.5", "C"), back_same=False):
    spans = ["29.512", "29.253", "28.823", "29.607", "28.982", "29.741", "29.320", "27.377", "28.435", "29.391",
             "28.600", "22.009"]  # 341.050 m in twelve spans
    rows = [("identity", "student_id", "s1"), ("observation", "support", "supported", ""),
            ("observation", "mean_elevation", "38.6", "m")]
    for run in ("forward", "back"):
        rows += [("observation", f"{run}_tape_reading", x, "m") for x in spans]
        rows += [("observation", f"{run}_slope_angle", "0.0", "deg")]
        rows += [("observation", f"{run}_temperature", *temperature), ("observation", f"{run}_tension", "50", "N")]
    return rows


def test_a_hand_converted_temperature_keeps_an_honest_correction_right():
    # The case: 55 °F converted by hand to 12.8 °C, length 341.050 m: the correction is
    # −0.028572 m exactly; the student's −0.028 m (to the mm, from 12.8 °C) is honest.
    rows = _taped_rows(("55", "F")) + [("result", "forward_measured", "341.050", "m"),
                                       ("result", "forward_temperature_correction", "-0.028", "m")]
    rec = grade(TAPED, rows)
    step = next(s for s in rec["steps"] if s["id"] == "forward_temperature_correction")
    assert abs(step["expected"] - 0.0000116 * ((55 - 32) * 5 / 9 - 20) * 341.050) < 1e-9  # −0.028572 m
    assert step["verdict"] == "correct" and "converted by hand" in step["explanation"]
    assert step["tolerance_widened_by"] > 0


def test_identical_runs_precision_is_graded_on_its_own_terms():
    # Forward and back recompute to the same length: N is unbounded, any positive N is consistent.
    rows = _taped_rows() + [("result", "precision_ratio", "183000", "")]
    step = next(s for s in grade(TAPED, rows)["steps"] if s["id"] == "precision_ratio")
    assert step["verdict"] == "correct" and "unbounded" in step["explanation"]


def test_no_carried_without_a_wrong_earlier_step_named():
    # Every "carried" explanation names the earlier step that was wrong (issue 9: "your own value of :").
    rows = _taped_rows() + [("result", "forward_measured", "351.050", "m"),  # wrong by 10 m
                            ("result", "forward_standardisation", f"{351.050 * 0.0032 / 30:.4f}", "m")]
    step = next(s for s in grade(TAPED, rows)["steps"] if s["id"] == "forward_standardisation")
    assert step["verdict"] == "carried" and "your own value of forward measured length" in step["explanation"]


# ------------------------------------------------------------------ odometer baseline

ODOMETER = load_spec(shipped_spec("odometer_baseline"))


@HONEST
@given(st.integers(0, 2**32))
def test_odometer_baseline_lab(seed):
    rnd = random.Random(seed)
    st_ = Student(rnd, ODOMETER)
    course = round(rnd.uniform(0.8, 2.0), 3)
    bias = rnd.uniform(0.97, 1.03)  # the odometer reads long or short
    a = round(rnd.uniform(1000, 90000), 1)
    b = round(a + course / bias, 1)
    c = round(rnd.uniform(1000, 90000), 1)
    d = round(c + 6.842 / bias * rnd.uniform(0.99, 1.01), 1)
    st_.rows += [("observation", "calibration_course_length", f"{course:.3f}", "km"),
                 ("observation", "calibration_start", f"{a:.1f}", "km"), ("observation", "calibration_end", f"{b:.1f}", "km"),
                 ("observation", "odometer_start", f"{c:.1f}", "km"), ("observation", "odometer_end", f"{d:.1f}", "km")]
    f = course / (b - a)
    f = st_.report("calibration_factor", f, "", st_.tol("calibration_factor", f))
    dist = f * (d - c)
    st_.report("odometer_distance", dist, "km", st_.tol("odometer_distance", dist))
    assert_honest(grade(ODOMETER, st_.rows))


# ------------------------------------------------------------------ gnomon, one site and two (meridian arc)

SHADOW = load_spec(shipped_spec("noon_shadow"))
ARC = load_spec(shipped_spec("meridian_arc"))


def _bennett_arcmin(h_deg):
    """Bennett (1982): R = cot(h + 7.31/(h + 4.4)) arcmin, at 1010 hPa and 10 °C."""
    return 1 / math.tan(math.radians(h_deg + 7.31 / (h_deg + 4.4)))


def _gnomon_site(st_, rnd, prefix, lat, lon, day):
    """Rows and reported steps of one gnomon site (penumbra centre: the sun's centre); returns the latitude."""
    transit = spa.transit_sunrise_sunset(np.array([day.timestamp()]), lat, lon, 69.0, 1)[0][0]
    when = datetime.fromtimestamp(float(transit) + rnd.uniform(-240, 240), timezone.utc).replace(microsecond=0)
    unix = np.array([when.timestamp()])
    _, _, dec = spa.solar_position(unix, lat, lon, 0, 1010, 10, 69.0, 0.5667, sst=True)
    dec = float(dec[0])
    z_true = abs(lat - dec)
    assume(z_true > 5)  # a gnomon almost under the sun casts no shadow worth measuring
    z_app = z_true - _bennett_arcmin(90 - z_true) / 60  # refraction lifts the sun (close enough to invert)
    g = round(rnd.uniform(1.0, 2.5), 3)
    shadows = [round(g * math.tan(math.radians(z_app)) + rnd.gauss(0, 0.004), 3) for _ in range(rnd.randint(3, 6))]
    p = prefix
    st_.rows += [("observation", f"{p}gnomon_height", f"{g:.3f}", "m")]
    st_.rows += [("observation", f"{p}shadow_length", f"{x:.3f}", "m") for x in shadows]
    st_.rows += [("observation", f"{p}observed_at", when.isoformat().replace("+00:00", "Z"), ""),
                 ("observation", f"{p}lon", f"{lon:.5f}", "deg"), ("observation", f"{p}lat", f"{lat:.5f}", "deg"),
                 ("observation", f"{p}sun_direction", "south" if lat > dec else "north", "")]
    s = st_.report(f"{p}shadow_mean", sum(shadows) / len(shadows), "m", st_.tol(f"{p}shadow_mean", 0))
    z = st_.report(f"{p}zenith_observed", math.degrees(math.atan2(s, g)), "deg", st_.tol(f"{p}zenith_observed", 0, DEG))
    zc = st_.report(f"{p}zenith_centre", z, "deg", st_.tol(f"{p}zenith_centre", 0, DEG))
    zt = st_.report(f"{p}zenith_true", zc + _bennett_arcmin(90 - zc) / 60, "deg", st_.tol(f"{p}zenith_true", 0, DEG))
    d = st_.report(f"{p}declination", dec, "deg", st_.tol(f"{p}declination", 0, DEG))
    return st_.report(f"{p}latitude", d + zt if lat > dec else d - zt, "deg", st_.tol(f"{p}latitude", 0, DEG))


@HONEST
@given(st.integers(0, 2**32))
def test_noon_shadow_lab(seed):
    rnd = random.Random(seed)
    st_ = Student(rnd, SHADOW)
    day = datetime(2026, 1, 1, tzinfo=timezone.utc) + timedelta(days=rnd.randint(0, 364))
    _gnomon_site(st_, rnd, "", rnd.uniform(-55, 55), rnd.uniform(-170, 170), day)
    assert_honest(grade(SHADOW, st_.rows))


@HONEST
@given(st.integers(0, 2**32))
def test_meridian_arc_lab(seed):
    rnd = random.Random(seed)
    st_ = Student(rnd, ARC)
    day = datetime(2026, 1, 1, tzinfo=timezone.utc) + timedelta(days=rnd.randint(0, 364))
    lat1, lon = rnd.uniform(-50, 50), rnd.uniform(-170, 170)
    lat2 = lat1 + rnd.choice((-1, 1)) * rnd.uniform(2.0, 6.0)
    phi1 = _gnomon_site(st_, rnd, "site1_", lat1, lon, day)
    phi2 = _gnomon_site(st_, rnd, "site2_", lat2, lon + rnd.uniform(-0.2, 0.2), day)
    s_km = round(abs(lat2 - lat1) * math.pi / 180 * 6367.0 * rnd.uniform(0.99, 1.01), 1)
    st_.rows.append(("observation", "north_south_distance", f"{s_km:.1f}", "km"))
    dlat = st_.report("delta_lat", phi2 - phi1, "deg", st_.tol("delta_lat", 0, DEG))
    radius = s_km / abs(math.radians(dlat))
    st_.report("radius", radius, "km", st_.tol("radius", radius))
    assert_honest(grade(ARC, st_.rows))


# ------------------------------------------------------------------ theodolite: face pairs, heighting, reciprocal

THEODOLITE = load_spec(shipped_spec("trig_heighting"))
ARCSEC = 1 / 3600


def _dms_text(x_deg):
    total = round(x_deg * 3600)
    d, rest = divmod(total, 3600)
    m, s = divmod(rest, 60)
    return f"{d} {m:02d} {s:02d}", d + m / 60 + s / 3600


@HONEST
@given(st.integers(0, 2**32))
def test_trig_heighting_lab(seed):
    rnd = random.Random(seed)
    st_ = Student(rnd, THEODOLITE)
    # Face pairs: FL + FR = 360° + 2i.
    z_true, i_true = rnd.uniform(80, 100), rnd.uniform(-15, 15) * ARCSEC
    fl, fr = [], []
    for _ in range(rnd.randint(2, 4)):
        noise = rnd.gauss(0, 2) * ARCSEC
        t_l, v_l = _dms_text(z_true + i_true + noise)
        t_r, v_r = _dms_text(360 - z_true + i_true + noise + rnd.gauss(0, 1) * ARCSEC)
        st_.rows += [("observation", "zenith_face_left", t_l, ""), ("observation", "zenith_face_right", t_r, "")]
        fl.append(v_l)
        fr.append(v_r)
    i_s = sum((a + b - 360) / 2 for a, b in zip(fl, fr)) / len(fl) * 3600
    i_s = st_.report("index_error", i_s, "arcsec", st_.tol("index_error", 0, math.radians(ARCSEC)))
    st_.report("zenith_corrected", sum(fl) / len(fl) - i_s / 3600, "deg", st_.tol("zenith_corrected", 0, DEG))
    # Heighting: ΔH = S cos z + (1 − k) D²/(2R) + hi − ht, D = S sin z.
    S = round(rnd.uniform(200, 3000), 3)
    zt, z = _dms_text(rnd.uniform(85, 95))
    hi, ht = round(rnd.uniform(1.3, 1.7), 3), round(rnd.uniform(1.3, 2.0), 3)
    st_.rows += [("observation", "slope_distance", f"{S:.3f}", "m"), ("observation", "zenith_angle", zt, ""),
                 ("observation", "instrument_height", f"{hi:.3f}", "m"), ("observation", "target_height", f"{ht:.3f}", "m")]
    D = st_.report("horizontal_distance", S * math.sin(math.radians(z)), "m", st_.tol("horizontal_distance", 0))
    cr = st_.report("curvature_refraction", (1 - 0.13) * D**2 / (2 * 6371008.8), "m", st_.tol("curvature_refraction", 0))
    st_.report("heighting.height_difference", S * math.cos(math.radians(z)) + cr + hi - ht, "m",
               st_.tol("heighting.height_difference", 0))
    # Reciprocal: z_AB + z_BA − 180° = (1 − k)·S/R; ΔH from the half-difference, slope or horizontal.
    dist = round(rnd.uniform(500, 4000), 3)
    k = rnd.uniform(0.05, 0.2)
    alpha = math.degrees(math.atan2(rnd.uniform(-150, 150), dist))
    excess = math.degrees((1 - k) * dist / 6371008.8)
    t_ab, z_ab = _dms_text(90 - alpha + excess / 2)
    t_ba, z_ba = _dms_text(90 + alpha + excess / 2)
    horizontal = rnd.random() < 0.5
    st_.rows += [("observation", "zenith_ab", t_ab, ""), ("observation", "zenith_ba", t_ba, ""),
                 ("observation", "reciprocal_distance", f"{dist:.3f}", "m"),
                 ("observation", "distance_kind", "horizontal" if horizontal else "slope", "")]
    e = st_.report("angle_excess", (z_ab + z_ba - 180) * 3600, "arcsec", st_.tol("angle_excess", 0, math.radians(ARCSEC)))
    k_rep = 1 - 6371008.8 * math.radians(e / 3600) / dist
    st_.report("refraction_coefficient", k_rep, "", st_.tol("refraction_coefficient", 0))
    half = math.radians((z_ba - z_ab) / 2)
    dh = dist * (math.tan(half) if horizontal else math.sin(half))
    st_.report("reciprocal.height_difference", dh, "m", st_.tol("reciprocal.height_difference", 0))
    assert_honest(grade(THEODOLITE, st_.rows))


def test_no_widening_when_nothing_was_converted_by_hand():
    # A group that tapes in feet and reports its lengths in feet converted nothing by hand: its 1 mm
    # tolerance on the measured length stays 1 mm (it was widened by 12 mm, for every observation in
    # feet or °F, whether the step used it or not).  Reported in metres, the same readings widen it,
    # and the sheet names only the observations the step uses, by their labels.
    from labcheck.demo import SECTIONS

    section = next(s for s in SECTIONS if s.lab == "taped_baseline")
    group = next(g for g in section.generate() if any(r[3] == "ft" for r in g.rows if r[1] == "forward_tape_reading"))
    rec = grade(TAPED, group.rows)
    step = next(s for s in rec["steps"] if s["id"] == "forward_measured")
    assert step["reported_as"].endswith("ft") and step["tolerance_widened_by"] is None
    feet = sum(float(r[2]) for r in group.rows if r[1] == "forward_tape_reading")
    rows = [r for r in group.rows if r[1] != "forward_measured"] + [("result", "forward_measured", f"{feet * FT:.4f}", "m")]
    step = next(s for s in grade(TAPED, rows)["steps"] if s["id"] == "forward_measured")
    assert step["verdict"] == "correct" and step["tolerance_widened_by"] > 0
    assert "forward tape readings (converted by hand)" in step["explanation"]
    assert "temperature" not in step["explanation"]  # the measured length does not use it
