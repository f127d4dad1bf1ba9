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

from gapfinder.quoting import terminal_text
from gapfinder.report.markdown import p_value_text, rejected_rows_text
from gapfinder.sources.feature_keys import describe_feature_keys

__all__ = ["format_path", "render_audit", "render_paths", "render_plan", "render_profile", "summary_rows"]

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
    for note in reading.get("notes") or []:
        console.print(terminal_text(note))
    keys = reading.get("feature_keys")
    if keys:
        console.print(terminal_text(describe_feature_keys(keys)))
    if reading.get("naive_timestamps"):
        console.print(f"  {reading['naive_timestamps']:,} timestamps had no time zone and were taken as UTC")
    if rejected:
        console.print(f"[yellow]rejected rows[/]: {rejected_rows_text(rejected)}")
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
            console.print(f"  account {account['account_no']}: {'; '.join(account['reasons'])}")
    else:
        console.print("automated traffic: none flagged")
    privacy = summary.get("privacy", {})
    if privacy.get("note"):
        style = "" if privacy.get("pseudonymized") else "[yellow]privacy[/]: "
        console.print(f"{style}{privacy['note']}")
    if summary.get("cleared"):
        console.print(
            f"[yellow]cleared[/] the earlier {', '.join(summary['cleared'])} (they referred to the previous profile's "
            "event numbering): run `gapfinder suite` and the later stages again"
        )


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
    floor = result["min_support_sessions"]
    footer = [f"{len(rows):,} rows from {total:,} sessions" + (f", each in {floor:,} or more" if floor > 1 else "")]
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


def _opt_pct(x: float | None) -> str:
    return "—" if x is None else _pct(x)


def render_suite(summary: dict[str, Any], console: Console) -> None:
    """What `gapfinder suite` stored: tests with outcomes, how step names resolved, what matched nothing."""
    by = summary["steps_by_resolution"]
    console.print(
        f"[bold {ACCENT}]Test suite[/] · {summary['test_count']:,} tests ({summary['counted_test_count']:,} counted), "
        f"{summary['step_count']:,} steps ({', '.join(summary['kinds'])}) · workspace {summary['workspace']}"
    )
    replaced = summary.get("replaced")
    if replaced:
        console.print(f"replaced the stored suite of {replaced['tests']:,} tests (pass --add to add sources instead)")
    files = summary.get("files_read") or {}
    if files or summary.get("files_ignored"):
        console.print(
            "files read: "
            + (", ".join(f"{n:,} {kind}" for kind, n in sorted(files.items())) or "none")
            + (f"; {summary['files_ignored']:,} other file(s) ignored" if summary.get("files_ignored") else "")
        )
    console.print(
        f"steps: {summary['mapped_step_count']:,} mapped to field events, {summary['unmapped_step_count']:,} unmapped"
        + (" (" + ", ".join(f"{n:,} {how}" for how, n in sorted(by.items())) + ")" if by else "")
    )
    for reason, n in sorted((summary.get("left_out") or {}).items()):
        console.print(f"[yellow]not counted[/]: {n:,} test(s) {reason} (--count-all counts them)")
    if summary.get("joined_results"):
        console.print(f"{summary['joined_results']:,} scenario(s) took their outcome from a runner's report")
    events = summary.get("events") or {}
    if events:
        console.print(
            f"test-run telemetry: {events['attributed']:,} of {events['events']:,} events attributed to "
            f"{events['tests']:,} test(s) by {'test id' if events['by'] == 'test_id' else 'time window'}"
        )
    tests = _table(
        "Tests",
        ("test", "left"),
        ("kind", "left"),
        ("outcome", "left"),
        ("steps", "right"),
        ("unmapped", "right"),
    )
    for t in summary["tests"][:200]:
        outcome = t["outcome"] if t["counted"] else f"{t['outcome']} · not counted ({t['left_out']})"
        tests.add_row(
            t["test_id"], t["kind"], outcome, str(t["steps"]), str(t["unmapped_steps"]) if t["unmapped_steps"] else ""
        )
    if len(summary["tests"]) > 200:
        tests.caption = f"the first 200 of {len(summary['tests']):,} tests; --format csv lists them all"
        tests.caption_style = MUTED
    console.print(tests)
    if summary["unmapped_steps"]:
        unmapped = _table(
            "Step names that match no field event (see `gapfinder align`)",
            ("step", "left"),
            ("steps", "right"),
            ("tests", "right"),
        )
        for r in summary["unmapped_steps"][:50]:
            unmapped.add_row(r["step"], str(r["step_count"]), str(r["test_count"]))
        console.print(unmapped)
    for reason, n in sorted(summary["skipped"].items()):
        console.print(f"[yellow]skipped[/]: {n:,} {reason}")
    if summary["ignored_phrases"]:
        console.print(f"Gherkin steps ignored on purpose (mapped to null): {len(summary['ignored_phrases'])}")


