"""The registry of methods a lab spec can name."""

from __future__ import annotations

from .base import Alternative, Constant, Method, Observation, Reference, Step, Variant
from .baseline import BASELINE_RADIUS, ODOMETER, TAPED
from .horizon import DIP, HIDDEN_HEIGHT
from .zenith import FACE_PAIRS, GNOMON, HEIGHTING, MERIDIAN_ARC, RECIPROCAL, SEXTANT

METHODS: dict[str, Method] = {m.id: m for m in (DIP, HIDDEN_HEIGHT, TAPED, ODOMETER, BASELINE_RADIUS, GNOMON, SEXTANT, MERIDIAN_ARC, FACE_PAIRS, HEIGHTING, RECIPROCAL)}

__all__ = ["METHODS", "Alternative", "Constant", "Method", "Observation", "Reference", "Step", "Variant"]
