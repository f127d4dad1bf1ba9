"""The one suppression rule of every listing: a threshold rule with complementary suppression.

This is common practice in official statistics (statistical disclosure control for frequency
tables; the rule as described in Hundepool et al., *Statistical Disclosure Control*, Wiley 2012,
chapter 4, cited from memory):

1. **Primary suppression (threshold rule).** A cell seen by fewer than ``min_users`` distinct
   users is hidden.
2. **Secondary (complementary) suppression.** Where the cells shown are a complete partition of
   a total that is also shown, a single hidden cell could be recovered by subtraction. Listings
   here partition totals in these ways:

   - the features (k = 1) partition all events; the full paths partition all sessions;
   - the k-paths that extend a (k−1)-path P by one state partition P's occurrences (every
     occurrence of P is followed by exactly one state), and so do the k-paths that extend P by
     one state at the front; the transitions out of START (or into END) partition the sessions.

   In every such group, when exactly one member is hidden, the smallest other member is hidden
   too; when the hidden member has no sibling, its parent is hidden. This repeats until no group
   has a lone hidden member, so any difference a reader can form spans at least two hidden cells.
3. **No sums of hidden cells.** Listings report how many rows were held back, counted over all
   rows below the floor whatever the other filters, never their sessions or occurrences, so a sweep
   of ``--min-support`` or ``--top`` cannot difference them.

The rule runs on the aggregated ``kpaths`` and ``full_paths`` tables as numpy arrays, never on
events.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numba
import numpy as np
from numba import njit

from gapfinder.compiled import grow

__all__ = ["complementary_suppression", "kpath_parents"]

ENGINES = ("auto", "compiled", "vectorized")
COMPILED_MIN_CELLS = 200_000  # below this the numpy passes serve (numba's start-up costs ~0.5 s)

ROOT = np.uint64(0)  # k = 0 never occurs in a packed code, so this key is free for "the total"
_K_SHIFT = np.uint64(60)


def kpath_parents(codes: np.ndarray, bits: int) -> tuple[np.ndarray, np.ndarray]:
    """(prefix parent, suffix parent) packed codes of each packed k-path code.

    A k-path's prefix parent is its first k−1 states, its suffix parent its last k−1 states; for
    k = 1 both are ``ROOT``. Codes follow ``queries/create_kpaths.sql``: k in the top 4 bits,
    then one event id per ``bits`` bits.
    """
    codes = np.asarray(codes, dtype=np.uint64)
    if len(codes) >= COMPILED_MIN_CELLS:  # one pass, no temporaries of the codes' size
        prefix_out = np.empty(len(codes), dtype=np.uint64)
        suffix_out = np.empty(len(codes), dtype=np.uint64)
        _kpath_parents_compiled(codes, bits, prefix_out, suffix_out)
        return prefix_out, suffix_out
    k = (codes >> _K_SHIFT).astype(np.intp)
    payload = codes & np.uint64((1 << 60) - 1)
    # per k (0..15): the parent's k in the top bits, and the mask keeping the last k - 1 states;
    # looked up rather than shifted by a per-row amount, which numpy does slowly
    lengths = np.arange(16)
    parent_k = np.where(lengths >= 2, (np.maximum(lengths - 1, 0)).astype(np.uint64) << _K_SHIFT, ROOT)
    widths = np.minimum(np.maximum(lengths - 1, 0) * bits, 63).astype(np.uint64)
    masks = (np.uint64(1) << widths) - np.uint64(1)
    top = parent_k[k]
    prefix = top | (payload >> np.uint64(bits))
    suffix = top | (payload & masks[k])
    single = k == 1
    prefix[single] = ROOT
    suffix[single] = ROOT
    return prefix, suffix


@njit(cache=True, nogil=True)
def _kpath_parents_compiled(
    codes: np.ndarray, bits: int, prefix: np.ndarray, suffix: np.ndarray
) -> None:  # pragma: no cover
    """kpath_parents one code at a time (tests compare it with the numpy version)."""
    payload_mask = np.uint64((1 << 60) - 1)
    for i in range(codes.shape[0]):
        code = codes[i]
        k = np.int64(code >> np.uint64(60))
        if k <= 1:
            prefix[i] = np.uint64(0)
            suffix[i] = np.uint64(0)
            continue
        payload = code & payload_mask
        top = np.uint64(k - 1) << np.uint64(60)
        width = (k - 1) * bits if (k - 1) * bits < 63 else 63
        prefix[i] = top | (payload >> np.uint64(bits))
        suffix[i] = top | (payload & ((np.uint64(1) << np.uint64(width)) - np.uint64(1)))


def complementary_suppression(
    keys: np.ndarray,
    values: np.ndarray,
    hidden: np.ndarray,
    groups: list[np.ndarray],
    *,
    max_rounds: int = 50,
    engine: str = "auto",
) -> np.ndarray:
    """Extend the primary ``hidden`` mask until no partition group has exactly one hidden member.

    ``keys`` identify the rows (unique), ``values`` are what the listing shows (the smallest is
    sacrificed first; ties broken by key), ``groups`` holds, per partition family, each row's
    group key: a group key equal to a row's key names that row as the group's parent total.
    Returns the new mask; the input is not changed.

    engine: "vectorized" sorts each family's rows once by (group, value, key), a round then being a
    few passes of numpy over the mask; "compiled" numbers each row's group by its parent's row and
    makes a round two passes of a numba kernel, with no sort (millions of k-paths in a fraction of
    a second); "auto" compiles from COMPILED_MIN_CELLS rows. Both hide exactly the same cells.
    """
    if engine not in ENGINES:
        raise ValueError(f"engine {engine!r}: give one of {', '.join(ENGINES)}")
    hidden = np.asarray(hidden, dtype=bool).copy()
    if not hidden.any() or len(keys) == 0:
        return hidden
    keys = np.asarray(keys)
    if engine == "compiled" or (engine == "auto" and len(keys) >= COMPILED_MIN_CELLS):
        order = None if _is_ascending(keys) else np.argsort(keys, kind="stable")
        return _suppress_compiled(keys, np.asarray(values), hidden, groups, order, max_rounds)
    by_key = np.argsort(keys, kind="stable")
    families = [_Family.of(np.asarray(g), np.asarray(values), keys, by_key) for g in groups]
    for _ in range(max_rounds):
        changed = False
        for family in families:
            changed |= family.extend(hidden)
        if not changed:
            break
    return hidden


class _Family:
    """One partition family, its rows sorted by (group, value, key)."""

    def __init__(self, order: np.ndarray, group_of: np.ndarray, group_count: int, parent: np.ndarray) -> None:
        self.order = order  # row numbers in (group, value, key) order
        self.group_of = group_of  # each sorted position's group number
        self.group_count = group_count
        self.parent = parent  # each group's parent row, or -1

    @classmethod
    def of(cls, group: np.ndarray, values: np.ndarray, keys: np.ndarray, by_key: np.ndarray) -> _Family:
        order = np.lexsort((keys, values, group))
        sorted_groups = group[order]
        is_new = np.empty(len(order), dtype=bool)
        is_new[:1] = True
        np.not_equal(sorted_groups[1:], sorted_groups[:-1], out=is_new[1:])
        group_of = np.cumsum(is_new) - 1
        group_keys = sorted_groups[is_new]
        found = np.searchsorted(keys, group_keys, sorter=by_key)
        found = np.minimum(found, len(keys) - 1)
        parent = by_key[found]
        parent[keys[parent] != group_keys] = -1
        return cls(order, group_of, int(group_of[-1]) + 1 if len(order) else 0, parent)

    def extend(self, hidden: np.ndarray) -> bool:
        """One pass: in each group with exactly one hidden member hide its smallest visible member,
        or its parent when it has none. Changes ``hidden``; returns whether anything changed."""
        in_order = hidden[self.order]
        hidden_per_group = np.bincount(self.group_of, weights=in_order, minlength=self.group_count)
        lone = hidden_per_group == 1
        if not lone.any():
            return False
        candidates = np.flatnonzero(lone[self.group_of] & ~in_order)
        candidate_groups = self.group_of[candidates]
        first = np.ones(len(candidates), dtype=bool)
        np.not_equal(candidate_groups[1:], candidate_groups[:-1], out=first[1:])
        changed = bool(first.any())
        hidden[self.order[candidates[first]]] = True
        orphans = lone.copy()
        orphans[candidate_groups] = False
        parents = self.parent[orphans]
        parents = parents[parents >= 0]
        parents = parents[~hidden[parents]]
        if len(parents):
            hidden[parents] = True
            changed = True
        return changed


def _numbered_groups(group: np.ndarray, keys: np.ndarray, by_key: np.ndarray | None) -> tuple[np.ndarray, int]:
    """Each row's group number, and how many groups have no parent row: a group whose key is a row's
    key takes that row's number (so group g < len(keys) has parent row g), the others are numbered
    after the rows in key order. ``by_key`` None: ``keys`` are ascending already (no copies)."""
    count = len(keys)
    sorted_keys = keys if by_key is None else keys[by_key]
    queries = group if by_key is None else group[by_key]  # in key order: k-path parents ascend in runs
    # int32 numbers when they fit (18.4M k-paths: 74 MB a family instead of 147)
    width = np.int32 if 2 * count < np.iinfo(np.int32).max else np.int64
    numbers = _search_runs(sorted_keys, queries, np.empty(len(queries), dtype=width))
    orphans = _mark_rows(sorted_keys, queries, numbers)
    if len(orphans):
        absent, absent_of = np.unique(queries[orphans], return_inverse=True)
        numbers[orphans] = count + absent_of.reshape(-1)
    else:
        absent = queries[:0]
    if by_key is None:
        return numbers, len(absent)
    group_of = np.empty(count, dtype=numbers.dtype)
    group_of[by_key] = np.where(numbers < count, by_key[np.minimum(numbers, count - 1)], numbers)
    return group_of, len(absent)


def _suppress_compiled(
    keys: np.ndarray,
    values: np.ndarray,
    hidden: np.ndarray,
    groups: list[np.ndarray],
    by_key: np.ndarray | None,
    rounds: int,
) -> np.ndarray:
    def numbered(group: np.ndarray) -> tuple[np.ndarray, int]:
        return _numbered_groups(np.asarray(group).astype(keys.dtype, copy=False), keys, by_key)

    # the families are numbered at the same time (the kernels release the GIL): at 50M high-entropy
    # events prefixes and suffixes of 18.4M k-paths
    with ThreadPoolExecutor(max_workers=max(1, min(len(groups), numba.get_num_threads()))) as pool:
        families = list(pool.map(numbered, groups))
    largest = len(keys) + max((absent for _, absent in families), default=0)
    width = np.int32 if largest < np.iinfo(np.int32).max else np.int64
    hidden_count = np.zeros(largest, dtype=width)
    smallest_visible = np.full(largest, -1, dtype=width)
    for _ in range(rounds):
        changed = False
        for group_of, absent in families:
            changed |= _extend_compiled(
                group_of, len(keys) + absent, len(keys), values, keys, hidden, hidden_count, smallest_visible
            )
        if not changed:
            break
    return hidden


@njit(cache=True, nogil=True)
def _is_ascending(keys: np.ndarray) -> bool:  # pragma: no cover - compiled
    ascending = True
    for i in range(1, keys.shape[0]):
        if keys[i] <= keys[i - 1]:
            ascending = False
            break
    return ascending


@njit(cache=True, nogil=True)
def _mark_rows(sorted_keys: np.ndarray, queries: np.ndarray, positions: np.ndarray) -> np.ndarray:  # pragma: no cover
    """Keep ``positions[i]`` where ``sorted_keys`` holds ``queries[i]`` there; return the other i
    (queries that name no row), in order."""
    count = sorted_keys.shape[0]
    orphans = np.empty(16, dtype=np.int64)
    n = 0
    for i in range(queries.shape[0]):
        p = positions[i]
        if p < count and sorted_keys[p] == queries[i]:
            continue
        if n == orphans.shape[0]:
            orphans = grow(orphans, n + 1)
        orphans[n] = i
        n += 1
    return orphans[:n].copy()


@njit(cache=True, nogil=True)
def _search_runs(sorted_keys: np.ndarray, queries: np.ndarray, out: np.ndarray) -> np.ndarray:  # pragma: no cover
    """np.searchsorted(sorted_keys, queries) (leftmost) into ``out``, fast when the queries come in ascending
    runs: within a run each search gallops forward from the previous answer, so a run costs about
    its length plus the log of the distance it covers rather than a full binary search per query
    (k-path prefixes ascend through each length's block, suffixes through each first state's)."""
    count = sorted_keys.shape[0]
    answer = 0
    for i in range(queries.shape[0]):
        q = queries[i]
        lo = answer if i > 0 and q >= queries[i - 1] else 0
        if lo < count and sorted_keys[lo] >= q:
            if lo == 0 or sorted_keys[lo - 1] < q:
                answer = lo
                out[i] = answer
                continue
            lo = 0  # not reached for ascending runs (the previous answer is leftmost); kept exact
        # sorted_keys[lo] < q here (or lo is 0 and a plain binary search follows)
        step = 1
        hi = lo + 1
        while hi < count and sorted_keys[hi] < q:
            lo = hi
            step *= 2
            hi = lo + step
        a = lo
        b = min(hi, count)
        while a < b:
            mid = (a + b) // 2
            if sorted_keys[mid] < q:
                a = mid + 1
            else:
                b = mid
        answer = a
        out[i] = answer
    return out


@njit(cache=True, nogil=True)
def _extend_compiled(
    group_of: np.ndarray,
    group_count: int,
    row_count: int,
    values: np.ndarray,
    keys: np.ndarray,
    hidden: np.ndarray,
    hidden_count: np.ndarray,
    smallest_visible: np.ndarray,
) -> bool:  # pragma: no cover - compiled; the tests compare it with the numpy passes and the rule by hand
    """One pass of the rule over one family (as _Family.extend): counts are taken before any change,
    then each group with one hidden member hides its smallest visible member (by value, then key),
    and the groups with none hide their parent (group g's parent is row g when g < row_count).
    Scratch arrays hold at least one slot per group."""
    for g in range(group_count):
        hidden_count[g] = 0
        smallest_visible[g] = -1
    for row in range(group_of.shape[0]):
        if hidden[row]:
            hidden_count[group_of[row]] += 1
    for row in range(group_of.shape[0]):
        g = group_of[row]
        if hidden_count[g] == 1 and not hidden[row]:
            best = smallest_visible[g]
            if best < 0 or values[row] < values[best] or (values[row] == values[best] and keys[row] < keys[best]):
                smallest_visible[g] = row
    changed = False
    for g in range(group_count):
        if hidden_count[g] == 1 and smallest_visible[g] >= 0:
            hidden[smallest_visible[g]] = True
            changed = True
    for g in range(group_count):
        if hidden_count[g] == 1 and smallest_visible[g] < 0 and g < row_count and not hidden[g]:
            hidden[g] = True
            changed = True
    return changed
