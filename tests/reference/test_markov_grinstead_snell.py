"""The usage model's Markov code on the textbook's worked examples.

Source: Grinstead, C. M. and Snell, J. L., *Introduction to Probability*, 2nd revised edition,
American Mathematical Society, 1997, chapter 11:
- Example 11.13 (the drunkard's walk on 0..4, 0 and 4 absorbing): fundamental matrix
  N = [[3/2, 1, 1/2], [1, 2, 1], [1/2, 1, 3/2]], expected steps t = (3, 4, 3), absorption
  probabilities B = [[3/4, 1/4], [1/2, 1/2], [1/4, 3/4]].
- Example 11.1 / 11.19 (the Land of Oz: rain, nice, snow): fixed vector w = (2/5, 1/5, 2/5).
"""

from __future__ import annotations

import numpy as np
import pytest

from gapfinder.usage_model import UsageModel, absorbing_chain, stationary_distribution


def drunkards_walk() -> np.ndarray:
    P = np.zeros((5, 5))
    P[0, 0] = P[4, 4] = 1.0
    for i in (1, 2, 3):
        P[i, i - 1] = P[i, i + 1] = 0.5
    return P


def test_drunkards_walk_fundamental_matrix() -> None:
    chain = absorbing_chain(drunkards_walk(), [1, 2, 3], [0, 4])
    expected = np.array([[1.5, 1.0, 0.5], [1.0, 2.0, 1.0], [0.5, 1.0, 1.5]])
    np.testing.assert_allclose(chain.fundamental, expected, atol=1e-12)


def test_drunkards_walk_expected_steps() -> None:
    chain = absorbing_chain(drunkards_walk(), [1, 2, 3], [0, 4])
    np.testing.assert_allclose(chain.expected_steps, [3.0, 4.0, 3.0], atol=1e-12)


def test_drunkards_walk_absorption_probabilities() -> None:
    chain = absorbing_chain(drunkards_walk(), [1, 2, 3], [0, 4])
    expected = np.array([[0.75, 0.25], [0.5, 0.5], [0.25, 0.75]])
    np.testing.assert_allclose(chain.absorption, expected, atol=1e-12)


def test_land_of_oz_fixed_vector() -> None:
    P = np.array([[0.5, 0.25, 0.25], [0.5, 0.0, 0.5], [0.25, 0.25, 0.5]])
    np.testing.assert_allclose(stationary_distribution(P), [0.4, 0.2, 0.4], atol=1e-12)


def test_usage_model_reproduces_the_walk_as_sessions() -> None:
    """The drunkard's walk written as a usage graph: START enters at corner 2, END absorbs both
    ends. Expected steps from 2 are 4 (Example 11.13), so a session visits 4 transient states
    after START, and each end is reached with probability 1/2."""
    edges = [
        ("START", "c2", 1),
        ("c1", "END", 1),
        ("c1", "c2", 1),
        ("c2", "c1", 1),
        ("c2", "c3", 1),
        ("c3", "c2", 1),
        ("c3", "END", 1),
    ]
    model = UsageModel.from_transitions(edges)
    # From corner 2 the walk takes 4 steps in transient states (t = (3, 4, 3)): 4 events.
    assert model.expected_session_length() == pytest.approx(4.0)
    visits = {v.event: v for v in model.feature_visits()}
    # N row for state 2 in Example 11.13: (1, 2, 1) expected visits to 1, 2, 3.
    assert visits["c1"].expected_visits == pytest.approx(1.0)
    assert visits["c2"].expected_visits == pytest.approx(2.0)
    assert visits["c3"].expected_visits == pytest.approx(1.0)
    assert visits["c2"].visit_probability == pytest.approx(1.0)
