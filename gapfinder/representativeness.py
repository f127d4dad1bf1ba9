"""How representative the suite is of real usage, as one number: the discriminant of Whittaker & Thomason.

The usage chain is the usage model (START → features → END, estimated from field sessions). The
testing chain has the same states and is estimated from the suite's paths: each test is a walk
START → its steps → END. The discriminant is the expected log-likelihood ratio, per step, of a
user's step under the usage chain against the testing chain,

    D(U, T) = Σ_i π_i Σ_j p_ij log2(p_ij / t_ij)   (bits per step),

with π the stationary distribution of the usage chain made recurrent by closing END → START (the
long run of sessions following one another). It is 0 when the tests move exactly as users do and
grows as the tests' steps drift away from the users'. Every transition users take but no test does
would make it infinite; as Whittaker & Thomason describe, the testing chain therefore starts from the
usage chain's arcs with a small count each (``prior``, 1 by default, from memory of the paper's
initialization) before the tests' transitions are added, so the number is finite and falls as tests
that walk like users are added.

Reference: J. A. Whittaker and M. G. Thomason, "A Markov chain model for statistical software
testing", IEEE Transactions on Software Engineering 20(10), 1994, pp. 812-824.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from gapfinder.usage_model import END, START, UsageModel, stationary_distribution
from gapfinder.workspace import Workspace

if TYPE_CHECKING:
    from gapfinder.coverage import TestPaths

__all__ = [
    "Discriminant",
    "describe_discriminant",
    "discriminant",
    "suite_discriminant",
    "suite_transition_counts",
    "suite_transitions",
]


@dataclass(frozen=True)
class Discriminant:
    """The discriminant and what it was computed from."""

    bits_per_step: float
    prior: float
    usage_arcs: int
    arcs_tested: int  # usage arcs at least one test walks
    test_steps: int  # transitions of the tests on the usage chain's states
    off_usage_steps: int  # of those, steps along arcs users never take

    def as_dict(self) -> dict[str, object]:
        return {
            "bits_per_step": self.bits_per_step,
            "likelihood_ratio_per_step": 2.0**self.bits_per_step if math.isfinite(self.bits_per_step) else None,
            "prior": self.prior,
            "usage_arcs": self.usage_arcs,
            "arcs_tested": self.arcs_tested,
            "test_steps": self.test_steps,
            "off_usage_steps": self.off_usage_steps,
            "meaning": describe_discriminant(self.bits_per_step),
        }


def describe_discriminant(bits: float) -> str:
    """The discriminant in words."""
    if not math.isfinite(bits):
        return "users take transitions no test takes and no prior was given: the suite cannot represent them"
    if bits < 1e-9:
        return "the tests step exactly as users do"
    return (
        f"step for step, users' sessions are {2.0**bits:,.2f} times (geometric mean) as likely under the usage "
        f"chain as under the chain the tests walk ({bits:.3f} bits per step); 0 would mean the tests move as users "
        "do, and adding tests that walk like users lowers it"
    )


def suite_transitions(paths: Iterable[Sequence[str | None]]) -> dict[tuple[str, str], int]:
    """Transition counts of framed test paths (START … END); None marks a step matching no event.

    >>> suite_transitions([["START", "a", "b", "END"], ["START", "a", "END"]])[("START", "a")]
    2
    """
    counts: dict[tuple[str, str], int] = {}
    for path in paths:
        for source, target in itertools.pairwise(path):
            if source is None or target is None:
                continue  # a step matching no field event breaks the walk there
            counts[(source, target)] = counts.get((source, target), 0) + 1
    return counts


def suite_transition_counts(ws: Workspace, tests: TestPaths | None = None) -> dict[tuple[str, str], int]:
    """Transition counts of the workspace's stored suite (the tests that count), by event name;
    ``tests`` when the caller has loaded them already."""
    from gapfinder.coverage import load_test_paths
    from gapfinder.paths import feature_names

    names = feature_names(ws.con)
    tests = tests or load_test_paths(ws)
    return suite_transitions([[names[i] if 0 <= i < len(names) else None for i in framed] for framed in tests.framed])


def suite_discriminant(ws: Workspace, tests: TestPaths | None = None, *, prior: float = 1.0) -> Discriminant:
    """The discriminant of the workspace's stored suite against its usage model."""
    from gapfinder.usage_profile import load_usage_model

    return discriminant(load_usage_model(ws.con), suite_transition_counts(ws, tests), prior=prior)


def discriminant(usage: UsageModel, tests: dict[tuple[str, str], int], *, prior: float = 1.0) -> Discriminant:
    """D(U, T) in bits per step; see the module docstring.

    ``tests`` holds the testing chain's transition counts by (source, target) name; transitions
    between states the usage chain does not have are ignored (they carry no usage weight).

    Examples
    --------
    >>> model = UsageModel.from_transitions([("START", "a", 3), ("START", "b", 1), ("a", "END", 3), ("b", "END", 1)])
    >>> tests = {("START", "a"): 3, ("START", "b"): 1, ("a", "END"): 3, ("b", "END"): 1}
    >>> discriminant(model, tests, prior=0).bits_per_step
    0.0
    """
    if prior < 0:
        raise ValueError("prior must be 0 or more")
    states = usage.states
    index = {s: i for i, s in enumerate(states)}
    n = len(states)
    P = usage.transition_matrix()
    closed = P.copy()
    closed[index[END], :] = 0.0
    closed[index[END], index[START]] = 1.0
    pi = stationary_distribution(closed)
    usage_mask = P > 0
    usage_mask[index[END], index[END]] = False  # END's absorbing loop is the closing arc here
    counts = np.where(usage_mask, prior, 0.0)
    test_steps = off_usage = 0
    tested = np.zeros((n, n), dtype=bool)
    for (source, target), count in tests.items():
        i, j = index.get(source), index.get(target)
        if i is None or j is None or count <= 0 or source == END:
            continue
        counts[i, j] += count
        test_steps += count
        if usage_mask[i, j]:
            tested[i, j] = True
        else:
            off_usage += count
    total = 0.0
    for i in range(n):
        if i == index[END]:
            continue  # END → START is certain in both chains: no divergence
        row = usage_mask[i]
        if not row.any() or pi[i] == 0:
            continue
        p = P[i, row]
        t_total = counts[i].sum()
        if t_total == 0:
            return Discriminant(math.inf, prior, int(usage_mask.sum()), int(tested.sum()), test_steps, off_usage)
        t = counts[i, row] / t_total
        with np.errstate(divide="ignore"):
            terms = p * (np.log2(p) - np.log2(t))
        total += pi[i] * float(terms.sum())
    return Discriminant(float(max(total, 0.0)), prior, int(usage_mask.sum()), int(tested.sum()), test_steps, off_usage)
