"""The miner's kernel for a bounded gap: each projection entry carries the events that follow it.

With at most ``max_gap`` events between two steps, an occurrence of a pattern of L steps spans at
most (L - 1) × (max_gap + 1) + 1 positions. So when a pattern's first step is placed, the events
that any of its extensions up to the longest length mined can use are already known: the next
(last_depth × (max_gap + 1)) events of the sequence. Each projection entry keeps them inline, as
a small row of event ids (a *window*), beside its position and sequence. Growing a pattern reads
the first max_gap + 1 events of each entry's window and hands each child the rest of the window
shifted to its own end, so a scan reads its projection front to back and writes its children
front to back. The general kernel (``mining._mine_kernel``) instead looks each entry's next events
up in the database, one memory line fetched per entry, at places spread over all events: on large,
high-entropy inputs that fetch is where its time goes (50M high-entropy events, 2 cores: mining
26 s with it, 13 s with windows, the same patterns).

Windows make entries larger (8 bytes of position and sequence plus one or two bytes an event), so
a node's children are not all written at once: the counting pass counts them all, and their
entries are written in groups of at most ``GROUP_ENTRIES`` when the search reaches them, the
parent's projection read again for each group (a child larger than that is a group of its own).

The results are the kernel's in ``mining`` row for row (tested against it and brute force);
``mining.mine_patterns`` picks this kernel whenever the gap is bounded and a window is at most
``MAX_WINDOW`` events wide.
"""

from __future__ import annotations

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

__all__ = [
    "END",
    "GROUP_ENTRIES",
    "MAX_WINDOW",
    "window_dtype",
    "window_kernel",
    "window_kernel_python",
    "window_width",
]

GROUP_ENTRIES = 1 << 22  # children's entries written at once (about 100 MB with windows of 18 events)
MAX_WINDOW = 96  # events carried per entry; wider windows (long patterns with long gaps) use the general kernel
END = {np.dtype(np.uint8): 255, np.dtype(np.uint16): 65_535}  # the mark after a sequence's last event


def window_width(max_length: int, max_gap: int, check_closure: bool) -> int:
    """Events an entry of a one-step pattern carries: enough for every step still to be added."""
    last_depth = max_length if check_closure else max_length - 1  # deepest pattern length expanded
    return max(1, last_depth * (max_gap + 1))


def window_dtype(item_count: int) -> np.dtype | None:
    """The narrowest event type that leaves room for the end mark, or None when ids are too large."""
    if item_count < 255:
        return np.dtype(np.uint8)
    if item_count < 65_535:
        return np.dtype(np.uint16)
    return None


@njit(cache=True, nogil=True)
def _root_scan(  # pragma: no cover - compiled
    items: np.ndarray,
    starts: np.ndarray,
    weights: np.ndarray,
    first_lo: int,
    first_hi: int,
    end_mark: int,
    stamp: np.ndarray,
    visit: int,
    support: np.ndarray,
    entry_count: np.ndarray,
    write_at: np.ndarray,
    is_wanted: np.ndarray,
    writing: bool,
    out_pos: np.ndarray,
    out_seq: np.ndarray,
    out_win: np.ndarray,
) -> int:
    """The root's pass: every position of an event in [first_lo, first_hi) is an entry of its
    one-step pattern (counted, or written with the events after it as its window)."""
    width = out_win.shape[1]
    for s in range(starts.shape[0] - 1):
        visit += 1
        a = starts[s]
        b = starts[s + 1]
        for j in range(a, b):
            x = items[j]
            if x < first_lo or x >= first_hi:
                continue
            if writing:
                if is_wanted[x]:
                    w = write_at[x]
                    out_pos[w] = j
                    out_seq[w] = s
                    for c in range(width):
                        k = j + 1 + c
                        out_win[w, c] = items[k] if k < b else end_mark
                    write_at[x] = w + 1
            else:
                if stamp[x] != visit:
                    stamp[x] = visit
                    support[x] += weights[s]
                entry_count[x] += 1
    return visit


