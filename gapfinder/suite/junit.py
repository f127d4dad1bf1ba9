"""JUnit XML (as ``pytest --junitxml`` writes it) whose test cases carry their steps as a property.

A test case lists the features it exercised in a property whose value is a JSON list::

    <testcase classname="tests.test_loans" name="test_extend">
      <properties><property name="steps" value='["login", "open_notifications", "extend_loan"]'/></properties>
    </testcase>

With pytest, ``record_property("steps", json.dumps([...]))`` writes exactly this. Parsed with
defusedxml, so hostile XML (entity expansion, external entities) is refused.
"""

from __future__ import annotations

import json
from pathlib import Path

from gapfinder.errors import InputError
from gapfinder.suite.model import ReaderReport, TestTrace

__all__ = ["DEFAULT_STEPS_PROPERTY", "read_junit_xml"]

DEFAULT_STEPS_PROPERTY = "steps"


def read_junit_xml(path: str | Path, *, steps_property: str = DEFAULT_STEPS_PROPERTY) -> ReaderReport:
    """Read every testcase with a steps property; cases without one are counted, not dropped silently."""
    import defusedxml.ElementTree as SafeTree
    from defusedxml import DefusedXmlException

    where = str(path)
    try:
        root = SafeTree.parse(str(path)).getroot()
    except SafeTree.ParseError as exc:
        line = f" at line {exc.position[0]}" if getattr(exc, "position", None) else ""
        raise InputError(f"{where}: not well-formed XML{line}; give a JUnit XML report") from None
    except DefusedXmlException as exc:
        raise InputError(f"{where}: refused unsafe XML ({type(exc).__name__})") from None
    if root is None or root.tag not in ("testsuites", "testsuite"):
        tag = root.tag if root is not None else "nothing"
        raise InputError(f"{where}: the root element is <{tag}>, not <testsuites> or <testsuite>")
    report = ReaderReport()
    seen: dict[str, int] = {}
    for case in root.iter("testcase"):
        name = case.get("name", "").strip()
        classname = case.get("classname", "").strip()
        test_id = f"{classname}::{name}" if classname else name
        values = [p.get("value", "") for p in case.iter("property") if p.get("name") == steps_property]
        if not values:
            report.skip(f"test cases without a {steps_property!r} property")
            continue
        try:
            steps = json.loads(values[0])
        except json.JSONDecodeError:
            raise InputError(
                f"{where}: test case {test_id!r}: the {steps_property!r} property is not a JSON list"
            ) from None
        if not isinstance(steps, list) or not all(isinstance(s, str) and s.strip() for s in steps):
            raise InputError(f"{where}: test case {test_id!r}: the {steps_property!r} property must list event names")
        seen[test_id] = seen.get(test_id, 0) + 1
        if seen[test_id] > 1:
            test_id = f"{test_id} #{seen[test_id]}"
        report.traces.append(TestTrace(test_id, [s.strip() for s in steps], where, "junit"))
    if not report.traces:
        raise InputError(
            f"{where}: no test case carries a {steps_property!r} property with its steps "
            "(record them with record_property, or pass --junit-property NAME)"
        )
    return report
