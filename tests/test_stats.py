"""Quality statistics against published critical values."""

import pytest

from labcheck.reductions.stats import grubbs_critical, grubbs_test, scatter_test, terminal_digit_test


@pytest.mark.parametrize("n, g", [(3, 1.1543), (4, 1.4812), (5, 1.7150), (6, 1.8871), (7, 2.0200),
                                  (8, 2.1266), (9, 2.2150), (10, 2.2900), (20, 2.7082)])
def test_grubbs_critical_values(n, g):
    # Two-sided α = 0.05 critical values of Grubbs' statistic (NIST/SEMATECH e-Handbook, Grubbs'
    # test table; from memory), printed to 4 decimals.
    assert grubbs_critical(n, 0.05) == pytest.approx(g, abs=0.0006)


def test_chi_square_scatter_quantiles():
    # χ² with 4 degrees of freedom: 0.995 quantile 14.860, 0.005 quantile 0.207 (standard χ² tables,
    # e.g. NIST/SEMATECH e-Handbook; from memory).  Five readings with (n − 1)s²/σ² = 14.860:
    import math

    sigma = 1.0
    sd = math.sqrt(14.860 / 4)
    readings = [0.0, sd * math.sqrt(2), -sd * math.sqrt(2), 0.0, 0.0]  # sample variance sd² by construction
    t = scatter_test(readings, sigma)
    assert t["statistic"] == pytest.approx(14.860, rel=1e-9)
    assert t["p_high"] == pytest.approx(0.005, abs=0.0001)


def test_grubbs_flags_and_does_not_flag():
    assert grubbs_test([10.0, 10.1, 9.9, 10.0, 10.05, 9.95, 12.0]) is not None
    assert grubbs_test([10.0, 10.1, 9.9, 10.0, 10.05]) is None
    assert grubbs_test([1.0, 1.0]) is None


def test_terminal_digits_uniform_and_preferred():
    assert terminal_digit_test(list(range(10)) * 10)["p"] == pytest.approx(1.0)
    assert terminal_digit_test([0] * 40 + [5] * 40 + list(range(10)) * 2)["p"] < 1e-10


def test_chi2_and_t_match_scipy():
    # labcheck's own incomplete gamma and beta functions (no SciPy at start-up) against scipy.stats,
    # installed for the tests only, over the degrees of freedom and tails labcheck uses.
    import numpy as np
    from scipy import stats as ref

    from labcheck.reductions.distributions import chi2_cdf, chi2_sf, t_isf, t_sf

    for k in range(1, 60):
        for x in np.geomspace(1e-4, 400, 40):
            for ours, theirs in ((chi2_sf(x, k), ref.chi2.sf(x, k)), (chi2_cdf(x, k), ref.chi2.cdf(x, k))):
                if theirs > 1e-300:
                    assert ours == pytest.approx(theirs, rel=1e-11)
    for df in range(1, 60):
        for q in np.geomspace(1e-9, 0.49, 25):
            assert t_isf(q, df) == pytest.approx(ref.t.isf(q, df), rel=1e-11)
        for t in np.linspace(-20, 20, 21):
            assert t_sf(t, df) == pytest.approx(ref.t.sf(t, df), rel=1e-11, abs=1e-300)
