"""Paths: transitions, contiguous k-paths and distinct full paths with their usage counts.

Every session path is framed as START → events → END. A k-path is a contiguous run of k states
of that frame (k = 2 gives the transitions), counted three ways: occurrences, sessions that
contain it, and distinct users. All counting happens in DuckDB (queries/create_kpaths.sql).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import duckdb

from gapfinder.errors import ConfigError
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.sql import fetch_dicts, run

__all__ = [
    "DEFAULT_MAX_K",
    "Listing",
    "build_paths",
    "feature_names",
    "list_features",
    "list_full_paths",
    "list_kpaths",
]

DEFAULT_MAX_K = 5


@dataclass
class Listing:
    """Rows of a listing plus what the privacy floor suppressed."""

    rows: list[dict[str, Any]]
    suppressed_count: int = 0
    suppressed_sessions: int = 0
    min_users: int = DEFAULT_MIN_USERS


def build_paths(
    con: duckdb.DuckDBPyConnection, *, max_k: int = DEFAULT_MAX_K, include_automated: bool = False
) -> None:
    """Write kpaths, full_paths and feature_usage from the sessions table."""
    if max_k < 2:
        raise ConfigError(f"--max-k {max_k}: k-paths need k >= 2 (2 gives transitions)")
    run(con, "create_kpaths", max_k=max_k, include_automated=include_automated)
    run(con, "create_full_paths", include_automated=include_automated)
    run(con, "create_feature_usage", include_automated=include_automated)


def feature_names(con: duckdb.DuckDBPyConnection) -> list[str]:
    """Event names indexed by event id (START = 0, END = 1)."""
    row = run(con, "list_feature_names").fetchone()
    return list(row[0]) if row and row[0] else []


def _total_sessions(con: duckdb.DuckDBPyConnection) -> int:
    return int(fetch_dicts(con, "summarize_sessions")[0]["session_count"] or 0)


def list_kpaths(
    con: duckdb.DuckDBPyConnection,
    *,
    min_k: int = 2,
    max_k: int = 2,
    min_users: int = DEFAULT_MIN_USERS,
    limit: int | None = None,
) -> Listing:
    """Contiguous paths of length min_k..max_k, most sessions first, privacy floor applied."""
    rows = fetch_dicts(
        con,
        "list_kpaths",
        names=feature_names(con),
        min_k=min_k,
        max_k=max_k,
        min_users=min_users,
        total_sessions=_total_sessions(con),
        limit=limit,
    )
    hidden = fetch_dicts(con, "count_kpaths_below_floor", min_k=min_k, max_k=max_k, min_users=min_users)[0]
    return Listing(rows, hidden["path_count"], hidden["session_count"], min_users)


def list_full_paths(
    con: duckdb.DuckDBPyConnection, *, min_users: int = DEFAULT_MIN_USERS, limit: int | None = None
) -> Listing:
    """Distinct complete paths, most sessions first, privacy floor applied."""
    rows = fetch_dicts(
        con,
        "list_full_paths",
        names=feature_names(con),
        min_users=min_users,
        total_sessions=_total_sessions(con),
        limit=limit,
    )
    hidden = fetch_dicts(con, "count_full_paths_below_floor", min_users=min_users)[0]
    return Listing(rows, hidden["path_count"], hidden["session_count"], min_users)


def list_features(
    con: duckdb.DuckDBPyConnection, *, min_users: int = DEFAULT_MIN_USERS, limit: int | None = None
) -> Listing:
    """Features by occurrences with sessions and users, privacy floor applied."""
    rows = fetch_dicts(
        con, "list_feature_usage", min_users=min_users, total_sessions=_total_sessions(con), limit=limit
    )
    hidden = fetch_dicts(con, "count_features_below_floor", min_users=min_users)[0]
    return Listing(rows, hidden["path_count"], hidden["session_count"], min_users)
