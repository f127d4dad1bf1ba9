"""What every suite reader produces: a test, the ordered steps it exercises, and how it ended."""

from __future__ import annotations

import json
import os
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

__all__ = ["OUTCOMES", "ReaderReport", "TestTrace", "json_lines"]

# How a test ended. "unknown" is a test read from its text (Gherkin, a catalog) with no run result.
OUTCOMES: tuple[str, ...] = ("passed", "failed", "skipped", "unknown")


@dataclass
class TestTrace:
    """One test: its id, its steps in order (names as the suite spells them), and where it came from.

    ``feature`` and ``name`` are the test's own names (a Gherkin feature and scenario, a JUnit
    class and case) used to join a run's result to the test's text; ``started``/``finished`` are
    epoch seconds when the source says when the test ran (its time window in test-run telemetry).
    """

    __test__ = False  # not a pytest test class, despite the name

    test_id: str
    steps: list[str]
    source: str
    kind: str
    outcome: str = "unknown"
    tags: tuple[str, ...] = ()
    feature: str = ""
    name: str = ""
    started: float | None = None
    finished: float | None = None
    user_id: str | None = None  # the account the test acted as, to narrow its window (test accounts)
    session_id: str | None = None
    step_types: list[str] = field(default_factory=list)  # per step: "action", "assertion" or "context"


@dataclass
class ReaderReport:
    """What a reader found besides the traces: things it could not use, never dropped silently."""

    traces: list[TestTrace] = field(default_factory=list)
    skipped: dict[str, int] = field(default_factory=dict)  # reason -> count
    unmatched_phrases: dict[str, int] = field(default_factory=dict)  # Gherkin steps no phrase matched
    ignored_phrases: dict[str, int] = field(default_factory=dict)  # Gherkin steps mapped to nothing on purpose
    problems: list[str] = field(default_factory=list)  # files skipped, one line each: "file:LINE:COL: reason"
    files_read: dict[str, int] = field(default_factory=dict)  # kind -> files read
    files_ignored: int = 0  # files in a folder that are no test source (fixtures, other data)
    joined_results: int = 0  # Gherkin scenarios given a runner's result (JUnit, Cucumber)
    events_reading: dict[str, Any] = field(default_factory=dict)  # test-run telemetry: what was attributed

    def skip(self, reason: str, count: int = 1) -> None:
        if count:
            self.skipped[reason] = self.skipped.get(reason, 0) + count

    def extend(self, other: ReaderReport) -> None:
        self.traces.extend(other.traces)
        for reason, n in other.skipped.items():
            self.skip(reason, n)
        for bucket, theirs in (
            (self.unmatched_phrases, other.unmatched_phrases),
            (self.ignored_phrases, other.ignored_phrases),
        ):
            for phrase, n in theirs.items():
                bucket[phrase] = bucket.get(phrase, 0) + n
        self.problems.extend(other.problems)


def json_lines(path: str | os.PathLike[str], *, what: str, needs: str) -> Iterator[tuple[int, dict[str, Any]]]:
    """(line number, object) for each non-blank line of a JSON-lines file; a line that is not a JSON
    object is an error naming the file, line and column (``needs`` says what a line should be)."""
    from gapfinder.errors import InputError
    from gapfinder.safe_io import read_text

    for n, line in enumerate(read_text(path, what=what).splitlines(), start=1):
        if not line.strip():
            continue
        try:
            record = json.loads(line)
        except json.JSONDecodeError as exc:
            raise InputError(f"{path}:{n}:{exc.colno}: not valid JSON ({exc.msg})") from None
        if not isinstance(record, dict):
            raise InputError(f"{path}:{n}:1: each line must be a JSON object ({needs})")
        yield n, record
