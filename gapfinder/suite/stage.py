"""The suite stage: read every source, resolve step names, store the tests with their outcomes."""

from __future__ import annotations

import dataclasses
import json
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pyarrow as pa

from gapfinder.align import load_aliases, resolve_step_names
from gapfinder.errors import ConfigError, InputError
from gapfinder.sources.formats import SourceFiles
from gapfinder.sql import fetch_dicts, first_row, registered, run
from gapfinder.suite.catalog import read_catalog
from gapfinder.suite.cucumber import read_cucumber_json, read_cucumber_messages
from gapfinder.suite.discover import SuiteFile, discover_suite_files
from gapfinder.suite.gherkin import StepPhrases, read_feature_file
from gapfinder.suite.junit import DEFAULT_STEPS_PROPERTY, read_junit_xml
from gapfinder.suite.model import ReaderReport, TestTrace
from gapfinder.suite.otlp import read_otlp_json
from gapfinder.suite.plugin_run import read_plugin_run
from gapfinder.suite.run_events import TestWindow, attribute_run_events
from gapfinder.suite.traces import read_trace_files
from gapfinder.workspace import StageRecord, Workspace, stage_clock

__all__ = ["DEFAULT_TAGS", "SuiteOptions", "count_decision", "load_suite", "read_suite", "summarize_suite"]

# Tests tagged so are not run by most suites' CI configuration; `--tags` replaces this expression.
DEFAULT_TAGS = "not @wip and not @ignore and not @skip and not @manual and not @pending and not @disabled"
_TRACE_FORMATS = {"trace-parquet": "parquet", "trace-csv": "csv", "trace-tsv": "tsv", "trace-ndjson": "ndjson"}


@dataclass(frozen=True)
class SuiteOptions:
    """How to read the suite.

    ``mapping`` names trace-table columns; ``steps_map``/``aliases`` turn step texts into events;
    ``tags`` is a Cucumber tag expression a test's tags must satisfy to count; ``count_all`` counts
    failed, skipped and tag-excluded tests as exercising too; ``strict`` fails on the first file
    that cannot be read instead of skipping it; ``events`` is test-run telemetry, read with
    ``events_mapping`` (the canonical columns of ``profile`` plus ``test_id``) and the timestamp
    options.
    """

    mapping: dict[str, str] = field(default_factory=dict)
    steps_map: str | None = None
    aliases: str | None = None
    junit_property: str = DEFAULT_STEPS_PROPERTY
    tags: str = DEFAULT_TAGS
    count_all: bool = False
    strict: bool = False
    keep_assertions: bool = False
    events: tuple[str, ...] = ()
    events_mapping: dict[str, str] = field(default_factory=dict)
    ts_unit: str | None = None
    ts_format: str | None = None
    feature_keys: Any = None


def _read_one(file: SuiteFile, options: SuiteOptions, phrases: StepPhrases | None) -> ReaderReport:
    path, kind = file.path, file.kind
    if kind == "gherkin":
        return read_feature_file(path, phrases, label=file.label, keep_assertions=options.keep_assertions)
    if kind == "junit":
        return read_junit_xml(path, steps_property=options.junit_property)
    if kind == "otlp":
        return read_otlp_json(path)
    if kind == "cucumber-json":
        return read_cucumber_json(path, phrases, label=file.label, keep_assertions=options.keep_assertions)
    if kind == "cucumber-messages":
        return read_cucumber_messages(path, phrases, label=file.label, keep_assertions=options.keep_assertions)
    if kind == "plugin-run":
        return read_plugin_run(path)
    if kind == "catalog":
        return read_catalog(path)
    if path.stat().st_size == 0:
        raise InputError(f"{path}: the file is empty")
    return read_trace_files(SourceFiles(_TRACE_FORMATS[kind], (str(path),), str(path)), options.mapping)


def _phrases_for(file: SuiteFile, given: StepPhrases | None, local_maps: dict[Path, StepPhrases]) -> StepPhrases | None:
    """The --steps-map rules first, then those of steps maps in the file's folder and its parents."""
    if not local_maps:
        return given
    rules = list(given.rules) if given else []
    sources = [given.source] if given else []
    for folder in (file.path.resolve().parent, *file.path.resolve().parents):
        if folder in local_maps:
            rules.extend(local_maps[folder].rules)
            sources.append(local_maps[folder].source)
    return StepPhrases(tuple(rules), ", ".join(sources)) if rules else given


