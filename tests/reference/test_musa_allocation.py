"""Test allocation by the operational profile (Musa, "Operational profiles in software-reliability
engineering", IEEE Software 10(2), 1993: tests in proportion to occurrence probability, critical
operations raised to a minimum). The figures below are our own examples, worked by hand, not taken
from the paper; apportionment by largest remainders is Hamilton's method (common practice).
"""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from gapfinder.effort import allocate_tests
from gapfinder.errors import ConfigError


def test_hand_worked_allocation() -> None:
    # Occurrence probabilities 0.5, 0.25, 0.15, 0.07, 0.03 over 40 tests: quotas 20, 10, 6, 2.8, 1.2;
    # floors 20 + 10 + 6 + 2 + 1 = 39, the one seat left goes to the largest remainder (0.8: D).
    profile = {"A": 0.5, "B": 0.25, "C": 0.15, "D": 0.07, "E": 0.03}
    assert allocate_tests(profile, 40, {}) == {"A": 20, "B": 10, "C": 6, "D": 3, "E": 1}
    # E is critical with at least 4 tests: fixed at 4, the other 36 in the ratio 50 : 25 : 15 : 7
    # (quotas 18.557, 9.278, 5.567, 2.598; floors 18 + 9 + 5 + 2 = 34; the two seats left go to the
    # largest remainders, D (0.598) and C (0.567)).
    assert allocate_tests(profile, 40, {"E": 4}) == {"A": 18, "B": 9, "C": 6, "D": 3, "E": 4}


def test_a_minimum_below_the_proportional_share_changes_nothing() -> None:
    profile = {"A": 0.5, "B": 0.3, "C": 0.2}
    assert allocate_tests(profile, 10, {"A": 2}) == allocate_tests(profile, 10, {})


def test_refusals() -> None:
    with pytest.raises(ConfigError, match="no such feature"):
        allocate_tests({"A": 1.0}, 3, {"Z": 1})
    with pytest.raises(ConfigError, match="more than"):
        allocate_tests({"A": 0.5, "B": 0.5}, 3, {"A": 2, "B": 2})


@given(
    weights=st.lists(st.integers(min_value=1, max_value=1000), min_size=1, max_size=12),
    total=st.integers(min_value=1, max_value=200),
    data=st.data(),
)
def test_allocation_adds_up_and_honours_minimums(weights: list[int], total: int, data: st.DataObject) -> None:
    names = [f"f{i}" for i in range(len(weights))]
    profile = {n: w / sum(weights) for n, w in zip(names, weights, strict=True)}
    chosen = data.draw(st.lists(st.sampled_from(names), unique=True, max_size=3))
    minimums = {n: data.draw(st.integers(min_value=0, max_value=total // 4)) for n in chosen}
    got = allocate_tests(profile, total, minimums)
    assert sum(got.values()) == total
    assert all(got[n] >= m for n, m in minimums.items())
    free = [n for n in names if n not in minimums]
    # among features without a minimum, more usage never gets fewer tests (beyond one seat of rounding)
    for a in free:
        for b in free:
            if profile[a] > profile[b]:
                assert got[a] >= got[b] - 1
