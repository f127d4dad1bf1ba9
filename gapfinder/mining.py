"""Sequential patterns with gaps: the journeys that hold across sessions even with detours.

A pattern is a list of events; a session *contains* it when the events occur in that order,
other events allowed in between (at most ``max_gap`` of them between two consecutive pattern
steps when a gap bound is given, any number otherwise). The *support* of a pattern is the number
of sessions that contain it, counted once per session however often it occurs.

The miner is of the PrefixSpan family (Pei, Han et al. 2001): a depth-first growth of patterns
by appending one event at a time, each pattern carrying its *projected database* — for every
distinct session path that contains it, the positions where an occurrence can end. It works on
the workspace's distinct paths with their session counts (multiplicities), on integer-encoded
events, and keeps projections as index arrays in one arena that grows and shrinks with the
depth of the search, so memory stays near (depth × events in distinct paths) and sequences are
never copied. The search runs in a compiled kernel (numba); Python only prepares arrays.

Preconditions: event ids are small non-negative integers; sequence weights are positive.

Closed patterns: a pattern is *closed* when no pattern one step longer that contains it (an event
added before, between or after its steps) has the same support. Without a gap bound this is the
usual definition (no super-pattern of any length with the same support, because support can
only fall as a pattern grows); with a gap bound support is no longer monotone under insertion
in the middle, and the one-step definition is the one used.

References
----------
J. Pei, J. Han, B. Mortazavi-Asl, H. Pinto, Q. Chen, U. Dayal, M.-C. Hsu, "PrefixSpan: Mining
sequential patterns efficiently by prefix-projected pattern growth", Proc. ICDE 2001, 215–224.
J. Wang, J. Han, "BIDE: Efficient mining of frequent closed sequences", Proc. ICDE 2004 (the
closed-pattern definition).
"""

from __future__ import annotations

import functools
import itertools
import math
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from typing import Any

import numba
import numpy as np
from numba import njit

from gapfinder.compiled import (
    append_pattern_row,
    distinct_users,
    grow,
    grow_pattern_rows,
    grow_rows,
    heap_push,
    python_twin,
    support_threshold,
)
from gapfinder.errors import ConfigError
from gapfinder.gapped_mining import (
    END,
    GROUP_ENTRIES,
    MAX_WINDOW,
    window_dtype,
    window_kernel,
    window_kernel_python,
    window_width,
)

__all__ = [
    "DEFAULT_MAX_PATTERNS",
    "ENGINES",
    "PatternSet",
    "SequenceDatabase",
    "mine_patterns",
    "resolve_min_support",
]

DEFAULT_MAX_PATTERNS = 2_000_000
MAX_LENGTH = 64
MAX_POSITIONS = 2**31 - 2  # events in distinct paths: projections hold positions in 4 bytes

_I64 = np.int64
_I32 = np.int32


@dataclass(frozen=True)
class SequenceDatabase:
    """Distinct sequences of integer events with their multiplicities, stored flat.

    ``items[starts[i]:starts[i + 1]]`` is sequence i and ``weights[i]`` how many sessions took it.
    ``user_ptr``/``user_ids`` (optional) list the distinct users of each sequence, so that the
    miner can count distinct users per pattern exactly.
    """

    items: np.ndarray
    starts: np.ndarray
    weights: np.ndarray
    user_ptr: np.ndarray | None = None
    user_ids: np.ndarray | None = None
    path_ids: np.ndarray | None = None  # the workspace's path_id of each sequence, when loaded from one

    def __post_init__(self) -> None:
        if len(self.starts) != len(self.weights) + 1:
            raise ValueError("starts must have one entry more than weights")
        if len(self.items) and int(self.items.min()) < 0:
            raise ValueError("events must be non-negative integers")
        if len(self.weights) and int(self.weights.min()) <= 0:
            raise ValueError("weights must be positive")

    @classmethod
    def from_sequences(
        cls, sequences: list[list[int]] | list[tuple[int, ...]], weights: list[int] | None = None
    ) -> SequenceDatabase:
        """Build from Python lists (for tests and small inputs)."""
        lengths = np.array([len(s) for s in sequences], dtype=_I64)
        starts = np.zeros(len(sequences) + 1, dtype=_I64)
        np.cumsum(lengths, out=starts[1:])
        flat = [x for s in sequences for x in s]
        items = np.array(flat, dtype=_I32) if flat else np.zeros(0, dtype=_I32)
        w = np.ones(len(sequences), dtype=_I64) if weights is None else np.asarray(weights, dtype=_I64)
        return cls(items, starts, w)

    @property
    def sequence_count(self) -> int:
        return len(self.weights)

    @property
    def session_count(self) -> int:
        """Total weight: the number of sessions the distinct sequences stand for."""
        return int(self.weights.sum())

    @property
    def item_count(self) -> int:
        return int(self.items.max()) + 1 if len(self.items) else 0


