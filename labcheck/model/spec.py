"""Lab spec files (TOML): load, validate, and resolve against the methods.

A spec error names the file, the key path and what was expected; every
error in a file is reported at once.  The keys, their types, defaults and limits are declared once
in :mod:`labcheck.model.schema` (which also makes docs/spec.md's tables and the JSON Schema); the
checks that tie a spec to its methods (units of a step's kind, constants the methods use) are here.
"""

from __future__ import annotations

import hashlib
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from labcheck.methods import METHODS, PLUGIN_ERRORS, Method, Step, load_plugins
from labcheck.base.units import UnitError, canonical_unit, parse_quantity, to_si, UNITS
from labcheck.model.schema import Key, expected_words, key_at, key_names

__all__ = ["SpecError", "QualityRule", "Tolerance", "StepRule", "AccuracyRule", "ObservationRule", "LabSpec", "load_spec", "parse_spec"]

class SpecError(Exception):
    """A lab spec is malformed.  ``problems`` lists (key path, message)."""

    def __init__(self, path: str, problems: list[tuple[str, str]]):
        self.path = path
        self.problems = problems
        lines = [f"{path}: {key}: {msg}" if key else f"{path}: {msg}" for key, msg in problems]
        super().__init__("\n".join(lines))


@dataclass(frozen=True)
class Tolerance:
    """A computation tolerance: absolute (SI) or relative (fraction)."""

    text: str
    absolute_si: float | None = None
    relative: float | None = None

    def allowed(self, value_si: float) -> float:
        """The allowed difference [SI] around ``value_si``."""
        if self.relative is not None:
            return abs(value_si) * self.relative
        return self.absolute_si or 0.0

    def matches(self, reported_si: float, target_si: float, extra_si: float = 0.0) -> bool:
        """Within the tolerance, widened by ``extra_si`` (the rounding-aware part, see grading)."""
        if not (math.isfinite(reported_si) and math.isfinite(target_si)):
            return False
        # A hair of floating-point slack so that a value exactly on the edge passes.
        slack = 1e-9 * max(abs(target_si), 1e-300)
        return abs(reported_si - target_si) <= self.allowed(target_si) + extra_si + slack

    def first_match(self, reported_si: float, targets, extra_si: float = 0.0) -> int:
        """The index of the first of ``targets`` (a float64 numpy array) that :meth:`matches`, or -1.

        The same test, element by element in the same order of operations, so the same floats and the
        same answers: ``labcheck tune`` asks it for every candidate of a step at every sweep point."""
        import numpy as np

        if not math.isfinite(reported_si) or not targets.size:
            return -1
        with np.errstate(all="ignore"):
            size = np.abs(targets)
            allowed = size * self.relative if self.relative is not None else (self.absolute_si or 0.0)
            slack = 1e-9 * np.maximum(size, 1e-300)
            ok = np.isfinite(targets) & (np.abs(reported_si - targets) <= allowed + extra_si + slack)
        first = int(np.argmax(ok))
        return first if ok[first] else -1


@dataclass(frozen=True)
class StepRule:
    key: str  # public key: 'dip_mean' or 'dip.radius'
    method: Method
    step: Step
    points: float
    tolerance: Tolerance
    unit: str


@dataclass(frozen=True)
class ObservationRule:
    name: str
    unit: str
    sigma_si: float | None
    sigma_text: str | None
    min_readings: int


@dataclass(frozen=True)
class QualityRule:
    points: float = 0.0  # 0: quality is noted on the sheet but not scored
    alpha: float = 0.01  # significance of the scatter (chi-square) tests
    outlier_alpha: float = 0.05  # significance of Grubbs' outlier test
    precision_standard: float | None = None  # forward/back agreement required, N in 1:N


@dataclass(frozen=True)
class AccuracyRule:
    points: float
    full_within: float  # relative (fraction) or absolute metres, see kind
    zero_beyond: float
    kind: str  # 'relative' or 'absolute'
    text: str

    def score_fraction(self, value_si: float, reference_si: float, sigma_si: float | None = None) -> float:
        """1 within the full band, 0 beyond the zero band, linear between.

        For bands in sigmas the distance is counted in the result's own
        propagated standard deviation ``sigma_si``.
        """
        if not math.isfinite(value_si):
            return 0.0
        err = abs(value_si - reference_si)
        if self.kind == "relative":
            err = err / abs(reference_si)
        elif self.kind == "sigma":
            if not sigma_si:
                return 0.0
            err = err / sigma_si
        if err <= self.full_within:
            return 1.0
        if err >= self.zero_beyond:
            return 0.0
        return (self.zero_beyond - err) / (self.zero_beyond - self.full_within)


