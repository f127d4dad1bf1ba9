"""Usage-sampled scenarios converge to the usage chain: a chi-square goodness-of-fit test per state.

Source of the method: statistical usage testing draws tests as random walks of the usage chain
(Whittaker & Thomason, IEEE TSE 20(10), 1994). Check: for 10,000 walks, the observed successors of
each state against the chain's transition probabilities, Pearson's chi-square test from
scipy.stats.chisquare (a general-purpose reference library) at significance 0.001 per state, with
Bonferroni's correction over the states tested (common practice).
"""

from __future__ import annotations

import numpy as np
from scipy.stats import chisquare

from gapfinder.representativeness import discriminant, suite_transitions
from gapfinder.sampling import sample_walks
from gapfinder.usage_model import END, START, UsageModel


def _model() -> UsageModel:
    rng = np.random.default_rng(5)
    names = [f"f{i}" for i in range(8)]
    edges = [(START, n, int(rng.integers(1, 100))) for n in names]
    for a in names:
        edges += [(a, b, int(rng.integers(1, 60))) for b in [*names, END] if rng.random() < 0.5 or b == END]
    return UsageModel.from_transitions(edges)


def test_ten_thousand_walks_fit_the_chain() -> None:
    model = _model()
    sampled = sample_walks(model, 10_000, seed=42)
    assert sampled.truncated == 0
    counts = suite_transitions([[START, *walk, END] for walk in sampled.walks])
    tested = 0
    p_values = []
    for state in [START, *sorted(n for n in model.G.nodes if n not in (START, END))]:
        successors = sorted(model.G.successors(state))
        observed = np.array([counts.get((state, s), 0) for s in successors], dtype=float)
        if observed.sum() < 50 or len(successors) < 2:
            continue
        expected = np.array([model.G[state][s]["probability"] for s in successors]) * observed.sum()
        assert (expected >= 5).all()  # the test's condition for the chi-square approximation
        p_values.append(chisquare(observed, expected).pvalue)
        tested += 1
    assert tested >= 5
    assert min(p_values) > 0.001 / tested, p_values
    # no transition users never take
    assert all(model.G.has_edge(a, b) for (a, b) in counts)


def test_a_wrong_chain_is_rejected() -> None:
    """The same check does fail when the walks come from another chain (the test can fail)."""
    model = _model()
    other = UsageModel.from_transitions(
        [(a, b, d["count"] * (5 if b == END else 1)) for a, b, d in model.G.edges(data=True)]
    )
    counts = suite_transitions([[START, *w, END] for w in sample_walks(other, 10_000, seed=42).walks])
    state = "f0"
    successors = sorted(model.G.successors(state))
    observed = np.array([counts.get((state, s), 0) for s in successors], dtype=float)
    expected = np.array([model.G[state][s]["probability"] for s in successors]) * observed.sum()
    assert chisquare(observed, expected).pvalue < 1e-6


def test_same_seed_same_walks_and_the_discriminant_falls() -> None:
    model = _model()
    assert sample_walks(model, 50, seed=3).walks == sample_walks(model, 50, seed=3).walks
    few = suite_transitions([[START, *w, END] for w in sample_walks(model, 20, seed=3).walks])
    many = suite_transitions([[START, *w, END] for w in sample_walks(model, 5000, seed=3).walks])
    assert discriminant(model, many).bits_per_step < discriminant(model, few).bits_per_step
