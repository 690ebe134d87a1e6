"""Values and sentences as data, for grading to hand to the report layer, which words them.

Base layer: imports nothing of labcheck's.  Grading never formats a number, a unit or an angle: it builds
these records (a sentence's template with typed values in it, or a typed value alone), and
:mod:`labcheck.report.words` turns them into the text of the sheet, the terminal table, results.json and
the PDF, once, the same way everywhere.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Phrase", "Value", "StepValue", "StepDecimals", "ObsValue", "Percent", "Number", "DMS", "Clock", "phrase"]


@dataclass(slots=True)
class Phrase:
    """A sentence or a part of one: ``template`` with ``{name}`` fields, filled from ``args`` when worded.
    An argument may itself be a phrase or one of the values below."""

    template: str
    args: tuple = ()  # (name, value) pairs


def phrase(template: str, **args) -> Phrase:
    return Phrase(template, tuple(args.items()))


@dataclass(slots=True)
class Value:
    """A quantity in SI, shown in ``unit`` to ``digits`` significant figures."""

    si: float
    unit: str
    kind: str
    digits: int = 6


@dataclass(slots=True)
class StepDecimals:
    """How many decimals a step's values are shown with: one more than its tolerance resolves around
    ``basis_si``, so that a difference the grader acts on is always visible.  The tolerance is a relative
    fraction or an absolute SI value; ``unit`` and ``kind`` are the step's display unit and kind."""

    unit: str
    kind: str
    relative: float | None
    absolute_si: float | None
    basis_si: float | None
    decimals: int | None = None  # filled in once by the report layer (shared by a value and the student's)


@dataclass(slots=True)
class StepValue:
    """A step's value in SI, shown in the step's unit with the step's decimals ("—" when None)."""

    si: float | None
    decimals: StepDecimals


@dataclass(slots=True)
class ObsValue:
    """An observation's value in SI as shown: a choice's word, a date and time, coordinates to 0.000001°
    or better, others to ``digits`` figures, in the lab's unit."""

    si: float
    unit: str
    kind: str
    hemisphere: bool = False
    choices: tuple = ()
    digits: int = 6


@dataclass(slots=True)
class Percent:
    """A percentage: one decimal from 1 %, two significant figures below."""

    value: float


@dataclass(slots=True)
class Number:
    """A plain number with a format spec (``".2g"``, ``".1f"``, ``",.0f"``, ``"+.2f"``; ``""`` as Python
    writes it)."""

    value: float
    spec: str = "g"


@dataclass(slots=True)
class DMS:
    """An angle in SI (radians) as degrees, minutes and seconds, with ``decimals`` decimals of a second."""

    si: float
    decimals: int


@dataclass(slots=True)
class Clock:
    """A moment (an aware datetime) shown with a strftime ``fmt`` ("%H:%M", "%H:%M:%S UTC")."""

    when: object
    fmt: str
