"""The ``gapfinder`` command: a thin click layer over the library.

Each command parses its options, calls one library function and renders the result. Library
errors (GapfinderError) become one line on stderr and exit code 2; ``--debug`` shows tracebacks.
Exit codes: 0 success, 1 a check failed, 2 bad input or usage, 3 an internal error (a bug).
"""

from __future__ import annotations

import contextlib
import csv
import functools
import io
import json
import os
import sys
import traceback
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import click

from gapfinder import __version__
from gapfinder.cli.params import F, FiniteFloat
from gapfinder.cli.profile_options import profile_options, profile_options_from
from gapfinder.errors import GapfinderError, describe_database_error
from gapfinder.quoting import printable

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


def plain_workspace_option(func: F) -> F:
    """``-w/--workspace`` alone (for commands whose own options include --threads and --memory-limit)."""
    return click.option(
        "-w",
        "--workspace",
        default="gapfinder.duckdb",
        show_default=True,
        type=click.Path(dir_okay=False),
        help="The DuckDB workspace file holding every stage's results.",
    )(func)


def _set_engine(ctx: click.Context, param: click.Parameter, value: Any) -> Any:
    from gapfinder.workspace import use_engine

    if value is not None and param.name:
        use_engine(**{param.name: value})
    return value


def workspace_option(func: F) -> F:
    """``-w/--workspace`` with ``--threads`` and ``--memory-limit`` for the DuckDB work of the command."""
    func = click.option(
        "--memory-limit",
        "memory_limit",
        metavar="SIZE",
        expose_value=False,
        callback=_set_engine,
        help="DuckDB memory limit, e.g. 2GB (default: 60 % of memory, at most 2.25 GiB); more spills to disk.",
    )(func)
    func = click.option(
        "--threads",
        "threads",
        type=click.IntRange(min=1),
        expose_value=False,
        callback=_set_engine,
        help="Threads for DuckDB, the k-path counter and the pattern miner and matcher (default: all cores).",
    )(func)
    return plain_workspace_option(func)


def tz_option(func: F) -> F:
    """``--tz``: the time zone whose midnights cut the data into days and halves (default UTC)."""
    return click.option(
        "--tz",
        metavar="ZONE",
        help="Time zone whose midnights cut the data into days and halves, e.g. Europe/Lisbon (default: UTC).",
    )(func)


def min_users_option(what: str = "rows") -> Callable[[F], F]:
    """The privacy floor shared by every command that lists paths."""

    def decorate(func: F) -> F:
        return click.option(
            "--min-users",
            default=5,
            show_default=True,
            type=click.IntRange(min=1),
            help=f"Privacy floor: hide {what} taken by fewer distinct users (the output says how many).",
        )(func)

    return decorate


def _emit_json(data: Any) -> None:
    click.echo(json.dumps(data, indent=2, sort_keys=True, default=str))


def _emit_csv(header: list[str], rows: list[tuple[Any, ...]]) -> None:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    writer.writerows(rows)
    click.echo(buffer.getvalue(), nl=False)


def _emit_result(
    result: dict[str, Any],
    output_format: str,
    *,
    table: str,
    header: list[str],
    rows: Callable[[], list[tuple[Any, ...]]],
    csv_note: str | None = None,
) -> None:
    """JSON, CSV or the named rich renderer of gapfinder.report: the one output switch of every listing."""
    if output_format == "json":
        _emit_json(result)
    elif output_format == "csv":
        _emit_csv(header, rows())
        if csv_note:
            click.echo(csv_note, err=True)
    else:
        from gapfinder import report
        from gapfinder.quoting import terminal_safe

        getattr(report, table)(terminal_safe(result), _stdout_console())


def _internal_error_line(exc: BaseException) -> str:
    """Where a bug happened, without the exception's text (it may quote data)."""
    frames = traceback.extract_tb(exc.__traceback__)
    ours = [f for f in frames if "gapfinder" in f.filename.replace("\\", "/").split("/site-packages/")[-1]]
    where = f" at {Path(ours[-1].filename).name}:{ours[-1].lineno}" if ours else ""
    return f"gapfinder: internal error ({type(exc).__name__}{where}); rerun with --debug and report it"


