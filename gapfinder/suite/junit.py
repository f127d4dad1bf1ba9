"""JUnit XML reports: every test case with its outcome, time window and, when recorded, its steps.

Any producer's report is read (pytest, Maven Surefire, jest-junit, go-junit-report, ctest): the root
is ``<testsuites>`` or ``<testsuite>``; a case that holds ``<failure>`` or ``<error>`` failed, one
that holds ``<skipped>`` (or carries ``status="notrun"``/``"disabled"``) was skipped, any other
passed. A case's time window starts at its own ``timestamp`` or, where only the suite has one, at
the suite's start plus the times of the cases before it; it lasts ``time`` seconds. Windows let
``gapfinder suite --events`` attribute test-run telemetry to tests.

A case may list the features it exercised in a property whose value is a JSON list::

    <testcase classname="tests.test_loans" name="test_extend">
      <properties><property name="steps" value='["login", "open_notifications", "extend_loan"]'/></properties>
    </testcase>

With pytest, ``record_property("steps", json.dumps([...]))`` writes exactly this. A case without
one is a test with an outcome and no steps: joined to a Gherkin scenario of the same feature and
name (as cucumber runners write them), or given steps by test-run telemetry. Parsed with
defusedxml, so hostile XML (entity expansion, external entities) is refused.
"""

from __future__ import annotations

import json
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from gapfinder.errors import InputError
from gapfinder.suite.model import ReaderReport, TestTrace

__all__ = ["DEFAULT_STEPS_PROPERTY", "parse_timestamp", "read_junit_xml"]

DEFAULT_STEPS_PROPERTY = "steps"
_SKIPPED_STATUSES = frozenset({"notrun", "disabled", "skipped", "skip", "ignored"})
_FAILED_STATUSES = frozenset({"fail", "failed", "failure", "error"})


def parse_timestamp(value: str | None) -> float | None:
    """Epoch seconds of an ISO-8601 timestamp; one without an offset is taken as UTC; None if unreadable."""
    if not value or not value.strip():
        return None
    text = value.strip().replace("Z", "+00:00")
    try:
        moment = datetime.fromisoformat(text)
    except ValueError:
        return None
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.timestamp()


def _seconds(value: str | None) -> float:
    try:
        seconds = float((value or "0").replace(",", ""))
    except ValueError:
        return 0.0
    return seconds if seconds == seconds and 0 <= seconds < 1e7 else 0.0


def _outcome(case: Any) -> str:
    children = {child.tag for child in case}
    status = (case.get("status") or case.get("result") or "").strip().lower()
    if children & {"failure", "error"} or status in _FAILED_STATUSES:
        return "failed"
    if "skipped" in children or status in _SKIPPED_STATUSES:
        return "skipped"
    return "passed"


def read_junit_xml(path: str | Path, *, steps_property: str = DEFAULT_STEPS_PROPERTY) -> ReaderReport:
    """Read every test case: outcome, time window, and steps where a ``steps_property`` lists them."""
    import defusedxml.ElementTree as SafeTree
    from defusedxml import DefusedXmlException

    where = str(path)
    try:
        root = SafeTree.parse(str(path)).getroot()
    except SafeTree.ParseError as exc:
        position = getattr(exc, "position", None)
        at = f":{position[0]}:{position[1] + 1}" if position else ""
        raise InputError(f"{where}{at}: not well-formed XML; give a JUnit XML report") from None
    except DefusedXmlException as exc:
        raise InputError(f"{where}: refused unsafe XML ({type(exc).__name__})") from None
    tag = root.tag.rsplit("}", 1)[-1] if root is not None else "nothing"
    if root is None or tag not in ("testsuites", "testsuite"):
        raise InputError(f"{where}:1:1: the root element is <{tag}>, not <testsuites> or <testsuite>")
    report = ReaderReport()
    seen: dict[str, int] = {}
    suites = [root] if tag == "testsuite" else list(root.iter("testsuite"))
    if not suites:
        suites = [root]
    for suite in suites:
        clock = parse_timestamp(suite.get("timestamp"))
        for case in suite.findall("testcase"):
            name = case.get("name", "").strip()
            classname = case.get("classname", "").strip()
            if not name:
                report.skip("JUnit test cases without a name")
                continue
            test_id = f"{classname}::{name}" if classname else name
            duration = _seconds(case.get("time"))
            started = parse_timestamp(case.get("timestamp")) or clock
            if clock is not None:
                clock += duration
            values = [p.get("value", "") for p in case.iter("property") if p.get("name") == steps_property]
            steps: list[str] = []
            if values:
                try:
                    listed = json.loads(values[0])
                except json.JSONDecodeError:
                    raise InputError(
                        f"{where}: test case {test_id!r}: the {steps_property!r} property is not a JSON list"
                    ) from None
                if not isinstance(listed, list) or not all(isinstance(s, str) and s.strip() for s in listed):
                    raise InputError(
                        f"{where}: test case {test_id!r}: the {steps_property!r} property must list event names"
                    )
                steps = [s.strip() for s in listed]
            seen[test_id] = seen.get(test_id, 0) + 1
            if seen[test_id] > 1:
                test_id = f"{test_id} #{seen[test_id]}"
            report.traces.append(
                TestTrace(
                    test_id,
                    steps,
                    where,
                    "junit",
                    outcome=_outcome(case),
                    feature=classname,
                    name=name,
                    started=started,
                    finished=None if started is None else started + duration,
                )
            )
    if not report.traces:
        raise InputError(f"{where}: the JUnit report holds no test case")
    return report
