"""`gapfinder run`: the whole job at once, with every option of the stages it runs."""

from __future__ import annotations

from typing import Any

import click

from gapfinder.cli import _progress, cli, min_users_option, profile_options, profile_options_from, tz_option
from gapfinder.cli.suite_commands import print_problems, suite_options, suite_options_from


@cli.command(name="run")
@click.argument("telemetry", nargs=-1, required=True)
@click.option(
    "--tests",
    "tests",
    multiple=True,
    required=True,
    help="Test sources (folders or files, as for `gapfinder suite`); repeatable.",
)
@click.option(
    "--out",
    required=True,
    type=click.Path(file_okay=False),
    help="Folder for the workspace, plan, skeletons and summary.",
)
@click.option("--budget", default=8, show_default=True, type=click.IntRange(min=1), help="New scenarios to plan.")
@click.option("--top", default=10, show_default=True, type=click.IntRange(min=1), help="Gaps in the summary.")
@min_users_option("paths")
@click.option("--force", is_flag=True, help="Overwrite skeleton files that exist and differ (never implemented steps).")
@tz_option
@profile_options
@suite_options(map_alias=False)
def run_all(
    telemetry: tuple[str, ...],
    tests: tuple[str, ...],
    out: str,
    budget: int,
    top: int,
    min_users: int,
    force: bool,
    tz: str | None,
    **values: Any,
) -> None:
    """The whole job at once: profile, suite, journeys, gaps, plan, skeletons and a Markdown summary.

    Takes the options of `profile` (column mapping, timestamps, sessions, privacy key, memory) and
    of `suite` (steps map, aliases, tags, outcomes, test-run telemetry; `--trace-map` maps trace
    table columns). Writes OUT/workspace.duckdb, OUT/summary.md, OUT/gapfinder_plan.json and .csv,
    and skeletons under OUT/pytest/ and OUT/gherkin/. Steps already implemented in
    OUT/pytest/gapfinder_steps.py are kept. After profiling, DuckDB gets 60 % of the memory limit,
    leaving room for the arrays gap evidence holds in Python.
    """
    from gapfinder.pipeline import run_pipeline
    from gapfinder.plan import PlanOptions

    profile = profile_options_from(values)
    suite = suite_options_from(values, ts_unit=profile.ts_unit, ts_format=profile.ts_format)
    with _progress(total=6) as step:
        result = run_pipeline(
            telemetry,
            tests,
            out,
            profile=profile,
            suite=suite,
            plan=PlanOptions(budget=budget, min_users=min_users, tz=tz),
            top=top,
            min_users=min_users,
            force=force,
            progress=step,
        )
    suite_summary = result.summary["suite"]
    print_problems(suite_summary["problems"])
    plan_result = result.summary["plan"]
    coverage = plan_result["coverage"].get("transitions", {})
    click.echo(
        f"suite: {suite_summary['counted_test_count']:,} of {suite_summary['test_count']:,} tests counted; "
        f"{suite_summary['mapped_step_count']:,} steps mapped to field events, "
        f"{suite_summary['unmapped_step_count']:,} unmapped",
        err=True,
    )
    click.echo(
        f"{len(result.summary['gaps']['gaps'])} gaps ranked; {len(plan_result['scenarios'])} scenario(s) planned; "
        f"transition coverage by sessions {100 * (coverage.get('before') or 0):.1f} % → "
        f"{100 * (coverage.get('after') or 0):.1f} %",
        err=True,
    )
    for name in result.kept:
        click.echo(f"kept {result.out / name}: it was edited since the last run (--force replaces it)", err=True)
    click.echo(f"summary: {result.out / 'summary.md'}")
    for name in result.files:
        if name != "summary.md":
            click.echo(str(result.out / name))
