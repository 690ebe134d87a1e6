"""The sun and the noon-sight corrections against outside references.

* NREL SPA (Reda & Andreas 2004, NREL/TP-560-34302; ±0.0003°) through pvlib,
  installed for tests only: declination and equation of time at 1,200 instants over
  1950-2100, and the paper's worked example (every intermediate).
* Bennett's refraction (1982, J. Navigation 35:255–259) as tabulated in
  shared/references.md (34.48′ at 0°, 9.88′ at 5°, 5.39′ at 10°, 1.72′ at 30°,
  0.99′ at 45°) and Meeus, Astronomical Algorithms, Example 16.a (28.754′ at 0.5°).
* The almanac's dip rule 1.76′·√h and its sun altitude correction for the lower
  limb at 37° in December (+15.0′; second-hand, references.md).
"""

import math
from datetime import datetime, timedelta, timezone

import numpy as np
import pytest
from pvlib import spa

from labcheck.reductions import sun

ARCMIN = math.radians(1 / 60)
ARCSEC = math.radians(1 / 3600)


def instants_1950_2100(n=1200, seed=1):
    """n instants spread over 1950-2100 at random times of day (seeded)."""
    rng = np.random.default_rng(seed)
    start = datetime(1950, 1, 1, tzinfo=timezone.utc).timestamp()
    end = datetime(2100, 12, 31, tzinfo=timezone.utc).timestamp()
    return [datetime.fromtimestamp(u, timezone.utc) for u in np.sort(rng.uniform(start, end, n))]


def spa_reference(times, delta_t):
    """pvlib's SPA: apparent geocentric declination [deg] and equation of time [s]."""
    unix = np.array([t.timestamp() for t in times])
    _, _, dec = spa.solar_position(unix, 45.0, 10.0, 0, 1010, 10, delta_t, 0.5667, sst=True)
    *_, eot_min = spa.solar_position(unix, 45.0, 10.0, 0, 1010, 10, delta_t, 0.5667)
    return np.asarray(dec), np.asarray(eot_min) * 60.0


def test_algorithm_against_pvlib_spa_1950_2100():
    # NREL SPA through pvlib (test-only), 1,200 instants over 1950-2100, the same ΔT given to both:
    # the bar is 1″ in declination and 0.1 s in the equation of time.
    times = instants_1950_2100()
    ours_dec, ours_eot = [], []
    dec_ref, eot_ref = np.empty(len(times)), np.empty(len(times))
    for i, t in enumerate(times):
        c = sun.solar_coordinates(sun.julian_day(t), 67.0)
        ours_dec.append(math.degrees(c["declination"]))
        ours_eot.append(c["equation_of_time"])
    dec_ref, eot_ref = spa_reference(times, 67.0)
    assert np.max(np.abs(np.array(ours_dec) - dec_ref)) * 3600 < 1.0
    assert np.max(np.abs(np.array(ours_eot) - eot_ref)) < 0.1


def test_declination_and_equation_of_time_with_our_delta_t_1950_2100():
    # End to end, with our ΔT (Espenak & Meeus) against pvlib's SPA with pvlib's ΔT for the same month.
    times = instants_1950_2100(seed=2)
    years = np.array([t.year for t in times], dtype=float)
    months = np.array([t.month for t in times], dtype=float)
    delta_t = spa.calculate_deltat(years, months)
    dec_ref, eot_ref = spa_reference(times, delta_t)
    dec = np.degrees([sun.declination(t) for t in times])
    eot = np.array([sun.equation_of_time(t) for t in times])
    assert np.max(np.abs(dec - dec_ref)) * 3600 < 1.0
    assert np.max(np.abs(eot - eot_ref)) < 0.1


def test_delta_t_matches_the_published_polynomials():
    # Espenak & Meeus (NASA, 2006) as implemented in pvlib (calculate_deltat); pvlib takes mid-month.
    for year in range(1950, 2101, 5):
        for month in (1, 7):
            ours = sun.delta_t_s(year + (month - 0.5) / 12)
            assert ours == pytest.approx(float(spa.calculate_deltat(year, month)), abs=0.01)


def test_spa_paper_example():
    # Reda & Andreas (2004), NREL/TP-560-34302, Table A5.1 (the worked example): 2003-10-17 12:30:30
    # at UTC−7, ΔT = 67 s.  Values as printed in the paper (from memory, cross-checked with pvlib's tests).
    t = datetime(2003, 10, 17, 12, 30, 30, tzinfo=timezone(timedelta(hours=-7)))
    c = sun.solar_coordinates(sun.julian_day(t), 67.0)
    assert sun.julian_day(t) == pytest.approx(2452930.312847, abs=1e-6)
    assert c["heliocentric_longitude_deg"] == pytest.approx(24.0182616917, abs=1e-9)
    assert c["heliocentric_latitude_deg"] == pytest.approx(-0.0001011219, abs=1e-9)
    assert c["distance_au"] == pytest.approx(0.9965422974, abs=1e-9)
    assert c["nutation_longitude_deg"] == pytest.approx(-0.00399840, abs=1e-8)
    assert c["nutation_obliquity_deg"] == pytest.approx(0.00166657, abs=1e-8)
    assert c["true_obliquity_deg"] == pytest.approx(23.440465, abs=1e-6)
    assert c["apparent_longitude_deg"] == pytest.approx(204.0085519281, abs=1e-9)
    assert math.degrees(c["right_ascension"]) == pytest.approx(202.22741, abs=1e-5)
    assert math.degrees(c["declination"]) == pytest.approx(-9.31434, abs=1e-5)
    assert c["equation_of_time"] / 60 == pytest.approx(14.641503, abs=1e-5)


