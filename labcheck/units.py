"""Units and angles: parse what students write, convert to SI, and back.

Everything inside labcheck is SI: lengths in metres, angles in radians,
temperatures in degrees Celsius, forces in newtons.  Conversion happens here,
at the edge, and nowhere else.

Length factors are the legal definitions:

* international foot = 0.3048 m exactly (international yard and pound
  agreement, 1959); statute mile = 5280 ft = 1609.344 m;
* international nautical mile = 1852 m exactly (International Hydrographic
  Conference, 1929);
* US survey foot = 1200/3937 m (deprecated from 2023-01-01, Federal Register
  85 FR 62698): accepted for old data, never a default.

Angles may be written in decimal degrees, arcminutes, arcseconds, radians,
gon, or as degrees-minutes-seconds strings (``0°11'20"``, ``0 11 20``,
``-0 11 20.5``, ``11'20"``, ``44°38'12.5"N``).
"""

from __future__ import annotations

import math
import re

__all__ = [
    "UnitError",
    "UNITS",
    "canonical_unit",
    "to_si",
    "from_si",
    "parse_number",
    "parse_dms_deg",
    "parse_datetime",
    "looks_dms",
    "parse_quantity",
    "parse_value",
    "format_value",
    "format_fixed",
]


class UnitError(ValueError):
    """A value or unit a student wrote cannot be read.

    The message says what was expected and what arrived; the caller adds
    the row it came from.
    """


# Quantity kinds and, for each, unit name -> factor to SI (or None for affine
# temperature units, handled separately).
_LENGTH = {
    "m": 1.0,
    "km": 1000.0,
    "cm": 0.01,
    "mm": 0.001,
    "ft": 0.3048,
    "us_ft": 1200.0 / 3937.0,
    "in": 0.0254,
    "yd": 0.9144,
    "mi": 1609.344,
    "nmi": 1852.0,
}
_ANGLE = {
    "rad": 1.0,
    "deg": math.pi / 180.0,
    "dms": math.pi / 180.0,  # a DMS string parses to degrees first
    "arcmin": math.pi / (180.0 * 60.0),
    "arcsec": math.pi / (180.0 * 3600.0),
    "gon": math.pi / 200.0,
}
_LBF = 4.4482216152605  # N, NIST SP 811 (from the avoirdupois pound and standard gravity)
_FORCE = {"N": 1.0, "kN": 1000.0, "lbf": _LBF, "kgf": 9.80665}
_AREA = {"m2": 1.0, "cm2": 1e-4, "mm2": 1e-6, "in2": 0.0254**2, "ft2": 0.3048**2}
# inHg: 3386.389 Pa (NIST SP 811, conventional, at 0 °C); mbar = hPa = 100 Pa.
_PRESSURE = {"Pa": 1.0, "hPa": 100.0, "mbar": 100.0, "kPa": 1e3, "MPa": 1e6, "GPa": 1e9,
             "psi": _LBF / 0.0254**2, "ksi": 1000 * _LBF / 0.0254**2, "inHg": 3386.389}
_DURATION = {"s": 1.0, "min": 60.0, "h": 3600.0}
_FORCE_PER_LENGTH = {"N/m": 1.0, "kgf/m": 9.80665, "lbf/ft": _LBF / 0.3048}
# A coefficient per degree: per kelvin equals per degree Celsius; per degree Fahrenheit is 1.8 per °C.
_PER_TEMPERATURE = {"/C": 1.0, "/K": 1.0, "/F": 1.8}
_RATIO = {"1": 1.0, "%": 0.01, "ppm": 1e-6}
_PERCENT = {"%": 1.0, "pp": 1.0}
_TEMPERATURE = ("C", "F", "K")

UNITS: dict[str, dict[str, float]] = {
    "length": _LENGTH,
    "angle": _ANGLE,
    "force": _FORCE,
    "area": _AREA,
    "pressure": _PRESSURE,
    "force_per_length": _FORCE_PER_LENGTH,
    "per_temperature": _PER_TEMPERATURE,
    "duration": _DURATION,
    "ratio": _RATIO,
    "percent": _PERCENT,
    "temperature": {u: math.nan for u in _TEMPERATURE},
}