class GapfinderGroup(click.Group):
    """Every failure becomes one line on stderr: exit 2 for bad input or usage, 3 for a bug.

    Library errors (GapfinderError), database errors (their text reduced so that no row content
    is echoed), file-system errors (full disk, read-only folder) and click's own usage errors
    all end the same way; ``--debug`` shows the traceback.
    """

    def main(self, *args: Any, standalone_mode: bool = True, **kwargs: Any) -> Any:
        run_group: Callable[..., Any] = super().main
        if not standalone_mode:
            return run_group(*args, standalone_mode=False, **kwargs)
        try:
            code = run_group(*args, standalone_mode=False, **kwargs)
        except click.ClickException as exc:
            context = getattr(exc, "ctx", None)
            where = f" (see {context.command_path} --help)" if context is not None else ""
            message = " ".join(exc.format_message().split())
            click.echo(f"gapfinder: {printable(message)}{where}", err=True)
            sys.exit(2 if isinstance(exc, click.UsageError) else exc.exit_code)
        except click.exceptions.Abort:
            click.echo("gapfinder: aborted", err=True)
            sys.exit(1)
        sys.exit(code if isinstance(code, int) else 0)

    def invoke(self, ctx: click.Context) -> Any:
        import duckdb

        debug = bool(ctx.obj and ctx.obj.get("debug"))
        try:
            return super().invoke(ctx)
        except GapfinderError as exc:
            if debug:
                traceback.print_exc()
            click.echo(f"gapfinder: {printable(' '.join(str(exc).split()))}", err=True)
            ctx.exit(2)
        except duckdb.Error as exc:
            if debug:
                traceback.print_exc()
            click.echo(f"gapfinder: {describe_database_error(exc)}", err=True)
            ctx.exit(2)
        except BrokenPipeError:  # the reader of stdout went away (`| head`): nothing to report
            with contextlib.suppress(OSError):
                os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
            ctx.exit(0)
        except OSError as exc:
            if debug:
                traceback.print_exc()
            name = f"{exc.filename}: " if exc.filename else ""
            click.echo(f"gapfinder: {name}{exc.strerror or type(exc).__name__}", err=True)
            ctx.exit(2)
        except KeyboardInterrupt:
            click.echo("gapfinder: interrupted; the workspace keeps its previous results", err=True)
            ctx.exit(130)
        except (click.ClickException, click.exceptions.Exit, click.exceptions.Abort):
            raise
        except Exception as exc:  # a bug: say so in one line unless --debug asks for more
            if debug:
                traceback.print_exc()
            else:
                click.echo(_internal_error_line(exc), err=True)
            ctx.exit(3)


@click.group(cls=GapfinderGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="gapfinder")
@click.option("--debug", is_flag=True, envvar="GAPFINDER_DEBUG", help="Show tracebacks for errors.")
@click.pass_context
def cli(ctx: click.Context, debug: bool) -> None:
    """Measure how much of real usage your automated tests cover, and what they miss.

    \b
    All at once:   gapfinder run TELEMETRY --tests TRACES --out report/
    Step by step:  profile → suite → paths --kind patterns → coverage / gaps
                   → plan → export; audit, check and report for the quarter and CI.
    Try the invented demo: gapfinder run sample_telemetry/field
    --tests sample_telemetry/tests/suite_traces.csv --out report/
    """
    from gapfinder.workspace import use_engine

    ctx.ensure_object(dict)
    ctx.obj["debug"] = debug
    use_engine(threads=None, memory_limit=None)  # each command starts from the defaults


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
@click.option(
    "--as",
    "as_format",
    type=click.Choice(["parquet", "otlp", "export"]),
    default="parquet",
    show_default=True,
    help="Field telemetry as monthly Parquet files, as OpenTelemetry logs (OTLP/JSON, one request per line), "
    "or as an analytics export (generic names with JSON properties, ids inside names).",
)
def demo(out: str, events: int, seed: int, as_format: str) -> None:
    """Generate the invented tool-library demo: field telemetry, test traces and a manifest."""
    from gapfinder.demo import generate_demo

    result = generate_demo(out, events=events, seed=seed, as_format=as_format)
    kind = {"parquet": "Parquet files", "otlp": "OpenTelemetry log files", "export": "analytics export files"}[
        as_format
    ]
    click.echo(
        f"wrote {result.event_count:,} field events ({result.session_count:,} sessions, "
        f"{result.user_count:,} members) in {len(result.field_files)} monthly {kind} under "
        f"{result.out / 'field'}",
        err=True,
    )
    click.echo(f"test traces: {result.suite_file}; what was planted: {result.manifest_file}", err=True)


