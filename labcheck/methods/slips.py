"""The generic slips the diagnosis tries on every step: unit and factor slips of the pen.

Data only (the diagnosis that uses them is in :mod:`labcheck.grading.grade`); kept with the methods so that
the spec validator can check slip names without importing grading.  Factors are exact: 1 ft = 0.3048 m
(1959 international yard and pound agreement), 1 mi = 1609.344 m, 1 nmi = 1852 m.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["Slip", "GENERIC_SLIPS"]


@dataclass(frozen=True)
class Slip:
    """A generic slip: the reported value is ``factor`` times the right one."""

    id: str
    factor: float
    label: str
    explanation: str


_FT = 0.3048
GENERIC_SLIPS: dict[str, tuple[Slip, ...]] = {
    "length": (
        Slip("metres_for_km", 1000.0, "metres written where kilometres are asked",
             "Your value is 1000 times the right one: it looks like metres written where the unit is km."),
        Slip("km_for_metres", 0.001, "kilometres written where metres are asked",
             "Your value is 1/1000 of the right one: it looks like km written where the unit is m."),
        Slip("feet_for_metres", 1.0 / _FT, "a value in feet written as metres",
             "Your value is 3.28 times the right one: a length in feet was written as metres (1 ft = 0.3048 m)."),
        Slip("metres_for_feet", _FT, "a value in metres multiplied by 0.3048",
             "Your value is 0.3048 times the right one: a length already in metres was converted as if it were feet."),
        Slip("miles_for_km", 1000.0 / 1609.344, "a value in statute miles written as km",
             "Your value is the right one divided by 1.609: statute miles written as kilometres."),
        Slip("nmi_for_km", 1000.0 / 1852.0, "a value in nautical miles written as km",
             "Your value is the right one divided by 1.852: nautical miles written as kilometres."),
    ),
    "angle": (
        Slip("degrees_for_arcmin", 1.0 / 60.0, "degrees written where arcminutes are asked",
             "Your value is 1/60 of the right one: degrees written where the unit is arcminutes."),
        Slip("arcmin_for_degrees", 60.0, "arcminutes written where degrees are asked",
             "Your value is 60 times the right one: arcminutes written where the unit is degrees."),
        Slip("radians_for_degrees", math.pi / 180.0, "radians written where degrees are asked",
             "Your value is the right one in radians, written where degrees are asked."),
        Slip("degrees_for_radians", 180.0 / math.pi, "degrees written where radians are asked",
             "Your value is the right one in degrees, written where radians are asked."),
    ),
    "any": (
        Slip("sign_flipped", -1.0, "sign reversed", "Your value has the right size but the wrong sign."),
        Slip("doubled", 2.0, "twice the right value", "Your value is twice the right one: a factor 2 slipped in."),
        Slip("halved", 0.5, "half the right value", "Your value is half the right one: a factor 2 was lost."),
    ),
}
