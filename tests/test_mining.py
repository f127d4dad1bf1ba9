"""The miner against a brute-force enumeration and the ``prefixspan`` package, on random databases."""

from __future__ import annotations

import dataclasses
import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder import mining
from gapfinder.errors import ConfigError
from gapfinder.mining import REPLAY_ENTRIES, SequenceDatabase, mine_patterns, resolve_min_support


def brute_force(
    db: list[list[int]], weights: list[int], min_support: int, max_length: int, max_gap: int | None
) -> dict[tuple[int, ...], int]:
    """Every subsequence of every sequence (gap bound applied), counted once per sequence."""
    support: dict[tuple[int, ...], int] = {}
    for seq, weight in zip(db, weights, strict=True):
        found = set()
        for length in range(1, min(max_length, len(seq)) + 1):
            for pos in itertools.combinations(range(len(seq)), length):
                if max_gap is not None and any(b - a - 1 > max_gap for a, b in itertools.pairwise(pos)):
                    continue
                found.add(tuple(seq[p] for p in pos))
        for pattern in found:
            support[pattern] = support.get(pattern, 0) + weight
    return {p: s for p, s in support.items() if s >= min_support}


def brute_force_closed(
    db: list[list[int]], weights: list[int], min_support: int, max_length: int, max_gap: int | None
) -> dict[tuple[int, ...], int]:
    """Frequent patterns with no one-event-longer super-pattern of the same support."""
    frequent = brute_force(db, weights, min_support, max_length + 1, max_gap)
    closed = {}
    for p, s in frequent.items():
        if len(p) > max_length:
            continue
        longer = (q for q, t in frequent.items() if len(q) == len(p) + 1 and t == s)
        if not any(any(q[:i] + q[i + 1 :] == p for i in range(len(q))) for q in longer):
            closed[p] = s
    return closed


sequences = st.lists(st.lists(st.integers(0, 3), max_size=7), min_size=1, max_size=8)


@pytest.mark.parametrize("engine", ["compiled", "python"])
@settings(max_examples=150, deadline=None)
@given(
    db=sequences,
    data=st.data(),
    min_support=st.integers(1, 4),
    max_length=st.integers(1, 5),
    max_gap=st.sampled_from([None, 0, 1, 2]),
    replay_entries=st.sampled_from([0, 3, REPLAY_ENTRIES]),
)
def test_frequent_and_closed_equal_brute_force(
    engine: str,
    db: list[list[int]],
    data: st.DataObject,
    min_support: int,
    max_length: int,
    max_gap: int | None,
    replay_entries: int,
) -> None:
    """The general kernel (bounded gaps go to the windowed one unless its windows are made too
    narrow), also with no room (every writing pass scans again) or room for a few entries (some
    nodes replay what their counting pass kept, some scan again)."""
    weights = data.draw(st.lists(st.integers(1, 3), min_size=len(db), max_size=len(db)))
    database = SequenceDatabase.from_sequences(db, weights)
    options = {"min_support": min_support, "max_length": max_length, "max_gap": max_gap, "engine": engine}
    max_window = mining.MAX_WINDOW
    try:
        mining.REPLAY_ENTRIES = replay_entries
        mining.MAX_WINDOW = 0
        found = mine_patterns(database, **options)
        closed = mine_patterns(database, closed=True, **options)
    finally:
        mining.REPLAY_ENTRIES = REPLAY_ENTRIES
        mining.MAX_WINDOW = max_window
    assert found.as_dict() == brute_force(db, weights, min_support, max_length, max_gap)
    assert closed.as_dict() == brute_force_closed(db, weights, min_support, max_length, max_gap)


@pytest.mark.parametrize(
    ("max_gap", "closed", "top_k"), [(None, False, None), (2, True, None), (1, False, 50), (None, True, 20)]
)
def test_both_engines_agree_on_a_larger_input(max_gap: int | None, closed: bool, top_k: int | None) -> None:
    rng = np.random.default_rng(5)
    sequences = [rng.integers(0, 12, size=rng.integers(1, 15)).tolist() for _ in range(300)]
    db = SequenceDatabase.from_sequences(sequences, rng.integers(1, 4, size=300).tolist())
    options = {"min_support": 25, "max_length": 4, "max_gap": max_gap, "closed": closed, "top_k": top_k}
    compiled = mine_patterns(db, engine="compiled", **options)
    python = mine_patterns(db, engine="python", **options)
    assert compiled.paths == python.paths and len(compiled) >= 20
    assert compiled.sessions.tolist() == python.sessions.tolist()


