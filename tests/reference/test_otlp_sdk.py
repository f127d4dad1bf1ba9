"""OTLP/JSON traces written by the OpenTelemetry SDK itself.

Source: the PyPI packages ``opentelemetry-sdk`` (spans recorded by a real ``TracerProvider``) and
``opentelemetry-exporter-otlp-proto-common`` (``encode_spans``, the SDK's own encoder to the OTLP
``ExportTraceServiceRequest`` protobuf), turned into JSON with protobuf's JSON mapping
(``google.protobuf.json_format``), pretty-printed and one request per line. The test's own span
carries ``test.case.name``; the app's spans under it do not, and must still count for that test.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from gapfinder.suite import read_suite

sdk_trace = pytest.importorskip("opentelemetry.sdk.trace")
encoder = pytest.importorskip("opentelemetry.exporter.otlp.proto.common.trace_encoder")
json_format = pytest.importorskip("google.protobuf.json_format")


def _spans() -> list[object]:
    from opentelemetry.sdk.trace.export import SimpleSpanProcessor
    from opentelemetry.sdk.trace.export.in_memory_span_exporter import InMemorySpanExporter
    from opentelemetry.trace import Status, StatusCode

    exporter = InMemorySpanExporter()
    provider = sdk_trace.TracerProvider()
    provider.add_span_processor(SimpleSpanProcessor(exporter))
    tracer = provider.get_tracer("toolshed-tests")
    with tracer.start_as_current_span("test_reserve", attributes={"test.case.name": "test_reserve"}):
        with tracer.start_as_current_span("login"):
            pass
        with tracer.start_as_current_span("reserve_tool"), tracer.start_as_current_span("check_stock"):
            pass
    with tracer.start_as_current_span("test_pay", attributes={"test.case.name": "test_pay"}) as span:
        with tracer.start_as_current_span("pay_deposit_card"):
            pass
        span.set_status(Status(StatusCode.ERROR, "card declined"))
    with tracer.start_as_current_span("heartbeat"):
        pass
    provider.shutdown()
    return list(exporter.get_finished_spans())


@pytest.mark.parametrize("layout", ["pretty", "one-per-line"])
def test_sdk_spans_children_count_for_their_test(tmp_path: Path, layout: str) -> None:
    request = encoder.encode_spans(_spans())
    document = json_format.MessageToDict(request)
    path = tmp_path / "trace.json"
    if layout == "pretty":
        path.write_text(json.dumps(document, indent=2))
    else:
        path.write_text(json.dumps(document) + "\n" + json.dumps(document) + "\n")  # exported twice: one span each
    report = read_suite([path])
    traces = {t.test_id: t for t in report.traces}
    assert traces["test_reserve"].steps == ["login", "reserve_tool", "check_stock"]
    assert traces["test_reserve"].outcome == "passed"
    assert traces["test_pay"].steps == ["pay_deposit_card"]
    assert traces["test_pay"].outcome == "failed"
    assert traces["test_pay"].started is not None and traces["test_pay"].finished >= traces["test_pay"].started
    assert sum(report.skipped.values()) == 1  # the heartbeat, in no test
