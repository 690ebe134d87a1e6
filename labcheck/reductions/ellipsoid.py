"""Radii of curvature of the ellipsoid, and the fair reference for a measured arc.

Standard notation: ``a`` semi-major axis [m], ``f`` flattening [1], ``e2``
first eccentricity squared, ``lat`` geodetic latitude, ``azi`` azimuth
(clockwise from north).  Angles are in radians in this module's interface.

* Meridian radius of curvature  M = a(1 − e²) / (1 − e² sin²φ)^(3/2)
* Prime-vertical radius          N = a / (1 − e² sin²φ)^(1/2)
* Euler's radius along azimuth α: 1/R_α = cos²α / M + sin²α / N
  (the radius of curvature of the normal section in direction α).

Constants: WGS84 a = 6378137 m, 1/f = 298.257223563 (NGA TR8350.2);
GRS80 a = 6378137 m, 1/f = 298.257222101 (Moritz, Geodetic Reference System
1980).  IUGG mean radius R1 = (2a + b)/3 = 6371008.7714 m for GRS80.
"""

from __future__ import annotations

import math

import numpy as np
from geographiclib.geodesic import Geodesic

__all__ = [
    "WGS84_A_M",
    "WGS84_F",
    "meridian_radius",
    "prime_vertical_radius",
    "euler_radius",
    "local_arc_reference",
]

WGS84_A_M = 6378137.0
WGS84_F = 1 / 298.257223563


def _e2(f: float) -> float:
    return f * (2.0 - f)


def meridian_radius(lat_rad, a_m: float = WGS84_A_M, f: float = WGS84_F):
    """Meridian radius of curvature M [m] at geodetic latitude ``lat_rad``."""
    e2 = _e2(f)
    s2 = np.sin(np.asarray(lat_rad, dtype=float)) ** 2
    return a_m * (1.0 - e2) / (1.0 - e2 * s2) ** 1.5


def prime_vertical_radius(lat_rad, a_m: float = WGS84_A_M, f: float = WGS84_F):
    """Prime-vertical radius of curvature N [m] at geodetic latitude ``lat_rad``."""
    e2 = _e2(f)
    s2 = np.sin(np.asarray(lat_rad, dtype=float)) ** 2
    return a_m / np.sqrt(1.0 - e2 * s2)


def euler_radius(lat_rad, azi_rad, a_m: float = WGS84_A_M, f: float = WGS84_F):
    """Euler's radius of curvature R_α [m] of the normal section along azimuth ``azi_rad``."""
    m = meridian_radius(lat_rad, a_m, f)
    n = prime_vertical_radius(lat_rad, a_m, f)
    c2 = np.cos(np.asarray(azi_rad, dtype=float)) ** 2
    return 1.0 / (c2 / m + (1.0 - c2) / n)


def local_arc_reference(lat1_rad: float, lon1_rad: float, lat2_rad: float, lon2_rad: float,
                        a_m: float = WGS84_A_M, f: float = WGS84_F) -> dict:
    """The ellipsoid's answer for the arc between two stations.

    Solves the inverse geodesic problem with geographiclib (Karney 2013,
    J. Geodesy 87:43–55; error under 15 nm), finds the latitude and azimuth
    at the geodesic's midpoint, and returns the Euler radius there along the
    line: the radius a perfect measurement of this arc would give.

    Returns a dict with ``distance_m`` (geodesic length), ``azimuth_rad``
    and ``latitude_rad`` at the midpoint, ``radius_m`` (R_α there).
    """
    geod = Geodesic(a_m, f)
    inv = geod.Inverse(math.degrees(lat1_rad), math.degrees(lon1_rad), math.degrees(lat2_rad), math.degrees(lon2_rad))
    mid = geod.Direct(math.degrees(lat1_rad), math.degrees(lon1_rad), inv["azi1"], inv["s12"] / 2.0)
    lat_m = math.radians(mid["lat2"])
    azi_m = math.radians(mid["azi2"])
    return {
        "distance_m": inv["s12"],
        "azimuth_rad": azi_m,
        "latitude_rad": lat_m,
        "radius_m": float(euler_radius(lat_m, azi_m, a_m, f)),
    }
