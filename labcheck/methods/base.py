"""Methods are small graphs of steps.

A :class:`Method` is an ordered list of :class:`Step` objects.  Each step
declares its inputs by name: an observation of the method, a constant of the
lab spec, or the id of an earlier step.  Because inputs are declared, the
grader can evaluate a step twice: from the reference values of its upstream
steps, and from the student's own reported upstream values (error carried
forward).  The same mechanism evaluates a step's known mistakes
(:class:`Variant`) so that a wrong value can be named.

Everything here is SI (metres, radians, degrees Celsius); units for display
are chosen by the lab spec at the edges.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import Callable

__all__ = ["Alternative", "Reference", "Observation", "Constant", "Step", "Variant", "Method", "formula_variant", "input_variant"]


@dataclass(frozen=True)
class Alternative:
    """Another way of recording an observation (a theodolite's zenith angle for a dip).

    ``transform(readings, values)`` turns readings of the alternative (SI)
    into readings of the observation (SI); ``values`` holds the method's
    observations gathered so far (declared earlier), for alternatives that
    need them (a height difference needs its tape reading to become a
    slope).  ``kind`` defaults to the observation's.
    """

    name: str
    description: str
    unit: str
    transform: Callable
    kind: str | None = None


@dataclass(frozen=True)
class Observation:
    """A field observation a group records.

    ``repeated`` observations are passed to steps as an array of readings;
    the others as the mean of whatever rows were given (with a note when
    there were several).
    """

    name: str
    label: str
    kind: str  # 'length', 'angle', ...
    unit: str  # the template's unit unless the spec says otherwise
    description: str
    repeated: bool = False
    positive: bool = True  # for lengths: a value <= 0 is a bad row
    alternatives: tuple[Alternative, ...] = ()
    hemisphere: bool = False  # angles: N/S/E/W letters accepted
    limits: tuple[float, float] | None = None  # physical range in SI; outside is a bad row
    choices: tuple[str, ...] = ()  # kind 'choice': allowed words, read as their index
    spread: bool = True  # repeated readings of one quantity (their spread is a quality note), not segments
    per: str = "span"  # what one row of a repeated observation with spread=False stands for (the sheet says so)
    default: str | None = None  # used when not given, e.g. "10 C", "1010 hPa", "south"; the sheet says so


@dataclass(frozen=True)
class Constant:
    """A constant the lab spec gives (refraction coefficient, tape constants).

    ``default`` (a spec value string such as ``"0.0000116 /C"``) is used when
    the spec leaves the constant out.  An ``overridable`` constant may also be
    given in a submission as an observation row of the same name (a group
    that used its own tape), in the unit ``unit``.
    """

    name: str
    label: str
    kind: str
    description: str
    default: str | None = None
    overridable: bool = False
    unit: str = ""
    choices: tuple[str, ...] = ()  # kind 'choice': the allowed words


@dataclass(frozen=True)
class Reference:
    """What a method's result is judged against for accuracy.

    ``func`` takes ``inputs`` (observations or constants, SI, in order) and
    returns a dict with ``value`` (SI) and any extra numbers named in
    ``extras`` as (key, label, kind, unit).  ``explanation`` tells the student
    why this is the fair reference.  ``compare`` pairs an extra with an
    observation to report their difference for the instructor.
    """

    label: str
    inputs: tuple[str, ...]
    func: Callable[..., dict]
    explanation: str
    extras: tuple[tuple[str, str, str, str], ...] = ()
    compare: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class Variant:
    """A known mistake at a step: a way of computing it that students get wrong.

    ``compute(step, inputs)`` returns the value the mistake produces, in SI,
    from the same inputs the step receives.  ``explanation`` is plain words
    for the feedback sheet; the lab spec may override it by ``id``.
    """

    id: str
    label: str
    explanation: str
    compute: Callable[["Step", dict], float]


def formula_variant(id: str, label: str, explanation: str, func: Callable[..., float]) -> Variant:
    """A mistake that replaces the step's formula by ``func`` of the same inputs (in declared order)."""
    return Variant(id, label, explanation, lambda step, inputs: func(*(inputs[n] for n in step.inputs)))


def input_variant(id: str, label: str, explanation: str, input_name: str, transform: Callable[[float], float]) -> Variant:
    """A mistake in one input (a unit mix-up, an angle mode): the right formula on a transformed input."""

    def compute(step: "Step", inputs: dict) -> float:
        if input_name not in inputs:
            return float("nan")
        changed = dict(inputs)
        changed[input_name] = transform(inputs[input_name])
        return step.evaluate(changed)

    return Variant(id, label, explanation, compute)


@dataclass(frozen=True)
class Step:
    """One step of a method.

    ``id`` is stable: it is the key students report results under.
    ``inputs`` names observations, constants or earlier step ids; ``func``
    takes them positionally, in that order (SI), and returns the step's
    value (SI).
    """

    id: str
    label: str
    kind: str  # quantity kind of the result: 'length', 'angle', 'percent', 'ratio'
    unit: str  # default display unit
    formula: str
    source: str
    inputs: tuple[str, ...]
    func: Callable[..., float]
    variants: tuple[Variant, ...] = ()
    description: str = ""
    # The reference reduction's own model error [SI] against what students may fairly use (the
    # almanac's tables, say): added to the step's tolerance.  0 where labcheck and the students'
    # method compute the same quantity.
    model_error_si: float = 0.0

    def evaluate(self, inputs: dict):
        """The step's value from ``inputs`` (a mapping that holds every declared input)."""
        return self.func(*(inputs[n] for n in self.inputs))


@dataclass(frozen=True)
class Method:
    """An ordered list of steps with the observations and constants they use."""

    id: str
    title: str
    observations: tuple[Observation, ...]
    constants: tuple[Constant, ...]
    steps: tuple[Step, ...]
    result_step: str  # the step whose value is judged for accuracy
    summary: str = ""
    reference: Reference | None = None
    # notes(obs, consts, written) -> list of (id, ok, text): method-specific remarks for the sheet's
    # quality section (e.g. how far from local apparent noon the sun was observed); ``written`` holds
    # each observation's last value as written.  Pure: no I/O.
    notes: Callable[[dict, dict, dict], list[tuple[str, bool, str]]] | None = None

    def __post_init__(self) -> None:
        known = {o.name for o in self.observations} | {c.name for c in self.constants}
        for step in self.steps:
            for name in step.inputs:
                if name not in known:
                    raise ValueError(f"method {self.id}: step {step.id} uses {name!r}, declared nowhere before it")
            known.add(step.id)
        if self.result_step not in {s.id for s in self.steps}:
            raise ValueError(f"method {self.id}: result step {self.result_step!r} is not a step")
        if self.reference is not None:
            base = {o.name for o in self.observations} | {c.name for c in self.constants}
            for name in self.reference.inputs:
                if name not in base:
                    raise ValueError(f"method {self.id}: the reference uses {name!r}, declared nowhere")

    def step(self, step_id: str) -> Step:
        for s in self.steps:
            if s.id == step_id:
                return s
        raise KeyError(step_id)

    def observation(self, name: str) -> Observation:
        for o in self.observations:
            if o.name == name:
                return o
        raise KeyError(name)

    @cached_property
    def step_ids(self) -> frozenset[str]:
        """The ids of the method's steps (a set: used for membership on every evaluation)."""
        return frozenset(s.id for s in self.steps)

    def constant(self, name: str) -> Constant:
        for c in self.constants:
            if c.name == name:
                return c
        raise KeyError(name)

    def used_constants(self, with_reference: bool) -> set[str]:
        """Constants the steps use (and the reference, when accuracy is judged)."""
        used = {n for s in self.steps for n in s.inputs if n in {c.name for c in self.constants}}
        if with_reference and self.reference is not None:
            used |= {n for n in self.reference.inputs if n in {c.name for c in self.constants}}
        return used

    def upstream_steps(self, step: Step) -> tuple[str, ...]:
        ids = set(self.step_ids)
        return tuple(n for n in step.inputs if n in ids)