@dataclass
class PatternSet:
    """Mined patterns: one row per pattern, most sessions first.

    ``events[i, :lengths[i]]`` is pattern i as event ids (the rest of the row is -1); ``sessions``
    its support; ``users`` its distinct users (-1 when the database carried no users);
    ``is_closed`` whether it is closed (False throughout when closure was not asked for).
    """

    events: np.ndarray
    lengths: np.ndarray
    sessions: np.ndarray
    users: np.ndarray
    is_closed: np.ndarray
    parameters: dict[str, Any] = field(default_factory=dict)

    def __len__(self) -> int:
        return len(self.lengths)

    @property
    def paths(self) -> list[tuple[int, ...]]:
        """Each pattern as a tuple of event ids."""
        rows = self.events.tolist()
        return [tuple(row[:n]) for row, n in zip(rows, self.lengths.tolist(), strict=True)]

    def flat_events(self) -> tuple[np.ndarray, np.ndarray]:
        """(values, offsets): the patterns' events concatenated, and where each pattern starts."""
        width = self.events.shape[1] if self.events.ndim == 2 else 0
        mask = np.arange(width)[None, :] < self.lengths[:, None]
        offsets = np.zeros(len(self) + 1, dtype=np.int32)
        np.cumsum(self.lengths, out=offsets[1:])
        return self.events[mask].astype(np.int32), offsets

    def as_dict(self) -> dict[tuple[int, ...], int]:
        """{pattern: support}, convenient for comparisons."""
        return dict(zip(self.paths, self.sessions.tolist(), strict=True))


def resolve_min_support(value: float, session_count: int) -> int:
    """A minimum support given as a fraction of sessions (below 1) or a count (1 or more).

    Examples
    --------
    >>> resolve_min_support(0.01, 25_000)
    250
    >>> resolve_min_support(250, 25_000)
    250
    """
    if value <= 0 or math.isnan(value):
        raise ConfigError(f"--min-support {value:g}: give a fraction of sessions (0 < f < 1) or a count (1 or more)")
    if value < 1:
        return max(1, math.ceil(value * session_count))
    if value != int(value):
        raise ConfigError(f"--min-support {value:g}: a count of sessions must be a whole number")
    return int(value)


# --------------------------------------------------------------------------------------------
# The compiled kernel. Projections are flat positions into ``items``; entries of one pattern are
# in ascending order, hence grouped by sequence. Without a gap bound a pattern keeps one entry per
# sequence (the end of its leftmost occurrence, which leaves the most room to grow); with a gap
# bound it keeps every position where an occurrence obeying the bound can end, because a later
# end may allow an extension that the earliest one does not.
# --------------------------------------------------------------------------------------------


LOOK_AHEAD = 16  # projection entries read ahead in a scan, so that their memory lines are on the way
REPLAY_ENTRIES = 1 << 22  # children's entries a counting pass keeps for the writing pass (12 bytes each)


