"""The dip lab's two methods: dip of the horizon, and hidden height.

Observation names and step ids here are the public vocabulary of the
templates and results; do not rename them.
"""

from __future__ import annotations

import math

import numpy as np

from labcheck.reductions import horizon as hz
from labcheck.methods.base import Alternative, Constant, Method, Observation, Reference, Step, formula_variant, input_variant

FT = 0.3048  # international foot, m

_K = Constant("k", "coefficient of refraction", "ratio", "curvature of the line of sight as a fraction of the Earth's curvature")
_R_REF = Constant("reference_radius", "reference radius", "length", "the radius results are judged against")

_EYE = Observation(
    "eye_height",
    "eye height",
    "length",
    "m",
    "height of the eye (or instrument) above the water surface",
)


def _feet_as_metres(input_name: str, what: str):
    return input_variant(
        "feet_as_metres",
        f"{what} in feet used as metres",
        f"The {what} was written in feet but the number was used as if it were metres. "
        "Convert first: 1 ft = 0.3048 m exactly.",
        input_name,
        lambda v: v / FT,
    )


def _metres_as_feet(input_name: str, what: str):
    return input_variant(
        "metres_as_feet",
        f"{what} in metres converted as if it were feet",
        f"The {what} was already in metres but was multiplied by 0.3048 as if it were in feet.",
        input_name,
        lambda v: v * FT,
    )


def _degrees_as_radians(input_name: str):
    return input_variant(
        "degrees_as_radians",
        "calculator in radian mode with an angle in degrees",
        "The angle was entered in degrees while the calculator (or spreadsheet function) "
        "expected radians. Convert first, or set the calculator to degrees.",
        input_name,
        lambda v: np.degrees(v),
    )


_REFRACTION_IGNORED = formula_variant(
    "refraction_ignored",
    "refraction ignored",
    "Your radius equals the apparent radius: the refraction correction R = (1 − k)·R′ was not applied. "
    "Refraction bends the line of sight down, so the horizon looks farther and the Earth bigger than it is.",
    lambda radius_apparent, k: radius_apparent,
)
_REFRACTION_INVERTED = formula_variant(
    "refraction_inverted",
    "refraction correction applied the wrong way",
    "The refraction correction was applied the wrong way (R′ / (1 − k) or (1 + k)·R′ instead of (1 − k)·R′): "
    "the true radius is smaller than the apparent one.",
    lambda radius_apparent, k: radius_apparent / (1.0 - k),
)
_REFRACTION_PLUS = formula_variant(
    "refraction_plus",
    "refraction correction with the wrong sign",
    "The refraction correction was applied with the wrong sign ((1 + k)·R′ instead of (1 − k)·R′).",
    lambda radius_apparent, k: (1.0 + k) * radius_apparent,
)

_MEAN_RADIUS_REFERENCE = Reference(
    "reference radius",
    ("reference_radius",),
    lambda reference_radius: {"value": reference_radius},
    "The reference is the radius set in the lab spec (the IUGG mean radius unless your instructor chose a local one); "
    "the Earth's radius of curvature varies by about 1 % with latitude and direction, far less than this method's error.",
)

_REFRACTION_TWICE = formula_variant(
    "refraction_applied_twice",
    "refraction correction applied twice",
    "The factor (1 − k) was applied twice: R = (1 − k)·R′ once only.",
    lambda radius_apparent, k: (1.0 - k) ** 2 * radius_apparent,
)

_RADIUS_ERROR_STEP = Step(
    "radius_error_pct",
    "error against the reference radius",
    "percent",
    "%",
    "e = 100 · (R − R_ref) / R_ref",
    "definition of relative error",
    ("radius", "reference_radius"),
    hz.radius_error_pct,
    (
        formula_variant(
            "error_relative_to_result",
            "error taken relative to your own radius",
            "The difference was divided by your radius instead of the reference radius.",
            lambda radius, reference_radius: 100.0 * (radius - reference_radius) / radius,
        ),
        formula_variant(
            "error_sign_reversed",
            "difference taken the other way round",
            "The difference was taken as R_ref − R; the convention here is R − R_ref, "
            "so a radius that is too large has a positive error.",
            lambda radius, reference_radius: 100.0 * (reference_radius - radius) / reference_radius,
        ),
    ),
    "how far your radius is from the reference, in percent (positive: too large)",
)

_RADIUS_STEP = Step(
    "radius",
    "radius corrected for refraction",
    "length",
    "km",
    "R = (1 − k) · R′",
    "effective-radius model of terrestrial refraction (line of sight of curvature k/R); "
    "the same model gives the surveyor's (c + r) = (1 − k)·s²/(2R)",
    ("radius_apparent", "k"),
    hz.radius_corrected_for_refraction,
    (_REFRACTION_IGNORED, _REFRACTION_INVERTED, _REFRACTION_PLUS, _REFRACTION_TWICE),
    "the Earth's radius after removing the effect of refraction",
)


