"""`gapfinder suite` and `gapfinder align`: what the tests exercise, and names matched to events."""

from __future__ import annotations

import json
import os
from collections.abc import Callable, Sequence
from typing import Any

import click

from gapfinder.cli import (
    F,
    FiniteFloat,
    _emit_result,
    cli,
    min_users_option,
    output_options,
    workspace_option,
)

__all__ = ["print_problems", "suite_options", "suite_options_from"]

_SHOWN_PROBLEMS = 20
SUITE_OPTION_NAMES = (
    "trace_maps",
    "steps_map",
    "aliases",
    "junit_property",
    "tags",
    "count_all",
    "keep_assertions",
    "strict",
    "events",
    "events_maps",
)


def suite_options(*, map_alias: bool = True) -> Callable[[F], F]:
    """The options of how a suite is read, shared by `suite` and `run` (where --map is telemetry's)."""
    flags = ("--trace-map", "--map") if map_alias else ("--trace-map",)

    def apply(func: F) -> F:
        return _suite_options(func, flags)

    return apply


def _suite_options(func: F, trace_map_flags: tuple[str, ...]) -> F:
    decorators: list[Callable[[F], F]] = [
        click.option(
            *trace_map_flags,
            "trace_maps",
            multiple=True,
            metavar="CANONICAL=SOURCE",
            help="For trace tables: map test_id, step_no, ts or event to a source column; repeatable.",
        ),
        click.option(
            "--steps-map",
            type=click.Path(dir_okay=False),
            help="For Gherkin and Cucumber reports: a YAML file mapping step phrases (regular expressions) to events.",
        ),
        click.option(
            "--aliases",
            type=click.Path(dir_okay=False),
            help="A YAML file mapping test step names to field event names (see `gapfinder align`).",
        ),
        click.option(
            "--junit-property",
            default="steps",
            show_default=True,
            help="For JUnit XML: the testcase property that lists its steps as JSON, where one does.",
        ),
        click.option(
            "--tags",
            default=None,
            metavar="EXPRESSION",
            help='Cucumber tag expression a test\'s tags must satisfy to count, e.g. "not @wip and not @slow" '
            '(default: not @wip, @ignore, @skip, @manual, @pending or @disabled; "" counts every tag).',
        ),
        click.option(
            "--count-all",
            is_flag=True,
            help="Count failed, skipped and tag-excluded tests as exercising their steps too.",
        ),
        click.option(
            "--keep-assertions",
            is_flag=True,
            help="Keep Gherkin assertion steps (Then …) as steps; by default they exercise no feature.",
        ),
        click.option("--strict", is_flag=True, help="Fail on the first unreadable file instead of skipping it."),
        click.option(
            "--events",
            "events",
            multiple=True,
            metavar="PATH",
            help="Test-run telemetry: events the app emitted while the suite ran, attributed to tests by a "
            "test_id column or by each test's time window; repeatable.",
        ),
        click.option(
            "--events-map",
            "events_maps",
            multiple=True,
            metavar="CANONICAL=SOURCE",
            help="Map a column of the test-run telemetry (as `profile --map`, plus test_id); repeatable.",
        ),
    ]
    for decorate in reversed(decorators):
        func = decorate(func)
    return func


def suite_options_from(values: dict[str, Any], *, ts_unit: str | None = None, ts_format: str | None = None) -> Any:
    """SuiteOptions from the parsed values of `suite_options` (the keys are removed from ``values``)."""
    from gapfinder.sources import parse_map_options
    from gapfinder.sources.mapping import CANONICAL_COLUMNS
    from gapfinder.suite import SuiteOptions
    from gapfinder.suite.stage import DEFAULT_TAGS
    from gapfinder.suite.traces import TRACE_COLUMNS

    values = {k: values.pop(k) for k in SUITE_OPTION_NAMES}
    return SuiteOptions(
        mapping=parse_map_options(values["trace_maps"], allowed=TRACE_COLUMNS),
        steps_map=values["steps_map"],
        aliases=values["aliases"],
        junit_property=values["junit_property"],
        tags=DEFAULT_TAGS if values["tags"] is None else values["tags"],
        count_all=values["count_all"],
        strict=values["strict"],
        keep_assertions=values["keep_assertions"],
        events=tuple(values["events"]),
        events_mapping=parse_map_options(values["events_maps"], allowed=(*CANONICAL_COLUMNS, "test_id")),
        ts_unit=ts_unit,
        ts_format=ts_format,
    )