@njit(cache=True, nogil=True)
def _scan(  # pragma: no cover - compiled
    arena: np.ndarray,
    lo: int,
    hi: int,
    is_root: bool,
    cells: np.ndarray,
    weights: np.ndarray,
    max_gap: int,
    stamp: np.ndarray,
    last_pos: np.ndarray,
    visit: int,
    support: np.ndarray,
    entry_count: np.ndarray,
    write_at: np.ndarray,
    is_wanted: np.ndarray,
    out: np.ndarray,
    out_seq: np.ndarray,
    writing: bool,
    recorded: np.ndarray,
) -> tuple[int, int]:
    """One pass over a projection: count (or, when writing, emit) each child's entries.

    ``cells[j]`` is (event, sequence) of position j, with a last row of (-1, -1): the event after
    an entry and the sequence it belongs to sit side by side, so an entry costs one memory line,
    and a sequence ends where the sequence number changes. The entries of a projection lie far
    apart in ``cells`` (at 50M high-entropy events, one line fetched from memory per entry), so
    the line of the entry LOOK_AHEAD places on is read early and is there when its turn comes
    (50M high-entropy mining 39.6 -> 32 s); ``out_seq`` gets the sequence of each written entry.
    Returns the visit counter after the pass (one visit per sequence, used to count a child once
    per sequence and to drop duplicate end positions) and, when counting, how many entries of all
    children it wrote to ``recorded`` as (event, position, sequence), in the order the writing pass
    would emit them (one more than its rows when they did not fit: the writing pass is needed).
    """
    current = -1
    gapped = max_gap >= 0
    unbounded = cells.shape[0]
    ahead = 0
    last = hi - 1
    room = recorded.shape[0]
    kept = 0
    for idx in range(lo, hi):
        e = arena[idx]
        ahead += cells[arena[min(idx + LOOK_AHEAD, last)] + 1, 0]
        s = idx - lo if is_root else cells[e, 1]
        if s != current:
            visit += 1
            current = s
        stop = unbounded if (is_root or not gapped) else e + 2 + max_gap
        j = e + 1
        while j < stop and cells[j, 1] == s:
            x = cells[j, 0]
            emit = False
            if stamp[x] != visit:
                stamp[x] = visit
                last_pos[x] = j
                emit = True
                if not writing:
                    support[x] += weights[s]
            elif gapped and j > last_pos[x]:
                last_pos[x] = j
                emit = True
            if emit:
                if writing:
                    if is_wanted[x]:
                        out[write_at[x]] = j
                        out_seq[write_at[x]] = s
                        write_at[x] += 1
                else:
                    entry_count[x] += 1
                    if kept < room:
                        recorded[kept, 0] = x
                        recorded[kept, 1] = j
                        recorded[kept, 2] = s
                    kept += 1
            j += 1
    if ahead < lo - hi - 1:  # never (each read is an event id or the end marker, -1): keeps the reads
        last_pos[0] = ahead
    return visit, min(kept, room + 1)


@njit(cache=True, nogil=True)
def _replay(  # pragma: no cover - compiled
    recorded: np.ndarray, count: int, is_wanted: np.ndarray, write_at: np.ndarray, out: np.ndarray, out_seq: np.ndarray
) -> None:
    """The writing pass of ``_scan`` from what its counting pass recorded: read in order from one
    block instead of fetching every entry's memory line again."""
    for r in range(count):
        x = recorded[r, 0]
        if is_wanted[x]:
            out[write_at[x]] = recorded[r, 1]
            out_seq[write_at[x]] = recorded[r, 2]
            write_at[x] += 1


