"""Zenith-angle labs: the noon sun from a gnomon or a sextant, a two-site meridian
arc, and theodolite zenith angles (face pairs, trigonometric heighting,
reciprocal observations).

Observation names and step ids are public vocabulary; do not rename.
Date-times are carried as POSIX seconds (UTC) between steps.
"""

from __future__ import annotations

import math
from datetime import datetime, timezone

import numpy as np

from labcheck.base.phrase import Clock, Number, phrase
from labcheck.reductions import sun
from labcheck.reductions import zenith as zn
from labcheck.reductions.ellipsoid import meridian_radius
from labcheck.reductions.baseline import radius_from_arc
from labcheck.methods.base import Constant, Method, Observation, Reference, Step, formula_variant, input_variant

_LAT = (-math.pi / 2, math.pi / 2)
_LON = (-math.pi, math.pi)
ALMANAC = "the sun's position by the NREL Solar Position Algorithm (Reda & Andreas 2004)"


def _when(ts) -> datetime:
    return datetime.fromtimestamp(float(ts), timezone.utc)


def _declination(observed_at):
    return sun.declination(_when(observed_at))


def _sd(observed_at):
    return sun.semi_diameter(_when(observed_at))


def _latitude_step(prefix: str, zenith_step: str, inputs_doc: str, lp: str = "") -> Step:
    return Step(
        f"{prefix}latitude", f"{lp}latitude", "angle", "deg",
        "φ = δ + z  (sun south of the zenith; φ = δ − z if north)",
        "the navigator's meridian-altitude rule (e.g. Bowditch, American Practical Navigator)",
        (f"{prefix}declination", zenith_step, f"{prefix}sun_direction"), zn.noon_latitude,
        (formula_variant("declination_subtracted", "declination subtracted instead of added",
                         "The declination was subtracted where it is added: with the sun south of the zenith, "
                         "φ = δ + z (and φ = δ − z with the sun to the north).",
                         lambda d, z, north: zn.noon_latitude(-d, z, north)),
         formula_variant("zenith_altitude_confused", "altitude used where the zenith distance belongs",
                         "The altitude was used in place of the zenith distance (z = 90° − altitude).",
                         lambda d, z, north: zn.noon_latitude(d, np.pi / 2 - z, north))),
        inputs_doc,
    )


def _noon_notes(prefix: str):
    """Notes on how far from local apparent noon the sun was observed, and clock-time slips."""

    def notes(obs: dict, consts: dict, written: dict) -> list[tuple[str, bool, str]]:
        ts, lon = obs.get(f"{prefix}observed_at"), obs.get(f"{prefix}lon")
        if ts is None or lon is None:
            return []
        when = _when(ts)
        noon = sun.local_apparent_noon(when, lon)
        off = (when - noon).total_seconds()
        window = consts.get("noon_window", 900.0)
        out = []
        text_noon = Clock(noon, "%H:%M:%S UTC")
        side = "after" if off > 0 else "before"
        if abs(off) <= window:
            out.append(("noon_timing", True, phrase("Observed {m} min {side} local apparent noon ({noon}); within "
                                                    "the lab's window.", m=Number(abs(off) / 60, ".0f"), side=side,
                                                    noon=text_noon)))
        else:
            lat = obs.get(f"{prefix}lat")
            dec = sun.declination(when)
            extra = ""
            if lat is not None:
                dz = sun.zenith_at(lat, dec, sun.hour_angle(when, lon)) - sun.zenith_at(lat, dec, 0.0)
                extra = phrase(" The sun was then {dz}° farther from the zenith than on the meridian, so the noon "
                               "rule puts the latitude about {dz}° in error.", dz=Number(math.degrees(dz), ".2f"))
            out.append(("noon_timing", False, phrase("Observed {m} min {side} local apparent noon ({noon}), outside "
                                                     "the lab's window of {window} min.{extra}",
                                                     m=Number(abs(off) / 60, ".0f"), side=side, noon=text_noon,
                                                     window=Number(window / 60, ".0f"), extra=extra)))
            clock = written.get(f"{prefix}observed_at", "")
            try:
                local = datetime.fromisoformat(clock.strip().replace("Z", "+00:00"))
                minutes = local.hour * 60 + local.minute
            except ValueError:
                minutes = None
            if minutes is not None and abs(minutes - 12 * 60) <= 5:
                out.append(("clock_time_as_solar_time", False, phrase(
                    "Likely cause: local clock time used as solar time. You observed at {local} by the clock, but the "
                    "clock keeps zone time: the sun crossed your meridian at {noon} clock time that day. Solar noon "
                    "differs from clock noon by your longitude's distance from the zone's meridian (4 min per degree) "
                    "and by the equation of time (−14 to +16 min).", local=Clock(local, "%H:%M"),
                    noon=Clock(noon.astimezone(local.tzinfo), "%H:%M"))))
        return out

    return notes


