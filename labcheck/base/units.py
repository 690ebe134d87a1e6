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
    "UnitError", "UNITS", "canonical_unit", "to_si", "from_si", "parse_number", "parse_dms_deg", "parse_datetime", "looks_dms", "parse_quantity", "parse_value", "read_value", "half_unit_si", "decimal_convention", "dms_is_unambiguous", "dms_seconds_decimals",
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
_EXPONENT_RE = re.compile(r"[eE][+-]?\d+$")
_GROUPS_RE = {",": re.compile(r"^[1-9]\d{0,2}(,\d{3})+$"), ".": re.compile(r"^[1-9]\d{0,2}(\.\d{3})+$")}
# Thin, narrow no-break and no-break spaces between digit groups (as typeset and as some locales export).
_GROUP_SPACE_RE = re.compile(r"(?<=\d)[\u2009\u202f\u00a0](?=\d{3}(?:\D|$))")


def _mark_evidence(body: str) -> str | None:
    """Which decimal mark a number written this way must use ('.' or ','), or None when it cannot tell."""
    if "," in body and "." in body:
        return "." if body.rfind(".") > body.rfind(",") else ","
    for mark, other in ((",", "."), (".", ",")):
        if mark in body:
            whole = body.split("e")[0].split("E")[0]
            if whole.count(mark) > 1:
                return other if _GROUPS_RE[mark].match(whole) else None
            if _GROUPS_RE[mark].match(whole):
                return None  # 7,325 or 7.325: thousands or decimals, the number alone cannot say
            return mark
    return None


def decimal_convention(texts, hint: str | None = None) -> str | None:
    """The decimal mark a file's numbers use, judged from all of them: '.', ',' or None (unknown or mixed).

    Evidence is a number that can only be read one way: ``12,5`` or ``0,037`` (a decimal comma),
    ``12.5`` or ``6,373.0`` (a decimal point), ``1,234,567`` (commas group thousands, so the point
    is the decimal mark).  ``hint`` (``','`` for a ``;``-separated file, as decimal-comma locales
    export) decides only when the numbers give no evidence.
    """
    seen = set()
    for t in texts:
        m = re.match(r"\s*[+-]?(\d[\d.,]*(?:[eE][+-]?\d+)?)", str(t))
        if m:
            mark = _mark_evidence(m.group(1))
            if mark:
                seen.add(mark)
    if len(seen) == 1:
        return seen.pop()
    return hint if not seen else None


def parse_number(text: str, decimal: str | None = None) -> float:
    """A decimal number as people write it.

    ``decimal`` is the file's decimal mark (see :func:`decimal_convention`), or None when unknown.
    Thousands separators are read when their grouping is unmistakable (``6,373.0``,
    ``1.234,5``, ``1,234,567``, thin spaces); a decimal comma is read when it cannot be a
    thousands separator (``12,5``); ``7,325`` is read by the file's convention and refused when
    that is unknown.  ``7.325`` is a decimal point unless the file writes decimal commas.
    """
    s = _GROUP_SPACE_RE.sub("", str(text).strip().replace("\u2212", "-"))
    sign = ""
    if s[:1] in "+-":
        sign, s = s[0], s[1:]
    exp = _EXPONENT_RE.search(s)
    body, tail = (s[: exp.start()], exp.group()) if exp else (s, "")
    if "," in body or body.count(".") > 1 or (decimal == "," and "." in body):
        mark = _mark_evidence(body)
        if mark is None and body.count(",") + body.count(".") == 1:
            mark = decimal if "," in body else None  # 7.325 in a decimal-comma file is not read as 7325
            if mark is None:
                alt = body.replace(",", "").replace(".", "")
                if "," in body:
                    raise UnitError(
                        f"{text!r} is ambiguous: {alt} with a thousands separator, or {body.replace(',', '.')} with a "
                        f"decimal comma? Write {alt}, or {body.replace(',', '.')} with a decimal point"
                    )
                raise UnitError(
                    f"{text!r} is ambiguous in a file that writes decimal commas: {alt}, or {body}? "
                    f"Write {alt}, or {body.replace('.', ',')} as in your other numbers"
                )
        if mark is None:
            raise UnitError(f"expected a number, got {text!r}")
        group = "," if mark == "." else "."
        whole, _, frac = body.rpartition(mark) if mark in body else (body, "", "")
        if group in whole and not _GROUPS_RE[group].match(whole):
            raise UnitError(f"expected a number, got {text!r} (the digit groups are not in threes)")
        body = whole.replace(group, "") + ("." + frac if frac or mark in body else "")
    s = sign + body + tail
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
    re.VERBOSE | re.IGNORECASE,
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
    if hemisphere:
        s, hemi_sign = _strip_hemisphere(s)
    hemi_letter = hemisphere and s != str(text).strip().replace("\u2212", "-")
    if not s:
        raise UnitError(f"expected an angle, got {original!r}")

    m = _DMS_SYMBOL_RE.match(s)
    if m and any(m.group(g) for g in ("d", "m", "s")) and any(c in s.lower() for c in "°º'′’\"″”dms"):
        sign = -1 if m.group("sign") == "-" else 1
        parts = [m.group("d"), m.group("m"), m.group("s")]
    else:
        sign = 1
        body = s
        if body[:1] in "+-":
            sign = -1 if body[0] == "-" else 1
            body = body[1:].strip()
        pieces = re.split(r"[\s:]+", body)
        lone = hemi_letter and len(pieces) == 1  # 25.4N: decimal degrees with a hemisphere letter
        if not (2 <= len(pieces) <= 3 or lone) or not all(re.fullmatch(r"\d+(\.\d*)?", p) for p in pieces):
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
    value = sign * hemi_sign * (deg + minutes / 60.0 + seconds / 3600.0)
    if not math.isfinite(value) or abs(value) > 1e6:
        raise UnitError(f"expected an angle, got {original!r} (far too large)")
    return value