@njit(cache=True, nogil=True)
def _mine_kernel(  # pragma: no cover - compiled
    cells: np.ndarray,
    starts: np.ndarray,
    weights: np.ndarray,
    item_count: int,
    min_support: int,
    min_length: int,
    max_length: int,
    max_gap: int,
    top_k: int,
    check_closure: bool,
    max_rows: int,
    user_ptr: np.ndarray,
    user_ids: np.ndarray,
    sole_user: np.ndarray,
    user_count: int,
    replay_entries: int,
    first_lo: int,
    first_hi: int,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, int, bool]:
    """Depth-first pattern growth. Returns rows (events, length, support, users), the row count
    and whether ``max_rows`` stopped the search. With ``check_closure`` the children of patterns of
    ``max_length`` are also returned (users = -2) so that closure can be decided afterwards.
    Only patterns whose first event id is in [first_lo, first_hi) are grown, so disjoint ranges
    can be mined at the same time and their rows concatenated in range order.
    """
    seq_total = starts.shape[0] - 1
    depth_cap = max_length + 1
    width = depth_cap
    # positions fit in 4 bytes (mine_patterns refuses more than MAX_POSITIONS events)
    arena = np.empty(max(1024, 2 * cells.shape[0] + seq_total), dtype=np.int32)
    # the sequence of each arena entry, side by side: counting a pattern's users reads them in
    # order instead of looking each entry's sequence up in ``cells`` (a cache miss per entry)
    arena_seq = np.empty(arena.shape[0], dtype=np.int32)
    top = 0

    child_item = np.empty((depth_cap, item_count), dtype=np.int64)
    child_support = np.empty((depth_cap, item_count), dtype=np.int64)
    child_lo = np.empty((depth_cap, item_count), dtype=np.int64)
    child_hi = np.empty((depth_cap, item_count), dtype=np.int64)
    child_total = np.zeros(depth_cap, dtype=np.int64)
    child_next = np.zeros(depth_cap, dtype=np.int64)
    arena_mark = np.zeros(depth_cap + 1, dtype=np.int64)

    stamp = np.full(item_count, -1, dtype=np.int64)
    last_pos = np.zeros(item_count, dtype=np.int64)
    support = np.zeros(item_count, dtype=np.int64)
    entry_count = np.zeros(item_count, dtype=np.int64)
    write_at = np.zeros(item_count, dtype=np.int64)
    is_wanted = np.zeros(item_count, dtype=np.bool_)
    visit = 0
    user_stamp = np.full(max(user_count, 1), -1, dtype=np.int32)  # node numbers: 4 bytes a user, fewer misses
    node_no = 0

    heap = np.empty(max(top_k, 1), dtype=np.int64)
    heap_size = 0
    # a node's children's entries as its counting pass finds them (each position at most once)
    recorded = np.empty((min(replay_entries, cells.shape[0]), 3), dtype=np.int32)
    kept = 0

    pattern = np.zeros(width, dtype=np.int64)
    out_items = np.full((1024, width), -1, dtype=np.int32)
    out_len = np.empty(1024, dtype=np.int32)
    out_support = np.empty(1024, dtype=np.int64)
    out_users = np.empty(1024, dtype=np.int64)
    rows = 0
    stopped = False

    # The root's projection: one virtual entry per sequence, just before its first event.
    for s in range(seq_total):
        arena[s] = starts[s] - 1
        arena_seq[s] = s
    root_hi = seq_total
    top = root_hi

    level = 0
    expand_lo = 0
    expand_hi = root_hi
    expand_root = True
    expand_length = 0  # length of the pattern being expanded

    while True:
        if expand_hi >= 0:
            # Expand the current node: its children go to level `level`.
            threshold = support_threshold(min_support, top_k, heap, heap_size)
            visit, kept = _scan(
                arena,
                expand_lo,
                expand_hi,
                expand_root,
                cells,
                weights,
                max_gap,
                stamp,
                last_pos,
                visit,
                support,
                entry_count,
                write_at,
                is_wanted,
                arena,
                arena_seq,
                False,
                recorded,
            )
            is_check_level = expand_length == max_length
            n = 0
            for x in range(item_count):
                if expand_root and (x < first_lo or x >= first_hi):
                    continue
                if entry_count[x] > 0 and support[x] >= threshold:
                    child_item[level, n] = x
                    child_support[level, n] = support[x]
                    n += 1
            if is_check_level:
                # Children one step past max_length: recorded only to decide closure.
                for c in range(n):
                    pattern[expand_length] = child_item[level, c]
                    out_items, out_len, out_support, out_users = append_pattern_row(
                        out_items, out_len, out_support, out_users, rows, pattern, expand_length + 1,
                        child_support[level, c], -2,
                    )  # fmt: skip
                    rows += 1
                n = 0
            if n > 0:
                if top_k > 0:
                    # Most supported first, so the top-k threshold rises early.
                    order = np.argsort(-child_support[level, :n], kind="mergesort")
                    sorted_items = child_item[level, :n][order].copy()
                    sorted_support = child_support[level, :n][order].copy()
                    child_item[level, :n] = sorted_items
                    child_support[level, :n] = sorted_support
                arena_mark[level] = top
                needed = top
                for c in range(n):
                    x = child_item[level, c]
                    child_lo[level, c] = needed
                    write_at[x] = needed
                    needed += entry_count[x]
                    child_hi[level, c] = needed
                    is_wanted[x] = True
                arena = grow(arena, needed)
                arena_seq = grow(arena_seq, needed)
                if kept <= recorded.shape[0]:
                    _replay(recorded, kept, is_wanted, write_at, arena, arena_seq)
                else:
                    visit, kept = _scan(
                        arena,
                        expand_lo,
                        expand_hi,
                        expand_root,
                        cells,
                        weights,
                        max_gap,
                        stamp,
                        last_pos,
                        visit,
                        support,
                        entry_count,
                        write_at,
                        is_wanted,
                        arena,
                        arena_seq,
                        True,
                        recorded,
                    )
                for c in range(n):
                    is_wanted[child_item[level, c]] = False
                top = needed
            else:
                arena_mark[level] = top
            for x in range(item_count):
                support[x] = 0
                entry_count[x] = 0
            child_total[level] = n
            child_next[level] = 0
            expand_hi = -1
            expand_root = False

        # Visit the next child at this level, or go back up.
        if child_next[level] >= child_total[level]:
            top = arena_mark[level]
            if level == 0:
                break
            level -= 1
            continue
        c = child_next[level]
        child_next[level] += 1
        sup = child_support[level, c]
        threshold = support_threshold(min_support, top_k, heap, heap_size)
        if sup < threshold:
            if top_k > 0:
                child_next[level] = child_total[level]  # sorted: the rest are smaller still
            continue
        length = level + 1
        pattern[level] = child_item[level, c]
        lo = child_lo[level, c]
        hi = child_hi[level, c]
        if length >= min_length:
            if rows >= max_rows:
                stopped = True
                break
            users = -1
            if user_count > 0:
                node_no += 1
                users = distinct_users(arena_seq, lo, hi, sole_user, user_ptr, user_ids, user_stamp, node_no)
            out_items, out_len, out_support, out_users = append_pattern_row(
                out_items, out_len, out_support, out_users, rows, pattern, length, sup, users
            )
            rows += 1
            if top_k > 0:
                heap_size = heap_push(heap, heap_size, sup)
        if length < max_length or (check_closure and length == max_length):
            level += 1
            expand_lo = lo
            expand_hi = hi
            expand_root = False
            expand_length = length

    return out_items[:rows], out_len[:rows], out_support[:rows], out_users[:rows], rows, stopped


