"""Audit: how usage and coverage moved between two periods (or two workspaces).

For the current and the earlier period (sessions by start time, or the whole of another
workspace) it computes, on event names so that two workspaces compare:

- the Jensen–Shannon distance (base 2, in [0, 1]) of the feature and of the transition
  distributions (occurrences);
- the top movers: features and transitions whose share of sessions changed most, each with the
  change, Newcombe's hybrid score interval for it and a two-proportion z test's p-value;
- new and vanished transitions (in one period and not the other);
- coverage of features and transitions by the stored suite in each period, its trend by week or
  month, and per segment (app version or platform) when asked;
- tests whose journey the earlier period took and the current one no longer does.

Every listed path passes the privacy floor in each period where it appears; the count of paths
held back is reported.
"""

from __future__ import annotations

import itertools
import json
import re
from dataclasses import dataclass, field
from datetime import UTC, date, timedelta, tzinfo
from typing import Any

import duckdb
import numpy as np

from gapfinder.errors import ConfigError, InputError
from gapfinder.matching import containing_sequences
from gapfinder.mining import SequenceDatabase
from gapfinder.paths import feature_names
from gapfinder.patterns import profile_included_automated
from gapfinder.periods import Period, midnight, split_in_halves, time_zone
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.representativeness import discriminant, suite_transition_counts
from gapfinder.sql import fetch_arrow, fetch_dicts
from gapfinder.stats import difference_interval, jensen_shannon_distance, two_proportion_z_test
from gapfinder.usage_model import UsageModel
from gapfinder.workspace import Workspace

__all__ = ["AuditOptions", "Period", "audit", "parse_period"]

SEGMENTS = ("app_version", "platform")
START, END = "START", "END"


def parse_period(text: str, option: str = "--period", zone: tzinfo = UTC) -> Period:
    """``YYYY-MM-DD..YYYY-MM-DD`` (both days included) as a Period.

    Examples
    --------
    >>> parse_period("2026-04-01..2026-06-30").end.isoformat()
    '2026-07-01T00:00:00+00:00'
    """
    match = re.fullmatch(r"\s*(\d{4}-\d{2}-\d{2})\s*\.\.\s*(\d{4}-\d{2}-\d{2})\s*", text)
    if not match:
        raise ConfigError(f"{option} {text!r}: write FIRST..LAST as dates, e.g. 2026-04-01..2026-06-30")
    try:
        first, last = (date.fromisoformat(g) for g in match.groups())
    except ValueError as exc:
        raise ConfigError(f"{option} {text!r}: {exc}") from None
    if last < first:
        raise ConfigError(f"{option} {text!r}: the last day comes before the first")
    if first.year < 1990 or last.year > 2099:
        raise ConfigError(f"{option} {text!r}: give days between 1990 and 2099 (telemetry outside is rejected)")
    return Period(midnight(first, zone), midnight(last + timedelta(days=1), zone), text.strip())


@dataclass(frozen=True)
class AuditOptions:
    """What to compare and how much to list."""

    period: Period | None = None
    against: Period | None = None
    against_workspace: str | None = None
    by: str | None = None
    trend: str = "month"
    top: int = 10
    min_users: int = DEFAULT_MIN_USERS
    tz: str | None = None  # the time zone whose midnights cut days (default UTC)

    def __post_init__(self) -> None:
        time_zone(self.tz)
        if self.by is not None and self.by not in SEGMENTS:
            raise ConfigError(f"--by {self.by!r}: give one of {', '.join(SEGMENTS)}")
        if self.trend not in ("week", "month"):
            raise ConfigError(f"--trend {self.trend!r}: give week or month")
        if self.against is not None and self.against_workspace is not None:
            raise ConfigError("give --against or --against-workspace, not both")


@dataclass
class PeriodCounts:
    """Features and transitions of one period, by name: (occurrences, sessions, users)."""

    period: Period
    sessions: int
    features: dict[tuple[str, ...], tuple[int, int, int]] = field(default_factory=dict)
    transitions: dict[tuple[str, ...], tuple[int, int, int]] = field(default_factory=dict)
    paths: SequenceDatabase | None = None
    ids: dict[str, int] = field(default_factory=dict)
    path_users: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))


