"""The Spark engine against the DuckDB engine: the same inputs must give identical workspaces.

Every table `profile` writes (features, users, sessions, full paths, k-paths, automated users, the
usage model) is compared row for row, and the profile summaries as JSON, on hand-made edge cases,
on hypothesis-generated event streams and on the committed sample (`run`, byte for byte).
"""

from __future__ import annotations

import json
import os
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import duckdb
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from gapfinder.cli import cli
from gapfinder.engines.spark import SparkSettings
from gapfinder.sessions import SessionOptions
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from tests.helpers import SAMPLE

pytestmark = pytest.mark.spark

T0 = datetime(2026, 3, 2, 9, 0, tzinfo=UTC)
TABLES = ("features", "users", "sessions", "full_paths", "kpaths", "automated_users", "usage_edges", "feature_model")


def _table_rows(path: Path, table: str) -> tuple[list[Any], list[Any]]:
    con = duckdb.connect(str(path), read_only=True)
    try:
        schema = con.execute(f"DESCRIBE {table}").fetchall()
        rows = con.execute(f"SELECT * FROM {table} ORDER BY ALL").fetchall()
    finally:
        con.close()
    return schema, rows


def profile_both(tmp_path: Path, events: pa.Table, options: ProfileOptions) -> tuple[dict[str, Any], dict[str, Any]]:
    """Profile the same Parquet file with both engines; assert identical tables; return both summaries."""
    source = tmp_path / "events.parquet"
    pq.write_table(events, source)
    summaries = []
    for engine in ("duckdb", "spark"):
        folder = tmp_path / engine
        folder.mkdir()
        chosen = ProfileOptions(**{**options.__dict__, "spark": SparkSettings() if engine == "spark" else None})
        summary = profile_telemetry([source], folder / "ws.duckdb", chosen, min_users=1)
        summary.pop("workspace")
        summaries.append(summary)
    for table in TABLES:
        duck, spark = (_table_rows(tmp_path / e / "ws.duckdb", table) for e in ("duckdb", "spark"))
        assert duck[0] == spark[0], f"{table}: column types differ"
        assert duck[1] == spark[1], f"{table}: rows differ"
    assert json.dumps(summaries[0], sort_keys=True, default=str) == json.dumps(
        summaries[1], sort_keys=True, default=str
    )
    return summaries[0], summaries[1]


def _events(rows: list[dict[str, Any]]) -> pa.Table:
    names = ("user_id", "session_id", "ts", "event", "outcome", "app_version", "platform")
    present = [n for n in names if any(n in r for r in rows)]
    types = {"ts": pa.timestamp("us", tz="UTC")}
    return pa.table({n: pa.array([r.get(n) for r in rows], types.get(n, pa.string())) for n in present})


def _edge_rows() -> list[dict[str, Any]]:
    """A user with more than 40,000 events, ties, gaps exactly at the threshold, NULL segments."""
    rows: list[dict[str, Any]] = []
    # 40,001 events one second apart: one session far beyond max_events, and seq far beyond 2^15.
    names = ("open", "list", "item", "list", "pay")
    rows += [
        {"user_id": "heavy", "ts": T0 + timedelta(seconds=i), "event": names[i % 5], "outcome": "ok"}
        for i in range(40_001)
    ]
    start = T0 + timedelta(days=2)
    for u in range(8):
        user = f"user-{u:02d}"
        t = start + timedelta(hours=u)
        # equal timestamps with different events and outcomes: ordered by name, then outcome
        rows += [
            {"user_id": user, "ts": t, "event": "search", "outcome": "ok", "app_version": "2.1"},
            # equal in time, event and outcome too: the segments decide, so the first event's are fixed
            {"user_id": user, "ts": t, "event": "search", "outcome": "ok", "platform": "android"},
            {"user_id": user, "ts": t, "event": "item", "outcome": None, "platform": "ios"},
            {"user_id": user, "ts": t, "event": "item", "outcome": " ERROR "},
        ]
        # a gap exactly at 30 minutes stays in the session; one microsecond more starts a new one
        t2 = t + timedelta(minutes=30)
        rows.append({"user_id": user, "ts": t2, "event": "pay", "outcome": "failed"})
        t3 = t2 + timedelta(minutes=30, microseconds=1)
        rows += [
            {"user_id": user, "ts": t3, "event": "open"},
            {"user_id": user, "ts": t3 + timedelta(seconds=5), "event": "open"},
            {"user_id": user, "ts": t3 + timedelta(seconds=9), "event": "heartbeat"},
            {"user_id": user, "ts": t3 + timedelta(seconds=12), "event": " settings "},
        ]
    # rows that are rejected: blank user, missing timestamp, blank event, out of the plausible window
    rows += [
        {"user_id": "  ", "ts": start, "event": "open"},
        {"user_id": "user-00", "ts": None, "event": "open"},
        {"user_id": "user-00", "ts": start, "event": " "},
        {"user_id": "user-00", "ts": datetime(1980, 1, 1, tzinfo=UTC), "event": "open"},
    ]
    return rows