@njit(cache=True, nogil=True)
def _window_scan(  # pragma: no cover - compiled
    pos: np.ndarray,
    seq: np.ndarray,
    win: np.ndarray,
    lo: int,
    hi: int,
    max_gap: int,
    end_mark: int,
    weights: np.ndarray,
    stamp: np.ndarray,
    last_pos: np.ndarray,
    visit: int,
    support: np.ndarray,
    entry_count: np.ndarray,
    write_at: np.ndarray,
    is_wanted: np.ndarray,
    writing: bool,
    copy_width: int,
) -> int:
    """One pass over a projection: count (or, when writing, emit) each child's entries.

    A child's entries in a sequence are the distinct positions where it can end, ascending (the
    general kernel's rule); a child entry gets the ``copy_width`` events after its own position,
    which lie inside the parent's window. Children are written above ``hi`` in the same arrays.
    """
    current = -1
    for idx in range(lo, hi):
        s = seq[idx]
        if s != current:
            visit += 1
            current = s
        e = pos[idx]
        for t in range(max_gap + 1):
            x = win[idx, t]
            if x == end_mark:
                break
            j = e + 1 + t
            if stamp[x] != visit:
                stamp[x] = visit
                last_pos[x] = j
                if not writing:
                    support[x] += weights[s]
            elif j > last_pos[x]:
                last_pos[x] = j
            else:
                continue
            if writing:
                if is_wanted[x]:
                    w = write_at[x]
                    pos[w] = j
                    seq[w] = s
                    for c in range(copy_width):
                        win[w, c] = win[idx, t + 1 + c]
                    write_at[x] = w + 1
            else:
                entry_count[x] += 1
    return visit