def _gnomon_parts(prefix: str = "", site: str = "the site", lp: str = ""):
    """Observations and steps of the gnomon (shadow-stick) reduction, with item names prefixed.

    ``lp`` prefixes the labels (``"site 1: "``) so that two sites read apart on a sheet.
    """
    p = prefix
    observations = (
        Observation(f"{p}gnomon_height", f"{lp}gnomon height", "length", "m", f"height of the gnomon's tip above level ground at {site}"),
        Observation(f"{p}shadow_length", f"{lp}shadow length", "length", "m",
                    "one measurement of the noon shadow from the gnomon's foot to the edge the lab asks for", repeated=True),
        Observation(f"{p}observed_at", f"{lp}time of the observation", "datetime", "",
                    "date and time of the shadow measurement with its UTC offset, e.g. 2026-09-21T12:47:30+01:00"),
        Observation(f"{p}lon", f"{lp}longitude", "angle", "deg", f"longitude of {site} (east positive, or with E/W)",
                    positive=False, hemisphere=True, limits=_LON),
        Observation(f"{p}lat", f"{lp}known latitude", "angle", "deg", f"the known latitude of {site} (for the accuracy check)",
                    positive=False, hemisphere=True, limits=_LAT),
        Observation(f"{p}sun_direction", f"{lp}sun's direction at noon", "choice", "",
                    "where the sun stood at noon: south (of the zenith) or north", choices=("south", "north"),
                    default="south"),
        Observation(f"{p}temperature", f"{lp}air temperature", "temperature", "C", "air temperature (for refraction)",
                    positive=False, limits=(-60.0, 60.0), default="10 C"),
        Observation(f"{p}pressure", f"{lp}air pressure", "pressure", "hPa", "air pressure (for refraction)",
                    limits=(50_000.0, 110_000.0), default="1010 hPa"),
    )
    steps = (
        Step(f"{p}shadow_mean", f"{lp}mean shadow length", "length", "m", "s = (s₁ + … + sₙ) / n", "mean of the readings",
             (f"{p}shadow_length",), lambda s: float(np.mean(s))),
        Step(f"{p}zenith_observed", f"{lp}zenith distance of the shadow's edge", "angle", "deg", "z = atan(s / g)",
             "right triangle of gnomon and shadow", (f"{p}shadow_mean", f"{p}gnomon_height"), zn.zenith_from_shadow,
             (formula_variant("altitude_for_zenith", "altitude computed instead of zenith distance",
                              "atan(g / s) is the sun's altitude; the zenith distance is atan(s / g).",
                              lambda s, g: zn.zenith_from_shadow(g, s)),)),
        Step(f"{p}zenith_centre", f"{lp}zenith distance of the sun's centre", "angle", "deg",
             "z_c = z + SD for the umbra's tip (cast by the upper limb); z_c = z for the penumbra's centre",
             "semi-diameter SD = 959.63″ / r (Meeus ch. 55)", (f"{p}zenith_observed", f"{p}observed_at", "shadow_edge"),
             lambda z, t, edge: z + (_sd(t) if float(edge) >= 0.5 else 0.0),
             (formula_variant("semi_diameter_wrong_limb", "semi-diameter applied for the wrong limb",
                              "The semi-diameter went the wrong way: the sharp tip of the full shadow is cast by the "
                              "sun's upper limb, so the centre is one semi-diameter farther from the zenith.",
                              lambda z, t, edge: z - (_sd(t) if float(edge) >= 0.5 else -_sd(t))),
              formula_variant("semi_diameter_left_out", "semi-diameter left out",
                              "The semi-diameter was left out: the sharp tip of the full shadow is cast by the sun's "
                              "upper limb, so add one semi-diameter (about 16′) to reach the sun's centre.",
                              lambda z, t, edge: z if float(edge) >= 0.5 else float("nan")),
              formula_variant("semi_diameter_applied_twice", "semi-diameter applied twice",
                              "The semi-diameter was added twice; one semi-diameter takes the upper limb to the centre.",
                              lambda z, t, edge: z + 2 * _sd(t) if float(edge) >= 0.5 else float("nan")))),
        Step(f"{p}zenith_true", f"{lp}zenith distance corrected for refraction", "angle", "deg",
             "z_t = z_c + R,  R from Bennett's formula at hₐ = 90° − z_c, × (P/1010 hPa)·(283 K/(273 + T))",
             "Bennett (1982, J. Navigation 35:255–259), pressure and temperature factor from Meeus ch. 16",
             (f"{p}zenith_centre", f"{p}pressure", f"{p}temperature"),
             lambda z, P, T: z + float(sun.refraction_bennett(np.pi / 2 - z, P, T)),
             (formula_variant("refraction_added_to_altitude", "refraction applied the wrong way",
                              "Refraction lifts the sun: it looks higher (closer to the zenith) than it is, so the "
                              "refraction is added to the zenith distance, not subtracted.",
                              lambda z, P, T: z - float(sun.refraction_bennett(np.pi / 2 - z, P, T))),
              formula_variant("refraction_left_out", "refraction left out",
                              "The refraction correction was left out: the sun looks higher than it is, so add the "
                              "refraction to the zenith distance.",
                              lambda z, P, T: z),
              formula_variant("refraction_applied_twice", "refraction applied twice",
                              "The refraction was added twice; it is added once to the zenith distance.",
                              lambda z, P, T: z + 2 * float(sun.refraction_bennett(np.pi / 2 - z, P, T))))),
        Step(f"{p}declination", f"{lp}sun's declination", "angle", "deg", "δ at the time of observation", ALMANAC,
             (f"{p}observed_at",), _declination,
             (formula_variant("declination_sign", "declination with the wrong sign",
                              "The declination's sign was reversed: it is positive when the sun is north of the "
                              "equator (March to September), negative otherwise.",
                              lambda t: -_declination(t)),)),
    )
    steps += (_latitude_step(p, f"{p}zenith_true", "the site's latitude from the noon sun", lp),)
    return observations, steps