_DMS_LETTERS_RE = re.compile(
    r"[+-]?\s*(\d+(\.\d*)?\s*d(\s*\d+(\.\d*)?\s*m)?(\s*\d+(\.\d*)?\s*s)?|\d+(\.\d*)?\s*m\s*\d+(\.\d*)?\s*s)",
    re.IGNORECASE,
)
_DMS_SPACED_RE = re.compile(r"[+-]?\s*\d+(\.\d*)?([\s:]+\d+(\.\d*)?){1,2}")


def _strip_hemisphere(s: str) -> tuple[str, int]:
    """``s`` without a N/S/E/W letter before or after it, and the letter's sign.

    A trailing ``s`` that belongs to ``12d34m56s`` is seconds, not south.
    """
    s = s.strip()
    if s[-1:].upper() in _HEMI and not s[-2:-1].isalpha() and not _DMS_LETTERS_RE.fullmatch(s):
        return s[:-1].strip(), _HEMI[s[-1].upper()]
    if s[:1].upper() in _HEMI and not s[1:2].isalpha():
        return s[1:].strip(), _HEMI[s[0].upper()]
    return s, 1


def looks_dms(s: str, hemisphere: bool = True) -> bool:
    """True when ``s`` is written as D M S: symbols (``0°11'20"``), letters (``0d 6m 18s``), or two or
    three numbers separated by spaces or colons; with ``hemisphere``, a N/S/E/W letter may stand before or after."""
    t = _strip_hemisphere(s)[0] if hemisphere else s.strip()
    return bool(re.search(r"[°º'′’\"″”]", t)) or bool(_DMS_LETTERS_RE.fullmatch(t)) or bool(_DMS_SPACED_RE.fullmatch(t))


def dms_is_unambiguous(s: str) -> bool:
    """A D M S form that cannot be a plain number in another angle unit: symbols, letters, or three numbers."""
    t = _strip_hemisphere(s)[0]
    if re.search(r"[°º'′’\"″”]", t) or _DMS_LETTERS_RE.fullmatch(t):
        return True
    return len(re.split(r"[\s:]+", t.lstrip("+-").strip())) == 3


def parse_value(text: str, unit: str, kind: str, *, hemisphere: bool = False, decimal: str | None = None) -> float:
    """Parse ``text`` written in ``unit`` and return it in SI for ``kind`` (see :func:`read_value`)."""
    return read_value(text, unit, kind, unit, hemisphere=hemisphere, decimal=decimal)[0]


# No field lab measures anything beyond 1e12 in SI units (a length of a million km, a ratio of 1:10^12);
# bounding every value here keeps squares and products in the reductions far from overflow.
MAX_SI_MAGNITUDE = 1e12

