"""The sun and the noon-sight corrections against outside references.

* NREL SPA (Reda & Andreas 2004, NREL/TP-560-34302; ±0.0003°) through pvlib,
  installed for tests only: declination and equation of time over a year.
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


def year_of_times(year):
    start = datetime(year, 1, 1, tzinfo=timezone.utc)
    return [start + timedelta(hours=12.37 * i) for i in range(710)]  # every half day, drifting through the clock


@pytest.mark.parametrize("year", [2000, 2026, 2049])
def test_declination_and_equation_of_time_against_spa(year):
    times = year_of_times(year)
    unix = np.array([t.timestamp() for t in times])
    # SPA with ΔT = 69 s; our algorithm takes UT as TT (the 69 s move the sun by < 1.2″).
    _, _, dec_spa = spa.solar_position(unix, 45.0, 10.0, 0, 1010, 10, 69.0, 0.5667, sst=True)
    *_, eot_spa = spa.solar_position(unix, 45.0, 10.0, 0, 1010, 10, 69.0, 0.5667)
    dec = np.degrees([sun.declination(t) for t in times])
    eot = np.array([sun.equation_of_time(t) for t in times]) / 60.0
    # Meeus's low-accuracy method: 0.01° in the sun's position (Astronomical Algorithms, ch. 25);
    # 0.01° of right ascension is 2.4 s of time.  Measured: ≤ 12.2″ and ≤ 2.2 s over these years.
    assert np.max(np.abs(dec - dec_spa)) < 0.01
    assert np.max(np.abs(eot - eot_spa)) * 60 < 2.4


def test_spa_paper_example():
    # Reda & Andreas (2004) example: 2003-10-17 12:30:30 MST (UTC−7): δ = −9.31434°, EoT = 14.64 min.
    t = datetime(2003, 10, 17, 12, 30, 30, tzinfo=timezone(timedelta(hours=-7)))
    assert math.degrees(sun.declination(t)) == pytest.approx(-9.31434, abs=0.01)
    assert sun.equation_of_time(t) / 60 == pytest.approx(14.64, abs=0.04)  # 2.4 s, as above


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
