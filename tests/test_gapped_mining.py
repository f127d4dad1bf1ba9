"""The windowed kernel for bounded gaps against brute force and against the general kernel."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder import mining
from gapfinder.gapped_mining import window_dtype, window_width
from gapfinder.mining import SequenceDatabase, mine_patterns
from tests.test_mining import brute_force, brute_force_closed

sequences = st.lists(st.lists(st.integers(0, 3), max_size=8), min_size=1, max_size=8)


@pytest.mark.parametrize("engine", ["compiled", "python"])
@settings(max_examples=150, deadline=None)
@given(
    db=sequences,
    data=st.data(),
    min_support=st.integers(1, 4),
    max_length=st.integers(1, 5),
    max_gap=st.sampled_from([0, 1, 2, 3]),
    group_entries=st.sampled_from([1, 3, mining.GROUP_ENTRIES]),
)
def test_windowed_kernel_equals_brute_force(
    engine: str,
    db: list[list[int]],
    data: st.DataObject,
    min_support: int,
    max_length: int,
    max_gap: int,
    group_entries: int,
) -> None:
    """Also when children are written one or a few entries at a time (a projection re-read for
    every group), and where windows run past the end of a sequence."""
    weights = data.draw(st.lists(st.integers(1, 3), min_size=len(db), max_size=len(db)))
    database = SequenceDatabase.from_sequences(db, weights)
    options = {"min_support": min_support, "max_length": max_length, "max_gap": max_gap, "engine": engine}
    saved = mining.GROUP_ENTRIES
    try:
        mining.GROUP_ENTRIES = group_entries
        found = mine_patterns(database, **options)
        closed = mine_patterns(database, closed=True, **options)
    finally:
        mining.GROUP_ENTRIES = saved
    assert found.as_dict() == brute_force(db, weights, min_support, max_length, max_gap)
    assert closed.as_dict() == brute_force_closed(db, weights, min_support, max_length, max_gap)


def _random_database(seed: int, events: int, count: int = 3000) -> SequenceDatabase:
    rng = np.random.default_rng(seed)
    # Zipf-like popularity, so that some events have projections far larger than a group
    popularity = 1.0 / np.arange(1, events + 1)
    sequences = [
        rng.choice(events, size=rng.integers(1, 25), p=popularity / popularity.sum()).tolist() for _ in range(count)
    ]
    users = rng.integers(0, count // 4, size=count + 200)
    ptr = np.sort(
        np.concatenate([np.arange(count + 1), rng.integers(0, count + 1, size=200)])
    )  # some paths have several users
    return dataclasses.replace(
        SequenceDatabase.from_sequences(sequences, rng.integers(1, 4, size=count).tolist()),
        user_ptr=ptr.astype(np.int64),
        user_ids=users[: ptr[-1]].astype(np.int32),
    )


@pytest.mark.parametrize(
    ("events", "max_gap", "closed", "top_k", "group_entries"),
    [
        (12, 2, True, None, mining.GROUP_ENTRIES),
        (12, 1, False, None, 500),
        (12, 0, True, 40, 7),
        (300, 2, True, None, 2000),  # ids past 254: two-byte windows
        (12, 3, False, 25, mining.GROUP_ENTRIES),
    ],
)
def test_windowed_kernel_equals_the_general_kernel_row_for_row(
    monkeypatch: pytest.MonkeyPatch, events: int, max_gap: int, closed: bool, top_k: int | None, group_entries: int
) -> None:
    db = _random_database(events, events)
    options = {"min_support": 20, "max_length": 5, "max_gap": max_gap, "closed": closed, "top_k": top_k}
    monkeypatch.setattr(mining, "PARALLEL_MIN_POSITIONS", 0)  # ranges of first events on several threads
    monkeypatch.setattr(mining, "GROUP_ENTRIES", group_entries)
    windowed = mine_patterns(db, engine="compiled", **options)
    monkeypatch.setattr(mining, "MAX_WINDOW", 0)
    general = mine_patterns(db, engine="compiled", **options)
    assert len(general) >= 20
    for name in ("events", "lengths", "sessions", "users", "is_closed"):
        assert getattr(windowed, name).tolist() == getattr(general, name).tolist(), name


def test_window_width_covers_every_step_still_to_add() -> None:
    # patterns of up to 6 steps with closure checked at 7: a first step's entry carries 6 × 3 events
    assert window_width(6, 2, True) == 18
    assert window_width(6, 2, False) == 15
    assert window_width(1, 0, False) == 1  # nothing is grown: one unused column


@pytest.mark.parametrize(("items", "expected"), [(200, np.uint8), (254, np.uint8), (255, np.uint16), (65_535, None)])
def test_window_event_type_leaves_room_for_the_end_mark(items: int, expected: type | None) -> None:
    assert window_dtype(items) == (None if expected is None else np.dtype(expected))
