"""The sun's position, offline, and the corrections of a noon sight.

Pure functions, SI in the interface (radians, seconds, metres, °C, Pa)
unless the name says otherwise.  Nothing is downloaded.

Solar coordinates: the NREL Solar Position Algorithm, I. Reda and A. Andreas
(2004), "Solar Position Algorithm for Solar Radiation Applications",
NREL/TP-560-34302: the Earth's heliocentric position from the VSOP87 periodic
terms (``spa_terms``), nutation from the 63-term series, aberration, the
apparent geocentric right ascension and declination, and the equation of time
(its eq. A.1).  Stated uncertainty ±0.0003° from −2000 to 6000; measured here
against pvlib's SPA over 1950-2100 (``tests/test_sun.py``).  ΔT = TT − UT from
the polynomial expressions of Espenak & Meeus (NASA, "Polynomial Expressions for
Delta T", 2006); UT is taken as UTC (within 0.9 s).

Refraction: Bennett (1982, J. Navigation 35:255–259) from the apparent
altitude, accurate to 0.07′ over 0–90° (Meeus ch. 16); Sæmundsson (1986)
from the true altitude; both for 1010 hPa and 10 °C, scaled by
(P/1010)·(283/(273 + T)) otherwise (Meeus ch. 16).
"""

from __future__ import annotations

import math
from datetime import datetime, timezone
from functools import lru_cache

import numpy as np

from labcheck.reductions import spa_terms

__all__ = [
    "julian_day",
    "delta_t_s",
    "solar_coordinates",
    "declination",
    "equation_of_time",
    "local_apparent_noon",
    "hour_angle",
    "semi_diameter",
    "horizontal_parallax",
    "refraction_bennett",
    "refraction_saemundsson",
    "dip_of_sea_horizon",
    "zenith_at",
]

ARCMIN = math.pi / (180 * 60)
_J2000 = 2451545.0


def julian_day(when: datetime) -> float:
    """Julian day of an aware datetime (converted to UTC; UT taken as UTC, within 0.9 s)."""
    if when.tzinfo is None:
        raise ValueError("the time needs a time zone or a UTC offset")
    t = when.astimezone(timezone.utc)
    return 2440587.5 + t.timestamp() / 86400.0


def delta_t_s(decimal_year: float) -> float:
    """ΔT = TT − UT [s] (Espenak & Meeus, NASA "Polynomial Expressions for Delta T", 2006), 1941-2150.

    Outside that range the nearest expression is used; an error of a minute in ΔT moves the sun's
    declination by under 1″ and the equation of time by under 0.03 s.
    """
    y = decimal_year
    if y < 1961:
        t = y - 1950
        return 29.07 + 0.407 * t - t**2 / 233 + t**3 / 2547
    if y < 1986:
        t = y - 1975
        return 45.45 + 1.067 * t - t**2 / 260 - t**3 / 718
    if y < 2005:
        t = y - 2000
        return 63.86 + 0.3345 * t - 0.060374 * t**2 + 0.0017275 * t**3 + 0.000651814 * t**4 + 0.00002373599 * t**5
    if y < 2050:
        t = y - 2000
        return 62.92 + 0.32217 * t + 0.005589 * t**2
    return -20 + 32 * ((y - 1820) / 100) ** 2 - 0.5628 * (2150 - y)


def _decimal_year(jd: float) -> float:
    return 2000.0 + (jd - _J2000) / 365.25


_L = [np.array(t, dtype=float) for t in spa_terms.L_TERMS]
_B = [np.array(t, dtype=float) for t in spa_terms.B_TERMS]
_R = [np.array(t, dtype=float) for t in spa_terms.R_TERMS]
_NUT_Y = np.array(spa_terms.NUTATION_Y, dtype=float)
_NUT_ABCD = np.array(spa_terms.NUTATION_ABCD, dtype=float)
_EPS0_COEFFS = (84381.448, -4680.93, -1.55, 1999.25, -51.38, -249.67, -39.05, 7.12, 27.87, 5.79, 2.45)


def _series(terms: list, jme: float) -> float:
    """Σ_i (Σ A·cos(B + C·τ)) τ^i / 1e8 (Reda & Andreas 2004, eqs. 9-11)."""
    total = 0.0
    for power, t in enumerate(terms):
        total += float(np.sum(t[:, 0] * np.cos(t[:, 1] + t[:, 2] * jme))) * jme**power
    return total / 1e8