def render_alignment(result: dict[str, Any], console: Console) -> None:
    """Suggested aliases with their similarity and the next candidates."""
    table = _table(
        f"Suggested events for {result['unmapped']} unmapped step name(s)",
        ("step", "left"),
        ("suggested event", "left"),
        ("similarity", "right"),
        ("next candidates", "left"),
        ("used in tests", "right"),
    )
    for r in result["suggestions"]:
        others = [c for c in r.get("candidates", []) if c["event"] != r["event"]][:2]
        table.add_row(
            r["step"],
            r["event"] or f"[{MUTED}]none above the threshold[/]",
            f"{r['score']:.2f}",
            ", ".join(f"{c['event']} {c['score']:.2f}" for c in others),
            str(r["tests"]),
        )
    table.caption = (
        "review before use: `gapfinder align --write aliases.yaml`, edit it, "
        "then `gapfinder suite ... --aliases aliases.yaml`"
    )
    table.caption_style = MUTED
    console.print(table)


def render_coverage(result: dict[str, Any], console: Console) -> None:
    """Coverage per metric (strict and lenient), then the tests that add the most on their own."""
    console.print(
        f"[bold {ACCENT}]Coverage of real usage[/] · {result['test_count']} tests against "
        f"{result['sessions']:,} sessions · workspace {result['workspace']}"
    )
    suite = result.get("suite") or {}
    for reason, n in sorted((suite.get("left_out") or {}).items()):
        console.print(f"[yellow]left out[/]: {n:,} test(s) {reason}; `gapfinder suite --count-all` counts them")
    if suite.get("unmapped_step_count"):
        console.print(
            f"[yellow]unmapped[/]: {suite['unmapped_step_count']:,} of {suite['step_count']:,} test steps match "
            "no field event and exercise nothing here; see `gapfinder align`, or record test-run telemetry "
            "(`suite --events`)"
        )
    planned = result.get("planned") or []
    if planned:
        done = [p for p in planned if p["exercised_by"]]
        console.print(
            f"planned and done: {len(done)} of {len(planned)} scenarios of the stored plan are now exercised"
            + (": " + ", ".join(f"#{p['scenario']} {p['name']}" for p in done[:5]) if done else "")
        )
    lenient = result["max_gap"] > 0
    columns = [("metric", "left"), ("exercised", "right"), ("of items", "right"), ("by occurrences", "right")]
    columns += [("by sessions", "right"), ("by users", "right")]
    if lenient:
        columns.append((f"by sessions, gap ≤ {result['max_gap']}", "right"))
    table = _table("Exercised share (strict: contiguous runs in a test)", *columns)
    for metric, modes in result["metrics"].items():
        strict = modes["strict"]
        if metric == "patterns" and not result["patterns_mined"]:
            continue
        row = [
            metric,
            f"{strict['exercised']:,} / {strict['items']:,}",
            _opt_pct(strict["unweighted"]),
            _opt_pct(strict["by_occurrences"]),
            _opt_pct(strict["by_sessions"]),
            _opt_pct(strict["by_users"]),
        ]
        if lenient:
            row.append(_opt_pct(modes["lenient"]["by_sessions"]))
        table.add_row(*row)
    notes = ["weighted: share of the items' field occurrences, sessions or users that falls on exercised items"]
    if not result["patterns_mined"]:
        notes.append("no mined patterns yet: run `gapfinder paths --kind patterns`")
    table.caption = " · ".join(notes)
    table.caption_style = MUTED
    console.print(table)
    tests = _table(
        "What each test adds on its own (transitions no other test exercises)",
        ("test", "left"),
        ("transitions", "right"),
        ("only this test", "right"),
        ("their share of sessions", "right"),
    )
    for t in result.get("tests", [])[:15]:
        tests.add_row(
            t["test_id"],
            str(t["exercised"]["transitions"]),
            str(t["unique"]["transitions"]),
            _pct(t["unique_session_share"]["transitions"]),
        )
    console.print(tests)
    redundant = result.get("redundant") or []
    if redundant:
        console.print(
            f"[bold]Redundant[/]: {len(redundant)} test(s) exercise no transition the rest of the suite does not "
            "(candidates to merge, not to delete): "
            + "; ".join(
                f"{r['test_id']} (also in {', '.join(r['also_exercised_by']) or 'none'})" for r in redundant[:10]
            )
        )
    divergence = result.get("representativeness")
    if divergence:
        console.print(
            f"[bold]Representativeness[/]: {divergence['bits_per_step']:.3f} bits per step "
            f"(Whittaker-Thomason discriminant; {divergence['arcs_tested']:,} of {divergence['usage_arcs']:,} "
            f"transitions users take are walked by a test): {divergence['meaning']}"
        )


