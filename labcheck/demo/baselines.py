"""Demo sections C, D and E: taped baseline, radius from a baseline, odometer baseline.

Scenario (all invented): the same course's sections tape the Harrowby
calibration baseline (known horizontal length 214.3762 m, eight spans over
rolling ground), drive the Harrowby shore road between two stations (known
length 6.842 km), and compute the Earth's radius from distances between the
invented survey stations around Tamsin Sound, whose coordinates are invented
too.  Every group's data come from the known truth plus realistic noise; the
groups reduce them with a student's rounding; some make planted mistakes.
"""

from __future__ import annotations

import math

import numpy as np
from geographiclib.geodesic import Geodesic

from labcheck.reductions import baseline as bl
from labcheck.demo.common import DemoGroup, dms, identity_rows, num, person, sig

__all__ = [
    "taped_section", "TAPED_PLANTED", "TAPED_MISSING",
    "odometer_section", "ODOMETER_PLANTED", "ODOMETER_MISSING",
    "radius_section", "RADIUS_PLANTED", "RADIUS_MISSING",
]

SEED = 20261202
FT, LBF = 0.3048, 4.4482216152605

# ----------------------------------------------------------------- taped ---
BASELINE_M = 214.3762  # the spec's baseline_length
ELEVATION_M = 38.6
SPAN_H = [27.5, 29.2, 26.8, 29.6, 28.9, 24.7, 29.3]
SPAN_H.append(BASELINE_M - sum(SPAN_H))
SPAN_SLOPE_DEG = [1.2, 3.4, -2.1, 0.6, 4.2, -3.3, 1.9, -0.8]
METRIC_TAPE = {"nominal": 30.0, "calibrated": 30.0032, "Ts": 20.0, "Ps": 50.0, "A": 2.6e-6, "E": 200e9,
               "w": 0.20, "alpha": 0.0000116}
US_TAPE = {"nominal": 100 * FT, "calibrated": 100.012 * FT, "Ts": 20.0, "Ps": 10 * LBF, "A": 0.005 * 0.0254**2,
           "E": 29e6 * LBF / 0.0254**2, "w": 0.0147 * LBF / FT, "alpha": 0.00000645 * 1.8}

TAPED_PLANTED = {
    2: ("sag_on_supported_tape", "forward_sag_correction"),
    3: ("standardisation_inverted", "back_standardisation"),
    4: ("slope_distance_as_horizontal", "forward_horizontal_length"),
    6: ("fahrenheit_as_celsius", "forward_temperature_correction"),
    9: ("degrees_as_radians", "back_slope_correction"),
    10: ("temperature_wrong_sign", "back_horizontal_length"),
    11: ("fraction_not_ratio", "precision_ratio"),
}
TAPED_US_GROUP = 7  # measures with its own 100 ft tape, in US customary units, correctly
TAPED_MISSING = ("c2150-012", person(11, 7))


def _readings_for(chords, tape, temperature_C, tension_N, suspended):
    """Tape readings that produce the true chords under the run's conditions (solved by iteration)."""
    k = (tape["calibrated"] / tape["nominal"]) * (1 + tape["alpha"] * (temperature_C - tape["Ts"])) * (
        1 + (tension_N - tape["Ps"]) / (tape["A"] * tape["E"]))
    readings = np.array(chords, dtype=float)
    for _ in range(5):
        sag = tape["w"] ** 2 * readings**3 / (24 * tension_N**2) if suspended else 0.0
        readings = (np.asarray(chords) + sag) / k
    return readings


