"""Session sets of gaps: the distinct paths that hold each candidate, weighted by their sessions,
for journey families (Jaccard index of two sets) and example sessions.

Gap evidence gives them as bit masks (``gap_evidence``: a bit per candidate of a block and distinct
path); ``MaskedSessionSets`` keeps those masks, with each set's total sessions, and lists a set's
paths, or a boolean per path, only when asked. ``session_sets`` builds plain sets from
(candidate, path) pairs, for callers that match with ``containing_sequences``.
"""

from __future__ import annotations

import bisect
from collections.abc import Iterator, Mapping
from typing import Any

import numpy as np
from numba import njit

from gapfinder.gap_evidence import bit_weights, masked_sequences

__all__ = ["MaskedSessionSets", "SessionSet", "session_jaccard", "session_sets"]


SessionSet = tuple[np.ndarray, np.ndarray]  # sorted distinct-path indices, their session counts


class MaskedSessionSets(Mapping[int, SessionSet]):
    """Each candidate's session set, kept as the bit masks of its evidence block (``gap_evidence``:
    a bit per candidate and distinct path) and listed when asked for: (sorted distinct-path indices,
    their session counts).

    Listing every (candidate, path) pair instead took 16 bytes a pair, 1.9 GB at 100M high-entropy
    events (120M pairs); the masks take at most 16 bytes a path per block of 128 candidates, in the
    narrowest unsigned type that holds the block's bits."""

    def __init__(self, weights: np.ndarray, count: int) -> None:
        self.weights = np.ascontiguousarray(weights, dtype=np.int64)
        self.count = count
        self.path_count = len(weights)
        self._firsts: list[int] = []
        self._words: list[tuple[np.ndarray, np.ndarray | None]] = []
        self._totals = np.zeros(count, dtype=np.int64)

    def add_block(self, first: int, candidates: int, low: np.ndarray, high: np.ndarray) -> None:
        """Keep the masks of candidates first .. first + candidates - 1 (bits 0 .. candidates - 1)."""
        bits = min(candidates, 64)
        narrow = next(t for t in (np.uint8, np.uint16, np.uint32, np.uint64) if np.iinfo(t).bits >= bits)
        self._totals[first : first + candidates] = bit_weights(low, high, self.weights)[:candidates]
        self._firsts.append(first)
        self._words.append((low.astype(narrow), high if candidates > 64 else None))

    def _bit(self, n: int) -> tuple[np.ndarray | None, int]:
        """(the words holding candidate n's bit, the bit's place in them)."""
        if not 0 <= n < self.count:
            raise KeyError(n)
        block = bisect.bisect_right(self._firsts, n) - 1
        if block < 0:
            raise KeyError(n)
        low, high = self._words[block]
        bit = n - self._firsts[block]
        return (low, bit) if bit < 64 else (high, bit - 64)

    def __getitem__(self, n: int) -> SessionSet:
        words, bit = self._bit(n)
        ids = masked_sequences(words, None, bit)
        return ids, self.weights[ids]

    def total(self, n: int) -> int:
        """The sessions of the paths in set n."""
        self._bit(n)
        return int(self._totals[n])

    def union_total(self, members: list[int]) -> int:
        """The sessions of the paths in any of the sets ``members`` (a path counted once): one pass
        per block over its masks, with the members' bits of that block."""
        wanted: dict[int, list[int]] = {}
        for n in members:
            self._bit(n)
            block = bisect.bisect_right(self._firsts, n) - 1
            bits = wanted.setdefault(block, [0, 0])
            place = n - self._firsts[block]
            bits[place // 64] |= 1 << (place % 64)
        seen = np.zeros(self.path_count, dtype=np.bool_)
        total = 0
        for block, (low_bits, high_bits) in sorted(wanted.items()):
            low, high = self._words[block]
            other = high if high is not None else low
            total += int(
                _add_held(
                    low,
                    other,
                    low.dtype.type(low_bits),
                    other.dtype.type(high_bits if high is not None else 0),
                    seen,
                    self.weights,
                )
            )
        return total

    def holds(self, n: int) -> np.ndarray:
        """A boolean per path: whether it is in set n."""
        words, bit = self._bit(n)
        if words is None:
            return np.zeros(self.path_count, dtype=bool)
        return (words & words.dtype.type(1 << bit)) != 0

    def __len__(self) -> int:
        return self.count

    def __iter__(self) -> Iterator[int]:
        return iter(range(self.count))


@njit(cache=True, nogil=True)
def _add_held(  # pragma: no cover - compiled
    low: np.ndarray, high: np.ndarray, low_bits: Any, high_bits: Any, seen: np.ndarray, weights: np.ndarray
) -> int:
    """Σ weights[p] over the paths not yet ``seen`` whose masks have any of the bits; marks them seen."""
    total = 0
    for p in range(low.shape[0]):
        if not seen[p] and ((low[p] & low_bits) or (high[p] & high_bits)):
            seen[p] = True
            total += weights[p]
    return total


def session_sets(which: np.ndarray, sequence: np.ndarray, weights: np.ndarray, count: int) -> dict[int, SessionSet]:
    """Each candidate's session set from (candidate, distinct path) pairs: sorted paths and their sessions.

    The matcher returns pairs candidate by candidate with paths ascending; that order is checked in
    one pass and the pairs sorted only when it does not hold (12M pairs: 1.5 s of sorting saved)."""
    step_which = np.diff(which)
    ordered = bool(((step_which > 0) | ((step_which == 0) & (np.diff(sequence) > 0))).all())
    if not ordered:
        order = np.lexsort((sequence, which))
        which, sequence = which[order], sequence[order]
    bounds = np.searchsorted(which, np.arange(count + 1))
    return {
        n: (sequence[bounds[n] : bounds[n + 1]], weights[sequence[bounds[n] : bounds[n + 1]]]) for n in range(count)
    }


def session_jaccard(a: SessionSet, b: SessionSet) -> float:
    """Jaccard index of two gaps' session sets (each given by the distinct paths holding it, sorted,
    weighted by their sessions)."""
    ids_a, weights_a = a
    ids_b, weights_b = b
    if len(ids_a) > len(ids_b):  # look the smaller set up in the larger (a path weighs the same in both)
        ids_a, weights_a, ids_b, weights_b = ids_b, weights_b, ids_a, weights_a
    shared = 0
    if len(ids_a) and len(ids_b):
        at = np.minimum(np.searchsorted(ids_b, ids_a), len(ids_b) - 1)
        shared = int(weights_a[ids_b[at] == ids_a].sum())
    union = int(weights_a.sum()) + int(weights_b.sum()) - shared
    return shared / union if union else 0.0
