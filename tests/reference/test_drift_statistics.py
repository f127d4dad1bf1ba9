"""Drift statistics against general-purpose reference libraries and their documentation.

Sources:
- SciPy reference documentation, ``scipy.spatial.distance.jensenshannon``: ``[1, 0, 0]`` vs
  ``[0, 1, 0]`` in base 2 gives 1.0; ``[1.0, 0.0]`` vs ``[0.5, 0.5]`` gives 0.46450140402245893
  (natural log). Also compared with the function itself on random distributions.
- statsmodels, ``statsmodels.stats.proportion.proportions_ztest`` (pooled two-proportion z test)
  and ``confint_proportions_2indep(method="newcomb")`` (Newcombe 1998, method 10).
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.stats import difference_interval, jensen_shannon_distance, two_proportion_z_test

distance = pytest.importorskip("scipy.spatial.distance")
proportion = pytest.importorskip("statsmodels.stats.proportion")


def test_subnormal_weights_do_not_divide_by_zero() -> None:
    """Found by hypothesis: a weight of 5e-324 against 0 made the mean underflow to 0. The true
    distance is about 1e-162; SciPy 1.17 returns inf here, so this case is checked on its own."""
    ours = jensen_shannon_distance([0.0, 1.0, 5e-324], [0.0, 1.0, 0.0], base=2)
    assert math.isfinite(ours) and ours < 1e-100


def test_scipy_documented_values() -> None:
    assert jensen_shannon_distance([1, 0, 0], [0, 1, 0], base=2) == 1.0
    assert jensen_shannon_distance([1.0, 0.0], [0.5, 0.5], base=math.e) == pytest.approx(0.46450140402245893, abs=1e-15)


# Zero or at least 1e-6: with weights near the smallest floats SciPy's own computation under- or
# overflows (see the subnormal test above).
finite = st.one_of(st.just(0.0), st.floats(1e-6, 100))
weights = st.lists(finite, min_size=2, max_size=12)


@settings(max_examples=300, deadline=None)
@given(p=weights, data=st.data())
def test_jensen_shannon_equals_scipy(p: list[float], data: st.DataObject) -> None:
    q = data.draw(st.lists(finite, min_size=len(p), max_size=len(p)))
    if sum(p) <= 0 or sum(q) <= 0:
        return
    ours = jensen_shannon_distance(p, q, base=2)
    assert ours == pytest.approx(float(distance.jensenshannon(p, q, base=2)), abs=1e-7)
    assert 0 <= ours <= 1 + 1e-12


@settings(max_examples=300, deadline=None)
@given(n1=st.integers(1, 5000), n2=st.integers(1, 5000), f1=st.floats(0, 1), f2=st.floats(0, 1))
def test_two_proportion_test_and_interval_equal_statsmodels(n1: int, n2: int, f1: float, f2: float) -> None:
    x1, x2 = round(f1 * n1), round(f2 * n2)
    if 0 < x1 + x2 < n1 + n2:  # statsmodels returns nan when both samples are all 0 or all 1
        z, p = proportion.proportions_ztest([x1, x2], [n1, n2])
        assert two_proportion_z_test(x1, n1, x2, n2) == pytest.approx((float(z), float(p)), abs=1e-9)
    low, high = proportion.confint_proportions_2indep(x1, n1, x2, n2, method="newcomb")
    assert difference_interval(x1, n1, x2, n2) == pytest.approx((float(low), float(high)), abs=1e-9)
