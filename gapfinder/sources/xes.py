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

import gc
import gzip
import re
import zlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, BinaryIO, cast
from xml.parsers import expat

import numpy as np
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


def _parse_keys(keys: str) -> tuple[str, ...]:
    return tuple(a or b for a, b in _CLASSIFIER_KEY.findall(keys))


def _refuse(what: str) -> Any:
    def handler(*_args: Any) -> None:
        raise _Refused(what)

    return handler


class _Refused(Exception):
    """Raised from inside the parser's callbacks for a construct gapfinder does not accept."""


class _Header:
    """A log's extensions, global defaults and first classifier; complete when the first trace starts."""

    def __init__(self) -> None:
        self.prefix = {role: role for role in ("concept", "time", "lifecycle", "org")}
        self.log_attributes: dict[str, str] = {}
        self.event_defaults: dict[str, str] = {}
        self.trace_defaults: dict[str, str] = {}
        self.classifier: tuple[str, tuple[str, ...]] | None = None
        self.saw_log = False
        self.done = False

    def finish(self, facts: XesFacts) -> None:
        if self.done:
            return
        self.done = True
        self.name_key = f"{self.prefix['concept']}:name"
        self.time_key = f"{self.prefix['time']}:timestamp"
        self.lifecycle_key = f"{self.prefix['lifecycle']}:transition"
        self.resource_key = f"{self.prefix['org']}:resource"
        if self.classifier is None:
            self.classifier = (self.name_key, (self.name_key,))
        facts.classifier, facts.classifier_keys = self.classifier
        facts.global_event_defaults = len(self.event_defaults)
        facts.global_trace_defaults = len(self.trace_defaults)


Traces = list[tuple[dict[str, str], list[dict[str, str]]]]


def _string_map(rows: list[dict[str, str]]) -> pa.MapArray:
    """A map<string, string> array from dictionaries, built from flat keys, values and offsets."""
    offsets = np.zeros(len(rows) + 1, dtype=np.int32)
    np.cumsum([len(r) for r in rows], out=offsets[1:])
    keys = pa.array([k for r in rows for k in r], pa.string())
    values = pa.array([v for r in rows for v in r.values()], pa.string())
    return pa.MapArray.from_arrays(pa.array(offsets), keys, values)


def _columns(header: _Header, traces: Traces, facts: XesFacts) -> pa.RecordBatch:
    """One record batch from whole traces (each: its attributes, its events' attributes in order)."""
    assert header.classifier is not None
    keys = header.classifier[1]
    event_defaults, trace_defaults = header.event_defaults, header.trace_defaults
    case_ids: list[str] = []
    case_rows: list[dict[str, str]] = []
    positions: list[int] = []
    rows: list[dict[str, str]] = []
    for trace_values, events in traces:
        facts.traces += 1
        values = {**trace_defaults, **trace_values} if trace_defaults else trace_values
        case_id = values.get(header.name_key) or f"#{facts.traces}"
        count = len(events)
        case_ids.extend([case_id] * count)
        case_rows.extend([values] * count)
        positions.extend(range(1, count + 1))
        rows.extend([{**event_defaults, **e} for e in events] if event_defaults else events)
    facts.events += len(rows)
    if len(keys) == 1:
        only = keys[0]
        names: list[str | None] = [r.get(only) or None for r in rows]
    else:
        names = [":".join(v for k in keys if (v := r.get(k))) or None for r in rows]
    lifecycles = [r.get(header.lifecycle_key) for r in rows]
    data = {
        "case_id": case_ids,
        "position": positions,
        "event": names,
        "ts": [r.get(header.time_key) for r in rows],
        "lifecycle": lifecycles,
        "resource_name": [r.get(header.resource_key) for r in rows],
        "outcome": ["error" if t and t.lower() in _ABORTING else None for t in lifecycles],
        "user_id": case_ids,
        "session_id": case_ids,
    }
    arrays = [pa.array(values, XES_SCHEMA.field(name).type) for name, values in data.items()]
    arrays += [_string_map(rows), _string_map(case_rows)]
    return pa.RecordBatch.from_arrays(arrays, schema=XES_SCHEMA)


