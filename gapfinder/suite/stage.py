"""The suite stage: read every source, resolve step names, store the tests."""

from __future__ import annotations

import glob
import json
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pyarrow as pa

from gapfinder.align import load_aliases, resolve_step_names
from gapfinder.errors import InputError
from gapfinder.sources.formats import SourceFiles
from gapfinder.sql import fetch_dicts, registered, run
from gapfinder.suite.catalog import read_catalog
from gapfinder.suite.gherkin import StepPhrases, read_feature_file
from gapfinder.suite.junit import DEFAULT_STEPS_PROPERTY, read_junit_xml
from gapfinder.suite.model import ReaderReport
from gapfinder.suite.otlp import looks_like_otlp, read_otlp_json
from gapfinder.suite.traces import read_trace_files
from gapfinder.workspace import StageRecord, Workspace

__all__ = ["SUITE_EXTENSIONS", "SuiteOptions", "load_suite", "read_suite", "summarize_suite"]

_TRACE_FORMATS = {".parquet": "parquet", ".pq": "parquet", ".csv": "csv", ".tsv": "tsv"}
_JSON_LIKE = {".ndjson": "ndjson", ".jsonl": "ndjson", ".json": "ndjson"}
SUITE_EXTENSIONS = (*_TRACE_FORMATS, *_JSON_LIKE, ".yaml", ".yml", ".feature", ".xml")


@dataclass(frozen=True)
class SuiteOptions:
    """How to read the suite: trace column mapping, Gherkin phrase map, aliases, JUnit property."""

    mapping: dict[str, str] = field(default_factory=dict)
    steps_map: str | None = None
    aliases: str | None = None
    junit_property: str = DEFAULT_STEPS_PROPERTY


def _expand(inputs: Sequence[str | os.PathLike[str]]) -> list[Path]:
    files: list[Path] = []
    for raw in inputs:
        item = os.fspath(raw)
        if any(ch in item for ch in "*?["):
            matches = [Path(m) for m in sorted(glob.glob(item, recursive=True)) if Path(m).is_file()]
            if not matches:
                raise InputError(f"{item}: the pattern matches no file")
            files.extend(matches)
        elif Path(item).is_dir():
            inside = sorted(p for p in Path(item).rglob("*") if p.is_file() and p.suffix.lower() in SUITE_EXTENSIONS)
            if not inside:
                raise InputError(f"{item}: the folder holds no test traces, catalog, .feature or JUnit .xml file")
            files.extend(inside)
        elif Path(item).is_file():
            files.append(Path(item))
        else:
            raise InputError(f"{item}: no such file or folder")
    unique: dict[Path, Path] = {}
    for f in files:
        unique.setdefault(f.resolve(), f)
    return list(unique.values())


def read_suite(inputs: Sequence[str | os.PathLike[str]], options: SuiteOptions | None = None) -> ReaderReport:
    """Read every test source into one report; a test id may come from one source only."""
    options = options or SuiteOptions()
    if not inputs:
        raise InputError("no test sources given: pass trace files, a catalog, .feature files or JUnit XML")
    phrases = StepPhrases.load(options.steps_map) if options.steps_map else None
    report = ReaderReport()
    for path in _expand(inputs):
        suffix = path.suffix.lower()
        name = str(path)
        if not os.access(path, os.R_OK):
            raise InputError(f"{name}: the file cannot be read (permission denied)")
        if suffix in (".yaml", ".yml"):
            part = read_catalog(path)
        elif suffix == ".feature":
            part = read_feature_file(path, phrases)
        elif suffix == ".xml":
            part = read_junit_xml(path, steps_property=options.junit_property)
        elif suffix in _JSON_LIKE and path.stat().st_size and looks_like_otlp(path):
            part = read_otlp_json(path)
        elif suffix in _JSON_LIKE or suffix in _TRACE_FORMATS:
            if path.stat().st_size == 0:
                raise InputError(f"{name}: the file is empty")
            fmt = _JSON_LIKE.get(suffix) or _TRACE_FORMATS[suffix]
            part = read_trace_files(SourceFiles(fmt, (name,), name), options.mapping)
        else:
            raise InputError(
                f"{name}: unknown test source type; use trace files (.parquet, .csv, .ndjson), a catalog "
                "(.yaml), Gherkin (.feature), JUnit XML (.xml) or OTLP/JSON (.json)"
            )
        report.extend(part)
    owners: dict[str, str] = {}
    for trace in report.traces:
        if trace.test_id in owners and owners[trace.test_id] != trace.source:
            raise InputError(
                f"test id {trace.test_id!r} appears in {owners[trace.test_id]} and {trace.source}: "
                "give each test one source"
            )
        owners[trace.test_id] = trace.source
    return report


