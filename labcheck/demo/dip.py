"""Demo section B: the dip lab, with planted mistakes.

Scenario (all invented): the course "Field Methods in Geodesy", section B,
observes from the stations on Harrowby Bluff over Tamsin Sound.  Groups
measure the dip of the sea horizon with a sextant or a theodolite, and the
hidden height of the light tower on Quillan Skerry across the sound.

Each group's data are generated from a true radius (IUGG mean radius), the
group's own eye height and distance, and that day's coefficient of
refraction, then read with realistic instrument noise.  Groups reduce their
own data with the rounding a student would use; a few make planted
mistakes.  The random generator is seeded: the same demo every time.
"""

from __future__ import annotations

import math

import numpy as np

from labcheck.reductions import horizon as hz
from labcheck.demo.common import DemoGroup, dms, num, person, sig

__all__ = ["PLANTED", "MISSING_STUDENT", "UNREADABLE", "COPIED", "FABRICATED", "LEADS", "WRONG_LAB_FILE", "dip_section"]

TRUE_RADIUS_M = 6371008.8  # IUGG mean radius R1 (Moritz, GRS80)
SEED = 20261201
SPEC_K = 0.13  # the k the spec tells students to use

STATIONS = [
    ("Wren Station", 14.2), ("Osier Station", 19.6), ("Lantern Steps", 23.1),
    ("Gorse Knoll", 27.8), ("Upper Harrowby", 33.4), ("Saltmark Post", 11.7),
]
# Planted mistakes by group number, and what labcheck must find.
PLANTED = {
    3: ("refraction_ignored", "dip.radius"),
    6: ("feet_as_metres", "dip.radius_apparent"),
    9: ("digits_transposed", "dip_mean"),  # a copying slip, carried forward downstream
    12: ("missing_result", "hidden_height.radius"),
    15: ("unreadable", None),
    18: ("missing_factor_two", "hidden_height.radius_apparent"),
    21: ("degrees_as_radians", "dip.radius_apparent"),
    22: ("bad_row", "dip_angle"),
}
# Honest groups that write their files as people do (graded all correct, with a note where said):
SEMICOLON_GROUP = 2  # a decimal-comma spreadsheet's CSV: "sep=;" line, ";" separators, "19,60"
DMS_UNDER_ARCMIN_GROUP = 5  # one dip reading written "0 6 18" under the template's arcmin (a note)
UNIT_IN_VALUE_GROUP = 7  # eye height written "23.10 m" with the unit cell left blank
# A file from another section's taped-baseline assignment, uploaded here by mistake.
WRONG_LAB_FILE = ("b2150-031", "taped_baseline")
MISSING_STUDENT = ("b2150-025", "Yorick Zennor")  # on the roster, no submission
UNREADABLE = {15}  # files damaged in upload
COPIED = (16, 17)  # group 16 hands in group 17's observations and results (an integrity lead)
FABRICATED = 19  # group 19's dip readings are made up from the known answer (an integrity lead)
LEADS = {("shared_readings", ("b2150-016", "b2150-017")), ("scatter_too_small", ("b2150-019",))}


def _r(x: float, nd: int) -> str:
    return f"{x:.{nd}f}"


