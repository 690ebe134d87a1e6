"""Baseline labs: a taped baseline with its corrections, an odometer baseline,
and the Earth's radius from a measured baseline between stations of known
latitude and longitude.

Observation names and step ids here are public vocabulary; do not rename.
The taped baseline is measured twice, ``forward`` and ``back``: each run has
its own items (``forward_tape_reading``, ``back_tape_reading``, ...) and its
own steps (``forward_temperature_correction``, ...), generated below from
one definition.
"""

from __future__ import annotations

import math

import numpy as np

from labcheck.reductions import baseline as bl
from labcheck.reductions.ellipsoid import local_arc_reference
from labcheck.methods.base import Alternative, Constant, Method, Observation, Reference, Step, formula_variant, input_variant

RUNS = ("forward", "back")
_TAPE_SOURCE = "standard tape corrections (e.g. Ghilani & Wolf, Elementary Surveying, taping chapter)"


def _run_observations(run: str) -> tuple[Observation, ...]:
    reading = f"{run}_tape_reading"
    return (
        Observation(reading, f"{run} tape readings", "length", "m",
                    f"one span of the {run} run as read on the tape (full tape lengths and the final partial); a row per span",
                    repeated=True, spread=False),
        Observation(
            f"{run}_slope_angle", f"{run} slope angles", "angle", "deg",
            f"slope (vertical) angle of each span of the {run} run, a row per span in the same order, or one row for all "
            "(0 for level ground)",
            repeated=True, positive=False, spread=False, limits=(-math.pi / 3, math.pi / 3),
            alternatives=(
                Alternative(
                    f"{run}_height_difference",
                    f"height difference over each span of the {run} run, a row per span, or one row for all; "
                    f"use instead of {run}_slope_angle",
                    "m",
                    lambda h, values, _r=reading: bl.slope_angles_from_heights(h, values[_r]),
                    kind="length",
                ),
            ),
        ),
        Observation(f"{run}_temperature", f"{run} tape temperature", "temperature", "C",
                    f"tape temperature during the {run} run (several rows are averaged)", positive=False,
                    limits=(-60.0, 70.0)),
        Observation(f"{run}_tension", f"{run} tension", "force", "N", f"pull applied to the tape during the {run} run"),
    )


CORRECTIONS = ("standardisation", "temperature", "tension", "sag", "slope")  # in the horizontal-length step's order


def _with_correction_scaled(name: str, factor: float):
    """The horizontal length with one correction multiplied by ``factor`` (−1 wrong sign, 2 twice, 0 left out)."""

    def compute(measured, *corrections):
        return bl.corrected_length(measured, *[c * factor if key == name else c for key, c in zip(CORRECTIONS, corrections)])

    return compute


# How one correction can go wrong in the corrected length: (id suffix, label, explanation, factor on it).
_CORRECTION_SLIPS = {
    "wrong_sign": ("applied with the wrong sign",
                   "The {label} was subtracted where it is added (or the other way round). Each correction is added "
                   "with its own sign: positive when the tape reads short (longer or warmer than standard, pulled "
                   "harder), negative for sag and slope.", -1.0),
    "applied_twice": ("applied twice", "The {label} was added twice: each correction enters the corrected length once.",
                      2.0),
    "left_out": ("left out", "The {label} was not added: each correction enters the corrected length once, with its "
                 "own sign.", 0.0),
}


def _correction_variant(name: str, label: str, slip: str):
    """The horizontal length with one correction scaled as ``slip`` says, as a named mistake."""
    words, text, factor = _CORRECTION_SLIPS[slip]
    return formula_variant(f"{name}_{slip}", f"{label} {words}", text.format(label=label),
                           _with_correction_scaled(name, factor))