@cli.command()
@click.argument("telemetry", nargs=-1, required=True)
@plain_workspace_option
@profile_options
@click.option(
    "--top", default=10, show_default=True, type=click.IntRange(min=1), help="Rows per listing in the summary."
)
@min_users_option("paths")
@output_options
def profile(
    telemetry: tuple[str, ...], workspace: str, top: int, min_users: int, output_format: str, **values: Any
) -> None:
    """Read telemetry, form sessions and build the usage profile in the workspace.

    TELEMETRY is one or more Parquet, CSV/TSV or NDJSON files, folders (searched recursively,
    hive partitions included) or globs.
    """
    from gapfinder.usage_profile import profile_telemetry

    options = profile_options_from(values)
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
    type=FiniteFloat(min=0, min_open=True),
    help="Least sessions a row needs: a fraction of all sessions (below 1) or a count "
    "[default: 0.01 for patterns, none otherwise].",
)
@min_users_option("rows")
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
@click.option(
    "--each-pattern",
    is_flag=True,
    help="Patterns: list every pattern, also those riding on the same sessions as a listed one "
    "(default: one row per journey).",
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
    each_pattern: bool,
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
            ws,
            kind,
            min_support=min_support,
            min_users=min_users,
            top=top,
            max_length=max_length,
            mining=mining,
            one_per_journey=not each_pattern,
        )
    _render_paths(result, output_format)


def _render_paths(result: dict[str, Any], output_format: str) -> None:
    extra = [k for k in ("occurrences", "error_rate", "closed") if any(k in r for r in result["rows"])]
    _emit_result(
        result,
        output_format,
        table="render_paths",
        header=["path", "k", "sessions", "users", "share", *extra],
        rows=lambda: [
            (json.dumps(r["path"]), r["k"], r["sessions"], r["users"], r["share"], *(r.get(k) for k in extra))
            for r in result["rows"]
        ],
        csv_note=f"{result['suppressed']:,} rows held back: fewer than {result['min_users']} users",
    )


@cli.command()
@workspace_option
@click.option(
    "--max-gap",
    default=0,
    show_default=True,
    type=click.IntRange(min=0),
    help="Lenient matching: steps a test may have between a path's items (0: strict only).",
)
@min_users_option("unique contributions")
@output_options
def coverage(workspace: str, max_gap: int, min_users: int, output_format: str) -> None:
    """How much of real usage the stored suite exercises, per metric, unweighted and weighted.

    Metrics: features, transitions (START/END included), k-paths and mined patterns; each
    unweighted (distinct items) and weighted by field occurrences, sessions and distinct users,
    strict (contiguous) and lenient (`--max-gap`). Also what each test contributes uniquely.
    """
    from gapfinder.coverage import coverage_report
    from gapfinder.workspace import Workspace

    with Workspace(workspace, read_only=True) as ws:
        result = coverage_report(ws, max_gap=max_gap, min_users=min_users)
    keys = ["items", "exercised", "unweighted", "by_occurrences", "by_sessions", "by_users"]
    _emit_result(
        result,
        output_format,
        table="render_coverage",
        header=["metric", "mode", *keys],
        rows=lambda: [
            (metric, mode, *(v[k] for k in keys))
            for metric, modes in result["metrics"].items()
            for mode, v in modes.items()
        ],
    )


