"""Journey families: the folding rule's invariants on random gaps (hypothesis)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.gaps import fold_families
from gapfinder.session_sets import session_jaccard

paths = st.lists(st.integers(2, 6), min_size=1, max_size=4).map(tuple)
session_sets = st.sets(st.integers(0, 40), min_size=1, max_size=25)


@settings(max_examples=300, deadline=None)
@given(
    gaps=st.lists(st.tuples(paths, session_sets, st.floats(0.0, 1.0)), min_size=1, max_size=25),
    top=st.integers(1, 10),
    weights=st.lists(st.integers(1, 50), min_size=41, max_size=41),
)
def test_listed_gaps_share_at_most_half_their_sessions(gaps: list, top: int, weights: list[int]) -> None:
    weight = np.array(weights, dtype=np.int64)
    ranked, sets = [], {}
    for index, (path, members, score) in enumerate(gaps):
        seqs = np.array(sorted(members), dtype=np.int64)
        sets[index] = (seqs, weight[seqs])
        ranked.append(
            {
                "kind": "pattern",
                "path": [str(e) for e in path],
                "sessions": int(weight[seqs].sum()),
                "score": score,
                "_ids": path,
                "_index": index,
            }
        )
    ranked.sort(key=lambda g: -g["score"])
    listed = fold_families(ranked, top, sets)
    assert 1 <= len(listed) <= top
    assert [g["score"] for g in listed] == sorted((g["score"] for g in listed), reverse=True)
    for i, a in enumerate(listed):
        for b in listed[:i]:
            assert session_jaccard(sets[a["_index"]], sets[b["_index"]]) <= 0.5
    # every gap is listed or folded at most once
    seen = [g["_index"] for g in listed]
    assert len(seen) == len(set(seen))
    for gap in listed:
        members = [gap, *gap["folded"]]
        best = max(m["sessions"] for m in members)
        assert gap["sessions"] >= 0.8 * best


@settings(max_examples=300, deadline=None)
@given(
    st.dictionaries(st.integers(0, 40), st.integers(1, 9), max_size=25),
    st.lists(st.integers(0, 40), max_size=25, unique=True),
)
def test_session_jaccard_and_the_size_bound_agree_with_sets(weights: dict[int, int], other: list[int]) -> None:
    """Property: the Jaccard index of weighted path sets equals the one computed with Python sets,
    and the size bound never rejects a pair whose index is above the threshold."""
    from gapfinder.gaps import FAMILY_JACCARD, _FamilyTest

    every = dict(weights)
    for path in other:
        every.setdefault(path, 1 + path % 4)
    ids_a = np.array(sorted(weights), dtype=np.int64)
    ids_b = np.array(sorted(other), dtype=np.int64)
    a = (ids_a, np.array([every[i] for i in ids_a.tolist()], dtype=np.int64))
    b = (ids_b, np.array([every[i] for i in ids_b.tolist()], dtype=np.int64))
    shared = sum(every[i] for i in set(weights) & set(other))
    union = sum(every[i] for i in set(weights) | set(other))
    expected = shared / union if union else 0.0
    assert session_jaccard(a, b) == pytest.approx(expected)
    assert session_jaccard(b, a) == pytest.approx(expected)
    one_journey = _FamilyTest({0: a, 1: b})
    assert one_journey(0, 1) == one_journey(1, 0) == (expected > FAMILY_JACCARD)
