"""Gap evidence from per-path aggregates equals the straightforward join of every session to every
candidate (the query gapfinder used before, kept here as the reference)."""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

import pytest

import gapfinder.gap_evidence as gap_evidence_module
import gapfinder.gaps as gaps_module
from gapfinder.gaps import GapOptions, find_gaps
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
    avg(r.rate) FILTER (WHERE g.after_position IS NOT NULL) AS next_expected_rate
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


@pytest.mark.parametrize(("top", "width"), [(3, 128), (20, 128), (20, 16)])
def test_equals_the_join_of_every_session(
    tmp_path: Path, suite_workspace: Path, monkeypatch: pytest.MonkeyPatch, top: int, width: int
) -> None:
    ws_path = tmp_path / "ws.duckdb"
    shutil.copy(suite_workspace, ws_path)
    calls: list[tuple[Any, ...]] = []
    real = gaps_module.gap_evidence

    def recording(con: Any, frame: Any, rates: Any, **kwargs: Any) -> Any:
        result = real(con, frame, rates, **kwargs)
        calls.append((con, frame, rates, kwargs, result))
        return result

    monkeypatch.setattr(gaps_module, "gap_evidence", recording)
    monkeypatch.setattr(gap_evidence_module, "MASK_BITS", width)  # 16: several masks, as past 128 candidates
    with Workspace(ws_path, read_only=True) as ws:
        find_gaps(ws, GapOptions(top=top))
        ((con, frame, rates, kwargs, (evidence, segments)),) = calls
        params = {"midpoint": kwargs["midpoint"], "include_automated": kwargs["include_automated"]}
        with registered(con, gap_paths=frame, event_rates=rates):
            expected = {r["candidate"]: r for r in _dicts(con.execute(PER_SESSION_EVIDENCE, params))}
            failures = _dicts(
                con.execute(PER_SESSION_NEXT_FAILURES, {"include_automated": kwargs["include_automated"]})
            )
            expected_segments = _dicts(
                con.execute(PER_SESSION_SEGMENTS, {"include_automated": kwargs["include_automated"]})
            )
    if width == 16:
        assert kwargs["candidates"] > 3 * width, "several masks, the last one partly used"
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
            assert counts[got["next_failing_event_id"]] == max(counts.values())
        else:
            assert got["next_failing_event_id"] is None
    assert segments == expected_segments
