"""The sun's position, offline, and the corrections of a noon sight.

Pure functions, SI in the interface (radians, seconds, metres, °C, Pa)
unless the name says otherwise.  Nothing is downloaded.

Solar coordinates: the low-accuracy method of J. Meeus, *Astronomical
Algorithms* (2nd ed., 1998), chapter 25 (the method of NOAA's solar
calculator), with the equation of time by chapter 28's eq. 28.1 from the
apparent right ascension.
Stated accuracy about 0.01° in the sun's position; measured here against
the NREL SPA (Reda & Andreas 2004) through pvlib over a year of dates: see
``docs/methods.md`` and ``tests/test_sun.py``.

Refraction: Bennett (1982, J. Navigation 35:255–259) from the apparent
altitude, accurate to 0.07′ over 0–90° (Meeus ch. 16); Sæmundsson (1986)
from the true altitude; both for 1010 hPa and 10 °C, scaled by
(P/1010)·(283/(273 + T)) otherwise (Meeus ch. 16).
"""

from __future__ import annotations

import math
from datetime import datetime, timezone

import numpy as np

__all__ = [
    "julian_day",
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
    """Julian day of an aware datetime (converted to UTC; UT taken as UTC, within 1 s)."""
    if when.tzinfo is None:
        raise ValueError("the time needs a time zone or a UTC offset")
    t = when.astimezone(timezone.utc)
    return 2440587.5 + t.timestamp() / 86400.0


def solar_coordinates(jd: float) -> dict:
    """The sun's apparent coordinates for Julian day ``jd`` (Meeus ch. 25, low accuracy).

    Returns ``declination`` [rad], ``right_ascension`` [rad], ``equation_of_time``
    [s] (apparent minus mean solar time), ``distance_au`` [AU].
    """
    T = (jd - _J2000) / 36525.0
    L0 = math.radians((280.46646 + 36000.76983 * T + 0.0003032 * T * T) % 360.0)
    M = math.radians((357.52911 + 35999.05029 * T - 0.0001537 * T * T) % 360.0)
    e = 0.016708634 - 0.000042037 * T - 0.0000001267 * T * T
    C = math.radians((1.914602 - 0.004817 * T - 0.000014 * T * T) * math.sin(M)
                     + (0.019993 - 0.000101 * T) * math.sin(2 * M) + 0.000289 * math.sin(3 * M))
    true_longitude = L0 + C
    nu = M + C
    distance = 1.000001018 * (1 - e * e) / (1 + e * math.cos(nu))
    omega = math.radians(125.04 - 1934.136 * T)
    apparent_longitude = true_longitude - math.radians(0.00569 + 0.00478 * math.sin(omega))
    eps0 = math.radians(23 + 26 / 60 + (21.448 - 46.8150 * T - 0.00059 * T * T + 0.001813 * T**3) / 3600)
    eps = eps0 + math.radians(0.00256 * math.cos(omega))
    dec = math.asin(math.sin(eps) * math.sin(apparent_longitude))
    ra = math.atan2(math.cos(eps) * math.sin(apparent_longitude), math.cos(apparent_longitude))
    # Equation of time (Meeus ch. 28, eq. 28.1): E = L0 − 0.0057183° − α + Δψ·cos ε, with the
    # nutation in longitude Δψ ≈ −0.00478°·sin Ω (the same approximation as the apparent longitude).
    delta_psi = math.radians(-0.00478 * math.sin(omega))
    eot = L0 - math.radians(0.0057183) - ra + delta_psi * math.cos(eps)
    eot = (eot + math.pi) % (2 * math.pi) - math.pi
    return {
        "declination": dec,
        "right_ascension": ra,
        "equation_of_time": eot / (2 * math.pi) * 86400.0,
        "distance_au": distance,
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