# Spellings students use, mapped to our names.  Matching is case-sensitive
# only where case matters (none of these collide).
_ALIASES = {
    "metre": "m", "metres": "m", "meter": "m", "meters": "m",
    "kilometre": "km", "kilometres": "km", "kilometer": "km", "kilometers": "km",
    "feet": "ft", "foot": "ft", "'": "ft",
    "usft": "us_ft", "us ft": "us_ft", "survey_ft": "us_ft", "ftus": "us_ft",
    "mile": "mi", "miles": "mi",
    "nm": "nmi", "nautical mile": "nmi", "nautical miles": "nmi",
    "degree": "deg", "degrees": "deg", "°": "deg",
    "arcminute": "arcmin", "arcminutes": "arcmin", "′": "arcmin",
    "arcsecond": "arcsec", "arcseconds": "arcsec", "″": "arcsec",
    "radian": "rad", "radians": "rad",
    "grad": "gon", "grads": "gon",
    "°c": "C", "degc": "C", "c": "C", "°f": "F", "degf": "F", "f": "F", "k": "K",
    "n": "N", "kn": "kN", "lb": "lbf", "lbs": "lbf", "percent": "%",
    "m²": "m2", "mm²": "mm2", "cm²": "cm2", "in²": "in2", "ft²": "ft2", "sq in": "in2", "sq ft": "ft2",
    "pa": "Pa", "kpa": "kPa", "mpa": "MPa", "gpa": "GPa", "lbf/in2": "psi", "lb/in2": "psi",
    "hpa": "hPa", "mb": "mbar", "millibar": "mbar", "inhg": "inHg", "in hg": "inHg",
    "minutes": "min", "minute": "min", "seconds": "s", "second": "s", "hours": "h", "hour": "h",
    "n/m": "N/m", "lb/ft": "lbf/ft", "lbs/ft": "lbf/ft",
    "/°c": "/C", "1/c": "/C", "1/°c": "/C", "per c": "/C", "/°f": "/F", "1/f": "/F", "1/°f": "/F", "per f": "/F",
    "/k": "/K", "1/k": "/K",
}


def _canonical(unit: str) -> str:
    u = unit.strip()
    if u in _ALIASES:
        return _ALIASES[u]
    low = u.lower()
    return _ALIASES.get(low, u)


def canonical_unit(unit: str) -> str:
    """Our name for a unit spelling (``'feet'`` -> ``'ft'``, ``'°'`` -> ``'deg'``)."""
    return _canonical(unit)


def _check_unit(unit: str, kind: str) -> str:
    u = _canonical(unit)
    table = UNITS.get(kind)
    if table is None:
        raise UnitError(f"values of kind {kind!r} take no unit, got {unit!r}")
    if u not in table:
        raise UnitError(
            f"unknown {kind} unit {unit!r}: expected one of {', '.join(sorted(table))}"
        )
    return u


def to_si(value: float, unit: str, kind: str) -> float:
    """Convert ``value`` in ``unit`` to SI for a quantity of ``kind``.

    Temperature goes to degrees Celsius (the SI-derived scale used in the
    tape formulas), not kelvin.
    """
    u = _check_unit(unit, kind)
    if kind == "temperature":
        if u == "C":
            return value
        if u == "F":
            return (value - 32.0) * 5.0 / 9.0
        return value - 273.15
    return value * UNITS[kind][u]


def from_si(value_si: float, unit: str, kind: str) -> float:
    """Inverse of :func:`to_si`."""
    u = _check_unit(unit, kind)
    if kind == "temperature":
        if u == "C":
            return value_si
        if u == "F":
            return value_si * 9.0 / 5.0 + 32.0
        return value_si + 273.15
    return value_si / UNITS[kind][u]


_NUMBER_RE = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


def parse_number(text: str) -> float:
    """A plain decimal number; a decimal comma is accepted when it is the only separator."""
    s = str(text).strip().replace("\u2212", "-")  # typographic minus
    if s.count(",") == 1 and "." not in s:
        s = s.replace(",", ".")
    if not _NUMBER_RE.match(s):
        raise UnitError(f"expected a number, got {text!r}")
    value = float(s)
    if not math.isfinite(value):
        raise UnitError(f"expected a finite number, got {text!r}")
    return value


