"""The evidence behind each candidate gap, in one compiled pass over the distinct paths.

For the candidates of ``gaps.find_gaps``, the sessions are read once, grouped per distinct path
(``load_path_sessions``): by error positions, any error and half of the period (session counts);
by user, with whether the user had a session there in the earlier half (distinct users); by segment
value (segment sessions). ``gap_evidence`` then tries each candidate on the
distinct paths that hold its rarest event (``matching``), finds the occurrence that starts leftmost
(``occurrences.first_occurrence``) and adds that path's groups to the candidate's sums: sessions,
sessions with an error, in the recent half, with a failure on the occurrence, on each of its first
seven steps and on the step right after it, the failure rate expected of the events that came
next, and per segment value. Distinct users come from bit masks: each path gets a mask of the
candidates it holds (at most 128 per call), DuckDB ORs them per user in one pass over the sessions,
and the users of a candidate are the bit counts over the distinct masks, so a user on several paths
of a candidate counts once, and the cost does not grow with the users of a path.

Threads take candidates interleaved (the pool comes most common first) and each candidate's sums
are added by one thread in path order, so results do not depend on the thread count. Results equal
those of joining every session to every candidate (tests/test_gap_evidence.py).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import Any

import duckdb
import numba
import numpy as np
import pyarrow as pa
from numba import njit

from gapfinder.matching import (
    EventIndex,
    candidate_ranges,
    has_pairs,
    occurs,
    pair_signatures,
    quick_scan_handles,
    set_steps,
    signature_needs,
    signature_reach,
    step_table_size,
)
from gapfinder.mining import SequenceDatabase
from gapfinder.occurrences import first_occurrence
from gapfinder.sql import fetch_arrow, fetch_dicts, list_arrays, registered

__all__ = [
    "STEP_COLUMNS",
    "PathSessions",
    "bit_weights",
    "gap_evidence",
    "load_path_sessions",
    "mask_pairs",
    "masked_sequences",
]

STEP_COLUMNS = 7  # steps of a gap whose failures are counted one by one
# Columns of the per-candidate counts the kernel adds up.
_SESSIONS, _ERRORS, _RECENT, _OWN, _NEXT, _NEXT_ERRORS, _USERS, _EARLIER, _STEP = range(9)
_COUNT_COLUMNS = _STEP + STEP_COLUMNS
MAX_PATTERNS = 128  # patterns per call: two 64-bit words of mask per path
CHUNKS_PER_THREAD = 2  # candidate chunks per thread (interleaved), to even out uneven candidates
TILE_ITEMS = 1 << 17  # items of the sequences every pattern of a chunk reads before the next ones


@dataclass(frozen=True)
class PathSessions:
    """The sessions that count for the profile, grouped per distinct path of a SequenceDatabase
    (sequence s's rows of each grouping are ``[ptr[s], ptr[s + 1])``)."""

    group_ptr: np.ndarray  # by error positions, any error, recent half
    group_n: np.ndarray
    group_error: np.ndarray
    group_recent: np.ndarray
    error_ptr: np.ndarray  # error positions of group g: error_positions[error_ptr[g]:error_ptr[g + 1]]
    error_positions: np.ndarray
    value_ptr: np.ndarray  # by segment value
    value_no: np.ndarray
    value_n: np.ndarray
    values: list[tuple[str, str]]  # (segment, value) by value_no
    midpoint: Any  # the start of the recent half
    include_automated: bool


def _pointers(path_ids: np.ndarray, row_paths: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(ptr over the sequences of ``path_ids``, rows kept): rows come ordered by path id; a row of a
    path the database does not hold (none should) is left out."""
    at = np.searchsorted(path_ids, row_paths)
    kept = at < len(path_ids)
    kept[kept] = path_ids[at[kept]] == row_paths[kept]
    ptr = np.zeros(len(path_ids) + 1, dtype=np.int64)
    np.cumsum(np.bincount(at[kept], minlength=len(path_ids)), out=ptr[1:])
    return ptr, kept


def _numpy(table: Any, name: str, dtype: Any) -> np.ndarray:
    return np.ascontiguousarray(table.column(name).to_numpy(zero_copy_only=False), dtype=dtype)


def load_path_sessions(
    con: duckdb.DuckDBPyConnection, db: SequenceDatabase, *, midpoint: Any, include_automated: bool
) -> PathSessions:
    """The groupings gap_evidence adds up, read once per ``find_gaps``."""
    assert db.path_ids is not None
    path_ids = np.asarray(db.path_ids, dtype=np.int64)
    groups = fetch_arrow(con, "list_gap_session_groups", midpoint=midpoint, include_automated=include_automated)
    group_ptr, kept = _pointers(path_ids, _numpy(groups, "path_id", np.int64))
    error_ptr, error_positions = list_arrays(groups.column("error_positions"))
    if not kept.all():  # keep the error lists of the kept groups only
        lengths = np.diff(error_ptr)[kept]
        error_positions = error_positions[np.repeat(kept, np.diff(error_ptr))]
        error_ptr = np.zeros(len(lengths) + 1, dtype=np.int64)
        np.cumsum(lengths, out=error_ptr[1:])
    by_value = fetch_arrow(con, "list_gap_path_segment_sessions", include_automated=include_automated)
    value_ptr, value_kept = _pointers(path_ids, _numpy(by_value, "path_id", np.int64))
    values = [
        (str(r["segment"]), str(r["value"]))
        for r in fetch_dicts(con, "list_gap_segment_values", include_automated=include_automated)
    ]
    return PathSessions(
        group_ptr=group_ptr,
        group_n=_numpy(groups, "n", np.int64)[kept],
        group_error=_numpy(groups, "has_error", np.bool_)[kept],
        group_recent=_numpy(groups, "is_recent", np.bool_)[kept],
        error_ptr=np.ascontiguousarray(error_ptr, dtype=np.int64),
        error_positions=np.ascontiguousarray(error_positions, dtype=np.int32),
        value_ptr=value_ptr,
        value_no=_numpy(by_value, "value_no", np.int32)[value_kept],
        value_n=_numpy(by_value, "n", np.int64)[value_kept],
        values=values,
        midpoint=midpoint,
        include_automated=include_automated,
    )


@njit(cache=True, nogil=True)
def _holds(values: np.ndarray, lo: int, hi: int, x: int) -> bool:  # pragma: no cover - compiled
    """Whether x is among values[lo:hi] (a session's few error positions)."""
    for i in range(lo, hi):  # noqa: SIM110 - a generator in any() does not compile
        if values[i] == x:
            return True
    return False


@njit(cache=True, nogil=True, parallel=True)
def _session_kernel(  # pragma: no cover - compiled
    items: np.ndarray,
    starts: np.ndarray,
    pattern_items: np.ndarray,
    pattern_starts: np.ndarray,
    pattern_gaps: np.ndarray,
    framed: np.ndarray,
    candidate_lo: np.ndarray,
    candidate_hi: np.ndarray,
    every: np.ndarray,
    candidates: np.ndarray,
    hit_ptr: np.ndarray,
    group_ptr: np.ndarray,
    group_n: np.ndarray,
    group_error: np.ndarray,
    group_recent: np.ndarray,
    error_ptr: np.ndarray,
    error_positions: np.ndarray,
    value_ptr: np.ndarray,
    value_no: np.ndarray,
    value_n: np.ndarray,
    value_count: int,
    event_rate: np.ndarray,
    chunk_count: int,
    tile_items: int,
    state_count: int,
    signatures: np.ndarray,
    needs: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(hit per candidate sequence, counts, expected-rate sum and sessions, next failures per event,
    sessions per segment value), one row per pattern; users are counted by ``_user_counts``.

    Pattern p's candidates are ``candidates[candidate_lo[p]:candidate_hi[p]]`` (the inverted
    index's list of its rarest event, read in place), or every sequence when ``every[p]``; its
    hits are flagged from ``hit[hit_ptr[p]]`` on, one flag a candidate.

    The sequences are taken a tile of about ``tile_items`` items at a time, every pattern of a
    chunk going through its candidates in the tile before the next tile: the tile's items and
    groups stay in the core's cache while dozens of patterns read them."""
    patterns = pattern_starts.shape[0] - 1
    width = 1
    for p in range(patterns):
        width = max(width, pattern_starts[p + 1] - pattern_starts[p])
    sequences = starts.shape[0] - 1
    longest = 2
    for s in range(sequences):
        longest = max(longest, starts[s + 1] - starts[s] + 2)
    hit = np.zeros(hit_ptr[-1], dtype=np.bool_)
    counts = np.zeros((patterns, _COUNT_COLUMNS), dtype=np.int64)
    rate_sum = np.zeros(patterns, dtype=np.float64)
    rate_sessions = np.zeros(patterns, dtype=np.int64)
    next_failures = np.zeros((patterns, event_rate.shape[0]), dtype=np.int64)
    value_sessions = np.zeros((patterns, value_count), dtype=np.int64)
    chunk_count = max(1, min(chunk_count, patterns))
    for c in numba.prange(chunk_count):
        step_mask = np.zeros(state_count, dtype=np.uint64)
        cur = np.zeros(width, dtype=np.int64)
        nxt = np.zeros(width, dtype=np.int64)
        positions = np.zeros(width, dtype=np.int64)
        dead = np.zeros(width * longest, dtype=np.int64)
        cursor = candidate_lo.copy()
        tried = 0
        tile_start = 0
        while tile_start < sequences:
            tile_end = tile_start + 1
            while tile_end < sequences and starts[tile_end + 1] - starts[tile_start] <= tile_items:
                tile_end += 1
            for p in range(c, patterns, chunk_count):
                a, b = pattern_starts[p], pattern_starts[p + 1]
                k = b - a
                gap = pattern_gaps[p]
                is_framed = framed[p]
                t = cursor[p]
                end = candidate_hi[p]
                whole = every[p]
                flag_at = hit_ptr[p] - candidate_lo[p]
                quick = quick_scan_handles(k, gap)
                if quick:
                    set_steps(step_mask, pattern_items, a, b, True)
                while t < end and (t if whole else candidates[t]) < tile_end:
                    s = t if whole else candidates[t]
                    t += 1
                    lo, hi = starts[s], starts[s + 1]
                    if not has_pairs(signatures, s, needs, p):
                        continue  # about half the candidates at 50M high-entropy events
                    if quick and not occurs(items, lo, hi, k, gap, is_framed, step_mask):
                        continue  # most candidates: the search below only runs where the pattern is
                    tried += 1
                    if not first_occurrence(items, lo, hi, pattern_items, a, b, gap, is_framed, cur, nxt, dead, tried):
                        continue
                    hit[flag_at + t - 1] = True
                    length = hi - lo
                    for q in range(k):
                        positions[q] = cur[q] if is_framed else cur[q] + 1  # session-path positions from 1
                    after = positions[k - 1] + 1
                    if after > length:
                        after = -1
                    after_event = items[lo + after - 1] if after > 0 else -1
                    path_sessions = 0
                    for g in range(group_ptr[s], group_ptr[s + 1]):
                        m = group_n[g]
                        path_sessions += m
                        counts[p, _SESSIONS] += m
                        if group_error[g]:
                            counts[p, _ERRORS] += m
                        if group_recent[g]:
                            counts[p, _RECENT] += m
                        if after > 0:
                            counts[p, _NEXT] += m
                        e0, e1 = error_ptr[g], error_ptr[g + 1]
                        if e0 == e1:
                            continue
                        own = False
                        for q in range(k):
                            at = positions[q]
                            if 1 <= at <= length and _holds(error_positions, e0, e1, at):
                                own = True
                                if q < STEP_COLUMNS:
                                    counts[p, _STEP + q] += m
                        if own:
                            counts[p, _OWN] += m
                        if after > 0 and _holds(error_positions, e0, e1, after):
                            counts[p, _NEXT_ERRORS] += m
                            next_failures[p, after_event] += m
                    if after > 0 and not np.isnan(event_rate[after_event]):
                        rate_sum[p] += path_sessions * event_rate[after_event]
                        rate_sessions[p] += path_sessions
                    for v in range(value_ptr[s], value_ptr[s + 1]):
                        value_sessions[p, value_no[v]] += value_n[v]
                cursor[p] = t
                if quick:
                    set_steps(step_mask, pattern_items, a, b, False)
            tile_start = tile_end
    return hit, counts, rate_sum, rate_sessions, next_failures, value_sessions


@njit(cache=True, nogil=True)
def _path_masks(  # pragma: no cover - compiled
    hit: np.ndarray,
    hit_ptr: np.ndarray,
    candidate_lo: np.ndarray,
    every: np.ndarray,
    candidates: np.ndarray,
    sequence_count: int,
) -> tuple[np.ndarray, np.ndarray]:
    """(low, high): each sequence's mask of the patterns (at most 128) that ``hit`` says it holds
    (candidates as ``_session_kernel`` reads them)."""
    low = np.zeros(sequence_count, dtype=np.uint64)
    high = np.zeros(sequence_count, dtype=np.uint64)
    for p in range(hit_ptr.shape[0] - 1):
        bit = np.uint64(1) << np.uint64(p % 64)
        words = low if p < 64 else high
        for f in range(hit_ptr[p], hit_ptr[p + 1]):
            if hit[f]:
                t = candidate_lo[p] + f - hit_ptr[p]
                words[t if every[p] else candidates[t]] |= bit
    return low, high


@njit(cache=True, nogil=True)
def bit_weights(low: np.ndarray, high: np.ndarray, weights: np.ndarray) -> np.ndarray:  # pragma: no cover
    """Σ weights over the rows whose mask has bit b set, for b = 0..127 (low word first); one visit
    per set bit (at 50M high-entropy events the masks are about as many as the users)."""
    out = np.zeros(128, dtype=np.int64)
    for r in range(low.shape[0]):
        for word, base in ((low[r], 0), (high[r], 64)):
            b = base
            while word:
                if word & np.uint64(1):
                    out[b] += weights[r]
                word >>= np.uint64(1)
                b += 1
    return out


def mask_pairs(low: np.ndarray, high: np.ndarray, count: int) -> tuple[np.ndarray, np.ndarray]:
    """(pattern, sequence) pairs of the masks ``gap_evidence`` returns for ``count`` patterns,
    pattern by pattern, sequences ascending (as ``containing_sequences`` lists them)."""
    which, sequence = [], []
    for p in range(count):
        held = masked_sequences(low, high, p)
        which.append(np.full(len(held), p, dtype=np.int64))
        sequence.append(held)
    if not which:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    return np.concatenate(which), np.concatenate(sequence)


def masked_sequences(low: np.ndarray | None, high: np.ndarray | None, p: int) -> np.ndarray:
    """The sequences (ascending) whose mask has pattern p's bit (see ``gap_evidence``); a word array
    may be None when no pattern of it was asked, and of any unsigned width that holds its bits."""
    words = low if p < 64 else high
    if words is None:
        return np.zeros(0, np.int64)
    return _bit_positions(words, words.dtype.type(1 << (p % 64)))


@njit(cache=True, nogil=True)
def _bit_positions(words: np.ndarray, bit: Any) -> np.ndarray:  # pragma: no cover - compiled
    """Where ``words & bit`` is set, ascending: np.flatnonzero without the temporary arrays
    (journey families list a few hundred sets of a million paths each at 50M high-entropy events)."""
    count = 0
    for i in range(words.shape[0]):
        if words[i] & bit:
            count += 1
    out = np.empty(count, dtype=np.int64)
    at = 0
    for i in range(words.shape[0]):
        if words[i] & bit:
            out[at] = i
            at += 1
    return out


def _column(table: pa.Table, name: str) -> np.ndarray:
    return table.column(name).to_numpy(zero_copy_only=False)


def _user_counts(
    con: duckdb.DuckDBPyConnection, db: SequenceDatabase, sessions: PathSessions, low: np.ndarray, high: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(distinct users, users in the earlier half, users per segment value) of each of at most 128
    patterns, from the paths' masks: DuckDB ORs them per user in one pass over the sessions
    (``list_gap_user_masks.sql``), and the users per pattern are the bit counts over the distinct
    masks, weighted by how many users share each (the idea of the user signatures of
    ``create_kpaths.sql``). A pass over the sessions costs the same for a few thousand paths with
    millions of users (the demo) as for millions of paths with one user each."""
    assert db.path_ids is not None
    held = np.flatnonzero((low != 0) | (high != 0))
    masks_frame = pa.table(
        {
            "path_id": pa.array(db.path_ids[held], pa.int64()),
            "low": pa.array(low[held], pa.uint64()),
            "high": pa.array(high[held], pa.uint64()),
        }
    )
    automated = sessions.include_automated
    with registered(con, gap_path_masks=masks_frame):
        masks = fetch_arrow(con, "list_gap_user_masks", midpoint=sessions.midpoint, include_automated=automated)
        by_value = fetch_arrow(con, "list_gap_segment_user_masks", include_automated=automated)
    weights = _column(masks, "users")
    users = bit_weights(_column(masks, "low"), _column(masks, "high"), weights)
    earlier = bit_weights(_column(masks, "earlier_low"), _column(masks, "earlier_high"), weights)
    value_users = np.zeros((128, len(sessions.values)), dtype=np.int64)
    value_no = {value: v for v, value in enumerate(sessions.values)}
    segments, values = _column(by_value, "segment"), _column(by_value, "value")
    value_low, value_high, counts = _column(by_value, "low"), _column(by_value, "high"), _column(by_value, "users")
    # rows come ordered by segment and value: cut them where either changes
    changed = np.flatnonzero((segments[1:] != segments[:-1]) | (values[1:] != values[:-1])) + 1
    bounds = [0, *changed.tolist(), len(segments)] if len(segments) else [0]
    for lo, hi in itertools.pairwise(bounds):
        v = value_no[(str(segments[lo]), str(values[lo]))]
        value_users[:, v] = bit_weights(value_low[lo:hi], value_high[lo:hi], counts[lo:hi])
    return users, earlier, value_users


def gap_evidence(
    con: duckdb.DuckDBPyConnection,
    db: SequenceDatabase,
    sessions: PathSessions,
    patterns: list[tuple[int, ...]],
    *,
    max_gaps: list[int | None],
    framed: list[bool],
    event_rate: np.ndarray,
    index: EventIndex,
    signatures: np.ndarray | None = None,
    reach: int | None = None,
) -> tuple[dict[int, dict[str, Any]], list[dict[str, Any]], np.ndarray, np.ndarray]:
    """(evidence per pattern that some counted session holds, segment rows per pattern and value,
    and the sequences that contain each pattern as two words of bits per sequence, pattern p being bit
    p % 64 of the first word (p < 64) or the second: the pairs ``containing_sequences`` gives, in
    16 bytes a sequence however many patterns hold it; ``mask_pairs`` lists them).

    ``event_rate[e]``: the failure rate of event e anywhere (NaN when unknown); ``index``:
    ``matching.event_index(db)``; ``signatures``: ``matching.pair_signatures(db, reach)`` (made here
    when not given: a caller with several blocks makes them once), ``reach`` at least
    ``matching.signature_reach(max_gaps)`` (that when not given)."""
    if not patterns or db.sequence_count == 0:
        empty = np.zeros(db.sequence_count, dtype=np.uint64)
        return {}, [], empty, empty.copy()
    if len(patterns) > MAX_PATTERNS:
        raise ValueError(f"at most {MAX_PATTERNS} patterns per call")
    lengths = np.array([len(p) for p in patterns], dtype=np.int64)
    if (lengths == 0).any():
        raise ValueError("patterns must have at least one event")
    pattern_starts = np.zeros(len(patterns) + 1, dtype=np.int64)
    np.cumsum(lengths, out=pattern_starts[1:])
    flat = np.array([e for p in patterns for e in p], dtype=np.int32)
    gaps = np.array([-1 if g is None else int(g) for g in max_gaps], dtype=np.int64)
    reach = signature_reach(max_gaps) if reach is None else reach
    candidate_lo, candidate_hi, every = candidate_ranges(db, patterns, index)
    hit_ptr = np.zeros(len(patterns) + 1, dtype=np.int64)
    np.cumsum(candidate_hi - candidate_lo, out=hit_ptr[1:])
    top_event = max(int(db.items.max()) + 1 if len(db.items) else 0, 2)
    rates = np.full(top_event, np.nan)
    rates[: min(top_event, len(event_rate))] = event_rate[:top_event]
    chunks = CHUNKS_PER_THREAD * numba.get_num_threads()
    hit, counts, rate_sum, rate_sessions, next_failures, value_sessions = _session_kernel(
        np.ascontiguousarray(db.items, dtype=np.int32),
        np.ascontiguousarray(db.starts, dtype=np.int64),
        flat,
        pattern_starts,
        gaps,
        np.array(framed, dtype=np.bool_),
        candidate_lo,
        candidate_hi,
        every,
        index[1],
        hit_ptr,
        sessions.group_ptr,
        sessions.group_n,
        sessions.group_error,
        sessions.group_recent,
        sessions.error_ptr,
        sessions.error_positions,
        sessions.value_ptr,
        sessions.value_no,
        sessions.value_n,
        len(sessions.values),
        rates,
        chunks,
        TILE_ITEMS,
        step_table_size(db, flat),
        pair_signatures(db, reach) if signatures is None else signatures,
        signature_needs(flat, pattern_starts, gaps, reach),
    )
    low, high = _path_masks(hit, hit_ptr, candidate_lo, every, index[1], db.sequence_count)
    users, earlier, value_users = _user_counts(con, db, sessions, low, high)
    counts[:, _USERS] = users[: len(patterns)]
    counts[:, _EARLIER] = earlier[: len(patterns)]
    evidence: dict[int, dict[str, Any]] = {}
    for p in np.flatnonzero(counts[:, _SESSIONS] > 0).tolist():
        row = counts[p]
        failing = next_failures[p]
        evidence[p] = {
            "candidate": p,
            "sessions": int(row[_SESSIONS]),
            "users": int(row[_USERS]),
            "error_sessions": int(row[_ERRORS]),
            "recent_sessions": int(row[_RECENT]),
            "earlier_users": int(row[_EARLIER]),
            "own_error_sessions": int(row[_OWN]),
            **{f"step_errors_{q + 1}": int(row[_STEP + q]) for q in range(STEP_COLUMNS)},
            "next_sessions": int(row[_NEXT]),
            "next_error_sessions": int(row[_NEXT_ERRORS]),
            "next_expected_rate": float(rate_sum[p] / rate_sessions[p]) if rate_sessions[p] else None,
            # the event that most often failed right after (ties: the lowest id)
            "next_failing_event_id": int(failing.argmax()) if failing.any() else None,
        }
    segment_rows = [
        {
            "candidate": int(p),
            "segment": sessions.values[v][0],
            "value": sessions.values[v][1],
            "sessions": int(value_sessions[p, v]),
            "users": int(value_users[p, v]),
        }
        for p, v in zip(*np.nonzero(value_sessions), strict=True)
    ]
    return evidence, segment_rows, low, high