@njit(cache=True, nogil=True)
def window_kernel(  # pragma: no cover - compiled
    items: np.ndarray,
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
    window_proto: np.ndarray,
    group_entries: int,
    first_lo: int,
    first_hi: int,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, int, bool]:
    """Depth-first pattern growth over windowed projections; the same contract as
    ``mining._mine_kernel`` (rows, row count, whether ``max_rows`` stopped the search), with
    ``window_proto`` a (1, width) array of the window's event type holding its end mark, in place
    of the cells."""
    depth_cap = max_length + 1
    width = window_proto.shape[1]
    end_mark = int(window_proto[0, 0])
    step = max_gap + 1
    last_depth = max_length if check_closure else max_length - 1

    pos = np.empty(1024, dtype=np.int32)
    seq = np.empty(1024, dtype=np.int32)
    win = np.empty((1024, width), dtype=window_proto.dtype)
    top = 0

    child_item = np.empty((depth_cap, item_count), dtype=np.int64)
    child_support = np.empty((depth_cap, item_count), dtype=np.int64)
    child_entries = np.empty((depth_cap, item_count), dtype=np.int64)
    child_lo = np.empty((depth_cap, item_count), dtype=np.int64)
    child_hi = np.empty((depth_cap, item_count), dtype=np.int64)
    child_total = np.zeros(depth_cap, dtype=np.int64)
    child_next = np.zeros(depth_cap, dtype=np.int64)
    written_to = np.zeros(depth_cap, dtype=np.int64)  # children before this one have their entries written
    arena_mark = np.zeros(depth_cap + 1, dtype=np.int64)
    node_lo = np.zeros(depth_cap, dtype=np.int64)  # the projection whose children are at this level
    node_hi = np.zeros(depth_cap, dtype=np.int64)

    stamp = np.full(item_count, -1, dtype=np.int64)
    last_pos = np.zeros(item_count, dtype=np.int64)
    support = np.zeros(item_count, dtype=np.int64)
    entry_count = np.zeros(item_count, dtype=np.int64)
    write_at = np.zeros(item_count, dtype=np.int64)
    is_wanted = np.zeros(item_count, dtype=np.bool_)
    visit = 0
    user_stamp = np.full(max(user_count, 1), -1, dtype=np.int32)  # node numbers: 4 bytes a user
    node_no = 0

    heap = np.empty(max(top_k, 1), dtype=np.int64)
    heap_size = 0

    pattern = np.zeros(depth_cap, dtype=np.int64)
    out_items = np.full((1024, depth_cap), -1, dtype=np.int32)
    out_len = np.empty(1024, dtype=np.int32)
    out_support = np.empty(1024, dtype=np.int64)
    out_users = np.empty(1024, dtype=np.int64)
    rows = 0
    stopped = False

    level = 0
    expand_lo = 0
    expand_hi = 0
    expand_length = 0  # length of the pattern being expanded (0: the root)

    while True:
        if expand_hi >= 0:
            # Expand the current node: count its children (level `level`); their entries are
            # written group by group as the search reaches them.
            threshold = support_threshold(min_support, top_k, heap, heap_size)
            if expand_length == 0:
                visit = _root_scan(
                    items, starts, weights, first_lo, first_hi, end_mark, stamp, visit, support,
                    entry_count, write_at, is_wanted, False, pos, seq, win,
                )  # fmt: skip
            else:
                visit = _window_scan(
                    pos, seq, win, expand_lo, expand_hi, max_gap, end_mark, weights, stamp, last_pos,
                    visit, support, entry_count, write_at, is_wanted, False, 0,
                )  # fmt: skip
            n = 0
            for x in range(item_count):
                if entry_count[x] > 0 and support[x] >= threshold:
                    child_item[level, n] = x
                    child_support[level, n] = support[x]
                    child_entries[level, n] = entry_count[x]
                    n += 1
                support[x] = 0
                entry_count[x] = 0
            if expand_length == max_length:
                # Children one step past max_length: recorded only to decide closure.
                for c in range(n):
                    pattern[expand_length] = child_item[level, c]
                    out_items, out_len, out_support, out_users = append_pattern_row(
                        out_items, out_len, out_support, out_users, rows, pattern, expand_length + 1,
                        child_support[level, c], -2,
                    )  # fmt: skip
                    rows += 1
                n = 0
            if n > 0 and top_k > 0:
                # Most supported first, so the top-k threshold rises early.
                order = np.argsort(-child_support[level, :n], kind="mergesort")
                child_item[level, :n] = child_item[level, :n][order].copy()
                child_support[level, :n] = child_support[level, :n][order].copy()
                child_entries[level, :n] = child_entries[level, :n][order].copy()
            arena_mark[level] = top
            node_lo[level] = expand_lo
            node_hi[level] = expand_hi
            child_total[level] = n
            child_next[level] = 0
            written_to[level] = 0
            expand_hi = -1

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
        if c >= written_to[level]:
            # Write the entries of the next group of children (at least this one; at most
            # GROUP_ENTRIES in all otherwise) in place of the previous group's.
            top = arena_mark[level]
            needed = top
            last = c
            while last < child_total[level] and (
                last == c or needed - top + child_entries[level, last] <= group_entries
            ):
                x = child_item[level, last]
                child_lo[level, last] = needed
                write_at[x] = needed
                needed += child_entries[level, last]
                child_hi[level, last] = needed
                is_wanted[x] = True
                last += 1
            pos = grow(pos, needed)
            seq = grow(seq, needed)
            win = grow_rows(win, needed)
            if level == 0:
                _root_scan(
                    items, starts, weights, first_lo, first_hi, end_mark, stamp, visit, support,
                    entry_count, write_at, is_wanted, True, pos, seq, win,
                )  # fmt: skip
            else:
                copy_width = min((last_depth - level) * step, width) if level < last_depth else 0
                visit = _window_scan(
                    pos, seq, win, node_lo[level], node_hi[level], max_gap, end_mark, weights, stamp,
                    last_pos, visit, support, entry_count, write_at, is_wanted, True, copy_width,
                )  # fmt: skip
            for g in range(c, last):
                is_wanted[child_item[level, g]] = False
            written_to[level] = last
            top = needed
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
                users = distinct_users(seq, lo, hi, sole_user, user_ptr, user_ids, user_stamp, node_no)
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
            expand_length = length

    return out_items[:rows], out_len[:rows], out_support[:rows], out_users[:rows], rows, stopped


window_kernel_python = python_twin(
    window_kernel,
    grow,
    grow_rows,
    grow_pattern_rows,
    append_pattern_row,
    distinct_users,
    _root_scan,
    _window_scan,
    heap_push,
    support_threshold,
)
