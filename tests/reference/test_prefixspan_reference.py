"""The miner against the general-purpose PyPI package ``prefixspan`` (C. Gao, PrefixSpan-py, 0.5.2).

Source of the worked example: the package's README, database
``[[0, 1, 2, 3, 4], [1, 1, 1, 3, 4], [2, 1, 2, 2, 0], [1, 1, 1, 2, 2]]`` mined at minimum support 2.
The closed patterns it lists there are written below from memory of that README; the binding check
is the comparison with the package itself, run on the same input in this test.
"""

from __future__ import annotations

import pytest

from gapfinder.mining import SequenceDatabase, mine_patterns

prefixspan = pytest.importorskip("prefixspan")

README_DB = [[0, 1, 2, 3, 4], [1, 1, 1, 3, 4], [2, 1, 2, 2, 0], [1, 1, 1, 2, 2]]
# ps.frequent(2, closed=True) as printed in the package's README (recalled from memory).
README_CLOSED = {(0,): 2, (1,): 4, (1, 2): 3, (1, 2, 2): 2, (1, 3, 4): 2, (1, 1, 1): 2}


def reference(db: list[list[int]], min_support: int, *, closed: bool = False, max_length: int = 1000) -> dict:
    ps = prefixspan.PrefixSpan(db)
    ps.maxlen = max_length
    return {tuple(p): s for s, p in ps.frequent(min_support, closed=closed)}


def test_readme_frequent_patterns_equal_the_package() -> None:
    ours = mine_patterns(SequenceDatabase.from_sequences(README_DB), min_support=2, max_length=64).as_dict()
    theirs = reference(README_DB, 2)
    assert ours == theirs
    assert len(ours) == 14 and ours[(1,)] == 4 and ours[(1, 2)] == 3


def test_readme_closed_patterns_equal_the_package_and_its_readme() -> None:
    ours = mine_patterns(SequenceDatabase.from_sequences(README_DB), min_support=2, max_length=64, closed=True)
    assert ours.as_dict() == reference(README_DB, 2, closed=True)
    assert ours.as_dict() == README_CLOSED
    assert ours.is_closed.all()


def test_readme_top_k_supports_equal_the_package() -> None:
    """topk ties are broken differently; supports and the patterns above the k-th support agree."""
    ps = prefixspan.PrefixSpan(README_DB)
    theirs = ps.topk(5)
    ours = mine_patterns(SequenceDatabase.from_sequences(README_DB), top_k=5, max_length=64)
    assert sorted(ours.sessions.tolist()) == sorted(s for s, _ in theirs)
    kth = min(s for s, _ in theirs)
    assert {p for p, s in ours.as_dict().items() if s > kth} == {tuple(p) for s, p in theirs if s > kth}
