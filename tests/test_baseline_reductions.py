"""Baseline reductions against outside references.

* geographiclib (Karney 2013, J. Geodesy 87:43–55), installed as a dependency
  and used here as an independent reference: geodesics on a sphere for the
  haversine, Karney's documented inverse example, and radii of curvature
  measured as ds/dφ along geodesics.
* GRS80 derived constants (Moritz, Geodetic Reference System 1980):
  M at the equator b²/a = 6335439.327 m, at the poles a²/b = 6399593.626 m.
* Tape corrections: worked examples quoted from Ghilani & Wolf, Elementary
  Surveying (second-hand, as listed in shared/references.md; the printed
  answers are rounded to 0.01 ft, or 0.0001 ft for tension).
"""

import math

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic

from labcheck.reductions import baseline as bl
from labcheck.reductions.ellipsoid import (
    WGS84_A_M, WGS84_F, euler_radius, local_arc_reference, meridian_radius, prime_vertical_radius,
)

FT = 0.3048
LBF = 4.4482216152605
R1 = 6371008.8


def haversine_distance(lat1, lon1, lat2, lon2, radius):
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dphi = bl.angle_difference(p1, p2)
    dlam = bl.angle_difference(math.radians(lon1), math.radians(lon2))
    hav = bl.haversine(p1, p2, dphi, dlam)
    return radius * float(bl.central_angle_from_haversine(hav))


def test_haversine_matches_geodesics_on_a_sphere():
    # geographiclib's Geodesic(R, 0) is a sphere of radius R: the haversine distance must equal it
    # to round-off (references.md).  Random pairs, including near the poles and across ±180°.
    sphere = Geodesic(R1, 0.0)
    rng = np.random.default_rng(1)
    pairs = [(89.9, 10.0, 89.9, -170.0), (-45.0, 179.9, -45.1, -179.9), (0.0, 0.0, 0.0, 0.001)]
    for _ in range(300):
        lat1, lat2 = rng.uniform(-89.9, 89.9, 2)
        lon1, lon2 = rng.uniform(-180, 180, 2)
        pairs.append((lat1, lon1, lat2, lon2))
    for lat1, lon1, lat2, lon2 in pairs:
        ref = sphere.Inverse(lat1, lon1, lat2, lon2)["s12"]
        if ref > 19_000_000:  # near-antipodal: the haversine is ill-conditioned there (documented)
            continue
        # Round-off of the haversine: about 1e-9 relative, and a few nm at short range.
        assert haversine_distance(lat1, lon1, lat2, lon2, R1) == pytest.approx(ref, rel=1e-9, abs=1e-6)


def test_karney_documented_inverse_example():
    # geographiclib geodesic.py docstring: (-41.32, 174.81) -> (40.96, -5.50):
    # s12 = 19959679.26735382 m on WGS84.  Checks that our wrapper passes degrees correctly.
    ref = local_arc_reference(*(math.radians(v) for v in (-41.32, 174.81, 40.96, -5.50)))
    assert ref["distance_m"] == pytest.approx(19959679.26735382, abs=1e-6)


def test_meridian_radius_limits_grs80():
    # GRS80 derived constants (Moritz): M(0) = b²/a, M(90°) = a²/b; published to 1 mm.
    f = 1 / 298.257222101
    assert meridian_radius(0.0, 6378137.0, f) == pytest.approx(6335439.327, abs=0.0005)
    assert meridian_radius(math.pi / 2, 6378137.0, f) == pytest.approx(6399593.626, abs=0.0005)
    assert prime_vertical_radius(0.0, 6378137.0, f) == pytest.approx(6378137.0, abs=1e-6)  # N(0) = a


