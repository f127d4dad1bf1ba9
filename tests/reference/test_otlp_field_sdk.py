"""OpenTelemetry logs and spans written by the OpenTelemetry SDK itself, read as field telemetry.

Source: the PyPI packages ``opentelemetry-sdk`` (log records emitted through a real
``LoggerProvider``, spans through a real ``TracerProvider``) and
``opentelemetry-exporter-otlp-proto-common`` (``encode_logs`` / ``encode_spans``, the SDK's own
encoders to the OTLP ``ExportLogsServiceRequest`` / ``ExportTraceServiceRequest`` protobufs), turned
into JSON with protobuf's JSON mapping (``google.protobuf.json_format``: int64 as decimal strings,
enums as names, ids in base64). The hand-written fixture ``tests/data/otlp/logs_example_shape.json``
has the shape of ``examples/logs.json`` in the open-telemetry/opentelemetry-proto repository
(pretty-printed, integers as JSON numbers, every AnyValue kind) with our own invented content.
"""

from __future__ import annotations

import gzip
import json
from pathlib import Path

import pytest

from gapfinder.sources import open_telemetry
from gapfinder.workspace import connect_memory

sdk_logs = pytest.importorskip("opentelemetry.sdk._logs")
log_encoder = pytest.importorskip("opentelemetry.exporter.otlp.proto.common._log_encoder")
trace_encoder = pytest.importorskip("opentelemetry.exporter.otlp.proto.common.trace_encoder")
json_format = pytest.importorskip("google.protobuf.json_format")

DATA = Path(__file__).resolve().parent.parent / "data" / "otlp"
BASE_NS = 1_767_225_600_000_000_000  # 2026-01-01T00:00:00Z
# (user, session, event, nanoseconds after BASE_NS, error?)
EMITTED = [
    ("m-1", "s-1", "login", 123_456_789, False),
    ("m-1", "s-1", "search_catalogue", 5_000_000_999, False),
    ("m-1", "s-1", "pay_deposit_card", 9_000_000_001, True),
    ("m-2", "s-2", "login", 60_000_000_000, False),
    ("m-2", "s-2", "view_tool", 61_500_000_500, False),
]


def _sdk_logs_document(*, event_as_attribute: bool) -> dict:
    from opentelemetry._logs import LogRecord, SeverityNumber
    from opentelemetry.sdk._logs.export import InMemoryLogRecordExporter, SimpleLogRecordProcessor
    from opentelemetry.sdk.resources import Resource

    exporter = InMemoryLogRecordExporter()
    provider = sdk_logs.LoggerProvider(resource=Resource.create({"service.version": "5.0", "os.type": "android"}))
    provider.add_log_record_processor(SimpleLogRecordProcessor(exporter))
    logger = provider.get_logger("toolshed.telemetry")
    for user, session, event, offset, failed in EMITTED:
        attributes = {"user.id": user, "session.id": session, "screen": f"{event}-screen", "attempt": 1}
        if event_as_attribute:
            attributes["event.name"] = event
        logger.emit(
            LogRecord(
                timestamp=BASE_NS + offset,
                severity_number=SeverityNumber.ERROR if failed else SeverityNumber.INFO,
                event_name=None if event_as_attribute else event,
                attributes=attributes,
            )
        )
    provider.shutdown()
    return json_format.MessageToDict(log_encoder.encode_logs(exporter.get_finished_logs()))


def _rows(con) -> list[tuple]:
    return con.execute(
        "SELECT user_id, session_id, event, epoch_us(ts), outcome, app_version, platform FROM mapped_source ORDER BY ts"
    ).fetchall()


