"""Turn a submission's rows into SI observations and reported results.

One mapping from template items to internal names; blanks are skipped; a
value that cannot be read is recorded as a problem on its row and left out,
and the rest of the submission goes on.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from labcheck.reading.ingest import RawSubmission, Row
from labcheck.model.spec import LabSpec
from labcheck.base.phrase import Value, phrase
from labcheck.base.units import UnitError, decimal_convention, read_value

__all__ = ["IDENTITY_FIELDS", "ItemSpec", "Reading", "Problem", "Submission", "normalise", "observation_keys", "result_keys"]

IDENTITY_FIELDS = {
    "student_id": "student id (as on the course roster)",
    "name": "your name",
    "group": "your group's name or number",
    "date": "date of the field work (YYYY-MM-DD)",
    "site": "where you observed",
}
_PARTS = {
    "identity": "identity", "id": "identity",
    "observation": "observation", "observations": "observation", "obs": "observation",
    "result": "result", "results": "result",
}


@dataclass(frozen=True)
class Reading:
    """A value read from a row: SI number, and the row it came from."""

    si: float
    row: int
    text: str  # value as written
    unit: str  # unit as written, or the template's unit when blank


@dataclass(frozen=True)
class Problem:
    """A row that could not be used, and why."""

    row: int | None
    item: str
    value: str
    message: str

    def as_dict(self) -> dict:
        return {"row": self.row, "item": self.item, "value": self.value, "message": self.message}


@dataclass
class Submission:
    source: str
    identity: dict[str, str] = field(default_factory=dict)
    observations: dict[str, list[Reading]] = field(default_factory=dict)  # key: item as written (name or method.name)
    results: dict[str, Reading] = field(default_factory=dict)  # key: public step key
    problems: list[Problem] = field(default_factory=list)
    notes: list[dict] = field(default_factory=list)  # {"row", "item", "note"}
    reading: list[dict] = field(default_factory=list)  # how a file or value was read: {"row", "item", "value", "message"}
    decimal: str | None = None  # the file's decimal mark, judged from all its numbers
    bad_items: set[str] = field(default_factory=set)  # items with at least one unreadable row
    unknown_items: list[str] = field(default_factory=list)  # observation and result items this lab does not have
    known_rows: int = 0  # observation and result rows whose item this lab has


@dataclass(frozen=True)
class ItemSpec:
    """How to read one observation item: its kind, template unit and checks."""

    name: str
    kind: str
    unit: str
    hemisphere: bool = False
    positive: bool = True
    limits: tuple[float, float] | None = None
    choices: tuple[str, ...] = ()


def observation_keys(spec: LabSpec) -> dict[str, ItemSpec]:
    """Item key -> how to read it, for every accepted observation item.

    Keys are the bare name, the ``method.name`` form, alternative recordings
    (e.g. ``horizon_zenith_angle``) in both forms, and constants a group may
    give for itself (its own tape's constants).
    """
    keys: dict[str, ItemSpec] = {}
    for m in spec.methods:
        for o in m.observations:
            item = ItemSpec(o.name, o.kind, spec.observations[o.name].unit, o.hemisphere, o.positive, o.limits, o.choices)
            for key in (o.name, f"{m.id}.{o.name}"):
                keys[key] = item
            for alt in o.alternatives:
                alt_item = ItemSpec(alt.name, alt.kind or o.kind, alt.unit, o.hemisphere, False)
                for key in (alt.name, f"{m.id}.{alt.name}"):
                    keys[key] = alt_item
        for const in m.constants:
            if const.overridable:
                keys[const.name] = ItemSpec(const.name, const.kind, const.unit, positive=False)
    return keys


def result_keys(spec: LabSpec) -> dict[str, str]:
    """Item key as a student may write it -> public step key.

    The public key always works; ``method.step`` works for every step; a
    bare step id works where it is not shared by two methods.
    """
    keys: dict[str, str] = {}
    for rule in spec.steps.values():
        keys[rule.key] = rule.key
        keys[f"{rule.method.id}.{rule.step.id}"] = rule.key
        if rule.key in spec.reported_sigma:  # a student's own uncertainty of this step
            keys[f"{rule.key}_sigma"] = f"{rule.key}_sigma"
    return keys


def normalise(raw: RawSubmission, spec: LabSpec, obs_keys=None, res_keys=None) -> Submission:
    """Read ``raw``'s rows against ``spec``.  Never raises for bad student data."""
    obs_keys = obs_keys if obs_keys is not None else observation_keys(spec)
    res_keys = res_keys if res_keys is not None else result_keys(spec)
    sub = Submission(raw.source)
    sub.reading = [{"row": None, "item": "", "value": "", "message": n} for n in raw.notes]
    sub.decimal = decimal_convention(
        (r.value for r in raw.rows if _PARTS.get(r.part) in ("observation", "result")), raw.decimal_hint)
    ambiguous = {
        rule.step.id for rule in spec.steps.values() if rule.key != rule.step.id
    }
    for row in raw.rows:
        if row.note:
            sub.notes.append({"row": row.number, "item": row.item, "note": row.note})
        part = _PARTS.get(row.part)
        item = row.item.strip()
        if row.issue:
            sub.problems.append(Problem(row.number, item, row.value, row.issue))
            sub.bad_items.add(item)
            continue
        if part is None:
            sub.problems.append(
                Problem(row.number, item, row.value, f"unknown part {row.part!r}; expected identity, observation or result")
            )
            continue
        if part == "identity":
            _identity(sub, row, item)
        elif part == "observation":
            _observation(sub, row, item, obs_keys)
        else:
            _result(sub, row, item, res_keys, ambiguous, spec)
    return sub


def _read(sub: Submission, row: Row, item: str, kind: str, template_unit: str, **options) -> tuple[float, str]:
    """A row's value in SI and the unit it was read in; a note on how it was read goes to ``sub.reading``."""
    si, unit, note = read_value(row.value, row.unit, kind, template_unit, decimal=sub.decimal, **options)
    if note:
        sub.reading.append({"row": row.number, "item": item, "value": row.value, "message": note})
    return si, unit


def _identity(sub: Submission, row: Row, item: str) -> None:
    key = item.lower()
    if key not in IDENTITY_FIELDS:
        sub.problems.append(
            Problem(row.number, item, row.value, f"unknown identity item; expected one of {', '.join(IDENTITY_FIELDS)}")
        )
        return
    if row.value:
        sub.identity[key] = row.value


def _observation(sub: Submission, row: Row, item: str, obs_keys) -> None:
    if item not in obs_keys:
        sub.problems.append(
            Problem(row.number, item, row.value, "unknown observation; it is kept here but not used")
        )
        sub.unknown_items.append(item)
        return
    sub.known_rows += 1
    if not row.value:
        return  # a blank template row
    spec_item: ItemSpec = obs_keys[item]
    try:
        if spec_item.kind == "choice":
            unit = ""
            si = _parse_choice(row.value, spec_item.choices)
        else:
            si, unit = _read(sub, row, item, spec_item.kind, spec_item.unit, hemisphere=spec_item.hemisphere)
    except UnitError as exc:
        sub.problems.append(Problem(row.number, item, row.value, str(exc)))
        sub.bad_items.add(item)
        return
    problem = None
    if spec_item.kind == "length" and spec_item.positive and si <= 0:
        problem = "a height or distance must be greater than zero"
    elif spec_item.limits is not None and not spec_item.limits[0] <= si <= spec_item.limits[1]:
        lo, hi = (Value(v, unit, spec_item.kind, 6) for v in spec_item.limits)
        problem = phrase("outside the physical range {lo} to {hi}", lo=lo, hi=hi)
    if problem:
        sub.problems.append(Problem(row.number, item, row.value, problem))
        sub.bad_items.add(item)
        return
    sub.observations.setdefault(item, []).append(Reading(si, row.number, row.value, unit))


def _parse_choice(text: str, choices: tuple[str, ...]) -> float:
    word = text.strip().lower()
    if word not in choices:
        raise UnitError(f"expected one of {', '.join(choices)}, got {text!r}")
    return float(choices.index(word))


def _result(sub: Submission, row: Row, item: str, res_keys, ambiguous, spec: LabSpec) -> None:
    if item not in res_keys:
        if item in ambiguous:
            options = [r.key for r in spec.steps.values() if r.step.id == item]
            msg = f"ambiguous: this lab has two methods with this step; write {' or '.join(options)}"
        else:
            msg = f"unknown result; expected one of {', '.join(spec.steps)}"
        sub.problems.append(Problem(row.number, item, row.value, msg))
        sub.unknown_items.append(item)
        return
    sub.known_rows += 1
    if not row.value:
        return
    key = res_keys[item]
    rule = spec.steps[key[: -len("_sigma")] if key.endswith("_sigma") and key not in spec.steps else key]
    try:
        si, unit = _read(sub, row, item, rule.step.kind, rule.unit, one_to_n="1:N" in rule.step.label)
    except UnitError as exc:
        sub.problems.append(Problem(row.number, item, row.value, str(exc)))
        sub.bad_items.add(key)
        return
    if key in sub.results:
        sub.problems.append(
            Problem(row.number, item, row.value, f"reported twice (also row {sub.results[key].row}); this later value is used")
        )
    sub.results[key] = Reading(si, row.number, row.value, unit)