_SHADOW_EDGE = Constant("shadow_edge", "edge of the shadow measured", "choice",
                        "which edge students measure: penumbra_centre (the middle of the blurred edge: the sun's "
                        "centre) or umbra_tip (the sharp tip: the sun's upper limb)",
                        default="penumbra_centre", choices=("penumbra_centre", "umbra_tip"))
_NOON_WINDOW = Constant("noon_window", "window around local apparent noon", "duration",
                        "how far from local apparent noon an observation may be before the sheet warns",
                        default="15 min")
_KNOWN_LAT = "The reference is your site's known latitude. Your latitude comes from the sun's zenith distance at " \
             "noon and its declination; errors in timing, shadow reading and the edge measured show up here."

_G_OBS, _G_STEPS = _gnomon_parts()
GNOMON = Method(
    id="gnomon",
    title="Latitude from the noon shadow of a gnomon",
    summary="The length of a vertical gnomon's shadow at local apparent noon gives the sun's zenith distance; "
            "with the sun's declination it gives the latitude.",
    observations=_G_OBS,
    constants=(_SHADOW_EDGE, _NOON_WINDOW),
    steps=_G_STEPS,
    result_step="latitude",
    reference=Reference("known latitude", ("lat",), lambda lat: {"value": lat}, _KNOWN_LAT),
    notes=_noon_notes(""),
)


# ---------------------------------------------------------------- sextant ---