# DMS: degrees, minutes and seconds with symbols (° ' " and their typographic
# forms, or d m s), or two/three numbers separated by spaces or colons.
_DMS_SYMBOL_RE = re.compile(
    r"""^(?P<sign>[+-])?\s*
        (?:(?P<d>\d+(?:\.\d*)?)\s*[°ºd]\s*)?
        (?:(?P<m>\d+(?:\.\d*)?)\s*(?:['′’]|m(?!s))\s*)?
        (?:(?P<s>\d+(?:\.\d*)?)\s*(?:["″”]|''|′′|s)\s*)?$""",
    re.VERBOSE,
)
_HEMI = {"N": 1, "E": 1, "S": -1, "W": -1}


def parse_dms_deg(text: str, *, hemisphere: bool = False) -> float:
    """Parse a degrees-minutes-seconds angle and return decimal degrees.

    Accepted forms: ``12°34'56.7"``, ``-0°11'20"``, ``11'20"``, ``0 11 20``,
    ``-0 11 20.5``, ``12:34:56``, ``12 34.5`` (degrees and decimal minutes).
    A leading minus applies to the whole angle.  Only the last component may
    carry a decimal fraction; minutes and seconds must be below 60.  With
    ``hemisphere=True`` a leading or trailing N/E (positive) or S/W
    (negative) letter is accepted, e.g. ``44°38'12.5"N``.
    """
    original = text
    s = str(text).strip().replace("\u2212", "-")
    hemi_sign = 1
    if hemisphere and s and s[-1].upper() in _HEMI:
        hemi_sign = _HEMI[s[-1].upper()]
        s = s[:-1].strip()
    elif hemisphere and s and s[0].upper() in _HEMI:
        hemi_sign = _HEMI[s[0].upper()]
        s = s[1:].strip()
    if not s:
        raise UnitError(f"expected an angle, got {original!r}")

    m = _DMS_SYMBOL_RE.match(s)
    if m and any(m.group(g) for g in ("d", "m", "s")) and any(c in s for c in "°º'′’\"″”dms"):
        sign = -1 if m.group("sign") == "-" else 1
        parts = [m.group("d"), m.group("m"), m.group("s")]
    else:
        sign = 1
        body = s
        if body[:1] in "+-":
            sign = -1 if body[0] == "-" else 1
            body = body[1:].strip()
        pieces = re.split(r"[\s:]+", body)
        if not 2 <= len(pieces) <= 3 or not all(re.fullmatch(r"\d+(\.\d*)?", p) for p in pieces):
            raise UnitError(
                f"expected an angle in degrees or as D M S (e.g. 0°11'20\" or 0 11 20), got {original!r}"
            )
        parts = pieces + [None] * (3 - len(pieces))

    present = [p for p in parts if p is not None]
    for p in present[:-1]:
        if "." in p:
            raise UnitError(
                f"only the last part of a D M S angle may have decimals, got {original!r}"
            )
    deg = float(parts[0]) if parts[0] is not None else 0.0
    minutes = float(parts[1]) if parts[1] is not None else 0.0
    seconds = float(parts[2]) if parts[2] is not None else 0.0
    if minutes >= 60.0:
        raise UnitError(f"minutes must be below 60 in a D M S angle, got {original!r}")
    if seconds >= 60.0:
        raise UnitError(f"seconds must be below 60 in a D M S angle, got {original!r}")
    if hemi_sign < 0 and sign < 0:
        raise UnitError(f"an angle takes a minus sign or an S/W letter, not both: {original!r}")
    return sign * hemi_sign * (deg + minutes / 60.0 + seconds / 3600.0)


def looks_dms(s: str) -> bool:
    """True when ``s`` is written as D M S (symbols, or two or three numbers separated by spaces or colons)."""
    return bool(re.search(r"[°º'′’\"″”]", s)) or bool(
        re.fullmatch(r"[+-]?\s*\d+(\.\d*)?([\s:]+\d+(\.\d*)?){1,2}\s*[NSEWnsew]?", s.strip())
    )


