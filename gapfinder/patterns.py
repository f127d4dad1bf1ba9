"""The patterns stage: mine the workspace's sessions for gapped journeys and keep them.

Reads the distinct session paths and their users from the workspace (two small DuckDB queries),
hands integer arrays to the miner (``mining.py``), and writes the ``patterns`` table in one
transaction together with the parameters that produced it, so later stages (coverage, gaps) read
exactly what was listed.
"""

from __future__ import annotations

import json
import time
from dataclasses import dataclass, field, replace
from typing import Any

import duckdb
import numpy as np
import pyarrow as pa

from gapfinder.errors import ConfigError
from gapfinder.mining import DEFAULT_MAX_PATTERNS, PatternSet, SequenceDatabase, mine_patterns, resolve_min_support
from gapfinder.paths import Listing, feature_names
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.sql import fetch_arrow, fetch_dicts, first_row, list_arrays, registered, run
from gapfinder.workspace import StageRecord, Workspace, stage_clock

__all__ = [
    "DEFAULT_MAX_GAP",
    "DEFAULT_MAX_PATTERN_LENGTH",
    "DEFAULT_MIN_PATTERN_SUPPORT",
    "PATH_KINDS",
    "MiningOptions",
    "MiningRun",
    "list_patterns",
    "load_sequences",
    "mine_workspace",
    "profile_included_automated",
    "usage_paths",
]

DEFAULT_MIN_PATTERN_SUPPORT = 0.01
DEFAULT_MAX_PATTERN_LENGTH = 6
DEFAULT_MAX_GAP: int | None = 2


@dataclass(frozen=True)
class MiningOptions:
    """What to mine. ``min_support`` is a fraction of sessions (below 1) or a count of sessions.

    The defaults give a test lead a readable list: closed patterns only, at most two other events
    between consecutive steps, two to six steps, in at least 1 % of sessions.
    """

    min_support: float = DEFAULT_MIN_PATTERN_SUPPORT
    min_length: int = 2
    max_length: int = DEFAULT_MAX_PATTERN_LENGTH
    max_gap: int | None = DEFAULT_MAX_GAP
    closed: bool = True
    top_k: int | None = None
    max_patterns: int = DEFAULT_MAX_PATTERNS

    def as_parameters(self) -> dict[str, Any]:
        return {
            "min_support": self.min_support,
            "min_length": self.min_length,
            "max_length": self.max_length,
            "max_gap": self.max_gap,
            "closed": self.closed,
            "top_k": self.top_k,
        }


@dataclass
class MiningRun:
    """What one mining run found: the patterns and how they were obtained."""

    patterns: PatternSet
    min_support_sessions: int
    total_sessions: int
    distinct_paths: int
    seconds: float
    parameters: dict[str, Any] = field(default_factory=dict)


def profile_included_automated(con: duckdb.DuckDBPyConnection) -> bool:
    row = first_row(run(con, "read_last_run_parameters", stage="profile"))
    return bool(json.loads(row[0]).get("include_automated")) if row else False


def load_sequences(con: duckdb.DuckDBPyConnection, *, with_users: bool = True) -> SequenceDatabase:
    """The workspace's distinct session paths as a SequenceDatabase (arrays straight from Arrow)."""
    paths = fetch_arrow(con, "list_mining_paths")
    starts, items = list_arrays(paths.column("path"))
    items = items.astype(np.int32)
    weights = paths.column("sessions").to_numpy().astype(np.int64)
    path_ids = paths.column("path_id").to_numpy().astype(np.int64)
    if not with_users or len(weights) == 0:
        return SequenceDatabase(items, starts, weights, path_ids=path_ids)
    pairs = fetch_arrow(con, "list_path_users", include_automated=profile_included_automated(con))
    pair_paths = pairs.column("path_id").to_numpy().astype(np.int64)
    user_ids = pairs.column("user_no").to_numpy().astype(np.int32)
    sequence_of_pair = np.searchsorted(path_ids, pair_paths)
    counted = (sequence_of_pair < len(path_ids)) & (
        path_ids[np.minimum(sequence_of_pair, len(path_ids) - 1)] == pair_paths
    )
    sequence_of_pair, user_ids = sequence_of_pair[counted], user_ids[counted]
    user_ptr = np.zeros(len(path_ids) + 1, dtype=np.int64)
    np.cumsum(np.bincount(sequence_of_pair, minlength=len(path_ids)), out=user_ptr[1:])
    return SequenceDatabase(items, starts, weights, user_ptr=user_ptr, user_ids=user_ids, path_ids=path_ids)