# Below this many columns a table would squeeze the path column: gaps are shown one block each.
NARROW = 110


def _render_gaps_as_blocks(result: dict[str, Any], console: Console) -> None:
    """One gap per block, the path on its own lines, for narrow terminals."""
    console.print("Gaps, most worth a test first")
    for g in result["gaps"]:
        lift = f" ({g['error_lift']:.1f}×)" if g["error_lift"] and g["risk"] > 1 else ""
        console.print(f"[bold]{g['rank']}.[/] {format_path(g['path'])}")
        console.print(
            f"   {g['kind']} · {g['sessions']:,} sessions · {g['users']:,} users · {_pct(g['share'])} "
            f"({100 * g['share_low']:.1f}–{100 * g['share_high']:.1f}) · errors on its steps "
            f"{_pct(g['error_rate'])}{lift} · {g['trend']['label']}"
        )
        console.print(f"   [{MUTED}]{g['reason']}[/]")
        if g["folded"]:
            console.print(f"   [{MUTED}]{len(g['folded'])} related path(s) in the same sessions folded under it[/]")
    console.print(
        f"[{MUTED}]score: {result['score']} · {result['suppressed']:,} candidates held back: fewer than "
        f"{result['min_users']} users[/]"
    )


def render_gaps(result: dict[str, Any], console: Console) -> None:
    """The ranked gaps, each with its reason and what was folded under it."""
    console.print(
        f"[bold {ACCENT}]Untested paths people take[/] · {result['total_sessions']:,} sessions, "
        f"{result['tests']} tests · sessions with any error {_pct(result['baseline_error_rate'])}"
    )
    if console.width < NARROW:
        _render_gaps_as_blocks(result, console)
        return
    table = _table(
        "Gaps, most worth a test first",
        ("#", "right"),
        ("path", "left"),
        ("kind", "left"),
        ("sessions", "right"),
        ("users", "right"),
        ("share (95 % interval)", "right"),
        ("errors on its steps", "right"),
        ("trend", "left"),
    )
    for g in result["gaps"]:
        interval = f"{_pct(g['share'])} ({100 * g['share_low']:.1f}–{100 * g['share_high']:.1f})"
        lift = f" ({g['error_lift']:.1f}×)" if g["error_lift"] and g["risk"] > 1 else ""
        table.add_row(
            str(g["rank"]),
            format_path(g["path"]),
            g["kind"],
            f"{g['sessions']:,}",
            f"{g['users']:,}",
            interval,
            _pct(g["error_rate"]) + lift,
            g["trend"]["label"],
        )
    table.caption = (
        f"score: {result['score']} · {result['suppressed']:,} candidates held back: fewer than "
        f"{result['min_users']} users"
    )
    table.caption_style = MUTED
    console.print(table)
    for g in result["gaps"]:
        console.print(f"[bold]{g['rank']}.[/] {g['reason']}")
        if g["folded"]:
            shown = ", ".join(format_path(f["path"]) for f in g["folded"][:3])
            more = f" and {len(g['folded']) - 3} more" if len(g["folded"]) > 3 else ""
            console.print(f"   [{MUTED}]also untested in the same sessions: {shown}{more}[/]")


