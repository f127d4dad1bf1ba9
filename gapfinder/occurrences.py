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

__all__ = ["first_occurrences"]


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
    cur = np.zeros(width, dtype=np.int64)
    nxt = np.zeros(width, dtype=np.int64)
    for r in range(pair_pattern.shape[0]):
        p = pair_pattern[r]
        s = pair_sequence[r]
        a, b = pattern_starts[p], pattern_starts[p + 1]
        k = b - a
        gap = pattern_gaps[p]
        is_framed = framed[p]
        lo, hi = starts[s], starts[s + 1]
        n = hi - lo + (2 if is_framed else 0)
        found = False
        for j0 in range(n):
            if state_at(items, lo, hi, j0, is_framed) != pattern_items[a]:
                continue
            cur[0] = j0
            if k == 1:
                found = True
                break
            q = 1
            nxt[1] = j0 + 1
            while q >= 1:
                limit = n - 1 if gap < 0 else min(n - 1, cur[q - 1] + 1 + gap)
                hit = -1
                for j in range(nxt[q], limit + 1):
                    if state_at(items, lo, hi, j, is_framed) == pattern_items[a + q]:
                        hit = j
                        break
                if hit < 0:
                    q -= 1
                    if q >= 1:
                        nxt[q] = cur[q] + 1
                    continue
                cur[q] = hit
                if q == k - 1:
                    found = True
                    break
                q += 1
                nxt[q] = cur[q - 1] + 1
            if found:
                break
        length = hi - lo
        for q in range(width):
            out[r, q] = -1
        if not found:
            after[r] = -1
            continue
        for q in range(k):
            out[r, q] = cur[q] if is_framed else cur[q] + 1  # session-path positions from 1
        last = out[r, k - 1]
        after[r] = last + 1 if 1 <= last + 1 <= length else -1


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
