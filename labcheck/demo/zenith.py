"""Demo sections F to I: gnomon, sextant noon sight, two-site meridian arc, theodolite zenith angles.

Scenario (all invented): the course's groups observe the noon sun at the
Harrowby stations (invented coordinates, clocks on UTC−02:00) and, for the
meridian arc, also at Fennick Point about 510 km to the south; theodolite
groups measure zenith angles between the survey pillars on Harrowby Bluff.
Each group's readings are made from the truth (known latitude, the sun's
position at the moment of observation, a day's refraction) run backwards
through the instrument, with realistic noise; the groups then reduce them
with a student's rounding, some with planted mistakes.
"""

from __future__ import annotations

import math
from datetime import datetime, timedelta, timezone

import numpy as np

from labcheck.reductions import sun
from labcheck.reductions import zenith as zn
from labcheck.demo.common import DemoGroup, identity_rows, num, person

__all__ = ["gnomon_section", "GNOMON_PLANTED", "GNOMON_NOTES", "sextant_section", "SEXTANT_PLANTED",
           "arc_section", "ARC_PLANTED", "theodolite_section", "THEODOLITE_PLANTED"]

SEED = 20261203
ZONE = timezone(timedelta(hours=-2))
SITE = (57.81234, -33.61420)  # Harrowby Trig
SOUTH_SITE = (53.22870, -33.48925)  # Fennick Point
K_SPEC = 0.13


def _deg(x):
    return math.degrees(x)


def _observe_time(day: datetime, lon_deg: float, offset_min: float) -> datetime:
    noon = sun.local_apparent_noon(day, math.radians(lon_deg))
    t = noon + timedelta(minutes=offset_min)
    return t.replace(microsecond=0)


def _true_zenith(lat_deg, when):
    dec = sun.declination(when)
    H = sun.hour_angle(when, math.radians(SITE[1]))
    return sun.zenith_at(math.radians(lat_deg), dec, H)


# ----------------------------------------------------------------- gnomon ---
GNOMON_PLANTED = {3: ("declination_sign", "declination"), 5: ("zenith_altitude_confused", "latitude"),
                  9: ("refraction_added_to_altitude", "zenith_true")}
GNOMON_NOTES = {7: "clock_time_as_solar_time"}


def _gnomon_rows(rows, prefix, lat_deg, lon_deg, when_local, rng, mistakes=()):
    when = when_local.astimezone(timezone.utc)
    dec = sun.declination(when)
    H = sun.hour_angle(when, math.radians(lon_deg))
    z_geo = sun.zenith_at(math.radians(lat_deg), dec, H)
    # The apparent centre is lifted by refraction (and lowered by the sun's 8.8" parallax, negligible here).
    z_app = z_geo
    for _ in range(3):
        z_app = z_geo - float(sun.refraction_bennett(math.pi / 2 - z_app))
    g = round(float(rng.uniform(1.0, 1.5)), 3)
    n = int(rng.integers(3, 6))
    shadows = [round(g * math.tan(z_app) + float(rng.normal(0, 0.003)), 3) for _ in range(n)]
    rows.append(("observation", f"{prefix}gnomon_height", f"{g:.3f}", "m", ""))
    rows += [("observation", f"{prefix}shadow_length", f"{s:.3f}", "m", "to the middle of the blurred edge") for s in shadows]
    rows.append(("observation", f"{prefix}observed_at", when_local.isoformat(), "", ""))
    rows.append(("observation", f"{prefix}lon", f"{lon_deg:.5f}", "deg", ""))
    rows.append(("observation", f"{prefix}lat", f"{lat_deg:.5f}", "deg", "from the station list"))
    # The group's reduction.
    s_mean = round(sum(shadows) / n, 4)
    z = math.atan2(s_mean, g)
    if "zenith_altitude_confused" in mistakes:
        pass
    zc = z
    r = float(sun.refraction_bennett(math.pi / 2 - zc))
    zt = zc - r if "refraction_added_to_altitude" in mistakes else zc + r
    d = sun.declination(when) + math.radians(float(rng.normal(0, 0.001)))  # read from an almanac
    if "declination_sign" in mistakes:
        d = -d
    phi = d + (math.pi / 2 - zt if "zenith_altitude_confused" in mistakes else zt)
    rows += [("result", f"{prefix}shadow_mean", f"{s_mean:.4f}", "m", ""),
             ("result", f"{prefix}zenith_observed", f"{_deg(z):.4f}", "deg", ""),
             ("result", f"{prefix}zenith_centre", f"{_deg(zc):.4f}", "deg", ""),
             ("result", f"{prefix}zenith_true", f"{_deg(zt):.4f}", "deg", ""),
             ("result", f"{prefix}declination", f"{_deg(d):.4f}", "deg", ""),
             ("result", f"{prefix}latitude", f"{_deg(phi):.4f}", "deg", "")]
    return phi


