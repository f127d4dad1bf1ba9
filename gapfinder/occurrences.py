"""Where a path occurs in a session: the positions of its first occurrence, for pinning errors.

A gap's error evidence counts failures on the events of the matched occurrence itself and on the
step right after it, not anywhere in the session. For each (candidate, distinct path) pair that
``matching.containing_sequences`` found, ``first_occurrences`` returns the session-path positions
(from 1; 0 is START, ``len + 1`` is END) of the occurrence that starts leftmost, its steps as early
as the gap bound allows (a depth-first search with backtracking: an earlier choice of a middle step
can make a later step unreachable under a gap bound), and the position right after it.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from gapfinder.matching import state_at
from gapfinder.mining import SequenceDatabase

__all__ = ["first_occurrence", "first_occurrences"]


@njit(cache=True, nogil=True)
def first_occurrence(  # pragma: no cover - compiled
    items: np.ndarray,
    lo: int,
    hi: int,
    pattern_items: np.ndarray,
    a: int,
    b: int,
    gap: int,
    is_framed: bool,
    cur: np.ndarray,
    nxt: np.ndarray,
    dead: np.ndarray,
    stamp: int,
) -> bool:
    """Whether pattern[a:b] occurs in the sequence items[lo:hi] (read framed or not) with at most
    ``gap`` events between steps (any when negative); when it does, ``cur[:b - a]`` holds the
    positions (from 0 in the read sequence) of the occurrence that starts leftmost, each step as
    early as the gap bound allows.

    Without a bound the earliest match of each step in turn is that occurrence (one sweep). With
    one, a depth-first search: a step placed at position j that cannot be completed is remembered
    as dead (``dead[q * stride + j] == stamp``, stride = len(dead) // len(cur)), so no position
    is expanded twice and the search stays within k × n × (gap + 1) steps. ``nxt``: scratch of
    ``cur``'s width; ``stamp``: a value not used before with this ``dead`` array."""
    k = b - a
    n = hi - lo + (2 if is_framed else 0)
    if gap < 0:
        q = 0
        for j in range(n):
            if state_at(items, lo, hi, j, is_framed) == pattern_items[a + q]:
                cur[q] = j
                q += 1
                if q == k:
                    return True
        return False
    stride = dead.shape[0] // cur.shape[0]
    for j0 in range(n - k + 1):
        if state_at(items, lo, hi, j0, is_framed) != pattern_items[a]:
            continue
        cur[0] = j0
        if k == 1:
            return True
        q = 1
        nxt[1] = j0 + 1
        while q >= 1:
            limit = min(n - 1, cur[q - 1] + 1 + gap)
            hit = -1
            for j in range(nxt[q], limit + 1):
                if state_at(items, lo, hi, j, is_framed) == pattern_items[a + q] and dead[q * stride + j] != stamp:
                    hit = j
                    break
            if hit < 0:
                q -= 1  # no completion from step q - 1 where it stands
                if q >= 1:
                    dead[q * stride + cur[q]] = stamp
                    nxt[q] = cur[q] + 1
                continue
            cur[q] = hit
            if q == k - 1:
                return True
            q += 1
            nxt[q] = cur[q - 1] + 1
    return False


@njit(cache=True, nogil=True)
def _occurrence_kernel(  # pragma: no cover - compiled
    items: np.ndarray,
    starts: np.ndarray,
    pattern_items: np.ndarray,
    pattern_starts: np.ndarray,
    pattern_gaps: np.ndarray,
    framed: np.ndarray,
    pair_pattern: np.ndarray,
    pair_sequence: np.ndarray,
    out: np.ndarray,
    after: np.ndarray,
) -> None:
    width = out.shape[1]
    longest = 2
    for s in range(starts.shape[0] - 1):
        longest = max(longest, starts[s + 1] - starts[s] + 2)
    cur = np.zeros(width, dtype=np.int64)
    nxt = np.zeros(width, dtype=np.int64)
    dead = np.zeros(width * longest, dtype=np.int64)
    for r in range(pair_pattern.shape[0]):
        p = pair_pattern[r]
        s = pair_sequence[r]
        a, b = pattern_starts[p], pattern_starts[p + 1]
        k = b - a
        is_framed = framed[p]
        lo, hi = starts[s], starts[s + 1]
        for q in range(width):
            out[r, q] = -1
        if not first_occurrence(items, lo, hi, pattern_items, a, b, pattern_gaps[p], is_framed, cur, nxt, dead, r + 1):
            after[r] = -1
            continue
        for q in range(k):
            out[r, q] = cur[q] if is_framed else cur[q] + 1  # session-path positions from 1
        last = out[r, k - 1]
        after[r] = last + 1 if 1 <= last + 1 <= hi - lo else -1


def first_occurrences(
    db: SequenceDatabase,
    patterns: list[tuple[int, ...]],
    *,
    max_gaps: list[int | None],
    framed: list[bool],
    which: np.ndarray,
    sequence: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """(positions, after): per pair, the occurrence's positions (a row of width max length, -1 padded)
    and the position right after it (-1 when the occurrence ends the session).

    Examples
    --------
    >>> db = SequenceDatabase.from_sequences([[2, 3, 2, 4]])
    >>> positions, after = first_occurrences(
    ...     db, [(2, 4), (0, 2)], max_gaps=[0, 0], framed=[False, True],
    ...     which=np.array([0, 1]), sequence=np.array([0, 0]))
    >>> positions.tolist(), after.tolist()
    ([[3, 4], [0, 1]], [-1, 2])
    """
    width = max((len(p) for p in patterns), default=1)
    lengths = np.array([len(p) for p in patterns], dtype=np.int64)
    pattern_starts = np.zeros(len(patterns) + 1, dtype=np.int64)
    np.cumsum(lengths, out=pattern_starts[1:])
    flat = np.array([e for p in patterns for e in p], dtype=np.int32) if patterns else np.zeros(0, np.int32)
    gaps = np.array([-1 if g is None else int(g) for g in max_gaps], dtype=np.int64)
    # int32: positions stay below the session cap, and at 10M high-entropy events there are 12M pairs
    out = np.full((len(which), width), -1, dtype=np.int32)
    after = np.full(len(which), -1, dtype=np.int32)
    if len(which):
        _occurrence_kernel(
            np.ascontiguousarray(db.items, dtype=np.int32),
            np.ascontiguousarray(db.starts, dtype=np.int64),
            flat,
            pattern_starts,
            gaps,
            np.array(framed, dtype=np.bool_),
            np.ascontiguousarray(which, dtype=np.int64),
            np.ascontiguousarray(sequence, dtype=np.int64),
            out,
            after,
        )
    return out, after