@dataclass
class LabSpec:
    path: str
    sha256: str
    id: str
    title: str
    course: str
    methods: list[Method]
    methods_required: str
    safety: str
    constants_si: dict[str, float]
    constants_text: dict[str, str]
    observations: dict[str, ObservationRule]
    steps: dict[str, StepRule]  # public key -> rule, in method order
    carried_fraction: float
    pass_fraction: float
    accuracy: AccuracyRule | None  # None: the lab judges no accuracy
    mistakes: dict[str, str] = field(default_factory=dict)
    constant_sigma: dict[str, float] = field(default_factory=dict)  # SI
    quality: QualityRule = field(default_factory=QualityRule)
    shared_items: frozenset = frozenset()  # observation items groups share by design (integrity leads skip them)
    reported_sigma: tuple = ()  # step keys whose uncertainty students report (as "<key>_sigma")
    reported_sigma_points: float = 1.0
    sigma_within_factor: float = 2.0
    page_size: str = "A4"  # paper for printed sheets and PDFs ("A4" or "letter")
    source: bytes = b""  # the TOML it was read from: how a worker process rebuilds the same spec

    @property
    def observation_sigma(self) -> dict[str, float]:
        return {name: rule.sigma_si for name, rule in self.observations.items() if rule.sigma_si}

    @property
    def has_uncertainty(self) -> bool:
        return bool(self.observation_sigma or self.constant_sigma)

    def step_key(self, method_id: str, step_id: str) -> str:
        return public_step_key(self.methods, method_id, step_id)

    def steps_of(self, method: Method) -> list[StepRule]:
        return [r for r in self.steps.values() if r.method.id == method.id]

    def judges_accuracy(self, method: Method) -> bool:
        return self.accuracy is not None and method.reference is not None


def public_step_key(methods: list[Method], method_id: str, step_id: str) -> str:
    """The key a step is reported under: its id, or ``method.id`` where two methods share the id."""
    owners = [m.id for m in methods if step_id in m.step_ids]
    return f"{method_id}.{step_id}" if len(owners) > 1 else step_id


def _parse_tolerance(text, kind: str) -> Tolerance:
    if not isinstance(text, str):
        raise UnitError(f'expected a string such as "0.5 %" or "0.01 km", got {text!r}')
    number, unit = parse_quantity(text)
    if number < 0:
        raise UnitError(f"a tolerance cannot be negative, got {text!r}")
    if unit == "%":
        if kind == "percent":
            raise UnitError(
                f'this step is itself in percent: write an absolute tolerance in percentage points, e.g. "0.1 pp", got {text!r}'
            )
        if number > 100:
            raise UnitError(f"a relative tolerance above 100 % accepts any value; got {text!r}")
        return Tolerance(text, relative=number / 100.0)
    tol = _parse_absolute_tolerance(text, number, unit, kind)
    limit = _TOLERANCE_LIMITS_SI.get(kind)
    if limit is not None and tol.absolute_si > limit[0]:
        raise UnitError(f"a {kind} tolerance above {limit[1]} accepts any value; got {text!r}")
    return tol


# Tolerances beyond these accept any plausible value, so they are a typing slip (common practice).
_TOLERANCE_LIMITS_SI = {
    "length": (1.0e7, "10,000 km"),
    "angle": (math.pi / 2, "90 deg"),
    "percent": (100.0, "100 pp"),
    "ratio": (1.0e9, "1e9"),
}
MAX_MIN_READINGS = int(key_at("observations.*.min_readings").maximum)
_LAB_ID_RE = re.compile(r"[a-z][a-z0-9_]{0,63}")


def _finite_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def _parse_absolute_tolerance(text: str, number: float, unit: str, kind: str) -> Tolerance:
    if kind == "ratio" and unit in ("", "1"):
        return Tolerance(text, absolute_si=number)
    if kind == "percent" and unit == "pp":
        return Tolerance(text, absolute_si=number)
    if kind not in UNITS or unit not in UNITS[kind]:
        allowed = ", ".join(sorted(u for u in UNITS.get(kind, {}) if u != "%"))
        raise UnitError(f'expected a {kind} with a unit ({allowed}) or a relative tolerance in %, got {text!r}')
    return Tolerance(text, absolute_si=to_si(number, unit, kind))