@pytest.mark.parametrize("lat", [0.0, 30.0, 45.0, 60.0, 80.0])
def test_radii_of_curvature_against_geodesics(lat):
    # Independent measure with geographiclib on WGS84 (NGA TR8350.2 defining constants):
    # M = ds/dφ along a meridian, N·cos φ = ds/dλ along a parallel (the geodesic over a tiny
    # Δλ differs from the parallel's arc by a relative O(Δλ²) < 1e-11).
    geod = Geodesic(WGS84_A_M, WGS84_F)
    d = 1e-4  # degrees
    s_meridian = geod.Inverse(lat - d, 0.0, lat + d, 0.0)["s12"]
    m_numeric = s_meridian / math.radians(2 * d)
    s_parallel = geod.Inverse(lat, -d, lat, d)["s12"]
    n_numeric = s_parallel / (math.radians(2 * d) * math.cos(math.radians(lat)))
    # Central differences over ±1e-4°: error ~ (d²/6)·M''/M < 1e-9 relative.
    assert float(meridian_radius(math.radians(lat))) == pytest.approx(m_numeric, rel=1e-8)
    assert float(prime_vertical_radius(math.radians(lat))) == pytest.approx(n_numeric, rel=1e-8)


@pytest.mark.parametrize("lat, azi", [(10.0, 0.0), (45.0, 90.0), (45.0, 30.0), (57.8, 331.0), (-70.0, 135.0)])
def test_euler_radius_against_the_normal_curvature_of_a_geodesic(lat, azi):
    # Independent of M and N: along a short geodesic (geographiclib, WGS84) the ellipsoid's unit
    # normal changes at the rate dn/ds; its component along the direction of travel t is the normal
    # curvature 1/R_α (Euler/Meusnier).  The angle between the end normals alone would not do on an
    # oblique line: the normals also twist (geodesic torsion (1/M − 1/N)·sin α·cos α), which adds
    # ½(τR)² ≈ 1e-6 relative at 45°; projecting on t removes it.  Over ±200 m the rest is < 1e-8.
    geod = Geodesic(WGS84_A_M, WGS84_F)
    a = geod.Direct(lat, 0.0, azi + 180.0, 200.0)
    b = geod.Direct(lat, 0.0, azi, 200.0)

    def normal(la, lo):
        la, lo = math.radians(la), math.radians(lo)
        return np.array([math.cos(la) * math.cos(lo), math.cos(la) * math.sin(lo), math.sin(la)])

    phi, alpha = math.radians(lat), math.radians(azi)
    north = np.array([-math.sin(phi), 0.0, math.cos(phi)])  # at longitude 0
    east = np.array([0.0, 1.0, 0.0])
    t = math.cos(alpha) * north + math.sin(alpha) * east
    curvature = float(np.dot(normal(b["lat2"], b["lon2"]) - normal(a["lat2"], a["lon2"]), t)) / 400.0
    assert float(euler_radius(phi, alpha)) == pytest.approx(1.0 / curvature, rel=1e-7)


def test_euler_radius_limits():
    lat = math.radians(40.0)
    assert float(euler_radius(lat, 0.0)) == pytest.approx(float(meridian_radius(lat)), rel=1e-15)
    assert float(euler_radius(lat, math.pi / 2)) == pytest.approx(float(prime_vertical_radius(lat)), rel=1e-15)


# ------------------------------------------------------------------ tape ---

def test_temperature_correction_worked_example():
    # Ghilani & Wolf (second-hand): 368.50 ft taped at 22 °F, α = 0.0000065 /°F, Tₛ = 68 °F → −0.11 ft.
    c = bl.temperature_correction(368.50 * FT, (22 - 32) * 5 / 9, 20.0, 0.0000065 * 1.8)
    assert float(c) / FT == pytest.approx(-0.11, abs=0.005)


@pytest.mark.parametrize("tension_lbf, expected_ft", [(12.0, -0.71), (18.0, -0.31)])
def test_sag_correction_worked_example(tension_lbf, expected_ft):
    # Ghilani & Wolf (second-hand): a 100 ft tape weighing 2.8 lb, spans 3 × 100 + 48.75 ft:
    # sag −0.71 ft at 12 lb, −0.31 ft at 18 lb.
    spans = np.array([100.0, 100.0, 100.0, 48.75]) * FT
    w = 2.8 * LBF / (100 * FT)
    c = bl.sag_correction(spans, w, tension_lbf * LBF, 1.0)
    assert c / FT == pytest.approx(expected_ft, abs=0.005)


