"""Gap evidence from per-path aggregates equals the straightforward join of every session to every
candidate (the query gapfinder used before, kept here as the reference)."""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pytest

import gapfinder.gap_evidence as gap_evidence_module
import gapfinder.gaps as gaps_module
from gapfinder.gap_evidence import mask_pairs
from gapfinder.gaps import GapOptions, find_gaps
from gapfinder.matching import containing_sequences, event_index
from gapfinder.occurrences import first_occurrences
from gapfinder.patterns import load_sequences
from gapfinder.sql import registered
from gapfinder.workspace import Workspace

PER_SESSION_EVIDENCE = """
SELECT
    g.candidate,
    count(*)::BIGINT AS sessions,
    count(DISTINCT s.user_key)::BIGINT AS users,
    count(*) FILTER (WHERE s.error_count > 0)::BIGINT AS error_sessions,
    count(*) FILTER (WHERE s.started_at >= $midpoint)::BIGINT AS recent_sessions,
    count(DISTINCT s.user_key) FILTER (WHERE s.started_at < $midpoint)::BIGINT AS earlier_users,
    count(*) FILTER (WHERE list_has_any(s.error_positions, g.event_positions))::BIGINT AS own_error_sessions,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[1]))::BIGINT AS step_errors_1,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[2]))::BIGINT AS step_errors_2,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[3]))::BIGINT AS step_errors_3,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[4]))::BIGINT AS step_errors_4,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[5]))::BIGINT AS step_errors_5,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[6]))::BIGINT AS step_errors_6,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[7]))::BIGINT AS step_errors_7,
    count(*) FILTER (WHERE g.after_position IS NOT NULL)::BIGINT AS next_sessions,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.after_position))::BIGINT AS next_error_sessions,
    avg(r.rate) FILTER (WHERE g.after_position IS NOT NULL AND NOT isnan(r.rate)) AS next_expected_rate
FROM gap_paths AS g
JOIN sessions AS s ON s.path_id = g.path_id
LEFT JOIN event_rates AS r ON r.event_id = s.path[g.after_position]
WHERE $include_automated OR NOT s.is_automated
GROUP BY g.candidate
"""

PER_SESSION_NEXT_FAILURES = """
SELECT g.candidate, s.path[g.after_position] AS event_id, count(*) AS sessions
FROM gap_paths AS g JOIN sessions AS s ON s.path_id = g.path_id
WHERE ($include_automated OR NOT s.is_automated) AND list_contains(s.error_positions, g.after_position)
GROUP BY ALL
"""

PER_SESSION_SEGMENTS = """
SELECT candidate, segment, value, count(*)::BIGINT AS sessions, count(DISTINCT user_key)::BIGINT AS users
FROM (
    SELECT g.candidate, 'app_version' AS segment, s.app_version AS value, s.user_key
    FROM gap_paths AS g JOIN sessions AS s ON s.path_id = g.path_id
    WHERE ($include_automated OR NOT s.is_automated) AND s.app_version IS NOT NULL
    UNION ALL
    SELECT g.candidate, 'platform' AS segment, s.platform AS value, s.user_key
    FROM gap_paths AS g JOIN sessions AS s ON s.path_id = g.path_id
    WHERE ($include_automated OR NOT s.is_automated) AND s.platform IS NOT NULL
)
GROUP BY candidate, segment, value
ORDER BY candidate, segment, value
"""


def _dicts(cursor: Any) -> list[dict[str, Any]]:
    columns = [d[0] for d in cursor.description]
    return [dict(zip(columns, row, strict=True)) for row in cursor.fetchall()]


def _occurrence_frame(db: Any, patterns: list[tuple[int, ...]], kwargs: dict[str, Any]) -> pa.Table:
    """(candidate, path_id, step_positions, event_positions, after_position) per (pattern, distinct
    path) pair, from the matcher and the occurrence kernel, built row by row."""
    which, sequence = containing_sequences(db, patterns, max_gaps=kwargs["max_gaps"], framed=kwargs["framed"])
    positions, after = first_occurrences(
        db, patterns, max_gaps=kwargs["max_gaps"], framed=kwargs["framed"], which=which, sequence=sequence
    )
    rows: dict[str, list[Any]] = {
        k: [] for k in ("candidate", "path_id", "step_positions", "event_positions", "after_position")
    }
    for r, (c, s) in enumerate(zip(which.tolist(), sequence.tolist(), strict=True)):
        length = int(db.starts[s + 1] - db.starts[s])
        steps = positions[r, : len(patterns[c])].tolist()
        rows["candidate"].append(c)
        rows["path_id"].append(int(db.path_ids[s]))
        rows["step_positions"].append([q if 1 <= q <= length else None for q in steps])
        rows["event_positions"].append([q for q in steps if 1 <= q <= length])
        rows["after_position"].append(int(after[r]) if after[r] > 0 else None)
    return pa.table(rows)