def _read_log(path: str, facts: XesFacts, write: Any) -> None:
    """Parse one XES file with expat, handing record batches of whole traces to ``write``.

    Every element start with a ``key`` attribute is an attribute element: its key and value go to the
    event, trace, global or log being read; anything nested inside it (meta-attributes, list items)
    is skipped by counting depth. The callbacks are closures over local state: they run once per
    element of the file, so the common case is one dictionary look-up and one store.
    """
    header = _Header()
    pending: Traces = []
    pending_events = 0
    nest = 0
    current: dict[str, str] = header.log_attributes
    trace: dict[str, str] | None = None
    events: list[dict[str, str]] = []

    def start(name: str, attrs: dict[str, str]) -> None:
        nonlocal nest, current, trace, events
        key = attrs.get("key")
        if key is not None:
            if not nest:
                current[key] = attrs.get("value", "")
            nest += 1
            return
        if nest:
            nest += 1
            return
        local = name.rpartition(":")[2]
        if local == "event":
            if trace is None:
                facts.events_outside_traces += 1
                nest = 1
                return
            current = {}
        elif local == "trace":
            header.finish(facts)
            trace = current = {}
            events = []
        elif local == "global":
            current = header.trace_defaults if attrs.get("scope") == "trace" else header.event_defaults
        elif local == "extension":
            role = _EXTENSIONS.get((attrs.get("uri") or "").rsplit("/", 1)[-1].lower())
            if role and attrs.get("prefix"):
                header.prefix[role] = attrs["prefix"]
        elif local == "classifier":
            keys = _parse_keys(attrs.get("keys") or "")
            if keys and header.classifier is None:
                header.classifier = (attrs.get("name") or "classifier", keys)
        elif local == "log":
            header.saw_log = True

    def end(name: str) -> None:
        nonlocal nest, current, trace, pending_events
        if nest:
            nest -= 1
            return
        if name == "event" or name.endswith(":event"):
            if trace is not None:
                events.append(current)
                current = trace
        elif name == "trace" or name.endswith(":trace"):
            if trace is not None:
                pending.append((trace, events))
                pending_events += len(events)
            trace = None
            current = header.log_attributes
        elif name == "global" or name.endswith(":global"):
            current = header.log_attributes

    parser = expat.ParserCreate()
    parser.SetParamEntityParsing(expat.XML_PARAM_ENTITY_PARSING_NEVER)
    parser.StartDoctypeDeclHandler = _refuse("a DTD (<!DOCTYPE ...>), which could declare entities")
    parser.EntityDeclHandler = _refuse("an entity declaration")
    parser.UnparsedEntityDeclHandler = _refuse("an entity declaration")
    parser.ExternalEntityRefHandler = _refuse("an external entity")
    parser.StartElementHandler = start
    parser.EndElementHandler = end
    # The loop allocates a dictionary per event and holds a batch of them: the cyclic collector would
    # scan them over and over without finding a cycle, so it is paused while the file is parsed.
    collecting = gc.isenabled()
    gc.disable()
    try:
        with _open_bytes(path) as handle:
            while True:
                chunk = handle.read(_READ_BYTES)
                parser.Parse(chunk, not chunk)
                if pending_events >= _BATCH_EVENTS or (not chunk and pending):
                    write(_columns(header, pending, facts))
                    pending.clear()
                    pending_events = 0
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
    finally:
        if collecting:
            gc.enable()
    if not header.saw_log:
        raise InputError(f"{path}: no <log> element; an XES file starts with <log xes.version=...>")
    header.finish(facts)


def convert_xes(files: list[str], out_path: Path) -> XesFacts:
    """Stream the XES ``files`` into the Parquet file ``out_path`` (schema ``XES_SCHEMA``)."""
    facts = XesFacts(files=list(files))
    with pq.ParquetWriter(str(out_path), XES_SCHEMA) as writer:
        for path in files:
            _read_log(path, facts, writer.write_batch)
    return facts