def render_unused(result: dict[str, Any], console: Console) -> None:
    """Tests whose journey the field rarely or never takes."""
    table = _table(
        f"Tests whose journey is in at most {_pct(result['max_share'])} of {result['total_sessions']:,} sessions",
        ("test", "left"),
        ("journey", "left"),
        ("sessions", "right"),
        ("share", "right"),
        ("suite steps", "right"),
    )
    for r in result["unused"]:
        held = f"< {result['min_users']} users"
        table.add_row(
            r["test_id"],
            format_path(r["path"]),
            held if r["sessions"] is None else f"{r['sessions']:,}",
            "" if r["share"] is None else f"{100 * r['share']:.2f} %",
            _pct(r["suite_step_share"]),
        )
    table.caption = f"{len(result['unused'])} of {result['tests']} tests · candidates to run less often, not to delete"
    table.caption_style = MUTED
    console.print(table)
    if result.get("not_read"):
        unread = _table(
            f"Tests not read ({len(result['not_read'])}): their journey is unknown, so they are not judged",
            ("test", "left"),
            ("steps", "right"),
            ("unmapped", "right"),
        )
        for r in result["not_read"][:50]:
            unread.add_row(r["test_id"], str(r["steps"]), str(r["unmapped_steps"]))
        unread.caption = (
            "map their steps with --steps-map or --aliases (`gapfinder align` suggests events), "
            "or record a test run's telemetry with `gapfinder suite --events`"
        )
        unread.caption_style = MUTED
        console.print(unread)


def render_plan(result: dict[str, Any], console: Console) -> None:
    """The chosen scenarios with what each buys, and coverage before and after."""
    table = _table(
        f"Plan: {len(result['scenarios'])} scenario(s) within {result['budget']} {result['cost']} "
        f"(from {result['candidates']} candidates)",
        ("#", "right"),
        ("scenario", "left"),
        ("steps", "right"),
        ("adds", "right"),
        ("gaps", "left"),
        ("sessions", "right"),
    )
    sampled = result.get("kind") == "sampled"
    if sampled:
        table.title = (
            f"Plan: {len(result['scenarios'])} distinct scenario(s) among {result['sample']} walks of the usage chain "
            f"(seed {result['seed']})"
        )
        table.columns[4].header, table.columns[5].header = "drawn", "walk probability"
    for r in result["scenarios"]:
        table.add_row(
            str(r["scenario"]),
            format_path(r["path"]),
            str(r["steps"]),
            _pct(r["gain_share"]),
            str(r["drawn"]) if sampled else ", ".join(f"#{g}" for g in r["gaps"]),
            f"{r['probability']:.2e}" if sampled else f"{r['sessions']:,}",
        )
    table.caption = (
        f"objective: untested {result['objective']} (field occurrences) · plan adds {_pct(result['gain_share'])} · "
        f"{result['guarantee']}"
    )
    table.caption_style = MUTED
    console.print(table)
    coverage = _table(
        "Coverage by sessions, before → after", ("metric", "left"), ("before", "right"), ("after", "right")
    )
    for metric, v in result["coverage"].items():
        coverage.add_row(metric, _opt_pct(v["before"]), _opt_pct(v["after"]))
    console.print(coverage)
    earlier = result.get("earlier_plan") or []
    if earlier:
        done = [p for p in earlier if p["exercised_by"]]
        console.print(
            f"the previous plan: {len(done)} of {len(earlier)} scenarios are now exercised by the suite"
            + (" (" + ", ".join(f"#{p['scenario']} {p['name']}" for p in done[:5]) + ")" if done else "")
        )