def _apparent(hc, horizon, eye):
    if float(horizon) >= 0.5:  # artificial horizon: the instrument measures twice the altitude
        return hc / 2.0
    if float(eye) <= 0:
        raise ValueError("a sea horizon needs your eye height (eye_height) for the dip")
    return hc - float(sun.dip_of_sea_horizon(eye))


SEXTANT = Method(
    id="sextant",
    title="Latitude from a noon sight with a sextant",
    summary="The sun's altitude at local apparent noon, corrected in the navigator's order, and its declination "
            "give the latitude.",
    observations=(
        Observation("sextant_altitude", "sextant altitude", "angle", "dms",
                    "one sextant reading of the sun's altitude at noon, as read (D M S)", repeated=True),
        Observation("limb", "limb observed", "choice", "", "which edge of the sun was brought to the horizon: lower or upper",
                    choices=("lower", "upper"), default="lower"),
        Observation("index_error", "index error", "angle", "arcmin",
                    "the sextant's index error: positive when the index reads ON the arc (readings too high), "
                    "negative when OFF the arc", positive=False, limits=(-math.radians(1), math.radians(1)),
                    default="0 arcmin"),
        Observation("horizon", "horizon", "choice", "", "sea (the sea horizon) or artificial (a reflecting pool: "
                    "the sextant reads twice the altitude)", choices=("sea", "artificial"), default="sea"),
        Observation("eye_height", "eye height", "length", "m", "height of the eye above the sea (sea horizon only)",
                    positive=False, default="0 m"),
        Observation("temperature", "air temperature", "temperature", "C", "air temperature (for refraction)",
                    positive=False, limits=(-60.0, 60.0), default="10 C"),
        Observation("pressure", "air pressure", "pressure", "hPa", "air pressure (for refraction)",
                    limits=(50_000.0, 110_000.0), default="1010 hPa"),
        Observation("observed_at", "time of the sight", "datetime", "",
                    "date and time of the sight with its UTC offset, e.g. 2026-09-21T12:47:30+01:00"),
        Observation("lon", "longitude", "angle", "deg", "longitude of the site (east positive, or with E/W)",
                    positive=False, hemisphere=True, limits=_LON),
        Observation("lat", "known latitude", "angle", "deg", "the site's known latitude (for the accuracy check)",
                    positive=False, hemisphere=True, limits=_LAT),
        Observation("sun_direction", "sun's direction at noon", "choice", "", "south or north of the zenith",
                    choices=("south", "north"), default="south"),
    ),
    constants=(_NOON_WINDOW,),
    steps=(
        Step("altitude_mean", "mean sextant altitude", "angle", "deg", "Hs = mean of the readings",
             "mean of the readings", ("sextant_altitude",), lambda h: float(np.mean(h))),
        Step("index_corrected", "altitude corrected for index error", "angle", "deg",
             "H = Hs − IE  (on the arc: subtract; off the arc: add)", "sextant index correction",
             ("altitude_mean", "index_error"), lambda h, ie: h - ie,
             (formula_variant("index_error_wrong_sign", "index error applied with the wrong sign",
                              "An index error ON the arc makes every reading too high: subtract it (off the arc, add it).",
                              lambda h, ie: h + ie),
              formula_variant("index_error_left_out", "index error left out",
                              "The index error was not applied: subtract an error on the arc (add one off the arc).",
                              lambda h, ie: h),
              formula_variant("index_error_applied_twice", "index error applied twice",
                              "The index error was applied twice; it is one correction, applied once.",
                              lambda h, ie: h - 2 * ie))),
        Step("apparent_altitude", "apparent altitude", "angle", "deg",
             "Hₐ = H − dip, dip = 1.76′·√h (sea horizon);  Hₐ = H / 2 (artificial horizon)",
             "the almanac's dip rule with standard refraction; an artificial horizon doubles the angle",
             ("index_corrected", "horizon", "eye_height"), _apparent,
             (formula_variant("double_altitude_not_halved", "double altitude not halved",
                              "With an artificial horizon the sextant measures the angle between the sun and its "
                              "reflection: twice the altitude. Halve it.",
                              lambda h, horizon, eye: h if float(horizon) >= 0.5 else float("nan")),
              formula_variant("dip_added", "dip added instead of subtracted",
                              "The eye above the sea sees the horizon below the true horizontal: subtract the dip.",
                              lambda h, horizon, eye: h + float(sun.dip_of_sea_horizon(eye)) if float(horizon) < 0.5 else float("nan")),
              formula_variant("dip_left_out", "dip left out",
                              "The dip was not subtracted: from an eye above the sea the horizon lies below the true "
                              "horizontal by 1.76′·√h.",
                              lambda h, horizon, eye: h if float(horizon) < 0.5 else float("nan")),
              formula_variant("dip_applied_twice", "dip subtracted twice",
                              "The dip was subtracted twice; it is one correction, applied once.",
                              lambda h, horizon, eye: h - 2 * float(sun.dip_of_sea_horizon(eye)) if float(horizon) < 0.5 else float("nan")))),
        Step("refraction", "refraction", "angle", "arcmin",
             "R = cot(Hₐ + 7.31/(Hₐ + 4.4)) arcmin × (P/1010 hPa)·(283 K/(273 + T))",
             "Bennett (1982); pressure and temperature factor from Meeus ch. 16",
             ("apparent_altitude", "pressure", "temperature"), lambda h, P, T: float(sun.refraction_bennett(h, P, T))),
        Step("semi_diameter", "semi-diameter (+ lower limb, − upper limb)", "angle", "arcmin",
             "SD = ± 959.63″ / r  (r the sun's distance in AU)", "Meeus ch. 55",
             ("observed_at", "limb"), lambda t, limb: _sd(t) * (-1.0 if float(limb) >= 0.5 else 1.0)),
        Step("parallax", "parallax in altitude", "angle", "arcmin", "PA = HP · cos Hₐ,  HP = 8.794″ / r",
             "horizontal parallax of the sun", ("observed_at", "apparent_altitude"),
             lambda t, h: sun.horizontal_parallax(_when(t)) * math.cos(h)),
        Step("observed_altitude", "observed altitude", "angle", "deg", "Hₒ = Hₐ − R + SD + PA",
             "the navigator's altitude corrections in order",
             ("apparent_altitude", "refraction", "semi_diameter", "parallax"), lambda h, r, sd, pa: h - r + sd + pa,
             (formula_variant("refraction_added", "refraction added instead of subtracted",
                              "Refraction makes the sun look higher than it is: subtract it.",
                              lambda h, r, sd, pa: h + r + sd + pa),
              formula_variant("semi_diameter_wrong_limb", "semi-diameter applied for the wrong limb",
                              "For the lower limb add the semi-diameter to reach the centre; for the upper limb subtract it.",
                              lambda h, r, sd, pa: h - r - sd + pa),
              formula_variant("refraction_applied_twice", "refraction subtracted twice",
                              "The refraction was subtracted twice: it is one correction, applied once.",
                              lambda h, r, sd, pa: h - 2 * r + sd + pa),
              formula_variant("semi_diameter_left_out", "semi-diameter left out",
                              "The semi-diameter (about 16′) was left out: the sextant brings a limb to the horizon, "
                              "so add the semi-diameter for the lower limb (subtract it for the upper) to reach the "
                              "sun's centre.",
                              lambda h, r, sd, pa: h - r + pa),
              formula_variant("semi_diameter_applied_twice", "semi-diameter applied twice",
                              "The semi-diameter was applied twice; one semi-diameter takes the limb to the centre.",
                              lambda h, r, sd, pa: h - r + 2 * sd + pa),
              formula_variant("refraction_left_out", "refraction left out",
                              "The refraction was not subtracted: refraction makes the sun look higher than it is.",
                              lambda h, r, sd, pa: h + sd + pa))),
        Step("declination", "sun's declination", "angle", "deg", "δ at the time of the sight", ALMANAC,
             ("observed_at",), _declination,
             (formula_variant("declination_sign", "declination with the wrong sign",
                              "The declination's sign was reversed: it is positive when the sun is north of the "
                              "equator (March to September), negative otherwise.",
                              lambda t: -_declination(t)),)),
        Step("zenith_distance", "zenith distance", "angle", "deg", "z = 90° − Hₒ", "definition",
             ("observed_altitude",), lambda h: np.pi / 2 - h),
        _latitude_step("", "zenith_distance", "the latitude from the noon sight"),
    ),
    result_step="latitude",
    reference=Reference("known latitude", ("lat",), lambda lat: {"value": lat}, _KNOWN_LAT),
    notes=_noon_notes(""),
)