def _join_results_to_scenarios(report: ReaderReport) -> int:
    """Give Gherkin scenarios the result a runner reported for them; returns how many were joined.

    A JUnit case without steps whose class and name are a scenario's feature and name (as cucumber
    runners write them) lends the scenario its outcome and window; a Cucumber report's scenario
    (steps that ran, outcome) replaces the scenario read from the text."""
    scenarios: dict[tuple[str, str], list[TestTrace]] = {}
    for trace in report.traces:
        if trace.kind == "gherkin":
            scenarios.setdefault((trace.feature, trace.name), []).append(trace)
    if not scenarios:
        return 0
    dropped: set[int] = set()
    joined = 0
    for trace in report.traces:
        if trace.kind not in ("junit", "cucumber") or (trace.kind == "junit" and trace.steps):
            continue
        waiting = scenarios.get((trace.feature, trace.name))
        if not waiting:
            continue
        scenario = waiting.pop(0)
        joined += 1
        if trace.kind == "junit":
            scenario.outcome, scenario.started, scenario.finished = trace.outcome, trace.started, trace.finished
            dropped.add(id(trace))
        else:
            dropped.add(id(scenario))
    report.traces = [t for t in report.traces if id(t) not in dropped]
    return joined


def _separate_clashing_ids(report: ReaderReport) -> None:
    """A test id read from two files is prefixed with each file's name, and the reader is told."""
    sources: dict[str, set[str]] = {}
    for trace in report.traces:
        sources.setdefault(trace.test_id, set()).add(trace.source)
    clashing = {t for t, s in sources.items() if len(s) > 1}
    for trace in report.traces:
        if trace.test_id in clashing:
            trace.test_id = f"{trace.source}::{trace.test_id}"
    if clashing:
        example = sorted(clashing)[0]
        report.problems.append(
            f"{len(clashing):,} test id(s) appear in two sources (for example {example!r}); each is prefixed with "
            "its file's path"
        )


def _attribute_events(report: ReaderReport, options: SuiteOptions) -> dict[str, Any]:
    windows = [
        TestWindow(t.test_id, t.started, t.finished, t.user_id, t.session_id)
        for t in report.traces
        if t.started is not None and t.finished is not None
    ]
    found = attribute_run_events(
        options.events,
        windows,
        options.events_mapping,
        ts_unit=options.ts_unit,
        ts_format=options.ts_format,
        feature_keys=options.feature_keys,
    )
    by_id = {t.test_id: t for t in report.traces}
    for test_id, steps in found.steps.items():
        trace = by_id.get(test_id)
        if trace is None:
            trace = TestTrace(test_id, [], found.label, "events", name=test_id)
            report.traces.append(trace)
            by_id[test_id] = trace
        trace.steps = steps
        trace.step_types = ["action"] * len(steps)
        trace.kind = f"{trace.kind}+events" if trace.kind != "events" else "events"
    unattributed = found.event_count - found.attributed_count
    if unattributed:
        report.problems.append(
            f"--events {found.label}: {unattributed:,} of {found.event_count:,} event(s) fell in no test's time window"
        )
    if found.shared_count:
        report.problems.append(
            f"--events {found.label}: {found.shared_count:,} event(s) fell in the windows of tests running at once and "
            "count for each; record each test's account with gapfinder.pytest_plugin.record_identity to separate them"
        )
    return {
        "by": found.by,
        "events": found.event_count,
        "attributed": found.attributed_count,
        "shared": found.shared_count,
        "tests": len(found.steps),
        "windows": len(windows),
    }


def read_suite(inputs: Sequence[str | os.PathLike[str]], options: SuiteOptions | None = None) -> ReaderReport:
    """Read every test source into one report.

    Files a folder holds are taken by what they contain; a file that cannot be read is skipped
    with one line in ``report.problems`` (``options.strict`` raises instead), and reading fails only
    when nothing usable is left."""
    options = options or SuiteOptions()
    if not inputs:
        raise InputError("no test sources given: pass a folder, .feature files, JUnit XML, a catalog or traces")
    _tag_filter(options.tags)  # a bad expression fails before any file is read
    phrases = StepPhrases.load(options.steps_map) if options.steps_map else None
    columns = (options.mapping.get("test_id", "test_id"), options.mapping.get("event", "event"))
    files, problems, ignored = discover_suite_files(inputs, columns)
    if options.strict and problems:
        raise InputError(problems[0])
    report = ReaderReport(problems=list(problems), files_ignored=ignored)
    local_maps = {f.path.resolve().parent: StepPhrases.load(f.path) for f in files if f.kind == "steps-map"}
    for file in files:
        if file.kind == "steps-map":
            report.files_read["steps-map"] = report.files_read.get("steps-map", 0) + 1
            continue
        try:
            part = _read_one(file, options, _phrases_for(file, phrases, local_maps))
        except ConfigError:
            raise
        except InputError as exc:
            if options.strict:
                raise
            report.problems.append(str(exc))
            continue
        report.files_read[file.kind] = report.files_read.get(file.kind, 0) + 1
        report.extend(part)
    if not report.traces and not options.events:
        if len(report.problems) == 1:
            raise InputError(report.problems[0])
        if report.problems:
            raise InputError(
                f"no test could be read: {len(report.problems):,} file(s) skipped, the first: {report.problems[0]}"
            )
        raise InputError(
            f"{', '.join(os.fspath(i) for i in inputs)}: no test source found ({ignored:,} other file(s) ignored); "
            "pass .feature files, JUnit XML, Cucumber JSON or Messages, OTLP/JSON, a catalog or trace tables"
        )
    report.joined_results = _join_results_to_scenarios(report)
    if options.events:
        report.events_reading = _attribute_events(report, options)
    _separate_clashing_ids(report)
    return report


