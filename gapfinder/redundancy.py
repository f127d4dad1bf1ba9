"""Redundant tests: those whose usage-weighted contribution the rest of the suite already gives.

Reverse greedy over the objective ``plan`` maximizes (the field occurrences of the transitions the
suite exercises): repeatedly take out the test whose removal loses the least, while that loss is at
most ``max_loss`` of the objective (0 by default: nothing is lost at all). Each listed test comes
with what taking it out (after the ones above it) would lose and which remaining tests exercise
the same transitions: candidates to merge, not to delete (a test also checks what it asserts, which
usage cannot see).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from gapfinder.coverage import FieldItems, TestPaths, exercised_codes

__all__ = ["redundant_tests"]


def _transition_rows(tests: TestPaths, items: FieldItems) -> list[np.ndarray]:
    """For each test, the rows of ``items`` (transitions, k = 2) it exercises, strict."""
    selected = np.flatnonzero(items.k == 2)
    codes = items.code[selected]
    order = np.argsort(codes)
    out = []
    for framed in tests.framed:
        mine = np.array(sorted(exercised_codes(framed, max_k=2, max_gap=0, bits=items.bits)), dtype=np.uint64)
        at = np.searchsorted(codes[order], mine)
        at = np.minimum(at, max(len(codes) - 1, 0))
        found = codes[order][at] == mine if len(codes) else np.zeros(len(mine), bool)
        out.append(selected[order[at[found]]])
    return out


def redundant_tests(tests: TestPaths, items: FieldItems, *, max_loss: float = 0.0) -> list[dict[str, Any]]:
    """The tests reverse greedy takes out while each loses at most ``max_loss`` of the objective.

    >>> from gapfinder.coverage import FieldItems, TestPaths, pack_code
    >>> codes = [pack_code(p, 4) for p in ([0, 2], [2, 1], [2, 3], [3, 1])]
    >>> items = FieldItems(k=np.array([2, 2, 2, 2]), code=np.array(codes, dtype=np.uint64),
    ...     occurrences=np.array([10, 6, 4, 4]),
    ...     sessions=np.array([10, 6, 4, 4]), users=np.array([9, 5, 4, 4]), bits=4, max_k=2)
    >>> tests = TestPaths(["short", "long", "again"], [[0, 2, 1], [0, 2, 3, 1], [0, 2, 1]])
    >>> [(r["test_id"], r["loss"]) for r in redundant_tests(tests, items)]
    [('again', 0)]
    """
    rows = _transition_rows(tests, items)
    weights = items.occurrences.astype(np.float64)
    total = float(weights[items.k == 2].sum())
    owners = np.zeros(len(items.code), dtype=np.int64)
    for r in rows:
        owners[r] += 1
    remaining = set(range(len(tests.test_ids)))
    out: list[dict[str, Any]] = []
    while len(remaining) > 1:
        best: tuple[float, int, str, int] | None = None
        for t in remaining:
            lost = rows[t][owners[rows[t]] == 1]
            loss = float(weights[lost].sum())
            key = (loss, len(rows[t]), tests.test_ids[t], t)
            if best is None or key < best:
                best = key
        assert best is not None
        loss, _, test_id, t = best
        if total == 0 or loss / total > max_loss:
            break
        owners[rows[t]] -= 1
        remaining.discard(t)
        shared = set(rows[t].tolist())
        covering = sorted(
            (u for u in remaining if shared & set(rows[u].tolist())),
            key=lambda u: (-len(shared & set(rows[u].tolist())), tests.test_ids[u]),
        )
        out.append(
            {
                "test_id": test_id,
                "transitions": len(rows[t]),
                "loss": int(loss),
                "loss_share": loss / total if total else 0.0,
                "also_exercised_by": [tests.test_ids[u] for u in covering[:3]],
            }
        )
    return out
