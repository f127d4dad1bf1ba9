"""`gapfinder families`: what the users' sessions fall into, and how well each family is tested."""

from __future__ import annotations

import click

from gapfinder.cli import _emit_result, cli, min_users_option, output_options, workspace_option


@cli.command()
@workspace_option
@click.option(
    "--min-paths",
    default=2,
    show_default=True,
    type=click.IntRange(min=2),
    help="Fewest distinct paths a family may have (HDBSCAN's minimum cluster size).",
)
@click.option(
    "--max-paths",
    default=5_000,
    show_default=True,
    type=click.IntRange(min=2),
    help="The most taken distinct paths that are clustered; the rest join the family of the most similar one.",
)
@min_users_option("families")
@output_options
def families(workspace: str, min_paths: int, max_paths: int, min_users: int, output_format: str) -> None:
    """Journey families: sessions grouped by the journeys they contain, each named by its most
    typical path, with its share of sessions and users, how much of it the suite tests, and its
    most taken untested transitions.
    """
    from gapfinder.families import FamilyOptions, journey_families
    from gapfinder.workspace import Workspace

    options = FamilyOptions(min_family_paths=min_paths, max_paths=max_paths, min_users=min_users)
    with Workspace(workspace, read_only=True) as ws:
        result = journey_families(ws, options)
    columns = ["name", "distinct_paths", "sessions", "session_share", "users", "user_share"]
    columns += ["transitions_exercised_by_occurrences"]
    _emit_result(
        result,
        output_format,
        table="render_families",
        header=columns,
        rows=lambda: [tuple(f[c] for c in columns) for f in result["families"]],
    )
