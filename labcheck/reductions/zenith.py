"""Zenith angles: noon latitude from a gnomon's shadow or a sextant, face-left/
face-right index error, trigonometric heighting, reciprocal zenith angles.

Pure functions, SI units (radians, metres).  Sources: the noon-latitude rule
φ = δ + z (sun south of the zenith) is the navigator's (e.g. Bowditch,
*American Practical Navigator*, the meridian-altitude chapter); the face
pair index error i = (FL + FR − 360°)/2 and trigonometric heighting
ΔH = S cos z + (1 − k)(S sin z)²/(2R) + hᵢ − hₜ are the surveyor's (e.g.
Ghilani & Wolf, *Elementary Surveying*); reciprocal zenith angles give
k = 1 − R(z₁ + z₂ − π)/S from the geometry of a circular ray over a sphere
(any geodesy text on refraction, e.g. Torge, *Geodesy*).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "zenith_from_shadow",
    "noon_latitude",
    "face_pair_index_error",
    "corrected_zenith",
    "horizontal_from_slope",
    "curvature_and_refraction",
    "trig_height_difference",
    "reciprocal_angle_excess",
    "refraction_coefficient_reciprocal",
    "reciprocal_height_difference",
]


def _a(x):
    return np.asarray(x, dtype=float)


def zenith_from_shadow(shadow_m, gnomon_height_m):
    """Zenith distance of the shadow-casting point [rad]: z = atan(shadow / gnomon height)."""
    return np.arctan2(_a(shadow_m), _a(gnomon_height_m))


def noon_latitude(declination_rad, zenith_rad, sun_north):
    """Latitude [rad] from the sun's zenith distance on the meridian.

    φ = δ + z when the sun culminates south of the zenith (``sun_north`` 0);
    φ = δ − z when it culminates north of it (``sun_north`` 1).
    """
    sign = np.where(_a(sun_north) >= 0.5, -1.0, 1.0)
    return _a(declination_rad) + sign * _a(zenith_rad)


def face_pair_index_error(face_left_rad, face_right_rad):
    """Vertical index error [rad] from face-left/face-right zenith pairs: mean of (FL + FR − 2π)/2."""
    fl, fr = _a(face_left_rad), _a(face_right_rad)
    if fl.size != fr.size:
        raise ValueError("give the same number of face-left and face-right readings, in pairs")
    return float(np.mean((fl + fr - 2 * np.pi) / 2))


def corrected_zenith(face_left_rad, index_error_rad):
    """Zenith angle [rad] free of index error: mean(FL) − i (equivalently the mean of (FL − FR + 2π)/2)."""
    return float(np.mean(_a(face_left_rad))) - float(index_error_rad)


def horizontal_from_slope(slope_distance_m, zenith_rad):
    """Horizontal distance [m]: S·sin z."""
    return _a(slope_distance_m) * np.sin(_a(zenith_rad))


def curvature_and_refraction(horizontal_m, k, radius_m):
    """Curvature-and-refraction term [m]: (1 − k)·D²/(2R), D the horizontal distance."""
    return (1.0 - _a(k)) * _a(horizontal_m) ** 2 / (2.0 * _a(radius_m))


def trig_height_difference(slope_distance_m, zenith_rad, curvature_refraction_m, instrument_height_m, target_height_m):
    """Height of the target's ground point above the instrument's [m]: S cos z + (c + r) + hᵢ − hₜ."""
    return (_a(slope_distance_m) * np.cos(_a(zenith_rad)) + _a(curvature_refraction_m)
            + _a(instrument_height_m) - _a(target_height_m))


def reciprocal_angle_excess(zenith_ab_rad, zenith_ba_rad):
    """z₁ + z₂ − π [rad]: the part of the central angle not bent away by refraction."""
    return _a(zenith_ab_rad) + _a(zenith_ba_rad) - np.pi


def refraction_coefficient_reciprocal(angle_excess_rad, distance_m, radius_m):
    """k = 1 − R·(z₁ + z₂ − π)/S from simultaneous reciprocal zenith angles [1]."""
    return 1.0 - _a(radius_m) * _a(angle_excess_rad) / _a(distance_m)


def reciprocal_height_difference(distance_m, zenith_ab_rad, zenith_ba_rad, horizontal=False):
    """Height of B above A [m], free of refraction (symmetric ray).

    The half-difference α = (z_BA − z_AB)/2 is the elevation of the chord A→B once a symmetric
    refraction (and the curvature) cancel; so ΔH = S·sin α with the slope distance S (the chord),
    and ΔH = D·tan α with the horizontal distance D (plane trigonometry of the right triangle).
    """
    alpha = (_a(zenith_ba_rad) - _a(zenith_ab_rad)) / 2.0
    return _a(distance_m) * (np.tan(alpha) if horizontal else np.sin(alpha))