def gnomon_section() -> list[DemoGroup]:
    rng = np.random.default_rng(SEED)
    groups = []
    for g in range(1, 11):
        sid = f"f2150-{g:03d}"
        grp = DemoGroup(g, sid, person(g + 5, 3), "csv")
        day = datetime(2026, 9, 14 + g, tzinfo=timezone.utc) if g != 7 else datetime(2026, 7, 26, tzinfo=timezone.utc)
        if g == 7:  # planted: observed at 12:00 by the clock
            when_local = datetime(2026, 7, 26, 12, 0, 0, tzinfo=ZONE)
        else:
            when_local = _observe_time(day, SITE[1], float(rng.uniform(-6, 6))).astimezone(ZONE)
        grp.rows += identity_rows(sid, grp.name, f"F{g:02d}", when_local.date().isoformat(), "Harrowby Trig")
        mistakes = {GNOMON_PLANTED[g][0]} if g in GNOMON_PLANTED else set()
        _gnomon_rows(grp.rows, "", SITE[0], SITE[1], when_local, rng, mistakes)
        groups.append(grp)
    return groups


# ---------------------------------------------------------------- sextant ---
SEXTANT_PLANTED = {2: ("index_error_wrong_sign", "index_corrected"), 4: ("double_altitude_not_halved", "apparent_altitude"),
                   6: ("refraction_added", "observed_altitude"), 8: ("semi_diameter_wrong_limb", "observed_altitude"),
                   9: ("declination_sign", "declination"), 10: ("dip_added", "apparent_altitude"),
                   11: ("semi_diameter_left_out", "observed_altitude")}


def _dm(angle_deg: float) -> str:
    """Degrees and decimal minutes as a navigator writes them: ``37 12.4``."""
    d = int(angle_deg)
    m = round((angle_deg - d) * 60, 1)
    if m >= 60:
        d, m = d + 1, m - 60
    return f"{d} {m:04.1f}"


