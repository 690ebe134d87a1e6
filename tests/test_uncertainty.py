"""Propagated uncertainty against an independent Monte Carlo and a closed-form derivative."""

import math

import numpy as np
import pytest

from labcheck.model.chain import evaluate_chain
from labcheck.methods import METHODS
from labcheck.model.uncertainty import propagate

ARCMIN = math.radians(1 / 60)


def dip_inputs():
    obs = {"eye_height": 18.0, "dip_angle": np.array([7.30, 7.45, 7.38, 7.41, 7.36]) * ARCMIN}
    consts = {"k": 0.13, "reference_radius": 6371008.8}
    return obs, consts


def test_dip_radius_sigma_matches_the_closed_form_derivative():
    # R′ = h cos d/(1 − cos d) ≈ 2h/d²: dR′/dd = −4h/d³ (small-angle closed form, relative error
    # ~d²/12 < 1e-6 here); the mean of n readings has σ/√n.  With σ_d only (no σ_h, σ_k):
    obs, consts = dip_inputs()
    sigma_d = 20 / 3600 * math.pi / 180
    s = propagate(METHODS["dip"], obs, consts, {"dip_angle": sigma_d}, {})
    d = float(np.mean(obs["dip_angle"]))
    closed = 4 * obs["eye_height"] / d**3 * sigma_d / math.sqrt(5)
    assert s["radius_apparent"] == pytest.approx(closed, rel=1e-4)
    assert s["radius"] == pytest.approx(0.87 * closed, rel=1e-4)  # R = (1 − k) R′
    assert s["dip_mean"] == pytest.approx(sigma_d / math.sqrt(5), rel=1e-9)


@pytest.mark.parametrize("method_id", ["dip", "hidden_height"])
def test_linear_propagation_agrees_with_monte_carlo(method_id):
    # Independent check: draw every input from its distribution, recompute the chain, take the
    # sample standard deviation (20 000 draws: its own relative error is about 0.5 %).  Linear
    # propagation neglects curvature, which is small for these σ: agreement within 3 %.
    method = METHODS[method_id]
    rng = np.random.default_rng(7)
    if method_id == "dip":
        obs, consts = dip_inputs()
        sig = {"eye_height": 0.05, "dip_angle": 20 / 3600 * math.pi / 180}
    else:
        obs = {"eye_height": 14.0, "target_distance": 24000.0, "hidden_height": 6.3}
        consts = {"k": 0.13, "reference_radius": 6371008.8}
        sig = {"eye_height": 0.05, "target_distance": 20.0, "hidden_height": 0.1}
    csig = {"k": 0.02}
    linear = propagate(method, obs, consts, sig, csig)
    draws = []
    for _ in range(20000):
        o = {n: v + rng.normal(0, sig[n], np.shape(v)) for n, v in obs.items()}
        c = {**consts, "k": consts["k"] + rng.normal(0, csig["k"])}
        draws.append(evaluate_chain(method, o, c).expected["radius"])
    assert linear["radius"] == pytest.approx(float(np.std(draws, ddof=1)), rel=0.03)


def test_no_sigma_no_uncertainty():
    obs, consts = dip_inputs()
    s = propagate(METHODS["dip"], obs, consts, {}, {})
    assert s["radius"] == 0.0


def test_sigma_accuracy_rule_in_a_spec(spec):
    from dataclasses import replace

    from labcheck.model.spec import AccuracyRule
    from conftest import good_dip_rows, grade_rows

    sigma_rule = AccuracyRule(4, 2.0, 4.0, "sigma", "full points within 2 sigma")
    rec = grade_rows(replace(spec, accuracy=sigma_rule), good_dip_rows())
    acc = rec["accuracy"]["dip"]
    assert acc["sigma"] and acc["sigma"] > 0
    expected_fraction = 1.0 if acc["sigmas_off"] <= 2 else max(0.0, (4 - acc["sigmas_off"]) / 2)
    assert acc["points"] == pytest.approx(4 * expected_fraction, abs=1e-3)
    assert "standard deviation" in acc["explanation"]


@pytest.mark.parametrize("factor, verdict", [(1.5, "correct"), (0.6, "correct"), (3.0, "wrong"), (None, "missing")])
def test_reported_uncertainty_is_judged_against_the_propagated_one(spec, factor, verdict):
    from dataclasses import replace

    from conftest import good_dip_rows, grade_rows

    s2 = replace(spec, reported_sigma=("dip.radius",), reported_sigma_points=2.0, sigma_within_factor=2.0)
    base = grade_rows(s2, good_dip_rows())
    prop = next(s for s in base["steps"] if s["id"] == "dip.radius")["sigma"]
    assert prop and prop > 0
    rows = good_dip_rows() + ([("result", "dip.radius_sigma", f"{prop * factor:.1f}", "km")] if factor else [])
    rec = grade_rows(s2, rows)
    own = next(s for s in rec["steps"] if s["id"] == "dip.radius_sigma")
    assert own["verdict"] == verdict
    assert own["points"] == (2.0 if verdict == "correct" else 0.0)


def test_quiet_is_entered_once_and_always_restored():
    """One numpy error state per method graded: nested entries cost nothing, and numpy's own settings come
    back on the way out, exception or not."""
    import numpy as np
    import pytest as _pytest

    from labcheck.model.chain import _Quiet, quiet

    before = np.geterr()
    with quiet():
        with quiet():
            assert np.geterr()["divide"] == "ignore" and _Quiet.depth == 2
        assert np.geterr()["invalid"] == "ignore" and _Quiet.depth == 1
    assert np.geterr() == before and _Quiet.depth == 0
    with _pytest.raises(ZeroDivisionError):
        with quiet():
            1 / 0
    assert np.geterr() == before and _Quiet.depth == 0
