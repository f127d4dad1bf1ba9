"""OpenTelemetry traces of test runs: spans whose ``test.case.name`` attribute names the test.

Reads OTLP/JSON (an ExportTraceServiceRequest: ``{"resourceSpans": [...]}``), either one document
per file or one per line as the collector's file exporter writes them. Each span with the
attribute (on the span or its resource) is one step: the span's name is the event, ordered by
start time. Spans without it are counted and reported.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from gapfinder.errors import InputError
from gapfinder.safe_io import read_text
from gapfinder.suite.model import ReaderReport, TestTrace

__all__ = ["TEST_CASE_ATTRIBUTE", "looks_like_otlp", "read_otlp_json"]

TEST_CASE_ATTRIBUTE = "test.case.name"


def looks_like_otlp(path: str | Path) -> bool:
    """True when the first non-blank line of a JSON file mentions resourceSpans."""
    with open(path, encoding="utf-8", errors="replace") as handle:
        for line in handle:
            if line.strip():
                return '"resourceSpans"' in line
    return False


def _attributes(items: list[dict[str, Any]] | None) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for item in items or []:
        value = item.get("value", {})
        out[item.get("key", "")] = next(iter(value.values()), None) if isinstance(value, dict) else value
    return out


def _documents(path: Path) -> Iterator[tuple[int, dict[str, Any]]]:
    text = read_text(path, what="OTLP/JSON file")
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
                raise InputError(f"{path}: line {n} is not valid JSON ({exc.msg})") from None


def read_otlp_json(path: str | Path) -> ReaderReport:
    """Read the spans of one OTLP/JSON file into one test per test.case.name."""
    where = str(path)
    report = ReaderReport()
    spans: dict[str, list[tuple[int, int, str]]] = {}
    order = 0
    for line_no, document in _documents(Path(path)):
        if not isinstance(document, dict) or not isinstance(document.get("resourceSpans"), list):
            raise InputError(f"{where}: line {line_no} is not an OTLP/JSON document (no resourceSpans list)")
        try:
            for resource_spans in document["resourceSpans"]:
                resource = _attributes((resource_spans.get("resource") or {}).get("attributes"))
                for scope in resource_spans.get("scopeSpans", []) or []:
                    for span in scope.get("spans", []) or []:
                        attributes = {**resource, **_attributes(span.get("attributes"))}
                        test_id = str(attributes.get(TEST_CASE_ATTRIBUTE) or "").strip()
                        name = str(span.get("name") or "").strip()
                        if not test_id:
                            report.skip(f"spans without a {TEST_CASE_ATTRIBUTE} attribute")
                            continue
                        if not name:
                            report.skip("spans without a name")
                            continue
                        try:
                            started = int(span.get("startTimeUnixNano") or 0)
                        except (TypeError, ValueError):
                            raise InputError(f"{where}: span {name!r} has an unreadable startTimeUnixNano") from None
                        spans.setdefault(test_id, []).append((started, order, name))
                        order += 1
        except (AttributeError, TypeError, ValueError):
            raise InputError(
                f"{where}: line {line_no}: a resourceSpans entry has the wrong JSON type (objects and lists as in "
                "the OTLP/JSON encoding are expected)"
            ) from None
    report.traces = [TestTrace(t, [n for _, _, n in sorted(s)], where, "otlp") for t, s in spans.items()]
    if not report.traces:
        raise InputError(f"{where}: no span carries a {TEST_CASE_ATTRIBUTE} attribute naming its test")
    return report