@pytest.mark.parametrize("engine", ["compiled", "python"])
@settings(max_examples=100, deadline=None)
@given(db=sequences, data=st.data())
def test_containing_sequences_equals_a_plain_check(engine: str, db: list[list[int]], data: st.DataObject) -> None:
    from gapfinder.coverage import occurs_in
    from gapfinder.matching import containing_sequences

    patterns = data.draw(
        st.lists(st.lists(st.integers(0, 3), min_size=1, max_size=4).map(tuple), min_size=1, max_size=5)
    )
    gaps = data.draw(st.lists(st.sampled_from([None, 0, 1, 2, 3, 5]), min_size=len(patterns), max_size=len(patterns)))
    framed = data.draw(st.lists(st.booleans(), min_size=len(patterns), max_size=len(patterns)))
    which, seq = containing_sequences(
        SequenceDatabase.from_sequences(db), patterns, max_gaps=gaps, framed=framed, engine=engine
    )
    got = set(zip(which.tolist(), seq.tolist(), strict=True))
    want = {
        (i, j)
        for i, p in enumerate(patterns)
        for j, s in enumerate(db)
        if occurs_in(p, ([0, *s, 1] if framed[i] else s), gaps[i])
    }
    assert got == want


def test_parallel_matcher_gives_the_same_pairs_in_the_same_order_on_one_thread() -> None:
    """The compiled matcher tests (pattern, candidate) chunks on all threads; the pairs it returns,
    and their order (pattern by pattern, sequences ascending), must not depend on the thread count."""
    from gapfinder.matching import containing_sequences
    from gapfinder.workspace import use_engine

    rng = np.random.default_rng(3)
    db = SequenceDatabase.from_sequences([rng.integers(2, 9, size=rng.integers(1, 12)).tolist() for _ in range(3000)])
    patterns = [tuple(rng.integers(2, 9, size=rng.integers(1, 4)).tolist()) for _ in range(60)]
    gaps = [[None, 0, 1][i % 3] for i in range(60)]
    framed = [i % 4 == 0 for i in range(60)]
    everywhere = containing_sequences(db, patterns, max_gaps=gaps, framed=framed, engine="compiled")
    try:
        use_engine(threads=1)
        one = containing_sequences(db, patterns, max_gaps=gaps, framed=framed, engine="compiled")
    finally:
        use_engine(threads=None)
    assert len(everywhere[0]) > 1000
    assert everywhere[0].tolist() == one[0].tolist() and everywhere[1].tolist() == one[1].tolist()
    order = np.lexsort((everywhere[1], everywhere[0]))
    assert (order == np.arange(len(order))).all()


@settings(max_examples=150, deadline=None)
@given(db=st.lists(st.lists(st.integers(0, 4), max_size=9), min_size=1, max_size=10), min_support=st.integers(1, 5))
def test_frequent_and_closed_against_the_prefixspan_package(db: list[list[int]], min_support: int) -> None:
    """Frequent sets must be equal. Closed sets: ours must be inside the package's, and every pattern
    the package adds must have a one-event-longer super-pattern with the same support in the
    package's own frequent output, so it is not closed by the definition (Wang & Han, BIDE,
    ICDE 2004). The package's closure test looks for a common item after the *last* occurrence of
    the pattern's last event and misses some forward extensions: for [[1, 0], [1, 0, 1]] it calls
    [1] (2 sessions) closed although [1, 0] also has 2 sessions."""
    prefixspan = pytest.importorskip("prefixspan")
    ps = prefixspan.PrefixSpan(db)
    database = SequenceDatabase.from_sequences(db)
    theirs = {tuple(p): s for s, p in ps.frequent(min_support)}
    assert mine_patterns(database, min_support=min_support, max_length=64).as_dict() == theirs
    theirs_closed = {tuple(p): s for s, p in ps.frequent(min_support, closed=True)}
    ours_closed = mine_patterns(database, min_support=min_support, max_length=64, closed=True).as_dict()
    assert ours_closed.items() <= theirs_closed.items()
    for pattern, support in theirs_closed.items() - ours_closed.items():
        assert any(
            len(q) == len(pattern) + 1 and t == support and any(q[:i] + q[i + 1 :] == pattern for i in range(len(q)))
            for q, t in theirs.items()
        ), f"{pattern} is closed but only the package says so"