def parse_value(text: str, unit: str, kind: str, *, hemisphere: bool = False) -> float:
    """Parse ``text`` written in ``unit`` and return it in SI for ``kind``.

    Angles written as DMS strings are read as degrees whatever the unit
    column says, except that a DMS string with a unit other than ``deg`` or
    ``dms`` is an error (it would be ambiguous).
    """
    s = str(text).strip()
    if not s:
        raise UnitError("the value is blank")
    if kind == "angle":
        u = _check_unit(unit, kind)
        if looks_dms(s) or (hemisphere and s[-1:].upper() in _HEMI):
            if u not in ("deg", "dms"):
                raise UnitError(
                    f"a D M S angle {text!r} needs the unit deg or dms, not {unit!r}"
                )
            return parse_dms_deg(s, hemisphere=hemisphere) * _ANGLE["deg"]
        return to_si(parse_number(s), u, kind)
    if kind == "datetime":
        return parse_datetime(s)
    if kind in UNITS:
        return to_si(parse_number(s), unit, kind)
    raise UnitError(f"cannot parse a value of kind {kind!r}")


def parse_datetime(text: str) -> float:
    """An ISO 8601 date-time with a UTC offset (``2026-09-21T12:47:30+01:00``, ``... Z``) as POSIX seconds.

    A time without an offset is refused: the sun needs universal time.
    """
    from datetime import datetime

    s = str(text).strip().replace(" ", "T", 1) if "T" not in str(text) else str(text).strip()
    if s.endswith(("Z", "z")):
        s = s[:-1] + "+00:00"
    try:
        when = datetime.fromisoformat(s)
    except ValueError:
        raise UnitError(f"expected a date and time such as 2026-09-21T12:47:30+01:00, got {text!r}") from None
    if when.tzinfo is None:
        raise UnitError(f"the time {text!r} needs its UTC offset, e.g. +01:00, or Z for UTC")
    return when.timestamp()


_QTY_RE = re.compile(r"^\s*(?P<num>[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?)\s*(?P<unit>.*?)\s*$")


def parse_quantity(text: str) -> tuple[float, str]:
    """Split a spec value such as ``"25 m"``, ``"10 arcsec"`` or ``"0.5 %"``.

    Returns the number and the unit text (``''`` for a bare number).
    """
    m = _QTY_RE.match(str(text))
    if not m:
        raise UnitError(f"expected a number with an optional unit such as \"25 m\", got {text!r}")
    return float(m.group("num")), _canonical(m.group("unit")) if m.group("unit") else ""


def format_value(value_si: float | None, unit: str, kind: str, digits: int = 4) -> str:
    """Format an SI value in ``unit`` with ``digits`` significant figures.

    Used by the renderers; a template never formats numbers itself.
    """
    if value_si is None or (isinstance(value_si, float) and math.isnan(value_si)):
        return "—"
    v = from_si(value_si, unit, kind) if kind in UNITS else value_si
    if v == 0:
        text = "0"
    else:
        magnitude = math.floor(math.log10(abs(v)))
        decimals = max(0, digits - 1 - magnitude)
        text = f"{v:.{decimals}f}"
    return f"{text} {unit}".strip() if unit not in ("1", "") else text


def format_fixed(value, decimals: int, unit: str = "") -> str:
    """A value already in ``unit`` with a fixed number of decimals, thin-space thousands, and the unit.

    Tiny values (a haversine of 6.7e-07) are written in e-notation with the same resolution; a
    missing or non-finite value is a dash.  The one fixed-decimal formatter of sheets and tables.
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "—"
    v = float(value)
    if v != 0 and abs(v) < 1e-3:
        figures = max(1, decimals + math.floor(math.log10(abs(v))) + 1)
        text = f"{v:.{min(figures, 12) - 1}e}"
    else:
        text = f"{v:,.{decimals}f}".replace(",", "\u2009")
    return f"{text} {unit}" if unit and unit != "1" else text