def workspace_sequences(ws: Workspace, *, with_users: bool = True) -> SequenceDatabase:
    """``load_sequences`` kept on ``ws`` until profile runs again: `run` reads the distinct paths
    for mining, gap ranking and unused tests (0.9 s each at 50M high-entropy events). A database
    with users serves a request without them (the same arrays)."""
    kept = ws.derived("sequences", ("profile",), lambda: load_sequences(ws.con, with_users=with_users))
    if with_users and kept.user_ptr is None:
        ws.forget_derived("sequences")
        kept = ws.derived("sequences", ("profile",), lambda: load_sequences(ws.con))
    return kept if with_users else replace(kept, user_ptr=None, user_ids=None)


def _patterns_frame(patterns: PatternSet) -> pa.Table:
    values, offsets = patterns.flat_events()
    return pa.table(
        {
            "pattern_no": pa.array(np.arange(1, len(patterns) + 1, dtype=np.int32)),
            "k": pa.array(patterns.lengths, type=pa.int32()),
            "path": pa.ListArray.from_arrays(pa.array(offsets, type=pa.int32()), pa.array(values, type=pa.int32())),
            "sessions": pa.array(patterns.sessions, type=pa.int64()),
            "users": pa.array(patterns.users, type=pa.int64()),
            "is_closed": pa.array(patterns.is_closed, type=pa.bool_()),
        }
    )


def mine_workspace(ws: Workspace, options: MiningOptions | None = None) -> MiningRun:
    """Mine the workspace's sessions and store the patterns table (replacing an earlier one).

    Examples
    --------
    >>> with Workspace("ws.duckdb") as ws:  # doctest: +SKIP
    ...     found = mine_workspace(ws, MiningOptions(min_support=0.02, max_gap=1))
    """
    began = stage_clock()
    options = options or MiningOptions()
    ws.require("full_paths", "sessions", hint="run `gapfinder profile TELEMETRY -w ...` first")
    clock = time.perf_counter()
    db = workspace_sequences(ws)
    total = db.session_count
    threshold = resolve_min_support(options.min_support, total)
    patterns = mine_patterns(
        db,
        min_support=threshold,
        min_length=options.min_length,
        max_length=options.max_length,
        max_gap=options.max_gap,
        closed=options.closed,
        top_k=options.top_k,
        max_patterns=options.max_patterns,
    )
    seconds = time.perf_counter() - clock
    parameters = {**options.as_parameters(), "min_support_sessions": threshold, "total_sessions": total}
    record = StageRecord(
        began=began,
        stage="patterns",
        inputs=[str(ws.path)],
        parameters=parameters,
        row_counts={"distinct_paths": db.sequence_count, "patterns": len(patterns)},
    )
    frame = _patterns_frame(patterns)
    with ws.stage(record) as con:
        with registered(con, patterns_frame=frame):
            run(con, "create_patterns")
        run(con, "upsert_meta", key="patterns_parameters", value=json.dumps(parameters, sort_keys=True))
    return MiningRun(patterns, threshold, total, db.sequence_count, seconds, parameters)


def list_patterns(
    con: duckdb.DuckDBPyConnection,
    *,
    min_users: int = DEFAULT_MIN_USERS,
    limit: int | None = None,
    total_sessions: int | None = None,
) -> Listing:
    """The stored patterns, most sessions first, privacy floor applied."""
    if total_sessions is None:
        total_sessions = int(fetch_dicts(con, "summarize_sessions")[0]["session_count"] or 0)
    rows = fetch_dicts(
        con,
        "list_patterns",
        names=feature_names(con),
        min_users=min_users,
        total_sessions=total_sessions,
        limit=limit,
    )
    hidden = fetch_dicts(con, "count_patterns_below_floor", min_users=min_users)[0]
    return Listing(rows, hidden["path_count"], min_users)


PATH_KINDS = ("features", "transitions", "kpaths", "patterns", "full")


