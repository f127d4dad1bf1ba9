"""OpenTelemetry traces of test runs: spans grouped by the test that produced them.

Reads OTLP/JSON (an ExportTraceServiceRequest: ``{"resourceSpans": [...]}``), pretty-printed or
one request per line as the Collector's file exporter writes them. A span belongs to the test its
``test.case.name`` attribute names (on the span or its resource) or, without one, to the test of
its nearest ancestor (``parentSpanId`` within the same ``traceId``), so the spans an instrumented
app emits under a test's span count for that test. A test's own span (the one carrying the
attribute, with spans under it) gives the test's outcome (status ``STATUS_CODE_ERROR`` = failed)
and time window; every other span of the test is a step: its name is the event, ordered by start
time. Spans of no test are counted and reported.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from gapfinder.errors import InputError
from gapfinder.safe_io import read_text
from gapfinder.suite.model import ReaderReport, TestTrace

__all__ = ["TEST_CASE_ATTRIBUTE", "attribute_values", "otlp_documents", "read_otlp_json"]

TEST_CASE_ATTRIBUTE = "test.case.name"
_ERROR_STATUS = (2, "2", "STATUS_CODE_ERROR")


def attribute_values(items: list[dict[str, Any]] | None) -> dict[str, Any]:
    """OTLP/JSON ``attributes`` (a list of ``{key, value: {stringValue: ...}}``) as a plain dict."""
    out: dict[str, Any] = {}
    for item in items or []:
        value = item.get("value", {})
        out[item.get("key", "")] = next(iter(value.values()), None) if isinstance(value, dict) else value
    return out


def otlp_documents(path: Path, what: str = "OTLP/JSON file") -> Iterator[tuple[int, dict[str, Any]]]:
    """(line, document) for a file holding one JSON document (pretty-printed or not) or one per line."""
    text = read_text(path, what=what)
    try:
        yield 1, json.loads(text)
        return
    except json.JSONDecodeError:
        pass
    for n, line in enumerate(text.splitlines(), start=1):
        if line.strip():
            try:
                yield n, json.loads(line)
            except json.JSONDecodeError as exc:
                raise InputError(f"{path}:{n}:{exc.colno}: not valid JSON ({exc.msg})") from None


def _nanos(span: dict[str, Any], key: str, where: str, name: str) -> int:
    try:
        return int(span.get(key) or 0)
    except (TypeError, ValueError):
        raise InputError(f"{where}: span {name!r} has an unreadable {key}") from None


def read_otlp_json(path: str | Path) -> ReaderReport:
    """Read the spans of one OTLP/JSON file into one test per test.case.name."""
    where = str(path)
    report = ReaderReport()
    # (trace id, span id) -> (parent span id, own test name or "", span name, start, end, errored, order)
    spans: dict[tuple[str, str], tuple[str, str, str, int, int, bool, int]] = {}
    order = 0
    for line_no, document in otlp_documents(Path(path)):
        if not isinstance(document, dict) or not isinstance(document.get("resourceSpans"), list):
            raise InputError(f"{where}:{line_no}:1: not an OTLP/JSON traces document (no resourceSpans list)")
        try:
            for resource_spans in document["resourceSpans"]:
                resource = attribute_values((resource_spans.get("resource") or {}).get("attributes"))
                for scope in resource_spans.get("scopeSpans", []) or []:
                    for span in scope.get("spans", []) or []:
                        attributes = {**resource, **attribute_values(span.get("attributes"))}
                        name = str(span.get("name") or "").strip()
                        test = str(attributes.get(TEST_CASE_ATTRIBUTE) or "").strip()
                        status = (span.get("status") or {}).get("code")
                        key = (str(span.get("traceId") or ""), str(span.get("spanId") or f"#{order}"))
                        spans[key] = (
                            str(span.get("parentSpanId") or ""),
                            test,
                            name,
                            _nanos(span, "startTimeUnixNano", where, name),
                            _nanos(span, "endTimeUnixNano", where, name),
                            status in _ERROR_STATUS,
                            order,
                        )
                        order += 1
        except (AttributeError, TypeError, ValueError):
            raise InputError(
                f"{where}:{line_no}:1: a resourceSpans entry has the wrong JSON type (objects and lists as in "
                "the OTLP/JSON encoding are expected)"
            ) from None

    def test_of(key: tuple[str, str]) -> str:
        seen: set[tuple[str, str]] = set()
        while key in spans and key not in seen:
            seen.add(key)
            parent, test = spans[key][0], spans[key][1]
            if test:
                return test
            key = (key[0], parent)
        return ""

    owner = {key: test_of(key) for key in spans}
    has_children = {(k[0], v[0]) for k, v in spans.items() if v[0]}
    steps: dict[str, list[tuple[int, int, str]]] = {}
    roots: dict[str, tuple[int, int, bool]] = {}
    for key, (parent, own, name, start, end, errored, position) in spans.items():
        test = owner[key]
        if not test:
            report.skip(f"spans of no test (no {TEST_CASE_ATTRIBUTE} on them or a parent)")
            continue
        steps.setdefault(test, [])
        is_root = bool(own) and owner.get((key[0], parent), "") != own
        if is_root and key in has_children:
            roots[test] = (start, end, errored)
            continue
        if not name:
            report.skip("spans without a name")
            continue
        steps[test].append((start, position, name))
    for test, found in steps.items():
        root = roots.get(test)
        report.traces.append(
            TestTrace(
                test,
                [n for _, _, n in sorted(found)],
                where,
                "otlp",
                outcome=("failed" if root[2] else "passed") if root else "unknown",
                name=test,
                started=root[0] / 1e9 if root and root[0] else None,
                finished=root[1] / 1e9 if root and root[1] else None,
            )
        )
    if not report.traces:
        raise InputError(f"{where}: no span carries a {TEST_CASE_ATTRIBUTE} attribute naming its test")
    return report