@cli.command()
@workspace_option
@click.option("--top", default=20, show_default=True, type=click.IntRange(min=1), help="Gaps to list.")
@min_users_option("gaps")
@click.option(
    "--kind",
    "kinds",
    multiple=True,
    type=click.Choice(["feature", "transition", "kpath", "pattern"]),
    help="Candidate kinds to consider; repeatable [default: all].",
)
@click.option(
    "--max-gap",
    default=0,
    show_default=True,
    type=click.IntRange(min=0),
    help="Steps a test may have between a path's items and still exercise it (0: contiguous).",
)
@tz_option
@output_options
def gaps(
    workspace: str, top: int, min_users: int, kinds: tuple[str, ...], max_gap: int, tz: str | None, output_format: str
) -> None:
    """The common paths no test exercises, ranked, with the evidence for each.

    Each gap gives the path, sessions, distinct users, share of sessions with a 95 % Wilson
    interval, the errors on its own steps and on the step right after (against the same events
    elsewhere), its trend between the data's two halves, the segments it concentrates on, example
    complete sessions and a one-line reason. Gaps that share more than half of their sessions are
    one row per journey, the others folded under it. Run `gapfinder paths --kind patterns` first to
    include mined journeys.
    """
    from gapfinder.gaps import GAP_KINDS, GapOptions, find_gaps
    from gapfinder.workspace import Workspace

    options = GapOptions(top=top, min_users=min_users, kinds=kinds or GAP_KINDS, max_gap=max_gap, tz=tz)
    with Workspace(workspace, read_only=True) as ws:
        result = find_gaps(ws, options)
    fields = ["rank", "kind", "path", "sessions", "users", "share", "share_low", "share_high", "error_rate"]
    fields += ["error_lift", "trend", "score", "folded", "reason"]

    def cell(gap: dict[str, Any], key: str) -> Any:
        if key == "path":
            return json.dumps(gap["path"])
        if key == "trend":
            return gap["trend"]["label"]
        return len(gap["folded"]) if key == "folded" else gap[key]

    _emit_result(
        result,
        output_format,
        table="render_gaps",
        header=fields,
        rows=lambda: [tuple(cell(g, k) for k in fields) for g in result["gaps"]],
        csv_note=f"{result['suppressed']:,} candidates held back: fewer than {result['min_users']} users",
    )


@cli.command()
@workspace_option
@click.option(
    "--max-share",
    default=0.01,
    show_default=True,
    type=FiniteFloat(0, 1),
    help="List tests whose journey is in at most this share of sessions.",
)
@click.option(
    "--max-gap",
    default=0,
    show_default=True,
    type=click.IntRange(min=0),
    help="Other events a session may have between the test's steps (0: one contiguous run).",
)
@min_users_option("journeys")
@output_options
def unused(workspace: str, max_share: float, max_gap: int, min_users: int, output_format: str) -> None:
    """Tested paths the field rarely or never takes: candidates to run less often.

    For each test, counts the sessions that take its journey (its steps in order) and lists the
    tests under `--max-share`, rarest first, with their share of the suite's steps.
    """
    from gapfinder.gaps import unused_tests
    from gapfinder.workspace import Workspace

    with Workspace(workspace, read_only=True) as ws:
        result = unused_tests(ws, max_share=max_share, max_gap=max_gap, min_users=min_users)
    columns = ["test_id", "path", "sessions", "share", "suite_step_share", "reason"]
    _emit_result(
        result,
        output_format,
        table="render_unused",
        header=columns,
        rows=lambda: [tuple(json.dumps(r[c]) if c == "path" else r[c] for c in columns) for r in result["unused"]],
    )