def sextant_section() -> list[DemoGroup]:
    rng = np.random.default_rng(SEED + 1)
    groups = []
    arcmin = math.radians(1 / 60)
    for g in range(1, 12):
        sid = f"g2150-{g:03d}"
        grp = DemoGroup(g, sid, person(g + 9, 5), "xlsx" if g % 3 == 0 else "csv")
        artificial = g in (1, 3, 4, 5)
        upper = g in (5, 8)
        day = datetime(2026, 9, 10 + g, tzinfo=timezone.utc)
        when_local = _observe_time(day, SITE[1], float(rng.uniform(-3, 3))).astimezone(ZONE)
        when = when_local.astimezone(timezone.utc)
        grp.rows += identity_rows(sid, grp.name, f"G{g:02d}", when_local.date().isoformat(),
                  "Harrowby Trig (artificial horizon)" if artificial else "Harrowby harbour wall")
        rows = grp.rows
        T, P = round(float(rng.uniform(8, 18)), 0), round(float(rng.uniform(995, 1025)), 0)
        eye = round(float(rng.uniform(3.0, 6.0)), 1)
        ie = round(float(rng.uniform(-2.5, 2.5)), 1) * arcmin  # + on the arc: readings too high
        # Truth: the centre's geocentric altitude, made apparent, then the limb, horizon and index error.
        z_geo = _true_zenith(SITE[0], when)
        ho = math.pi / 2 - z_geo
        sd, hp = sun.semi_diameter(when), sun.horizontal_parallax(when)
        ha = ho
        for _ in range(4):
            ha = ho + float(sun.refraction_bennett(ha, P * 100, T)) - hp * math.cos(ha)
        limb = ha + (-sd if not upper else sd)
        hs_true = 2 * limb if artificial else limb + float(sun.dip_of_sea_horizon(eye))
        readings = [hs_true + ie + float(rng.normal(0, 0.4)) * arcmin for _ in range(3)]
        rows += [("observation", "sextant_altitude", _dm(_deg(h)), "dms", "") for h in readings]
        rows += [("observation", "limb", "upper" if upper else "lower", "", ""),
                 ("observation", "index_error", f"{_deg(ie) * 60:.1f}", "arcmin", "on the arc" if ie > 0 else "off the arc"),
                 ("observation", "horizon", "artificial" if artificial else "sea", "", ""),
                 ("observation", "temperature", f"{T:.0f}", "C", ""), ("observation", "pressure", f"{P:.0f}", "hPa", ""),
                 ("observation", "observed_at", when_local.isoformat(), "", ""),
                 ("observation", "lon", f"{SITE[1]:.5f}", "deg", ""), ("observation", "lat", f"{SITE[0]:.5f}", "deg", "")]
        if not artificial:
            rows.append(("observation", "eye_height", f"{eye:.1f}", "m", "harbour wall to eye"))
        # The group's reduction, in arcminutes rounded to 0.1'.
        hs = sum(round(_deg(h) * 60, 1) for h in readings) / 3 * arcmin  # from the written readings
        hs = round(_deg(hs) * 60, 1) * arcmin
        mistake = SEXTANT_PLANTED.get(g, (None,))[0]
        h1 = hs + ie if mistake == "index_error_wrong_sign" else hs - ie
        if artificial:
            h2 = h1 if mistake == "double_altitude_not_halved" else h1 / 2
        else:
            dip = float(sun.dip_of_sea_horizon(eye))
            h2 = h1 + dip if mistake == "dip_added" else h1 - dip
        r = float(sun.refraction_bennett(h2, P * 100, T))
        sd_signed = -sd if upper else sd
        pa = hp * math.cos(h2)
        if mistake == "refraction_added":
            ho_s = h2 + r + sd_signed + pa
        elif mistake == "semi_diameter_wrong_limb":
            ho_s = h2 - r - sd_signed + pa
        elif mistake == "semi_diameter_left_out":
            ho_s = h2 - r + pa
        else:
            ho_s = h2 - r + sd_signed + pa
        dec = sun.declination(when) * (-1 if mistake == "declination_sign" else 1)
        zd = math.pi / 2 - ho_s
        phi = dec + zd

        def am(x):
            return f"{_deg(x) * 60:.1f}"

        rows += [("result", "altitude_mean", _dm(_deg(hs)), "dms", ""), ("result", "index_corrected", _dm(_deg(h1)), "dms", ""),
                 ("result", "apparent_altitude", _dm(_deg(h2)), "dms", ""), ("result", "refraction", am(r), "arcmin", ""),
                 ("result", "semi_diameter", am(sd_signed), "arcmin", ""), ("result", "parallax", am(pa), "arcmin", ""),
                 ("result", "observed_altitude", _dm(_deg(ho_s)), "dms", ""), ("result", "declination", f"{_deg(dec) * 60:.1f}", "arcmin", ""),
                 ("result", "zenith_distance", _dm(_deg(zd)), "dms", ""), ("result", "latitude", _dm(_deg(phi)), "dms", "")]
        groups.append(grp)
    return groups


# ----------------------------------------------------------- meridian arc ---
ARC_PLANTED = {3: ("degrees_as_radians", "radius"), 5: ("declination_sign", "site2_declination")}
ARC_DISTANCE_KM = 509.8  # between the parallels of Harrowby Trig and Fennick Point (invented)