@njit(cache=True, nogil=True)
def _row_hash(row: np.ndarray, length: int, skip: int, support: int) -> np.int64:  # pragma: no cover
    h = np.int64(-3750763034362895579)  # FNV-1a offset basis as a signed 64-bit value
    for d in range(length):
        if d == skip:
            continue
        h = (h ^ np.int64(row[d] + 1)) * np.int64(1099511628211)
    h = (h ^ np.int64(support)) * np.int64(1099511628211)
    return h


@njit(cache=True, nogil=True)
def _closed_flags(  # pragma: no cover - compiled
    out_items: np.ndarray, out_len: np.ndarray, out_support: np.ndarray
) -> np.ndarray:
    """For each row: False when some row one step longer contains it with the same support.

    Rows are hashed on (events, support); each longer row's one-event deletions are looked up
    and confirmed event by event, so hash collisions cannot give a wrong answer.
    """
    n = out_len.shape[0]
    closed = np.ones(n, dtype=np.bool_)
    hashes = np.empty(n, dtype=np.int64)
    for r in range(n):
        hashes[r] = _row_hash(out_items[r], out_len[r], -1, out_support[r])
    order = np.argsort(hashes, kind="mergesort")
    sorted_hashes = hashes[order]
    for q in range(n):
        length = out_len[q]
        if length < 2:
            continue
        for skip in range(length):
            if skip > 0 and out_items[q, skip] == out_items[q, skip - 1]:
                continue  # deleting either of two equal neighbours gives the same pattern
            h = _row_hash(out_items[q], length, skip, out_support[q])
            k = np.searchsorted(sorted_hashes, h)
            while k < n and sorted_hashes[k] == h:
                p = order[k]
                k += 1
                if out_len[p] != length - 1 or out_support[p] != out_support[q]:
                    continue
                same = True
                t = 0
                for d in range(length):
                    if d == skip:
                        continue
                    if out_items[p, t] != out_items[q, d]:
                        same = False
                        break
                    t += 1
                if same:
                    closed[p] = False
    return closed


# Small inputs run the very same kernels as plain Python (``gapfinder.compiled.python_twin``): numba's
# first call costs far more than mining a few hundred distinct paths takes in Python.
PYTHON_ENGINE_MAX_POSITIONS = 4_096  # events in distinct paths
PYTHON_ENGINE_MAX_ROWS = 20_000  # patterns (beyond, the compiled kernel takes over)
ENGINES = ("auto", "compiled", "python")


_mine_python = python_twin(
    _mine_kernel,
    grow,
    grow_rows,
    grow_pattern_rows,
    append_pattern_row,
    distinct_users,
    _scan,
    _replay,
    heap_push,
    support_threshold,
)
_closed_flags_python = python_twin(_closed_flags, _row_hash)


def use_python(engine: str, positions: int) -> bool:
    """Whether ``engine`` (auto, compiled, python) means the plain-Python twins for this input."""
    if engine not in ENGINES:
        raise ConfigError(f"engine {engine!r}: give one of {', '.join(ENGINES)}")
    return engine == "python" or (engine == "auto" and positions <= PYTHON_ENGINE_MAX_POSITIONS)


def position_cells(db: SequenceDatabase) -> np.ndarray:
    """(event, sequence number) of each position of ``db.items``, and a last row of (-1, -1)."""
    cells = np.empty((len(db.items) + 1, 2), dtype=_I32)
    cells[:-1, 0] = db.items
    cells[:-1, 1] = np.repeat(np.arange(db.sequence_count, dtype=_I32), np.diff(db.starts))
    cells[-1] = -1
    return cells


