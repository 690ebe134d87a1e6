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
