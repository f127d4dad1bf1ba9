"""The Wilson score interval against statsmodels and Newcombe's worked examples.

Sources:
- statsmodels (general-purpose reference library): ``statsmodels.stats.proportion.proportion_confint``
  with ``method="wilson"`` — the binding check.
- R. G. Newcombe, "Two-sided confidence intervals for the single proportion: comparison of seven
  methods", Statistics in Medicine 17 (1998) 857–872, score method (method 3): 81/263 → 0.2553–0.3662,
  15/148 → 0.0624–0.1605, 0/20 → 0.0000–0.1611, 1/29 → 0.0061–0.1718. These four values are recalled
  from memory of that paper (as the issue states them); they agree with statsmodels to 4 decimals.
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.stats import wilson_interval

proportion = pytest.importorskip("statsmodels.stats.proportion")


@pytest.mark.parametrize(
    ("successes", "trials", "low", "high"),
    [(81, 263, 0.2553, 0.3662), (15, 148, 0.0624, 0.1605), (0, 20, 0.0000, 0.1611), (1, 29, 0.0061, 0.1718)],
)
def test_newcombe_1998_score_method_examples(successes: int, trials: int, low: float, high: float) -> None:
    ours = wilson_interval(successes, trials)
    assert ours == pytest.approx((low, high), abs=5e-5)


@settings(max_examples=300, deadline=None)
@given(
    trials=st.integers(1, 100_000),
    fraction=st.floats(0, 1),
    confidence=st.sampled_from([0.8, 0.9, 0.95, 0.99]),
)
def test_equals_statsmodels(trials: int, fraction: float, confidence: float) -> None:
    successes = round(fraction * trials)
    theirs = proportion.proportion_confint(successes, trials, alpha=1 - confidence, method="wilson")
    assert wilson_interval(successes, trials, confidence=confidence) == pytest.approx(theirs, abs=1e-12)


def test_no_trials_and_bad_input() -> None:
    assert wilson_interval(0, 0) == (0.0, 1.0)
    with pytest.raises(ValueError):
        wilson_interval(5, 3)
    with pytest.raises(ValueError):
        wilson_interval(1, 3, confidence=1.0)