def test_tension_correction_worked_example():
    # Ghilani & Wolf (second-hand): P = 18 lb, Pₛ = 12 lb, L = 100 ft, A = 0.015 in², E = 29e6 psi → +0.0014 ft.
    c = bl.tension_correction(100 * FT, 18 * LBF, 12 * LBF, 0.015 * 0.0254**2, 29e6 * LBF / 0.0254**2)
    assert float(c) / FT == pytest.approx(0.0014, abs=0.00005)


def test_slope_worked_example():
    # Ghilani & Wolf (second-hand): 300.00 ft at 5° → 298.86 ft horizontal.
    c = bl.slope_correction([300.0 * FT], math.radians(5.0))
    assert (300.0 * FT + c) / FT == pytest.approx(298.86, abs=0.005)


def test_limiting_cases():
    L = np.array([30.0, 30.0, 12.5])
    assert float(bl.temperature_correction(L.sum(), 20.0, 20.0)) == 0.0  # at standard temperature
    assert float(bl.tension_correction(L.sum(), 50.0, 50.0, 2.6e-6, 200e9)) == 0.0  # at standard tension
    assert bl.sag_correction(L, 0.2, 50.0, 0.0) == 0.0  # supported throughout
    assert bl.slope_correction(L, 0.0) == 0.0  # level
    assert float(bl.standardisation_correction(72.5, 30.0, 30.0)) == 0.0  # a perfect tape
    # A tape 3.2 mm long per 30 m reads short by that ratio (definition of standardisation).
    assert float(bl.standardisation_correction(60.0, 30.0, 30.0032)) == pytest.approx(0.0064, abs=1e-12)


def test_slope_from_heights_matches_the_surveyors_approximation():
    # From heights: exact L − √(L² − h²) against the common approximation h²/(2L) (common practice):
    # they differ by about h⁴/(8L³).
    L, h = 30.0, 1.5
    exact = bl.slope_correction([L], bl.slope_angles_from_heights([h], [L]))
    assert exact == pytest.approx(-(L - math.sqrt(L**2 - h**2)), abs=1e-12)
    assert exact == pytest.approx(-h**2 / (2 * L), abs=h**4 / (8 * L**3) * 1.01)


def test_slope_count_must_match():
    with pytest.raises(ValueError, match="one slope per tape reading, or one for all"):
        bl.slope_correction([30.0, 30.0, 10.0], [0.01, 0.02])


def test_precision_ratio_by_hand():
    # 214.380 and 214.340: mean 214.360, difference 0.040 → N = 5359 (by hand).
    assert float(bl.precision_ratio(214.380, 214.340)) == pytest.approx(5359.0, abs=0.5)


def test_sea_level_reduction_by_hand():
    # L·R/(R + h) with h = R/10000: 1000 m → 1000/1.0001 = 999.90001 m (by hand).
    assert float(bl.sea_level_length(1000.0, R1 / 10000, R1)) == pytest.approx(999.900010, abs=1e-6)


def test_odometer_by_hand():
    # A 1.000 km course reads 1.03 km: f = 0.970874; a 7.05 km reading → 6.8447 km (by hand).
    f = float(bl.calibration_factor(1000.0, 12000.0, 13030.0))
    assert f == pytest.approx(1 / 1.03, rel=1e-12)
    assert float(bl.odometer_distance(f, 20000.0, 27050.0)) == pytest.approx(6844.66, abs=0.01)


def test_longitude_difference_wraps_across_the_antimeridian():
    assert math.degrees(float(bl.angle_difference(math.radians(179.5), math.radians(-179.5)))) == pytest.approx(1.0)
