"""XES event logs (IEEE 1849, the process-mining standard) as field telemetry.

An XES log holds traces (cases) of events, each with typed attributes keyed ``prefix:name``; the log
declares its extensions (which prefix means concept, time, lifecycle, org), global attributes
(defaults for events or traces that lack a key) and classifiers (which attribute values together
name an event). ``convert_xes`` streams a log with the expat parser and writes it to a
Parquet file in Arrow record batches, one trace in memory at a time:

- ``case_id``: the trace's ``concept:name`` (``#n`` for the n-th trace when it has none); it is the
  session and, unless ``--map user_id=...`` says otherwise, the user;
- ``event``: the values of the log's first classifier's keys joined with ``:`` (``concept:name``
  when the log declares none); ``ts``: ``time:timestamp`` as text (read by the usual ISO-8601 path);
- ``lifecycle``, ``resource_name`` (``org:resource``), ``position`` (the event's place in its trace,
  from 1); ``outcome`` is ``error`` for the aborting transitions ``ate_abort`` and ``pi_abort``;
- ``attributes`` and ``case_attributes``: every top-level attribute of the event and of its trace as
  text, global defaults filled in (nested meta-attributes and list contents are not kept).

This decoding loop is the one place gapfinder handles events in Python: a streaming parser feeding
columnar batches (``benchmarks/xes_read.py`` measures it against expat parsing the same file with
no callbacks). A DTD, entity declaration or external entity is refused where the parser meets it, so
entity bombs cannot expand and nothing is fetched.
"""

from __future__ import annotations

import gzip
import re
import zlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, BinaryIO, cast
from xml.parsers import expat

import pyarrow as pa
import pyarrow.parquet as pq

from gapfinder.errors import InputError

__all__ = ["XES_SCHEMA", "XesFacts", "convert_xes"]

XES_SCHEMA = pa.schema(
    [
        ("case_id", pa.string()),
        ("position", pa.int32()),
        ("event", pa.string()),
        ("ts", pa.string()),
        ("lifecycle", pa.string()),
        ("resource_name", pa.string()),
        ("outcome", pa.string()),
        ("user_id", pa.string()),
        ("session_id", pa.string()),
        ("attributes", pa.map_(pa.string(), pa.string())),
        ("case_attributes", pa.map_(pa.string(), pa.string())),
    ]
)
# Extension URI file name -> the standard's role for its prefix.
_EXTENSIONS = {"concept.xesext": "concept", "time.xesext": "time", "lifecycle.xesext": "lifecycle", "org.xesext": "org"}
_ABORTING = {"ate_abort", "pi_abort"}
_CLASSIFIER_KEY = re.compile(r"'([^']*)'|(\S+)")
_READ_BYTES = 1 << 20
_BATCH_EVENTS = 65_536


@dataclass
class XesFacts:
    """What the conversion found, for the profile summary."""

    traces: int = 0
    events: int = 0
    classifier: str = "concept:name"
    classifier_keys: tuple[str, ...] = ("concept:name",)
    global_event_defaults: int = 0
    global_trace_defaults: int = 0
    events_outside_traces: int = 0
    files: list[str] = field(default_factory=list)

    def describe(self) -> str:
        return (
            f"XES: {self.traces:,} traces, {self.events:,} events; event names from classifier "
            f"{self.classifier!r} ({' + '.join(self.classifier_keys)})"
        )


def _open_bytes(path: str) -> BinaryIO:
    if path.lower().endswith(".gz"):
        return cast(BinaryIO, gzip.open(path, "rb"))
    return cast(BinaryIO, open(path, "rb"))


class _Columns:
    """Column lists of the events read so far, turned into one Arrow record batch at a time."""

    def __init__(self) -> None:
        self.reset()

    def reset(self) -> None:
        self.data: dict[str, list[Any]] = {name: [] for name in XES_SCHEMA.names}

    def __len__(self) -> int:
        return len(self.data["case_id"])

    def batch(self) -> pa.RecordBatch:
        return pa.RecordBatch.from_pydict(self.data, schema=XES_SCHEMA)