def _counts(con: duckdb.DuckDBPyConnection, period: Period) -> PeriodCounts:
    include = profile_included_automated(con)
    names = feature_names(con)
    params = {"start": period.start, "end": period.end, "include_automated": include}
    counts = PeriodCounts(period, 0, ids={n: i for i, n in enumerate(names)})
    for r in fetch_dicts(con, "list_period_items", **params):
        value = (int(r["occurrences"]), int(r["sessions"]), int(r["users"]))
        if r["k"] == 1:
            counts.features[(names[r["a"]],)] = value
        else:
            counts.transitions[(names[r["a"]], names[r["b"]])] = value
    table = fetch_arrow(con, "list_period_paths", **params)
    column = table.column("path").combine_chunks()
    weights = table.column("sessions").to_numpy().astype(np.int64)
    if len(weights):
        offsets = column.offsets.to_numpy(zero_copy_only=False).astype(np.int64)
        items = column.flatten().to_numpy(zero_copy_only=False).astype(np.int32)
        counts.paths = SequenceDatabase(items, offsets - offsets[0], weights)
        counts.path_users = table.column("users").to_numpy().astype(np.int64)
    counts.sessions = int(weights.sum())
    return counts


def _default_periods(con: duckdb.DuckDBPyConnection, zone: tzinfo = UTC) -> tuple[Period, Period]:
    row = fetch_dicts(con, "summarize_session_window", include_automated=profile_included_automated(con))[0]
    if not row["sessions"]:
        raise ConfigError("the workspace has no sessions to audit")
    earlier, recent = split_in_halves(row["first_start"], row["last_start"], zone)
    return recent, earlier


def _exercised(ws: Workspace) -> tuple[set[tuple[str, ...]], set[tuple[str, ...]], list[tuple[str, list[str]]]]:
    """Exercised features and transitions (strict, by name) and each test's mapped journey."""
    ws.require("suite_tests", hint="run `gapfinder suite TRACES... -w ...` first")
    names = feature_names(ws.con)
    features: set[tuple[str, ...]] = set()
    transitions: set[tuple[str, ...]] = set()
    journeys = []
    for test_id, path in [(r["test_id"], r["path"]) for r in fetch_dicts(ws.con, "list_counted_test_paths")]:
        framed = [START, *(names[e] if e >= 0 else None for e in path), END]
        features.update((e,) for e in framed[1:-1] if e is not None)
        transitions.update((a, b) for a, b in itertools.pairwise(framed) if a and b)
        journeys.append((test_id, [names[e] for e in path if e >= 0]))
    return features, transitions, journeys


def _coverage(counts: PeriodCounts, exercised_f: set, exercised_t: set) -> dict[str, Any]:
    out = {}
    for metric, items, exercised in (
        ("features", counts.features, exercised_f),
        ("transitions", counts.transitions, exercised_t),
    ):
        total_occ = sum(v[0] for v in items.values())
        total_ses = sum(v[1] for v in items.values())
        hit = [v for k, v in items.items() if k in exercised]
        out[metric] = {
            "items": len(items),
            "exercised": len(hit),
            "unweighted": len(hit) / len(items) if items else None,
            "by_occurrences": sum(v[0] for v in hit) / total_occ if total_occ else None,
            "by_sessions": sum(v[1] for v in hit) / total_ses if total_ses else None,
        }
    return out


def _distance(a: dict, b: dict) -> float | None:
    keys = sorted(set(a) | set(b))
    p = [a.get(k, (0,))[0] for k in keys]
    q = [b.get(k, (0,))[0] for k in keys]
    if not sum(p) or not sum(q):
        return None
    return jensen_shannon_distance(p, q)