DIP = Method(
    id="dip",
    title="Dip of the horizon",
    summary="The dip of the sea or lake horizon below the horizontal, seen from a known height, gives the radius.",
    observations=(
        _EYE,
        Observation(
            "dip_angle",
            "dip of the horizon",
            "angle",
            "arcmin",
            "one reading of the angle of the visible horizon below the horizontal (repeat the row for each reading)",
            repeated=True,
            alternatives=(
                Alternative(
                    "horizon_zenith_angle",
                    "one theodolite reading of the zenith angle of the horizon (dip = z − 90°); "
                    "use instead of dip_angle",
                    "dms",
                    lambda zenith_angles, values: hz.dip_from_zenith_angle(zenith_angles),
                ),
            ),
        ),
    ),
    constants=(_K, _R_REF),
    steps=(
        Step(
            "dip_mean",
            "mean dip",
            "angle",
            "arcmin",
            "d = (d₁ + d₂ + … + dₙ) / n",
            "arithmetic mean of repeated readings",
            ("dip_angle",),
            hz.mean_angle,
            (
                formula_variant(
                    "median_for_mean",
                    "median instead of mean",
                    "Your value is the median of the readings; the lab asks for the mean.",
                    lambda dip_angle: float(np.median(dip_angle)),
                ),
            ),
            "the mean of your dip readings",
        ),
        Step(
            "radius_apparent",
            "apparent radius from the dip",
            "length",
            "km",
            "R′ = h · cos d / (1 − cos d)",
            "tangent-line geometry: cos d = R / (R + h)",
            ("eye_height", "dip_mean"),
            hz.radius_from_dip,
            (
                _feet_as_metres("eye_height", "eye height"),
                _metres_as_feet("eye_height", "eye height"),
                _degrees_as_radians("dip_mean"),
                formula_variant(
                    "dip_formula_inverted",
                    "cos d / (1 − cos d) turned upside down",
                    "The fraction was inverted: R′ = h·cos d / (1 − cos d), not h·(1 − cos d) / cos d.",
                    lambda eye_height, dip_mean: eye_height * (1 - math.cos(dip_mean)) / math.cos(dip_mean),
                ),
                formula_variant(
                    "small_angle_missing_two",
                    "small-angle form without the factor 2",
                    "With the small-angle form R′ ≈ 2h / d², the factor 2 is missing (R′ = h / d²).",
                    lambda eye_height, dip_mean: eye_height / dip_mean**2,
                ),
            ),
            "the radius if the line of sight were straight",
        ),
        _RADIUS_STEP,
        _RADIUS_ERROR_STEP,
    ),
    result_step="radius",
    reference=_MEAN_RADIUS_REFERENCE,
)


HIDDEN_HEIGHT = Method(
    id="hidden_height",
    title="Hidden height of a distant object",
    summary="How much of a distant object is hidden behind the horizon, seen from a known height, gives the radius.",
    observations=(
        _EYE,
        Observation(
            "target_distance",
            "distance to the object",
            "length",
            "km",
            "surface distance from the eye to the distant object (standing on the water or level ground)",
        ),
        Observation(
            "hidden_height",
            "hidden height",
            "length",
            "m",
            "how much of the object is hidden below the horizon",
        ),
    ),
    constants=(_K, _R_REF),
    steps=(
        Step(
            "radius_apparent",
            "apparent radius from the hidden height",
            "length",
            "km",
            "R′ = s² / (2 (√h₀ + √x)²)",
            "sum of the two horizon distances s = √(2R′h₀) + √(2R′x)",
            ("target_distance", "eye_height", "hidden_height"),
            hz.radius_from_hidden_height,
            (
                _feet_as_metres("eye_height", "eye height"),
                _feet_as_metres("hidden_height", "hidden height"),
                input_variant(
                    "miles_as_km",
                    "distance in statute miles used as kilometres",
                    "The distance was written in statute miles but used as kilometres. 1 mi = 1.609344 km.",
                    "target_distance",
                    lambda v: v / 1609.344 * 1000.0,
                ),
                input_variant(
                    "nmi_as_mi",
                    "nautical miles taken as statute miles",
                    "Nautical and statute miles were confused: 1 nmi = 1852 m, 1 mi = 1609.344 m.",
                    "target_distance",
                    lambda v: v * 1609.344 / 1852.0,
                ),
                formula_variant(
                    "missing_factor_two",
                    "factor 2 missing",
                    "The factor 2 in the denominator is missing: R′ = s² / (2 (√h₀ + √x)²).",
                    lambda target_distance, eye_height, hidden_height: target_distance**2
                    / (math.sqrt(eye_height) + math.sqrt(hidden_height)) ** 2,
                ),
                formula_variant(
                    "square_roots_missing",
                    "heights added without square roots",
                    "The heights were added directly; each horizon distance goes with the square root "
                    "of its height: s = √(2R′h₀) + √(2R′x).",
                    lambda target_distance, eye_height, hidden_height: target_distance**2
                    / (2.0 * (eye_height + hidden_height)),
                ),
                formula_variant(
                    "hidden_height_ignored",
                    "only the eye's horizon distance used",
                    "Only the eye's horizon distance was used (R′ = s²/(2h₀)); the object's hidden part "
                    "adds a second horizon distance √(2R′x).",
                    lambda target_distance, eye_height, hidden_height: target_distance**2 / (2.0 * eye_height),
                ),
            ),
            "the radius if the line of sight were straight",
        ),
        _RADIUS_STEP,
        _RADIUS_ERROR_STEP,
    ),
    result_step="radius",
    reference=_MEAN_RADIUS_REFERENCE,
)
