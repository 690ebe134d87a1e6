"""Zenith-angle reductions against outside references and synthetic truth."""

import math

import numpy as np
import pytest

from labcheck.reductions import zenith as zn

R1 = 6371008.8
ARCSEC = math.radians(1 / 3600)


@pytest.mark.parametrize("k_km, c_plus_r_m", [(1.0, 0.0675), (2.0, 0.270), (5.0, 1.6875)])
def test_curvature_and_refraction_rule(k_km, c_plus_r_m):
    # (c + r) = 0.0675 K² m, K in km, for k ≈ 0.14 (Ghilani & Wolf); 3 significant figures (0.07 %).
    assert float(zn.curvature_and_refraction(k_km * 1000, 0.14, R1)) == pytest.approx(c_plus_r_m, rel=0.001)


def test_face_pairs_cancel_the_index_error():
    # FL = z + i, FR = 360° − z + i (definition of the vertical index error; common practice).
    z, i = math.radians(87.5), 14 * ARCSEC
    fl, fr = [z + i, z + i + 1 * ARCSEC], [2 * math.pi - z + i, 2 * math.pi - z + i - 1 * ARCSEC]
    assert zn.face_pair_index_error(fl, fr) == pytest.approx(i, abs=1e-12)
    assert zn.corrected_zenith(fl, zn.face_pair_index_error(fl, fr)) == pytest.approx(z + 0.5 * ARCSEC, abs=1e-12)
    with pytest.raises(ValueError, match="in pairs"):
        zn.face_pair_index_error(fl, fr[:1])


@pytest.mark.parametrize("k_true", [0.06, 0.13, 0.2])
def test_reciprocal_zenith_angles_recover_k(k_true):
    # Synthetic reciprocal observations from a known k: a circular ray of curvature k/R over a
    # sphere of radius R, built with plane geometry (not with the formula under test).
    S, dh = 3000.0, 25.0
    gamma = S / R1  # central angle
    A = np.array([0.0, R1])
    B = np.array([(R1 + dh) * math.sin(gamma), (R1 + dh) * math.cos(gamma)])
    chord = B - A
    # Zenith angle of the chord at each end, then the ray's tangent leaves at half the ray's
    # turning angle (k·S/R) above the chord at both ends.
    up_a = A / np.linalg.norm(A)
    up_b = B / np.linalg.norm(B)
    z_chord_a = math.acos(np.dot(chord, up_a) / np.linalg.norm(chord))
    z_chord_b = math.acos(np.dot(-chord, up_b) / np.linalg.norm(chord))
    bend = k_true * np.linalg.norm(chord) / R1 / 2
    z_ab, z_ba = z_chord_a - bend, z_chord_b - bend
    k = float(zn.refraction_coefficient_reciprocal(zn.reciprocal_angle_excess(z_ab, z_ba), S, R1))
    assert k == pytest.approx(k_true, abs=0.002)  # slope vs arc length and the 25 m height: ~1e-3
    assert float(zn.reciprocal_height_difference(np.linalg.norm(chord), z_ab, z_ba)) == pytest.approx(dh, abs=0.01)


def test_noon_latitude_both_sides():
    # Navigator's rule (Bowditch): sun south: φ = δ + z; sun north: φ = δ − z.
    d, z = math.radians(10.0), math.radians(40.0)
    assert float(zn.noon_latitude(d, z, 0)) == pytest.approx(math.radians(50.0))
    assert float(zn.noon_latitude(d, z, 1)) == pytest.approx(math.radians(-30.0))


def test_trig_height_by_hand():
    # S = 1000 m, z = 88°, hi = 1.5, ht = 1.8, k = 0.13 (by hand).
    S, z = 1000.0, math.radians(88.0)
    D = S * math.sin(z)
    cr = 0.87 * D**2 / (2 * R1)
    assert float(zn.trig_height_difference(S, z, cr, 1.5, 1.8)) == pytest.approx(S * math.cos(z) + cr - 0.3, abs=1e-12)
    assert cr == pytest.approx(0.0681, abs=0.0001)


@pytest.mark.parametrize("horizontal_m, dh_m, k", [(3200.0, 220.0, 0.13), (850.0, -35.0, 0.08), (3200.0, 4.0, 0.0)])
def test_reciprocal_heighting_slope_and_horizontal_against_plane_geometry(horizontal_m, dh_m, k):
    # Plane geometry, computed here: the chord's elevation a = atan(dh/D); each end sees the other
    # through a symmetric ray bent by the same angle r, so z_AB = 90° − a − r and z_BA = 90° + a − r.
    a = math.atan2(dh_m, horizontal_m)
    r = math.radians(0.01) * k
    z_ab, z_ba = math.pi / 2 - a - r, math.pi / 2 + a - r
    slope_m = math.hypot(horizontal_m, dh_m)
    assert float(zn.reciprocal_height_difference(slope_m, z_ab, z_ba)) == pytest.approx(dh_m, abs=1e-9)
    assert float(zn.reciprocal_height_difference(horizontal_m, z_ab, z_ba, horizontal=True)) == pytest.approx(dh_m, abs=1e-9)