def arc_section() -> list[DemoGroup]:
    rng = np.random.default_rng(SEED + 2)
    groups = []
    for g in range(1, 7):
        sid = f"h2150-{g:03d}"
        grp = DemoGroup(g, sid, person(g + 14, 11), "csv")
        day = datetime(2026, 9, 20 + g, tzinfo=timezone.utc)
        grp.rows += identity_rows(sid, grp.name, f"H{g:02d}", day.date().isoformat(), "Harrowby Trig and Fennick Point")
        phis = []
        for prefix, (lat, lon) in (("site1_", SITE), ("site2_", SOUTH_SITE)):
            when_local = _observe_time(day, lon, float(rng.uniform(-5, 5))).astimezone(ZONE)
            mistakes = {"declination_sign"} if (g == 5 and prefix == "site2_") else set()
            phis.append(_gnomon_rows(grp.rows, prefix, lat, lon, when_local, rng, mistakes))
        s_km = round(ARC_DISTANCE_KM + float(rng.normal(0, 1.0)), 1)
        grp.rows.append(("observation", "north_south_distance", f"{s_km:.1f}", "km", "from the chart"))
        dphi = phis[1] - phis[0]
        radius = s_km / abs(_deg(dphi)) if g == 3 else s_km / abs(dphi)
        grp.rows += [("result", "delta_lat", f"{_deg(dphi):.4f}", "deg", ""), ("result", "radius", num(round(radius, 1)), "km", "")]
        groups.append(grp)
    return groups


# ------------------------------------------------------------ theodolite ---
THEODOLITE_PLANTED = {2: ("faces_averaged", "zenith_corrected"), 4: ("refraction_ignored", "curvature_refraction"),
                      6: ("heights_swapped", "heighting.height_difference"), 7: ("index_error_added", "zenith_corrected"),
                      8: ("halving_missing", "reciprocal.height_difference")}
R_EARTH = 6371008.8


def _dms_text(rad: float) -> str:
    total = round(math.degrees(rad) * 3600)
    d, rem = divmod(total, 3600)
    m, s = divmod(rem, 60)
    return f"{d} {m:02d} {s:02d}"