def usage_paths(
    ws: Workspace,
    kind: str = "transitions",
    *,
    min_support: float | None = None,
    min_users: int = DEFAULT_MIN_USERS,
    top: int | None = 50,
    max_length: int | None = None,
    mining: MiningOptions | None = None,
    one_per_journey: bool = True,
) -> dict[str, Any]:
    """The paths people take, of one kind, as a listing with the privacy floor applied.

    ``kind`` is one of features, transitions (k = 2, START/END included), kpaths (contiguous runs of
    3 or more states, up to ``max_length``), patterns (mined now with ``mining`` and stored) or full
    (complete session paths). ``min_support`` is a fraction of sessions (below 1) or a count; for
    patterns it defaults to ``mining.min_support``. Rows under ``min_users`` distinct users are held
    back and counted. With ``one_per_journey`` patterns that share more than half of their sessions
    are one row, as for gaps (``gaps.fold_families``); the others are counted under ``folded``.
    """
    from gapfinder.paths import list_features, list_full_paths, list_kpaths

    if kind not in PATH_KINDS:
        raise ConfigError(f"--kind {kind!r}: give one of {', '.join(PATH_KINDS)}")
    ws.require("sessions", "kpaths", "full_paths", hint="run `gapfinder profile TELEMETRY -w ...` first")
    con = ws.con
    total = int(fetch_dicts(con, "summarize_sessions")[0]["session_count"] or 0)
    limit = top or None
    result: dict[str, Any] = {"kind": kind, "workspace": str(ws.path), "total_sessions": total}
    if kind == "patterns":
        options = mining or MiningOptions()
        if min_support is not None:
            options = replace(options, min_support=min_support)
        if max_length is not None:
            options = replace(options, max_length=max_length, min_length=min(options.min_length, max_length))
        found = mine_workspace(ws, options)
        pool = None if not one_per_journey else max(300, 10 * (limit or 30))
        listing = list_patterns(
            con, min_users=min_users, limit=limit if not one_per_journey else pool, total_sessions=total
        )
        rows = [{**_without(r, "is_closed"), "closed": bool(r["is_closed"])} for r in listing.rows]
        if one_per_journey and rows:
            rows = _one_row_per_journey(con, rows, found.parameters.get("max_gap"), limit)
        result["one_per_journey"] = one_per_journey
        result["min_support_sessions"] = found.min_support_sessions
        result["mining"] = {
            **{k: v for k, v in found.parameters.items() if k not in ("total_sessions", "min_support_sessions")},
            "patterns_found": len(found.patterns),
            "distinct_paths": found.distinct_paths,
            "seconds": round(found.seconds, 3),
        }
    else:
        floor = resolve_min_support(min_support, total) if min_support is not None else 1
        result["min_support_sessions"] = floor
        common: dict[str, Any] = dict(min_users=min_users, min_sessions=floor, limit=limit, total_sessions=total)
        if kind == "features":
            listing = list_features(con, **common)
            rows = [{"k": 1, "path": [r["event"]], **_without(r, "event")} for r in listing.rows]
        elif kind == "transitions":
            listing = list_kpaths(con, min_k=2, max_k=2, **common)
            rows = listing.rows
        elif kind == "kpaths":
            stored = first_row(con.execute("SELECT coalesce(max(k), 2) FROM kpaths"))
            longest = int(stored[0]) if stored else 2
            if max_length is not None and max_length < 3:
                raise ConfigError(f"--max-length {max_length}: k-paths have 3 or more states; give 3 or more")
            listing = list_kpaths(con, min_k=3, max_k=min(max_length or longest, longest), **common)
            rows = listing.rows
        else:
            listing = list_full_paths(con, **common)
            rows = [{"k": len(r["path"]), **r} for r in listing.rows]
    result["rows"] = rows
    result["suppressed"] = listing.suppressed_count
    result["min_users"] = min_users
    return result


def _one_row_per_journey(
    con: duckdb.DuckDBPyConnection, rows: list[dict[str, Any]], max_gap: int | None, limit: int | None
) -> list[dict[str, Any]]:
    """Listed patterns folded into journey families by their session sets, as the gap listing does."""
    from gapfinder.gaps import fold_families
    from gapfinder.matching import containing_sequences
    from gapfinder.paths import feature_names
    from gapfinder.session_sets import session_sets

    names = feature_names(con)
    ids = {name: i for i, name in enumerate(names)}
    db = load_sequences(con, with_users=False)
    paths = [tuple(ids[e] for e in r["path"]) for r in rows]
    which, sequence = containing_sequences(db, paths, max_gaps=[max_gap] * len(paths), framed=[False] * len(paths))
    sets = session_sets(which, sequence, db.weights, len(paths))
    ranked = [
        {**r, "kind": "pattern", "score": float(r["sessions"]), "_ids": paths[n], "_index": n}
        for n, r in enumerate(rows)
    ]
    folded = fold_families(ranked, limit or len(ranked), sets)
    out = []
    for row in folded:
        row.pop("_index", None)
        row.pop("score", None)
        row.pop("kind", None)
        row.pop("family_sessions", None)
        row["folded"] = len(row["folded"])
        out.append(row)
    return out


def _without(row: dict[str, Any], key: str) -> dict[str, Any]:
    return {k: v for k, v in row.items() if k != key}