def taped_section() -> list[DemoGroup]:
    rng = np.random.default_rng(SEED)
    chords = [h / math.cos(math.radians(a)) for h, a in zip(SPAN_H, SPAN_SLOPE_DEG)]
    groups = []
    for g in range(1, 12):
        sid = f"c2150-{g:03d}"
        grp = DemoGroup(g, sid, person(g - 1, 7), "xlsx" if g % 5 == 0 else "csv")
        rows = grp.rows
        rows += identity_rows(sid, grp.name, f"C{g:02d}", f"2026-09-{15 + g % 3:02d}", "Harrowby calibration baseline")
        us = g == TAPED_US_GROUP
        tape = US_TAPE if us else METRIC_TAPE
        suspended = g % 2 == 1
        use_heights = g % 3 == 0
        rows.append(("observation", "support", "suspended" if suspended else "supported", "", ""))
        rows.append(("observation", "mean_elevation", num(round(ELEVATION_M / FT, 1)) if us else num(ELEVATION_M),
                     "ft" if us else "m", ""))
        if us:  # the group's own tape: constants in the submission, in US customary units
            rows += [("observation", "nominal_length", "100", "ft", "our own tape"),
                     ("observation", "calibrated_length", "100.012", "ft", "certificate"),
                     ("observation", "standard_temperature", "68", "F", ""),
                     ("observation", "standard_tension", "10", "lbf", ""),
                     ("observation", "cross_section_area", "0.005", "in2", ""),
                     ("observation", "elastic_modulus", "29000000", "psi", ""),
                     ("observation", "weight_per_length", "0.0147", "lbf/ft", ""),
                     ("observation", "expansion_coefficient", "0.00000645", "/F", "")]
        lengths = {}
        for run in ("forward", "back"):
            temp_true = float(rng.uniform(9, 17) if run == "forward" else rng.uniform(17, 26))
            tension_set = (80.0 if not us else 18 * LBF) if suspended else tape["Ps"]
            tension_true = tension_set + float(rng.normal(0, 2.0))
            order = range(len(chords)) if run == "forward" else reversed(range(len(chords)))
            order = list(order)
            true_readings = _readings_for([chords[i] for i in order], tape, temp_true, tension_true, suspended)
            noisy = true_readings + rng.normal(0, 0.0015, len(order))
            slopes = [SPAN_SLOPE_DEG[i] for i in order]
            temp_rec = temp_true + float(rng.normal(0, 0.5))
            unit_len = "ft" if us else "m"
            readings_rec = [round(r / FT, 2) if us else round(r, 3) for r in noisy]
            for r in readings_rec:
                rows.append(("observation", f"{run}_tape_reading", f"{r:.3f}" if not us else f"{r:.2f}", unit_len, ""))
            if use_heights:
                heights = [round(r * math.sin(math.radians(a)) / (FT if us else 1), 2) for r, a in zip(noisy, slopes)]
                for h in heights:
                    rows.append(("observation", f"{run}_height_difference", f"{h:.2f}", unit_len, "levelled"))
                slope_rad = [math.asin(h / r) for h, r in zip(heights, readings_rec)]
            else:
                angles = [round(a + float(rng.normal(0, 0.03)), 1) for a in slopes]
                for a in angles:
                    rows.append(("observation", f"{run}_slope_angle", f"{a:.1f}", "deg", "clinometer"))
                slope_rad = [math.radians(a) for a in angles]
            f_temp = g == 6 and run == "forward"
            if us:
                rows.append(("observation", f"{run}_temperature", f"{round(temp_rec * 9 / 5 + 32):.0f}", "F", ""))
                rows.append(("observation", f"{run}_tension", f"{round(tension_set / LBF):.0f}", "lbf", ""))
                t_c = (round(temp_rec * 9 / 5 + 32) - 32) * 5 / 9
                p_n = round(tension_set / LBF) * LBF
                read_m = [r * FT for r in readings_rec]
            else:
                if f_temp:
                    rows.append(("observation", f"{run}_temperature", f"{round(temp_rec * 9 / 5 + 32):.0f}", "F",
                                 "thermometer in °F"))
                    t_c = (round(temp_rec * 9 / 5 + 32) - 32) * 5 / 9
                else:
                    rows.append(("observation", f"{run}_temperature", f"{temp_rec:.1f}", "C", ""))
                    t_c = round(temp_rec, 1)
                rows.append(("observation", f"{run}_tension", f"{tension_set:.0f}", "N", ""))
                p_n = tension_set
                read_m = readings_rec
            # The group's reduction, rounded as a student would.
            L = sum(read_m)
            c_l = L * (tape["calibrated"] - tape["nominal"]) / tape["nominal"]
            if g == 3 and run == "back":
                c_l = -c_l
            t_used = t_c * 9 / 5 + 32 if f_temp else t_c
            c_t = tape["alpha"] * (t_used - tape["Ts"]) * L
            c_p = (p_n - tape["Ps"]) * L / (tape["A"] * tape["E"])
            sag_as = suspended or (g == 2 and run == "forward")
            c_s = bl.sag_correction(read_m, tape["w"], p_n, 1.0 if sag_as else 0.0)
            slope_used = [math.degrees(a) for a in slope_rad] if (g == 9 and run == "back") else slope_rad
            c_h = bl.slope_correction(read_m, slope_used)
            conv = (lambda v: v / FT) if us else (lambda v: v)
            nd = 4
            vals = {k: round(conv(v), nd) for k, v in (("standardisation", c_l), ("temperature_correction", c_t),
                                                       ("tension_correction", c_p), ("sag_correction", c_s),
                                                       ("slope_correction", c_h))}
            meas = round(conv(L), 3)
            horiz = meas + sum(vals.values())
            if g == 4 and run == "forward":
                horiz -= vals["slope_correction"]
            if g == 10 and run == "back":
                horiz -= 2 * vals["temperature_correction"]
            horiz = round(horiz, 3)
            lengths[run] = horiz
            rows.append(("result", f"{run}_measured", f"{meas:.3f}", unit_len, ""))
            for key, v in vals.items():
                name = f"{run}_{key}"
                rows.append(("result", name, f"{v:.4f}", unit_len, ""))
            rows.append(("result", f"{run}_horizontal_length", f"{horiz:.3f}", unit_len, ""))
        mean = round((lengths["forward"] + lengths["back"]) / 2, 3)
        unit_len = "ft" if us else "m"
        rows.append(("result", "mean_length", f"{mean:.3f}", unit_len, ""))
        diff = abs(lengths["forward"] - lengths["back"])
        ratio = sig(mean / diff, 3) if diff else 0
        rows.append(("result", "precision_ratio", num(sig(diff / mean, 3)) if g == 11 else num(ratio), "", ""))
        h = ELEVATION_M / (FT if us else 1)
        r_earth = 6371008.8 / (FT if us else 1)
        rows.append(("result", "sea_level_length", f"{mean * r_earth / (r_earth + h):.3f}", unit_len, ""))
        groups.append(grp)
    return groups


