"""The ``gapfinder`` command: a thin click layer over the library.

Each command parses its options, calls one library function and renders the result. Library
errors (GapfinderError) become one line on stderr and exit code 2; ``--debug`` shows tracebacks.
Exit codes: 0 success, 1 a check failed, 2 bad input or usage, 3 an internal error (a bug).
"""

from __future__ import annotations

import csv
import functools
import io
import json
import os
import sys
import traceback
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any, TypeVar

import click

from gapfinder import __version__
from gapfinder.errors import GapfinderError

F = TypeVar("F", bound=Callable[..., Any])

FORMATS = ("table", "json", "csv")


def _stderr_console() -> Any:
    from rich.console import Console

    return Console(stderr=True)


def _stdout_console() -> Any:
    from rich.console import Console

    if sys.stdout.isatty():
        return Console()
    return Console(file=sys.stdout, width=140, no_color=True, highlight=False)


@contextmanager
def _progress(total: int) -> Iterator[Callable[[str], None]]:
    """A progress bar on stderr when it is a terminal; silent otherwise."""
    if not sys.stderr.isatty():
        yield lambda _message: None
        return
    from rich.progress import BarColumn, Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    with Progress(
        SpinnerColumn(),
        TextColumn("{task.description}"),
        BarColumn(),
        TimeElapsedColumn(),
        console=_stderr_console(),
        transient=True,
    ) as bar:
        task = bar.add_task("starting", total=total)
        seen = {"n": 0}

        def step(message: str) -> None:
            bar.update(task, description=message, completed=seen["n"])
            seen["n"] += 1

        yield step
        bar.update(task, completed=total)


def output_options(func: F) -> F:
    """The --format option shared by every listing command."""
    return click.option(
        "--format",
        "output_format",
        type=click.Choice(FORMATS),
        default="table",
        show_default=True,
        help="table for people (rich), json or csv for scripts; data goes to stdout.",
    )(func)


def workspace_option(func: F) -> F:
    return click.option(
        "-w",
        "--workspace",
        default="gapfinder.duckdb",
        show_default=True,
        type=click.Path(dir_okay=False),
        help="The DuckDB workspace file holding every stage's results.",
    )(func)


def _emit_json(data: Any) -> None:
    click.echo(json.dumps(data, indent=2, sort_keys=True, default=str))


def _emit_csv(header: list[str], rows: list[tuple[Any, ...]]) -> None:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    writer.writerows(rows)
    click.echo(buffer.getvalue(), nl=False)