@lru_cache(maxsize=4096)
def solar_coordinates(jd: float, delta_t: float | None = None) -> dict:
    """The sun's apparent geocentric coordinates at Julian day ``jd`` (UT), by the NREL SPA.

    Returns ``declination`` and ``right_ascension`` [rad], ``equation_of_time`` [s] (apparent minus
    mean solar time), ``distance_au`` [AU], and the intermediates the paper tabulates for its worked
    example (``heliocentric_longitude_deg``, ``heliocentric_latitude_deg``, ``nutation_longitude_deg``,
    ``nutation_obliquity_deg``, ``true_obliquity_deg``, ``apparent_longitude_deg``,
    ``apparent_sidereal_time_deg``).  ``delta_t`` [s] defaults to :func:`delta_t_s`.
    """
    if delta_t is None:
        delta_t = delta_t_s(_decimal_year(jd))
    jde = jd + delta_t / 86400.0
    jc = (jd - _J2000) / 36525.0
    jce = (jde - _J2000) / 36525.0
    jme = jce / 10.0
    # Heliocentric longitude, latitude and radius (eqs. 9-15), then geocentric (eqs. 13-14).
    L = math.degrees(_series(_L, jme)) % 360.0
    B = math.degrees(_series(_B, jme))
    R = _series(_R, jme)
    theta = (L + 180.0) % 360.0
    beta = -B
    # Nutation in longitude and obliquity (eqs. 15-23).
    x = np.array([
        297.85036 + 445267.111480 * jce - 0.0019142 * jce**2 + jce**3 / 189474.0,
        357.52772 + 35999.050340 * jce - 0.0001603 * jce**2 - jce**3 / 300000.0,
        134.96298 + 477198.867398 * jce + 0.0086972 * jce**2 + jce**3 / 56250.0,
        93.27191 + 483202.017538 * jce - 0.0036825 * jce**2 + jce**3 / 327270.0,
        125.04452 - 1934.136261 * jce + 0.0020708 * jce**2 + jce**3 / 450000.0,
    ])
    arg = np.radians(_NUT_Y @ x)
    a, b, c, d = _NUT_ABCD.T
    d_psi = float(np.sum((a + b * jce) * np.sin(arg))) / 36_000_000.0
    d_eps = float(np.sum((c + d * jce) * np.cos(arg))) / 36_000_000.0
    # True obliquity of the ecliptic (eqs. 24-25).
    u = jme / 10.0
    eps0 = sum(k * u**i for i, k in enumerate(_EPS0_COEFFS))
    eps = eps0 / 3600.0 + d_eps
    # Aberration and the apparent longitude (eqs. 26-27).
    lam = theta + d_psi - 20.4898 / (3600.0 * R)
    # Apparent sidereal time at Greenwich (eqs. 28-29).
    nu0 = (280.46061837 + 360.98564736629 * (jd - _J2000) + 0.000387933 * jc**2 - jc**3 / 38710000.0) % 360.0
    nu = nu0 + d_psi * math.cos(math.radians(eps))
    # Geocentric right ascension and declination (eqs. 30-31).
    lam_r, eps_r, beta_r = math.radians(lam), math.radians(eps), math.radians(beta)
    ra = math.atan2(math.sin(lam_r) * math.cos(eps_r) - math.tan(beta_r) * math.sin(eps_r), math.cos(lam_r))
    dec = math.asin(math.sin(beta_r) * math.cos(eps_r) + math.cos(beta_r) * math.sin(eps_r) * math.sin(lam_r))
    # Equation of time (eq. A.1): E = M − 0.0057183° − α + Δψ·cos ε, M the sun's mean longitude.
    M = (280.4664567 + 360007.6982779 * jme + 0.03032028 * jme**2 + jme**3 / 49931.0
         - jme**4 / 15300.0 - jme**5 / 2_000_000.0) % 360.0
    eot_deg = M - 0.0057183 - math.degrees(ra) + d_psi * math.cos(eps_r)
    eot_deg = (eot_deg + 180.0) % 360.0 - 180.0
    return {
        "declination": dec,
        "right_ascension": ra % (2 * math.pi),
        "equation_of_time": eot_deg * 240.0,  # 1° of hour angle = 4 min = 240 s
        "distance_au": R,
        "heliocentric_longitude_deg": L,
        "heliocentric_latitude_deg": B,
        "nutation_longitude_deg": d_psi,
        "nutation_obliquity_deg": d_eps,
        "true_obliquity_deg": eps,
        "apparent_longitude_deg": lam % 360.0,
        "apparent_sidereal_time_deg": nu % 360.0,
    }