# ----------------------------------------------------------- meridian arc ---

_S1_OBS, _S1_STEPS = _gnomon_parts("site1_", "site 1", "site 1: ")
_S2_OBS, _S2_STEPS = _gnomon_parts("site2_", "site 2", "site 2: ")


def _meridian_reference(lat1, lat2):
    mid = (lat1 + lat2) / 2.0
    return {"value": float(meridian_radius(mid)), "latitude": mid}


def _both_notes(obs, consts, written):
    return _noon_notes("site1_")(obs, consts, written) + _noon_notes("site2_")(obs, consts, written)


MERIDIAN_ARC = Method(
    id="meridian_arc",
    title="Radius from a two-site meridian arc",
    summary="The noon latitudes of two sites nearly on one meridian, and the north–south distance between them, "
            "give the radius: R = s / Δφ.",
    observations=_S1_OBS + _S2_OBS + (
        Observation("north_south_distance", "north–south distance", "length", "km",
                    "the distance between the sites' parallels (measured along the meridian, or from coordinates)"),
    ),
    constants=(_SHADOW_EDGE, _NOON_WINDOW),
    steps=_S1_STEPS + _S2_STEPS + (
        Step("delta_lat", "difference in latitude", "angle", "deg", "Δφ = φ₂ − φ₁", "definition",
             ("site1_latitude", "site2_latitude"), lambda a, b: b - a),
        Step("radius", "radius", "length", "km", "R = s / |Δφ|  (Δφ in radians)", "arc of a meridian circle",
             ("north_south_distance", "delta_lat"), lambda s, d: radius_from_arc(s, abs(d)),
             (input_variant("degrees_as_radians", "the latitude difference in degrees used as radians",
                            "Δφ must be in radians in R = s / Δφ; it was used in degrees.",
                            "delta_lat", lambda d: np.degrees(d)),)),
    ),
    result_step="radius",
    reference=Reference(
        "meridian radius of curvature at the mid-latitude",
        ("site1_lat", "site2_lat"),
        _meridian_reference,
        "An arc along a meridian measures the meridian radius of curvature M = a(1 − e²)/(1 − e² sin²φ)^(3/2) at "
        "its mid-latitude (WGS84), which runs from 6335 km at the equator to 6400 km at the poles; that, not the "
        "mean radius, is what a perfect measurement would give. If your sites are not on one meridian, use the "
        "north–south component of the distance between them (the distance between their parallels): the east–west "
        "part adds length without changing the latitude.",
        extras=(("latitude", "mid-latitude", "angle", "deg"),),
    ),
    notes=_both_notes,
)