def _movers(now: PeriodCounts, before: PeriodCounts, min_users: int, top: int) -> dict[str, Any]:
    rows: list[dict[str, Any]] = []
    new: list[dict[str, Any]] = []
    vanished: list[dict[str, Any]] = []
    held_back = 0
    for kind, a, b in (("feature", now.features, before.features), ("transition", now.transitions, before.transitions)):
        for key in sorted(set(a) | set(b)):
            x_now, x_before = a.get(key, (0, 0, 0)), b.get(key, (0, 0, 0))
            if (x_now[1] and x_now[2] < min_users) or (x_before[1] and x_before[2] < min_users):
                held_back += 1
                continue
            share_now = x_now[1] / now.sessions if now.sessions else 0.0
            share_before = x_before[1] / before.sessions if before.sessions else 0.0
            row: dict[str, Any] = {
                "kind": kind,
                "path": list(key),
                "sessions_before": x_before[1],
                "sessions_now": x_now[1],
                "share_before": share_before,
                "share_now": share_now,
                "change": share_now - share_before,
            }
            if now.sessions and before.sessions:
                low, high = difference_interval(x_now[1], now.sessions, x_before[1], before.sessions)
                row["change_low"], row["change_high"] = low, high
                row["p_value"] = two_proportion_z_test(x_now[1], now.sessions, x_before[1], before.sessions)[1]
            rows.append(row)
            if kind == "transition" and x_now[1] and not x_before[1]:
                new.append({"path": list(key), "sessions": x_now[1], "users": x_now[2], "share": share_now})
            if kind == "transition" and x_before[1] and not x_now[1]:
                vanished.append(
                    {"path": list(key), "sessions": x_before[1], "users": x_before[2], "share": share_before}
                )
    rows.sort(key=lambda r: (-abs(r["change"]), r["kind"], r["path"]))
    new.sort(key=lambda r: (-r["sessions"], r["path"]))
    vanished.sort(key=lambda r: (-r["sessions"], r["path"]))
    return {"movers": rows[:top], "new": new[:top], "vanished": vanished[:top], "held_back": held_back}


def _journey_sessions(
    counts: PeriodCounts, journeys: list[tuple[str, list[str]]], min_users: int = 1
) -> dict[str, int | None]:
    """Sessions of each test's journey in the period; None when fewer than ``min_users`` distinct
    users may have taken it (the largest user count of one containing path is the bound used:
    a journey is shown only when that alone reaches the floor)."""
    if counts.paths is None:
        return {t: 0 for t, _ in journeys}
    runnable = [(t, tuple(counts.ids[e] for e in j)) for t, j in journeys if j and all(e in counts.ids for e in j)]
    which, seq = containing_sequences(
        counts.paths, [p for _, p in runnable], max_gaps=[0] * len(runnable), framed=[False] * len(runnable)
    )
    totals = np.zeros(len(runnable), dtype=np.int64)
    np.add.at(totals, which, counts.paths.weights[seq])
    reach = np.zeros(len(runnable), dtype=np.int64)
    if len(counts.path_users):
        np.maximum.at(reach, which, counts.path_users[seq])
    out: dict[str, int | None] = {t: 0 for t, _ in journeys}
    out.update(
        {t: (int(totals[i]) if totals[i] == 0 or reach[i] >= min_users else None) for i, (t, _) in enumerate(runnable)}
    )
    return out


def _grouped_coverage(
    ws: Workspace, query: str, group: str, exercised_t: set, **params: Any
) -> dict[Any, dict[str, Any]]:
    """Per group (bucket or segment value) of ``query``'s rows: transition occurrences, the part
    the suite exercises, the group's sessions and users, and its transitions by name (``edges``)."""
    names = feature_names(ws.con)
    rows = fetch_dicts(ws.con, query, include_automated=profile_included_automated(ws.con), **params)
    groups: dict[Any, dict[str, Any]] = {}
    for r in rows:
        g = groups.setdefault(
            r[group],
            {
                "sessions": int(r.get(f"{group}_sessions") or 0),
                "users": int(r.get(f"{group}_users") or 0),
                "occ": 0,
                "hit": 0,
                "sess": 0,
                "sess_hit": 0,
                "edges": [],
            },
        )
        g["edges"].append((names[r["a"]], names[r["b"]], int(r["occurrences"])))
        g["occ"] += r["occurrences"]
        g["sess"] += r["sessions"]
        if (names[r["a"]], names[r["b"]]) in exercised_t:
            g["hit"] += r["occurrences"]
            g["sess_hit"] += r["sessions"]
    return groups


def _divergence(edges: list[tuple[str, str, int]], suite_counts: dict[tuple[str, str], int]) -> float | None:
    """The Whittaker-Thomason discriminant of the suite against one period's usage chain, given as
    (source, target, occurrences) edges (bits per step); None without transitions."""
    if not edges:
        return None
    return discriminant(UsageModel.from_transitions(edges), suite_counts).bits_per_step


def _trend(
    ws: Workspace, period: Period, unit: str, exercised_t: set, suite_counts: dict[tuple[str, str], int]
) -> list[dict[str, Any]]:
    buckets = _grouped_coverage(
        ws, "list_bucket_transitions", "bucket", exercised_t, unit=unit, start=period.start, end=period.end
    )
    return [
        {
            "bucket": bucket.date().isoformat() if hasattr(bucket, "date") else str(bucket),
            "sessions": b["sessions"],
            "transitions_by_sessions": b["sess_hit"] / b["sess"] if b["sess"] else None,
            "transitions_by_occurrences": b["hit"] / b["occ"] if b["occ"] else None,
            "divergence": _divergence(b["edges"], suite_counts),
        }
        for bucket, b in sorted(buckets.items())
    ]


