"""A pytest plugin that records, per test, when it ran, how it ended and the features it exercised.

Installed with gapfinder, it registers itself (entry point ``pytest11``) and stays idle until a
run file is asked for: ``pytest --gapfinder-trace run.ndjson`` (or ``GAPFINDER_TRACE=run.ndjson``).
Then every test gets a line in the file with its node id, outcome (passed, failed, skipped), start
and end (epoch seconds) and the steps it recorded, with no fixture calls needed:

- exported skeletons record their own steps (``gapfinder export --as pytest``);
- any code can call ``gapfinder.pytest_plugin.record_step("search_catalogue")``, or use the
  ``feature_trace`` fixture: ``feature_trace("search_catalogue")``;
- ``record_identity(user_id=..., session_id=...)`` names the test account a test acts as, so that
  test-run telemetry is attributed by account as well as by time (needed with pytest-xdist).

``gapfinder suite run.ndjson`` reads the file; with ``--events`` the app's own telemetry from the
same run fills each test's steps from its time window. Under pytest-xdist each worker sends its
records to the controller, which writes one file. The file is written once at the end of the
session, atomically (a temporary file renamed).
"""

from __future__ import annotations

import json
import os
import time
from collections.abc import Callable, Generator, Iterator
from pathlib import Path
from typing import Any

import pytest

from gapfinder.safe_io import write_files

__all__ = ["FeatureTrace", "record_identity", "record_step"]

_RUN_KEY = "gapfinder_run"


class _Recorder:
    """What one process records: a record per test, and the test running now."""

    def __init__(self) -> None:
        self.tests: dict[str, dict[str, Any]] = {}
        self.current: str | None = None

    def begin(self, test_id: str) -> None:
        self.current = test_id
        self.tests[test_id] = {
            "test_id": test_id,
            "outcome": "passed",
            "started": time.time(),
            "finished": None,
            "steps": [],
            "user_id": None,
            "session_id": None,
        }

    def end(self) -> None:
        if self.current in self.tests:
            self.tests[self.current]["finished"] = time.time()
        self.current = None

    def step(self, event: str, test_id: str | None = None) -> None:
        record = self.tests.get(test_id or self.current or "")
        if record is not None:
            record["steps"].append(event)


_ACTIVE: _Recorder | None = None


def _event_name(event: object) -> str:
    if not isinstance(event, str) or not event.strip():
        raise ValueError("a step needs an event name (a non-empty string)")
    return event.strip()


def record_step(event: str) -> None:
    """Record that the running test exercised ``event`` (does nothing when no run file is written)."""
    name = _event_name(event)
    if _ACTIVE is not None:
        _ACTIVE.step(name)


def record_identity(*, user_id: str | None = None, session_id: str | None = None) -> None:
    """Name the test account (and session) the running test acts as, to attribute test-run telemetry."""
    if _ACTIVE is not None and _ACTIVE.current in _ACTIVE.tests:
        record = _ACTIVE.tests[_ACTIVE.current]
        if user_id is not None:
            record["user_id"] = str(user_id)
        if session_id is not None:
            record["session_id"] = str(session_id)


class FeatureTrace:
    """Callable that records steps for one test."""

    def __init__(self, test_id: str) -> None:
        self.test_id = test_id

    def __call__(self, event: str) -> None:
        name = _event_name(event)
        if _ACTIVE is not None:
            _ACTIVE.step(name, self.test_id)


def pytest_addoption(parser: pytest.Parser) -> None:
    parser.getgroup("gapfinder").addoption(
        "--gapfinder-trace",
        metavar="PATH",
        default=os.environ.get("GAPFINDER_TRACE"),
        help="write each test's outcome, time window and recorded steps to PATH (NDJSON) for `gapfinder suite`",
    )


def pytest_configure(config: pytest.Config) -> None:
    global _ACTIVE
    if config.getoption("--gapfinder-trace", None):
        _ACTIVE = _Recorder()


def pytest_unconfigure(config: pytest.Config) -> None:
    global _ACTIVE
    _ACTIVE = None


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_protocol(item: pytest.Item, nextitem: pytest.Item | None) -> Generator[None, None, None]:
    if _ACTIVE is not None:
        _ACTIVE.begin(item.nodeid)
    try:
        yield
    finally:
        if _ACTIVE is not None:
            _ACTIVE.end()


def pytest_runtest_logreport(report: pytest.TestReport) -> None:
    record = _ACTIVE.tests.get(report.nodeid) if _ACTIVE is not None else None
    if record is None:
        return
    if report.failed and not hasattr(report, "wasxfail"):
        record["outcome"] = "failed"
    elif (report.skipped or hasattr(report, "wasxfail")) and record["outcome"] != "failed":
        record["outcome"] = "skipped"


@pytest.hookimpl(optionalhook=True)
def pytest_testnodedown(node: Any, error: Any) -> None:
    """pytest-xdist: take a finished worker's records into the controller's."""
    output = getattr(node, "workeroutput", None) or {}
    if _ACTIVE is not None and _RUN_KEY in output:
        for record in json.loads(output[_RUN_KEY]):
            _ACTIVE.tests[record["test_id"]] = record


@pytest.fixture
def feature_trace(request: pytest.FixtureRequest) -> Iterator[Callable[[str], None]]:
    """Record the product features this test exercises, in order: ``feature_trace("login")``."""
    yield FeatureTrace(request.node.nodeid)


def pytest_sessionfinish(session: pytest.Session) -> None:
    config = session.config
    target = config.getoption("--gapfinder-trace", None)
    if not target or _ACTIVE is None:
        return
    records = sorted(_ACTIVE.tests.values(), key=lambda r: (r["started"] or 0, r["test_id"]))
    if hasattr(config, "workerinput"):  # a pytest-xdist worker: the controller writes the file
        config.workeroutput[_RUN_KEY] = json.dumps(records)  # type: ignore[attr-defined]
        return
    header = {_RUN_KEY: 1, "writer": "gapfinder pytest plugin", "tests": len(records)}
    lines = [json.dumps(header, sort_keys=True)] + [json.dumps(r, sort_keys=True) for r in records]
    path = Path(target)
    write_files(path.parent, {path.name: "\n".join(lines) + "\n"}, option="--gapfinder-trace")