def _parse_constant(text, kind: str, choices: tuple[str, ...] = ()) -> float:
    if kind == "choice":
        if not isinstance(text, str) or text.strip().lower() not in choices:
            raise UnitError(f"expected one of {', '.join(choices)}, got {text!r}")
        return float(choices.index(text.strip().lower()))
    if isinstance(text, (int, float)) and not isinstance(text, bool) and kind == "ratio":
        return float(text)
    if not isinstance(text, str):
        raise UnitError(f'expected a string with a unit such as "6371.0088 km", got {text!r}')
    number, unit = parse_quantity(text)
    if kind == "ratio":
        if unit not in ("", "1"):
            raise UnitError(f"expected a plain number, got {text!r}")
        return number
    if unit not in UNITS.get(kind, {}):
        raise UnitError(f"expected a {kind} with a unit ({', '.join(sorted(UNITS[kind]))}), got {text!r}")
    value = to_si(number, unit, kind)
    if not math.isfinite(value):
        raise UnitError(f"expected a finite value, got {text!r}")
    return value


class _Checker:
    """Collects problems as (key path, message) while reading a spec table."""

    def __init__(self):
        self.problems: list[tuple[str, str]] = []

    def add(self, key: str, msg: str) -> None:
        self.problems.append((key, msg))

    def get(self, table: dict, key: str, path: str, types, required=True, default=None, what=""):
        full = f"{path}.{key}" if path else key
        if key not in table:
            if required:
                self.add(full, f"missing; expected {what or _type_name(types)}")
            return default
        value = table[key]
        if not isinstance(value, types) or isinstance(value, bool) and bool not in _as_tuple(types):
            self.add(full, f"expected {what or _type_name(types)}, got {value!r}")
            return default
        if isinstance(value, float) and not math.isfinite(value):
            self.add(full, f"expected a finite number ({what or _type_name(types)}), got {value!r}")
            return default
        return value


def _declared_choice(c: "_Checker", table: dict, name: str, path: str = "") -> str:
    key = key_at(f"{path}.{name}" if path else name)
    value = c.get(table, name, path, str, required=key.required, default=key.default)
    if value not in key.choices:
        c.add(f"{path}.{name}" if path else name,
              f"expected {' or '.join(repr(x).replace(chr(39), chr(34)) for x in key.choices)}, got {value!r}")
        return key.default
    return value


def _range_words(key: Key) -> str:
    """What a number's declared limits allow, in words ("a fraction from 0 to 1", "0 or more points")."""
    lo, hi = key.minimum, key.maximum
    if lo is not None and hi is not None:
        noun = ("a whole number" if key.type == "integer" else "a probability" if key.name.endswith("alpha")
                else "a fraction" if (lo, hi) == (0, 1) else "a number")
        return f"{noun} {'between' if key.exclusive else 'from'} {lo:g} {'and' if key.exclusive else 'to'} {hi:g}"
    if lo is not None:
        if key.exclusive:
            return f"a number above {lo:g}"
        return f"{lo:g} or more" + (" points" if "points" in key.name else "")
    return f"at most {hi:g}"


def _declared_number(c: "_Checker", table: dict, schema_path: str, name: str, path: str | None = None):
    """A number key read by its declaration at ``schema_path.name``: type, default, and limits (a value out of
    its limits is reported and the default used).  ``path`` is the table's key path in messages."""
    key = key_at(f"{schema_path}.{name}" if schema_path else name)
    path = schema_path if path is None else path
    if name not in table:
        return key.default
    types = int if key.type == "integer" else (int, float)
    value = c.get(table, name, path, types, required=key.required, default=key.default,
                  what=f"{'a whole number' if key.type == 'integer' else 'a number'} ({_range_words(key)})")
    if value is None:
        return key.default
    lo, hi = key.minimum, key.maximum
    below = lo is not None and (value <= lo if key.exclusive else value < lo)
    above = hi is not None and (value >= hi if key.exclusive else value > hi)
    if below or above:
        c.add(f"{path}.{name}" if path else name, f"expected {_range_words(key)}, got {value}")
        return key.default
    return value