def _parse_keys(keys: str) -> tuple[str, ...]:
    return tuple(a or b for a, b in _CLASSIFIER_KEY.findall(keys))


def _refuse(what: str) -> Any:
    def handler(*_args: Any) -> None:
        raise _Refused(what)

    return handler


class _Refused(Exception):
    """Raised from inside the parser's callbacks for a construct gapfinder does not accept."""


class _LogReader:
    """Expat callbacks that turn one XES document into column lists, one trace at a time.

    Every element start with a ``key`` attribute is an attribute element: its key and value go to the
    event, trace, global or log being read; anything nested inside it (meta-attributes, list items)
    is skipped by counting depth. The log's header (extensions, globals, classifiers) precedes its
    traces, so it is complete when the first trace starts.
    """

    def __init__(self, columns: _Columns, facts: XesFacts) -> None:
        self.columns = columns
        self.facts = facts
        self.nest = 0
        self.current: dict[str, str] | None = None
        self.trace: dict[str, str] | None = None
        self.trace_events: list[dict[str, str]] = []
        self.log_attributes: dict[str, str] = {}
        self.event_defaults: dict[str, str] = {}
        self.trace_defaults: dict[str, str] = {}
        self.prefix = {role: role for role in ("concept", "time", "lifecycle", "org")}
        self.classifier: tuple[str, tuple[str, ...]] | None = None
        self.saw_log = False
        self.header_done = False

    def start(self, name: str, attrs: dict[str, str]) -> None:
        key = attrs.get("key")
        if key is not None and "keys" not in attrs:
            if not self.nest and self.current is not None:
                self.current[key] = attrs.get("value") or ""
            self.nest += 1
            return
        if self.nest:
            self.nest += 1
            return
        if ":" in name:
            name = name.rpartition(":")[2]
        if name == "event":
            if self.trace is None:
                self.facts.events_outside_traces += 1
                self.nest = 1
                return
            self.current = {}
        elif name == "trace":
            if not self.header_done:
                self._finish_header()
            self.trace = self.current = {}
            self.trace_events = []
        elif name == "global":
            self.current = self.trace_defaults if attrs.get("scope") == "trace" else self.event_defaults
        elif name == "extension":
            role = _EXTENSIONS.get((attrs.get("uri") or "").rsplit("/", 1)[-1].lower())
            if role and attrs.get("prefix"):
                self.prefix[role] = attrs["prefix"]
        elif name == "classifier":
            keys = _parse_keys(attrs.get("keys") or "")
            if keys and self.classifier is None:
                self.classifier = (attrs.get("name") or "classifier", keys)
        elif name == "log":
            self.saw_log = True
            self.current = self.log_attributes

    def end(self, name: str) -> None:
        if self.nest:
            self.nest -= 1
            return
        if ":" in name:
            name = name.rpartition(":")[2]
        if name == "event":
            if self.current is not None and self.trace is not None:
                self.trace_events.append(self.current)
            self.current = self.trace
        elif name == "trace":
            self._flush_trace()
            self.trace = None
            self.current = self.log_attributes
        elif name == "global":
            self.current = self.log_attributes

    def _finish_header(self) -> None:
        self.header_done = True
        self.name_key = f"{self.prefix['concept']}:name"
        self.time_key = f"{self.prefix['time']}:timestamp"
        self.lifecycle_key = f"{self.prefix['lifecycle']}:transition"
        self.resource_key = f"{self.prefix['org']}:resource"
        if self.classifier is None:
            self.classifier = (self.name_key, (self.name_key,))
        self.facts.classifier, self.facts.classifier_keys = self.classifier
        self.facts.global_event_defaults = len(self.event_defaults)
        self.facts.global_trace_defaults = len(self.trace_defaults)

    def _flush_trace(self) -> None:
        facts = self.facts
        facts.traces += 1
        trace_values = {**self.trace_defaults, **(self.trace or {})}
        case_id = trace_values.get(self.name_key) or f"#{facts.traces}"
        trace_pairs = list(trace_values.items())
        assert self.classifier is not None
        keys = self.classifier[1]
        defaults = self.event_defaults
        data = self.columns.data
        name_key, time_key, lifecycle_key, resource_key = (
            self.name_key,
            self.time_key,
            self.lifecycle_key,
            self.resource_key,
        )
        position = 0
        for event in self.trace_events:
            values = {**defaults, **event} if defaults else event
            position += 1
            if len(keys) == 1:
                name = values.get(name_key if keys[0] == name_key else keys[0]) or None
            else:
                parts = [values[k] for k in keys if values.get(k)]
                name = ":".join(parts) if parts else None
            lifecycle = values.get(lifecycle_key)
            data["case_id"].append(case_id)
            data["position"].append(position)
            data["event"].append(name)
            data["ts"].append(values.get(time_key))
            data["lifecycle"].append(lifecycle)
            data["resource_name"].append(values.get(resource_key))
            data["outcome"].append("error" if lifecycle and lifecycle.lower() in _ABORTING else None)
            data["user_id"].append(case_id)
            data["session_id"].append(case_id)
            data["attributes"].append(list(values.items()))
            data["case_attributes"].append(trace_pairs)
        facts.events += position
        self.trace_events = []


