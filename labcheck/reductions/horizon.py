"""The Earth's radius from the dip of the horizon and from hidden height.

Pure functions: numbers in, numbers out, SI units (metres, radians).  Every
function accepts numpy arrays as well as floats, so a whole section can be
evaluated at once.

Geometry (a sphere of radius R, eye at height h above the water):

* The line of sight to the visible horizon is tangent to the surface.  In
  the right triangle centre–tangent point–eye, ``cos d = R / (R + h)`` where
  ``d`` is the dip of the horizon below the horizontal.  Solving for R:
  ``R = h cos d / (1 - cos d)``.  This is exact for a straight, tangent line
  of sight.  For small d it becomes ``R ≈ 2h / d²``.
* The distance to the horizon from height h is ``sqrt(2 R h)`` (to first
  order in h/R).  An object at surface distance ``s`` whose lowest
  ``x`` metres are hidden behind the horizon from an eye at ``h0`` satisfies
  ``s = sqrt(2 R h0) + sqrt(2 R x)``, so ``R = s² / (2 (sqrt h0 + sqrt x)²)``.

Refraction bends the line of sight towards the ground with a curvature k/R
(k, the coefficient of refraction, is about 0.13 over land by day (Gauss's
value) and varies with the temperature gradient).  Over distances small
against R a ray of curvature k/R over an Earth of radius R behaves as a
straight ray over an Earth of radius ``R / (1 - k)``; both formulas above
therefore measure that *apparent* radius, and ``R = (1 - k) R_apparent``.
Sources: the dip relation is the standard navigation one (see the almanac
dip rule 1.76′·√h, h in metres, which includes standard refraction); the
effective-radius treatment of refraction is the one used for the surveyor's
curvature-and-refraction correction (c + r) = (1 - k) s² / (2R) (e.g.
Ghilani & Wolf, *Elementary Surveying*).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "dip_from_zenith_angle",
    "mean_angle",
    "radius_from_dip",
    "radius_from_hidden_height",
    "radius_corrected_for_refraction",
    "radius_error_pct",
]


def dip_from_zenith_angle(zenith_angle_rad):
    """Dip of the horizon [rad] from the zenith angle of the horizon [rad]: d = z − π/2."""
    return np.asarray(zenith_angle_rad, dtype=float) - np.pi / 2


def mean_angle(readings_rad):
    """Arithmetic mean of repeated readings of a small angle [rad].

    For readings far from the ±π seam (a dip is a few arcminutes) the
    arithmetic mean equals the circular mean.
    """
    return float(np.mean(np.asarray(readings_rad, dtype=float)))


def radius_from_dip(eye_height_m, dip_rad):
    """Apparent radius [m] from the dip of the horizon.

    ``R = h cos d / (1 − cos d)``, evaluated as ``h cos d / (2 sin²(d/2))``
    so that no precision is lost to the subtraction for dips of arcminutes.

    Parameters
    ----------
    eye_height_m : height of the eye above the water surface [m], > 0
    dip_rad : dip of the visible horizon below the horizontal [rad], > 0
    """
    h = np.asarray(eye_height_m, dtype=float)
    d = np.asarray(dip_rad, dtype=float)
    return h * np.cos(d) / (2.0 * np.sin(d / 2.0) ** 2)


def radius_from_hidden_height(target_distance_m, eye_height_m, hidden_height_m):
    """Apparent radius [m] from the hidden height of a distant object.

    ``R = s² / (2 (√h₀ + √x)²)`` with ``s`` the surface distance to the
    object [m], ``h₀`` the eye height [m] and ``x`` the hidden height [m].
    Valid while h₀, x ≪ R (first order in h/R; the neglected term is of
    relative size h/(4R), below 1e-6 for any lab).
    """
    s = np.asarray(target_distance_m, dtype=float)
    h0 = np.asarray(eye_height_m, dtype=float)
    x = np.asarray(hidden_height_m, dtype=float)
    return s**2 / (2.0 * (np.sqrt(h0) + np.sqrt(x)) ** 2)


def radius_corrected_for_refraction(radius_apparent_m, k):
    """Radius [m] from the apparent radius [m] and the coefficient of refraction k [1]: R = (1 − k)·R′."""
    return (1.0 - np.asarray(k, dtype=float)) * np.asarray(radius_apparent_m, dtype=float)


def radius_error_pct(radius_m, reference_radius_m):
    """Signed error of a radius against the reference, in percent: 100·(R − R_ref)/R_ref."""
    return 100.0 * (np.asarray(radius_m, dtype=float) - reference_radius_m) / reference_radius_m
