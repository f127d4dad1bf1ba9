"""Which sequences contain which patterns: the matcher behind coverage, audits, gap evidence and
pattern occurrences.

A sequence contains a pattern when the pattern's events occur in it in order, with at most
``max_gap`` other events between consecutive steps (0: a contiguous run; None: any number); a
framed sequence is read as START (0) → events → END (1). Candidates come from an inverted index
(only the sequences holding a pattern's rarest event can contain it), and (pattern, candidate)
pairs are tested in a compiled kernel on all threads (numba ``prange`` over equal chunks, each pair
writing its own flag, so the result does not depend on the thread count): by a bit-parallel scan
(``occurs``) where the gap bound is small or absent, by a sweep over reachable positions otherwise.
Small inputs run the kernel's own code as plain Python (``gapfinder.compiled.python_twin``).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numba
import numpy as np
from numba import njit

from gapfinder.compiled import FIBONACCI, grow, python_twin
from gapfinder.mining import SequenceDatabase, use_python

__all__ = [
    "EventIndex",
    "candidate_ranges",
    "candidate_sequences",
    "containing_sequences",
    "event_index",
    "has_pairs",
    "occurs",
    "pair_signatures",
    "quick_scan_handles",
    "set_steps",
    "signature_needs",
    "signature_reach",
    "state_at",
    "step_table_size",
]

_I32 = np.int32
_I64 = np.int64
START = 0  # the states framing a session path
END = 1


@njit(cache=True, nogil=True)
def state_at(items: np.ndarray, lo: int, hi: int, j: int, framed: bool) -> int:  # pragma: no cover - compiled
    """Event at position j of sequence items[lo:hi]; framed: position 0 is START (0), the last END (1)."""
    if not framed:
        return items[lo + j]
    if j == 0:
        return 0
    if j == hi - lo + 1:
        return 1
    return items[lo + j - 1]


@njit(cache=True, nogil=True)
def _contains_run(  # pragma: no cover - compiled
    items: np.ndarray, lo: int, hi: int, n: int, pattern: np.ndarray, a: int, b: int, is_framed: bool
) -> bool:
    """Whether pattern[a:b] occurs contiguously in the sequence: compared at each start directly."""
    for j in range(n - (b - a) + 1):
        q = 0
        while q < b - a and state_at(items, lo, hi, j + q, is_framed) == pattern[a + q]:
            q += 1
        if q == b - a:
            return True
    return False


@njit(cache=True, nogil=True)
def _contains_in_order(  # pragma: no cover - compiled
    items: np.ndarray,
    lo: int,
    hi: int,
    n: int,
    pattern: np.ndarray,
    a: int,
    b: int,
    is_framed: bool,
    gap: int,
    reach: np.ndarray,
    nxt: np.ndarray,
) -> bool:
    """Whether pattern[a:b] occurs in order with at most ``gap`` events between steps (any when
    negative): one sweep per step over the positions each earlier step can reach."""
    any_end = False
    for j in range(n):
        reach[j] = state_at(items, lo, hi, j, is_framed) == pattern[a]
        any_end = any_end or reach[j]
    for q in range(a + 1, b):
        if not any_end:
            break
        any_end = False
        window = -1  # the last position from which the next step may still be reached
        for j in range(n):
            nxt[j] = False
            if window >= j and state_at(items, lo, hi, j, is_framed) == pattern[q]:
                nxt[j] = True
                any_end = True
            if reach[j]:
                window = n if gap < 0 else j + 1 + gap
        for j in range(n):
            reach[j] = nxt[j]
    return any_end


# Bit-parallel scan (the shift-and idea of Baeza-Yates and Gonnet, "A new approach to text
# searching", CACM 35(10), 1992, cited from memory; here with bounded gaps between steps): bit q of
# a step mask is set where pattern step q is the event read, and a word holds the steps whose prefix
# of the pattern ends at a position; a step may follow any of the last gap + 1 positions' words.
# One table read and a few word operations per event, no branch on the events read: at 50M
# high-entropy events gap evidence's kernel went from 11.8 to 9.3 s with the same results.
QUICK_MAX_STEPS = 64  # pattern steps: one bit each in a 64-bit word
QUICK_MAX_GAP = 3  # gap bounds scanned bit-parallel (the last gap + 1 positions are kept in words)


def _bounded_scan(gap: int) -> Any:
    """The bit-parallel scan for patterns with at most ``gap`` events between steps, 0 <= gap <=
    QUICK_MAX_GAP; ``gap`` is a constant of the compiled code, so the unused words cost nothing."""

    @njit(cache=True, nogil=True)
    def scan(  # pragma: no cover - compiled
        items: np.ndarray, lo: int, hi: int, k: int, is_framed: bool, step_mask: np.ndarray
    ) -> bool:
        top = np.uint64(1) << np.uint64(k - 1)
        one = np.uint64(1)
        # e1..e4: the steps reached at the last four positions (a step may follow any of the last gap + 1)
        e1 = step_mask[START] & one if is_framed else np.uint64(0)
        if e1 & top:  # the pattern is START alone
            return True
        e2 = e3 = e4 = np.uint64(0)
        for i in range(lo, hi):
            ready = e1
            if gap >= 1:
                ready |= e2
            if gap >= 2:
                ready |= e3
            if gap >= 3:
                ready |= e4
            e = step_mask[items[i]] & ((ready << one) | one)
            if e & top:
                return True
            if gap >= 3:
                e4 = e3
            if gap >= 2:
                e3 = e2
            if gap >= 1:
                e2 = e1
            e1 = e
        if not is_framed:
            return False
        return (step_mask[END] & (((e1 | e2 | e3 | e4) << one) | one) & top) != 0

    return scan


_scan_gap0, _scan_gap1, _scan_gap2, _scan_gap3 = (_bounded_scan(g) for g in range(QUICK_MAX_GAP + 1))


@njit(cache=True, nogil=True)
def quick_scan_handles(k: int, gap: int) -> bool:  # pragma: no cover - compiled
    """Whether ``occurs`` answers for a pattern of k steps and this gap bound (negative: any)."""
    return k <= QUICK_MAX_STEPS and gap <= QUICK_MAX_GAP


@njit(cache=True, nogil=True)
def set_steps(step_mask: np.ndarray, pattern: np.ndarray, a: int, b: int, on: bool) -> None:  # pragma: no cover
    """Write (on) or clear (off) pattern[a:b]'s step bits in ``step_mask`` (indexed by state)."""
    for q in range(b - a):
        if on:
            step_mask[pattern[a + q]] |= np.uint64(1) << np.uint64(q)
        else:
            step_mask[pattern[a + q]] = 0


