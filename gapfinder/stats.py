"""Small statistics used to state evidence: score intervals for proportions.

References
----------
E. B. Wilson, "Probable inference, the law of succession, and statistical inference", Journal of
the American Statistical Association 22 (1927), 209–212.
R. G. Newcombe, "Two-sided confidence intervals for the single proportion: comparison of seven
methods", Statistics in Medicine 17 (1998), 857–872 (method 3, the score interval).
"""

from __future__ import annotations

import math
from statistics import NormalDist

__all__ = ["wilson_interval"]


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
