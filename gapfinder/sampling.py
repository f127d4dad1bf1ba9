"""Usage-sampled scenarios: complete sessions drawn as random walks of the usage chain.

Statistical usage testing draws test cases from the usage chain itself (START → … → END, each step
chosen with the probability users take it), so that a suite's transition frequencies converge to
the users' and its results estimate field reliability (Whittaker & Thomason, "A Markov chain model
for statistical software testing", IEEE TSE 20(10), 1994). The walks are drawn all at once, one
step of every walk per iteration (numpy), from a seeded generator: the same seed gives the same
walks.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass

import numpy as np

from gapfinder.errors import ConfigError
from gapfinder.usage_model import END, START, UsageModel

__all__ = ["SampledWalks", "sample_walks"]


@dataclass(frozen=True)
class SampledWalks:
    """Walks as state names without START/END, how many reached END within ``max_steps``."""

    walks: list[tuple[str, ...]]
    truncated: int
    seed: int

    def distinct(self) -> list[tuple[tuple[str, ...], int]]:
        """Distinct walks with how many times each was drawn, most drawn first (ties by path)."""
        return sorted(Counter(self.walks).items(), key=lambda kv: (-kv[1], kv[0]))


def sample_walks(model: UsageModel, count: int, *, seed: int = 1, max_steps: int = 200) -> SampledWalks:
    """``count`` random walks from START to END of the usage chain.

    >>> model = UsageModel.from_transitions([("START", "a", 1), ("a", "END", 1)])
    >>> sample_walks(model, 2).walks
    [('a',), ('a',)]
    """
    if count < 1:
        raise ConfigError(f"--sample {count}: give 1 or more scenarios")
    states = model.states
    P = model.transition_matrix()
    cumulative = np.cumsum(P, axis=1)
    cumulative[:, -1] = np.maximum(cumulative[:, -1], 1.0)  # rounding never leaves a row short of 1
    end = states.index(END)
    rng = np.random.default_rng(seed)
    current = np.full(count, states.index(START), dtype=np.int64)
    steps = np.full((count, max_steps), -1, dtype=np.int64)
    for t in range(max_steps):
        active = current != end
        if not active.any():
            break
        u = rng.random(int(active.sum()))
        rows = cumulative[current[active]]
        chosen = np.minimum((rows < u[:, None]).sum(axis=1), len(states) - 1)
        current[active] = chosen
        steps[active, t] = chosen
    truncated = int((current != end).sum())
    names = np.array(states, dtype=object)
    walks = []
    for row in steps:
        visited = row[(row >= 0) & (row != end)]
        walks.append(tuple(names[visited].tolist()))
    return SampledWalks(walks, truncated, seed)
