"""`gapfinder effort`: where the suite's effort and the users' usage disagree, per feature."""

from __future__ import annotations

import click

from gapfinder.cli import _emit_result, cli, min_users_option, output_options, workspace_option


@cli.command()
@workspace_option
@click.option(
    "--tests",
    "suite_size",
    type=click.IntRange(min=1),
    help="Suite size to allocate by the operational profile (default: the stored suite's number of tests).",
)
@click.option(
    "--critical",
    "critical",
    multiple=True,
    metavar="FEATURE=MIN",
    help="A rare but critical feature and the fewest tests it must get, e.g. pay_deposit_card=3; repeatable.",
)
@min_users_option("features")
@output_options
def effort(
    workspace: str, suite_size: int | None, critical: tuple[str, ...], min_users: int, output_format: str
) -> None:
    """Test effort against usage: each feature's share of usage beside its share of test steps.

    Over- and under-tested features (the difference's 95 % interval excludes 0), and the test
    allocation the operational profile recommends (proportional to usage, critical features at
    their minimum) against how many tests touch each feature today.
    """
    from gapfinder.effort import EffortOptions, effort_report, parse_minimums
    from gapfinder.workspace import Workspace

    options = EffortOptions(tests=suite_size, minimums=parse_minimums(critical), min_users=min_users)
    with Workspace(workspace, read_only=True) as ws:
        result = effort_report(ws, options)
    keys = ["event", "usage_share", "test_steps", "step_share", "tests", "difference", "difference_low"]
    keys += ["difference_high", "verdict", "recommended_tests", "today_tests"]
    _emit_result(
        result,
        output_format,
        table="render_effort",
        header=keys,
        rows=lambda: [tuple(row[k] for k in keys) for row in result["features"]],
    )