def load_suite(
    ws: Workspace, inputs: Sequence[str | os.PathLike[str]], options: SuiteOptions | None = None
) -> dict[str, Any]:
    """Read the suite, resolve its step names against the field events and store it."""
    options = options or SuiteOptions()
    ws.require("features", "kpaths", hint="run `gapfinder profile TELEMETRY -w ...` first")
    report = read_suite(inputs, options)
    aliases = load_aliases(options.aliases) if options.aliases else {}
    ids = {r["event"]: int(r["event_id"]) for r in fetch_dicts(ws.con, "list_event_ids")}
    field_events = [e for e, i in ids.items() if i > 1]
    resolved = resolve_step_names((s for t in report.traces for s in t.steps), field_events, aliases)

    test_rows: dict[str, list[Any]] = {
        k: [] for k in ("test_id", "source", "kind", "step_count", "unmapped_count", "path")
    }
    step_rows: dict[str, list[Any]] = {
        k: [] for k in ("test_id", "step_no", "step", "event", "event_id", "resolved_by")
    }
    for trace in report.traces:
        path: list[int] = []
        for n, step in enumerate(trace.steps, start=1):
            event, how = resolved[step]
            event_id: int | None = ids[event] if event is not None else None
            path.append(-1 if event_id is None else event_id)
            for key, value in zip(step_rows, (trace.test_id, n, step, event, event_id, how), strict=True):
                step_rows[key].append(value)
        values: tuple[Any, ...] = (trace.test_id, trace.source, trace.kind, len(path), path.count(-1), path)
        for key, row_value in zip(test_rows, values, strict=True):
            test_rows[key].append(row_value)
    tests_frame = pa.table(
        test_rows,
        schema=pa.schema(
            [
                ("test_id", pa.string()),
                ("source", pa.string()),
                ("kind", pa.string()),
                ("step_count", pa.int32()),
                ("unmapped_count", pa.int32()),
                ("path", pa.list_(pa.int32())),
            ]
        ),
    )
    steps_frame = pa.table(
        step_rows,
        schema=pa.schema(
            [
                ("test_id", pa.string()),
                ("step_no", pa.int32()),
                ("step", pa.string()),
                ("event", pa.string()),
                ("event_id", pa.int32()),
                ("resolved_by", pa.string()),
            ]
        ),
    )
    how_counts: dict[str, int] = {}
    for _event, how in resolved.values():
        how_counts[how] = how_counts.get(how, 0) + 1
    input_names = [os.fspath(i) for i in inputs]
    reading: dict[str, Any] = {
        "inputs": input_names,
        "kinds": sorted({t.kind for t in report.traces}),
        "skipped": report.skipped,
        "unmatched_phrases": report.unmatched_phrases,
        "ignored_phrases": report.ignored_phrases,
        "aliases": options.aliases,
        "step_names_by_resolution": how_counts,
    }
    record = StageRecord(
        stage="suite",
        inputs=input_names,
        parameters={
            "mapping": options.mapping,
            "steps_map": options.steps_map,
            "aliases": options.aliases,
            "junit_property": options.junit_property,
        },
        row_counts={"tests": tests_frame.num_rows, "steps": steps_frame.num_rows},
    )
    with ws.stage(record) as con:
        with registered(con, suite_tests_frame=tests_frame, suite_steps_frame=steps_frame):
            run(con, "create_suite_tests")
            run(con, "create_suite_steps")
        run(con, "upsert_meta", key="suite_reading", value=json.dumps(reading, sort_keys=True))
    return summarize_suite(ws)


def summarize_suite(ws: Workspace) -> dict[str, Any]:
    """What the stored suite holds: tests by source, steps resolved and the unmapped names."""
    ws.require("suite_tests", "suite_steps", hint="run `gapfinder suite TRACES... -w ...` first")
    con = ws.con
    meta = con.execute("SELECT value FROM meta WHERE key = 'suite_reading'").fetchone()
    reading = json.loads(meta[0]) if meta else {}
    tests = con.execute(
        "SELECT test_id, kind, source, step_count, unmapped_count FROM suite_tests ORDER BY test_id"
    ).fetchall()
    steps = con.execute("SELECT resolved_by, count(*) FROM suite_steps GROUP BY resolved_by").fetchall()
    unmapped = fetch_dicts(con, "list_unmapped_steps")
    return {
        "workspace": str(ws.path),
        "test_count": len(tests),
        "step_count": sum(t[3] for t in tests),
        "steps_by_resolution": {how: int(n) for how, n in sorted(steps)},
        "kinds": reading.get("kinds", []),
        "tests": [{"test_id": t, "kind": k, "source": s, "steps": n, "unmapped_steps": u} for t, k, s, n, u in tests],
        "unmapped_steps": unmapped,
        "skipped": reading.get("skipped", {}),
        "unmatched_phrases": reading.get("unmatched_phrases", {}),
        "ignored_phrases": reading.get("ignored_phrases", {}),
    }