def _tag_filter(expression: str) -> Any:
    from cucumber_tag_expressions import parse
    from cucumber_tag_expressions.parser import TagExpressionError

    if not expression.strip():
        return None
    try:
        return parse(expression)
    except TagExpressionError as exc:
        reason = str(exc).splitlines()[0]
        raise ConfigError(f"--tags {expression!r}: not a Cucumber tag expression ({reason})") from None


def count_decision(trace: TestTrace, *, tag_filter: Any = None, count_all: bool = False) -> str | None:
    """None when the test counts as exercising what it steps through; else why it is left out."""
    if count_all:
        return None
    if trace.outcome == "failed":
        return "failed"
    if trace.outcome == "skipped":
        return "skipped"
    if tag_filter is not None and not tag_filter.evaluate(list(trace.tags)):
        return "excluded by --tags"
    return None


_TEST_SCHEMA = pa.schema(
    [
        ("test_id", pa.string()),
        ("source", pa.string()),
        ("kind", pa.string()),
        ("outcome", pa.string()),
        ("left_out", pa.string()),
        ("tags", pa.list_(pa.string())),
        ("step_count", pa.int32()),
        ("unmapped_count", pa.int32()),
        ("path", pa.list_(pa.int32())),
    ]
)
_STEP_SCHEMA = pa.schema(
    [
        ("test_id", pa.string()),
        ("step_no", pa.int32()),
        ("step", pa.string()),
        ("event", pa.string()),
        ("event_id", pa.int32()),
        ("resolved_by", pa.string()),
    ]
)


