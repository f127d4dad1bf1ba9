"""The terminal table of `gapfinder effort`: test effort against usage, per feature."""

from __future__ import annotations

from typing import Any

from rich.console import Console

from gapfinder.report.terminal import ACCENT, MUTED, _pct, _table

__all__ = ["render_effort"]


def _signed(x: float) -> str:
    return f"{100 * x:+.1f} pt"


def render_effort(result: dict[str, Any], console: Console) -> None:
    """Features by how far the suite's effort is from their usage, with the recommended allocation."""
    console.print(
        f"[bold {ACCENT}]Test effort against usage[/] · {result['suite_tests']} tests, {result['test_steps']:,} "
        f"steps · allocation for {result['allocated_tests']} tests · workspace {result['workspace']}"
    )
    table = _table(
        "Share of usage against share of test steps (most different first)",
        ("feature", "left"),
        ("usage", "right"),
        ("test steps", "right"),
        ("tests", "right"),
        ("steps − usage (95 % interval)", "right"),
        ("verdict", "left"),
        ("recommended tests", "right"),
        ("today", "right"),
    )
    for row in result["features"]:
        verdict = row["verdict"]
        style = "bold red" if verdict == "under-tested" else "yellow" if verdict == "over-tested" else MUTED
        minimum = f" (min {row['minimum']})" if row.get("minimum") else ""
        table.add_row(
            row["event"],
            _pct(row["usage_share"]),
            f"{_pct(row['step_share'])} ({row['test_steps']})",
            str(row["tests"]),
            f"{_signed(row['difference'])} ({_signed(row['difference_low'])} … {_signed(row['difference_high'])})",
            f"[{style}]{verdict}[/]",
            f"{row['recommended_tests']}{minimum}",
            str(row["today_tests"]),
        )
    notes = [result["method"]]
    if result["suppressed"]:
        notes.append(
            f"{result['suppressed']} feature(s) under the privacy floor of {result['min_users']} users left out"
        )
    table.caption = " · ".join(notes)
    table.caption_style = MUTED
    console.print(table)
