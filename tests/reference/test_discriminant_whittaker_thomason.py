"""The Whittaker-Thomason discriminant against scipy.stats.entropy, and its known properties.

Source: J. A. Whittaker and M. G. Thomason, "A Markov chain model for statistical software testing",
IEEE TSE 20(10), 1994 — D(U, T) = Σ_i π_i Σ_j p_ij log(p_ij / t_ij), π the usage chain's stationary
distribution; zero when the testing chain equals the usage chain; falling as test sequences generated
from the usage chain are added. The per-row sum is the Kullback-Leibler divergence, which
``scipy.stats.entropy(p, t, base=2)`` computes (a general-purpose reference library). The stationary
distribution is the one already checked against Grinstead & Snell (tests/reference/
test_markov_grinstead_snell.py).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import entropy

from gapfinder.representativeness import discriminant, suite_transitions
from gapfinder.usage_model import END, START, UsageModel, stationary_distribution


def _random_model(rng: np.random.Generator, features: int = 6) -> UsageModel:
    names = [f"f{i}" for i in range(features)]
    edges = []
    for source in [START, *names]:
        targets = [t for t in [*names, END] if rng.random() < 0.6 or t == END]
        if source == START:
            targets = [t for t in targets if t != END] or [names[0]]
        for target in targets:
            edges.append((source, target, int(rng.integers(1, 50))))
    return UsageModel.from_transitions(edges)


def _walks(model: UsageModel, count: int, rng: np.random.Generator) -> list[list[str]]:
    walks = []
    for _ in range(count):
        walk, state = [START], START
        while state != END:
            successors = list(model.G.successors(state))
            weights = np.array([model.G[state][s]["probability"] for s in successors])
            state = successors[int(rng.choice(len(successors), p=weights / weights.sum()))]
            walk.append(state)
        walks.append(walk)
    return walks


@pytest.mark.parametrize("seed", range(5))
def test_matches_stationary_weighted_scipy_entropy(seed: int) -> None:
    rng = np.random.default_rng(seed)
    model = _random_model(rng)
    tests = suite_transitions(_walks(model, 30, rng))
    prior = 0.5
    got = discriminant(model, tests, prior=prior).bits_per_step
    # Independent computation: dense matrices, scipy's KL divergence per row.
    states = model.states
    index = {s: i for i, s in enumerate(states)}
    P = model.transition_matrix()
    closed = P.copy()
    closed[index[END]] = 0
    closed[index[END], index[START]] = 1
    pi = stationary_distribution(closed)
    expected = 0.0
    for s in states:
        if s == END:
            continue
        i = index[s]
        arcs = [j for j in range(len(states)) if P[i, j] > 0]
        counts = np.array([prior + tests.get((s, states[j]), 0) for j in arcs], dtype=float)
        off = sum(c for (a, b), c in tests.items() if a == s and P[i, index[b]] == 0)
        t = counts / (counts.sum() + off)
        p = P[i, arcs]
        # scipy.stats.entropy normalizes its second argument; add back what that removes (off-usage mass)
        expected += pi[i] * (entropy(p, t, base=2) + _unnormalized(t))
    assert got == pytest.approx(expected, rel=1e-9, abs=1e-12)


def _unnormalized(t: np.ndarray) -> float:
    """Σ p log2(p / t) - Σ p log2(p / (t / Σt)) = -log2(Σt) when Σp = 1."""
    return -math.log2(t.sum())


def test_zero_when_the_testing_chain_equals_the_usage_chain() -> None:
    model = _random_model(np.random.default_rng(7))
    same = {(a, b): d["count"] for a, b, d in model.G.edges(data=True)}
    assert discriminant(model, same, prior=0).bits_per_step == pytest.approx(0.0, abs=1e-12)
    assert discriminant(model, {k: 3 * v for k, v in same.items()}, prior=0).bits_per_step == pytest.approx(
        0, abs=1e-12
    )


def test_infinite_without_smoothing_and_finite_with_it() -> None:
    model = _random_model(np.random.default_rng(3))
    one_walk = suite_transitions(_walks(model, 1, np.random.default_rng(3)))
    assert math.isinf(discriminant(model, one_walk, prior=0).bits_per_step)
    assert math.isfinite(discriminant(model, one_walk, prior=1).bits_per_step)
    assert math.isfinite(discriminant(model, {}, prior=1).bits_per_step)


def test_falls_as_usage_sampled_scenarios_are_added() -> None:
    """Whittaker & Thomason's argument: tests generated from the usage chain drive D towards 0."""
    rng = np.random.default_rng(11)
    model = _random_model(rng)
    walks = _walks(model, 5000, rng)
    values = [discriminant(model, suite_transitions(walks[:n])).bits_per_step for n in (5, 50, 500, 5000)]
    assert values == sorted(values, reverse=True)
    assert values[-1] < 0.02 < values[0]


def test_steps_users_never_take_raise_it() -> None:
    model = UsageModel.from_transitions([(START, "a", 9), (START, "b", 1), ("a", END, 9), ("b", END, 1)])
    like_users = {(START, "a"): 9, (START, "b"): 1, ("a", END): 9, ("b", END): 1}
    detour = {**like_users, ("a", "b"): 30}
    assert discriminant(model, detour).bits_per_step > discriminant(model, like_users).bits_per_step
    assert discriminant(model, detour).off_usage_steps == 30