def test_an_almanac_value_read_to_a_tenth_of_a_minute_matches():
    # The issue's case: an almanac's 6°46'32" at 2026-04-07T01:38:47Z; SPA gives 6.775631°.
    t = datetime(2026, 4, 7, 1, 38, 47, tzinfo=timezone.utc)
    assert math.degrees(sun.declination(t)) == pytest.approx(6.775631, abs=1 / 3600)
    assert abs(math.degrees(sun.declination(t)) - (6 + 46 / 60 + 32 / 3600)) * 60 < 0.1


def test_local_apparent_noon_is_the_meridian_transit():
    # At local apparent noon the hour angle is zero (definition); check against SPA's azimuth too:
    # the sun is due south (180°) for a northern site when δ < φ.
    day = datetime(2026, 9, 21, tzinfo=timezone.utc)
    lon = math.radians(-33.6142)
    noon = sun.local_apparent_noon(day, lon)
    assert abs(sun.hour_angle(noon, lon)) < math.radians(0.01)
    *_, azimuth, _ = spa.solar_position(np.array([noon.timestamp()]), 57.81, -33.6142, 0, 1010, 10, 69.0, 0.5667)
    assert azimuth[0] == pytest.approx(180.0, abs=0.05)


@pytest.mark.parametrize("h_deg, r_arcmin", [(0.0, 34.48), (5.0, 9.88), (10.0, 5.39), (30.0, 1.72), (45.0, 0.99)])
def test_bennett_published_values(h_deg, r_arcmin):
    # Values printed to 0.01′ (references.md).
    assert float(sun.refraction_bennett(math.radians(h_deg))) / ARCMIN == pytest.approx(r_arcmin, abs=0.005)


def test_meeus_example_16a():
    # Meeus, Example 16.a: apparent altitude 0.5° → Bennett 28.754′ (printed to 0.001′).
    assert float(sun.refraction_bennett(math.radians(0.5))) / ARCMIN == pytest.approx(28.754, abs=0.0005)


@pytest.mark.parametrize("h_deg", [0.5, 2.0, 5.0, 15.0, 30.0, 60.0, 89.0])
def test_saemundsson_round_trip(h_deg):
    # Apparent → true with Bennett, then true → refraction with Sæmundsson: agreement within about 4″
    # (Meeus ch. 16; references.md).
    ha = math.radians(h_deg)
    r = float(sun.refraction_bennett(ha))
    r_back = float(sun.refraction_saemundsson(ha - r))
    assert abs(r_back - r) < 4.5 * ARCSEC


def test_refraction_scales_with_pressure_and_temperature():
    # Meeus ch. 16: multiply by (P/1010)·(283/(273 + T)).
    h = math.radians(20)
    assert float(sun.refraction_bennett(h, 95000.0, 25.0)) == pytest.approx(
        float(sun.refraction_bennett(h)) * (950 / 1010) * (283 / 298), rel=1e-12)


@pytest.mark.parametrize("h_m, dip_arcmin", [(2.0, 2.49), (10.0, 5.57), (30.0, 9.64)])
def test_almanac_dip_rule(h_m, dip_arcmin):
    assert float(sun.dip_of_sea_horizon(h_m)) / ARCMIN == pytest.approx(dip_arcmin, abs=0.005)


def test_sun_altitude_correction_worked_example():
    # Sun's lower limb, 21 December, apparent altitude 37°: refraction −1.3′, parallax +0.1′,
    # semi-diameter +16.3′, total +15.1′; the almanac's table gives +15.0′ (second-hand): within 0.1′.
    t = datetime(2026, 12, 21, 12, tzinfo=timezone.utc)
    ha = math.radians(37.0)
    total = -float(sun.refraction_bennett(ha)) + sun.semi_diameter(t) + sun.horizontal_parallax(t) * math.cos(ha)
    assert total / ARCMIN == pytest.approx(15.0, abs=0.15)
    assert sun.semi_diameter(t) / ARCMIN == pytest.approx(16.3, abs=0.05)


def test_semi_diameter_through_the_year():
    # 15.7′ in early July (aphelion) to 16.3′ in early January (perihelion) (references.md).
    assert sun.semi_diameter(datetime(2026, 7, 4, tzinfo=timezone.utc)) / ARCMIN == pytest.approx(15.73, abs=0.05)
    assert sun.semi_diameter(datetime(2026, 1, 3, tzinfo=timezone.utc)) / ARCMIN == pytest.approx(16.26, abs=0.05)


def test_naive_times_are_refused():
    with pytest.raises(ValueError, match="time zone"):
        sun.julian_day(datetime(2026, 1, 1))