def _read_log(path: str, columns: _Columns, facts: XesFacts, flush: Any) -> None:
    """Parse one XES file with expat, handing full batches to ``flush``."""
    reader = _LogReader(columns, facts)
    parser = expat.ParserCreate()
    parser.SetParamEntityParsing(expat.XML_PARAM_ENTITY_PARSING_NEVER)
    parser.StartDoctypeDeclHandler = _refuse("a DTD (<!DOCTYPE ...>), which could declare entities")
    parser.EntityDeclHandler = _refuse("an entity declaration")
    parser.UnparsedEntityDeclHandler = _refuse("an entity declaration")
    parser.ExternalEntityRefHandler = _refuse("an external entity")
    parser.StartElementHandler = reader.start
    parser.EndElementHandler = reader.end
    try:
        with _open_bytes(path) as handle:
            while True:
                chunk = handle.read(_READ_BYTES)
                parser.Parse(chunk, not chunk)
                if len(columns) >= _BATCH_EVENTS:
                    flush()
                if not chunk:
                    break
    except expat.ExpatError as exc:
        raise InputError(
            f"{path}:{exc.lineno}:{exc.offset + 1}: not well-formed XML ({expat.ErrorString(exc.code)}); "
            "fix or re-export the log"
        ) from None
    except _Refused as exc:
        raise InputError(
            f"{path}:{parser.CurrentLineNumber}: the XES file holds {exc}; gapfinder does not expand entities "
            "(remove it and re-export)"
        ) from None
    except (OSError, EOFError, zlib.error) as exc:
        raise InputError(f"{path}: cannot be read ({type(exc).__name__}: the file is cut short or damaged)") from None
    if not reader.saw_log:
        raise InputError(f"{path}: no <log> element; an XES file starts with <log xes.version=...>")
    if not reader.header_done:
        reader._finish_header()


def convert_xes(files: list[str], out_path: Path) -> XesFacts:
    """Stream the XES ``files`` into the Parquet file ``out_path`` (schema ``XES_SCHEMA``)."""
    facts = XesFacts(files=list(files))
    columns = _Columns()
    with pq.ParquetWriter(str(out_path), XES_SCHEMA) as writer:

        def flush() -> None:
            if len(columns):
                writer.write_batch(columns.batch())
                columns.reset()

        for path in files:
            _read_log(path, columns, facts, flush)
        flush()
    return facts