def _run_steps(run: str) -> tuple[Step, ...]:
    reading, slope = f"{run}_tape_reading", f"{run}_slope_angle"
    temperature, tension, measured = f"{run}_temperature", f"{run}_tension", f"{run}_measured"
    return (
        Step(measured, f"{run} measured length", "length", "m", "L = Σ Lᵢ", "sum of the tape readings",
             (reading,), bl.sum_of_readings, description=f"the {run} run's length as read"),
        Step(f"{run}_standardisation", f"{run} standardisation correction", "length", "m",
             "C_L = L · (ℓ_cal − ℓ_nom) / ℓ_nom", _TAPE_SOURCE,
             (measured, "nominal_length", "calibrated_length"), bl.standardisation_correction,
             (formula_variant("standardisation_inverted", "calibration difference taken the wrong way",
                              "The difference was taken as nominal − calibrated: a tape longer than its nominal length "
                              "reads short, so the correction is positive.",
                              lambda L, nom, cal: bl.standardisation_correction(L, cal, nom)),)),
        Step(f"{run}_temperature_correction", f"{run} temperature correction", "length", "m",
             "C_T = α · (T − Tₛ) · L", _TAPE_SOURCE,
             (measured, temperature, "standard_temperature", "expansion_coefficient"), bl.temperature_correction,
             (input_variant("fahrenheit_as_celsius", "temperature in °F used as °C",
                            "The temperature in °F was used with a coefficient and standard temperature in °C. "
                            "Convert: °C = (°F − 32)·5/9, or use α = 0.00000645 per °F with Tₛ = 68 °F.",
                            temperature, lambda t: t * 9.0 / 5.0 + 32.0),)),
        Step(f"{run}_tension_correction", f"{run} tension correction", "length", "m",
             "C_P = (P − Pₛ) · L / (A · E)", _TAPE_SOURCE,
             (measured, tension, "standard_tension", "cross_section_area", "elastic_modulus"), bl.tension_correction),
        Step(f"{run}_sag_correction", f"{run} sag correction", "length", "m",
             "C_s = −Σ w² Lᵢ³ / (24 P²)  (suspended spans only)", _TAPE_SOURCE,
             (reading, "weight_per_length", tension, "support"), bl.sag_correction,
             (formula_variant("sag_on_supported_tape", "sag applied to a tape supported throughout",
                              "The tape lay on the ground (supported throughout), so it cannot sag: the sag "
                              "correction is zero.",
                              lambda L, w, P, support: bl.sag_correction(L, w, P, 1.0)),
              formula_variant("sag_one_span", "sag computed for the whole length as one span",
                              "Sag was computed for the whole run as one span; it is computed per span between "
                              "supports and summed (it grows with the cube of the span).",
                              lambda L, w, P, support: bl.sag_correction(np.array([np.sum(L)]), w, P, support)))),
        Step(f"{run}_slope_correction", f"{run} slope correction", "length", "m",
             "C_h = Σ Lᵢ (cos αᵢ − 1)", "slope-to-horizontal: H = L cos α (from heights: sin α = h / L)",
             (reading, slope), bl.slope_correction,
             (input_variant("degrees_as_radians", "calculator in radian mode with an angle in degrees",
                            "The slope angle was entered in degrees while the calculator expected radians.",
                            slope, lambda a: np.degrees(a)),)),
        Step(f"{run}_horizontal_length", f"{run} corrected horizontal length", "length", "m",
             "H = L + C_L + C_T + C_P + C_s + C_h", "sum of the measured length and its corrections",
             (measured, f"{run}_standardisation", f"{run}_temperature_correction", f"{run}_tension_correction",
              f"{run}_sag_correction", f"{run}_slope_correction"),
             bl.corrected_length,
             (formula_variant("slope_distance_as_horizontal", "slope distance used as horizontal",
                              "The slope correction was left out: the length along the slope was used as the "
                              "horizontal distance.",
                              _with_correction_scaled("slope", 0.0)),)
             + tuple(_correction_variant(n, f"{n} correction", "wrong_sign") for n in CORRECTIONS)
             + tuple(_correction_variant(n, f"{n} correction", "applied_twice") for n in CORRECTIONS)
             + tuple(_correction_variant(n, f"{n} correction", "left_out") for n in CORRECTIONS if n != "slope")),
    )