@cli.command()
@workspace_option
@click.option("--budget", default=8, show_default=True, type=click.IntRange(min=1), help="Tests (or steps) to spend.")
@click.option(
    "--cost",
    type=click.Choice(["tests", "steps"]),
    default="tests",
    show_default=True,
    help="What the budget counts: whole tests, or steps (longer scenarios cost more).",
)
@click.option(
    "--objective",
    type=click.Choice(["transitions", "kpaths", "patterns"]),
    default="transitions",
    show_default=True,
    help="What a scenario buys: field occurrences of untested transitions, k-paths, or sessions of mined patterns.",
)
@click.option(
    "--candidates",
    default=30,
    show_default=True,
    type=click.IntRange(min=1),
    help="Top gaps turned into candidate scenarios.",
)
@click.option(
    "--sample",
    type=click.IntRange(min=1),
    help="Instead: draw this many complete scenarios as random walks of the usage chain (statistical usage "
    "testing); each distinct walk is listed once with how often it was drawn.",
)
@click.option("--seed", default=1, show_default=True, type=int, help="Random seed of --sample.")
@min_users_option("gaps")
@tz_option
@output_options
def plan(
    workspace: str,
    budget: int,
    cost: str,
    objective: str,
    candidates: int,
    sample: int | None,
    seed: int,
    min_users: int,
    tz: str | None,
    output_format: str,
) -> None:
    """Choose next sprint's scenarios: the set within the budget that buys the most coverage.

    Each candidate is the most probable complete session through a top gap under the usage model;
    the choice is greedy on usage-weighted gain, with its guarantee stated. The plan is stored
    for `gapfinder export`.
    """
    from gapfinder.plan import PlanOptions, make_plan
    from gapfinder.workspace import Workspace

    options = PlanOptions(
        budget=budget,
        cost=cost,
        objective=objective,
        candidates=candidates,
        min_users=min_users,
        tz=tz,
        sample=sample or 0,
        seed=seed,
    )
    with Workspace(workspace, read_only=not os.path.exists(workspace)) as ws:
        result = make_plan(ws, options)
    columns = ["scenario", "path", "steps", "gain", "gain_share", "gaps", "sessions", "users", "share", "reason"]
    if sample:
        columns = ["scenario", "path", "steps", "drawn", "probability", "gain", "gain_share", "share", "reason"]
    _emit_result(
        result,
        output_format,
        table="render_plan",
        header=columns,
        rows=lambda: [
            tuple(json.dumps(r[c]) if isinstance(r[c], list) else r[c] for c in columns) for r in result["scenarios"]
        ],
    )


@cli.command()
@workspace_option
@click.option("--to", "to", required=True, type=click.Path(file_okay=False), help="Folder to write the files into.")
@click.option(
    "--as",
    "as_format",
    type=click.Choice(["pytest", "gherkin", "json", "csv"]),
    default="pytest",
    show_default=True,
    help="pytest modules with a step registry, Gherkin features, or the plan as JSON or CSV.",
)
@click.option("--force", is_flag=True, help="Overwrite files that exist and differ.")
@click.option(
    "--phrases",
    type=click.Path(dir_okay=False),
    help="For Gherkin: a YAML file mapping event names to step phrases (`phrases: {event: phrase}`).",
)
def export(workspace: str, to: str, as_format: str, force: bool, phrases: str | None) -> None:
    """Write the stored plan's scenarios as test skeletons to drop into a test repository.

    Files are named from the scenarios, written only inside --to, and never over a different
    existing file without --force; exporting the same plan again gives identical files. Exporting
    pytest skeletons again adds new step stubs to gapfinder_steps.py and never changes a step
    already there; an edited test module is kept (--force replaces test modules only).
    """
    from gapfinder.export import export_plan
    from gapfinder.plan import load_plan
    from gapfinder.workspace import Workspace

    with Workspace(workspace, read_only=True) as ws:
        stored = load_plan(ws)
    result = export_plan(stored, to, as_format=as_format, force=force, phrase_map=phrases)
    click.echo(f"wrote {len(result.files)} file(s) for {result.scenarios} scenario(s) to {result.folder}:", err=True)
    for name in result.files:
        click.echo(str(result.folder / name))
    for name in result.kept:
        click.echo(f"kept {result.folder / name}: it was edited since the last export (--force replaces it)", err=True)


