"""Baselines: taped distances with their corrections, odometer distances, and
the Earth's radius from a measured distance between stations of known
latitude and longitude.

Pure functions, SI units: metres, radians, degrees Celsius, newtons, pascals,
newtons per metre; accept numpy arrays.  Sources: the tape corrections are
the standard ones of surveying texts (e.g. Ghilani & Wolf, *Elementary
Surveying*, chapter on taping): standardisation, temperature
C_T = α(T − Tₛ)L, tension C_P = (P − Pₛ)L/(AE), sag C_s = −w²L³/(24P²)
per unsupported span, and slope-to-horizontal H = L cos α.
The haversine formula for the central angle is the standard one of
spherical trigonometry (e.g. R. W. Sinnott, "Virtues of the Haversine",
Sky and Telescope 68(2), 1984).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "STEEL_EXPANSION_PER_C",
    "sum_of_readings",
    "standardisation_correction",
    "temperature_correction",
    "tension_correction",
    "sag_correction",
    "slope_correction",
    "slope_angles_from_heights",
    "corrected_length",
    "mean_of_runs",
    "precision_ratio",
    "sea_level_length",
    "calibration_factor",
    "odometer_distance",
    "angle_difference",
    "haversine",
    "central_angle_from_haversine",
    "radius_from_arc",
]

# Coefficient of thermal expansion of a steel tape, 0.0000116 per °C
# (0.00000645 per °F), the value used in surveying texts (Ghilani & Wolf).
STEEL_EXPANSION_PER_C = 0.0000116


def _a(x):
    return np.asarray(x, dtype=float)


def sum_of_readings(readings_m):
    """Measured length [m]: the sum of the tape readings (full tape lengths and the final partial)."""
    return float(np.sum(_a(readings_m)))


def standardisation_correction(measured_m, nominal_length_m, calibrated_length_m):
    """C_L = L·(ℓ_cal − ℓ_nom)/ℓ_nom [m]: a tape longer than nominal reads short, so the correction is positive."""
    return _a(measured_m) * (_a(calibrated_length_m) - _a(nominal_length_m)) / _a(nominal_length_m)


def temperature_correction(measured_m, temperature_C, standard_temperature_C, expansion_per_C=STEEL_EXPANSION_PER_C):
    """C_T = α(T − Tₛ)·L [m]."""
    return _a(expansion_per_C) * (_a(temperature_C) - _a(standard_temperature_C)) * _a(measured_m)


def tension_correction(measured_m, tension_N, standard_tension_N, area_m2, modulus_Pa):
    """C_P = (P − Pₛ)·L / (A·E) [m]."""
    return (_a(tension_N) - _a(standard_tension_N)) * _a(measured_m) / (_a(area_m2) * _a(modulus_Pa))


def sag_correction(readings_m, weight_N_per_m, tension_N, suspended):
    """C_s = −Σ w²Lᵢ³/(24P²) over the unsupported spans [m]; zero for a tape supported throughout.

    Each reading is taken as one span between supports.  ``suspended`` is 1
    for a tape suspended between its ends, 0 for a tape supported throughout.
    """
    spans = _a(readings_m)
    sag = -np.sum(_a(weight_N_per_m) ** 2 * spans**3) / (24.0 * _a(tension_N) ** 2)
    return float(sag * (1.0 if float(suspended) >= 0.5 else 0.0))


def slope_angles_from_heights(height_differences_m, readings_m):
    """Slope angle of each span [rad] from its height difference and slope length: α = asin(h/L)."""
    h = _a(height_differences_m)
    L = _a(readings_m)
    if h.size not in (1, L.size):
        raise ValueError("give one height difference per tape reading, or one for all")
    return np.arcsin(h / L)


def slope_correction(readings_m, slope_angle_rad):
    """Slope-to-horizontal as a correction: C_h = Σ Lᵢ(cos αᵢ − 1) [m] (negative).

    ``slope_angle_rad`` holds one angle per reading, or a single angle for
    every reading.  Exact; the surveyor's approximation −h²/(2L) differs by
    less than h⁴/(8L³).
    """
    L = _a(readings_m)
    alpha = _a(slope_angle_rad)
    if alpha.size not in (1, L.size):
        raise ValueError("give one slope per tape reading, or one for all")
    return float(np.sum(L * (np.cos(alpha) - 1.0)))


def corrected_length(measured_m, standardisation_m, temperature_m, tension_m, sag_m, slope_m):
    """Horizontal length of a run [m]: the measured length plus every correction."""
    return _a(measured_m) + _a(standardisation_m) + _a(temperature_m) + _a(tension_m) + _a(sag_m) + _a(slope_m)


def mean_of_runs(forward_m, back_m):
    """Mean of the forward and back horizontal lengths [m]."""
    return (_a(forward_m) + _a(back_m)) / 2.0


def precision_ratio(forward_m, back_m):
    """N in the precision 1:N = mean / |forward − back| [1] (infinite when the runs agree exactly)."""
    with np.errstate(divide="ignore"):
        return _a(mean_of_runs(forward_m, back_m)) / np.abs(_a(forward_m) - _a(back_m))


def sea_level_length(length_m, mean_elevation_m, radius_m):
    """Reduction to the ellipsoid (sea level): L₀ = L·R/(R + h) [m]."""
    return _a(length_m) * _a(radius_m) / (_a(radius_m) + _a(mean_elevation_m))


def calibration_factor(known_length_m, reading_start_m, reading_end_m):
    """Odometer calibration factor [1]: known course length / odometer distance over it."""
    return _a(known_length_m) / (_a(reading_end_m) - _a(reading_start_m))


def odometer_distance(factor, reading_start_m, reading_end_m):
    """Corrected odometer distance [m]: factor × (end − start)."""
    return _a(factor) * (_a(reading_end_m) - _a(reading_start_m))


def angle_difference(a_rad, b_rad):
    """b − a [rad], wrapped into (−π, π] so that a line across ±180° longitude is short."""
    d = _a(b_rad) - _a(a_rad)
    return (d + np.pi) % (2 * np.pi) - np.pi


def haversine(lat1_rad, lat2_rad, delta_lat_rad, delta_lon_rad):
    """hav θ = sin²(Δφ/2) + cos φ₁ cos φ₂ sin²(Δλ/2) [1], θ the central angle."""
    return np.sin(_a(delta_lat_rad) / 2) ** 2 + np.cos(_a(lat1_rad)) * np.cos(_a(lat2_rad)) * np.sin(_a(delta_lon_rad) / 2) ** 2


def central_angle_from_haversine(hav):
    """θ = 2·asin(√hav θ) [rad]."""
    return 2.0 * np.arcsin(np.sqrt(np.clip(_a(hav), 0.0, 1.0)))


def radius_from_arc(distance_m, central_angle_rad):
    """R = s / θ [m]: the radius of the circle on which an arc of length s subtends θ."""
    return _a(distance_m) / _a(central_angle_rad)
