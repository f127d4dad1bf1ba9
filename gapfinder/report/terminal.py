"""Terminal rendering of summaries with rich, and their flat form for CSV.

gapfinder's own look: headings in teal, counts right-aligned, paths written with ' › ' between
steps, and every table footed by what the privacy floor held back.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from typing import Any

from rich.console import Console
from rich.table import Table

__all__ = ["format_path", "render_paths", "render_profile", "summary_rows"]

ACCENT = "dark_cyan"
MUTED = "grey50"


def format_path(path: list[str]) -> str:
    """Event names joined the way gapfinder prints paths."""
    return " › ".join(path)


def _table(title: str, *columns: tuple[str, str]) -> Table:
    table = Table(title=title, title_style=f"bold {ACCENT}", title_justify="left", header_style="bold")
    for name, justify in columns:
        table.add_column(name, justify=justify)  # type: ignore[arg-type]
    return table


def _pct(x: float) -> str:
    return f"{100 * x:.1f} %"


def render_profile(summary: dict[str, Any], console: Console) -> None:
    """Print the profile summary as a headline and a handful of tables."""
    reading, sessions = summary["reading"], summary["sessions"]
    rejected = reading.get("rejected", {})
    console.print(f"[bold {ACCENT}]Usage profile[/] · workspace {summary['workspace']}")
    console.print(
        f"read {reading.get('rows_read', 0):,} rows from {reading.get('file_count', 0)} "
        f"{reading.get('format', '')} file(s): {reading.get('label', '')}"
    )
    console.print(f"timestamps: {reading.get('timestamp', '')}")
    if reading.get("naive_timestamps"):
        console.print(f"  {reading['naive_timestamps']:,} timestamps had no time zone and were taken as UTC")
    if rejected:
        parts = ", ".join(f"{n:,} {reason}" for reason, n in sorted(rejected.items()))
        console.print(f"[yellow]rejected rows[/]: {parts}")
    else:
        console.print("rejected rows: none")
    if reading.get("noise_dropped"):
        console.print(f"noise events dropped on request: {reading['noise_dropped']:,}")
    console.print(f"period: {reading.get('first_ts')} → {reading.get('last_ts')}")
    length = sessions["length"]
    console.print(
        f"[bold]{sessions['users']:,}[/] users · [bold]{sessions['count']:,}[/] sessions "
        f"(from {sessions['formed_by']}) · [bold]{summary['features']['count']}[/] features · "
        f"{sessions['events']:,} events"
    )
    console.print(
        f"session length: median {length['median']}, p95 {length['p95']}, max {length['max']} events"
        + (f"; {sessions['truncated']:,} sessions cut at the cap" if sessions["truncated"] else "")
    )
    console.print(
        f"sessions with an error: {sessions['with_errors']:,}"
        f" ({_pct(sessions['with_errors'] / max(sessions['count'], 1))})"
    )
    model = summary["usage_model"]
    console.print(f"usage model: expected session length {model['expected_session_length']:.2f} events")

    features = _table(
        "Most used features",
        ("feature", "left"),
        ("events", "right"),
        ("sessions", "right"),
        ("users", "right"),
        ("share of sessions", "right"),
    )
    for r in summary["features"]["top"]:
        features.add_row(r["event"], f"{r['occurrences']:,}", f"{r['sessions']:,}", f"{r['users']:,}", _pct(r["share"]))
    console.print(features)
    _print_paths(
        console,
        "Most taken transitions",
        summary["transitions"]["top"],
        summary["transitions"]["suppressed"],
        summary["privacy"]["min_users"],
    )
    _print_paths(
        console,
        "Most taken complete paths",
        summary["full_paths"]["top"],
        summary["full_paths"]["suppressed"],
        summary["privacy"]["min_users"],
        note=f"{summary['full_paths']['distinct']:,} distinct paths in all",
    )

    likely = _table("Most probable complete paths under the usage model", ("path", "left"), ("probability", "right"))
    for r in model["most_probable_paths"]:
        likely.add_row(format_path(r["path"]), f"{r['probability']:.4f}")
    console.print(likely)

    automated = summary["automated"]
    if automated["users"]:
        console.print(
            f"[bold {ACCENT}]Automated traffic[/] kept apart: {automated['users']} account(s), "
            f"{automated['sessions']:,} sessions, {automated['events']:,} events"
        )
        for account in automated["accounts"]:
            console.print(
                f"  account {account['account_no']}: {'; '.join(account['reasons'])}; "
                f"typically {format_path(account['typical_path_start'])} …"
            )
    else:
        console.print("automated traffic: none flagged")


_KIND_TITLES = {
    "features": "Features",
    "transitions": "Transitions (START and END included)",
    "kpaths": "Contiguous paths of 3 or more states",
    "patterns": "Journeys: steps in this order, other events allowed between",
    "full": "Complete session paths",
}


def render_paths(result: dict[str, Any], console: Console) -> None:
    """Print a path listing (``gapfinder paths``) with what produced it and what was held back."""
    kind = result["kind"]
    rows = result["rows"]
    columns: list[tuple[str, str]] = [("#", "right"), ("path", "left"), ("sessions", "right"), ("users", "right")]
    columns.append(("share", "right"))
    if kind in ("features", "transitions", "kpaths"):
        columns.append(("occurrences", "right"))
    if kind == "full":
        columns.append(("error rate", "right"))
    table = _table(_KIND_TITLES[kind], *columns)
    for n, r in enumerate(rows, start=1):
        cells = [str(n), format_path(r["path"]), f"{r['sessions']:,}", f"{r['users']:,}", _pct(r["share"])]
        if kind in ("features", "transitions", "kpaths"):
            cells.append(f"{r['occurrences']:,}")
        if kind == "full":
            cells.append(_pct(r["error_rate"]))
        table.add_row(*cells)
    total = result["total_sessions"]
    footer = [
        f"{len(rows):,} rows of {total:,} sessions' paths, at least {result['min_support_sessions']:,} sessions each"
    ]
    footer.append(f"{result['suppressed']:,} held back: fewer than {result['min_users']} users")
    table.caption = " · ".join(footer)
    table.caption_style = MUTED
    console.print(table)
    mining = result.get("mining")
    if mining:
        gap = mining["max_gap"]
        gap_text = "any number of" if gap is None else f"at most {gap}"
        console.print(
            f"[{MUTED}]mined {mining['patterns_found']:,} {'closed ' if mining['closed'] else ''}patterns of "
            f"{mining['min_length']}–{mining['max_length']} steps from {mining['distinct_paths']:,} distinct paths "
            f"in {mining['seconds']:.1f} s; {gap_text} other events between steps; stored in the workspace[/]"
        )


def _print_paths(
    console: Console, title: str, rows: list[dict[str, Any]], suppressed: int, min_users: int, note: str = ""
) -> None:
    table = _table(title, ("path", "left"), ("sessions", "right"), ("users", "right"), ("share", "right"))
    for r in rows:
        table.add_row(format_path(r["path"]), f"{r['sessions']:,}", f"{r['users']:,}", _pct(r["share"]))
    footer = [note] if note else []
    footer.append(f"{suppressed:,} held back: fewer than {min_users} users")
    table.caption = " · ".join(footer)
    table.caption_style = MUTED
    console.print(table)


def _flatten(prefix: str, value: Any) -> Iterator[tuple[str, str]]:
    if isinstance(value, dict):
        for key in sorted(value):
            yield from _flatten(f"{prefix}.{key}" if prefix else key, value[key])
    elif isinstance(value, list) and all(not isinstance(v, dict | list) for v in value):
        yield prefix, json.dumps(value, default=str)
    elif isinstance(value, list):
        for i, item in enumerate(value, start=1):
            yield from _flatten(f"{prefix}.{i}", item)
    else:
        yield prefix, value if isinstance(value, str) else json.dumps(value, default=str)


def summary_rows(summary: dict[str, Any]) -> list[tuple[str, str]]:
    """The summary as (key, value) pairs with dotted keys, for CSV output."""
    return list(_flatten("", summary))