def print_problems(problems: Sequence[str]) -> None:
    """One warning line per file that was skipped (the first few, then how many more)."""
    for line in problems[:_SHOWN_PROBLEMS]:
        click.echo(f"gapfinder: warning: {line}", err=True)
    if len(problems) > _SHOWN_PROBLEMS:
        click.echo(
            f"gapfinder: warning: … and {len(problems) - _SHOWN_PROBLEMS:,} more (`--format json` lists them all)",
            err=True,
        )


@cli.command()
@click.argument("traces", nargs=-1, required=True)
@workspace_option
@suite_options()
@click.option(
    "--ts-unit",
    type=click.Choice(["s", "ms", "us", "ns"]),
    help="For --events: unit of epoch-number timestamps (default: detected from their size).",
)
@click.option("--ts-format", help="For --events: strptime format of text timestamps (default: ISO-8601).")
@click.option("--add", is_flag=True, help="Add these sources to the stored suite instead of replacing it.")
@output_options
def suite(
    traces: tuple[str, ...],
    workspace: str,
    ts_unit: str | None,
    ts_format: str | None,
    add: bool,
    output_format: str,
    **values: Any,
) -> None:
    """Read what the tests exercise and store it in the workspace.

    TRACES are folders of a test repository or files: Gherkin .feature files, JUnit XML reports
    (any runner), Cucumber JSON or Messages reports, OTLP/JSON traces, the pytest plugin's run
    file, test catalogs (.yaml) and trace tables (test_id, step_no or ts, event). A folder yields
    the files it recognises by content; one that cannot be read is skipped with a warning.
    Failed, skipped and @wip-tagged tests do not count unless --count-all. With --events, the
    app's own telemetry from a test run gives each test its steps, with no mapping by hand.
    """
    from gapfinder.suite import load_suite
    from gapfinder.workspace import Workspace

    options = suite_options_from(values, ts_unit=ts_unit, ts_format=ts_format)
    with Workspace(workspace, read_only=not os.path.exists(workspace)) as ws:
        sources: list[str] = list(traces)
        if add and ws.has_table("suite_tests"):
            from gapfinder.sql import first_row

            row = first_row(ws.con.execute("SELECT value FROM meta WHERE key = 'suite_reading'"))
            earlier = json.loads(row[0]).get("inputs", []) if row else []
            sources = [*earlier, *(t for t in traces if t not in earlier)]
        summary = load_suite(ws, sources, options)
    print_problems(summary["problems"])
    _emit_result(
        summary,
        output_format,
        table="render_suite",
        header=["test_id", "kind", "source", "outcome", "counted", "steps", "unmapped_steps"],
        rows=lambda: [
            (t["test_id"], t["kind"], t["source"], t["outcome"], t["counted"], t["steps"], t["unmapped_steps"])
            for t in summary["tests"]
        ],
    )


@cli.command()
@workspace_option
@click.option(
    "--write",
    "write_to",
    type=click.Path(dir_okay=False),
    help="Write the suggestions as an alias file to review and pass to `gapfinder suite --aliases`.",
)
@click.option(
    "--min-score",
    default=0.3,
    show_default=True,
    type=FiniteFloat(0, 1),
    help="Suggest nothing below this similarity.",
)
@click.option("--aliases", type=click.Path(dir_okay=False), help="An alias file whose entries are kept when writing.")
@min_users_option("field events")
@output_options
def align(
    workspace: str, write_to: str | None, min_score: float, aliases: str | None, min_users: int, output_format: str
) -> None:
    """Suggest field event names for test steps that match none.

    Compares the stored suite's unmapped step names with the field's event names (word tokens and
    character n-grams, cosine similarity; opposite verbs never match) and shows each step's best
    candidates with their scores. `--write` saves the best as an alias file for a person to review.
    """
    from gapfinder.align import Suggestion, suggest_for_workspace, write_aliases
    from gapfinder.align import load_aliases as read_aliases
    from gapfinder.workspace import Workspace

    with Workspace(workspace, read_only=True) as ws:
        result = suggest_for_workspace(ws, min_score=min_score, min_users=min_users)
    if write_to:
        existing = read_aliases(aliases) if aliases else None
        suggestions = [Suggestion(r["step"], r["event"], r["score"]) for r in result["suggestions"]]
        write_aliases(write_to, suggestions, existing=existing)
        click.echo(
            f"wrote {len(result['suggestions'])} suggestion(s) to {write_to}: review it, then pass --aliases", err=True
        )
    _emit_result(
        result,
        output_format,
        table="render_alignment",
        header=["step", "event", "score"],
        rows=lambda: [(r["step"], r["event"], r["score"]) for r in result["suggestions"]],
    )