def test_prefixspan_package_closure_slip_is_real() -> None:
    """The smallest case hypothesis found, kept as a named example."""
    prefixspan = pytest.importorskip("prefixspan")
    db = [[1, 0], [1, 0, 1]]
    theirs = {tuple(p): s for s, p in prefixspan.PrefixSpan(db).frequent(2, closed=True)}
    ours = mine_patterns(SequenceDatabase.from_sequences(db), min_support=2, max_length=64, closed=True).as_dict()
    assert ours == {(1, 0): 2} == brute_force_closed(db, [1, 1], 2, 64, None)
    assert theirs.get((1,)) == 2  # the package's extra, non-closed answer


@settings(max_examples=100, deadline=None)
@given(db=sequences, k=st.integers(1, 12), max_gap=st.sampled_from([None, 1]), closed=st.booleans())
def test_top_k_is_the_k_best_of_the_full_result(db: list[list[int]], k: int, max_gap: int | None, closed: bool) -> None:
    database = SequenceDatabase.from_sequences(db)
    everything = mine_patterns(database, min_support=1, max_length=4, max_gap=max_gap, closed=closed)
    best = mine_patterns(database, top_k=k, max_length=4, max_gap=max_gap, closed=closed)
    assert len(best) == min(k, len(everything))
    assert best.sessions.tolist() == everything.sessions.tolist()[: len(best)]
    assert best.paths == everything.paths[: len(best)]  # same order: sessions, length, events


def test_weights_count_sessions_and_users_are_distinct() -> None:
    # two distinct paths; the first taken by users {0, 1} in 3 sessions, the second by {1, 2} in 2
    db = SequenceDatabase(
        items=np.array([5, 6, 7, 5, 7], dtype=np.int32),
        starts=np.array([0, 3, 5], dtype=np.int64),
        weights=np.array([3, 2], dtype=np.int64),
        user_ptr=np.array([0, 2, 4], dtype=np.int64),
        user_ids=np.array([0, 1, 1, 2], dtype=np.int32),
    )
    found = mine_patterns(db, min_support=1, max_length=3)
    rows = {p: (int(s), int(u)) for p, s, u in zip(found.paths, found.sessions, found.users, strict=True)}
    assert rows[(5, 7)] == (5, 3)  # both paths, users 0, 1, 2 counted once
    assert rows[(5, 6)] == (3, 2)
    assert rows[(5, 6, 7)] == (3, 2)
    contiguous = mine_patterns(db, min_support=1, max_length=3, max_gap=0).as_dict()
    assert contiguous[(5, 7)] == 2 and (5, 7) in contiguous


def test_results_sorted_by_sessions_then_length_then_events() -> None:
    db = SequenceDatabase.from_sequences([[1, 2, 3], [1, 2], [3, 1]])
    found = mine_patterns(db, min_support=1, max_length=3)
    keys = [(-s, len(p), p) for p, s in zip(found.paths, found.sessions.tolist(), strict=True)]
    assert keys == sorted(keys)


def test_explosion_stops_with_a_clear_error() -> None:
    db = SequenceDatabase.from_sequences([list(range(12))] * 3)
    with pytest.raises(ConfigError, match="raise --min-support"):
        mine_patterns(db, min_support=1, max_length=12, max_patterns=1000)


def test_empty_database_gives_no_patterns() -> None:
    assert len(mine_patterns(SequenceDatabase.from_sequences([[], []]), min_support=1)) == 0


@pytest.mark.parametrize(
    ("value", "sessions", "expected"),
    [(0.01, 25_000, 250), (0.5, 3, 2), (1, 10, 1), (250, 10, 250), (0.0001, 10, 1)],
)
def test_min_support_as_fraction_or_count(value: float, sessions: int, expected: int) -> None:
    assert resolve_min_support(value, sessions) == expected


@pytest.mark.parametrize("value", [0, -1, 2.5, float("nan")])
def test_min_support_rejects_nonsense(value: float) -> None:
    with pytest.raises(ConfigError, match="--min-support"):
        resolve_min_support(value, 100)