TAPED = Method(
    id="taped",
    title="Taped baseline",
    summary="A baseline taped forward and back, each span corrected for the tape's standard, temperature, "
            "tension, sag and slope, then reduced to sea level.",
    observations=tuple(o for run in RUNS for o in _run_observations(run)) + (
        Observation("support", "tape support", "choice", "",
                    "how the tape was held: supported (lying on the ground throughout) or suspended (between its ends)",
                    choices=("supported", "suspended")),
        Observation("mean_elevation", "mean elevation of the baseline", "length", "m",
                    "mean height of the baseline above sea level (the ellipsoid)", positive=False,
                    limits=(-500.0, 9000.0)),
    ),
    constants=(
        Constant("nominal_length", "nominal tape length", "length", "the length the tape is marked as", overridable=True, unit="m"),
        Constant("calibrated_length", "calibrated tape length", "length",
                 "the tape's true length at standard temperature and tension", overridable=True, unit="m"),
        Constant("standard_temperature", "standard temperature", "temperature",
                 "temperature at which the tape was calibrated", default="20 C", overridable=True, unit="C"),
        Constant("standard_tension", "standard tension", "force", "tension at which the tape was calibrated",
                 overridable=True, unit="N"),
        Constant("cross_section_area", "cross-section area", "area", "area of the tape's cross-section",
                 overridable=True, unit="mm2"),
        Constant("elastic_modulus", "modulus of elasticity", "pressure", "Young's modulus of the tape's steel",
                 default="200 GPa", overridable=True, unit="GPa"),
        Constant("weight_per_length", "weight per unit length", "force_per_length", "the tape's weight per metre",
                 overridable=True, unit="N/m"),
        Constant("expansion_coefficient", "coefficient of expansion", "per_temperature",
                 "thermal expansion of the tape per degree", default="0.0000116 /C", overridable=True, unit="/C"),
        Constant("earth_radius", "radius for the sea-level reduction", "length",
                 "the Earth's radius used in L·R/(R + h)", default="6371.0088 km"),
        Constant("baseline_length", "known baseline length", "length",
                 "the baseline's horizontal length from an earlier, more precise survey (for accuracy)"),
    ),
    steps=tuple(s for run in RUNS for s in _run_steps(run)) + (
        Step("mean_length", "mean horizontal length", "length", "m", "H = (H_forward + H_back) / 2",
             "mean of the two runs", ("forward_horizontal_length", "back_horizontal_length"), bl.mean_of_runs),
        Step("precision_ratio", "precision of the two runs (1:N)", "ratio", "1", "N = H / |H_forward − H_back|",
             "relative precision of forward and back runs", ("forward_horizontal_length", "back_horizontal_length"),
             bl.precision_ratio,
             (formula_variant("fraction_not_ratio", "the fraction instead of N",
                              "You reported the fraction |difference| / mean; the precision is written 1:N with "
                              "N = mean / |difference|.",
                              lambda f, b: 1.0 / bl.precision_ratio(f, b)),)),
        Step("sea_level_length", "length reduced to sea level", "length", "m", "L₀ = H · R / (R + h)",
             "reduction to the ellipsoid with a spherical Earth of radius R",
             ("mean_length", "mean_elevation", "earth_radius"), bl.sea_level_length,
             (formula_variant("sea_level_factor_inverted", "sea-level factor inverted",
                              "The factor was inverted: a line reduced from above sea level gets shorter, "
                              "L₀ = H·R/(R + h).",
                              lambda H, h, R: H * (R + h) / R),)),
    ),
    result_step="mean_length",
    reference=Reference(
        "known baseline length",
        ("baseline_length",),
        lambda baseline_length: {"value": baseline_length},
        "The reference is the baseline's length from an earlier, more precise survey, given in the lab spec. "
        "Your corrected mean horizontal length is compared with it.",
    ),
)