@pytest.mark.parametrize(("top", "block"), [(3, 128), (20, 128), (20, 16)])
def test_equals_the_join_of_every_session(
    tmp_path: Path, suite_workspace: Path, monkeypatch: pytest.MonkeyPatch, top: int, block: int
) -> None:
    ws_path = tmp_path / "ws.duckdb"
    shutil.copy(suite_workspace, ws_path)
    calls: list[tuple[Any, ...]] = []
    real = gaps_module.gap_evidence
    recorded: dict[str, Any] = {}

    def recording(con: Any, db: Any, sessions: Any, patterns: Any, **kwargs: Any) -> Any:
        result = real(con, db, sessions, patterns, **kwargs)
        calls.append((db, patterns, kwargs, result))
        return result

    def recording_sessions(con: Any, db: Any, **kwargs: Any) -> Any:
        recorded.update(kwargs)
        return gap_evidence_module.load_path_sessions(con, db, **kwargs)

    monkeypatch.setattr(gaps_module, "gap_evidence", recording)
    monkeypatch.setattr(gaps_module, "load_path_sessions", recording_sessions)
    monkeypatch.setattr(gaps_module, "BLOCK_CANDIDATES", block)  # 16: several blocks, the last one partly used
    with Workspace(ws_path, read_only=True) as ws:
        find_gaps(ws, GapOptions(top=top))
        assert len(calls) == 1 or block == 16
        if block == 16:
            assert len(calls) > 3, "several blocks"
        con = ws.con
        rates = pa.table(
            {
                "event_id": pa.array(range(len(calls[0][2]["event_rate"])), pa.int32()),
                "rate": pa.array(calls[0][2]["event_rate"], pa.float64(), from_pandas=True),
            }
        )
        params = {"midpoint": recorded["midpoint"], "include_automated": recorded["include_automated"]}
        automated = {"include_automated": recorded["include_automated"]}
        for db, patterns, kwargs, (evidence, segments, low, high) in calls:
            which, sequence = mask_pairs(low, high, len(patterns))
            frame = _occurrence_frame(db, patterns, kwargs)
            want_which, want_sequence = containing_sequences(
                db, patterns, max_gaps=kwargs["max_gaps"], framed=kwargs["framed"]
            )
            assert sorted(zip(which.tolist(), sequence.tolist(), strict=True)) == sorted(
                zip(want_which.tolist(), want_sequence.tolist(), strict=True)
            )
            with registered(con, gap_paths=frame, event_rates=rates):
                expected = {r["candidate"]: r for r in _dicts(con.execute(PER_SESSION_EVIDENCE, params))}
                failures = _dicts(con.execute(PER_SESSION_NEXT_FAILURES, automated))
                expected_segments = _dicts(con.execute(PER_SESSION_SEGMENTS, automated))
            assert evidence.keys() == expected.keys() and evidence
            for candidate, want in expected.items():
                got = evidence[candidate]
                for key, value in want.items():
                    if key == "next_expected_rate" and value is not None:
                        assert got[key] == pytest.approx(value, rel=1e-12), (candidate, key)
                    else:
                        assert got[key] == value, (candidate, key)
                counts = {r["event_id"]: r["sessions"] for r in failures if r["candidate"] == candidate}
                if counts:
                    best = max(counts.values())
                    assert got["next_failing_event_id"] == min(e for e, n in counts.items() if n == best)
                else:
                    assert got["next_failing_event_id"] is None
            assert segments == expected_segments


def test_a_pattern_of_start_alone_is_tried_on_every_path(suite_workspace: Path) -> None:
    """A pattern made only of START/END has no event to look up in the inverted index: it is tried on
    every distinct path (framed START alone is in all of them; START → END in none: no session is
    empty), beside a pattern read from the index."""
    with Workspace(suite_workspace, read_only=True) as ws:
        db = load_sequences(ws.con, with_users=False)
        sessions = gap_evidence_module.load_path_sessions(ws.con, db, midpoint=None, include_automated=False)
        common = int(np.bincount(db.items).argmax())
        evidence, _, low, high = gap_evidence_module.gap_evidence(
            ws.con,
            db,
            sessions,
            [(0,), (0, 1), (common,)],
            max_gaps=[0, 0, 0],
            framed=[True, True, False],
            event_rate=np.zeros(0),
            index=event_index(db),
        )
    assert evidence[0]["sessions"] == int(db.weights.sum())
    assert gap_evidence_module.masked_sequences(low, high, 0).tolist() == list(range(db.sequence_count))
    assert 1 not in evidence
    holding = [s for s in range(db.sequence_count) if common in db.items[db.starts[s] : db.starts[s + 1]]]
    assert gap_evidence_module.masked_sequences(low, high, 2).tolist() == holding
    assert evidence[2]["sessions"] == int(db.weights[holding].sum())