# A number followed by a unit typed in the same cell: "41ft", "25 km", "0.03%", "12.8 °C".
_VALUE_UNIT_RE = re.compile(r"^(?P<num>[+-]?[\d.,\u2009\u202f\u00a0]*\d(?:[eE][+-]?\d+)?)\s*(?P<unit>[^\d\s].*?)\s*$")
_PLAIN_NUMBER_RE = re.compile(r"^[+-]?[\d.,\u2009\u202f\u00a0]*\d[\d.,]*(?:[eE][+-]?\d+)?$|^[+-]?[\d.,]*\.\d+$")
_ONE_TO_N_RE = re.compile(r"^1\s*:\s*(?P<n>[\d.,\u2009\u202f\u00a0]+)$")


def read_value(
    text: str,
    unit_cell: str,
    kind: str,
    template_unit: str,
    *,
    hemisphere: bool = False,
    decimal: str | None = None,
    one_to_n: bool = False,
) -> tuple[float, str, str | None]:
    """Read a value as a student wrote it: ``(SI value, unit used, note or None)``.

    * ``unit_cell`` is the row's unit column (as written, maybe pre-filled by the template);
      blank means ``template_unit``.
    * A unit typed in the value cell (``41ft``, ``25 km``, ``0.03%``) is used when the unit
      cell is blank or names the same unit, and refused, naming both, when they differ.
    * Angles in D M S (symbols, ``12d34m56s``, ``0 6 20``; with ``hemisphere`` a N/S/E/W letter
      before or after) are read as D M S.  Under another angle unit (the template's ``arcmin``,
      say) an unambiguous form (symbols, letters, three numbers) is read as D M S with a note;
      two bare numbers are refused, since ``6 20`` could mean either.
    * ``one_to_n``: a ratio may be written ``1:N`` (a precision), read as N.
    * ``decimal`` is the file's decimal mark (see :func:`parse_number`).

    Raises :class:`UnitError` saying what to write instead; never returns a non-finite value.
    """
    s = str(text).strip().replace("\u2212", "-")
    if not s:
        raise UnitError("the value is blank")
    column = _canonical(unit_cell) if str(unit_cell).strip() else None
    if kind == "datetime":
        return parse_datetime(s), "", None
    note = None
    if kind == "angle" and looks_dms(s, hemisphere):
        if column is not None and column not in ("deg", "dms"):
            _check_unit(column, kind)
            if not dms_is_unambiguous(s):
                raise UnitError(
                    f"{text!r} could be D M S or two numbers; the unit column says {unit_cell!r}. Write D M S with "
                    f"three numbers (0 6 20) or symbols (0°6'20\"), or one decimal number of {unit_cell}"
                )
            same = (column == "arcmin" and re.fullmatch(r"[+-]?\d+(\.\d*)?\s*['′’m]", s, re.I)) or (
                column == "arcsec" and re.fullmatch(r"[+-]?\d+(\.\d*)?\s*([\"″”s]|'')", s, re.I))
            if not same:
                note = f"read as D M S (degrees, minutes, seconds) although the unit column says {unit_cell}"
        return parse_dms_deg(s, hemisphere=hemisphere) * _ANGLE["deg"], "dms", note  # bounded by parse_dms_deg
    if kind == "angle" and hemisphere and _strip_hemisphere(s)[0] != s:  # 25.4N
        return parse_dms_deg(s, hemisphere=True) * _ANGLE["deg"], "deg", None
    if kind not in UNITS:
        raise UnitError(f"cannot parse a value of kind {kind!r}")
    number = s
    unit = column or template_unit
    m = None if _PLAIN_NUMBER_RE.match(s) or _ONE_TO_N_RE.match(s) else _VALUE_UNIT_RE.match(s)
    if m:
        typed = m.group("unit")
        typed_c = _canonical(typed)
        if typed_c not in UNITS[kind]:
            if re.fullmatch(r"[eE][+-]?", typed):
                raise UnitError(f"expected a number, got {text!r}")
            raise UnitError(f"{text!r}: {typed!r} is not a {kind.replace('_', ' ')} unit "
                            f"(expected one of {', '.join(sorted(UNITS[kind]))})")
        if column is not None and column != typed_c:
            raise UnitError(f"{text!r} says {typed!r} but the unit column says {unit_cell!r}: "
                            "write the unit in one place, or make them agree")
        number, unit = m.group("num"), typed_c
    if one_to_n:
        ratio = _ONE_TO_N_RE.match(number)
        if ratio:
            number = ratio.group("n")
    value = parse_number(number, decimal)
    si = to_si(value, unit, kind)
    if not math.isfinite(si) or abs(si) > MAX_SI_MAGNITUDE:
        raise UnitError(f"{text!r} {unit} is far outside any value a field lab measures")
    return si, unit, note