@pytest.mark.parametrize(
    "kwargs",
    [
        {"min_support": 0},
        {"max_gap": -1},
        {"min_length": 3, "max_length": 2},
        {"max_length": 65},
        {"top_k": 0},
        {"engine": "gpu"},
    ],
)
def test_bad_options_are_config_errors(kwargs: dict) -> None:
    with pytest.raises(ConfigError):
        mine_patterns(SequenceDatabase.from_sequences([[1, 2]]), **kwargs)


@pytest.mark.parametrize(("max_gap", "closed"), [(None, False), (1, True), (0, False)])
def test_mining_ranges_of_first_events_at_once_equals_one_search(
    monkeypatch: pytest.MonkeyPatch, max_gap: int | None, closed: bool
) -> None:
    """With several threads the compiled miner grows ranges of first events at the same time and
    concatenates their rows; the patterns, their order and their counts must equal one search."""
    import gapfinder.mining as mining
    from gapfinder.workspace import use_engine

    rng = np.random.default_rng(11)
    sequences = [rng.integers(2, 30, size=rng.integers(1, 14)).tolist() for _ in range(2000)]
    users = rng.integers(0, 400, size=2000)
    db = dataclasses.replace(
        SequenceDatabase.from_sequences(sequences, rng.integers(1, 4, size=2000).tolist()),
        user_ptr=np.arange(2001, dtype=np.int64),
        user_ids=users.astype(np.int32),
    )
    options = {"min_support": 30, "max_length": 4, "max_gap": max_gap, "closed": closed}
    monkeypatch.setattr(mining, "PARALLEL_MIN_POSITIONS", 0)
    try:
        use_engine(threads=1)
        one = mine_patterns(db, engine="compiled", **options)
    finally:
        use_engine(threads=None)
    monkeypatch.setattr(mining.numba, "get_num_threads", lambda: 3)  # more ranges than cores: still equal
    ranged = mine_patterns(db, engine="compiled", **options)
    assert len(one) >= 50
    assert ranged.paths == one.paths
    assert ranged.sessions.tolist() == one.sessions.tolist() and ranged.users.tolist() == one.users.tolist()


def test_first_event_ranges_cover_every_event_once() -> None:
    from gapfinder.mining import _first_event_ranges

    db = SequenceDatabase.from_sequences([[2, 2, 3], [5, 9, 9, 9], [4]])
    ranges = _first_event_ranges(db, 4)
    assert ranges[0][0] == 0 and ranges[-1][1] == db.item_count
    assert all(a < b for a, b in ranges) and all(ranges[i][1] == ranges[i + 1][0] for i in range(len(ranges) - 1))


@settings(max_examples=100, deadline=None)
@given(st.lists(st.lists(st.integers(2, 9), max_size=8), min_size=1, max_size=12))
def test_event_index_lists_each_events_sequences_once_in_order(db: list[list[int]]) -> None:
    """Both engines of the inverted index list, per event, exactly the sequences holding it, ascending."""
    from gapfinder.matching import _event_index, _event_index_python

    data = SequenceDatabase.from_sequences(db)
    top = int(data.items.max()) + 1 if len(data.items) else 0
    for index in (_event_index, _event_index_python):
        bounds, sequences = index(data.items.astype(np.int32), data.starts.astype(np.int64), top)
        for e in range(top):
            assert sequences[bounds[e] : bounds[e + 1]].tolist() == [s for s, seq in enumerate(db) if e in seq]


def test_more_positions_than_the_arena_holds_is_a_clear_error(monkeypatch: pytest.MonkeyPatch) -> None:
    """Projections hold positions in 4 bytes: past MAX_POSITIONS events the miner refuses, naming the
    limit, instead of writing wrapped positions."""
    import gapfinder.mining as mining_module

    db = SequenceDatabase.from_sequences([[2, 3, 4], [2, 4, 5]])
    monkeypatch.setattr(mining_module, "MAX_POSITIONS", 5)
    with pytest.raises(ConfigError, match="at most 5"):
        mine_patterns(db, min_support=1)
    monkeypatch.setattr(mining_module, "MAX_POSITIONS", 6)
    assert len(mine_patterns(db, min_support=2)) > 0
