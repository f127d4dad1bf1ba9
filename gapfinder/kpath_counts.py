"""Counting k-paths: every contiguous run of 1..max_k states of the framed session paths, with its
occurrences, the sessions that contain it and the distinct users who took it.

The input is already small: the distinct full paths with their session counts, and for distinct
users their sets of distinct paths ("signatures"; users with the same set are counted once,
weighted). Runs are packed into one integer each (k in the top 4 bits, then each event id in
``bits`` bits, as ``kpaths.code`` stores them).

The counts are made in a compiled kernel (numba) without sorting or a global hash table. Runs are
grouped by their first state, so the runs of one group of first states never meet those of another:
each group is counted on its own, in a hash table small enough to stay in cache, and groups run at
the same time on a thread pool (the kernel releases the GIL). Within a group, positions are visited
path by path, so "first time this run is seen in this path" is one comparison with the last path
that touched it (sessions); for users, each signature's paths are visited in turn and the same stamp
trick counts each run once per signature. Memory is bounded by the group size, not by the input.

Small inputs run the kernel's own code as plain Python (``gapfinder.compiled.python_twin``): numba's
first call costs more than counting a few thousand runs.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterator
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from functools import cached_property
from typing import Any

import numba
import numpy as np
import pyarrow as pa
from numba import njit

from gapfinder.compiled import FIBONACCI, grow, python_twin

__all__ = ["KpathCounts", "count_framed_kpaths", "count_kpaths", "frame_paths", "in_code_order"]

_I32 = np.int32
_I64 = np.int64
_U64 = np.uint64

GROUP_RUNS = 1 << 18  # run slots per group of first pairs (a group's hash table has twice as many)
DIRECT_PAIR_BITS = 22  # pairs of first states are counting-sorted by their key up to 2**22 keys
ROUND_POSITIONS = 1 << 24  # positions whose windows are held at once (about 13 bytes each)
BATCHES_PER_THREAD = 4  # batches of groups handed to the thread pool, per thread
PYTHON_MAX_WORK = 50_000  # run slots plus signature visits below which plain Python is faster
ENGINES = ("auto", "compiled", "python")
START = 0
END = 1


_Part = tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]  # codes, occurrences, sessions, users


@dataclass(frozen=True)
class KpathCounts:
    """One row per distinct run: packed code, occurrences, sessions and distinct users.

    Rows come in code order (k, then the states), held as slices of the counter's parts; ``table``
    hands them to Arrow as they are, and the columns are joined into one array each only when asked
    for (at 50M high-entropy events joining the 18.4M rows took 1.3 s)."""

    parts: list[_Part]
    bits: int
    plain: bool = False  # counted by the plain-Python kernels (so unpack there too)

    def __len__(self) -> int:
        return sum(len(part[0]) for part in self.parts)

    def _column(self, c: int) -> np.ndarray:
        return np.concatenate([part[c] for part in self.parts]) if self.parts else np.zeros(0, _COLUMN_TYPES[c])

    @cached_property
    def codes(self) -> np.ndarray:
        return self._column(0)

    @cached_property
    def occurrences(self) -> np.ndarray:
        return self._column(1)

    @cached_property
    def sessions(self) -> np.ndarray:
        return self._column(2)

    @cached_property
    def users(self) -> np.ndarray:
        return self._column(3)

    def table(self) -> pa.Table:
        """The rows as an Arrow table (code, occurrences, sessions, users), one chunk per part."""
        names = ("code", "occurrences", "sessions", "users")
        types = (pa.uint64(), pa.int64(), pa.int64(), pa.int64())
        columns = [
            pa.chunked_array([pa.array(part[c], type=types[c]) for part in self.parts], type=types[c])
            for c in range(len(names))
        ]
        return pa.table(dict(zip(names, columns, strict=True)))

    def paths(self) -> tuple[np.ndarray, np.ndarray]:
        """(offsets, event ids) of each run's states, unpacked from its code."""
        unpack = _unpack_python if self.plain else _unpack
        return unpack(self.codes, self.bits)


