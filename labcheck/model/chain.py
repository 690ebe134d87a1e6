"""Recompute a method's steps from given inputs: the one evaluation that grading,
uncertainty propagation and the tests share.  Pure: numbers in, numbers out."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from labcheck.methods import Method, Step

__all__ = ["Chain", "evaluate_chain", "evaluate_step", "evaluate_downstream", "downstream", "finite", "quiet",
           "UNBOUNDED"]


def finite(x) -> float | None:
    """A finite float, or None."""
    if x is None:
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


UNBOUNDED = ("the value is unbounded for these inputs (a ratio whose denominator is exactly zero, "
             "such as two runs that agree to the last digit)")


class _Quiet:
    """numpy's floating-point warnings off, entered once however deeply nested: grading a submission enters
    it once, and the chain, the propagation and every step evaluated inside pay nothing more (an
    ``np.errstate`` costs microseconds, and a submission evaluates steps hundreds of times)."""

    depth = 0

    def __init__(self):
        self._state = None

    def __enter__(self):
        if _Quiet.depth == 0:
            self._state = np.errstate(all="ignore")
            self._state.__enter__()
        _Quiet.depth += 1
        return self

    def __exit__(self, *exc):
        _Quiet.depth -= 1
        if self._state is not None:
            self._state.__exit__(*exc)
            self._state = None
        return False


def quiet() -> _Quiet:
    """``with quiet():`` numpy's floating-point warnings off for everything inside (entered once)."""
    return _Quiet()


def evaluate_step(step: Step, inputs: dict) -> tuple[float | None, str | None]:
    """The step's value, or None with the reason (a step raises ValueError with words for the student).

    A step whose value is +infinity gets the reason :data:`UNBOUNDED` (graded on its own terms).
    """
    raw = None
    if not _Quiet.depth:
        with quiet():
            return evaluate_step(step, inputs)
    try:
        raw = step.evaluate(inputs)
        value = finite(raw)
    except ValueError as exc:
        return None, str(exc)
    except (ZeroDivisionError, OverflowError):
        value = None
    if value is None:
        try:
            if raw is not None and float(raw) == math.inf:
                return None, UNBOUNDED
        except (TypeError, ValueError):
            pass
        return None, "the recomputation has no finite value for these inputs (check your observations)"
    return value, None


@dataclass
class Chain:
    """A method's steps recomputed from given observations and constants (SI)."""

    expected: dict  # step id -> value, or None when it cannot be recomputed
    missing_reasons: dict  # step id -> reasons it cannot be recomputed
    inputs: dict  # step id -> the inputs it was evaluated with


def evaluate_chain(method: Method, obs: dict, consts: dict, missing_obs: dict | None = None) -> Chain:
    """Recompute every step of ``method`` in order from ``obs`` and ``consts`` (pure).

    A step whose inputs are missing, or whose function finds its inputs
    inconsistent (``ValueError``), gets ``None`` and the reasons, and so do
    the steps that depend on it.  Used by grading, uncertainty propagation
    and the mistake catalogue's tests.
    """
    missing_obs = missing_obs or {}
    chain = Chain({}, {}, {})
    with quiet():  # a step's NaN or inf becomes "no finite value"
        _fill(chain, method, obs, consts, missing_obs)
    return chain


def downstream(method: Method, names) -> frozenset[str]:
    """The steps of ``method`` that depend, directly or through earlier steps, on any of ``names``."""
    affected: set[str] = set()
    touched = set(names)
    for step in method.steps:
        if any(n in touched or n in affected for n in step.inputs):
            affected.add(step.id)
    return frozenset(affected)


def evaluate_downstream(method: Method, base: dict, obs: dict, consts: dict, affected: frozenset[str]) -> dict:
    """Step values when only the steps in ``affected`` need recomputing: the others keep ``base``'s values.

    What uncertainty propagation needs for each perturbed input (pure; the same values as
    :func:`evaluate_chain` gives, for a fraction of the work when an input feeds few steps).
    """
    values = dict(base)
    step_ids = method.step_ids
    with quiet():
        for step in method.steps:
            if step.id not in affected:
                continue
            inputs = {}
            for name in step.inputs:
                if name in step_ids:
                    inputs[name] = values.get(name)
                elif name in consts:
                    inputs[name] = consts[name]
                else:
                    inputs[name] = obs.get(name)
            if any(v is None for v in inputs.values()):
                values[step.id] = None
                continue
            values[step.id] = evaluate_step(step, inputs)[0]
    return values


def _fill(chain: Chain, method: Method, obs: dict, consts: dict, missing_obs: dict) -> None:
    step_ids = method.step_ids
    for step in method.steps:
        inputs, reasons = {}, []
        for name in step.inputs:
            if name in step_ids:
                if chain.expected.get(name) is not None:
                    inputs[name] = chain.expected[name]
                else:
                    reasons.extend(chain.missing_reasons.get(name, (f"step {name} could not be recomputed",)))
            elif name in consts:
                inputs[name] = consts[name]
            elif name in obs:
                inputs[name] = obs[name]
            else:
                reasons.append(missing_obs.get(name, f"{name} was not given"))
        value = None
        if not reasons:
            value, reason = evaluate_step(step, inputs)
            if reason:
                reasons.append(reason)
        chain.expected[step.id] = value
        chain.inputs[step.id] = inputs
        if reasons:
            chain.missing_reasons[step.id] = tuple(dict.fromkeys(reasons))