def render_audit(result: dict[str, Any], console: Console) -> None:
    """Drift between two periods: distances, movers, new and vanished paths, coverage then and now."""
    now, before, distance = result["current"], result["previous"], result["distance"]
    console.print(
        f"[bold {ACCENT}]Usage audit[/] · {now['label']} ({now['sessions']:,} sessions) against "
        f"{before['label']} ({before['sessions']:,} sessions)"
    )
    if distance["features"] is not None:
        console.print(
            f"Jensen–Shannon distance (0 same, 1 disjoint): features {distance['features']:.3f}, "
            f"transitions {distance['transitions']:.3f}"
        )
    divergence = result.get("divergence") or {}
    if divergence.get("current") is not None and divergence.get("previous") is not None:
        console.print(
            f"Divergence of the tests from usage (Whittaker-Thomason, bits per step; 0 = the tests step as users do): "
            f"{divergence['previous']:.3f} then, {divergence['current']:.3f} now"
        )
    movers = _table(
        "Moved most (share of sessions)",
        ("path", "left"),
        ("kind", "left"),
        ("before", "right"),
        ("now", "right"),
        ("change (95 % interval)", "right"),
        ("p", "right"),
    )
    for m in result["movers"]:
        interval = f" ({100 * m['change_low']:+.1f}…{100 * m['change_high']:+.1f})" if "change_low" in m else ""
        movers.add_row(
            format_path(m["path"]),
            m["kind"],
            _pct(m["share_before"]),
            _pct(m["share_now"]),
            f"{100 * m['change']:+.1f} pt{interval}",
            p_value_text(m.get("p_value")),
        )
    movers.caption = f"{result['held_back']:,} paths held back: fewer than {result['min_users']} users in a period"
    movers.caption_style = MUTED
    console.print(movers)
    for title, rows in (("New transitions", result["new"]), ("Vanished transitions", result["vanished"])):
        if rows:
            console.print(
                f"[bold]{title}[/]: " + "; ".join(f"{format_path(r['path'])} ({r['sessions']:,})" for r in rows)
            )
    coverage = _table("Coverage by occurrences, then → now", ("metric", "left"), ("then", "right"), ("now", "right"))
    for metric in ("features", "transitions"):
        coverage.add_row(
            metric,
            _opt_pct(result["coverage"]["previous"][metric]["by_occurrences"]),
            _opt_pct(result["coverage"]["current"][metric]["by_occurrences"]),
        )
    console.print(coverage)
    trend = _table(
        f"Transition coverage by {result['trend_unit']}, weighted by sessions",
        ("from", "left"),
        ("sessions", "right"),
        ("exercised", "right"),
    )
    for t in result["trend"]:
        trend.add_row(t["bucket"], f"{t['sessions']:,}", _opt_pct(t["transitions_by_sessions"]))
    console.print(trend)
    if result.get("segments"):
        seg = _table(
            "Transition coverage by segment (current period), weighted by sessions",
            ("segment", "left"),
            ("sessions", "right"),
            ("exercised", "right"),
        )
        for s in result["segments"]:
            seg.add_row(f"{s['segment']} {s['value']}", f"{s['sessions']:,}", _opt_pct(s["transitions_by_sessions"]))
        console.print(seg)
    for t in result["irrelevant_tests"]:
        console.print(
            f"[yellow]journey left the field[/]: {t['test_id']} ("
            + (
                f"{t['sessions_before']:,} sessions before"
                if t["sessions_before"] is not None
                else f"fewer than {result.get('min_users', 5)} users before"
            )
            + ", none now)"
        )