def theodolite_section() -> list[DemoGroup]:
    rng = np.random.default_rng(SEED + 3)
    arcsec = math.radians(1 / 3600)
    groups = []
    for g in range(1, 9):
        sid = f"i2150-{g:03d}"
        grp = DemoGroup(g, sid, person(g + 1, 17), "csv")
        grp.rows += identity_rows(sid, grp.name, f"I{g:02d}", f"2026-10-{5 + g:02d}", "Harrowby Bluff pillars P1–P4")
        rows = grp.rows
        mistake = THEODOLITE_PLANTED.get(g, (None,))[0]
        # Face pairs: FL = z + i, FR = 360° − z + i, read to 1".
        z_true = math.radians(float(rng.uniform(86, 94)))
        i = float(rng.uniform(-25, 25)) * arcsec
        fl = [z_true + i + float(rng.normal(0, 1.5)) * arcsec for _ in range(3)]
        fr = [2 * math.pi - z_true + i + float(rng.normal(0, 1.5)) * arcsec for _ in range(3)]
        fl_t, fr_t = [_dms_text(a) for a in fl], [_dms_text(a) for a in fr]
        rows += [("observation", "zenith_face_left", t, "dms", "") for t in fl_t]
        rows += [("observation", "zenith_face_right", t, "dms", "") for t in fr_t]
        fl_r = [sum(float(x) * f for x, f in zip(t.split(), (1, 1 / 60, 1 / 3600))) for t in fl_t]
        fr_r = [sum(float(x) * f for x, f in zip(t.split(), (1, 1 / 60, 1 / 3600))) for t in fr_t]
        ie = sum((a + b - 360) / 2 for a, b in zip(fl_r, fr_r)) / 3
        zc = sum(fl_r) / 3 - ie
        if mistake == "faces_averaged":
            zc = (sum(fl_r) + sum(fr_r)) / 6
        elif mistake == "index_error_added":
            zc = sum(fl_r) / 3 + ie
        rows += [("result", "index_error", f"{ie * 3600:.1f}", "arcsec", ""), ("result", "zenith_corrected", _dms_text(math.radians(zc)), "dms", "")]
        # Heighting from P1 to P2: the observed zenith angle includes the day's refraction.
        k_day = float(rng.uniform(0.09, 0.17))
        D = float(rng.uniform(700, 1600))
        dh_true = float(rng.uniform(-40, 40))
        hi, ht = round(float(rng.uniform(1.45, 1.65)), 3), round(float(rng.uniform(1.3, 2.0)), 3)
        # Ground-to-ground ΔH = S cos z + (1 − k)D²/(2R) + hi − ht  →  solve for the line of sight.
        vertical = dh_true - (1 - k_day) * D**2 / (2 * R_EARTH) - hi + ht
        S = math.hypot(D, vertical)
        z_obs = math.atan2(D, vertical)
        S_w = round(S, 3)
        z_w = _dms_text(z_obs + float(rng.normal(0, 1.0)) * arcsec)
        z_r = math.radians(sum(float(x) * f for x, f in zip(z_w.split(), (1, 1 / 60, 1 / 3600))))
        rows += [("observation", "slope_distance", f"{S_w:.3f}", "m", "EDM"), ("observation", "zenith_angle", z_w, "dms", ""),
                 ("observation", "instrument_height", f"{hi:.3f}", "m", ""), ("observation", "target_height", f"{ht:.3f}", "m", "")]
        Dw = S_w * math.sin(z_r)
        cr = (1 - (0 if mistake == "refraction_ignored" else K_SPEC)) * Dw**2 / (2 * R_EARTH)
        a, b = (ht, hi) if mistake == "heights_swapped" else (hi, ht)
        dh = S_w * math.cos(z_r) + cr + a - b
        rows += [("result", "horizontal_distance", f"{Dw:.3f}", "m", ""), ("result", "curvature_refraction", f"{cr:.4f}", "m", ""),
                 ("result", "heighting.height_difference", f"{dh:.3f}", "m", "")]
        # Reciprocal P3 ↔ P4 over 2–4 km with the day's k: z_AB + z_BA = 180° + (1 − k)·S/R.
        S2 = float(rng.uniform(2000, 4000))
        dh2 = float(rng.uniform(-60, 60))
        excess = (1 - k_day) * S2 / R_EARTH
        half = math.asin(dh2 / S2)
        z_ab = math.pi / 2 - half + excess / 2 + float(rng.normal(0, 1.0)) * arcsec
        z_ba = math.pi / 2 + half + excess / 2 + float(rng.normal(0, 1.0)) * arcsec
        zab_w, zba_w = _dms_text(z_ab), _dms_text(z_ba)
        zab_r = math.radians(sum(float(x) * f for x, f in zip(zab_w.split(), (1, 1 / 60, 1 / 3600))))
        zba_r = math.radians(sum(float(x) * f for x, f in zip(zba_w.split(), (1, 1 / 60, 1 / 3600))))
        rows += [("observation", "zenith_ab", zab_w, "dms", "simultaneous, radio-timed"), ("observation", "zenith_ba", zba_w, "dms", ""),
                 ("observation", "reciprocal_distance", f"{S2:.3f}", "m", "")]
        e = float(zn.reciprocal_angle_excess(zab_r, zba_r))
        kk = float(zn.refraction_coefficient_reciprocal(e, round(S2, 3), R_EARTH))
        h_rec = round(S2, 3) * math.sin(zba_r - zab_r) if mistake == "halving_missing" else float(zn.reciprocal_height_difference(round(S2, 3), zab_r, zba_r))
        rows += [("result", "angle_excess", f"{math.degrees(e) * 3600:.1f}", "arcsec", ""),
                 ("result", "refraction_coefficient", f"{kk:.3f}", "", ""),
                 ("result", "reciprocal.height_difference", f"{h_rec:.3f}", "m", "")]
        groups.append(grp)
    return groups
