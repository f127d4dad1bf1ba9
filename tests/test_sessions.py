"""Sessionization against an independent, straightforward Python implementation."""

from __future__ import annotations

import tempfile
from collections import Counter
from pathlib import Path

import duckdb
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.sessions import SessionOptions
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from tests.helpers import at, write_events

IDLE_MINUTES = 1.0  # 60 s, so small integer timestamps hit the threshold exactly


def reference_sessions(rows: list[tuple[str, int, str]], *, idle_s: float, collapse: bool) -> Counter:
    """Sort each user's events by (time, event name); split where the gap exceeds idle_s."""
    sessions: Counter = Counter()
    for user in sorted({r[0] for r in rows}):
        events = sorted((ts, ev) for u, ts, ev in rows if u == user)
        current: list[str] = []
        last_ts: int | None = None
        for ts, ev in events:
            if last_ts is not None and ts - last_ts > idle_s:
                sessions[(user, tuple(current))] += 1
                current = []
            if not (collapse and current and current[-1] == ev):
                current.append(ev)
            last_ts = ts
        sessions[(user, tuple(current))] += 1
    return sessions


def gapfinder_sessions(workspace: Path) -> Counter:
    con = duckdb.connect(str(workspace), read_only=True)
    names = [r[0] for r in con.execute("SELECT event FROM features ORDER BY event_id").fetchall()]
    rows = con.execute("SELECT u.user_label, s.path FROM sessions s JOIN users u USING (user_key)").fetchall()
    con.close()
    return Counter((user, tuple(names[i] for i in path)) for user, path in rows)


events = st.lists(
    st.tuples(
        st.sampled_from(["ann", "bob", "cy"]),
        # seconds on a 30 s grid (ties and gaps of exactly 60 s are common) or anywhere
        st.one_of(st.integers(min_value=0, max_value=14).map(lambda n: 30 * n), st.integers(0, 400)),
        st.sampled_from(["a", "b", "c", "d"]),
    ),
    min_size=1,
    max_size=60,
)


@settings(max_examples=60, deadline=None)
@given(rows=events, collapse=st.booleans())
def test_idle_gap_sessions_match_reference(rows: list[tuple[str, int, str]], collapse: bool) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        path = write_events(Path(tmp) / "e.parquet", [(u, at(ts), ev) for u, ts, ev in rows])
        ws = Path(tmp) / "ws.duckdb"
        options = ProfileOptions(
            sessions=SessionOptions(idle_minutes=IDLE_MINUTES, collapse_repeats=collapse, flag_automated=False)
        )
        profile_telemetry([path], ws, options, min_users=1)
        assert gapfinder_sessions(ws) == reference_sessions(rows, idle_s=60, collapse=collapse)


def test_gap_exactly_at_threshold_stays_in_session(tmp_path: Path) -> None:
    rows = [("ann", at(0), "a"), ("ann", at(60), "b"), ("ann", at(121), "c")]
    ws = tmp_path / "ws.duckdb"
    options = ProfileOptions(sessions=SessionOptions(idle_minutes=IDLE_MINUTES, flag_automated=False))
    profile_telemetry([write_events(tmp_path / "e.parquet", rows)], ws, options, min_users=1)
    assert gapfinder_sessions(ws) == Counter({("ann", ("a", "b")): 1, ("ann", ("c",)): 1})


def test_session_column_is_used_when_mapped(tmp_path: Path) -> None:
    rows = [("ann", "s1", at(0), "a"), ("ann", "s1", at(9000), "b"), ("ann", "s2", at(10), "c")]
    path = write_events(tmp_path / "e.parquet", rows, ("user_id", "visit", "ts", "event"))
    ws = tmp_path / "ws.duckdb"
    options = ProfileOptions(mapping={"session_id": "visit"}, sessions=SessionOptions(flag_automated=False))
    summary = profile_telemetry([path], ws, options, min_users=1)
    assert gapfinder_sessions(ws) == Counter({("ann", ("a", "b")): 1, ("ann", ("c",)): 1})
    assert "session column 'visit'" in summary["sessions"]["formed_by"]


def test_noise_events_dropped_and_counted(tmp_path: Path) -> None:
    rows = [("ann", at(0), "a"), ("ann", at(1), "ping"), ("ann", at(2), "b")]
    ws = tmp_path / "ws.duckdb"
    options = ProfileOptions(sessions=SessionOptions(drop_events=("ping",), flag_automated=False))
    summary = profile_telemetry([write_events(tmp_path / "e.parquet", rows)], ws, options, min_users=1)
    assert gapfinder_sessions(ws) == Counter({("ann", ("a", "b")): 1})
    assert summary["reading"]["noise_dropped"] == 1