def _expected() -> list[tuple]:
    return [
        (user, session, event, (BASE_NS + offset) // 1000, "error" if failed else "ok", "5.0", "android")
        for user, session, event, offset, failed in EMITTED
    ]


@pytest.mark.parametrize("layout", ["pretty", "one-per-line", "gzip"])
@pytest.mark.parametrize("event_as_attribute", [False, True])
def test_sdk_log_records_read_back_exactly(tmp_path: Path, layout: str, event_as_attribute: bool) -> None:
    document = _sdk_logs_document(event_as_attribute=event_as_attribute)
    if layout == "pretty":
        path = tmp_path / "logs.json"
        path.write_text(json.dumps(document, indent=2))
    elif layout == "one-per-line":
        path = tmp_path / "logs.jsonl"
        path.write_text(json.dumps(document) + "\n")
    else:
        path = tmp_path / "logs.json.gz"
        path.write_bytes(gzip.compress((json.dumps(document) + "\n").encode()))
    con = connect_memory()
    opened = open_telemetry(con, [path])
    assert opened.files.format == "otlp-logs"
    assert opened.has_session_column  # session.id is present
    # times to the microsecond the workspace keeps: the nanoseconds cut, never rounded
    assert _rows(con) == _expected()
    screens = con.execute("SELECT count(*) FROM mapped_source").fetchall()
    assert screens == [(len(EMITTED),)]
    opened.close()


def test_any_attribute_reachable_and_feature_template(tmp_path: Path) -> None:
    from gapfinder.sources.feature_keys import FeatureKeys

    path = tmp_path / "logs.json"
    path.write_text(json.dumps(_sdk_logs_document(event_as_attribute=False)))
    con = connect_memory()
    open_telemetry(
        con,
        [path],
        {"platform": "resource:service.version", "outcome": "attr:attempt"},
        feature_keys=FeatureKeys(template="{event}@{screen}"),
    )
    rows = con.execute("SELECT event, platform, outcome FROM mapped_source ORDER BY ts LIMIT 1").fetchall()
    assert rows == [("login@login-screen", "5.0", "1")]


def test_example_shape_file_profiles_without_options(tmp_path: Path) -> None:
    """Pretty-printed, integers as numbers, all AnyValue kinds, a record with no time but an observed one."""
    con = connect_memory()
    opened = open_telemetry(con, [DATA / "logs_example_shape.json"])
    rows = con.execute("SELECT user_id, event, epoch_us(ts), outcome FROM mapped_source ORDER BY ts, event").fetchall()
    assert rows == [
        ("m-7", "open_app", 1_767_261_600_300_000, "ok"),
        ("m-7", "reserve_tool", 1_767_261_601_000_000, "error"),
        ("3f2a9c5d7e1b4a6c8d0e2f4a6b8c0d1e", "background_sync", 1_767_261_602_000_000, None),
    ]
    assert not opened.has_session_column  # no session.id: sessions from idle gaps
    assert any("traceId" in note for note in opened.notes)  # says which records count a trace as the user
    attributes = con.execute(
        "SELECT count(*) FROM mapped_source WHERE event = 'open_app' AND app_version = '5.1'"
    ).fetchall()
    assert attributes == [(1,)]


def test_file_lacking_optional_fields(tmp_path: Path) -> None:
    """No resource, no scope, no severity, no eventName anywhere: the explicit schema still reads it."""
    path = tmp_path / "bare.jsonl"
    lines = [
        {
            "resourceLogs": [
                {
                    "scopeLogs": [
                        {
                            "logRecords": [
                                {
                                    "timeUnixNano": str(BASE_NS),
                                    "attributes": [
                                        {"key": "event.name", "value": {"stringValue": "login"}},
                                        {"key": "enduser.pseudo.id", "value": {"stringValue": "p-1"}},
                                    ],
                                },
                            ]
                        }
                    ]
                }
            ]
        },
        {"resourceLogs": []},
        {"resourceLogs": [{"scopeLogs": [{"logRecords": [{"observedTimeUnixNano": BASE_NS + 1000}]}]}]},
    ]
    path.write_text("\n".join(json.dumps(line) for line in lines) + "\n")
    con = connect_memory()
    opened = open_telemetry(con, [path])
    rows = con.execute("SELECT user_id, event, epoch_us(ts) FROM mapped_source ORDER BY ts").fetchall()
    assert rows == [("p-1", "login", BASE_NS // 1000), (None, None, BASE_NS // 1000 + 1)]
    assert "enduser.pseudo.id" in opened.notes[0]


def test_sdk_spans_as_backend_journeys(tmp_path: Path) -> None:
    """Spans as field telemetry: the entry spans are events, the trace is the session, status ERROR fails."""
    from opentelemetry.sdk.trace import TracerProvider
    from opentelemetry.sdk.trace.export import SimpleSpanProcessor
    from opentelemetry.sdk.trace.export.in_memory_span_exporter import InMemorySpanExporter
    from opentelemetry.trace import SpanKind, Status, StatusCode

    exporter = InMemorySpanExporter()
    provider = TracerProvider()
    provider.add_span_processor(SimpleSpanProcessor(exporter))
    tracer = provider.get_tracer("toolshed-api")
    for user in ("m-1", "m-2"):
        with (
            tracer.start_as_current_span("GET /tools", kind=SpanKind.SERVER, attributes={"user.id": user}),
            tracer.start_as_current_span("SELECT tools", kind=SpanKind.CLIENT),
        ):
            pass
        with tracer.start_as_current_span(
            "POST /reservations", kind=SpanKind.SERVER, attributes={"user.id": user}
        ) as s:
            if user == "m-2":
                s.set_status(Status(StatusCode.ERROR, "slot taken"))
    provider.shutdown()
    document = json_format.MessageToDict(trace_encoder.encode_spans(exporter.get_finished_spans()))
    path = tmp_path / "spans.json"
    path.write_text(json.dumps(document, indent=2))
    con = connect_memory()
    opened = open_telemetry(con, [path])
    assert opened.files.format == "otlp-traces"
    rows = con.execute("SELECT user_id, event, outcome FROM mapped_source ORDER BY user_id, ts").fetchall()
    assert rows == [
        ("m-1", "GET /tools", "ok"),
        ("m-1", "POST /reservations", "ok"),
        ("m-2", "GET /tools", "ok"),
        ("m-2", "POST /reservations", "error"),
    ]
    sessions = con.execute("SELECT count(DISTINCT session_id) FROM mapped_source").fetchall()
    assert sessions == [(4,)]  # each request its own trace, so its own session unless session.id says otherwise
    assert any("entry spans" in note for note in opened.notes)