# -------------------------------------------------------------- odometer ---
ROUTE_KM = 6.842
ODOMETER_PLANTED = {
    3: ("calibration_factor_inverted", "calibration_factor"),
    5: ("calibration_not_applied", "odometer_distance"),
    7: ("odometer_miles_as_km", "calibration_factor"),
}
ODOMETER_MISSING = None


def odometer_section() -> list[DemoGroup]:
    rng = np.random.default_rng(SEED + 1)
    groups = []
    for g in range(1, 9):
        sid = f"e2150-{g:03d}"
        grp = DemoGroup(g, sid, person(g + 3, 13), "csv")
        rows = grp.rows
        rows += identity_rows(sid, grp.name, f"E{g:02d}", "", "Harrowby shore road")
        miles = g == 7
        true_factor = float(rng.uniform(0.965, 1.035))  # the vehicle's odometer error
        unit = "mi" if miles else "km"
        scale = 1.609344 if miles else 1.0
        start_c = round(float(rng.uniform(20000, 60000)), 1)
        end_c = round(start_c + 1.000 / true_factor / scale + float(rng.normal(0, 0.02)), 2)
        start_b = round(end_c + float(rng.uniform(1, 4)), 1)
        end_b = round(start_b + ROUTE_KM / true_factor / scale + float(rng.normal(0, 0.02)), 2)
        rows += [("observation", "calibration_course_length", "1.000", "km", "Harrowby Road measured kilometre"),
                 ("observation", "calibration_start", f"{start_c:.1f}", unit, ""),
                 ("observation", "calibration_end", f"{end_c:.2f}", unit, ""),
                 ("observation", "odometer_start", f"{start_b:.1f}", unit, ""),
                 ("observation", "odometer_end", f"{end_b:.2f}", unit, "")]
        delta_c = (end_c - start_c) * (1 if miles else scale)
        factor = 1.000 / delta_c  # for the miles group: the km course over a number of miles, the planted slip
        if g == 3:
            factor = 1 / factor
        factor = round(factor, 4)
        distance = (end_b - start_b) * (1 if g == 5 else factor) * (1 if not miles else 1)
        rows += [("result", "calibration_factor", f"{factor:.4f}", "", ""),
                 ("result", "odometer_distance", f"{distance:.3f}", "km", "")]
        groups.append(grp)
    return groups