# -------------------------------------------- theodolite zenith angles ---

def _pair_notes(obs, consts, written):
    fl, fr = obs.get("zenith_face_left"), obs.get("zenith_face_right")
    if fl is None or fr is None or np.size(fl) != np.size(fr) or np.size(fl) < 2:
        return []
    each = (np.asarray(fl) + np.asarray(fr) - 2 * np.pi) / 2
    spread = float(np.max(each) - np.min(each))
    limit = consts.get("index_error_tolerance", math.radians(10 / 3600))
    ok = spread <= limit
    return [("face_pair_closure", ok, phrase(
        "Index errors of the {n} face pairs range over {spread}″ (the lab allows {limit}″){end}", n=int(np.size(fl)),
        spread=Number(math.degrees(spread) * 3600, ".1f"), limit=Number(math.degrees(limit) * 3600, ".0f"),
        end="." if ok else ": a pair was misread or the instrument moved."))]


FACE_PAIRS = Method(
    id="face_pairs",
    title="Zenith angle from face-left and face-right readings",
    summary="Reading a zenith angle on both faces of the theodolite cancels the vertical index error.",
    observations=(
        Observation("zenith_face_left", "face-left zenith readings", "angle", "dms",
                    "zenith angle read face left (one row per pair)", repeated=True, spread=False, per="pair"),
        Observation("zenith_face_right", "face-right zenith readings", "angle", "dms",
                    "zenith angle read face right, in the same order (one row per pair)", repeated=True, spread=False,
                    per="pair"),
    ),
    constants=(Constant("index_error_tolerance", "allowed spread of the pairs' index errors", "angle",
                        "how far the index errors of the pairs may disagree before the sheet flags it",
                        default="10 arcsec"),),
    steps=(
        Step("index_error", "vertical index error", "angle", "arcsec", "i = mean of (FL + FR − 360°) / 2",
             "face-left/face-right pairs (e.g. Ghilani & Wolf)", ("zenith_face_left", "zenith_face_right"),
             zn.face_pair_index_error,
             (formula_variant("index_error_wrong_sign", "index error with the wrong sign",
                              "i = (FL + FR − 360°)/2; the correction to each reading is −i.",
                              lambda fl, fr: -zn.face_pair_index_error(fl, fr)),)),
        Step("zenith_corrected", "corrected zenith angle", "angle", "deg", "z = mean(FL) − i",
             "face-left reading freed of index error", ("zenith_face_left", "index_error"), zn.corrected_zenith,
             (formula_variant("index_error_added", "index error added instead of subtracted",
                              "The index error was added to the face-left reading; subtract it (z = FL − i).",
                              lambda fl, i: zn.corrected_zenith(fl, -i)),
              formula_variant("faces_averaged", "face-left and face-right readings simply averaged",
                              "Averaging FL and FR gives about 180°, not the zenith angle: the face-right reading is "
                              "360° − z + i. Use z = FL − i, or the mean of (FL − FR + 360°)/2.",
                              lambda fl, i: np.pi + i))),
    ),
    result_step="zenith_corrected",
    notes=_pair_notes,
)