@njit(cache=True, nogil=True)
def occurs(  # pragma: no cover - compiled
    items: np.ndarray, lo: int, hi: int, k: int, gap: int, is_framed: bool, step_mask: np.ndarray
) -> bool:
    """Whether the pattern of k steps whose bits ``set_steps`` wrote occurs in items[lo:hi] (read
    framed or not) with at most ``gap`` events between steps (any when negative); only for
    patterns ``quick_scan_handles``."""
    if gap == 0:
        return _scan_gap0(items, lo, hi, k, is_framed, step_mask)
    if gap == 1:
        return _scan_gap1(items, lo, hi, k, is_framed, step_mask)
    if gap == 2:
        return _scan_gap2(items, lo, hi, k, is_framed, step_mask)
    if gap == 3:
        return _scan_gap3(items, lo, hi, k, is_framed, step_mask)
    one = np.uint64(1)  # no bound: a step once reached stays reached
    top = one << np.uint64(k - 1)
    reached = step_mask[START] & one if is_framed else np.uint64(0)
    if reached & top:
        return True
    for i in range(lo, hi):
        e = step_mask[items[i]] & ((reached << one) | one)
        if e & top:
            return True
        reached |= e
    return is_framed and (step_mask[END] & ((reached << one) | one) & top) != 0


# Pair signatures: a necessary condition checked before any scan. Each distinct path gets a word
# set of bits, one for every pair of events at most ``reach`` positions apart (hashed; at most
# SIGNATURE_REACH); a pattern with gaps of at most reach - 1 needs the bits of its consecutive
# steps. A path missing one cannot hold the pattern (a set bit proves nothing: other pairs share
# it). At 50M high-entropy events about half of gap evidence's candidates fail it; with the reach
# the candidates need (3 for mined patterns with gaps of 2) instead of 4, 12 % more of them.
SIGNATURE_WORDS = 4  # 256 bits a path: 32 bytes (132 MB for the 4.1M distinct paths of 100M events)
SIGNATURE_REACH = QUICK_MAX_GAP + 1