def _unknown_keys(c: "_Checker", table: dict, schema_path: str, path: str) -> None:
    names = key_names(schema_path)
    for k in table:
        if k not in names:
            c.add(f"{path}.{k}", f"unknown key; expected {expected_words(schema_path)}")


def _as_tuple(t):
    return t if isinstance(t, tuple) else (t,)


def _type_name(types) -> str:
    names = {str: "a string", int: "a whole number", float: "a number", list: "a list", dict: "a table", bool: "true or false"}
    return " or ".join(names.get(t, t.__name__) for t in _as_tuple(types))


def load_spec(path: str | Path) -> LabSpec:
    """Read and validate a lab spec file.  Raises :class:`SpecError`."""
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise SpecError(str(p), [("", f"cannot read the file: {exc.strerror or exc}")]) from None
    return parse_spec(data, str(p))


def parse_spec(data: bytes, path: str = "<spec>") -> LabSpec:
    """Validate spec ``data`` (TOML bytes); ``path`` (the file) is used in messages."""
    sha = hashlib.sha256(data).hexdigest()
    try:
        raw = tomllib.loads(data.decode("utf-8"))
    except UnicodeDecodeError:
        raise SpecError(path, [("", "expected a UTF-8 text file")]) from None
    except tomllib.TOMLDecodeError as exc:
        raise SpecError(path, [("", f"not valid TOML: {exc}")]) from None

    c = _Checker()
    known_top = set(key_names())
    for key in raw:
        if key not in known_top:
            c.add(key, f"unknown key; expected one of {', '.join(sorted(known_top))}")

    lab_id = c.get(raw, "id", "", str, what="a lab id string") or ""
    if lab_id and not _LAB_ID_RE.fullmatch(lab_id):
        c.add("id", f"expected a snake_case id (lower-case letters, digits and _, starting with a letter; at most "
                    f"64 characters), got {lab_id!r}")
        lab_id = ""
    title = c.get(raw, "title", "", str, what="a title string") or ""
    course = c.get(raw, "course", "", str, required=False, default=key_at("course").default) or ""
    page_size = _declared_choice(c, raw, "page_size")
    safety = c.get(raw, "safety", "", str, what="the lab's safety note as a string") or ""
    if "safety" in raw and isinstance(raw["safety"], str) and not raw["safety"].strip():
        c.add("safety", "must not be empty: every sheet carries the lab's safety note")

    load_plugins()  # methods other installed packages add (entry points), once
    method_ids = c.get(raw, "methods", "", list, what=f"a list of method ids from: {', '.join(METHODS)}") or []
    methods: list[Method] = []
    for i, mid in enumerate(method_ids):
        if not isinstance(mid, str):
            c.add(f"methods[{i}]", f"expected a method id string from: {', '.join(METHODS)}; got {mid!r}")
        elif mid not in METHODS:
            why = f" (an installed plugin names it, but {PLUGIN_ERRORS[mid]})" if mid in PLUGIN_ERRORS else ""
            c.add(f"methods[{i}]", f"unknown method {mid!r}{why}; expected one of {', '.join(METHODS)}")
        elif METHODS[mid] in methods:
            c.add(f"methods[{i}]", f"method {mid!r} is listed twice")
        else:
            methods.append(METHODS[mid])
    if "methods" in raw and isinstance(raw["methods"], list) and not raw["methods"]:
        c.add("methods", "expected at least one method")

    required = _declared_choice(c, raw, "methods_required")

    # Constants: every constant the methods use (and their references, when accuracy is
    # judged), with a unit of the right kind; a constant with a documented default may be left out.
    constants_raw = c.get(raw, "constants", "", dict, required=False, default={}) or {}
    constants_si: dict[str, float] = {}
    constants_text: dict[str, str] = {}
    declared, needed = {}, set()
    with_reference = "accuracy" in raw
    for m in methods:
        for const in m.constants:
            declared.setdefault(const.name, const)
        needed |= m.used_constants(with_reference)
    for name, const in declared.items():
        text = constants_raw.get(name, const.default)
        if text is None:
            if name in needed:
                c.add(f"constants.{name}", f"missing; expected the {const.label} ({const.description})")
            continue
        try:
            constants_si[name] = _parse_constant(text, const.kind, const.choices)
            constants_text[name] = str(text) + ("" if name in constants_raw else " (default)")
        except UnitError as exc:
            c.add(f"constants.{name}", str(exc))
    for name in constants_raw:
        if name not in declared:
            c.add(f"constants.{name}", f"unknown constant; the methods use: {', '.join(declared) or 'none'}")
    if "k" in constants_si and not 0.0 <= constants_si["k"] < 1.0:
        c.add("constants.k", f"expected a refraction coefficient between 0 and 1, got {constants_text['k']!r}")
    if "reference_radius" in constants_si and not 6.0e6 < constants_si["reference_radius"] < 6.5e6:
        c.add("constants.reference_radius", f"expected a radius of the Earth (about 6371 km), got {constants_text['reference_radius']!r}")

    # Observations: unit, sigma, min_readings per observation.
    obs_raw = c.get(raw, "observations", "", dict, required=False, default={}) or {}
    all_obs = {}
    for m in methods:
        for o in m.observations:
            all_obs.setdefault(o.name, o)
    observations: dict[str, ObservationRule] = {}
    for name in obs_raw:
        if name not in all_obs:
            c.add(f"observations.{name}", f"unknown observation; the methods use: {', '.join(all_obs)}")
    for name, o in all_obs.items():
        table = obs_raw.get(name, {})
        kp = f"observations.{name}"
        if not isinstance(table, dict):
            c.add(kp, f"expected a table with unit, sigma, min_readings; got {table!r}")
            table = {}
        _unknown_keys(c, table, "observations.*", kp)
        unit = c.get(table, "unit", kp, str, required=False, default=o.unit)
        unit = canonical_unit(unit)
        if o.kind in UNITS and unit not in UNITS[o.kind] and not (o.kind == "angle" and unit == "dms"):
            c.add(f"{kp}.unit", f"expected a {o.kind} unit ({', '.join(sorted(UNITS[o.kind]))}), got {unit!r}")
            unit = o.unit
        sigma_text = c.get(table, "sigma", kp, str, required=False, default=None, what='a standard deviation with a unit, e.g. "20 arcsec"')
        sigma_si = None
        if sigma_text is not None:
            try:
                sigma_si = _parse_constant(sigma_text, o.kind)
                if sigma_si <= 0:
                    c.add(f"{kp}.sigma", f"expected a positive standard deviation, got {sigma_text!r}")
            except UnitError as exc:
                c.add(f"{kp}.sigma", str(exc))
        min_readings = _declared_number(c, table, "observations.*", "min_readings", kp)
        observations[name] = ObservationRule(name, unit, sigma_si, sigma_text, min_readings)

    # Steps: points and tolerance for every step of every method.
    steps_raw = c.get(raw, "steps", "", dict, what="a table with one entry per step") or {}
    steps: dict[str, StepRule] = {}
    expected_keys = [public_step_key(methods, m.id, s.id) for m in methods for s in m.steps]
    for key in steps_raw:
        if key not in expected_keys:
            shown = f'steps."{key}"' if "." in key else f"steps.{key}"
            c.add(shown, f"unknown step; the steps of this lab are: {', '.join(expected_keys)}")
    for m in methods:
        for s in m.steps:
            key = public_step_key(methods, m.id, s.id)
            kp = f'steps."{key}"' if "." in key else f"steps.{key}"
            table = steps_raw.get(key)
            if table is None:
                c.add(kp, f'missing; expected a table with points and tolerance for the step "{s.label}"')
                continue
            if not isinstance(table, dict):
                c.add(kp, f"expected a table with points and tolerance, got {table!r}")
                continue
            _unknown_keys(c, table, "steps.*", kp)
            points = c.get(table, "points", kp, (int, float), what="a number of points (0 or more)")
            if isinstance(points, (int, float)) and points < key_at("steps.*.points").minimum:
                c.add(f"{kp}.points", f"expected {_range_words(key_at('steps.*.points'))}, got {points}")
            tol_text = c.get(table, "tolerance", kp, str, what='a tolerance such as "0.5 %" or "0.01 km"')
            tol = None
            if tol_text is not None:
                try:
                    tol = _parse_tolerance(tol_text, s.kind)
                except UnitError as exc:
                    c.add(f"{kp}.tolerance", str(exc))
            unit = canonical_unit(c.get(table, "unit", kp, str, required=False, default=s.unit))
            if s.kind in UNITS and unit not in UNITS[s.kind]:
                c.add(f"{kp}.unit", f"expected a {s.kind} unit ({', '.join(sorted(UNITS[s.kind]))}), got {unit!r}")
                unit = s.unit
            if points is not None and tol is not None:
                steps[key] = StepRule(key, m, s, float(points), tol, unit)

    grading = c.get(raw, "grading", "", dict, required=False, default={}) or {}
    _unknown_keys(c, grading, "grading", "grading")
    carried = _declared_number(c, grading, "grading", "carried_fraction")
    pass_fraction = _declared_number(c, grading, "grading", "pass_fraction")

    accuracy = None
    if "accuracy" in raw:
        acc_raw = c.get(raw, "accuracy", "", dict, what="a table with points, full_within and zero_beyond") or {}
        kinds = {m.step(m.result_step).kind for m in methods if m.reference is not None}
        if len(kinds) > 1:
            c.add("accuracy", f"the methods' results are of different kinds ({', '.join(sorted(kinds))}); one accuracy rule cannot judge them")
        accuracy = _parse_accuracy(acc_raw, c, kinds.pop() if len(kinds) == 1 else "length")

    unc_raw = dict(c.get(raw, "uncertainty", "", dict, required=False, default={}) or {})
    reported = unc_raw.pop("reported", list(key_at("uncertainty.reported").default))
    reported_points = unc_raw.pop("reported_points", key_at("uncertainty.reported_points").default)
    within_factor = unc_raw.pop("within_factor", key_at("uncertainty.within_factor").default)
    if not isinstance(reported, list) or any(k not in expected_keys for k in reported if isinstance(k, str)) \
            or not all(isinstance(k, str) for k in reported):
        c.add("uncertainty.reported", f"expected a list of step keys from: {', '.join(expected_keys)}; got {reported!r}")
        reported = []
    for name, value in (("reported_points", reported_points), ("within_factor", within_factor)):
        key = key_at(f"uncertainty.{name}")
        if not _finite_number(value) or (value <= key.minimum if key.exclusive else value < key.minimum):
            c.add(f"uncertainty.{name}", f"expected {_range_words(key)}, got {value!r}")
    if not _finite_number(reported_points) or reported_points < 0:
        reported_points = 0
    if not _finite_number(within_factor) or within_factor <= key_at("uncertainty.within_factor").minimum:
        within_factor = key_at("uncertainty.within_factor").default
    constant_sigma: dict[str, float] = {}
    for name, text in unc_raw.items():
        if name not in declared:
            c.add(f"uncertainty.{name}", f"unknown constant; the methods use: {', '.join(declared) or 'none'}")
            continue
        try:
            constant_sigma[name] = _parse_constant(text, declared[name].kind)
            if constant_sigma[name] <= 0:
                c.add(f"uncertainty.{name}", f"expected a positive standard deviation, got {text!r}")
        except UnitError as exc:
            c.add(f"uncertainty.{name}", str(exc))
    if reported and not (constant_sigma or any(isinstance(t, dict) and "sigma" in t for t in obs_raw.values())):
        c.add("uncertainty.reported", "grading reported uncertainties needs the instruments' sigma values")
    if accuracy is not None and accuracy.kind == "sigma" and not (constant_sigma or any(
            isinstance(t, dict) and "sigma" in t for t in obs_raw.values())):
        c.add("accuracy", "bands in sigma need standard deviations: give [observations.<name>] sigma for the instruments")

    q_raw = c.get(raw, "quality", "", dict, required=False, default={}) or {}
    _unknown_keys(c, q_raw, "quality", "quality")
    q_points = _declared_number(c, q_raw, "quality", "points")
    q_alpha = _declared_number(c, q_raw, "quality", "alpha")
    q_out = _declared_number(c, q_raw, "quality", "outlier_alpha")
    q_prec = _declared_number(c, q_raw, "quality", "precision_standard")
    quality_rule = QualityRule(float(q_points), float(q_alpha), float(q_out), float(q_prec) if q_prec else None)

    integ = c.get(raw, "integrity", "", dict, required=False, default={}) or {}
    _unknown_keys(c, integ, "integrity", "integrity")
    shared = c.get(integ, "shared", "integrity", list, required=False, default=list(key_at("integrity.shared").default),
                   what="a list of observation items")
    for i, item in enumerate(shared):
        if not isinstance(item, str):
            c.add(f"integrity.shared[{i}]", f"expected an observation item name, got {item!r}")

    mistakes = c.get(raw, "mistakes", "", dict, required=False, default={}) or {}
    from labcheck.methods.slips import GENERIC_SLIPS  # the generic slips can be reworded too

    known_mistakes = {v.id for m in methods for s in m.steps for v in s.variants}
    known_mistakes |= {slip.id for slips in GENERIC_SLIPS.values() for slip in slips} | {"digits_transposed"}
    for k, v in mistakes.items():
        if k not in known_mistakes:
            c.add(f"mistakes.{k}", f"unknown mistake id; known: {', '.join(sorted(known_mistakes))}")
        elif not isinstance(v, str) or not v.strip():
            c.add(f"mistakes.{k}", "expected the explanation text as a non-empty string")

    if c.problems:
        raise SpecError(path, c.problems)
    return LabSpec(
        source=data,
        path=path,
        sha256=sha,
        id=lab_id,
        title=title,
        course=course,
        page_size=page_size,
        methods=methods,
        methods_required=required,
        safety=safety.strip(),
        constants_si=constants_si,
        constants_text=constants_text,
        observations=observations,
        steps=steps,
        carried_fraction=float(carried),
        pass_fraction=float(pass_fraction),
        accuracy=accuracy,
        mistakes=dict(mistakes),
        constant_sigma=constant_sigma,
        quality=quality_rule,
        shared_items=frozenset(x for x in shared if isinstance(x, str)),
        reported_sigma=tuple(reported),
        reported_sigma_points=float(reported_points),
        sigma_within_factor=float(within_factor),
    )