# ---------------------------------------------------------------- radius ---
# Invented survey stations around Tamsin Sound, with invented coordinates.
STATIONS = {
    "Harrowby Trig": (57.81234, -33.61420),
    "Corbel Cairn": (57.90871, -33.60377),
    "Tamsin Light": (57.80112, -33.42968),
    "Saltmark Post": (57.68890, -33.75210),
    "Quillan Skerry": (57.86650, -33.29840),
    "Wren Station": (57.95512, -33.81166),
    "Osier Beacon": (57.73023, -33.52911),
}
PAIRS = [("Harrowby Trig", "Corbel Cairn"), ("Harrowby Trig", "Tamsin Light"), ("Saltmark Post", "Corbel Cairn"),
         ("Saltmark Post", "Quillan Skerry"), ("Wren Station", "Tamsin Light"), ("Osier Beacon", "Wren Station"),
         ("Harrowby Trig", "Quillan Skerry"), ("Saltmark Post", "Tamsin Light"), ("Osier Beacon", "Corbel Cairn"),
         ("Wren Station", "Quillan Skerry"), ("Osier Beacon", "Harrowby Trig"), ("Saltmark Post", "Wren Station")]
RADIUS_PLANTED = {
    3: ("degrees_as_radians", "radius"),
    5: ("missing_factor_two", "central_angle"),
    7: ("missing_square_root", "central_angle"),
    9: ("nmi_as_mi", "radius"),
    11: ("degrees_as_radians", "haversine"),
}
RADIUS_MISSING = ("d2150-013", person(12, 19))


def radius_section() -> list[DemoGroup]:
    rng = np.random.default_rng(SEED + 2)
    geod = Geodesic.WGS84
    groups = []
    for g, (a, b) in enumerate(PAIRS, start=1):
        sid = f"d2150-{g:03d}"
        grp = DemoGroup(g, sid, person(g - 1, 19), "xlsx" if g % 4 == 0 else "csv")
        rows = grp.rows
        rows += identity_rows(sid, grp.name, f"D{g:02d}", "", f"{a} to {b}")
        (lat1, lon1), (lat2, lon2) = STATIONS[a], STATIONS[b]
        s12 = geod.Inverse(lat1, lon1, lat2, lon2)["s12"]
        measured_km = round(s12 * (1 + float(rng.normal(0, 0.0015))) / 1000, 3)
        if g % 4 == 2:  # stations written as D M S with hemisphere letters
            rows += [("observation", "lat_1", dms(lat1, 2, "NS"), "", ""), ("observation", "lon_1", dms(lon1, 2, "EW"), "", ""),
                     ("observation", "lat_2", dms(lat2, 2, "NS"), "", ""), ("observation", "lon_2", dms(lon2, 2, "EW"), "", "")]
        else:
            rows += [("observation", "lat_1", f"{lat1:.5f}", "deg", ""), ("observation", "lon_1", f"{lon1:.5f}", "deg", ""),
                     ("observation", "lat_2", f"{lat2:.5f}", "deg", ""), ("observation", "lon_2", f"{lon2:.5f}", "deg", "")]
        if g == 9:  # distance recorded in nautical miles (from the chart), then converted as if statute
            rows.append(("observation", "ground_distance", f"{measured_km / 1.852:.3f}", "nmi", "from the chart"))
            s_used_km = round(measured_km / 1.852, 3) * 1.609344
        else:
            rows.append(("observation", "ground_distance", f"{measured_km:.3f}", "km", "odometer and tape"))
            s_used_km = measured_km
        p1, p2 = math.radians(lat1), math.radians(lat2)
        dlat_deg = round(lat2 - lat1, 6)
        dlon_deg = round(lon2 - lon1, 6)
        if g == 11:
            hav = float(bl.haversine(lat1, lat2, dlat_deg, dlon_deg))  # degree numbers as radians
        else:
            hav = float(bl.haversine(p1, p2, math.radians(dlat_deg), math.radians(dlon_deg)))
        hav = sig(hav, 5)
        if g == 5:
            theta = math.asin(math.sqrt(hav))
        elif g == 7:
            theta = 2 * math.asin(hav)
        else:
            theta = 2 * math.asin(math.sqrt(hav))
        theta_deg = sig(math.degrees(theta), 6)
        radius_km = s_used_km / theta_deg if g == 3 else s_used_km / math.radians(theta_deg)
        rows += [("result", "delta_lat", f"{dlat_deg:.6f}", "deg", ""), ("result", "delta_lon", f"{dlon_deg:.6f}", "deg", ""),
                 ("result", "haversine", num(hav), "", ""), ("result", "central_angle", num(theta_deg), "deg", ""),
                 ("result", "radius", num(sig(radius_km, 5)), "km", "")]
        groups.append(grp)
    return groups