def dip_section(n_groups: int = 24, seed: int = SEED, plant: bool = True) -> list[DemoGroup]:
    """The section's groups (rows only).  ``plant=False`` gives an honest section of any size."""
    """Generate the section's groups (rows only; nothing is written)."""
    rng = np.random.default_rng(seed)
    groups = []
    for g in range(1, n_groups + 1):
        sid = f"b2150-{g:03d}"
        name = person(g - 1)
        station, height = STATIONS[(g - 1) % len(STATIONS)]
        fmt = "xlsx" if g % 4 == 0 or g == 15 else "csv"
        if plant and g == SEMICOLON_GROUP:
            fmt = "csv;"
        group = DemoGroup(g, sid, name, fmt)
        rows = group.rows
        rows += [
            ("identity", "student_id", sid, "", ""),
            ("identity", "name", name, "", ""),
            ("identity", "group", f"B{g:02d}", "", ""),
            ("identity", "date", f"2026-09-{8 + (g % 3):02d}", "", ""),
            ("identity", "site", f"{station}, Harrowby Bluff", "", "=1+1 <b>check with TA</b> & redo?" if (plant and g == 5) else ""),
        ]
        k_true = float(np.clip(rng.normal(0.14, 0.025), 0.06, 0.22))
        r_eff = TRUE_RADIUS_M / (1.0 - k_true)
        h_true = height + rng.normal(0, 0.3)  # tide and where each group stood
        h_meas = round(h_true + rng.normal(0, 0.05), 2)
        does_dip = g % 8 != 7
        does_hidden = g % 8 != 5

        if (plant and g == 6):  # planted: eye height recorded in feet
            rows.append(("observation", "eye_height", _r(h_meas / 0.3048, 1), "ft", "tape from the benchmark, in feet"))
            h_used_by_student = round(h_meas / 0.3048, 1)  # used as if metres
        elif plant and g == UNIT_IN_VALUE_GROUP:
            rows.append(("observation", "eye_height", f"{_r(h_meas, 2)} m", "", ""))
            h_used_by_student = h_meas
        else:
            rows.append(("observation", "eye_height", _r(h_meas, 2), "m", ""))
            h_used_by_student = h_meas
        h_for_student = h_meas

        rep: list[tuple[str, str, str, str, str]] = []
        if does_dip:
            dip_true = math.acos(r_eff / (r_eff + h_true))  # apparent (refracted) dip
            n = 6 if g % 5 == 0 else 5
            readings = dip_true + rng.normal(0, math.radians(20 / 3600), n)
            if plant and g == FABRICATED:  # planted: readings made up from the known answer, far too tight
                r_ref = TRUE_RADIUS_M / (1.0 - SPEC_K)
                readings = math.acos(r_ref / (r_ref + h_meas)) + 0 * readings
            theodolite = g % 3 == 0
            texts = []
            for i, d in enumerate(readings):
                if theodolite:
                    rows.append(("observation", "horizon_zenith_angle", dms(90 + math.degrees(d)), "dms", ""))
                    texts.append(round(round((math.degrees(d)) * 3600) / 60, 6))
                else:
                    val = round(math.degrees(d) * 60, 1)
                    if (plant and g == 22) and i == 2:  # planted: a misread row
                        rows.append(("observation", "dip_angle", "5.7.2", "arcmin", "wind shook the index"))
                        continue
                    if plant and g == DMS_UNDER_ARCMIN_GROUP and i == 0:  # D M S under arcmin: read, with a note
                        whole = int(val)
                        rows.append(("observation", "dip_angle", f"0 {whole} {round((val - whole) * 60):02d}", "arcmin", ""))
                    else:
                        rows.append(("observation", "dip_angle", _r(val, 1), "arcmin", ""))
                    texts.append(val)
            dip_mean = round(float(np.mean(texts)), 2)
            if (plant and g == 9):  # planted: digits transposed when copying the mean
                s = f"{dip_mean:.2f}"
                dip_mean = float(s[:-2] + s[-1] + s[-2])
            rep.append(("result", "dip_mean", _r(dip_mean, 2), "arcmin", ""))
            d_rad = math.radians(dip_mean / 60)
            if (plant and g == 6):
                r_app = float(hz.radius_from_dip(h_used_by_student, d_rad))
            elif (plant and g == 21):  # planted: calculator in radian mode
                r_app = float(hz.radius_from_dip(h_for_student, math.degrees(d_rad)))
            else:
                r_app = float(hz.radius_from_dip(h_for_student, d_rad))
            r_app_km = sig(r_app / 1000)
            rep.append(("result", "dip.radius_apparent", num(r_app_km), "km", ""))
            radius_km = r_app_km if (plant and g == 3) else sig((1 - SPEC_K) * r_app_km)
            rep.append(("result", "dip.radius", num(radius_km), "km", ""))
            err = round(100 * (radius_km * 1000 - TRUE_RADIUS_M) / TRUE_RADIUS_M, 2)
            rep.append(("result", "dip.radius_error_pct", _r(err, 2), "%", ""))

        if does_hidden:
            horizon_eye = math.sqrt(2 * r_eff * h_true)
            distance = horizon_eye + rng.uniform(2500, 9000)
            hidden_true = (distance - horizon_eye) ** 2 / (2 * r_eff)
            d_meas = round((distance + rng.normal(0, 20)) / 1000, 2)
            x_meas = round(max(hidden_true + rng.normal(0, 0.2), 0.1), 1)
            rows.append(("observation", "target_distance", _r(d_meas, 2), "km", "from the chart"))
            rows.append(("observation", "hidden_height", _r(x_meas, 1), "m", "courses of the tower counted"))
            if (plant and g == 18):  # planted: factor 2 forgotten
                r_app = (d_meas * 1000) ** 2 / (math.sqrt(h_used_by_student) + math.sqrt(x_meas)) ** 2
            else:
                r_app = float(hz.radius_from_hidden_height(d_meas * 1000, h_used_by_student, x_meas))
            r_app_km = sig(r_app / 1000)
            rep.append(("result", "hidden_height.radius_apparent", num(r_app_km), "km", ""))
            radius_km = sig((1 - SPEC_K) * r_app_km)
            if g != 12:  # planted: result left out
                rep.append(("result", "hidden_height.radius", num(radius_km), "km", ""))
            err = round(100 * (radius_km * 1000 - TRUE_RADIUS_M) / TRUE_RADIUS_M, 2)
            rep.append(("result", "hidden_height.radius_error_pct", _r(err, 2), "%", ""))

        rows += rep
        groups.append(group)
    if plant and n_groups >= COPIED[1]:  # planted: one group hands in another's observations
        copier, source = groups[COPIED[0] - 1], groups[COPIED[1] - 1]
        copier.rows = [r for r in copier.rows if r[0] == "identity"] + [r for r in source.rows if r[0] != "identity"]
    return groups
