"""The run file the gapfinder pytest plugin writes: one JSON object per test.

The first line is a header ``{"gapfinder_run": 1, ...}``; each further line is one test::

    {"test_id": "tests/test_loans.py::test_extend", "outcome": "passed",
     "started": 1767225600.25, "finished": 1767225601.5, "steps": ["login", "extend_loan"],
     "user_id": null, "session_id": null}

``steps`` are the events the test recorded (exported skeletons record theirs themselves); the
window (``started``/``finished``, epoch seconds) attributes test-run telemetry to the test.
"""

from __future__ import annotations

from pathlib import Path

from gapfinder.errors import InputError
from gapfinder.suite.model import OUTCOMES, ReaderReport, TestTrace, json_lines

__all__ = ["RUN_FORMAT_VERSION", "read_plugin_run"]

RUN_FORMAT_VERSION = 1


def _number(value: object) -> float | None:
    return float(value) if isinstance(value, int | float) and not isinstance(value, bool) else None


def read_plugin_run(path: str | Path) -> ReaderReport:
    """Read the tests of one plugin run file."""
    where = str(path)
    report = ReaderReport()
    seen: set[str] = set()
    for n, record in json_lines(path, what="gapfinder run file", needs="one test"):
        if "gapfinder_run" in record:
            version = record["gapfinder_run"]
            if not isinstance(version, int) or version > RUN_FORMAT_VERSION:
                raise InputError(f"{where}:{n}:1: run file version {version!r} is newer than this gapfinder reads")
            continue
        test_id = record.get("test_id")
        steps = record.get("steps", [])
        outcome = record.get("outcome", "unknown")
        if not isinstance(test_id, str) or not test_id.strip():
            raise InputError(f"{where}:{n}:1: a test needs a test_id (text)")
        if not isinstance(steps, list) or not all(isinstance(s, str) and s.strip() for s in steps):
            raise InputError(f"{where}:{n}:1: test {test_id!r}: steps must be a list of event names")
        if outcome not in OUTCOMES:
            raise InputError(f"{where}:{n}:1: test {test_id!r}: outcome must be one of {', '.join(OUTCOMES)}")
        if test_id in seen:
            raise InputError(f"{where}:{n}:1: test {test_id!r} appears twice")
        seen.add(test_id)
        started, finished = _number(record.get("started")), _number(record.get("finished"))
        identity = [record.get(k) if isinstance(record.get(k), str) else None for k in ("user_id", "session_id")]
        report.traces.append(
            TestTrace(
                test_id,
                [s.strip() for s in steps],
                where,
                "pytest",
                outcome=outcome,
                name=test_id,
                started=started,
                finished=finished if started is not None and finished is not None and finished >= started else None,
                user_id=identity[0],
                session_id=identity[1],
            )
        )
    if not report.traces:
        raise InputError(f"{where}: the run file lists no test (did pytest collect any?)")
    return report
