"""Helpers shared by the compiled (numba) kernels: growing a buffer inside a kernel, and running a
kernel's own code as plain Python.

Small inputs run the very same kernels as plain Python: numba's first call in a process costs about
half a second (setting up its compiler target), far more than a kernel takes in Python on a few
thousand items. A twin is the kernel's own code (``py_func``) with every compiled helper it calls
swapped for its plain-Python original, so the two engines cannot drift apart.
"""

from __future__ import annotations

import types
from collections.abc import Callable
from typing import Any

import numpy as np
from numba import njit

__all__ = [
    "FIBONACCI",
    "append_pattern_row",
    "distinct_users",
    "grow",
    "grow_pattern_rows",
    "grow_rows",
    "heap_push",
    "python_twin",
    "support_threshold",
]

# Fibonacci hashing (common practice; Knuth, TAOCP vol. 3, 6.4, cited from memory): the top bits of
# key * 2**64 / golden ratio spread keys over a power-of-two table.
FIBONACCI = np.uint64(0x9E3779B97F4A7C15)


@njit(cache=True, nogil=True)
def grow(buffer: np.ndarray, needed: int) -> np.ndarray:  # pragma: no cover - compiled
    """``buffer`` itself when it holds ``needed`` items, else a copy doubled until it does."""
    size = buffer.shape[0]
    while size < needed:
        size *= 2
    if size == buffer.shape[0]:
        return buffer
    bigger = np.empty(size, dtype=buffer.dtype)
    bigger[: buffer.shape[0]] = buffer
    return bigger


@njit(cache=True, nogil=True)
def grow_rows(buffer: np.ndarray, needed: int) -> np.ndarray:  # pragma: no cover - compiled
    """``grow`` for a two-dimensional buffer: rows doubled until ``needed`` fit."""
    size = buffer.shape[0]
    while size < needed:
        size *= 2
    if size == buffer.shape[0]:
        return buffer
    bigger = np.empty((size, buffer.shape[1]), dtype=buffer.dtype)
    bigger[: buffer.shape[0]] = buffer
    return bigger


@njit(cache=True, nogil=True)
def grow_pattern_rows(  # pragma: no cover - compiled
    out_items: np.ndarray, out_len: np.ndarray, out_support: np.ndarray, out_users: np.ndarray, needed: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """A mining kernel's four output buffers with room for ``needed`` rows (new event cells are -1)."""
    old_rows = out_items.shape[0]
    out_items = grow_rows(out_items, needed)
    out_items[old_rows:] = -1
    return out_items, grow(out_len, needed), grow(out_support, needed), grow(out_users, needed)


@njit(cache=True, nogil=True)
def append_pattern_row(  # pragma: no cover - compiled
    out_items: np.ndarray,
    out_len: np.ndarray,
    out_support: np.ndarray,
    out_users: np.ndarray,
    rows: int,
    pattern: np.ndarray,
    length: int,
    support: int,
    users: int,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """A mining kernel's output buffers with row ``rows`` set to ``pattern[:length]``, its support
    and its users (grown first when full)."""
    if rows >= out_len.shape[0]:
        out_items, out_len, out_support, out_users = grow_pattern_rows(
            out_items, out_len, out_support, out_users, rows + 1
        )
    for d in range(length):
        out_items[rows, d] = pattern[d]
    out_len[rows] = length
    out_support[rows] = support
    out_users[rows] = users
    return out_items, out_len, out_support, out_users


@njit(cache=True, nogil=True)
def distinct_users(  # pragma: no cover - compiled
    sequences: np.ndarray,
    lo: int,
    hi: int,
    sole_user: np.ndarray,
    user_ptr: np.ndarray,
    user_ids: np.ndarray,
    user_stamp: np.ndarray,
    mark: int,
) -> int:
    """Distinct users of the sequences in ``sequences[lo:hi]`` (ascending, repeats allowed): each
    sequence's sole user, or its list in ``user_ids[user_ptr[s]:user_ptr[s + 1]]`` when it has
    several; ``user_stamp`` marks the users counted under ``mark`` (a new mark per call)."""
    users = 0
    previous = -1
    for idx in range(lo, hi):
        s = sequences[idx]
        if s == previous:
            continue
        previous = s
        uid = sole_user[s]
        if uid >= 0:  # the common case: one user took the sequence
            if user_stamp[uid] != mark:
                user_stamp[uid] = mark
                users += 1
            continue
        for u in range(user_ptr[s], user_ptr[s + 1]):
            uid = user_ids[u]
            if user_stamp[uid] != mark:
                user_stamp[uid] = mark
                users += 1
    return users


@njit(cache=True, nogil=True)
def support_threshold(min_support: int, top_k: int, heap: np.ndarray, heap_size: int) -> int:  # pragma: no cover
    """The support a pattern needs now: ``min_support``, or with top-k and a full heap of the k best
    supports, the smallest of them when it is higher."""
    if top_k > 0 and heap_size == top_k and heap[0] > min_support:
        return int(heap[0])
    return min_support


@njit(cache=True, nogil=True)
def heap_push(heap: np.ndarray, size: int, value: int) -> int:  # pragma: no cover - compiled
    """Keep the ``len(heap)`` largest values seen in a min-heap; returns the new size."""
    capacity = heap.shape[0]
    if size < capacity:
        i = size
        heap[i] = value
        while i > 0:
            parent = (i - 1) // 2
            if heap[parent] <= heap[i]:
                break
            heap[parent], heap[i] = heap[i], heap[parent]
            i = parent
        return size + 1
    if value <= heap[0]:
        return size
    heap[0] = value
    i = 0
    while True:
        left, right, smallest = 2 * i + 1, 2 * i + 2, i
        if left < size and heap[left] < heap[smallest]:
            smallest = left
        if right < size and heap[right] < heap[smallest]:
            smallest = right
        if smallest == i:
            break
        heap[smallest], heap[i] = heap[i], heap[smallest]
        i = smallest
    return size


def python_twin(kernel: Any, *helpers: Any) -> Callable[..., Any]:
    """``kernel`` as plain Python, calling the plain versions of ``helpers`` (the compiled functions
    it calls, directly or through one another, from its module or others, under any name)."""
    namespaces: dict[str, dict[str, Any]] = {}  # a copy of each module's globals, by module

    def plain_of(compiled: Any) -> types.FunctionType:
        function = compiled.py_func
        namespace = namespaces.setdefault(function.__module__, dict(function.__globals__))
        return types.FunctionType(
            function.__code__, namespace, function.__name__, function.__defaults__, function.__closure__
        )

    plain_by_id = {id(h): plain_of(h) for h in helpers}
    plain = plain_of(kernel)
    # a helper is found by identity, so one made by a factory (a closure) or imported under another name is swapped too
    for namespace in namespaces.values():
        for name, value in list(namespace.items()):
            if id(value) in plain_by_id:
                namespace[name] = plain_by_id[id(value)]

    def twin(*args: Any) -> Any:
        with np.errstate(over="ignore"):  # 64-bit hashes wrap around, as they do when compiled
            return plain(*args)

    return twin
