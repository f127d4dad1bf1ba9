"""A pytest plugin that records which product features each test exercises.

Enable it with ``pytest -p gapfinder.pytest_plugin --gapfinder-trace suite_trace.ndjson``. Tests
get a ``feature_trace`` fixture; each call ``feature_trace("search_catalogue")`` records one step.
After the run the file holds one JSON object per step (``test_id`` = the test's node id,
``step_no``, ``event``), which ``gapfinder suite suite_trace.ndjson`` reads like any trace file.
The file is written once at the end of the session, atomically (a temporary file renamed).
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest

from gapfinder.safe_io import write_files

__all__ = ["FeatureTrace"]

_RECORDS_KEY = pytest.StashKey[list[dict[str, Any]]]()


class FeatureTrace:
    """Callable that records steps for one test."""

    def __init__(self, test_id: str, sink: list[dict[str, Any]]) -> None:
        self.test_id = test_id
        self._sink = sink
        self._count = 0

    def __call__(self, event: str) -> None:
        if not isinstance(event, str) or not event.strip():
            raise ValueError("feature_trace needs an event name (a non-empty string)")
        self._count += 1
        self._sink.append({"test_id": self.test_id, "step_no": self._count, "event": event.strip()})


def pytest_addoption(parser: pytest.Parser) -> None:
    parser.getgroup("gapfinder").addoption(
        "--gapfinder-trace",
        metavar="PATH",
        default=os.environ.get("GAPFINDER_TRACE"),
        help="write the features each test exercised to PATH (NDJSON) for `gapfinder suite`",
    )


def pytest_configure(config: pytest.Config) -> None:
    config.stash[_RECORDS_KEY] = []


@pytest.fixture
def feature_trace(request: pytest.FixtureRequest) -> Iterator[Callable[[str], None]]:
    """Record the product features this test exercises, in order: ``feature_trace("login")``."""
    yield FeatureTrace(request.node.nodeid, request.config.stash[_RECORDS_KEY])


def pytest_sessionfinish(session: pytest.Session) -> None:
    target = session.config.getoption("--gapfinder-trace")
    records = session.config.stash.get(_RECORDS_KEY, [])
    if not target:
        return
    path = Path(target)
    text = "".join(json.dumps(record, sort_keys=True) + "\n" for record in records)
    write_files(path.parent, {path.name: text}, option="--gapfinder-trace")