def test_cap_cuts_long_sessions_and_reports_it(tmp_path: Path) -> None:
    rows = [("ann", at(i), f"e{i % 3}") for i in range(10)]
    ws = tmp_path / "ws.duckdb"
    options = ProfileOptions(sessions=SessionOptions(max_events=4, flag_automated=False))
    summary = profile_telemetry([write_events(tmp_path / "e.parquet", rows)], ws, options, min_users=1)
    assert gapfinder_sessions(ws) == Counter({("ann", ("e0", "e1", "e2", "e0")): 1})
    assert summary["sessions"]["truncated"] == 1


def test_automated_user_is_flagged_and_kept_apart(tmp_path: Path) -> None:
    rows = []
    for u in range(40):  # ordinary users: 2 sessions of 3 events, 30 s apart
        for s in range(2):
            rows += [(f"p{u}", at(u * 100_000 + s * 10_000 + 30 * i), e) for i, e in enumerate("abc")]
    rows += [("robot", at(5_000_000 + 2 * i), "ab"[i % 2]) for i in range(600)]  # one looping account
    ws = tmp_path / "ws.duckdb"
    summary = profile_telemetry([write_events(tmp_path / "e.parquet", rows)], ws, ProfileOptions(), min_users=1)
    automated = summary["automated"]
    assert automated["users"] == 1 and automated["events"] == 600
    assert summary["sessions"]["users"] == 40
    assert summary["sessions"]["count"] == 80
    assert "events per session" in " ".join(automated["accounts"][0]["reasons"])


def test_session_times_are_exact_at_the_ends_of_the_accepted_range(tmp_path: Path) -> None:
    """Event keys pack microseconds since 1970 with the event id and attributes below them; times
    at both ends of the accepted range (1990-2099) come back to the microsecond and still split at
    the idle gap."""
    from datetime import UTC, datetime, timedelta

    before = datetime(1990, 1, 1, 0, 0, 0, 1, tzinfo=UTC)
    far = datetime(2099, 12, 31, 23, 0, 0, 999_999, tzinfo=UTC)
    rows = [
        ("ann", before, "a"),
        ("ann", before + timedelta(microseconds=2), "b"),
        ("ann", far, "c"),
        ("ann", far + timedelta(seconds=60), "d"),
    ]
    ws = tmp_path / "ws.duckdb"
    options = ProfileOptions(sessions=SessionOptions(idle_minutes=IDLE_MINUTES, flag_automated=False))
    profile_telemetry([write_events(tmp_path / "e.parquet", rows)], ws, options, min_users=1)
    con = duckdb.connect(str(ws), read_only=True)
    spans = con.execute("SELECT started_at, ended_at FROM sessions ORDER BY session_no").fetchall()
    con.close()
    assert spans == [(before, before + timedelta(microseconds=2)), (far, far + timedelta(seconds=60))]
    assert gapfinder_sessions(ws) == Counter({("ann", ("a", "b")): 1, ("ann", ("c", "d")): 1})


def test_equal_timestamps_are_ordered_by_name_then_outcome_version_platform(tmp_path: Path) -> None:
    """Ties are broken by event name, then outcome, app version and platform (NULLs first), so the
    session's first event, its segments and its error positions do not depend on file order."""
    rows = [
        ("ann", at(0), "b", "ok", "2.0", "web"),
        ("ann", at(0), "a", "ok", "1.0", "web"),
        ("ann", at(0), "a", "error", "2.0", "ios"),
        ("ann", at(0), "a", "error", "1.0", "web"),
        ("ann", at(5), "c", None, None, None),
    ]
    names = ("user_id", "ts", "event", "outcome", "app_version", "platform")
    firsts = []
    for order in (rows, rows[::-1]):
        ws = tmp_path / f"ws{len(firsts)}.duckdb"
        path = write_events(tmp_path / f"e{len(firsts)}.parquet", order, names)
        options = ProfileOptions(
            mapping={"outcome": "outcome", "app_version": "app_version", "platform": "platform"},
            sessions=SessionOptions(collapse_repeats=False, flag_automated=False),
        )
        profile_telemetry([path], ws, options, min_users=1)
        con = duckdb.connect(str(ws), read_only=True)
        query = "SELECT app_version, platform, error_positions, event_count FROM sessions"
        firsts.append(con.execute(query).fetchall())
        con.close()
    # "a"/"error" sorts before "a"/"ok"; among the errors app version "1.0" before "2.0".
    assert firsts[0] == firsts[1] == [("1.0", "web", [1, 2], 5)]


def test_noise_is_counted_as_it_is_dropped_with_padding_trimmed(tmp_path: Path) -> None:
    """Names are trimmed before they are compared with --drop, both for the count and the sessions."""
    rows = [("ann", at(0), "a"), ("ann", at(1), " ping "), ("ann", at(2), "ping"), ("ann", at(3), "b")]
    ws = tmp_path / "ws.duckdb"
    options = ProfileOptions(sessions=SessionOptions(drop_events=("ping",), flag_automated=False))
    summary = profile_telemetry([write_events(tmp_path / "e.parquet", rows)], ws, options, min_users=1)
    assert gapfinder_sessions(ws) == Counter({("ann", ("a", "b")): 1})
    assert summary["reading"]["noise_dropped"] == 2
