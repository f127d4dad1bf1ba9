"""The report as Markdown, for a pull request or a wiki page (same content as the HTML, as tables)."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from gapfinder.quoting import markdown_code, markdown_text

__all__ = [
    "decision_of",
    "markdown_path",
    "p_value_text",
    "percent",
    "plan_lines",
    "privacy_note",
    "render_markdown",
    "suite_sentence",
]


def percent(x: float | None) -> str:
    """A fraction as a percentage with one decimal, or a dash when there is none."""
    return "—" if x is None else f"{100 * x:.1f} %"


def markdown_path(path: Sequence[str]) -> str:
    """A path as code spans joined by ' › ' (each name quoted by ``markdown_code``)."""
    return " › ".join(markdown_code(p) for p in path)


def privacy_note(min_users: int, pseudonymized: bool) -> str:
    """What the page hides, and whether user ids were pseudonymized: never claimed when they were not."""
    floor = f"No user ids are shown; paths taken by fewer than {min_users} distinct users are held back. "
    if pseudonymized:
        return floor + (
            "User ids were pseudonymized with a keyed hash (HMAC-SHA256), which is still personal data: keep the "
            "workspace where your data-protection rules allow."
        )
    return floor + (
        "The workspace stores the raw user ids (no key was given to pseudonymize them): keep it where your "
        "data-protection rules allow, or profile again with --key-env/--key-file."
    )


_pct, _path = percent, markdown_path


def suite_sentence(suite: dict[str, Any]) -> str:
    """Which tests count and how many of their steps were read, in one sentence."""
    if not suite:
        return ""
    left_out = ", ".join(f"{n:,} {reason}" for reason, n in sorted((suite.get("left_out") or {}).items()))
    return (
        f"{suite['counted_test_count']:,} of {suite['test_count']:,} stored tests count as exercising"
        + (f" (left out: {left_out})" if left_out else "")
        + f"; {suite['mapped_step_count']:,} of {suite['step_count']:,} test steps are mapped to field events."
    )


def p_value_text(p: float | None) -> str:
    """A p-value as a reader expects it: three decimals, and ``< 0.001`` below that.

    >>> p_value_text(0.0), p_value_text(0.04321), p_value_text(None)
    ('< 0.001', '0.043', '')
    """
    if p is None:
        return ""
    return "< 0.001" if p < 0.001 else f"{p:.3f}"


def plan_lines(plan: dict[str, Any] | None) -> list[str]:
    """Next sprint's scenarios: the plan's table, or how to make one."""
    lines = ["## Next sprint's scenarios", ""]
    if plan and plan.get("scenarios"):
        lines += [
            f"Budget {plan['budget']} {plan['cost']}; adds {_pct(plan['gain_share'])} of the field occurrences of "
            f"untested {plan['objective']}. Guarantee: {plan['guarantee']}.",
            "",
            "| # | scenario | steps | adds | closes gaps |",
            "|---|---|---|---|---|",
        ]
        lines += [
            f"| {s['scenario']} | {_path(s['path'])} | {s['steps']} | {_pct(s['gain_share'])} | "
            f"{', '.join('#' + str(g) for g in s['gaps'])} |"
            for s in plan["scenarios"]
        ]
    else:
        lines.append("No plan stored yet: run `gapfinder plan -w WORKSPACE --budget N`.")
    return [*lines, ""]


def decision_of(plan: dict[str, Any] | None, rank: int, path: list[str]) -> str:
    """Whether the stored plan covers the gap of this rank and path, and if not why (empty: unknown)."""
    for d in (plan or {}).get("gap_decisions", []):
        if d["rank"] == rank and d["path"] == path:
            return f"{d['status']}: {d['why']}"
    return ""


def quarter_lines(data: dict[str, Any]) -> list[str]:
    """Representativeness as one number, where effort and usage disagree most, the journey families."""
    lines: list[str] = ["", "## Is test effort where the users are?", ""]
    divergence = data["coverage"].get("representativeness") or {}
    if divergence:
        lines.append(
            f"Representativeness: **{divergence['bits_per_step']:.3f} bits per step** between how the tests step "
            f"and how users step (Whittaker-Thomason discriminant; 0 means alike); {divergence['arcs_tested']:,} of "
            f"{divergence['usage_arcs']:,} transitions users take are walked by a test."
        )
    rows = data["effort"]["features"][:6]
    if rows:
        lines += [
            "",
            "| feature | share of usage | share of test steps | verdict | recommended tests | today |",
            "|---|---|---|---|---|---|",
        ]
        lines += [
            f"| {r['event']} | {_pct(r['usage_share'])} | {_pct(r['step_share'])} | {r['verdict']} | "
            f"{r['recommended_tests']} | {r['today_tests']} |"
            for r in rows
        ]
    families = data["families"]["families"][:8]
    if families:
        lines += [
            "",
            "| journey family (its most taken path) | sessions | users | transitions tested | most taken untested |",
            "|---|---|---|---|---|",
        ]
        for f in families:
            untested = f["top_untested"][0]["transition"] if f["top_untested"] else None
            lines.append(
                f"| {_path(f['typical_path']) if f['typical_path'] else '(under the privacy floor)'} | "
                f"{_pct(f['session_share'])} | {_pct(f['user_share'])} | "
                f"{_pct(f['transitions_exercised_by_occurrences'])} | {_path(untested) if untested else '—'} |"
            )
    return lines


def render_markdown(data: dict[str, Any]) -> str:
    """The report page for ``report_data(...)`` in Markdown."""
    profile, coverage, gaps, plan, drift = (data[k] for k in ("profile", "coverage", "gaps", "plan", "drift"))
    sessions, reading = profile["sessions"], profile["reading"]
    lines = [
        "# Test coverage against real usage",
        "",
        f"{sessions['count']:,} sessions of {sessions['users']:,} users, {(reading.get('first_ts') or '')[:10]} to "
        f"{(reading.get('last_ts') or '')[:10]}; {coverage['test_count']} tests; gapfinder {data['version']}.",
        "",
        suite_sentence(coverage.get("suite") or {}),
        "",
        *plan_lines(plan),
        "## Coverage",
        "",
        "| metric | by sessions | by occurrences | distinct items |",
        "|---|---|---|---|",
    ]
    for metric, modes in coverage["metrics"].items():
        if metric == "patterns" and not coverage["patterns_mined"]:
            continue
        v = modes["strict"]
        lines.append(
            f"| {metric} | {_pct(v['by_sessions'])} | {_pct(v['by_occurrences'])} | "
            f"{_pct(v['unweighted'])} ({v['exercised']:,} of {v['items']:,}) |"
        )
    lines += quarter_lines(data)
    lines += [
        "",
        f"## Coverage by {drift['trend_unit']}",
        "",
        "| from | sessions | transitions exercised, by sessions | divergence of the tests (bits per step) |",
        "|---|---|---|---|",
    ]
    lines += [
        f"| {t['bucket']} | {t['sessions']:,} | {_pct(t['transitions_by_sessions'])} | "
        f"{'—' if t.get('divergence') is None else format(t['divergence'], '.3f')} |"
        for t in drift["trend"]
    ]
    lines += [
        "",
        "## Untested paths most worth a test",
        "",
        "| # | path | sessions | users | share (95 % interval) | errors on its steps | trend | in the plan |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for g in gaps["gaps"]:
        lines.append(
            f"| {g['rank']} | {_path(g['path'])} | {g['sessions']:,} | {g['users']:,} | {_pct(g['share'])} "
            f"({100 * g['share_low']:.1f}–{100 * g['share_high']:.1f}) | {_pct(g['error_rate'])} | {g['trend']['label']} "
            f"| {markdown_text(decision_of(plan, g['rank'], g['path']))} |"
        )
    lines += [
        "",
        f"Score: {gaps['score']}. {gaps['suppressed']:,} candidates held back: fewer than {gaps['min_users']} users.",
        "",
    ]
    current, previous, distance = drift["current"], drift["previous"], drift["distance"]
    lines += [
        "",
        "## How usage moved",
        "",
        f"{current['from'] or 'start'} to {current['to'] or 'end'} ({current['sessions']:,} sessions) against "
        f"{previous['from'] or 'start'} to {previous['to'] or 'end'} ({previous['sessions']:,}).",
    ]
    if distance["features"] is not None and distance["transitions"] is not None:
        lines.append(
            f"Jensen–Shannon distance: features {distance['features']:.3f}, transitions {distance['transitions']:.3f} "
            "(0 = same usage, 1 = nothing in common)."
        )
    lines += ["", "| moved most | share before | share now | change | p |", "|---|---|---|---|---|"]
    for m in drift["movers"]:
        p = p_value_text(m.get("p_value"))
        lines.append(
            f"| {_path(m['path'])} | {_pct(m['share_before'])} | {_pct(m['share_now'])} | {100 * m['change']:+.1f} pt | {p} |"
        )
    lines += ["", privacy_note(gaps["min_users"], bool(reading.get("pseudonymized"))), ""]
    return "\n".join(lines)


def rejected_rows_text(rejected: dict[str, int]) -> str:
    """Rows left out of the input, per reason: "12 missing user id, 3 timestamp outside 1990-2099"."""
    return ", ".join(f"{n:,} {reason}" for reason, n in sorted(rejected.items()))
