"""The ratio of two proportions with Katz's log interval, against statsmodels.

Sources: statsmodels (general-purpose reference library), ``confint_proportions_2indep`` with
``compare="ratio", method="log"``; D. Katz et al., Biometrics 34 (1978) 469–474 for the method.
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.stats import ratio_interval

proportion = pytest.importorskip("statsmodels.stats.proportion")


@settings(max_examples=200, deadline=None)
@given(a=st.integers(1, 500), extra_a=st.integers(0, 2000), b=st.integers(1, 500), extra_b=st.integers(0, 2000))
def test_katz_log_interval_matches_statsmodels(a: int, extra_a: int, b: int, extra_b: int) -> None:
    ratio, low, high = ratio_interval(a, a + extra_a, b, b + extra_b)
    ref_low, ref_high = proportion.confint_proportions_2indep(
        a, a + extra_a, b, b + extra_b, compare="ratio", method="log"
    )
    assert ratio == pytest.approx((a / (a + extra_a)) / (b / (b + extra_b)))
    assert (low, high) == pytest.approx((float(ref_low), float(ref_high)), rel=1e-9)
