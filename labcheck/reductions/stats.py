"""Statistics for field-data quality and integrity leads.  Pure.

* Scatter against the instrument: the sample variance of n readings of one
  quantity, s², with the instrument's standard deviation σ, gives
  X = (n − 1)s²/σ², which follows χ² with n − 1 degrees of freedom when the
  readings are honest and normal.  Both tails are reported: scatter too
  large (a misread, a moved instrument) and implausibly small.
* Outliers: Grubbs' test (Grubbs 1969, Technometrics 11:1–21; ASTM E178),
  G = max|xᵢ − x̄|/s against the two-sided critical value
  G_crit = (n − 1)/√n · √(t²/(n − 2 + t²)), t the upper α/(2n) point of
  Student's t with n − 2 degrees of freedom.  The threshold grows with n.
* Terminal digits: chi-square of the last written digit's counts against
  uniform (10 classes, 9 degrees of freedom).
"""

from __future__ import annotations

import math

import numpy as np
from labcheck.reductions.distributions import chi2_cdf, chi2_sf, t_isf

__all__ = ["scatter_test", "grubbs_critical", "grubbs_test", "terminal_digit_test"]


def scatter_test(readings, sigma: float) -> dict:
    """Chi-square test of the readings' sample variance against σ².

    Returns ``n``, ``sd`` (sample standard deviation), ``statistic``,
    ``p_high`` (P of scatter at least this large) and ``p_low`` (at least this small).
    """
    x = np.asarray(readings, dtype=float)
    n = x.size
    if n < 2 or not sigma:
        return {"n": n, "sd": None, "statistic": None, "p_high": None, "p_low": None}
    sd = float(np.std(x, ddof=1))
    stat = (n - 1) * sd**2 / sigma**2
    return {"n": n, "sd": sd, "statistic": stat,
            "p_high": chi2_sf(stat, n - 1), "p_low": chi2_cdf(stat, n - 1)}


def grubbs_critical(n: int, alpha: float = 0.05) -> float:
    """Two-sided critical value of Grubbs' statistic for n readings at level α."""
    if n < 3:
        return math.inf
    t = t_isf(alpha / (2 * n), n - 2)
    return (n - 1) / math.sqrt(n) * math.sqrt(t * t / (n - 2 + t * t))


def grubbs_test(readings, alpha: float = 0.05) -> dict | None:
    """The most extreme reading if Grubbs' test flags it: index, value, G, critical value; else None."""
    x = np.asarray(readings, dtype=float)
    n = x.size
    if n < 3:
        return None
    sd = float(np.std(x, ddof=1))
    if sd == 0:
        return None
    dev = np.abs(x - x.mean())
    i = int(np.argmax(dev))
    g = float(dev[i] / sd)
    crit = grubbs_critical(n, alpha)
    return {"index": i, "value": float(x[i]), "G": g, "critical": crit} if g > crit else None


def terminal_digit_test(digits) -> dict:
    """Chi-square of last-digit counts (0–9) against uniform: statistic, p-value, counts."""
    counts = np.bincount(np.asarray(list(digits), dtype=int), minlength=10)[:10]
    n = int(counts.sum())
    if n == 0:
        return {"n": 0, "statistic": None, "p": None, "counts": counts.tolist()}
    expected = n / 10.0
    stat = float(np.sum((counts - expected) ** 2 / expected))
    return {"n": n, "statistic": stat, "p": chi2_sf(stat, 9), "counts": counts.tolist()}