PARALLEL_MIN_POSITIONS = 200_000  # events in distinct paths below which one thread mines alone
# Ranges of first events per thread: each range scans the whole database once for its first events
# (the root), so more ranges even out the work but repeat that scan (50M high-entropy mining, 2 cores:
# 32 ranges a thread 33-34 s, 8: 25-28 s, 4: 24-26 s, 2: 22.9-23.3 s; the same patterns); fewer,
# larger ranges hold larger root projections at once (100M: 2 a thread 53.4 s / 3.51 GB, 3 a thread
# 52.7 s / 3.15 GB; at 50M 2 and 3 took the same time).
FIRST_EVENT_RANGES_PER_THREAD = 3


def _first_event_ranges(db: SequenceDatabase, range_count: int) -> list[tuple[int, int]]:
    """Contiguous ranges of first-event ids holding about equal shares of the events (a proxy for
    the work of growing the patterns that start there)."""
    item_count = max(db.item_count, 1)
    counts = np.bincount(np.asarray(db.items, dtype=np.int64), minlength=item_count).astype(np.float64)
    cumulative = np.cumsum(counts)
    total = cumulative[-1] if len(cumulative) else 0.0
    if total <= 0 or range_count <= 1:
        return [(0, item_count)]
    cuts = np.searchsorted(cumulative, total * np.arange(1, range_count) / range_count, side="left") + 1
    bounds = np.unique(np.concatenate([[0], np.minimum(cuts, item_count), [item_count]]))
    return [(int(a), int(b)) for a, b in itertools.pairwise(bounds) if b > a]


def _mine_compiled(
    db: SequenceDatabase, kernel: Any, arguments: list[Any], *, top_k: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, bool]:
    """``kernel`` (compiled) over all first events, or, with several threads and no top-k (whose
    threshold depends on the order of the search), over ranges of first events at the same time
    (the kernel releases the GIL); rows are concatenated in range order, which is the order one
    search gives. ``max_rows`` holds for the total as it does for one search."""
    threads = numba.get_num_threads()
    if threads <= 1 or top_k > 0 or len(db.items) < PARALLEL_MIN_POSITIONS:
        out_items, out_len, out_support, out_users, _rows, stopped = kernel(*arguments)
        return out_items, out_len, out_support, out_users, stopped
    ranges = _first_event_ranges(db, threads * FIRST_EVENT_RANGES_PER_THREAD)
    with ThreadPoolExecutor(max_workers=threads) as pool:
        parts = list(pool.map(lambda r: kernel(*[*arguments[:-2], r[0], r[1]]), ranges))
    max_rows = int(arguments[10])
    stopped = any(part[5] for part in parts) or sum(int(part[4]) for part in parts) > max_rows
    return (
        np.concatenate([part[0] for part in parts]),
        np.concatenate([part[1] for part in parts]),
        np.concatenate([part[2] for part in parts]),
        np.concatenate([part[3] for part in parts]),
        stopped,
    )


def _sole_users(user_ptr: np.ndarray, user_ids: np.ndarray, sequence_count: int) -> np.ndarray:
    """Each sequence's only user, or -1 when it has several (or none): one lookup instead of three
    when the kernel counts a pattern's users."""
    sole = np.full(sequence_count, -1, dtype=_I32)
    counts = np.diff(np.asarray(user_ptr, dtype=_I64))[:sequence_count]
    one = np.flatnonzero(counts == 1)
    sole[one] = np.asarray(user_ids)[np.asarray(user_ptr, dtype=_I64)[one]]
    return sole