def _parse_band(text, path: str, c: _Checker, kind: str = "length") -> tuple[float, str] | None:
    if not isinstance(text, str):
        c.add(path, f'expected a band such as "5 %" or "300 km", got {text!r}')
        return None
    try:
        number, unit = parse_quantity(text)
    except UnitError as exc:
        c.add(path, str(exc))
        return None
    if number < 0:
        c.add(path, f"expected a band of 0 or more, got {text!r}")
        return None
    if unit in ("sigma", "σ"):
        return number, "sigma"
    if unit == "%" and kind != "angle":
        return number / 100.0, "relative"
    if unit in UNITS.get(kind, {}) and math.isfinite(to_si(number, unit, kind)):
        return to_si(number, unit, kind), "absolute"
    example = '"0.5 deg" or "30 arcmin"' if kind == "angle" else '"5 %" or "300 km"'
    c.add(path, f"expected a band in {'an angle unit' if kind == 'angle' else '% or a ' + kind + ' unit'} (e.g. {example}), got {text!r}")
    return None


def _parse_accuracy(acc: dict, c: _Checker, kind: str = "length") -> AccuracyRule:
    _unknown_keys(c, acc, "accuracy", "accuracy")
    points = c.get(acc, "points", "accuracy", (int, float), what="a number of points (0 or more)", default=0)
    if points is not None and points < key_at("accuracy.points").minimum:
        c.add("accuracy.points", f"expected {_range_words(key_at('accuracy.points'))}, got {points}")
        points = 0
    full = _parse_band(acc.get("full_within"), "accuracy.full_within", c, kind) if "full_within" in acc else None
    zero = _parse_band(acc.get("zero_beyond"), "accuracy.zero_beyond", c, kind) if "zero_beyond" in acc else None
    if "full_within" not in acc:
        c.add("accuracy.full_within", 'missing; expected a band such as "5 %" or "300 km"')
    if "zero_beyond" not in acc:
        c.add("accuracy.zero_beyond", 'missing; expected a band such as "20 %" or "1300 km"')
    if full and zero:
        if full[1] != zero[1]:
            c.add("accuracy", "full_within and zero_beyond must both be in % or in sigma, or both lengths (or both angles)")
        elif zero[0] <= full[0]:
            c.add("accuracy.zero_beyond", "expected a band wider than full_within")
    if not (full and zero):
        return AccuracyRule(float(points or 0), 0.0, 1.0, "relative", "")
    text = f"full points within {acc['full_within']}, none beyond {acc['zero_beyond']}, linear between"
    if full[1] == "sigma":
        text += " (σ: your result's uncertainty propagated from the instruments' standard deviations)"
    return AccuracyRule(float(points), full[0], zero[0], full[1], text)