def load_suite(
    ws: Workspace, inputs: Sequence[str | os.PathLike[str]], options: SuiteOptions | None = None
) -> dict[str, Any]:
    """Read the suite, resolve its step names against the field events and store it."""
    began = stage_clock()
    options = options or SuiteOptions()
    ws.require("features", "kpaths", hint="run `gapfinder profile TELEMETRY -w ...` first")
    tag_filter = _tag_filter(options.tags)
    aliases = load_aliases(options.aliases) if options.aliases else {}
    if options.events and options.feature_keys is None:
        # Test-run events are named the way the field profile named its events.
        from gapfinder.sources.feature_keys import FeatureKeys

        meta = ws.con.execute("SELECT value FROM meta WHERE key = 'profile_reading'").fetchall()
        stored = json.loads(meta[0][0]).get("feature_key_options") if meta else None
        options = dataclasses.replace(options, feature_keys=FeatureKeys.from_parameters(stored))
    report = read_suite(inputs, options)
    ids = {r["event"]: int(r["event_id"]) for r in fetch_dicts(ws.con, "list_event_ids")}
    field_events = [e for e, i in ids.items() if i > 1]
    resolved = resolve_step_names((s for t in report.traces for s in t.steps), field_events, aliases)

    test_rows: dict[str, list[Any]] = {name: [] for name in _TEST_SCHEMA.names}
    step_rows: dict[str, list[Any]] = {name: [] for name in _STEP_SCHEMA.names}
    left_out: dict[str, int] = {}
    for trace in report.traces:
        path: list[int] = []
        for n, step in enumerate(trace.steps, start=1):
            event, how = resolved[step]
            event_id: int | None = ids[event] if event is not None else None
            path.append(-1 if event_id is None else event_id)
            for key, value in zip(step_rows, (trace.test_id, n, step, event, event_id, how), strict=True):
                step_rows[key].append(value)
        reason = count_decision(trace, tag_filter=tag_filter, count_all=options.count_all)
        if reason:
            left_out[reason] = left_out.get(reason, 0) + 1
        values: tuple[Any, ...] = (
            trace.test_id,
            trace.source,
            trace.kind,
            trace.outcome,
            reason,
            list(trace.tags),
            len(path),
            path.count(-1),
            path,
        )
        for key, row_value in zip(test_rows, values, strict=True):
            test_rows[key].append(row_value)
    tests_frame = pa.table(test_rows, schema=_TEST_SCHEMA)
    steps_frame = pa.table(step_rows, schema=_STEP_SCHEMA)
    if report.traces and not any(r is None for r in test_rows["left_out"]):
        report.problems.append(
            f"none of the {len(report.traces):,} test(s) read counts as exercising anything "
            f"({', '.join(f'{n:,} {r}' for r, n in sorted(left_out.items()))}); pass --count-all to count them anyway, "
            "or --tags to change which tags are left out"
        )
    how_counts: dict[str, int] = {}
    for _event, how in resolved.values():
        how_counts[how] = how_counts.get(how, 0) + 1
    input_names = [os.fspath(i) for i in inputs]
    previous = summarize_suite(ws) if ws.has_table("suite_tests") else None
    reading: dict[str, Any] = {
        "inputs": input_names,
        "kinds": sorted({t.kind for t in report.traces}),
        "files_read": report.files_read,
        "files_ignored": report.files_ignored,
        "problems": report.problems,
        "skipped": report.skipped,
        "unmatched_phrases": report.unmatched_phrases,
        "ignored_phrases": report.ignored_phrases,
        "aliases": options.aliases,
        "step_names_by_resolution": how_counts,
        "left_out": left_out,
        "tags": options.tags,
        "count_all": options.count_all,
        "joined_results": report.joined_results,
        "events": report.events_reading,
        "replaced": (
            {"tests": previous["test_count"], "inputs": previous.get("inputs", [])} if previous is not None else None
        ),
    }
    record = StageRecord(
        began=began,
        stage="suite",
        inputs=[*input_names, *options.events],
        parameters={
            "mapping": options.mapping,
            "steps_map": options.steps_map,
            "aliases": options.aliases,
            "junit_property": options.junit_property,
            "tags": options.tags,
            "count_all": options.count_all,
            "keep_assertions": options.keep_assertions,
            "events_mapping": options.events_mapping,
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
    """What the stored suite holds: tests with outcomes, steps resolved, what was left out and why."""
    ws.require("suite_tests", "suite_steps", hint="run `gapfinder suite TRACES... -w ...` first")
    con = ws.con
    meta = first_row(con.execute("SELECT value FROM meta WHERE key = 'suite_reading'"))
    reading = json.loads(meta[0]) if meta else {}
    tests = fetch_dicts(con, "list_suite_tests")
    steps = fetch_dicts(con, "count_suite_steps_by_resolution")
    unmapped = fetch_dicts(con, "list_unmapped_steps")
    by_resolution = {str(r["resolved_by"]): int(r["step_count"]) for r in steps}
    return {
        "workspace": str(ws.path),
        "inputs": reading.get("inputs", []),
        "test_count": len(tests),
        "counted_test_count": sum(1 for t in tests if t["left_out"] is None),
        "step_count": sum(int(t["step_count"]) for t in tests),
        "mapped_step_count": sum(n for how, n in by_resolution.items() if how != "unmapped"),
        "unmapped_step_count": by_resolution.get("unmapped", 0),
        "steps_by_resolution": dict(sorted(by_resolution.items())),
        "kinds": reading.get("kinds", []),
        "files_read": reading.get("files_read", {}),
        "files_ignored": reading.get("files_ignored", 0),
        "problems": reading.get("problems", []),
        "left_out": reading.get("left_out", {}),
        "joined_results": reading.get("joined_results", 0),
        "events": reading.get("events", {}),
        "replaced": reading.get("replaced"),
        "tests": [
            {
                "test_id": t["test_id"],
                "kind": t["kind"],
                "source": t["source"],
                "outcome": t["outcome"],
                "counted": t["left_out"] is None,
                "left_out": t["left_out"],
                "steps": int(t["step_count"]),
                "unmapped_steps": int(t["unmapped_count"]),
            }
            for t in tests
        ],
        "unmapped_steps": unmapped,
        "skipped": reading.get("skipped", {}),
        "unmatched_phrases": reading.get("unmatched_phrases", {}),
        "ignored_phrases": reading.get("ignored_phrases", {}),
    }
