"""The k-path kernel against a direct count with Python sets, on both engines and whatever the
grouping of first states, the pair sort or the number of threads."""

from __future__ import annotations

from collections import Counter

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import gapfinder.kpath_counts as kernel
from gapfinder.kpath_counts import count_kpaths

Counts = dict[int, tuple[int, int, int]]


def direct_counts(
    paths: list[list[int]], sessions: list[int], signatures: list[list[int]], weights: list[int], max_k: int, bits: int
) -> Counts:
    """Every run of every framed path, counted with sets: once per occurrence (weighted by the
    path's sessions), once per path, once per signature (weighted by its users)."""
    runs_of_path = []
    occurrences: Counter[int] = Counter()
    in_sessions: Counter[int] = Counter()
    users: Counter[int] = Counter()
    for path, weight in zip(paths, sessions, strict=True):
        framed = [0, *path, 1]
        runs = []
        for k in range(1, max_k + 1):
            for i in range(len(framed) - k + 1):
                window = framed[i : i + k]
                if k == 1 and window[0] in (0, 1):
                    continue
                packed = 0
                for state in window:
                    packed = (packed << bits) | state
                runs.append((k << 60) | packed)
        runs_of_path.append(runs)
        for code in runs:
            occurrences[code] += weight
        for code in set(runs):
            in_sessions[code] += weight
    for signature, weight in zip(signatures, weights, strict=True):
        reached = set().union(*(runs_of_path[p] for p in signature if p >= 0))
        for code in reached:
            users[code] += weight
    return {code: (occurrences[code], in_sessions[code], users[code]) for code in occurrences}


def kernel_counts(
    paths: list[list[int]],
    sessions: list[int],
    signatures: list[list[int]],
    weights: list[int],
    *,
    max_k: int,
    bits: int,
    engine: str,
    threads: int = 1,
) -> Counts:
    offsets = np.cumsum([0, *map(len, paths)])
    events = np.array([e for p in paths for e in p], dtype=np.int32)
    signature_offsets = np.cumsum([0, *map(len, signatures)])
    signature_paths = np.array([p for s in signatures for p in s], dtype=np.int64)
    counts = count_kpaths(
        offsets,
        events,
        np.array(sessions),
        signature_offsets,
        signature_paths,
        np.array(weights),
        max_k=max_k,
        bits=bits,
        engine=engine,
        threads=threads,
    )
    got = {
        int(c): (int(o), int(s), int(u))
        for c, o, s, u in zip(counts.codes, counts.occurrences, counts.sessions, counts.users, strict=True)
    }
    assert len(got) == len(counts), "a run came out twice"
    assert bool((counts.codes[1:] > counts.codes[:-1]).all()), "rows come in code order"
    table_codes = counts.table().column("code").to_numpy()
    assert bool((table_codes[1:] > table_codes[:-1]).all()), "rows come in code order, in the table too"
    return got


@st.composite
def inputs(draw: st.DrawFn) -> tuple[list[list[int]], list[int], list[list[int]], list[int], int]:
    states = draw(st.integers(min_value=3, max_value=9))
    paths = draw(st.lists(st.lists(st.integers(2, states - 1), min_size=1, max_size=9), min_size=1, max_size=12))
    sessions = draw(st.lists(st.integers(1, 5), min_size=len(paths), max_size=len(paths)))
    signatures = draw(
        st.lists(st.lists(st.integers(-1, len(paths) - 1), min_size=1, max_size=4, unique=True), min_size=1, max_size=8)
    )
    weights = draw(st.lists(st.integers(1, 4), min_size=len(signatures), max_size=len(signatures)))
    max_k = draw(st.integers(min_value=2, max_value=6))
    return paths, sessions, signatures, weights, max_k


@settings(max_examples=60, deadline=None)
@given(data=inputs(), engine=st.sampled_from(["python", "compiled"]))
def test_kernel_equals_direct_counts(data: tuple, engine: str) -> None:
    paths, sessions, signatures, weights, max_k = data
    expected = direct_counts(paths, sessions, signatures, weights, max_k, 4)
    assert kernel_counts(paths, sessions, signatures, weights, max_k=max_k, bits=4, engine=engine) == expected


