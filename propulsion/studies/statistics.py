"""Statistics of a dispersion study: rank correlation, binomial and quantile intervals.

Pure functions on arrays (no physics): Spearman's rank correlation for what drives the
spread, the Wilson interval for a probability of success, and distribution-free
confidence intervals for percentiles from order statistics.
"""

from __future__ import annotations

import math

import numpy as np
import numpy.typing as npt

__all__ = ["binomial_cdf", "quantile_interval", "spearman", "wilson_interval"]

FloatArray = npt.NDArray[np.float64]


def _ranks(values: FloatArray) -> FloatArray:
    """Ranks from 1, ties sharing their average rank."""
    sorter = np.argsort(values, kind="mergesort")
    inverse = np.empty(values.size, dtype=np.int64)
    inverse[sorter] = np.arange(values.size)
    ordered = values[sorter]
    new = np.r_[True, ordered[1:] != ordered[:-1]]
    dense = new.cumsum()[inverse]
    starts = np.r_[np.nonzero(new)[0], values.size]
    return 0.5 * (starts[dense] + starts[dense - 1] + 1)


def spearman(x: FloatArray, y: FloatArray) -> float:
    """Spearman's rank correlation coefficient: Pearson's correlation of the ranks.

    References
    ----------
    .. [1] C. Spearman, "The proof and measurement of association between two things",
       American Journal of Psychology 15(1), 72-101, 1904.
    """
    return float(np.corrcoef(_ranks(x), _ranks(y))[0, 1])


def wilson_interval(successes: int, trials: int, confidence: float = 0.95) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion.

    Parameters
    ----------
    successes, trials : int
        Counts [dimensionless].
    confidence : float
        Two-sided confidence level [dimensionless].

    Returns
    -------
    (low, high) : tuple of float
        Bounds of the interval for the probability [dimensionless].

    References
    ----------
    .. [1] E. B. Wilson, "Probable inference, the law of succession, and statistical
       inference", Journal of the American Statistical Association 22(158), 209-212, 1927.
    """
    from statistics import NormalDist

    if trials <= 0:
        return math.nan, math.nan
    z = NormalDist().inv_cdf(0.5 + confidence / 2)
    p = successes / trials
    denominator = 1 + z * z / trials
    centre = (p + z * z / (2 * trials)) / denominator
    half = z * math.sqrt(p * (1 - p) / trials + z * z / (4 * trials * trials)) / denominator
    return max(0.0, centre - half), min(1.0, centre + half)


def binomial_cdf(n: int, p: float) -> FloatArray:
    """P(B <= k) for k = 0..n of a binomial B(n, p) [dimensionless].

    The probability mass is summed in log space from the log-gamma function, so it holds
    for the hundred thousand samples of a large study.
    """
    k = np.arange(n + 1, dtype=float)
    if p <= 0.0:
        return np.ones(n + 1)
    if p >= 1.0:
        out = np.zeros(n + 1)
        out[-1] = 1.0
        return out
    log_choose = (
        math.lgamma(n + 1)
        - np.array([math.lgamma(v + 1) for v in k])
        - np.array([math.lgamma(n - v + 1) for v in k])
    )
    log_pmf = log_choose + k * math.log(p) + (n - k) * math.log1p(-p)
    pmf = np.exp(log_pmf - log_pmf.max())
    cdf = np.cumsum(pmf)
    return np.minimum(cdf / cdf[-1], 1.0)


def quantile_interval(
    values: FloatArray, fraction: float, confidence: float = 0.95
) -> tuple[float, float]:
    """Distribution-free confidence interval for a population quantile, from order
    statistics.

    The number of samples below the ``fraction`` quantile is binomial B(n, fraction), so
    the order statistics x_(l) and x_(u) bracket the quantile with probability at least
    ``confidence`` when l and u cut off (1 - confidence) / 2 of that binomial in each tail
    [1]. The ranks follow the convention of scipy.stats.quantile_test: the lower bound is
    the sample of 0-based index F^-1(a) - 1, the upper that of index F^-1(1 - a), where
    F^-1 is the binomial's quantile function and a = (1 - confidence) / 2. A bound that
    would need a sample beyond the study's ends is NaN (too few samples for that
    percentile at that confidence).

    Parameters
    ----------
    values : array
        The samples [any unit]; NaN are left out.
    fraction : float
        The quantile, e.g. 0.05 for the 5th percentile [dimensionless].
    confidence : float
        Two-sided confidence level [dimensionless].

    Returns
    -------
    (low, high) : tuple of float
        Bounds [unit of ``values``].

    References
    ----------
    .. [1] W. J. Conover, Practical Nonparametric Statistics, 3rd ed., Wiley, 1999,
       section 3.2 (confidence interval for a quantile).
    """
    x = np.sort(np.asarray(values, dtype=float))
    x = x[np.isfinite(x)]
    n = x.size
    if n == 0:
        return math.nan, math.nan
    cdf = binomial_cdf(n, fraction)
    tail = (1.0 - confidence) / 2.0
    # F^-1(q): the smallest k with P(B <= k) >= q (round-off of the sum allowed for)
    slack = 1e-12
    low_index = int(np.searchsorted(cdf, tail - slack, side="left")) - 1
    # F^-1(1 - a) as the inverse survival function: the smallest k with P(B > k) <= a
    high_index = int(np.searchsorted(cdf, 1.0 - tail - slack, side="left"))
    low = float(x[low_index]) if low_index >= 0 else math.nan
    high = float(x[high_index]) if high_index < n else math.nan
    return low, high