_EARTH = Constant("earth_radius", "Earth's radius", "length", "the radius in the curvature term", default="6371.0088 km")

HEIGHTING = Method(
    id="heighting",
    title="Trigonometric heighting",
    summary="A slope distance and a zenith angle give the height difference, with the curvature-and-refraction term.",
    observations=(
        Observation("slope_distance", "slope distance", "length", "m", "slope distance from instrument to target (EDM)"),
        Observation("zenith_angle", "zenith angle", "angle", "dms", "zenith angle to the target, corrected for index error"),
        Observation("instrument_height", "instrument height", "length", "m", "height of the instrument above its station",
                    positive=False),
        Observation("target_height", "target height", "length", "m", "height of the target (prism) above its station",
                    positive=False),
    ),
    constants=(Constant("k", "coefficient of refraction", "ratio", "curvature of the line of sight as a fraction of the Earth's"),
               _EARTH),
    steps=(
        Step("horizontal_distance", "horizontal distance", "length", "m", "D = S · sin z", "right triangle",
             ("slope_distance", "zenith_angle"), zn.horizontal_from_slope,
             (formula_variant("zenith_as_altitude", "zenith angle used as a vertical angle",
                              "S·cos z is the vertical component; the horizontal one is S·sin z.",
                              lambda S, z: S * np.cos(z)),)),
        Step("curvature_refraction", "curvature and refraction", "length", "m", "(c + r) = (1 − k) · D² / (2R)",
             "curvature and refraction (e.g. Ghilani & Wolf: 0.0675 K² m for k ≈ 0.14)",
             ("horizontal_distance", "k", "earth_radius"), zn.curvature_and_refraction,
             (formula_variant("refraction_ignored", "refraction left out",
                              "Only the curvature D²/(2R) was used; refraction reduces it by the factor (1 − k).",
                              lambda D, k, R: zn.curvature_and_refraction(D, 0.0, R)),
              formula_variant("refraction_plus", "refraction with the wrong sign",
                              "Refraction bends the line of sight down towards the Earth: it reduces the curvature "
                              "term, (1 − k), not (1 + k).",
                              lambda D, k, R: zn.curvature_and_refraction(D, -k, R)))),
        Step("height_difference", "height difference", "length", "m", "ΔH = S · cos z + (c + r) + hᵢ − hₜ",
             "trigonometric heighting (e.g. Ghilani & Wolf)",
             ("slope_distance", "zenith_angle", "curvature_refraction", "instrument_height", "target_height"),
             zn.trig_height_difference,
             (formula_variant("curvature_refraction_subtracted", "(c + r) subtracted",
                              "The Earth falls away below the line of sight: add the curvature-and-refraction term.",
                              lambda S, z, c, hi, ht: zn.trig_height_difference(S, z, -c, hi, ht)),
              formula_variant("heights_swapped", "instrument and target heights swapped",
                              "Add the instrument height and subtract the target height: ΔH = S·cos z + (c + r) + hᵢ − hₜ.",
                              lambda S, z, c, hi, ht: zn.trig_height_difference(S, z, c, ht, hi)))),
    ),
    result_step="height_difference",
)