ODOMETER = Method(
    id="odometer",
    title="Odometer baseline",
    summary="A vehicle's odometer, calibrated over a course of known length, measures a longer baseline.",
    observations=(
        Observation("calibration_course_length", "calibration course length", "length", "km",
                    "the known length of the calibration course"),
        Observation("calibration_start", "odometer at the course start", "length", "km",
                    "odometer reading at the start of the calibration course", positive=False),
        Observation("calibration_end", "odometer at the course end", "length", "km",
                    "odometer reading at the end of the calibration course", positive=False),
        Observation("odometer_start", "odometer at the baseline start", "length", "km",
                    "odometer reading at the start of the baseline", positive=False),
        Observation("odometer_end", "odometer at the baseline end", "length", "km",
                    "odometer reading at the end of the baseline", positive=False),
    ),
    constants=(
        Constant("route_length", "known route length", "length",
                 "the baseline route's length from an earlier survey (for accuracy)"),
    ),
    steps=(
        Step("calibration_factor", "odometer calibration factor", "ratio", "1", "f = S_course / (r_end − r_start)",
             "ratio of the known length to the odometer's reading over it",
             ("calibration_course_length", "calibration_start", "calibration_end"), bl.calibration_factor,
             (formula_variant("calibration_factor_inverted", "factor inverted",
                              "The factor was inverted: f = known length / odometer distance, not the other way round.",
                              lambda S, a, b: 1.0 / bl.calibration_factor(S, a, b)),
              formula_variant("odometer_miles_as_km", "odometer miles read as kilometres",
                              "The odometer reads in miles but the readings were used as kilometres "
                              "(1 mi = 1.609344 km).",
                              lambda S, a, b: S / ((b - a) / 1.609344)))),
        Step("odometer_distance", "corrected odometer distance", "length", "km", "D = f · (r_end − r_start)",
             "calibrated odometer distance", ("calibration_factor", "odometer_start", "odometer_end"),
             bl.odometer_distance,
             (formula_variant("calibration_not_applied", "calibration factor not applied",
                              "The raw odometer difference was reported; multiply it by the calibration factor.",
                              lambda f, a, b: b - a),
              formula_variant("calibration_divided", "divided by the factor instead of multiplied",
                              "The odometer difference was divided by the factor; multiply it.",
                              lambda f, a, b: (b - a) / f))),
    ),
    result_step="odometer_distance",
    reference=Reference(
        "known route length",
        ("route_length",),
        lambda route_length: {"value": route_length},
        "The reference is the route's length from an earlier survey, given in the lab spec.",
    ),
)


def _ellipsoid_reference(lat_1, lon_1, lat_2, lon_2):
    ref = local_arc_reference(lat_1, lon_1, lat_2, lon_2)
    return {"value": ref["radius_m"], "distance": ref["distance_m"], "latitude": ref["latitude_rad"],
            "azimuth": ref["azimuth_rad"] % (2 * math.pi)}


def _deg_number_as_rad(v):
    return np.degrees(v)


_LAT_LIMITS = (-math.pi / 2, math.pi / 2)
_LON_LIMITS = (-math.pi, math.pi)

