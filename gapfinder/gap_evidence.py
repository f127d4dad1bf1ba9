"""The evidence behind each candidate gap, from per-path aggregates instead of a join of every session.

For the candidates of ``gaps.find_gaps`` (each matched to the distinct paths that contain it, with
the positions of its steps there), the sessions on those paths are grouped once by path, error
positions, any error and half of the period; every session count of a candidate is then a sum over a
few groups. Distinct users, which cannot be summed, come from one pass over the sessions per 128
candidates: each path carries a bit mask of the candidates it holds, each user the OR of the masks
of their sessions, and the users per candidate are the bit counts over the distinct masks, weighted
by how many users share each (the same idea as the user signatures of ``create_kpaths.sql``).
Results equal those of joining every session to every candidate (tests/test_gap_evidence.py).
"""

from __future__ import annotations

import itertools
from collections import defaultdict
from typing import Any

import duckdb
import numpy as np
import pyarrow as pa

from gapfinder.sql import fetch_arrow, fetch_dicts, registered, run

__all__ = ["MASK_BITS", "gap_evidence"]

MASK_BITS = 128
_CHUNK_ROWS = 200_000  # distinct masks unpacked at a time (128 bytes each)


def _bit_counts(low: np.ndarray, high: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Σ weights over the rows whose mask has bit b set, for b = 0..127 (low word first)."""
    out = np.zeros(128, dtype=np.int64)  # two 64-bit words, whatever width the masks use
    for start in range(0, len(low), _CHUNK_ROWS):
        words = np.stack([low[start : start + _CHUNK_ROWS], high[start : start + _CHUNK_ROWS]], axis=1)
        words = np.ascontiguousarray(words.astype("<u8"))
        bits = np.unpackbits(words.view(np.uint8).reshape(len(words), 16), axis=1, bitorder="little")
        out += weights[start : start + _CHUNK_ROWS].astype(np.int64) @ bits.astype(np.int64)
    return out


def _column(table: pa.Table, name: str) -> np.ndarray:
    return table.column(name).to_numpy(zero_copy_only=False)


def gap_evidence(
    con: duckdb.DuckDBPyConnection,
    gap_paths: pa.Table,
    event_rates: pa.Table,
    *,
    candidates: int,
    midpoint: Any,
    include_automated: bool,
) -> tuple[dict[int, dict[str, Any]], list[dict[str, Any]]]:
    """(evidence per candidate with sessions and users, segment rows per candidate and value)."""
    users = np.zeros(candidates + MASK_BITS, dtype=np.int64)
    earlier = np.zeros(candidates + MASK_BITS, dtype=np.int64)
    segment_users: dict[tuple[str, str], np.ndarray] = defaultdict(lambda: np.zeros(candidates + MASK_BITS, np.int64))
    with registered(con, gap_paths=gap_paths, event_rates=event_rates):
        run(con, "create_gap_session_groups", midpoint=midpoint, include_automated=include_automated)
        try:
            rows = fetch_dicts(con, "list_gap_session_evidence")
            failing: dict[int, int] = {}
            for r in fetch_dicts(con, "list_gap_next_failures"):
                failing.setdefault(int(r["candidate"]), int(r["event_id"]))
            segment_rows = fetch_dicts(con, "list_gap_segment_sessions", include_automated=include_automated)
        finally:
            run(con, "drop_gap_session_groups")
        width = MASK_BITS
        for offset in range(0, candidates, width):
            run(con, "create_gap_path_masks", offset=offset, width=width)
            try:
                masks = fetch_arrow(con, "list_gap_user_masks", midpoint=midpoint, include_automated=include_automated)
                by_value = fetch_arrow(con, "list_gap_segment_user_masks", include_automated=include_automated)
            finally:
                run(con, "drop_gap_path_masks")
            weights = _column(masks, "users")
            users[offset : offset + width] += _bit_counts(_column(masks, "low"), _column(masks, "high"), weights)[
                :width
            ]
            earlier[offset : offset + width] += _bit_counts(
                _column(masks, "earlier_low"), _column(masks, "earlier_high"), weights
            )[:width]
            segments, values = _column(by_value, "segment"), _column(by_value, "value")
            low, high, counts = _column(by_value, "low"), _column(by_value, "high"), _column(by_value, "users")
            # rows come ordered by segment and value: cut them where either changes
            changed = np.flatnonzero((segments[1:] != segments[:-1]) | (values[1:] != values[:-1])) + 1
            bounds = [0, *changed.tolist(), len(segments)] if len(segments) else [0]
            for lo, hi in itertools.pairwise(bounds):
                segment_users[(str(segments[lo]), str(values[lo]))][offset : offset + width] += _bit_counts(
                    low[lo:hi], high[lo:hi], counts[lo:hi]
                )[:width]
    evidence = {}
    for r in rows:
        c = int(r["candidate"])
        evidence[c] = {
            **r,
            "users": int(users[c]),
            "earlier_users": int(earlier[c]),
            "next_failing_event_id": failing.get(c),
        }
    segments_out = [
        {**r, "users": int(segment_users[(r["segment"], r["value"])][int(r["candidate"])])} for r in segment_rows
    ]
    return evidence, segments_out