@cli.command(name="audit")
@workspace_option
@click.option("--period", help="The period to audit, FIRST..LAST days (default: the recent half of the data).")
@click.option("--against", help="The period to compare with, FIRST..LAST days (default: the earlier half).")
@click.option(
    "--against-workspace",
    type=click.Path(dir_okay=False, exists=True),
    help="Compare with the whole of another workspace (e.g. last quarter's) instead of a period.",
)
@click.option("--by", type=click.Choice(["app_version", "platform"]), help="Also show coverage per segment value.")
@click.option(
    "--trend", type=click.Choice(["month", "week"]), default="month", show_default=True, help="Coverage trend step."
)
@click.option(
    "--top", default=10, show_default=True, type=click.IntRange(min=1), help="Movers, new and vanished paths to list."
)
@min_users_option("paths")
@tz_option
@output_options
def audit_command(
    workspace: str,
    period: str | None,
    against: str | None,
    against_workspace: str | None,
    by: str | None,
    trend: str,
    top: int,
    min_users: int,
    tz: str | None,
    output_format: str,
) -> None:
    """How usage and coverage moved between two periods, or against another workspace.

    Reports the Jensen–Shannon distance of the feature and transition distributions, the paths
    whose share moved most (with the change's interval and a two-proportion test), new and
    vanished paths, coverage in each period and by month or week, per segment with --by, and
    tests whose journey left the field.
    """
    from gapfinder.audit import AuditOptions, audit, parse_period
    from gapfinder.periods import time_zone
    from gapfinder.workspace import Workspace

    zone = time_zone(tz)
    options = AuditOptions(
        period=parse_period(period, zone=zone) if period else None,
        against=parse_period(against, "--against", zone=zone) if against else None,
        against_workspace=against_workspace,
        by=by,
        trend=trend,
        top=top,
        min_users=min_users,
        tz=tz,
    )
    with Workspace(workspace, read_only=True) as ws:
        result = audit(ws, options)
    _emit_result(
        result,
        output_format,
        table="render_audit",
        header=["kind", "path", "share_before", "share_now", "change", "change_low", "change_high", "p_value"],
        rows=lambda: [
            (
                m["kind"],
                json.dumps(m["path"]),
                m["share_before"],
                m["share_now"],
                m["change"],
                m.get("change_low"),
                m.get("change_high"),
                m.get("p_value"),
            )
            for m in result["movers"]
        ],
    )


@cli.command()
@workspace_option
@click.option(
    "--min-coverage",
    "floors",
    multiple=True,
    metavar="METRIC[.MODE][.WEIGHTING]=VALUE",
    help="A floor, e.g. transitions=0.80 (strict, by sessions) or kpaths.unweighted=0.1; repeatable.",
)
@click.option("--max-new-gaps", type=click.IntRange(min=0), help="Most new gaps allowed among the top-ranked ones.")
@click.option(
    "--max-divergence",
    type=FiniteFloat(min=0),
    metavar="BITS",
    help="Most divergence allowed between how the tests step and how users step (Whittaker-Thomason "
    "discriminant, bits per step; see `gapfinder coverage`).",
)
@click.option(
    "--top",
    default=10,
    show_default=True,
    type=click.IntRange(min=1),
    help="How many top gaps --max-new-gaps looks at.",
)
@click.option(
    "--baseline",
    type=click.Path(dir_okay=False),
    help="An earlier `gapfinder gaps --format json` output: gaps not in it are new.",
)
@click.option(
    "--max-gap", default=0, show_default=True, type=click.IntRange(min=0), help="Lenient matching for coverage."
)
@min_users_option("gaps")
@tz_option
@output_options
def check(
    workspace: str,
    floors: tuple[str, ...],
    max_new_gaps: int | None,
    max_divergence: float | None,
    top: int,
    baseline: str | None,
    max_gap: int,
    min_users: int,
    tz: str | None,
    output_format: str,
) -> None:
    """A gate for the test pipeline: exit 0 when coverage holds its floors, 1 when it slips.

    Each --min-coverage floor and the --max-new-gaps ceiling is checked and printed with its
    value; exit code 1 when any fails, 2 for bad input.
    """
    from gapfinder.gate import parse_floor, run_gate
    from gapfinder.workspace import Workspace

    parsed = [parse_floor(f) for f in floors]
    with Workspace(workspace, read_only=True) as ws:
        result = run_gate(
            ws,
            parsed,
            max_new_gaps=max_new_gaps,
            max_divergence=max_divergence,
            top=top,
            baseline=baseline,
            max_gap=max_gap,
            min_users=min_users,
            tz=tz,
        )
    if output_format == "json":
        _emit_json(result)
    elif output_format == "csv":
        _emit_csv(
            ["check", "value", "limit", "passed"],
            [(c["check"], c["value"], c["limit"], c["passed"]) for c in result["checks"]],
        )
    else:
        for c in result["checks"]:
            mark = "pass" if c["passed"] else "FAIL"
            if c["check"].startswith("divergence"):
                value, limit = f"{c['value']:.3f} bits/step", f"{c['limit']:.3f} bits/step"
            else:
                value = f"{100 * c['value']:.1f} %" if isinstance(c["value"], float) else str(c["value"])
                limit = f"{100 * c['limit']:.1f} %" if isinstance(c["limit"], float) else str(c["limit"])
            relation = "≥" if c["check"].startswith("coverage") else "≤"
            click.echo(f"{mark}  {c['check']}: {value} (needs {relation} {limit})")
            for path in c.get("new_gaps", []):
                click.echo(f"      new: {printable(' › '.join(path))}")
        click.echo("all checks hold" if result["passed"] else "coverage gate failed")
    if not result["passed"]:
        raise click.exceptions.Exit(1)