class GapfinderGroup(click.Group):
    """Turns library errors into one clean line and exit code 2."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except GapfinderError as exc:
            if ctx.obj and ctx.obj.get("debug"):
                traceback.print_exc()
            click.echo(f"gapfinder: {exc}", err=True)
            ctx.exit(2)
        except KeyboardInterrupt:
            click.echo("gapfinder: interrupted; the workspace keeps its previous results", err=True)
            ctx.exit(130)
        except (click.ClickException, click.exceptions.Exit, click.exceptions.Abort):
            raise
        except Exception as exc:  # a bug: say so in one line unless --debug asks for more
            if ctx.obj and ctx.obj.get("debug"):
                traceback.print_exc()
            else:
                click.echo(
                    f"gapfinder: internal error ({type(exc).__name__}: {exc}); rerun with --debug and report it",
                    err=True,
                )
            ctx.exit(3)


@click.group(cls=GapfinderGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="gapfinder")
@click.option("--debug", is_flag=True, envvar="GAPFINDER_DEBUG", help="Show tracebacks for errors.")
@click.pass_context
def cli(ctx: click.Context, debug: bool) -> None:
    """Measure how much of real usage your automated tests cover, and what they miss.

    Start with `gapfinder profile TELEMETRY -w ws.duckdb`, or try the invented demo:
    `gapfinder demo --out demo/` then `gapfinder profile demo/field -w demo.duckdb`.
    """
    ctx.ensure_object(dict)
    ctx.obj["debug"] = debug


@cli.command()
@click.option("--out", required=True, type=click.Path(file_okay=False), help="Folder to write the demo into.")
@click.option(
    "--events",
    default=200_000,
    show_default=True,
    type=click.IntRange(min=1000),
    help="About how many field events to generate.",
)
@click.option("--seed", default=7, show_default=True, type=int, help="Random seed; the same seed gives the same files.")
def demo(out: str, events: int, seed: int) -> None:
    """Generate the invented tool-library demo: field telemetry, test traces and a manifest."""
    from gapfinder.demo import generate_demo

    result = generate_demo(out, events=events, seed=seed)
    click.echo(
        f"wrote {result.event_count:,} field events ({result.session_count:,} sessions, "
        f"{result.user_count:,} members) in {len(result.field_files)} monthly Parquet files under "
        f"{result.out / 'field'}",
        err=True,
    )
    click.echo(f"test traces: {result.suite_file}; what was planted: {result.manifest_file}", err=True)


def _parse_mapping(config: str | None, items: tuple[str, ...]) -> dict[str, str]:
    from gapfinder.sources import load_config_columns, parse_map_options

    mapping: dict[str, str] = {}
    if config:
        mapping.update(load_config_columns(config))
    elif os.path.exists("gapfinder.toml"):
        mapping.update(load_config_columns("gapfinder.toml"))
    mapping.update(parse_map_options(items))
    return mapping


@cli.command()
@click.argument("telemetry", nargs=-1, required=True)
@workspace_option
@click.option(
    "--map",
    "maps",
    multiple=True,
    metavar="CANONICAL=SOURCE",
    help="Map a canonical column (user_id, session_id, ts, event, app_version, platform, "
    "outcome) to a source column; repeatable.",
)
@click.option(
    "--config",
    type=click.Path(dir_okay=False),
    help="A gapfinder.toml whose [columns] table maps columns (default: ./gapfinder.toml if present).",
)
@click.option(
    "--ts-unit",
    type=click.Choice(["s", "ms", "us", "ns"]),
    help="Unit of epoch-number timestamps (default: detected from their size).",
)
@click.option("--ts-format", help="strptime format of text timestamps (default: ISO-8601).")
@click.option(
    "--idle",
    default=30.0,
    show_default=True,
    type=click.FloatRange(min=0, min_open=True),
    help="Minutes of inactivity that end a session (ignored with a session column).",
)
@click.option(
    "--drop",
    "drop_events",
    multiple=True,
    metavar="EVENT",
    help="An event to remove before sessionizing (heartbeats, pings); repeatable.",
)
@click.option("--collapse-repeats", is_flag=True, help="Drop an event that repeats the one just before it.")
@click.option(
    "--max-events",
    default=500,
    show_default=True,
    type=click.IntRange(min=0),
    help="Cut sessions longer than this many events (0: no cap); the cut is reported.",
)
@click.option(
    "--error-outcome",
    "error_outcomes",
    multiple=True,
    metavar="VALUE",
    help="An outcome value that means failure (default: error, fail, failed, exception, ...).",
)
@click.option(
    "--automated/--no-automated",
    "flag_automated",
    default=True,
    show_default=True,
    help="Flag accounts far outside the rest as automated and keep them apart.",
)
@click.option("--include-automated", is_flag=True, help="Count flagged automated sessions in the paths too.")
@click.option(
    "--max-k",
    default=5,
    show_default=True,
    type=click.IntRange(min=2),
    help="Longest contiguous path (k-path) to count.",
)
@click.option(
    "--key-env", metavar="VAR", help="Pseudonymize user ids with the HMAC-SHA256 key in this environment variable."
)
@click.option("--key-file", type=click.Path(dir_okay=False), help="Pseudonymize user ids with the key in this file.")
@click.option(
    "--top", default=10, show_default=True, type=click.IntRange(min=1), help="Rows per listing in the summary."
)
@click.option(
    "--min-users",
    default=5,
    show_default=True,
    type=click.IntRange(min=1),
    help="Privacy floor: hide paths taken by fewer distinct users.",
)
@click.option("--threads", type=click.IntRange(min=1), help="DuckDB threads (default: all cores).")
@click.option("--memory-limit", metavar="SIZE", help="DuckDB memory limit, e.g. 4GB; larger work spills to disk.")
@output_options
def profile(
    telemetry: tuple[str, ...],
    workspace: str,
    maps: tuple[str, ...],
    config: str | None,
    ts_unit: str | None,
    ts_format: str | None,
    idle: float,
    drop_events: tuple[str, ...],
    collapse_repeats: bool,
    max_events: int,
    error_outcomes: tuple[str, ...],
    flag_automated: bool,
    include_automated: bool,
    max_k: int,
    key_env: str | None,
    key_file: str | None,
    top: int,
    min_users: int,
    threads: int | None,
    memory_limit: str | None,
    output_format: str,
) -> None:
    """Read telemetry, form sessions and build the usage profile in the workspace.

    TELEMETRY is one or more Parquet, CSV/TSV or NDJSON files, folders (searched recursively,
    hive partitions included) or globs.
    """
    from gapfinder.privacy import read_key
    from gapfinder.sessions import DEFAULT_ERROR_OUTCOMES, SessionOptions
    from gapfinder.usage_profile import ProfileOptions, profile_telemetry

    options = ProfileOptions(
        mapping=_parse_mapping(config, maps),
        ts_unit=ts_unit,
        ts_format=ts_format,
        sessions=SessionOptions(
            idle_minutes=idle,
            drop_events=drop_events,
            collapse_repeats=collapse_repeats,
            max_events=max_events,
            error_outcomes=error_outcomes or DEFAULT_ERROR_OUTCOMES,
            flag_automated=flag_automated,
        ),
        max_k=max_k,
        include_automated=include_automated,
        pseudonymize_key=read_key(env_var=key_env, key_file=key_file),
        threads=threads,
        memory_limit=memory_limit,
    )
    with _progress(total=4) as step:
        summary = profile_telemetry(telemetry, workspace, options, progress=step, top=top, min_users=min_users)
    _render_summary(summary, output_format)


def _parse_max_gap(_ctx: click.Context, _param: click.Parameter, value: str) -> int | None:
    if value.strip().lower() in ("any", "none", "unbounded"):
        return None
    try:
        gap = int(value)
    except ValueError:
        raise click.BadParameter(f"{value!r}: give a number of events (0 for contiguous) or 'any'") from None
    if gap < 0:
        raise click.BadParameter(f"{value!r}: give 0 or more, or 'any'")
    return gap


@cli.command()
@workspace_option
@click.option(
    "--kind",
    type=click.Choice(["features", "transitions", "kpaths", "patterns", "full"]),
    default="transitions",
    show_default=True,
    help="transitions (START/END included), kpaths (contiguous runs of 3+ states), patterns (mined: "
    "steps in order, other events allowed between), full (complete session paths) or features.",
)
@click.option(
    "--min-support",
    type=float,
    help="Least sessions a row needs: a fraction of all sessions (below 1) or a count "
    "[default: 0.01 for patterns, none otherwise].",
)
@click.option(
    "--min-users",
    default=5,
    show_default=True,
    type=click.IntRange(min=1),
    help="Privacy floor: hide rows taken by fewer distinct users (the output says how many).",
)
@click.option(
    "--max-length",
    type=click.IntRange(min=1, max=64),
    help="Longest pattern (events) or k-path (states) to list [default: 6 for patterns, all stored k-paths].",
)
@click.option(
    "--min-length",
    default=2,
    show_default=True,
    type=click.IntRange(min=1, max=64),
    help="Shortest pattern to list (patterns only).",
)
@click.option(
    "--max-gap",
    default="2",
    show_default=True,
    metavar="N|any",
    callback=_parse_max_gap,
    help="Patterns: most other events allowed between two consecutive steps (0: contiguous; any: no bound).",
)
@click.option(
    "--closed/--all-patterns",
    default=True,
    show_default=True,
    help="Patterns: list only closed ones (no one-step-longer pattern containing it has the same sessions).",
)
@click.option("--top", default=50, show_default=True, type=click.IntRange(min=0), help="Rows to list (0: all of them).")
@output_options
def paths(
    workspace: str,
    kind: str,
    min_support: float | None,
    min_users: int,
    max_length: int | None,
    min_length: int,
    max_gap: int | None,
    closed: bool,
    top: int,
    output_format: str,
) -> None:
    """List the paths people take: transitions, k-paths, mined patterns or complete paths.

    Each row gives the path, the sessions that contain it (support), distinct users and the share
    of all sessions. `--kind patterns` mines the workspace's sessions for journeys whose steps occur
    in order with detours allowed, and stores them for the later stages.
    """
    from gapfinder.patterns import MiningOptions, usage_paths
    from gapfinder.workspace import Workspace

    mining = MiningOptions(min_length=min_length, max_gap=max_gap, closed=closed)
    # Listing only reads; mining writes the patterns table. A missing file is never created here.
    read_only = kind != "patterns" or not os.path.exists(workspace)
    with _progress(total=1) as step, Workspace(workspace, read_only=read_only) as ws:
        step("mining patterns" if kind == "patterns" else f"listing {kind}")
        result = usage_paths(
            ws, kind, min_support=min_support, min_users=min_users, top=top, max_length=max_length, mining=mining
        )
    _render_paths(result, output_format)


def _render_paths(result: dict[str, Any], output_format: str) -> None:
    from gapfinder.report import render_paths

    if output_format == "json":
        _emit_json(result)
    elif output_format == "csv":
        extra = [k for k in ("occurrences", "error_rate", "closed") if any(k in r for r in result["rows"])]
        header = ["path", "k", "sessions", "users", "share", *extra]
        rows = [
            (json.dumps(r["path"]), r["k"], r["sessions"], r["users"], r["share"], *(r.get(k) for k in extra))
            for r in result["rows"]
        ]
        _emit_csv(header, rows)
        click.echo(f"{result['suppressed']:,} rows held back: fewer than {result['min_users']} users", err=True)
    else:
        render_paths(result, _stdout_console())


def _render_summary(summary: dict[str, Any], output_format: str) -> None:
    from gapfinder.report import render_profile, summary_rows

    if output_format == "json":
        _emit_json(summary)
    elif output_format == "csv":
        _emit_csv(["key", "value"], summary_rows(summary))
    else:
        render_profile(summary, _stdout_console())


def main() -> None:
    """Entry point of the ``gapfinder`` script."""
    cli(prog_name="gapfinder")


@functools.cache
def command_names() -> list[str]:
    """Every command of the CLI (used by the documentation test)."""
    return sorted(cli.commands)
