"""Small statistics used to state evidence: score intervals for proportions.

References
----------
E. B. Wilson, "Probable inference, the law of succession, and statistical inference", Journal of
the American Statistical Association 22 (1927), 209–212.
R. G. Newcombe, "Two-sided confidence intervals for the single proportion: comparison of seven
methods", Statistics in Medicine 17 (1998), 857–872 (method 3, the score interval).
R. G. Newcombe, "Interval estimation for the difference between independent proportions:
comparison of eleven methods", Statistics in Medicine 17 (1998), 873–890 (method 10, the hybrid
score interval built from two Wilson intervals).
D. Katz, J. Baptista, S. P. Azen and M. C. Pike, "Obtaining confidence intervals for the risk ratio
in cohort studies", Biometrics 34 (1978), 469–474 (the log interval for a ratio of proportions).
J. Lin, "Divergence measures based on the Shannon entropy", IEEE Transactions on Information
Theory 37 (1991), 145–151 (the Jensen–Shannon divergence).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from statistics import NormalDist

__all__ = [
    "difference_interval",
    "jensen_shannon_distance",
    "ratio_interval",
    "two_proportion_z_test",
    "wilson_interval",
]


def wilson_interval(successes: int, trials: int, *, confidence: float = 0.95) -> tuple[float, float]:
    """The Wilson score interval for a proportion ``successes / trials``.

    Unlike the normal-approximation interval it stays inside [0, 1] and behaves at 0 and n, which
    matters for rare paths. Returns (0, 1) when there are no trials.

    Examples
    --------
    >>> low, high = wilson_interval(81, 263)
    >>> round(low, 4), round(high, 4)
    (0.2553, 0.3662)
    """
    if trials < 0 or successes < 0 or successes > trials:
        raise ValueError(f"need 0 <= successes <= trials, got {successes} of {trials}")
    if not 0 < confidence < 1:
        raise ValueError(f"confidence {confidence}: give a value strictly between 0 and 1")
    if trials == 0:
        return 0.0, 1.0
    z = NormalDist().inv_cdf(0.5 + confidence / 2)
    p = successes / trials
    denominator = 1 + z * z / trials
    centre = (p + z * z / (2 * trials)) / denominator
    half = z * math.sqrt(p * (1 - p) / trials + z * z / (4 * trials * trials)) / denominator
    return max(0.0, centre - half), min(1.0, centre + half)


def jensen_shannon_distance(p: Sequence[float], q: Sequence[float], *, base: float = 2.0) -> float:
    """The Jensen–Shannon distance (square root of the divergence) between two distributions.

    Inputs are non-negative weights over the same outcomes; each is normalized to sum to 1. In
    base 2 the distance lies in [0, 1]: 0 for identical distributions, 1 for disjoint ones.

    Examples
    --------
    >>> jensen_shannon_distance([1, 0, 0], [0, 1, 0])
    1.0
    >>> round(jensen_shannon_distance([1.0, 0.0], [0.5, 0.5], base=math.e), 12)
    0.464501404022
    """
    if len(p) != len(q):
        raise ValueError("the two distributions must be over the same outcomes")
    total_p, total_q = float(sum(p)), float(sum(q))
    if total_p <= 0 or total_q <= 0 or min(p, default=0) < 0 or min(q, default=0) < 0:
        raise ValueError("each distribution needs non-negative weights with a positive sum")
    divergence = 0.0
    for a, b in zip(p, q, strict=True):
        pa, qb = a / total_p, b / total_q
        both = pa + qb  # written as 2x/(x + y), not x/m: the mean m of tiny weights can underflow to 0
        if pa > 0:
            divergence += 0.5 * pa * math.log(2 * pa / both)
        if qb > 0:
            divergence += 0.5 * qb * math.log(2 * qb / both)
    return math.sqrt(max(divergence, 0.0) / math.log(base))


def two_proportion_z_test(x1: int, n1: int, x2: int, n2: int) -> tuple[float, float]:
    """(z, two-sided p-value) for H0: the two proportions are equal, with the pooled variance.

    Examples
    --------
    >>> z, p = two_proportion_z_test(30, 100, 20, 100)
    >>> round(z, 4), round(p, 4)
    (1.633, 0.1025)
    """
    if n1 <= 0 or n2 <= 0 or not (0 <= x1 <= n1 and 0 <= x2 <= n2):
        raise ValueError(f"need 0 <= x <= n and n > 0, got {x1}/{n1} and {x2}/{n2}")
    pooled = (x1 + x2) / (n1 + n2)
    variance = pooled * (1 - pooled) * (1 / n1 + 1 / n2)
    if variance == 0:
        return 0.0, 1.0
    z = (x1 / n1 - x2 / n2) / math.sqrt(variance)
    return z, 2 * (1 - NormalDist().cdf(abs(z)))


def difference_interval(x1: int, n1: int, x2: int, n2: int, *, confidence: float = 0.95) -> tuple[float, float]:
    """Newcombe's hybrid score interval for p1 − p2, from the two Wilson intervals (method 10)."""
    p1, p2 = x1 / n1, x2 / n2
    l1, u1 = wilson_interval(x1, n1, confidence=confidence)
    l2, u2 = wilson_interval(x2, n2, confidence=confidence)
    d = p1 - p2
    return d - math.sqrt((p1 - l1) ** 2 + (u2 - p2) ** 2), d + math.sqrt((u1 - p1) ** 2 + (p2 - l2) ** 2)


def ratio_interval(
    count_a: int, total_a: int, count_b: int, total_b: int, *, confidence: float = 0.95
) -> tuple[float, float, float]:
    """(ratio, low, high): the ratio of two proportions (a / b) with Katz's log interval.

    Returns nan for the interval when either count is zero (the log interval is undefined there).

    Examples
    --------
    >>> ratio, low, high = ratio_interval(30, 100, 15, 100)
    >>> round(ratio, 2), round(low, 2), round(high, 2)
    (2.0, 1.15, 3.48)
    """
    if not (0 <= count_a <= total_a and 0 <= count_b <= total_b) or total_a == 0 or total_b == 0:
        raise ValueError(f"need 0 <= count <= total > 0, got {count_a}/{total_a} and {count_b}/{total_b}")
    if count_b == 0:
        return math.inf if count_a else math.nan, math.nan, math.nan
    ratio = (count_a / total_a) / (count_b / total_b)
    if count_a == 0:
        return ratio, math.nan, math.nan
    z = NormalDist().inv_cdf(0.5 + confidence / 2)
    spread = z * math.sqrt(1 / count_a - 1 / total_a + 1 / count_b - 1 / total_b)
    return ratio, ratio * math.exp(-spread), ratio * math.exp(spread)
