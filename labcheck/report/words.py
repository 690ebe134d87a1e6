"""The view model's words: every number, unit, angle and sentence grading hands over as data
(:mod:`labcheck.base.phrase`) becomes text here, once, for the sheet, the terminal, results.json and PDFs.

Report layer.  :func:`worded` turns a graded record into the record the outputs show (plain JSON data);
:func:`word` words one value.
"""

from __future__ import annotations

import math
from datetime import datetime, timezone

from labcheck.base.phrase import DMS, Clock, Number, ObsValue, Percent, Phrase, StepDecimals, StepValue, Value
from labcheck.base.units import UNITS, from_si

__all__ = ["word", "worded", "step_decimals", "format_value", "format_fixed", "format_dms", "grouped"]

_TYPES = (Phrase, Value, StepValue, StepDecimals, ObsValue, Percent, Number, DMS, Clock)
_TYPE_SET = frozenset(_TYPES)


def step_decimals(d: StepDecimals) -> int:
    """Decimals to show a step's values with: one more than the tolerance's resolution around the basis
    (worked out once per :class:`StepDecimals`)."""
    if d.decimals is None:
        d.decimals = _step_decimals(d)
    return d.decimals


def _step_decimals(d: StepDecimals) -> int:
    if d.relative is not None:
        basis = None if d.basis_si is None else float(from_si(d.basis_si, d.unit, d.kind))
        if not basis:
            return 6
        resolution = d.relative * abs(basis)
    else:
        resolution = float(from_si(d.absolute_si, d.unit, d.kind)) if d.kind in UNITS else d.absolute_si
    if not resolution or not math.isfinite(resolution):
        return 6
    return int(min(12, max(0, math.ceil(-math.log10(resolution)) + 1)))


def word(x):
    """One value as text (a :class:`StepDecimals` as its number of decimals); anything else unchanged."""
    if isinstance(x, Phrase):
        return x.template.format(**{name: word(v) for name, v in x.args})
    if isinstance(x, Value):
        return format_value(x.si, x.unit, x.kind, x.digits)
    if isinstance(x, StepValue):
        if x.si is None:
            return "—"
        d = x.decimals
        return format_fixed(float(from_si(x.si, d.unit, d.kind)), step_decimals(d), d.unit)
    if isinstance(x, StepDecimals):
        return step_decimals(x)
    if isinstance(x, ObsValue):
        if x.kind == "choice":
            return x.choices[int(round(x.si))]
        if x.kind == "datetime":
            return datetime.fromtimestamp(x.si, timezone.utc).strftime("%Y-%m-%d %H:%M:%S UTC")
        return format_value(x.si, x.unit, x.kind, 9 if x.hemisphere else x.digits)
    if isinstance(x, Percent):
        return f"{x.value:.1f} %" if x.value >= 1 else f"{x.value:.2g} %"
    if isinstance(x, Number):
        return format(x.value, x.spec)
    if isinstance(x, DMS):
        return format_dms(x.si, x.decimals)
    if isinstance(x, Clock):
        return x.when.strftime(x.fmt)
    return x


def worded(obj):
    """A record (dicts and lists) with every phrase and value in it worded, in place (a record is built fresh
    for each submission), and returned; other values are kept as they are.  Walked with plain type tests:
    a taped baseline's record has about a thousand values."""
    t = type(obj)
    if t is dict or t is list:
        for k, v in (obj.items() if t is dict else enumerate(obj)):
            tv = type(v)
            if tv in _TYPE_SET:
                obj[k] = word(v)
            elif tv is dict or tv is list:
                worded(v)
        return obj
    if t in _TYPE_SET:
        return word(obj)
    return obj


# ---------------------------------------------------------------- the formatters

def format_value(value_si: float | None, unit: str, kind: str, digits: int = 4) -> str:
    """Format an SI value in ``unit`` with ``digits`` significant figures.

    Used by the renderers; a template never formats numbers itself.
    """
    if value_si is None or not math.isfinite(value_si):
        return "—"
    if kind == "angle" and unit == "dms":  # degrees, minutes, seconds: never "92.0053 dms"
        return format_dms(value_si, max(0, min(3, digits - 6)))
    v = from_si(value_si, unit, kind) if kind in UNITS else value_si
    if not math.isfinite(v):
        return "—"
    if abs(v) < 1e-12:  # float noise of an exact zero (identical readings' scatter), never 8.3e-16
        v = 0.0
    if v == 0:
        text = "0"
    else:
        magnitude = math.floor(math.log10(abs(v)))
        decimals = max(0, digits - 1 - magnitude)
        text = f"{v:.{decimals}f}"
    return f"{text} {unit}".strip() if unit not in ("1", "") else text


def format_dms(angle_rad: float, seconds_decimals: int = 0) -> str:
    """An angle as D°MM′SS″ with ``seconds_decimals`` decimals of seconds (``92°00′53″``, ``−0°11′20.5″``)."""
    if angle_rad is None or not math.isfinite(angle_rad):
        return "—"
    total = round(abs(math.degrees(angle_rad)) * 3600.0, seconds_decimals)
    d, rest = divmod(total, 3600.0)
    m, sec = divmod(rest, 60.0)
    sign = "−" if angle_rad < 0 and total > 0 else ""
    width = 2 + (seconds_decimals + 1 if seconds_decimals else 0)
    return f"{sign}{int(d)}°{int(m):02d}′{sec:0{width}.{seconds_decimals}f}″"


def format_fixed(value, decimals: int, unit: str = "") -> str:
    """A value already in ``unit`` with a fixed number of decimals, thousands grouped (:func:`grouped`), and
    the unit.

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
        text = grouped(v, decimals)
    return f"{text} {unit}" if unit and unit != "1" else text


def grouped(v: float, decimals: int) -> str:
    """``v`` with ``decimals`` decimals and its thousands grouped by a narrow no-break space (U+202F), so a
    number never breaks across lines on a sheet."""
    return f"{v:,.{decimals}f}".replace(",", "\u202f")
