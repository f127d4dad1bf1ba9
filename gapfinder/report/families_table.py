"""The terminal table of `gapfinder families`: the users' journey families and how each is tested."""

from __future__ import annotations

from typing import Any

from rich.console import Console

from gapfinder.report.terminal import ACCENT, MUTED, _pct, _table

__all__ = ["render_families"]


def render_families(result: dict[str, Any], console: Console) -> None:
    """One row per family: its typical path, share of sessions and users, coverage, top gaps."""
    console.print(
        f"[bold {ACCENT}]Journey families[/] · {len(result['families'])} families over {result['sessions']:,} sessions "
        f"({result['distinct_paths']:,} distinct paths) · workspace {result['workspace']}"
    )
    table = _table(
        "Families by sessions (each named by the path its sessions take most)",
        ("family", "left"),
        ("paths", "right"),
        ("sessions", "right"),
        ("users", "right"),
        ("transitions tested", "right"),
        ("most taken untested transitions", "left"),
    )
    for f in result["families"]:
        untested = "; ".join(" › ".join(t["transition"]) for t in f["top_untested"]) or "—"
        table.add_row(
            f["name"] or "(no path above the privacy floor)",
            f"{f['distinct_paths']:,}",
            _pct(f["session_share"]),
            _pct(f["user_share"]),
            _pct(f["transitions_exercised_by_occurrences"])
            if f["transitions_exercised_by_occurrences"] is not None
            else "—",
            untested,
        )
    notes = [result["method"]]
    if result["unassigned_sessions"]:
        notes.append(f"{_pct(result['unassigned_share'])} of sessions in no listed family")
    if result["held_back"]:
        notes.append(
            f"{result['held_back']} family(ies) under the privacy floor of {result['min_users']} users not shown"
        )
    table.caption = " · ".join(notes)
    table.caption_style = MUTED
    console.print(table)
