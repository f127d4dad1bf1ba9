"""OpenTelemetry logs and traces (OTLP/JSON) as field telemetry.

The Collector's file exporter writes one ``ExportLogsServiceRequest`` (or
``ExportTraceServiceRequest``) per line; SDK exporters and hand-written examples are often
pretty-printed documents. Both are read by DuckDB with an explicit schema (a file lacking an
optional field reads the same as one that has it; every scalar is taken as text so that integers
written as JSON numbers or as strings, and enum names or numbers, all read), flattened to one row
per log record or span by ``queries/flatten_otlp_logs.sql`` / ``flatten_otlp_spans.sql``, and
written once to a Parquet file in a private scratch folder, so that the sessionization passes read
columns rather than parse JSON again.
"""

from __future__ import annotations

import gzip
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

import duckdb

from gapfinder.errors import InputError, describe_database_error
from gapfinder.sql import fetch_dicts, load, run

__all__ = ["OTLP_KINDS", "OtlpFacts", "convert_otlp", "sniff_otlp_kind"]

_ANY_VALUE = (
    "STRUCT(stringValue VARCHAR, boolValue BOOLEAN, intValue VARCHAR, doubleValue VARCHAR, bytesValue VARCHAR, "
    "arrayValue JSON, kvlistValue JSON)"
)
_KEY_VALUES = f"STRUCT(key VARCHAR, value {_ANY_VALUE})[]"
_RESOURCE = f"STRUCT(attributes {_KEY_VALUES})"
_SCOPE = "STRUCT(name VARCHAR, version VARCHAR)"
_LOG_RECORD = (
    "STRUCT(timeUnixNano VARCHAR, observedTimeUnixNano VARCHAR, severityNumber VARCHAR, severityText VARCHAR, "
    f"eventName VARCHAR, body {_ANY_VALUE}, attributes {_KEY_VALUES}, traceId VARCHAR, spanId VARCHAR)"
)
_SPAN = (
    "STRUCT(traceId VARCHAR, spanId VARCHAR, parentSpanId VARCHAR, name VARCHAR, kind VARCHAR, "
    f"startTimeUnixNano VARCHAR, endTimeUnixNano VARCHAR, attributes {_KEY_VALUES}, "
    "status STRUCT(code VARCHAR, message VARCHAR))"
)
# OTLP kind -> (top-level key, its explicit DuckDB type, the flattening query, what a row is)
OTLP_KINDS: dict[str, tuple[str, str, str, str]] = {
    "otlp-logs": (
        "resourceLogs",
        f"STRUCT(resource {_RESOURCE}, scopeLogs STRUCT(scope {_SCOPE}, logRecords {_LOG_RECORD}[])[])[]",
        "flatten_otlp_logs",
        "log record",
    ),
    "otlp-traces": (
        "resourceSpans",
        f"STRUCT(resource {_RESOURCE}, scopeSpans STRUCT(scope {_SCOPE}, spans {_SPAN}[])[])[]",
        "flatten_otlp_spans",
        "span",
    ),
}
_SNIFF = re.compile(rb'^\s*\{\s*"(resourceLogs|resourceSpans)"\s*:')
_SNIFF_BYTES = 4096
# A pretty-printed document is one JSON value; allow large ones (the Collector writes one per line).
_MAX_DOCUMENT_BYTES = 1 << 30


def sniff_otlp_kind(path: str) -> str | None:
    """``"otlp-logs"`` or ``"otlp-traces"`` when the JSON file opens as an OTLP export request."""
    try:
        if path.lower().endswith(".gz"):
            with gzip.open(path, "rb") as handle:
                head = handle.read(_SNIFF_BYTES)
        else:
            with open(path, "rb") as handle:
                head = handle.read(_SNIFF_BYTES)
    except (OSError, EOFError):
        return None
    match = _SNIFF.match(head.lstrip(b"\xef\xbb\xbf"))
    if not match:
        return None
    return "otlp-logs" if match.group(1) == b"resourceLogs" else "otlp-traces"


@dataclass
class OtlpFacts:
    """What the conversion found, for the profile summary."""

    kind: str
    rows: int = 0
    user_id_from: dict[str, int] = field(default_factory=dict)
    sessions_from_attribute: int = 0
    entry_spans: int = 0

    def describe(self) -> str:
        what = OTLP_KINDS[self.kind][3]
        used = ", ".join(f"{name} ({n:,})" for name, n in self.user_id_from.items()) or "none"
        return f"OTLP {what}s: {self.rows:,}; users from {used}"


def convert_otlp(
    con: duckdb.DuckDBPyConnection, files: Sequence[str], kind: str, out_path: Path, *, label: str
) -> OtlpFacts:
    """Flatten OTLP/JSON ``files`` of ``kind`` into the Parquet file ``out_path``."""
    key, schema, query, _what = OTLP_KINDS[kind]
    for macro in ("create_otlp_text_macro", "create_otlp_unique_map_macro", "create_otlp_attributes_macro"):
        run(con, macro)
    try:
        documents = con.read_json(
            list(files),
            columns={key: schema},
            format="unstructured",
            maximum_object_size=_MAX_DOCUMENT_BYTES,
        )
        flattened = documents.query("otlp_documents", load(query))
        assert flattened is not None
        flattened.to_parquet(str(out_path))
    except duckdb.Error as exc:
        raise InputError(
            f"{label}: cannot be read as OTLP/JSON ({describe_database_error(exc)}); each file must hold "
            f"{key} export requests, pretty-printed or one per line"
        ) from None
    facts = OtlpFacts(kind=kind)
    for row in fetch_dicts(con, "count_otlp_records", path=str(out_path)):
        facts.rows += row["records"]
        if row["user_id_from"] is not None:
            facts.user_id_from[row["user_id_from"]] = row["records"]
        facts.sessions_from_attribute += row["with_session_attribute"]
        facts.entry_spans += row["entry_spans"]
    facts.user_id_from = dict(sorted(facts.user_id_from.items(), key=lambda kv: (-kv[1], kv[0])))
    return facts