@settings(max_examples=40, deadline=None)
@given(data=inputs(), engine=st.sampled_from(["python", "compiled"]), threads=st.sampled_from([1, 3]))
def test_many_small_groups_and_a_sort_of_sparse_pairs_give_the_same_counts(
    data: tuple, engine: str, threads: int
) -> None:
    """Groups of one pair of first states each (the users of a signature are then spread over
    groups), rounds of a few positions, pairs renumbered before their sort, batches on three
    threads."""
    paths, sessions, signatures, weights, max_k = data
    expected = direct_counts(paths, sessions, signatures, weights, max_k, 4)
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(kernel, "GROUP_RUNS", 1)
        patch.setattr(kernel, "ROUND_POSITIONS", 3)
        patch.setattr(kernel, "DIRECT_PAIR_BITS", 2)
        got = kernel_counts(paths, sessions, signatures, weights, max_k=max_k, bits=4, engine=engine, threads=threads)
    assert got == expected


def test_a_user_with_several_paths_holding_a_run_counts_once() -> None:
    # path 0: a b a b (the run "a b" twice), path 1: a b; one user took both, one only path 1
    a, b = 2, 3
    got = kernel_counts([[a, b, a, b], [a, b]], [2, 1], [[0, 1], [1]], [1, 1], max_k=2, bits=2, engine="compiled")
    ab = (2 << 60) | (a << 2) | b
    assert got[ab] == (2 * 2 + 1, 3, 2)
    assert got[(1 << 60) | a] == (2 * 2 + 1, 3, 2)


def test_paths_unpacks_each_code() -> None:
    rng = np.random.default_rng(7)
    paths = [rng.integers(2, 30, size=rng.integers(1, 12)).tolist() for _ in range(40)]
    offsets = np.cumsum([0, *map(len, paths)])
    events = np.array([e for p in paths for e in p], dtype=np.int32)
    counts = count_kpaths(
        offsets, events, np.ones(40), np.array([0, 1]), np.array([0]), np.array([1]), max_k=5, bits=5, engine="compiled"
    )
    starts, states = counts.paths()
    for code, lo, hi in zip(counts.codes.tolist(), starts[:-1].tolist(), starts[1:].tolist(), strict=True):
        packed = 0
        for state in states[lo:hi].tolist():
            packed = (packed << 5) | state
        assert code == ((hi - lo) << 60) | packed


def test_no_paths_give_no_runs() -> None:
    counts = count_kpaths(np.zeros(1), np.zeros(0), np.zeros(0), np.zeros(1), np.zeros(0), np.zeros(0), max_k=3, bits=2)
    assert len(counts) == 0


def test_unknown_engine_is_refused() -> None:
    with pytest.raises(ValueError, match="engine"):
        count_kpaths(
            np.zeros(1), np.zeros(0), np.zeros(0), np.zeros(1), np.zeros(0), np.zeros(0), max_k=3, bits=2, engine="gpu"
        )


def test_in_code_order_keeps_sorted_rows_and_sorts_others() -> None:
    from gapfinder.kpath_counts import in_code_order

    codes = np.array([5, 9, 12], dtype=np.uint64)
    values = np.array([1, 2, 3])
    same = in_code_order(codes, values)
    assert same[0] is codes and same[1] is values  # already in order: no copy
    shuffled = in_code_order(codes[[2, 0, 1]], values[[2, 0, 1]])
    assert shuffled[0].tolist() == [5, 9, 12] and shuffled[1].tolist() == [1, 2, 3]


def test_a_large_count_comes_out_in_code_order_across_rounds_and_batches(monkeypatch: pytest.MonkeyPatch) -> None:
    """Several rounds of windows and several batches of groups on two threads: k by k, the parts
    are laid end to end, and every code still comes after the one before."""
    import gapfinder.kpath_counts as kc

    monkeypatch.setattr(kc, "ROUND_POSITIONS", 1 << 10)
    monkeypatch.setattr(kc, "GROUP_RUNS", 1 << 8)
    rng = np.random.default_rng(3)
    lengths = rng.integers(1, 12, size=2_000)
    events = rng.integers(2, 40, size=int(lengths.sum())).astype(np.int32)
    offsets = np.concatenate([[0], np.cumsum(lengths)])
    paths = np.arange(len(lengths))
    counts = kc.count_kpaths(
        offsets, events, np.ones(len(lengths)), np.arange(len(lengths) + 1), paths, np.ones(len(lengths)),
        max_k=5, bits=6, engine="compiled", threads=2,
    )  # fmt: skip
    assert len(counts) > 20_000
    assert bool((counts.codes[1:] > counts.codes[:-1]).all())
