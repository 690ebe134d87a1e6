"""Uncertainty of every step, propagated from the instruments' standard deviations.

Linear propagation (the first-order law of propagation of uncertainty, as in
the GUM, JCGM 100:2008, section 5.1) with the Jacobian taken by central
finite differences through the method's own step graph:

    σ²(step) = Σᵢ (∂step/∂xᵢ · σᵢ)²

where the xᵢ are every individual reading (so the mean of n readings
carries σ/√n without being told), every single-valued observation (a value
given on n rows is a mean: σ/√n), and the constants for which the spec gives
a standard deviation (the day's refraction coefficient).  Inputs are taken
as independent.  Pure: numbers in, numbers out.
"""

from __future__ import annotations

import math

import numpy as np

from labcheck.model.chain import downstream, evaluate_chain, evaluate_downstream, quiet
from labcheck.methods import Method

__all__ = ["propagate"]

_STEP = 1e-3  # finite-difference step as a fraction of each input's σ


def propagate(method: Method, obs: dict, consts: dict, obs_sigma: dict, const_sigma: dict,
              counts: dict | None = None, *, bound: bool = False, base: dict | None = None) -> dict:
    """Standard deviation of every step [SI], or None where the step cannot be recomputed.

    With ``bound=True`` the inputs' values are bounds (half a unit of rounding, say), not standard
    deviations, and each step gets the worst case Σ|∂f/∂xᵢ|·uᵢ instead of the root sum of squares.

    ``obs_sigma``/``const_sigma`` map names to the σ of one reading (SI);
    ``counts`` gives, for single-valued observations, how many rows were
    averaged into the value.  ``base`` is the chain already evaluated at ``obs`` and ``consts``
    (``evaluate_chain(...).expected``), when the caller has it.
    """
    with quiet():  # one error state for every perturbed evaluation below
        return _propagate(method, obs, consts, obs_sigma, const_sigma, counts, bound, base)


def _propagate(method, obs, consts, obs_sigma, const_sigma, counts, bound, base) -> dict:
    counts = {} if bound else (counts or {})
    if base is None:
        base = evaluate_chain(method, obs, consts).expected
    variance = {sid: 0.0 for sid in method.step_ids}

    def accumulate(plus: dict, minus: dict, h: float, sigma: float) -> None:
        for sid in variance:
            a, b = plus.get(sid), minus.get(sid)
            if a is not None and b is not None and base.get(sid) is not None:
                try:
                    if bound:  # worst case: |c|·u summed, for bounds such as half a unit of rounding
                        variance[sid] += abs((a - b) / (2 * h) * sigma)
                    else:
                        variance[sid] += ((a - b) / (2 * h) * sigma) ** 2
                except OverflowError:  # a derivative beyond any float: no finite uncertainty
                    variance[sid] = math.inf

    for name, sigma in obs_sigma.items():
        if name not in obs or not sigma:
            continue
        value = obs[name]
        affected = downstream(method, (name,))
        if np.ndim(value):
            arr = np.asarray(value, dtype=float)
            for i in range(arr.size):
                h = sigma * _STEP
                up, down = arr.copy(), arr.copy()
                up[i] += h
                down[i] -= h
                accumulate(evaluate_downstream(method, base, {**obs, name: up}, consts, affected),
                           evaluate_downstream(method, base, {**obs, name: down}, consts, affected), h, sigma)
        else:
            s = sigma / math.sqrt(max(1, counts.get(name, 1)))
            h = s * _STEP
            accumulate(evaluate_downstream(method, base, {**obs, name: value + h}, consts, affected),
                       evaluate_downstream(method, base, {**obs, name: value - h}, consts, affected), h, s)
    for name, sigma in const_sigma.items():
        if name not in consts or not sigma:
            continue
        h = sigma * _STEP
        affected = downstream(method, (name,))
        accumulate(evaluate_downstream(method, base, obs, {**consts, name: consts[name] + h}, affected),
                   evaluate_downstream(method, base, obs, {**consts, name: consts[name] - h}, affected), h, sigma)
    return {sid: ((v if bound else math.sqrt(v)) if base.get(sid) is not None and math.isfinite(v) else None)
            for sid, v in variance.items()}