BASELINE_RADIUS = Method(
    id="baseline_radius",
    title="Radius from a measured baseline",
    summary="The ground distance between two stations of known latitude and longitude, and the angle between "
            "them at the Earth's centre, give the radius: R = s / θ.",
    observations=(
        Observation("lat_1", "latitude of station 1", "angle", "deg",
                    "latitude of station 1 (decimal degrees, or D M S with N/S)", positive=False, hemisphere=True,
                    limits=_LAT_LIMITS),
        Observation("lon_1", "longitude of station 1", "angle", "deg",
                    "longitude of station 1 (decimal degrees east, or D M S with E/W)", positive=False,
                    hemisphere=True, limits=_LON_LIMITS),
        Observation("lat_2", "latitude of station 2", "angle", "deg", "latitude of station 2", positive=False,
                    hemisphere=True, limits=_LAT_LIMITS),
        Observation("lon_2", "longitude of station 2", "angle", "deg", "longitude of station 2", positive=False,
                    hemisphere=True, limits=_LON_LIMITS),
        Observation("ground_distance", "ground distance", "length", "km",
                    "the measured distance between the stations (taped, odometer or given)"),
    ),
    constants=(),
    steps=(
        Step("delta_lat", "difference in latitude", "angle", "deg", "Δφ = φ₂ − φ₁", "definition",
             ("lat_1", "lat_2"), lambda a, b: b - a),
        Step("delta_lon", "difference in longitude", "angle", "deg", "Δλ = λ₂ − λ₁ (wrapped to ±180°)", "definition",
             ("lon_1", "lon_2"), bl.angle_difference),
        Step("haversine", "haversine of the central angle", "ratio", "1",
             "hav θ = sin²(Δφ/2) + cos φ₁ · cos φ₂ · sin²(Δλ/2)",
             "haversine formula of spherical trigonometry (Sinnott, Sky and Telescope 68(2), 1984)",
             ("lat_1", "lat_2", "delta_lat", "delta_lon"), bl.haversine,
             (formula_variant("degrees_as_radians", "calculator in radian mode with angles in degrees",
                              "The angles were entered in degrees while the calculator expected radians.",
                              lambda p1, p2, dp, dl: bl.haversine(np.degrees(p1), np.degrees(p2), np.degrees(dp),
                                                                  np.degrees(dl))),
              formula_variant("haversine_halves_missing", "the halves left out",
                              "The angles were not halved: hav θ = sin²(Δφ/2) + cos φ₁ cos φ₂ sin²(Δλ/2).",
                              lambda p1, p2, dp, dl: np.sin(dp) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dl) ** 2),
              formula_variant("haversine_cosines_missing", "the cosines of the latitudes left out",
                              "The term in Δλ must be multiplied by cos φ₁ · cos φ₂: meridians converge.",
                              lambda p1, p2, dp, dl: np.sin(dp / 2) ** 2 + np.sin(dl / 2) ** 2))),
        Step("central_angle", "central angle", "angle", "deg", "θ = 2 · asin(√hav θ)", "inverse haversine",
             ("haversine",), bl.central_angle_from_haversine,
             (formula_variant("missing_factor_two", "factor 2 missing",
                              "The factor 2 is missing: θ = 2·asin(√hav θ).",
                              lambda h: np.arcsin(np.sqrt(h))),
              formula_variant("missing_square_root", "square root missing",
                              "The square root is missing: θ = 2·asin(√hav θ).",
                              lambda h: 2 * np.arcsin(h)))),
        Step("radius", "radius", "length", "km", "R = s / θ  (θ in radians)", "arc length on a circle",
             ("ground_distance", "central_angle"), bl.radius_from_arc,
             (input_variant("degrees_as_radians", "the central angle in degrees used as radians",
                            "The central angle must be in radians in R = s / θ; it was used in degrees.",
                            "central_angle", _deg_number_as_rad),
              input_variant("miles_as_km", "statute miles used as kilometres",
                            "The distance was in statute miles but used as kilometres (1 mi = 1.609344 km).",
                            "ground_distance", lambda s: s / 1.609344),
              input_variant("nmi_as_mi", "nautical miles taken as statute miles",
                            "Nautical and statute miles were confused: 1 nmi = 1852 m, 1 mi = 1609.344 m.",
                            "ground_distance", lambda s: s * 1609.344 / 1852.0),
              input_variant("mi_as_nmi", "statute miles taken as nautical miles",
                            "Statute and nautical miles were confused: 1 mi = 1609.344 m, 1 nmi = 1852 m.",
                            "ground_distance", lambda s: s * 1852.0 / 1609.344),
              input_variant("feet_as_metres", "distance in feet used as metres",
                            "The distance was in feet but used as metres (1 ft = 0.3048 m).",
                            "ground_distance", lambda s: s / 0.3048))),
    ),
    result_step="radius",
    reference=Reference(
        "ellipsoid's radius along your line",
        ("lat_1", "lon_1", "lat_2", "lon_2"),
        _ellipsoid_reference,
        "The Earth is an ellipsoid, not a sphere: its radius of curvature depends on latitude and on the direction "
        "of the line, by Euler's formula 1/R = cos²α / M + sin²α / N (M the meridian radius, N the prime-vertical "
        "radius, α the azimuth). A perfect measurement of your baseline would give that radius at the line's "
        "mid-latitude along its azimuth, computed here on the WGS84 ellipsoid from your stations' coordinates "
        "(geodesic by geographiclib). The mean radius 6371.0088 km can differ from it by up to 0.7 %.",
        extras=(("distance", "ellipsoid distance between your stations", "length", "km"),
                ("latitude", "mid-latitude", "angle", "deg"),
                ("azimuth", "azimuth of the line there", "angle", "deg")),
        compare=(("distance", "ground_distance"),),
    ),
)