RECIPROCAL = Method(
    id="reciprocal",
    title="Refraction from reciprocal zenith angles",
    summary="Simultaneous zenith angles measured from each end of a line give the coefficient of refraction and a "
            "height difference free of refraction.",
    observations=(
        Observation("zenith_ab", "zenith angle A → B", "angle", "dms", "zenith angle at A to B (index-corrected)"),
        Observation("zenith_ba", "zenith angle B → A", "angle", "dms", "zenith angle at B to A, at the same moment"),
        Observation("reciprocal_distance", "distance A–B", "length", "m",
                    "the distance between A and B; say in distance_kind whether it is the slope or the horizontal distance"),
        Observation("distance_kind", "kind of distance A–B", "choice", "",
                    "slope (along the line of sight, as an EDM measures it) or horizontal", choices=("slope", "horizontal"),
                    default="slope"),
    ),
    constants=(_EARTH,),
    steps=(
        Step("angle_excess", "angle sum excess", "angle", "arcsec", "ε = z_AB + z_BA − 180°", "definition",
             ("zenith_ab", "zenith_ba"), zn.reciprocal_angle_excess),
        Step("refraction_coefficient", "coefficient of refraction", "ratio", "1", "k = 1 − R · ε / S",
             "circular ray over a sphere: ε = (1 − k)·S/R (e.g. Torge, Geodesy)",
             ("angle_excess", "reciprocal_distance", "earth_radius"), zn.refraction_coefficient_reciprocal,
             (formula_variant("excess_in_degrees", "the excess in degrees used as radians",
                              "ε must be in radians in k = 1 − R·ε/S.",
                              lambda e, S, R: zn.refraction_coefficient_reciprocal(np.degrees(e), S, R)),)),
        Step("height_difference", "height difference free of refraction", "length", "m",
             "ΔH = S · sin((z_BA − z_AB) / 2) for a slope distance S; ΔH = D · tan((z_BA − z_AB) / 2) for a horizontal D",
             "reciprocal observations cancel a symmetric refraction; plane trigonometry of the chord",
             ("reciprocal_distance", "zenith_ab", "zenith_ba", "distance_kind"),
             lambda S, a, b, kind: zn.reciprocal_height_difference(S, a, b, float(kind) >= 0.5),
             (formula_variant("halving_missing", "the half-difference not halved",
                              "The height follows the half-difference of the zenith angles: ΔH = S·sin((z_BA − z_AB)/2).",
                              lambda S, a, b, kind: S * (np.tan(b - a) if float(kind) >= 0.5 else np.sin(b - a))),
              formula_variant("wrong_distance_kind", "the formula for the other kind of distance",
                              "A horizontal distance takes ΔH = D·tan((z_BA − z_AB)/2) and a slope distance "
                              "ΔH = S·sin((z_BA − z_AB)/2); the one for the other kind of distance was used.",
                              lambda S, a, b, kind: zn.reciprocal_height_difference(S, a, b, float(kind) < 0.5)))),
    ),
    result_step="refraction_coefficient",
)
