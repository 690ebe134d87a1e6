"""The dip lab's reductions against outside references.

* The exact tangent geometry, computed here independently by minimising the
  depression angle of points on a circle (scipy), not by the closed form.
* The almanac dip rule, dip = 1.76′·√h (h in metres), with standard
  refraction (Nautical Almanac dip table; values 2.49′ at 2 m, 5.57′ at 10 m,
  9.64′ at 30 m, printed to 0.01′).
* The surveyor's curvature-and-refraction rule (c + r) = 0.0675·K² m, K in km,
  for k ≈ 0.14, and curvature alone 0.0785·K² (Ghilani & Wolf, Elementary
  Surveying).
* IUGG mean radius R1 = 6371.0088 km (Moritz, Geodetic Reference System 1980).
"""

import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from labcheck.reductions import horizon as hz

R1 = 6371008.8  # m, IUGG mean radius (Moritz, GRS80)
ARCMIN = math.radians(1 / 60)


def dip_by_minimisation(radius_m, eye_height_m):
    """The dip of the horizon as the smallest depression angle to any point of the circle."""
    top = radius_m + eye_height_m

    def depression(theta):
        return math.atan2(top - radius_m * math.cos(theta), radius_m * math.sin(theta))

    res = minimize_scalar(depression, bounds=(1e-7, 0.05), method="bounded", options={"xatol": 1e-13})
    return res.fun


@pytest.mark.parametrize("h", [1.5, 10.0, 30.0, 120.0])
def test_dip_formula_inverts_the_tangent_geometry(h):
    d = dip_by_minimisation(R1, h)
    # The minimiser locates the tangent point to ~1e-13 rad; the dip is flat there, so
    # the dip itself is good to ~1e-16 rad and R to well under 1e-6 relative.
    assert hz.radius_from_dip(h, d) == pytest.approx(R1, rel=1e-6)


@pytest.mark.parametrize("h, dip_arcmin", [(2.0, 2.49), (10.0, 5.57), (30.0, 9.64)])
def test_almanac_dip_values_give_the_earth_with_standard_refraction(h, dip_arcmin):
    # The almanac rule 1.76'·sqrt(h) corresponds to k = 1 − (1.76/1.926)² ≈ 0.165
    # (shared/references.md); with that k the dip formula must return R1.
    # Tolerance: the printed dip is rounded to 0.005', and R ∝ 1/d², so the
    # relative error in R is up to 2·0.005/dip; plus 0.1 % for the rounding of the
    # 1.76 and 1.926 coefficients (3 and 4 significant figures).
    k = 0.165
    r = (1 - k) * hz.radius_from_dip(h, dip_arcmin * ARCMIN)
    tolerance = 2 * 0.005 / dip_arcmin + 2 * 0.005 / 1.76 + 0.001
    assert r == pytest.approx(R1, rel=tolerance)


def test_dip_grows_as_the_square_root_of_height():
    # Almanac rule: dip ∝ √h; so R′ from (h, 1.76'√h) does not depend on h.
    heights = np.array([2.0, 10.0, 30.0, 100.0])
    r = hz.radius_from_dip(heights, 1.76 * ARCMIN * np.sqrt(heights))
    assert np.ptp(r) / r.mean() < 1e-4


def hidden_height_by_geometry(radius_m, eye_height_m, distance_m):
    """Hidden height from the tangent line, by plane geometry on the circle (independent of the formula)."""
    theta1 = math.acos(radius_m / (radius_m + eye_height_m))  # central angle to the tangent point
    theta = distance_m / radius_m
    return radius_m / math.cos(theta - theta1) - radius_m


@pytest.mark.parametrize("h0, s", [(2.0, 10_000.0), (15.0, 25_000.0), (40.0, 40_000.0)])
def test_hidden_height_formula_inverts_the_geometry(h0, s):
    x = hidden_height_by_geometry(R1, h0, s)
    # The formula is first order in h/R (neglected terms ~h/R < 1e-5 here).
    assert hz.radius_from_hidden_height(s, h0, x) == pytest.approx(R1, rel=1e-4)


@pytest.mark.parametrize("k_km, c_plus_r_m", [(1.0, 0.0675), (2.0, 0.270), (5.0, 1.6875)])
def test_refraction_model_matches_the_surveyors_c_plus_r_rule(k_km, c_plus_r_m):
    # (c + r) = 0.0675 K² m for k ≈ 0.14 (Ghilani & Wolf).  From sea level the hidden
    # height is the (c + r) drop; the rule's 0.0675 has 3 significant figures (0.07 %).
    r_apparent = hz.radius_from_hidden_height(k_km * 1000, 0.0, c_plus_r_m)
    r = hz.radius_corrected_for_refraction(r_apparent, 0.14)
    assert r == pytest.approx(R1, rel=0.001)


def test_curvature_alone_rule():
    # c = 0.0785 K² m (Ghilani & Wolf): no refraction, k = 0.
    r = hz.radius_corrected_for_refraction(hz.radius_from_hidden_height(1000.0, 0.0, 0.0785), 0.0)
    assert r == pytest.approx(R1, rel=0.001)


def test_zenith_angle_to_dip():
    assert hz.dip_from_zenith_angle(math.radians(90 + 5.5 / 60)) == pytest.approx(5.5 * ARCMIN, rel=1e-9)


def test_error_pct_sign_convention():
    assert hz.radius_error_pct(6500e3, R1) == pytest.approx(100 * (6500e3 - R1) / R1)
    assert hz.radius_error_pct(6000e3, R1) < 0


def test_reductions_accept_arrays_and_scalars():
    h = np.array([5.0, 10.0])
    d = np.array([4.0, 5.6]) * ARCMIN
    arr = hz.radius_from_dip(h, d)
    assert arr.shape == (2,)
    assert arr[1] == pytest.approx(float(hz.radius_from_dip(10.0, 5.6 * ARCMIN)))


def test_stable_for_tiny_dips():
    # 1 − cos d loses digits for small d; the sin² form does not.  Small-angle limit R′ → 2h/d².
    d = 1e-5
    assert hz.radius_from_dip(1.0, d) == pytest.approx(2 / d**2, rel=1e-9)