def _run_kernel(
    db: SequenceDatabase,
    cells: Callable[[], np.ndarray],
    *,
    min_support: int,
    min_length: int,
    max_length: int,
    max_gap: int,
    top_k: int,
    check_closure: bool,
    max_rows: int,
    engine: str = "auto",
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Mine with the windowed kernel (``gapped_mining``) where the gap is bounded and the windows
    are narrow enough, else with the general one; ``cells`` gives the general kernel's cells."""
    has_users = db.user_ptr is not None and db.user_ids is not None and len(db.user_ids) > 0
    user_ptr = db.user_ptr if has_users else np.zeros(db.sequence_count + 1, dtype=_I64)
    user_ids = db.user_ids if has_users else np.zeros(1, dtype=_I32)
    user_count = int(user_ids.max()) + 1 if has_users else 0  # type: ignore[union-attr]
    item_count = max(db.item_count, 1)
    width = window_width(max_length, max_gap, check_closure)
    event_type = window_dtype(item_count)
    windowed = max_gap >= 0 and width <= MAX_WINDOW and event_type is not None
    if windowed:
        data = np.ascontiguousarray(db.items, dtype=_I32)
        tuning: tuple[Any, ...] = (np.full((1, width), END[event_type], dtype=event_type), GROUP_ENTRIES)
        kernel: Any = window_kernel
        python_kernel: Callable[..., Any] = window_kernel_python
    else:
        data, tuning = cells(), (REPLAY_ENTRIES,)
        kernel, python_kernel = _mine_kernel, _mine_python
    arguments: list[Any] = [
        data,
        np.ascontiguousarray(db.starts, dtype=_I64),
        np.ascontiguousarray(db.weights, dtype=_I64),
        item_count,
        min_support,
        min_length,
        max_length,
        max_gap,
        top_k,
        check_closure,
        max_rows,
        np.ascontiguousarray(user_ptr, dtype=_I64),
        np.ascontiguousarray(user_ids, dtype=_I32),
        _sole_users(user_ptr, user_ids, db.sequence_count),  # type: ignore[arg-type]
        user_count,
        *tuning,
        0,
        item_count,
    ]
    stopped = True
    if use_python(engine, len(db.items)):
        cap = max_rows if engine == "python" else min(max_rows, PYTHON_ENGINE_MAX_ROWS)
        found = python_kernel(*arguments[:10], cap, *arguments[11:])
        out_items, out_len, out_support, out_users, _rows, stopped = found
        if stopped and cap < max_rows:  # too much work for plain Python: let the compiled kernel finish it
            stopped = True
            engine = "compiled"
        elif not stopped:
            return out_items, out_len, out_support, out_users
    if engine != "python":
        out_items, out_len, out_support, out_users, stopped = _mine_compiled(db, kernel, arguments, top_k=top_k)
    if stopped:
        raise ConfigError(
            f"more than {max_rows:,} patterns qualify: raise --min-support, lower --max-length, "
            "set a --max-gap or keep --closed on"
        )
    return out_items, out_len, out_support, out_users


def mine_patterns(
    db: SequenceDatabase,
    *,
    min_support: int = 1,
    min_length: int = 1,
    max_length: int = 6,
    max_gap: int | None = None,
    closed: bool = False,
    top_k: int | None = None,
    max_patterns: int = DEFAULT_MAX_PATTERNS,
    engine: str = "auto",
) -> PatternSet:
    """Mine the patterns contained in at least ``min_support`` sessions.

    Parameters
    ----------
    db:
        The distinct session paths with their session counts (and optionally their users).
    min_support:
        Minimum number of sessions (weights) containing a pattern.
    min_length, max_length:
        Lengths of the patterns returned (events per pattern).
    max_gap:
        Most events allowed between two consecutive steps of a pattern; None for any number,
        0 for contiguous runs only.
    closed:
        Return only closed patterns (see the module docstring).
    top_k:
        Return only the ``top_k`` patterns with the most sessions (ties broken by length, then by
        event ids), found with a support threshold that rises during the search.
    max_patterns:
        Stop with a ConfigError rather than return more rows than this (pattern explosion).
    engine:
        ``compiled`` (numba), ``python`` (the same kernel as plain Python) or ``auto``: plain
        Python for inputs of at most 4,096 events in distinct paths, where it finishes before the
        compiled kernel would have started, and the compiled kernel otherwise.

    Returns
    -------
    PatternSet sorted by sessions (descending), then length, then event ids.

    Examples
    --------
    >>> db = SequenceDatabase.from_sequences([[0, 1, 2, 3, 4], [1, 1, 1, 3, 4], [2, 1, 2, 2, 0], [1, 1, 1, 2, 2]])
    >>> found = mine_patterns(db, min_support=3, max_length=3)
    >>> found.as_dict()[(1, 2)]
    3
    >>> sorted(p for p in mine_patterns(db, min_support=3, closed=True).paths)
    [(1,), (1, 2), (1, 3, 4), (2,)]
    """
    if min_support < 1:
        raise ConfigError(f"minimum support {min_support}: give at least 1 session")
    if not 1 <= min_length <= max_length:
        raise ConfigError(f"pattern lengths {min_length}..{max_length}: give 1 <= min length <= max length")
    if max_length > MAX_LENGTH:
        raise ConfigError(f"--max-length {max_length}: give {MAX_LENGTH} or less")
    if max_gap is not None and max_gap < 0:
        raise ConfigError(f"--max-gap {max_gap}: give 0 (contiguous) or more, or leave it unbounded")
    if top_k is not None and top_k < 1:
        raise ConfigError(f"top-k {top_k}: give at least 1")
    gap = -1 if max_gap is None else int(max_gap)
    parameters: dict[str, Any] = {
        "min_support": min_support,
        "min_length": min_length,
        "max_length": max_length,
        "max_gap": max_gap,
        "closed": closed,
        "top_k": top_k,
    }
    if db.sequence_count == 0 or len(db.items) == 0:
        return _empty(parameters)
    if len(db.items) > MAX_POSITIONS:
        raise ConfigError(
            f"{len(db.items):,} events in distinct session paths: the miner takes at most {MAX_POSITIONS:,}; "
            "mine a period or a sample of the sessions"
        )
    cells = functools.cache(lambda: position_cells(db))  # the general kernel's input, made once if needed
    run: dict[str, Any] = dict(
        min_length=min_length, max_length=max_length, max_gap=gap, max_rows=max_patterns, engine=engine
    )

    if not closed:
        if top_k:
            rows = _top_k_rows(db, cells, top_k=top_k, min_support=min_support, **run)
        else:
            rows = _run_kernel(db, cells, min_support=min_support, top_k=0, check_closure=False, **run)
        result = _assemble(*rows, closed_flags=None, top_k=top_k)
    else:
        threshold = min_support
        if top_k:
            # The k-th support over all patterns bounds that of the k-th closed pattern from above;
            # lower the threshold until k closed patterns qualify.
            first = _top_k_rows(db, cells, top_k=top_k, min_support=min_support, **run)
            threshold = max(min_support, _kth_support(first[2], top_k))
        while True:
            rows = _run_kernel(db, cells, min_support=threshold, top_k=0, check_closure=True, **run)
            closure = _closed_flags_python if use_python(engine, len(rows[1])) else _closed_flags
            flags = closure(rows[0], rows[1], rows[2])
            result = _assemble(*rows, closed_flags=flags, top_k=top_k)
            if not top_k or len(result) >= top_k or threshold <= min_support:
                break
            threshold = max(min_support, threshold // 2)
    result.parameters = parameters
    return result


def _top_k_rows(
    db: SequenceDatabase,
    cells: Callable[[], np.ndarray],
    *,
    top_k: int,
    min_support: int,
    min_length: int,
    max_length: int,
    max_gap: int,
    max_rows: int,
    engine: str = "auto",
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Top-k rows by iterative deepening on pattern length.

    The k-th support among patterns of at most L events is a lower bound for the k-th support
    among longer ones, so each round starts from the previous round's bound and the deep search
    never wanders with a low threshold. When a round finds no pattern of its full length above
    the bound, no longer pattern can qualify (a pattern's prefix has at least its support) and
    that round's rows are the answer.
    """
    seed = min_support
    for length in range(min_length, max_length + 1):
        rows = _run_kernel(
            db,
            cells,
            min_support=seed,
            top_k=top_k,
            check_closure=False,
            min_length=min_length,
            max_length=length,
            max_gap=max_gap,
            max_rows=max_rows,
            engine=engine,
        )
        seed = max(seed, _kth_support(rows[2], top_k))
        if length == max_length or not bool((rows[1] == length).any()):
            return rows
    raise AssertionError("unreachable")  # pragma: no cover


def _kth_support(supports: np.ndarray, k: int) -> int:
    if len(supports) < k:
        return 0
    return int(np.sort(supports)[::-1][k - 1])


def _empty(parameters: dict[str, Any]) -> PatternSet:
    return PatternSet(
        np.zeros((0, 1), _I32), np.zeros(0, _I32), np.zeros(0, _I64), np.zeros(0, _I64), np.zeros(0, bool), parameters
    )


def _assemble(
    out_items: np.ndarray,
    out_len: np.ndarray,
    out_support: np.ndarray,
    out_users: np.ndarray,
    *,
    closed_flags: np.ndarray | None,
    top_k: int | None,
) -> PatternSet:
    """Rows of the kernel → a sorted PatternSet (closure-check rows dropped)."""
    keep = out_users != -2
    if closed_flags is not None:
        keep &= closed_flags
    items, lengths, support, users = out_items[keep], out_len[keep], out_support[keep], out_users[keep]
    is_closed = closed_flags[keep] if closed_flags is not None else np.zeros(len(lengths), dtype=bool)
    # Sessions descending, then length, then the events themselves (lexsort's last key leads).
    keys = [items[:, d] for d in range(items.shape[1] - 1, -1, -1)]
    order = np.lexsort((*keys, lengths, -support)) if len(lengths) else np.zeros(0, dtype=_I64)
    if top_k:
        order = order[:top_k]
    width = int(lengths.max()) if len(lengths) else 1
    return PatternSet(
        np.ascontiguousarray(items[order, :width]),
        lengths[order].astype(_I32),
        support[order].astype(_I64),
        users[order].astype(_I64),
        is_closed[order].astype(bool),
    )