_COLUMN_TYPES = (np.uint64, np.int64, np.int64, np.int64)


@njit(cache=True, nogil=True)
def _count_states(  # pragma: no cover - compiled
    framed: np.ndarray,
    path_starts: np.ndarray,
    path_sessions: np.ndarray,
    state_count: int,
    signature_starts: np.ndarray,
    signature_paths: np.ndarray,
    signature_users: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """k = 1: occurrences, sessions and users of every state (START and END are never counted)."""
    occurrences = np.zeros(state_count, dtype=np.int64)
    sessions = np.zeros(state_count, dtype=np.int64)
    users = np.zeros(state_count, dtype=np.int64)
    last = np.full(state_count, -1, dtype=np.int64)
    for p in range(path_starts.shape[0] - 1):
        weight = path_sessions[p]
        for g in range(path_starts[p] + 1, path_starts[p + 1] - 1):
            state = framed[g]
            occurrences[state] += weight
            if last[state] != p:
                last[state] = p
                sessions[state] += weight
    last[:] = -1
    for s in range(signature_starts.shape[0] - 1):
        weight = signature_users[s]
        for j in range(signature_starts[s], signature_starts[s + 1]):
            p = signature_paths[j]
            if p < 0:
                continue
            for g in range(path_starts[p] + 1, path_starts[p + 1] - 1):
                state = framed[g]
                if last[state] != s:
                    last[state] = s
                    users[state] += weight
    return occurrences, sessions, users


@njit(cache=True, nogil=True)
def _rehash(  # pragma: no cover - compiled
    table_codes: np.ndarray, table_runs: np.ndarray, shift: int
) -> tuple[np.ndarray, np.ndarray, int]:
    """The open-addressing table at twice its size (Fibonacci hashing: the top bits of code * φ)."""
    capacity = table_codes.shape[0] * 2
    shift -= 1
    mask = capacity - 1
    codes = np.zeros(capacity, dtype=np.uint64)
    runs = np.empty(capacity, dtype=np.int64)
    for i in range(table_codes.shape[0]):
        code = table_codes[i]
        if code != 0:
            h = int((code * FIBONACCI) >> np.uint64(shift)) & mask
            while codes[h] != 0:
                h = (h + 1) & mask
            codes[h] = code
            runs[h] = table_runs[i]
    return codes, runs, shift


@njit(cache=True, nogil=True)
def _add_runs(  # pragma: no cover - compiled
    windows: np.ndarray,
    window_lengths: np.ndarray,
    window_paths: np.ndarray,
    path_sessions: np.ndarray,
    path_users: np.ndarray,
    start: int,
    stop: int,
    first: int,
    table_codes: np.ndarray,
    table_runs: np.ndarray,
    shift: int,
    codes: np.ndarray,
    occurrences: np.ndarray,
    sessions: np.ndarray,
    users: np.ndarray,
    last_path: np.ndarray,
    distinct: int,
    slot_runs: np.ndarray,
    bits: int,
    width: int,
) -> tuple[int, int]:
    """Count the runs of windows[start:stop] into the table and the per-run arrays, stopping before
    a window that could fill the table beyond half (the caller doubles it and calls again).
    ``users`` gets, once per path holding the run, the users who took that path (a user who took
    several such paths is counted more than once here; ``_count_groups`` takes the excess off).
    ``slot_runs`` gets each run's first sight in each path. Returns (the next window, runs now in the
    table). Nothing here reassigns an array, which keeps numba's loop tight."""
    mask = table_codes.shape[0] - 1
    room = table_codes.shape[0] // 2
    for i in range(start, stop):
        if distinct + width > room:
            return i, distinct
        p = window_paths[i]
        weight = path_sessions[p]
        window = windows[i]
        length = window_lengths[i]
        for k in range(2, length + 1):
            code = (np.uint64(k) << np.uint64(60)) | (window >> np.uint64((length - k) * bits))
            h = int((code * FIBONACCI) >> np.uint64(shift)) & mask
            while table_codes[h] != 0 and table_codes[h] != code:
                h = (h + 1) & mask
            if table_codes[h] == 0:
                table_codes[h] = code
                table_runs[h] = distinct
                codes[distinct] = code
                occurrences[distinct] = 0
                sessions[distinct] = 0
                users[distinct] = 0
                last_path[distinct] = -1
                distinct += 1
            run = table_runs[h]
            occurrences[run] += weight
            if last_path[run] != p:  # first sight of the run in this path
                last_path[run] = p
                sessions[run] += weight
                users[run] += path_users[p]
                slot_runs[(i - first) * width + k - 2] = run
    return stop, distinct


@njit(cache=True, nogil=True)
def _append(  # pragma: no cover - compiled
    out_codes: np.ndarray,
    out_occurrences: np.ndarray,
    out_sessions: np.ndarray,
    out_users: np.ndarray,
    total: int,
    codes: np.ndarray,
    occurrences: np.ndarray,
    sessions: np.ndarray,
    users: np.ndarray,
    distinct: int,
) -> None:
    """Copy a group's first ``distinct`` runs to the output at ``total`` (the output has room), in
    code order."""
    order = np.argsort(codes[:distinct])
    for i in range(distinct):
        run = order[i]
        out_codes[total + i] = codes[run]
        out_occurrences[total + i] = occurrences[run]
        out_sessions[total + i] = sessions[run]
        out_users[total + i] = users[run]


@njit(cache=True, nogil=True)
def _by_length(  # pragma: no cover - compiled
    codes: np.ndarray, occurrences: np.ndarray, sessions: np.ndarray, users: np.ndarray, max_k: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The rows stably sorted by k (a counting sort), and where each k starts (``bounds[k]``).
    Groups come in order of their first two states and each group's rows in code order, so for
    each k the rows end up in code order."""
    bounds = np.zeros(max_k + 2, dtype=np.int64)
    for code in codes:
        bounds[np.int64(code >> np.uint64(60)) + 1] += 1
    for length in range(max_k + 1):
        bounds[length + 1] += bounds[length]
    fill = bounds[:-1].copy()
    out = (np.empty_like(codes), np.empty_like(occurrences), np.empty_like(sessions), np.empty_like(users))
    for i in range(codes.shape[0]):
        k = np.int64(codes[i] >> np.uint64(60))
        at = fill[k]
        fill[k] += 1
        out[0][at] = codes[i]
        out[1][at] = occurrences[i]
        out[2][at] = sessions[i]
        out[3][at] = users[i]
    return out[0], out[1], out[2], out[3], bounds


@njit(cache=True, nogil=True)
def _count_groups(  # pragma: no cover - compiled
    windows: np.ndarray,
    window_lengths: np.ndarray,
    window_paths: np.ndarray,
    path_sessions: np.ndarray,
    path_users: np.ndarray,
    group_bounds: np.ndarray,
    first_group: int,
    last_group: int,
    signature_starts: np.ndarray,
    signature_paths: np.ndarray,
    signature_users: np.ndarray,
    path_signature_starts: np.ndarray,
    path_signatures: np.ndarray,
    max_k: int,
    bits: int,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Runs of k = 2..max_k starting at the windows of groups first_group..last_group - 1.

    ``windows`` holds, for every position that opens a run of two or more states, the states from
    there (``window_lengths`` of them, at most max_k, packed) and ``window_paths`` its path; they are
    sorted by their first two states, then path, then position, and a group holds whole pairs of
    first states, so a run is met in one group only and the kernel reads its input in order.
    Returns codes, occurrences, sessions and users of the distinct runs, sorted by k and, for each
    k, in code order, with where each k starts (see ``_by_length``)."""
    path_count = path_sessions.shape[0]
    signature_count = signature_starts.shape[0] - 1
    path_group = np.full(path_count, -1, dtype=np.int64)  # the last group that met the path
    path_slot = np.zeros(path_count, dtype=np.int64)  # its number among that group's paths
    signature_group = np.full(signature_count, -1, dtype=np.int64)
    signature_hits = np.zeros(signature_count, dtype=np.int64)  # the group's paths it holds
    touched = np.empty(signature_count, dtype=np.int64)
    out_codes = np.empty(1024, dtype=np.uint64)
    out_occurrences = np.empty(1024, dtype=np.int64)
    out_sessions = np.empty(1024, dtype=np.int64)
    out_users = np.empty(1024, dtype=np.int64)
    total = 0
    width = max_k - 1
    for group in range(first_group, last_group):
        lo = group_bounds[group]
        hi = group_bounds[group + 1]
        # the group's paths, numbered in order of first sight
        group_paths = np.empty(hi - lo, dtype=np.int64)
        path_total = 0
        for i in range(lo, hi):
            p = window_paths[i]
            if path_group[p] != group:
                path_group[p] = group
                path_slot[p] = path_total
                group_paths[path_total] = p
                path_total += 1
        # distinct runs: a table kept at most half full, doubled (with the per-run arrays) as needed
        shift = 54
        table_codes = np.zeros(1024, dtype=np.uint64)  # 0 is never a code: k >= 1 sits in the top bits
        table_runs = np.empty(1024, dtype=np.int64)
        codes = np.empty(512, dtype=np.uint64)
        occurrences = np.empty(512, dtype=np.int64)
        sessions = np.empty(512, dtype=np.int64)
        users = np.empty(512, dtype=np.int64)
        last_seen = np.empty(512, dtype=np.int64)
        slot_runs = np.full((hi - lo) * width, -1, dtype=np.int64)
        distinct = 0
        i = lo
        while True:
            i, distinct = _add_runs(
                windows, window_lengths, window_paths, path_sessions, path_users, i, hi, lo,
                table_codes, table_runs, shift, codes, occurrences, sessions, users, last_seen, distinct,
                slot_runs, bits, width,
            )  # fmt: skip
            if i >= hi:
                break
            table_codes, table_runs, shift = _rehash(table_codes, table_runs, shift)
            room = table_codes.shape[0] // 2
            codes = grow(codes, room)
            occurrences = grow(occurrences, room)
            sessions = grow(sessions, room)
            users = grow(users, room)
            last_seen = grow(last_seen, room)
        out_codes = grow(out_codes, total + distinct)
        out_occurrences = grow(out_occurrences, total + distinct)
        out_sessions = grow(out_sessions, total + distinct)
        out_users = grow(out_users, total + distinct)
        # users so far count a user once per path of theirs holding the run: find the signatures
        # holding two or more of the group's paths, and take off the repeats
        touched_count = 0
        for j in range(path_total):
            p = group_paths[j]
            for m in range(path_signature_starts[p], path_signature_starts[p + 1]):
                s = path_signatures[m]
                if signature_group[s] != group:
                    signature_group[s] = group
                    signature_hits[s] = 1
                else:
                    signature_hits[s] += 1
                    if signature_hits[s] == 2:
                        touched[touched_count] = s
                        touched_count += 1
        if touched_count > 0:  # the distinct runs of the touched signatures' paths (offsets in fill)
            # only those paths are listed: a user's paths rarely meet in a group (at 50M high-entropy
            # events listing every path of the group took 2.1 of the count's 8.9 s)
            needed = np.zeros(path_total, dtype=np.bool_)
            for t in range(touched_count):
                s = touched[t]
                for m in range(signature_starts[s], signature_starts[s + 1]):
                    p = signature_paths[m]
                    if p >= 0 and path_group[p] == group:
                        needed[path_slot[p]] = True
            fill = np.zeros(path_total + 1, dtype=np.int64)
            for i in range(lo, hi):
                j = path_slot[window_paths[i]]
                if not needed[j]:
                    continue
                for k in range(width):
                    if slot_runs[(i - lo) * width + k] >= 0:
                        fill[j + 1] += 1
            for j in range(path_total):
                fill[j + 1] += fill[j]
            by_path = np.empty(fill[path_total], dtype=np.int64)
            cursor = fill[:path_total].copy()
            for i in range(lo, hi):
                j = path_slot[window_paths[i]]
                if not needed[j]:
                    continue
                for k in range(width):
                    run = slot_runs[(i - lo) * width + k]
                    if run >= 0:
                        by_path[cursor[j]] = run
                        cursor[j] += 1
            last_seen[:distinct] = -1
            for t in range(touched_count):
                s = touched[t]
                weight = signature_users[s]
                for m in range(signature_starts[s], signature_starts[s + 1]):
                    p = signature_paths[m]
                    if p < 0 or path_group[p] != group:
                        continue
                    j = path_slot[p]
                    for r in range(fill[j], fill[j + 1]):
                        run = by_path[r]
                        if last_seen[run] == s:
                            users[run] -= weight
                        else:
                            last_seen[run] = s
        _append(
            out_codes, out_occurrences, out_sessions, out_users, total, codes, occurrences, sessions, users, distinct
        )
        total += distinct
    return _by_length(out_codes[:total], out_occurrences[:total], out_sessions[:total], out_users[:total], max_k)


@njit(cache=True, nogil=True)
def _pair_key(framed: np.ndarray, g: int, bits: int) -> int:  # pragma: no cover - compiled
    return (np.int64(framed[g]) << bits) | framed[g + 1]


@njit(cache=True, nogil=True)
def _pair_keys(framed: np.ndarray, path_starts: np.ndarray, bits: int) -> np.ndarray:  # pragma: no cover
    """The key of the first two states of every position but END, in path order."""
    keys = np.empty(framed.shape[0] - (path_starts.shape[0] - 1), dtype=np.int64)
    i = 0
    for p in range(path_starts.shape[0] - 1):
        for g in range(path_starts[p], path_starts[p + 1] - 1):
            keys[i] = _pair_key(framed, g, bits)
            i += 1
    return keys


@njit(cache=True, nogil=True)
def _pair_counts(  # pragma: no cover - compiled
    framed: np.ndarray, path_starts: np.ndarray, bits: int, key_count: int
) -> np.ndarray:
    """How many positions (all but END) open with each pair of first two states (key space
    2**(2 * bits)), without keeping a key per position."""
    counts = np.zeros(key_count, dtype=np.int64)
    for p in range(path_starts.shape[0] - 1):
        for g in range(path_starts[p], path_starts[p + 1] - 1):
            counts[_pair_key(framed, g, bits)] += 1
    return counts


@njit(cache=True, nogil=True)
def _windows(  # pragma: no cover - compiled
    framed: np.ndarray,
    path_starts: np.ndarray,
    keys: np.ndarray,
    key_lo: int,
    key_hi: int,
    slot_of_key: np.ndarray,
    size: int,
    max_k: int,
    bits: int,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The windows of the positions whose pair key is in [key_lo, key_hi): the packed states from
    there (at most max_k), how many, and the path, each written at its key's next slot
    (``slot_of_key``, advanced as it fills), which sorts them by key and keeps path order within a
    key. ``keys`` holds each position's key (renumbered pairs), or is empty when the key is the pair
    itself."""
    windows = np.empty(size, dtype=np.uint64)
    lengths = np.empty(size, dtype=np.int8)
    paths = np.empty(size, dtype=np.int32)
    given = keys.shape[0] > 0
    i = 0
    for p in range(path_starts.shape[0] - 1):
        end = path_starts[p + 1]
        for g in range(path_starts[p], end - 1):
            key = keys[i] if given else _pair_key(framed, g, bits)
            i += 1
            if key < key_lo or key >= key_hi:
                continue
            length = min(max_k, end - g)
            packed = np.uint64(0)
            for j in range(length):
                packed = (packed << np.uint64(bits)) | np.uint64(framed[g + j])
            slot = slot_of_key[key]
            slot_of_key[key] += 1
            windows[slot] = packed
            lengths[slot] = length
            paths[slot] = p
    return windows, lengths, paths


@njit(cache=True, nogil=True)
def counting_sort(keys: np.ndarray, key_count: int) -> np.ndarray:  # pragma: no cover - compiled
    """The stable order of ``keys`` (each below key_count)."""
    counts = np.zeros(key_count + 1, dtype=np.int64)
    for key in keys:
        counts[key + 1] += 1
    for j in range(key_count):
        counts[j + 1] += counts[j]
    order = np.empty(keys.shape[0], dtype=np.int64)
    for i in range(keys.shape[0]):
        order[counts[keys[i]]] = i
        counts[keys[i]] += 1
    return order


@njit(cache=True, nogil=True)
def _unpack(codes: np.ndarray, bits: int) -> tuple[np.ndarray, np.ndarray]:  # pragma: no cover - compiled
    """(offsets, states) of each packed run."""
    offsets = np.zeros(codes.shape[0] + 1, dtype=np.int64)
    for i in range(codes.shape[0]):
        offsets[i + 1] = offsets[i] + np.int64(codes[i] >> np.uint64(60))
    states = np.empty(offsets[-1], dtype=np.int32)
    mask = np.uint64((1 << bits) - 1)
    for i in range(codes.shape[0]):
        k = offsets[i + 1] - offsets[i]
        for j in range(k):
            states[offsets[i] + j] = np.int32((codes[i] >> np.uint64((k - 1 - j) * bits)) & mask)
    return offsets, states


_count_states_python = python_twin(_count_states)
_count_groups_python = python_twin(_count_groups, grow, _rehash, _add_runs, _append, _by_length)
_pair_keys_python = python_twin(_pair_keys, _pair_key)
_pair_counts_python = python_twin(_pair_counts, _pair_key)
_counting_sort_python = python_twin(counting_sort)
_windows_python = python_twin(_windows, _pair_key)
_unpack_python = python_twin(_unpack)


def in_code_order(codes: np.ndarray, *columns: np.ndarray) -> tuple[np.ndarray, ...]:
    """(codes, *columns) in ascending code order: as given when they already are (the order in which
    ``count_framed_kpaths`` gives them and ``kpaths`` stores them; one pass to check), else sorted
    (a workspace written otherwise)."""
    if len(codes) < 2 or bool((codes[1:] > codes[:-1]).all()):
        return (codes, *columns)
    order = np.argsort(codes, kind="stable")
    return (codes[order], *(column[order] for column in columns))


def frame_paths(offsets: np.ndarray, events: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """START + events + END for every path (``events[offsets[i]:offsets[i + 1]]`` is path i):
    (framed starts, framed states), the input of ``count_framed_kpaths``."""
    offsets = np.asarray(offsets, dtype=_I64)
    events = np.asarray(events, dtype=_I32)
    lengths = np.diff(offsets)
    starts = np.zeros(len(lengths) + 1, dtype=_I64)
    np.cumsum(lengths + 2, out=starts[1:])
    framed = np.full(int(starts[-1]), END, dtype=_I32)
    framed[starts[:-1]] = START
    inner = np.ones(len(framed), dtype=bool)
    inner[starts[:-1]] = False
    inner[starts[1:] - 1] = False
    framed[inner] = events
    return starts, framed


@dataclass(frozen=True)
class _Round:
    """The windows of a range of pair keys, sorted by key, and the bounds of their groups."""

    windows: np.ndarray
    lengths: np.ndarray
    paths: np.ndarray
    group_bounds: np.ndarray


def _rounds(starts: np.ndarray, framed: np.ndarray, bits: int, max_k: int, plain: bool) -> Iterator[_Round]:
    """The windows of every position that opens a run of two or more states (all but END; see
    ``_count_groups``), sorted by their first two states (stably: then by path and position), in
    rounds of consecutive pair keys holding about ROUND_POSITIONS positions each, so memory is
    bounded by the round, not by the input; within a round, groups of whole pairs hold about
    GROUP_RUNS run slots each (a pair larger than that is a group of its own)."""
    if 2 * bits > DIRECT_PAIR_BITS:  # renumber the pairs densely (in key order) for the counting sort
        keys = np.unique((_pair_keys_python if plain else _pair_keys)(framed, starts, bits), return_inverse=True)[1]
        keys = keys.astype(_I64)
        counts = np.bincount(keys)
    else:
        keys = np.zeros(0, dtype=_I64)
        counts = (_pair_counts_python if plain else _pair_counts)(framed, starts, bits, 1 << (2 * bits))
    offsets = np.zeros(len(counts) + 1, dtype=_I64)
    np.cumsum(counts, out=offsets[1:])
    used = np.flatnonzero(counts)
    per_group = max(GROUP_RUNS // max(max_k - 1, 1), 1)
    group_of_pair = offsets[used] // per_group
    group_keys = used[np.flatnonzero(np.diff(group_of_pair, prepend=-1))]  # first key of each group
    round_of_group = offsets[group_keys] // ROUND_POSITIONS
    round_keys = group_keys[np.flatnonzero(np.diff(round_of_group, prepend=-1))]
    round_edges = np.append(round_keys, len(counts))
    windows_of = _windows_python if plain else _windows
    for key_lo, key_hi in itertools.pairwise(round_edges.tolist()):
        base = int(offsets[key_lo])
        size = int(offsets[key_hi]) - base
        slot_of_key = offsets[:-1] - base
        windows, lengths, paths = windows_of(framed, starts, keys, key_lo, key_hi, slot_of_key, size, max_k, bits)
        inside = group_keys[(group_keys >= key_lo) & (group_keys < key_hi)]
        bounds = np.append(offsets[inside] - base, size).astype(_I64)
        yield _Round(windows, lengths, paths, bounds)


def _signatures_of_paths(
    signature_offsets: np.ndarray, signature_paths: np.ndarray, path_count: int, kernel: str
) -> tuple[np.ndarray, np.ndarray]:
    """(offsets, signature numbers) of the signatures holding each path."""
    of_entry = np.repeat(np.arange(len(signature_offsets) - 1, dtype=_I64), np.diff(signature_offsets))
    held = np.flatnonzero(signature_paths >= 0)
    paths = signature_paths[held]
    sort = _counting_sort_python if kernel == "python" else counting_sort
    order = sort(paths, path_count)
    offsets = np.zeros(path_count + 1, dtype=_I64)
    np.cumsum(np.bincount(paths, minlength=path_count), out=offsets[1:])
    return offsets, of_entry[held][order]


def _batches(group_bounds: np.ndarray, batch_count: int) -> list[tuple[int, int]]:
    """Consecutive ranges of groups holding about the same number of positions."""
    group_count = len(group_bounds) - 1
    if group_count <= 0:
        return []
    targets = group_bounds[-1] * np.arange(1, batch_count) / batch_count
    cuts = np.searchsorted(group_bounds[1:-1], targets, side="left") + 1
    edges = np.unique(np.concatenate([[0], np.minimum(cuts, group_count), [group_count]]))
    return [(int(a), int(b)) for a, b in itertools.pairwise(edges) if b > a]


def count_kpaths(path_offsets: np.ndarray, path_events: np.ndarray, *rest: np.ndarray, **options: Any) -> KpathCounts:
    """``count_framed_kpaths`` over paths given as lists: ``path_events[path_offsets[i]:path_offsets[i + 1]]``
    are path i's event ids (2 and up). A caller holding large path lists frames them with
    ``frame_paths``, lets the lists go and calls ``count_framed_kpaths`` itself."""
    return count_framed_kpaths(*frame_paths(path_offsets, path_events), *rest, **options)


def count_framed_kpaths(
    starts: np.ndarray,
    framed: np.ndarray,
    path_sessions: np.ndarray,
    signature_offsets: np.ndarray,
    signature_paths: np.ndarray,
    signature_users: np.ndarray,
    *,
    max_k: int,
    bits: int,
    threads: int | None = None,
    engine: str = "auto",
) -> KpathCounts:
    """Runs of 1..max_k states over paths framed by START (0) and END (1) (``frame_paths``).

    ``path_sessions``: each path's weight. ``signature_offsets``/``signature_paths``: each distinct
    set of paths one or more users took (indexes into the paths; -1 for a path outside them),
    ``signature_users`` how many users took it. k = 1 runs are the path's events (START and END are
    not features). Rows come in code order; ``engine``: ``compiled``, ``python``
    or ``auto`` (Python for small inputs)."""
    if engine not in ENGINES:
        raise ValueError(f"engine {engine!r}: give one of {', '.join(ENGINES)}")
    sessions = np.asarray(path_sessions, dtype=_I64)
    signature = (
        np.asarray(signature_offsets, dtype=_I64),
        np.asarray(signature_paths, dtype=_I64),
        np.asarray(signature_users, dtype=_I64),
    )
    work = len(framed) * max_k + len(signature[1]) * 8
    kernel = "python" if engine == "python" or (engine == "auto" and work <= PYTHON_MAX_WORK) else "compiled"
    plain = kernel == "python"
    state_count = max(int(framed.max(initial=END)) + 1, 2)
    count_states: Callable[..., Any] = _count_states_python if plain else _count_states
    parts: list[Any] = []
    workers = 1 if plain else max(1, threads or numba.get_num_threads())
    with ThreadPoolExecutor(max_workers=workers) as pool:
        # k = 1 on a worker while this thread lays out the first windows (the kernels release the GIL)
        states = pool.submit(count_states, framed, starts, sessions, state_count, *signature)
        if max_k >= 2 and len(framed):
            parts += _count_longer_runs(pool, workers, starts, framed, sessions, signature, max_k, bits, kernel)
        occurrences, state_sessions, users = states.result()
    seen = np.flatnonzero(occurrences)
    chunks = [((_U64(1) << _U64(60)) | seen.astype(_U64), occurrences[seen], state_sessions[seen], users[seen])]
    # k by k, the parts' rows of that k in part order: every code in ascending order
    for k in range(2, max_k + 1):
        chunks += [tuple(column[bounds[k] : bounds[k + 1]] for column in part) for *part, bounds in parts]
    return KpathCounts([chunk for chunk in chunks if len(chunk[0])], bits, plain)


def _count_longer_runs(
    pool: ThreadPoolExecutor,
    workers: int,
    starts: np.ndarray,
    framed: np.ndarray,
    sessions: np.ndarray,
    signature: tuple[np.ndarray, np.ndarray, np.ndarray],
    max_k: int,
    bits: int,
    kernel: str,
) -> list[Any]:
    """The parts of k = 2..max_k, round by round, each round's groups in batches on ``pool``; this
    thread lays out the next round's windows while the pool counts the current one (at 50M
    high-entropy events the layouts took 1.6 s on one core, the counting 7.7 s on two)."""
    plain = kernel == "python"
    parts: list[Any] = []
    count_groups: Callable[..., Any] = _count_groups_python if plain else _count_groups
    held = signature[1] >= 0
    taken_by = np.repeat(signature[2], np.diff(signature[0]))[held]
    path_users = np.bincount(signature[1][held], weights=taken_by, minlength=len(sessions)).astype(_I64)
    tail = (*signature, *_signatures_of_paths(signature[0], signature[1], len(starts) - 1, kernel), max_k, bits)
    counting: list[Any] = []  # the current round's batches on the pool
    for part in _rounds(starts, framed, bits, max_k, plain):  # laid out meanwhile
        head = (part.windows, part.lengths, part.paths, sessions, path_users, part.group_bounds)
        batches = _batches(part.group_bounds, workers * BATCHES_PER_THREAD if workers > 1 else 1)
        parts += [future.result() for future in counting]
        if workers == 1 or len(batches) <= 1:
            counting = []
            parts += [count_groups(*head, lo, hi, *tail) for lo, hi in batches]
        else:
            counting = [pool.submit(count_groups, *head, lo, hi, *tail) for lo, hi in batches]
    parts += [future.result() for future in counting]
    return parts