def half_unit_si(text: str, unit: str, kind: str) -> float | None:
    """Half a unit in the last digit ``text`` was written with, in SI (None when it cannot tell).

    ``12.8`` °C → 0.05 °C; ``55`` °F → 0.5 °F = 0.278 °C; ``0 10 42`` → 0.5″; ``6,373.0`` km → 50 m.
    This bounds how far a value written this way may be from the one the writer had: the basis of
    the rounding-aware tolerance (rounding error ≤ half a unit in the last place).
    """
    s = str(text).strip().replace("\u2212", "-")
    if kind == "angle" and (unit == "dms" or looks_dms(s)):
        parts = re.findall(r"\d+(?:[.,]\d+)?", _strip_hemisphere(s)[0])
        if not parts or len(parts) > 3:
            return None
        last = parts[-1]
        decimals = len(re.split(r"[.,]", last)[1]) if re.search(r"[.,]", last) else 0
        scale = (1.0, 60.0, 3600.0)[len(parts) - 1]  # degrees, minutes or seconds
        if re.search(r"[\d.]\s*['′’m]\s*$", s) and len(parts) == 1:
            scale = 60.0
        elif re.search(r"[\d.]\s*([\"″”s]|'')\s*$", s) and len(parts) == 1:
            scale = 3600.0
        return math.radians(0.5 * 10.0 ** -decimals / scale)
    if kind not in UNITS or kind == "temperature" and unit not in UNITS["temperature"]:
        return None
    m = re.search(r"\d[\d.,\u2009\u202f\u00a0]*(?:[eE][+-]?\d+)?", s)
    if not m:
        return None
    token = m.group()
    exponent = 0
    e = re.search(r"[eE]([+-]?\d+)$", token)
    if e:
        exponent = int(e.group(1))
        token = token[: e.start()]
    marks = [i for i, c in enumerate(token) if c in ".,"]
    decimals = 0
    if marks:
        last = marks[-1]
        tail = token[last + 1:]
        grouped = len(marks) > 1 and token[marks[0]] == token[last] or (len(tail) == 3 and len(marks) == 1
                                                                          and token[last] == ",")
        decimals = 0 if grouped else len(tail)
    half = 0.5 * 10.0 ** (exponent - decimals)
    u = _canonical(unit)
    if kind == "temperature":
        return half * (5.0 / 9.0 if u == "F" else 1.0)
    if u not in UNITS[kind]:
        return None
    return half * UNITS[kind][u]


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
    if not 1900 <= when.year <= 2100:
        raise UnitError(f"the date {text!r} is outside the years 1900 to 2100 that labcheck's sun covers")
    try:
        return when.timestamp()
    except (OverflowError, ValueError):
        raise UnitError(f"cannot use the date {text!r}") from None


_QTY_RE = re.compile(r"^\s*(?P<num>[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?)\s*(?P<unit>.*?)\s*$")


def parse_quantity(text: str) -> tuple[float, str]:
    """Split a spec value such as ``"25 m"``, ``"10 arcsec"`` or ``"0.5 %"``.

    Returns the number and the unit text (``''`` for a bare number).
    """
    m = _QTY_RE.match(str(text))
    if not m:
        raise UnitError(f"expected a number with an optional unit such as \"25 m\", got {text!r}")
    number = float(m.group("num"))
    if not math.isfinite(number):
        raise UnitError(f"expected a finite number, got {text!r}")
    return number, _canonical(m.group("unit")) if m.group("unit") else ""


def dms_seconds_decimals(text: str) -> int | None:
    """Decimals of the seconds a D M S value was written with (``0 10 42.5`` → 1), or None if not D M S."""
    parts = re.findall(r"\d+(?:[.,](\d+))?", _strip_hemisphere(str(text))[0])
    if len(parts) != 3:
        return None
    return len(parts[-1])