@pytest.mark.parametrize(
    "sessions",
    [
        SessionOptions(),
        SessionOptions(collapse_repeats=True, max_events=0, drop_events=("heartbeat",)),
        SessionOptions(max_events=3, error_outcomes=("error",), flag_automated=False),
    ],
    ids=["defaults", "collapse-nocap-drop", "cap3-errors"],
)
def test_edge_cases_give_identical_workspaces(spark: Any, tmp_path: Path, sessions: SessionOptions) -> None:
    duck, _ = profile_both(tmp_path, _events(_edge_rows()), ProfileOptions(sessions=sessions, max_k=4))
    assert duck["sessions"]["length"]["max"] >= 3
    assert duck["reading"]["rejected"]  # the rejected rows were counted, identically


def test_session_column_and_pseudonymized_users(spark: Any, tmp_path: Path) -> None:
    rows = _edge_rows()[40_001:]
    for n, row in enumerate(rows):
        row["session_id"] = None if n % 7 == 0 else f"s{n // 4}"
    duck, _ = profile_both(
        tmp_path,
        _events(rows),
        ProfileOptions(pseudonymize_key=b"k" * 32, sessions=SessionOptions(collapse_repeats=True)),
    )
    assert duck["reading"]["formed_by"].startswith("the input's session column")


def test_epoch_numbers_with_mixed_units_and_half_microseconds(spark: Any, tmp_path: Path) -> None:
    base = 1_772_442_000  # 2026-03-02 in seconds
    values = [base + 0.0000005, (base + 60) * 1000 + 0.5, (base + 120) * 1e6, (base + 180) * 1e9]
    rows = [(f"u{i % 2}", v, ("open", "list", "item", "pay")[i % 4]) for i, v in enumerate(values * 3)]
    table = pa.table(
        {
            "user_id": pa.array([r[0] for r in rows]),
            "ts": pa.array([r[1] for r in rows], pa.float64()),
            "event": pa.array([r[2] for r in rows]),
        }
    )
    duck, _ = profile_both(tmp_path, table, ProfileOptions())
    assert "MIXED" in duck["reading"]["timestamp"]


def test_feature_key_rules_run_on_the_distinct_names(spark: Any, tmp_path: Path) -> None:
    rows = [
        {"user_id": f"u{n % 6}", "ts": T0 + timedelta(seconds=20 * n), "event": f"/tools/{1000 + n % 40}/open"}
        for n in range(240)
    ]
    rows += [{"user_id": "u1", "ts": T0 + timedelta(seconds=5), "event": "/docs/9f8e7d6c5b4a3f2e/view"}]
    duck, _ = profile_both(tmp_path, _events(rows), ProfileOptions())
    assert duck["reading"]["feature_keys"]["names"] < duck["reading"]["feature_keys"]["raw_names"]


_EVENT = st.sampled_from(["open", "list", "item", "pay", "START", "heartbeat"])
_ROW = st.tuples(
    st.sampled_from(["a", "b", "c", "d", " a "]),
    st.integers(min_value=0, max_value=4 * 3600),  # seconds: idle gaps and ties both happen
    _EVENT,
    st.sampled_from([None, "ok", "error", "FAIL"]),
    st.sampled_from([None, "1.0", "2.0"]),
)


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    rows=st.lists(_ROW, min_size=1, max_size=60),
    collapse=st.booleans(),
    max_events=st.sampled_from([0, 2, 500]),
    idle=st.sampled_from([1.0, 30.0]),
)
def test_generated_event_streams(
    spark: Any, tmp_path_factory: pytest.TempPathFactory, rows: list[Any], collapse: bool, max_events: int, idle: float
) -> None:
    tmp_path = tmp_path_factory.mktemp("generated")
    events = [
        {"user_id": u, "ts": T0 + timedelta(seconds=s), "event": e, "outcome": o, "app_version": v}
        for u, s, e, o, v in rows
    ]
    options = ProfileOptions(
        sessions=SessionOptions(idle_minutes=idle, collapse_repeats=collapse, max_events=max_events)
    )
    profile_both(tmp_path, _events(events), options)


def test_run_on_the_sample_gives_the_same_json_outputs(spark: Any, tmp_path: Path) -> None:
    """`run --engine spark` on the committed sample equals `run` byte for byte in its JSON files."""
    outputs = {}
    for engine in ("duckdb", "spark"):
        folder = tmp_path / engine
        folder.mkdir()
        cwd = os.getcwd()
        os.chdir(folder)
        try:
            result = CliRunner().invoke(
                cli,
                [
                    "run",
                    str(SAMPLE / "field"),
                    "--tests",
                    str(SAMPLE / "tests" / "suite_traces.csv"),
                    "--out",
                    "out",
                    "--engine",
                    engine,
                ],
            )
        finally:
            os.chdir(cwd)
        assert result.exit_code == 0, result.output
        outputs[engine] = {p.relative_to(folder / "out"): p.read_bytes() for p in (folder / "out").rglob("*.json")}
    assert outputs["duckdb"], "run wrote no JSON output"
    assert outputs["duckdb"].keys() == outputs["spark"].keys()
    for name, content in outputs["duckdb"].items():
        assert content == outputs["spark"][name], f"{name} differs"