@njit(cache=True, nogil=True)
def _pair_bit(a: int, b: int) -> int:  # pragma: no cover - compiled
    """The signature bit of event a followed (within the signature's reach) by event b."""
    key = (np.uint64(a) << np.uint64(32)) | np.uint64(b)
    return int((key * FIBONACCI) >> np.uint64(56)) % (64 * SIGNATURE_WORDS)


@njit(cache=True, nogil=True, parallel=True)
def _pair_signatures(items: np.ndarray, starts: np.ndarray, reach: int) -> np.ndarray:  # pragma: no cover
    sequences = starts.shape[0] - 1
    out = np.zeros((sequences, SIGNATURE_WORDS), dtype=np.uint64)
    for s in numba.prange(sequences):
        hi = starts[s + 1]
        for i in range(starts[s], hi):
            for j in range(i + 1, min(i + 1 + reach, hi)):
                bit = _pair_bit(items[i], items[j])
                out[s, bit // 64] |= np.uint64(1) << np.uint64(bit % 64)
    return out


def pair_signatures(db: SequenceDatabase, reach: int = SIGNATURE_REACH) -> np.ndarray:
    """Each distinct path's pair signature over pairs at most ``reach`` (1..SIGNATURE_REACH) apart,
    (sequences, SIGNATURE_WORDS) words (see above)."""
    if not 1 <= reach <= SIGNATURE_REACH:
        raise ValueError(f"signature reach {reach}: give 1 to {SIGNATURE_REACH}")
    items, starts = np.ascontiguousarray(db.items, dtype=_I32), np.ascontiguousarray(db.starts, dtype=_I64)
    return _pair_signatures(items, starts, reach)


def signature_reach(max_gaps: Sequence[int | None]) -> int:
    """The smallest reach whose signatures serve every pattern with a gap bound of 0..QUICK_MAX_GAP
    among ``max_gaps`` (patterns with other bounds are not checked)."""
    bounded = [g for g in max_gaps if g is not None and 0 <= g <= QUICK_MAX_GAP]
    return max(bounded, default=0) + 1


@njit(cache=True, nogil=True)
def signature_needs(  # pragma: no cover - compiled
    pattern_items: np.ndarray, pattern_starts: np.ndarray, pattern_gaps: np.ndarray, reach: int
) -> np.ndarray:
    """The bits each pattern needs in signatures of pairs at most ``reach`` apart: its consecutive
    steps' pairs, for gaps of 0 to reach - 1 (none for other gaps, and none for START or END,
    which paths do not store)."""
    needs = np.zeros((pattern_starts.shape[0] - 1, SIGNATURE_WORDS), dtype=np.uint64)
    for p in range(pattern_starts.shape[0] - 1):
        if pattern_gaps[p] < 0 or pattern_gaps[p] + 1 > reach:
            continue
        for q in range(pattern_starts[p], pattern_starts[p + 1] - 1):
            a, b = pattern_items[q], pattern_items[q + 1]
            if a > END and b > END:
                bit = _pair_bit(a, b)
                needs[p, bit // 64] |= np.uint64(1) << np.uint64(bit % 64)
    return needs


@njit(cache=True, nogil=True)
def has_pairs(signatures: np.ndarray, s: int, needs: np.ndarray, p: int) -> bool:  # pragma: no cover - compiled
    """Whether path s's signature holds every bit pattern p needs."""
    missing = np.uint64(0)
    for w in range(SIGNATURE_WORDS):
        missing |= needs[p, w] & ~signatures[s, w]
    return missing == 0


MATCH_CHUNKS_PER_THREAD = 16  # candidate chunks per thread: small enough to balance uneven patterns


@njit(cache=True, nogil=True, parallel=True)
def _match_kernel(  # pragma: no cover - compiled
    items: np.ndarray,
    starts: np.ndarray,
    pattern_items: np.ndarray,
    pattern_starts: np.ndarray,
    pattern_gaps: np.ndarray,
    framed: np.ndarray,
    candidate_ptr: np.ndarray,
    candidates: np.ndarray,
    chunk_count: int,
    state_count: int,
) -> tuple[np.ndarray, np.ndarray]:
    """(pattern index, sequence index) for every sequence that contains each pattern; pattern p is
    tried only on ``candidates[candidate_ptr[p]:candidate_ptr[p + 1]]`` (ascending).

    The (pattern, candidate) pairs are cut into ``chunk_count`` equal chunks tested on all threads (each chunk with
    its own scratch rows); every pair writes only its own flag, so the result is the same in any
    order, pattern by pattern and candidates ascending."""
    seq_total = starts.shape[0] - 1
    longest = 2
    for s in range(seq_total):
        longest = max(longest, starts[s + 1] - starts[s] + 2)
    pair_total = candidates.shape[0]
    hit = np.zeros(pair_total, dtype=np.bool_)
    chunk_count = max(1, min(pair_total, chunk_count))
    for c in numba.prange(chunk_count):
        reach = np.zeros(longest, dtype=np.bool_)
        nxt = np.zeros(longest, dtype=np.bool_)
        step_mask = np.zeros(state_count, dtype=np.uint64)
        first = c * pair_total // chunk_count
        p = np.searchsorted(candidate_ptr, first, side="right") - 1
        stepped = -1  # the pattern whose steps step_mask holds
        for t in range(first, (c + 1) * pair_total // chunk_count):
            while t >= candidate_ptr[p + 1]:
                p += 1
            a, b = pattern_starts[p], pattern_starts[p + 1]
            gap = pattern_gaps[p]
            is_framed = framed[p]
            s = candidates[t]
            lo, hi = starts[s], starts[s + 1]
            n = hi - lo + (2 if is_framed else 0)
            if n < b - a:
                continue
            if quick_scan_handles(b - a, gap):
                if stepped != p:
                    if stepped >= 0:
                        set_steps(step_mask, pattern_items, pattern_starts[stepped], pattern_starts[stepped + 1], False)
                    set_steps(step_mask, pattern_items, a, b, True)
                    stepped = p
                hit[t] = occurs(items, lo, hi, b - a, gap, is_framed, step_mask)
            elif gap == 0:
                hit[t] = _contains_run(items, lo, hi, n, pattern_items, a, b, is_framed)
            else:
                hit[t] = _contains_in_order(items, lo, hi, n, pattern_items, a, b, is_framed, gap, reach, nxt)
    found = np.nonzero(hit)[0]
    return np.searchsorted(candidate_ptr, found, side="right") - 1, candidates[found]


def containing_sequences(
    db: SequenceDatabase,
    patterns: list[tuple[int, ...]],
    *,
    max_gaps: list[int | None],
    framed: list[bool],
    engine: str = "auto",
    index: EventIndex | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Which sequences contain which pattern: arrays (pattern index, sequence index).

    ``index``: ``event_index(db)`` when the caller matches several batches of patterns against the
    same ``db`` (made here otherwise).

    ``max_gaps[i]`` bounds the events between consecutive steps of pattern i (0: contiguous, None:
    any); with ``framed[i]`` each sequence is read as START (0) → events → END (1), so that
    transitions and k-paths that begin or end a session can be matched.

    Examples
    --------
    >>> db = SequenceDatabase.from_sequences([[2, 3, 4], [2, 4]])
    >>> containing_sequences(db, [(2, 4), (0, 2, 4, 1)], max_gaps=[0, 0], framed=[False, True])
    (array([0, 1]), array([1, 1]))
    """
    lengths = np.array([len(p) for p in patterns], dtype=np.int64)
    pattern_starts = np.zeros(len(patterns) + 1, dtype=np.int64)
    np.cumsum(lengths, out=pattern_starts[1:])
    flat = np.array([e for p in patterns for e in p], dtype=np.int32) if patterns else np.zeros(0, np.int32)
    gaps = np.array([-1 if g is None else int(g) for g in max_gaps], dtype=np.int64)
    if len(patterns) == 0 or db.sequence_count == 0:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    if (lengths == 0).any():
        raise ValueError("patterns must have at least one event")
    plain_index = use_python(engine, len(db.items))
    candidate_ptr, candidates = candidate_sequences(db, patterns, index or event_index(db, plain=plain_index))
    work = len(candidates) * max(1, len(db.items) // max(db.sequence_count, 1))
    small = plain_index and (engine == "python" or work <= 500_000)
    matcher = _match_python if small else _match_kernel
    which, sequence = matcher(
        np.ascontiguousarray(db.items, dtype=_I32),
        np.ascontiguousarray(db.starts, dtype=_I64),
        flat,
        pattern_starts,
        gaps,
        np.array(framed, dtype=np.bool_),
        candidate_ptr,
        candidates,
        MATCH_CHUNKS_PER_THREAD * numba.get_num_threads(),
        step_table_size(db, flat),
    )
    return np.asarray(which, dtype=np.int64), np.asarray(sequence, dtype=np.int64)


def step_table_size(db: SequenceDatabase, pattern_items: np.ndarray) -> int:
    """Size of a step mask table: above every state of ``db`` and of the patterns (START and END too)."""
    top_item = int(db.items.max()) if len(db.items) else END
    return max(top_item, int(pattern_items.max(initial=END)), END) + 1


EventIndex = tuple[np.ndarray, np.ndarray]  # (bounds, sequences): see event_index


def event_index(db: SequenceDatabase, *, plain: bool = False) -> EventIndex:
    """The inverted index of ``db``: the distinct sequences holding event e, ascending, are
    ``sequences[bounds[e]:bounds[e + 1]]``. Two passes of a kernel count, then list, them: no sort of
    every position (at 50M high-entropy events the sort and its int64 copies took 11.7 s and 1.6 GB).
    ``plain``: the kernel's plain-Python twin (small inputs)."""
    top_event = int(db.items.max()) + 1 if len(db.items) else 0
    indexer = _event_index_python if plain else _event_index
    result: EventIndex = indexer(
        np.ascontiguousarray(db.items, dtype=_I32), np.ascontiguousarray(db.starts, dtype=_I64), top_event
    )
    return result


def candidate_ranges(
    db: SequenceDatabase, patterns: list[tuple[int, ...]], index: EventIndex
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per pattern, where the sequences that contain its rarest event lie in ``index``'s sequence
    list (only those can contain the pattern): (lo, hi, every), with ``every`` set, and lo, hi
    0 and the sequence count, for patterns made only of START/END (ids 0 and 1, never stored in
    sequences), which are tried on every sequence (the sequence is then the position itself)."""
    bounds = index[0]
    top_event = len(bounds) - 1
    lo = np.zeros(len(patterns), dtype=np.int64)
    hi = np.zeros(len(patterns), dtype=np.int64)
    every = np.zeros(len(patterns), dtype=np.bool_)
    for p, pattern in enumerate(patterns):
        real = [e for e in pattern if e > 1]
        if not real:
            hi[p], every[p] = db.sequence_count, True
        elif all(e < top_event for e in real):
            rarest = min(real, key=lambda e: bounds[e + 1] - bounds[e])
            lo[p], hi[p] = bounds[rarest], bounds[rarest + 1]
    return lo, hi, every


def candidate_sequences(
    db: SequenceDatabase, patterns: list[tuple[int, ...]], index: EventIndex
) -> tuple[np.ndarray, np.ndarray]:
    """The sequences of ``candidate_ranges`` listed pattern by pattern: (ptr, sequences), pattern i's
    being ``sequences[ptr[i]:ptr[i + 1]]``."""
    lo, hi, every = candidate_ranges(db, patterns, index)
    sequences = index[1]
    everything = np.arange(db.sequence_count, dtype=np.int32)
    lists = [everything if every[p] else sequences[lo[p] : hi[p]] for p in range(len(patterns))]
    ptr = np.zeros(len(patterns) + 1, dtype=np.int64)
    np.cumsum([len(x) for x in lists], out=ptr[1:])
    flat = np.concatenate(lists).astype(np.int32, copy=False) if lists else np.zeros(0, np.int32)
    return ptr, flat


@njit(cache=True, nogil=True)
def _event_index(
    items: np.ndarray, starts: np.ndarray, top_event: int
) -> tuple[np.ndarray, np.ndarray]:  # pragma: no cover
    """(bounds, sequences): the distinct sequences holding event e, ascending, are
    ``sequences[bounds[e]:bounds[e + 1]]`` (int32)."""
    last = np.full(top_event, -1, dtype=np.int64)
    bounds = np.zeros(top_event + 1, dtype=np.int64)
    for s in range(starts.shape[0] - 1):
        for p in range(starts[s], starts[s + 1]):
            e = items[p]
            if last[e] != s:
                last[e] = s
                bounds[e + 1] += 1
    for e in range(top_event):
        bounds[e + 1] += bounds[e]
    fill = bounds[:-1].copy()
    last[:] = -1
    sequences = np.empty(bounds[top_event], dtype=np.int32)
    for s in range(starts.shape[0] - 1):
        for p in range(starts[s], starts[s + 1]):
            e = items[p]
            if last[e] != s:
                last[e] = s
                sequences[fill[e]] = s
                fill[e] += 1
    return bounds, sequences


_event_index_python = python_twin(_event_index)


_match_python = python_twin(
    _match_kernel, state_at, grow, occurs, set_steps, quick_scan_handles, _scan_gap0, _scan_gap1, _scan_gap2, _scan_gap3
)