def declination(when: datetime) -> float:
    """The sun's apparent declination [rad] at ``when``."""
    return solar_coordinates(julian_day(when))["declination"]


def equation_of_time(when: datetime) -> float:
    """The equation of time [s] at ``when``: apparent minus mean solar time."""
    return solar_coordinates(julian_day(when))["equation_of_time"]


def local_apparent_noon(day: datetime, lon_rad: float) -> datetime:
    """Local apparent noon (UTC) on the civil date of ``day`` at east longitude ``lon_rad``.

    12:00 − λ/15° − EoT, with the equation of time taken at that instant (two passes).
    """
    from datetime import timedelta

    base = datetime(day.year, day.month, day.day, 12, tzinfo=timezone.utc)
    noon = base - timedelta(seconds=math.degrees(lon_rad) / 15.0 * 3600.0)
    for _ in range(2):
        noon = base - timedelta(seconds=math.degrees(lon_rad) / 15.0 * 3600.0 + equation_of_time(noon))
    return noon


def hour_angle(when: datetime, lon_rad: float) -> float:
    """The sun's local hour angle [rad] at ``when`` (0 at local apparent noon, positive after)."""
    t = when.astimezone(timezone.utc)
    seconds = t.hour * 3600 + t.minute * 60 + t.second + t.microsecond / 1e6
    apparent_solar = seconds + math.degrees(lon_rad) / 15.0 * 3600.0 + equation_of_time(when)
    h = (apparent_solar / 86400.0 - 0.5) * 2 * math.pi
    return (h + math.pi) % (2 * math.pi) - math.pi


def semi_diameter(when: datetime) -> float:
    """The sun's semi-diameter [rad]: 959.63″ / r, r in AU (Meeus ch. 55)."""
    r = solar_coordinates(julian_day(when))["distance_au"]
    return math.radians(959.63 / 3600.0) / r


def horizontal_parallax(when: datetime) -> float:
    """The sun's equatorial horizontal parallax [rad]: 8.794″ / r, r in AU."""
    r = solar_coordinates(julian_day(when))["distance_au"]
    return math.radians(8.794 / 3600.0) / r


def _atmosphere_factor(pressure_Pa, temperature_C):
    return (np.asarray(pressure_Pa, dtype=float) / 101000.0) * (283.0 / (273.0 + np.asarray(temperature_C, dtype=float)))


def refraction_bennett(apparent_altitude_rad, pressure_Pa=101000.0, temperature_C=10.0):
    """Refraction [rad] from the apparent altitude: R′ = cot(hₐ + 7.31/(hₐ + 4.4)) arcmin, hₐ in degrees.

    Bennett (1982); accurate to 0.07′ for 0–90° at 1010 hPa and 10 °C.
    """
    h = np.degrees(np.asarray(apparent_altitude_rad, dtype=float))
    r = 1.0 / np.tan(np.radians(h + 7.31 / (h + 4.4)))
    return r * ARCMIN * _atmosphere_factor(pressure_Pa, temperature_C)


def refraction_saemundsson(true_altitude_rad, pressure_Pa=101000.0, temperature_C=10.0):
    """Refraction [rad] from the true altitude: R = 1.02 cot(h + 10.3/(h + 5.11)) arcmin (Sæmundsson 1986)."""
    h = np.degrees(np.asarray(true_altitude_rad, dtype=float))
    r = 1.02 / np.tan(np.radians(h + 10.3 / (h + 5.11)))
    return r * ARCMIN * _atmosphere_factor(pressure_Pa, temperature_C)


def dip_of_sea_horizon(eye_height_m):
    """Dip of the sea horizon [rad] with standard refraction: 1.76′·√h, h in metres (the almanac's rule)."""
    return 1.76 * ARCMIN * np.sqrt(np.asarray(eye_height_m, dtype=float))


def zenith_at(lat_rad: float, dec_rad: float, hour_angle_rad: float) -> float:
    """Geocentric zenith distance [rad] of a body: cos z = sin φ sin δ + cos φ cos δ cos H."""
    c = math.sin(lat_rad) * math.sin(dec_rad) + math.cos(lat_rad) * math.cos(dec_rad) * math.cos(hour_angle_rad)
    return math.acos(max(-1.0, min(1.0, c)))
