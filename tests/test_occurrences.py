"""The first occurrence of a pattern in a sequence: the leftmost start, each step as early as the gap
bound allows, which is the lexicographically smallest tuple of positions; checked against an
enumeration of every tuple."""

from __future__ import annotations

import itertools

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.mining import SequenceDatabase
from gapfinder.occurrences import first_occurrences


def _smallest_occurrence(
    sequence: list[int], pattern: tuple[int, ...], gap: int | None, framed: bool
) -> list[int] | None:
    """Positions (from 1 in the session path; 0 START, len + 1 END) of the lexicographically smallest
    occurrence, by trying every tuple of increasing positions."""
    read = [0, *sequence, 1] if framed else sequence
    for chosen in itertools.combinations(range(len(read)), len(pattern)):
        if any(read[j] != e for j, e in zip(chosen, pattern, strict=True)):
            continue
        if gap is not None and any(b - a - 1 > gap for a, b in itertools.pairwise(chosen)):
            continue
        return [j if framed else j + 1 for j in chosen]
    return None


@settings(max_examples=300, deadline=None)
@given(
    sequences=st.lists(st.lists(st.integers(2, 4), min_size=1, max_size=9), min_size=1, max_size=6),
    patterns=st.lists(
        st.tuples(
            st.lists(st.integers(0, 4), min_size=1, max_size=4),
            st.sampled_from([None, 0, 1, 2, 3, 5]),
            st.booleans(),
        ),
        min_size=1,
        max_size=4,
    ),
)
def test_first_occurrence_is_the_smallest_tuple_of_positions(
    sequences: list[list[int]], patterns: list[tuple[list[int], int | None, bool]]
) -> None:
    """Few distinct events and many repeats: the depth-first search must backtrack, and remember
    the steps it could not complete, without missing or changing an occurrence."""
    db = SequenceDatabase.from_sequences(sequences)
    paths = [tuple(p) for p, _, _ in patterns]
    gaps = [g for _, g, _ in patterns]
    framed = [f for _, _, f in patterns]
    which = np.repeat(np.arange(len(paths)), len(sequences))
    sequence = np.tile(np.arange(len(sequences)), len(paths))
    positions, after = first_occurrences(db, paths, max_gaps=gaps, framed=framed, which=which, sequence=sequence)
    for r, (p, s) in enumerate(zip(which.tolist(), sequence.tolist(), strict=True)):
        want = _smallest_occurrence(sequences[s], paths[p], gaps[p], framed[p])
        k = len(paths[p])
        if want is None:
            assert positions[r].tolist() == [-1] * positions.shape[1] and after[r] == -1
            continue
        assert positions[r, :k].tolist() == want, (sequences[s], paths[p], gaps[p], framed[p])
        following = want[-1] + 1
        assert after[r] == (following if 1 <= following <= len(sequences[s]) else -1)


def test_a_long_run_of_one_event_is_searched_once_per_position() -> None:
    """Three hundred equal events and a pattern that cannot end: without remembering dead steps the
    search would try every way to place five steps with gaps of up to four (hundreds of thousands of
    placements per start); the answer is still that it does not occur, and the leftmost occurrence where it does."""
    run = [2] * 300
    db = SequenceDatabase.from_sequences([run, [*run, 3]])
    positions, after = first_occurrences(
        db,
        [(2, 2, 2, 2, 2, 3)],
        max_gaps=[4],
        framed=[False],
        which=np.array([0, 0]),
        sequence=np.array([0, 1]),
    )
    assert positions[0].tolist() == [-1] * 6
    # the 3 at 301 needs the fifth 2 at 296 or later, so the start at 276 or later, 5 apart at the least
    assert positions[1].tolist() == [276, 281, 286, 291, 296, 301] and after[1] == -1


@settings(max_examples=300, deadline=None)
@given(
    sequence=st.lists(st.integers(2, 6), min_size=1, max_size=12),
    pattern=st.lists(st.integers(2, 6), min_size=1, max_size=4),
    gap=st.sampled_from([0, 1, 2, 3]),
    reach=st.sampled_from([1, 2, 3, 4]),
)
def test_a_path_holding_a_pattern_has_its_pair_signature(
    sequence: list[int], pattern: list[int], gap: int, reach: int
) -> None:
    """The signature test only rules out: wherever the pattern occurs (by enumeration), the path's
    signature of any reach holds every bit the pattern needs from it; a pattern of one step needs
    none, nor does one whose gaps the reach does not cover."""
    from gapfinder.matching import has_pairs, pair_signatures, signature_needs

    db = SequenceDatabase.from_sequences([sequence])
    needs = signature_needs(
        np.array(pattern, dtype=np.int32),
        np.array([0, len(pattern)], dtype=np.int64),
        np.array([gap], dtype=np.int64),
        reach,
    )
    if len(pattern) == 1 or gap + 1 > reach:
        assert not needs.any()
    if _smallest_occurrence(sequence, tuple(pattern), gap, framed=False) is not None:
        assert has_pairs(pair_signatures(db, reach), 0, needs, 0)


def test_the_reach_is_what_the_bounded_gaps_need() -> None:
    from gapfinder.matching import SIGNATURE_REACH, signature_reach

    assert signature_reach([2, None, 0, 2]) == 3
    assert signature_reach([None, 17]) == 1  # no bounded pattern: no pair is needed
    assert signature_reach([3, 1]) == SIGNATURE_REACH


def test_a_missing_pair_rules_a_path_out() -> None:
    """Events 2 then 3 never within four positions of each other: the pattern 2 → 3 (gap 3) is ruled
    out by the signature, unless another pair happens to share its bit."""
    from gapfinder.matching import _pair_bit, has_pairs, pair_signatures, signature_needs

    sequence = [2, 4, 4, 4, 4, 3]
    db = SequenceDatabase.from_sequences([sequence])
    needs = signature_needs(np.array([2, 3], dtype=np.int32), np.array([0, 2], dtype=np.int64), np.array([3]), 4)
    held = {_pair_bit(a, b) for i, a in enumerate(sequence) for b in sequence[i + 1 : i + 5]}
    assert _pair_bit(2, 3) not in held  # the hash keeps this pair apart from the path's pairs
    assert not has_pairs(pair_signatures(db), 0, needs, 0)