def _segments(ws: Workspace, period: Period, by: str, exercised_t: set, min_users: int) -> list[dict[str, Any]]:
    values = _grouped_coverage(
        ws, "list_segment_transitions", "value", exercised_t, by=by, start=period.start, end=period.end
    )
    return [
        {
            "segment": by,
            "value": value,
            "sessions": v["sessions"],
            "transitions_by_sessions": v["sess_hit"] / v["sess"] if v["sess"] else None,
            "transitions_by_occurrences": v["hit"] / v["occ"] if v["occ"] else None,
        }
        for value, v in sorted(values.items(), key=lambda kv: -kv[1]["sessions"])
        if v["users"] >= min_users
    ]


def audit(ws: Workspace, options: AuditOptions | None = None) -> dict[str, Any]:
    """Compare the current period with an earlier one, or this workspace with another."""
    options = options or AuditOptions()
    ws.require("sessions", "features", hint="run `gapfinder profile TELEMETRY -w ...` first")
    exercised_f, exercised_t, journeys = _exercised(ws)
    suite_counts = suite_transition_counts(ws)
    if options.against_workspace:
        current_period = options.period or Period(None, None, str(ws.path))
        with Workspace(options.against_workspace, read_only=True) as other:
            other.require("sessions", "features", hint="profile the other workspace first")
            before = _counts(other.con, Period(None, None, options.against_workspace))
    else:
        default_now, default_before = _default_periods(ws.con, time_zone(options.tz))
        current_period = options.period or default_now
        before_period = options.against or default_before
        before = _counts(ws.con, before_period)
    now = _counts(ws.con, current_period)
    window = None
    for counts, option in ((now, "--period"), (before, "--against")):
        if counts.sessions == 0:
            if window is None:
                row = fetch_dicts(
                    ws.con, "summarize_session_window", include_automated=profile_included_automated(ws.con)
                )[0]
                window = f"{str(row['first_start'])[:10]} to {str(row['last_start'])[:10]}"
            raise InputError(
                f"{option} {counts.period.label}: no sessions in that period (the workspace's sessions run from "
                f"{window}); give days inside it"
            )
    moves = _movers(now, before, options.min_users, options.top)
    journeys_now = _journey_sessions(now, journeys, options.min_users)
    journeys_before = _journey_sessions(before, journeys, options.min_users)
    # A journey held back before (None: fewer than min_users users) is listed without its count.
    irrelevant = [
        {"test_id": t, "path": j, "sessions_before": journeys_before[t], "sessions_now": journeys_now[t]}
        for t, j in journeys
        if journeys_before[t] != 0 and journeys_now[t] == 0
    ]
    result: dict[str, Any] = {
        "workspace": str(ws.path),
        "current": {**now.period.as_dict(), "sessions": now.sessions},
        "previous": {**before.period.as_dict(), "sessions": before.sessions},
        "distance": {
            "features": _distance(now.features, before.features),
            "transitions": _distance(now.transitions, before.transitions),
        },
        "movers": moves["movers"],
        "new": moves["new"],
        "vanished": moves["vanished"],
        "coverage": {
            "previous": _coverage(before, exercised_f, exercised_t),
            "current": _coverage(now, exercised_f, exercised_t),
        },
        "divergence": {
            "previous": _divergence([(a, b, v[0]) for (a, b), v in before.transitions.items()], suite_counts),
            "current": _divergence([(a, b, v[0]) for (a, b), v in now.transitions.items()], suite_counts),
        },
        "trend": _trend(ws, Period(None, None, "all"), options.trend, exercised_t, suite_counts),
        "trend_unit": options.trend,
        "irrelevant_tests": irrelevant,
        "held_back": moves["held_back"],
        "min_users": options.min_users,
    }
    if options.by:
        result["segments"] = _segments(ws, now.period, options.by, exercised_t, options.min_users)
    return result


def audit_json(result: dict[str, Any]) -> str:
    """The audit as stable JSON text."""
    return json.dumps(result, indent=2, sort_keys=True, default=str)
