"""The usage model: a weighted graph of features with START and END, read as a Markov chain.

Each session is a walk START → feature → … → END. Transition probabilities are the observed
transition counts normalised per source. With END absorbing the chain answers how long sessions
are and how often they touch each feature; closing END → START makes it recurrent and gives the
long-run share of events per feature. Preconditions: every state with an outgoing edge reaches
END (always true for graphs built from complete sessions).

References
----------
Grinstead, C. M. and Snell, J. L., *Introduction to Probability*, 2nd rev. ed., AMS, 1997,
chapter 11 (absorbing chains: Theorems 11.4-11.6; ergodic chains: fixed vectors, Section 11.3).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import networkx as nx
import numpy as np

__all__ = [
    "END",
    "START",
    "AbsorbingChain",
    "FeatureVisit",
    "UsageModel",
    "absorbing_chain",
    "stationary_distribution",
]

START = "START"
END = "END"


@dataclass(frozen=True)
class AbsorbingChain:
    """The canonical-form results for an absorbing Markov chain.

    ``fundamental`` is N = (I - Q)^-1 (expected visits to transient j starting from transient i),
    ``expected_steps`` is t = N·1 (steps before absorption), ``absorption`` is B = N·R
    (probability of ending in each absorbing state).
    """

    transient: tuple[int, ...]
    absorbing: tuple[int, ...]
    fundamental: np.ndarray
    expected_steps: np.ndarray
    absorption: np.ndarray

    def visit_probability(self) -> np.ndarray:
        """H[i, j]: probability of ever reaching transient j from transient i (i = j counts)."""
        n = self.fundamental
        diagonal = np.diag(n)
        h = n / diagonal[np.newaxis, :]
        np.fill_diagonal(h, 1.0)
        return h


def absorbing_chain(P: np.ndarray, transient: Sequence[int], absorbing: Sequence[int]) -> AbsorbingChain:
    """Fundamental matrix, expected steps and absorption probabilities of a chain.

    Examples
    --------
    The drunkard's walk on 0..4 with 0 and 4 absorbing (Grinstead & Snell, Example 11.13):

    >>> P = np.zeros((5, 5)); P[0, 0] = P[4, 4] = 1
    >>> for i in (1, 2, 3): P[i, i - 1] = P[i, i + 1] = 0.5
    >>> absorbing_chain(P, [1, 2, 3], [0, 4]).expected_steps.round(6).tolist()
    [3.0, 4.0, 3.0]
    """
    t_idx, a_idx = list(transient), list(absorbing)
    Q = P[np.ix_(t_idx, t_idx)]
    R = P[np.ix_(t_idx, a_idx)]
    identity = np.eye(len(t_idx))
    N = np.linalg.solve(identity - Q, identity)
    return AbsorbingChain(
        transient=tuple(t_idx),
        absorbing=tuple(a_idx),
        fundamental=N,
        expected_steps=N @ np.ones(len(t_idx)),
        absorption=N @ R,
    )


def stationary_distribution(P: np.ndarray) -> np.ndarray:
    """The fixed probability vector w with w P = w of an irreducible chain.

    Examples
    --------
    The Land of Oz weather (Grinstead & Snell, Example 11.1; rain, nice, snow):

    >>> P = np.array([[.5, .25, .25], [.5, 0, .5], [.25, .25, .5]])
    >>> stationary_distribution(P).round(6).tolist()
    [0.4, 0.2, 0.4]
    """
    n = P.shape[0]
    # Solve (P^T - I) w = 0 with sum(w) = 1 as one least-squares system (exact when irreducible).
    A = np.vstack([P.T - np.eye(n), np.ones((1, n))])
    b = np.zeros(n + 1)
    b[-1] = 1.0
    w, *_ = np.linalg.lstsq(A, b, rcond=None)
    w = np.clip(w, 0.0, None)
    return np.asarray(w / w.sum())


@dataclass(frozen=True)
class FeatureVisit:
    """What the model says about one feature, per session."""

    event: str
    expected_visits: float
    visit_probability: float
    expected_sessions_to_first: float
    long_run_share: float


class UsageModel:
    """A usage graph ``G`` (networkx DiGraph) with ``count`` and ``probability`` on each edge.

    Examples
    --------
    >>> model = UsageModel.from_transitions([("START", "a", 2), ("a", "END", 1), ("a", "b", 1),
    ...                                      ("b", "END", 1)])
    >>> round(model.expected_session_length(), 6)
    1.5
    """

    def __init__(self, G: nx.DiGraph) -> None:
        self.G = G
        self._chain: AbsorbingChain | None = None

    @classmethod
    def from_transitions(cls, transitions: Iterable[tuple[str, str, int]]) -> UsageModel:
        """Build the graph from (source, target, count) rows."""
        G = nx.DiGraph()
        G.add_node(START)
        G.add_node(END)
        for source, target, count in transitions:
            if count > 0:
                # An event literally named START or END shares its name with a frame state: its
                # transitions are added to the state's, so the model does not depend on row order.
                if G.has_edge(source, target):
                    G[source][target]["count"] += int(count)
                else:
                    G.add_edge(source, target, count=int(count))
        for node in G.nodes:
            total = sum(d["count"] for _, _, d in G.out_edges(node, data=True))
            for _, _, d in G.out_edges(node, data=True):
                d["probability"] = d["count"] / total
                d["cost"] = -math.log(d["probability"])
        return cls(G)

    @property
    def states(self) -> list[str]:
        """START, the features in name order, END: the row order of ``transition_matrix``."""
        features = sorted(n for n in self.G.nodes if n not in (START, END))
        return [START, *features, END]

    def transition_matrix(self) -> np.ndarray:
        """P over ``states`` with END absorbing (P[END, END] = 1)."""
        states = self.states
        index = {s: i for i, s in enumerate(states)}
        P = np.zeros((len(states), len(states)))
        for source, target, d in self.G.edges(data=True):
            if source != END:
                P[index[source], index[target]] = d["probability"]
        P[index[END], index[END]] = 1.0
        return P

    def chain(self) -> AbsorbingChain:
        """The absorbing-chain analysis with END the only absorbing state (cached)."""
        if self._chain is None:
            n = len(self.states)
            self._chain = absorbing_chain(self.transition_matrix(), range(n - 1), [n - 1])
        return self._chain

    def expected_session_length(self) -> float:
        """Expected number of feature events in a session (steps from START, less START itself)."""
        if self.G.out_degree(START) == 0:
            return 0.0
        return float(self.chain().expected_steps[0] - 1.0)

    def feature_visits(self) -> list[FeatureVisit]:
        """Per feature: expected visits and visit probability per session, sessions until it first
        appears (geometric mean 1 / p), and its long-run share of events."""
        if self.G.out_degree(START) == 0:
            return []
        chain = self.chain()
        states = self.states
        h = chain.visit_probability()[0]
        visits = chain.fundamental[0]
        recurrent = self.transition_matrix()
        recurrent[-1, :] = 0.0
        recurrent[-1, 0] = 1.0  # END -> START closes the chain
        w = stationary_distribution(recurrent)
        feature_mass = w[1:-1].sum()
        rows = []
        for j, event in enumerate(states[1:-1], start=1):
            p = float(h[j])
            rows.append(
                FeatureVisit(
                    event=event,
                    expected_visits=float(visits[j]),
                    visit_probability=p,
                    expected_sessions_to_first=(1.0 / p) if p > 0 else math.inf,
                    long_run_share=float(w[j] / feature_mass) if feature_mass > 0 else 0.0,
                )
            )
        return rows

    def most_probable_paths(self, k: int = 5, *, max_length: int = 50) -> list[tuple[list[str], float]]:
        """The k most probable complete START→END paths without repeated features (Yen's
        algorithm on edge costs −log p), each with its probability."""
        if not (self.G.has_node(START) and self.G.has_node(END)) or self.G.out_degree(START) == 0:
            return []
        try:
            candidates = nx.shortest_simple_paths(self.G, START, END, weight="cost")
            best = []
            for path in itertools.islice(candidates, k):
                if len(path) - 2 > max_length:
                    continue
                cost = sum(self.G.edges[a, b]["cost"] for a, b in itertools.pairwise(path))
                best.append((path[1:-1], math.exp(-cost)))
            return best
        except nx.NetworkXNoPath:
            return []