@cli.command()
@workspace_option
@click.option("-o", "--output", "html_path", type=click.Path(dir_okay=False), help="Write the HTML report here.")
@click.option("--markdown", "markdown_path", type=click.Path(dir_okay=False), help="Write the Markdown report here.")
@click.option("--top", default=10, show_default=True, type=click.IntRange(min=1), help="Gaps in the report.")
@min_users_option("paths")
@tz_option
def report(
    workspace: str, html_path: str | None, markdown_path: str | None, top: int, min_users: int, tz: str | None
) -> None:
    """Write the coverage report: one self-contained HTML page and/or a Markdown page.

    Headline coverage by metric, its trend by month, a diagram of the most used paths with the
    untested transitions standing out, the top gaps with their evidence, the stored plan and how
    usage moved between the earlier and recent half of the period.
    """
    from gapfinder.report import render_html, render_markdown
    from gapfinder.report.data import report_data
    from gapfinder.safe_io import check_target, write_text
    from gapfinder.workspace import Workspace

    if not html_path and not markdown_path:
        raise click.UsageError("give -o FILE.html and/or --markdown FILE.md")
    with Workspace(workspace, read_only=True) as ws:
        data = report_data(ws, top=top, min_users=min_users, tz=tz)
    pages = [(p, render(data)) for p, render in ((html_path, render_html), (markdown_path, render_markdown)) if p]
    for path, _text in pages:  # both checked before either is written
        if not Path(path).parent.is_dir():
            raise click.UsageError(f"{Path(path).parent} does not exist: create the folder first")
        check_target(Path(path).parent, Path(path).name, option="-o/--markdown")
    for path, text in pages:
        click.echo(str(write_text(path, text, option="-o/--markdown")))


def _render_summary(summary: dict[str, Any], output_format: str) -> None:
    from gapfinder.report import render_profile, summary_rows

    if output_format == "json":
        _emit_json(summary)
    elif output_format == "csv":
        _emit_csv(["key", "value"], summary_rows(summary))
    else:
        from gapfinder.quoting import terminal_safe

        render_profile(terminal_safe(summary), _stdout_console())


# Command groups in their own modules register themselves on `cli` when imported.
from gapfinder.cli import effort_command, families_command, run_command, suite_commands  # noqa: E402, F401


def main() -> None:
    """Entry point of the ``gapfinder`` script."""
    cli(prog_name="gapfinder")


@functools.cache
def command_names() -> list[str]:
    """Every command of the CLI (used by the documentation test)."""
    return sorted(cli.commands)
