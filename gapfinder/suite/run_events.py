"""Test-run telemetry: the events the app itself emitted while the suite ran, attributed to tests.

Run the suite against a build with telemetry switched on and the app emits the same events it
emits in the field, so field and tests share one vocabulary and nothing is mapped by hand. The
events are read with the same readers and column mapping as ``gapfinder profile``; each event goes
to a test

- by a test-id column of the events (``--events-map test_id=COLUMN``, or a column named
  ``test_id``), or else
- by time: it happened inside the test's window (start to end, recorded by the pytest plugin, a
  JUnit report's timestamps and durations, or an OTLP test span), narrowed to the user or session
  the test used where the plugin recorded one (``gapfinder.pytest_plugin.record_identity``).

Events that fall in no window are counted; events inside the windows of two tests running at once
(pytest-xdist) go to both and are counted, so the reader can narrow them by identity.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any

import duckdb
import pyarrow as pa

from gapfinder.errors import InputError, describe_database_error
from gapfinder.sql import fetch_dicts, registered
from gapfinder.workspace import connect_memory

__all__ = ["RunEvents", "TestWindow", "attribute_run_events"]


@dataclass(frozen=True)
class TestWindow:
    """When one test ran, and optionally the user or session it acted as."""

    __test__ = False

    test_id: str
    started: float
    finished: float
    user_id: str | None = None
    session_id: str | None = None


@dataclass
class RunEvents:
    """Steps per test from test-run telemetry, and what could not be attributed."""

    steps: dict[str, list[str]] = field(default_factory=dict)
    by: str = "window"  # "test_id" or "window"
    event_count: int = 0
    attributed_count: int = 0
    shared_count: int = 0
    label: str = ""
    mapping: dict[str, str] = field(default_factory=dict)


def _moment(seconds: float) -> datetime:
    return datetime.fromtimestamp(seconds, tz=UTC)


def attribute_run_events(
    inputs: Sequence[str | os.PathLike[str]],
    windows: Sequence[TestWindow],
    mapping: dict[str, str] | None = None,
    *,
    ts_unit: str | None = None,
    ts_format: str | None = None,
    feature_keys: Any = None,
) -> RunEvents:
    """Each test's events in time order, by the events' test-id column or by the tests' windows.

    ``feature_keys`` name the events the way the field profile named its own (same template,
    rewrite rules and id templates), so a test's steps meet the field's features."""
    from gapfinder.sources.telemetry import open_telemetry

    con = connect_memory()
    closing: list[Any] = []
    try:
        opened = open_telemetry(
            con,
            inputs,
            mapping or {},
            ts_unit=ts_unit,
            ts_format=ts_format,
            extra_columns=("test_id",),
            feature_keys=feature_keys,
        )
        closing.append(opened)
        label = opened.files.label
        result = RunEvents(label=label, mapping=opened.mapping)
        if "test_id" in opened.mapping:
            result.by = "test_id"
            rows = fetch_dicts(con, "list_test_run_events_by_test_id")
            result.event_count = result.attributed_count = sum(int(r["event_count"]) for r in rows)
        else:
            if not windows:
                raise InputError(
                    f"--events {label}: the events carry no test_id column and no test source gives time windows; "
                    "run the suite with the gapfinder pytest plugin (--gapfinder-trace), pass its JUnit report, or "
                    "map the events' test id with --events-map test_id=COLUMN"
                )
            frame = pa.table(
                {
                    "test_id": [w.test_id for w in windows],
                    "started": pa.array([_moment(w.started) for w in windows], pa.timestamp("us", tz="UTC")),
                    "finished": pa.array([_moment(w.finished) for w in windows], pa.timestamp("us", tz="UTC")),
                    "user_id": [w.user_id for w in windows],
                    "session_id": [w.session_id for w in windows],
                }
            )
            with registered(con, test_windows=frame):
                rows = fetch_dicts(con, "list_test_run_events_by_window")
                counts = fetch_dicts(con, "count_test_run_events")[0]
            result.event_count = int(counts["event_count"])
            result.attributed_count = int(counts["attributed_count"])
            result.shared_count = int(counts["shared_count"])
        result.steps = {str(r["test_id"]): [str(s) for s in r["steps"]] for r in rows}
        return result
    except duckdb.Error as exc:
        raise InputError(f"--events: the test-run telemetry cannot be read ({describe_database_error(exc)})") from None
    finally:
        for opened_source in closing:
            opened_source.close()
        con.close()
