"""Paths: transitions, contiguous k-paths and distinct full paths with their usage counts.

Every session path is framed as START → events → END. A k-path is a contiguous run of k states
of that frame (k = 2 gives the transitions), counted three ways: occurrences, sessions that
contain it, and distinct users. They are counted over the distinct full paths and the users' sets of
them by a compiled kernel (gapfinder.kpath_counts) and written to the kpaths table by DuckDB
(queries/create_kpaths.sql).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import duckdb
import numpy as np
import pyarrow as pa

from gapfinder.disclosure import complementary_suppression, kpath_parents
from gapfinder.errors import ConfigError
from gapfinder.kpath_counts import KpathCounts, count_framed_kpaths, frame_paths, in_code_order
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.sql import fetch_arrow, fetch_dicts, fetch_numpy, first_row, list_arrays, registered, run
from gapfinder.workspace import release_cached_memory

__all__ = [
    "DEFAULT_MAX_K",
    "Listing",
    "build_paths",
    "feature_names",
    "hidden_full_path_ids",
    "hidden_kpath_codes",
    "id_bits",
    "list_features",
    "list_full_paths",
    "list_kpaths",
]

DEFAULT_MAX_K = 5
MAX_K = 7


@dataclass
class Listing:
    """Rows of a listing plus what the privacy floor suppressed."""

    rows: list[dict[str, Any]]
    suppressed_count: int = 0
    min_users: int = DEFAULT_MIN_USERS


def id_bits(feature_count: int) -> int:
    """Bits needed for one event id when feature_count ids (START and END included) exist."""
    return max(feature_count - 1, 1).bit_length()


def build_paths(con: duckdb.DuckDBPyConnection, *, max_k: int = DEFAULT_MAX_K, include_automated: bool = False) -> None:
    """Write kpaths (features, transitions and k-paths up to max_k) from full_paths and sessions."""
    if not 2 <= max_k <= MAX_K:
        raise ConfigError(f"--max-k {max_k}: give 2 to {MAX_K} (2 counts transitions only)")
    row = first_row(run(con, "count_features"))
    bits = id_bits(int(row[0]) if row else 2)
    if max_k * bits > 60:
        raise ConfigError(
            f"--max-k {max_k}: with {2**bits - 2:,}+ distinct events a path of {max_k} steps does not "
            f"fit in 60 bits; use --max-k {60 // bits} or less"
        )
    if not first_row(run(con, "has_temp_table", name="user_paths"))[0]:  # profiling made it, unless resumed
        run(con, "create_user_paths")
    counts = _count_runs(con, max_k=max_k, bits=bits, include_automated=include_automated)
    run(con, "drop_user_paths")
    frame = counts.table()
    del counts
    with registered(con, kpath_counts=frame):
        run(con, "create_kpaths")


def _count_runs(con: duckdb.DuckDBPyConnection, *, max_k: int, bits: int, include_automated: bool) -> KpathCounts:
    """The k-path counts over the distinct paths that count and the users' sets of them.

    Only the framed paths, the signatures and the counter's own arrays are held while it counts:
    the path lists are dropped once framed and DuckDB's cache is handed back (100M high-entropy
    events: the count's peak 4.94 → 4.26 GB, measured with the release alone)."""
    paths = fetch_arrow(con, "list_counted_full_paths")
    path_ids = paths.column("path_id").to_numpy()
    sessions = paths.column("sessions").to_numpy()
    starts, framed = frame_paths(*list_arrays(paths.column("path")))
    del paths
    signatures = fetch_arrow(con, "list_path_signatures", include_automated=include_automated)
    signature_offsets, signature_path_ids = list_arrays(signatures.column("signature"))
    user_counts = signatures.column("user_count").to_numpy()
    del signatures
    top = int(max(path_ids.max(initial=0), signature_path_ids.max(initial=0)))
    index_of_id = np.full(top + 1, -1, dtype=np.int32)
    index_of_id[path_ids] = np.arange(len(path_ids), dtype=np.int32)
    signature_paths = index_of_id[signature_path_ids]
    del index_of_id, signature_path_ids
    release_cached_memory(con)
    return count_framed_kpaths(
        starts, framed, sessions, signature_offsets, signature_paths, user_counts, max_k=max_k, bits=bits
    )


def feature_names(con: duckdb.DuckDBPyConnection) -> list[str]:
    """Event names indexed by event id (START = 0, END = 1)."""
    row = first_row(run(con, "list_feature_names"))
    return list(row[0]) if row and row[0] else []


def _total_sessions(con: duckdb.DuckDBPyConnection) -> int:
    return int(fetch_dicts(con, "summarize_sessions")[0]["session_count"] or 0)


def hidden_kpath_codes(con: duckdb.DuckDBPyConnection, *, min_users: int) -> np.ndarray:
    """Packed codes of the k-paths no listing may show: under the user floor, or hidden to protect
    one that is (``gapfinder.disclosure``). The same cells are hidden in every listing."""
    cells = fetch_numpy(con, "list_kpath_cells")
    codes = cells["code"].astype(np.uint64, copy=False)
    if len(codes) == 0:
        return codes
    primary = cells["users"] < min_users
    occurrences = cells["occurrences"]
    del cells  # the users column is no longer needed
    codes, occurrences, primary = in_code_order(codes, occurrences, primary)
    counted = run(con, "count_features").fetchall()
    prefix, suffix = kpath_parents(codes, id_bits(int(counted[0][0]) if counted else 2))
    hidden = complementary_suppression(codes, occurrences, primary, [prefix, suffix])
    return codes[hidden]


def hidden_full_path_ids(con: duckdb.DuckDBPyConnection, *, min_users: int) -> np.ndarray:
    """Ids of the complete paths no listing may show (they partition all sessions)."""
    cells = fetch_numpy(con, "list_full_path_cells")
    ids = cells["path_id"]
    if len(ids) == 0:
        return ids
    users = cells["users"]
    sessions = cells["sessions"]
    groups = [np.full(len(ids), -1, dtype=np.int64)]  # one group: every path, whose total is all sessions
    return ids[complementary_suppression(ids, sessions, users < min_users, groups)]


def _hidden_of_length(hidden_codes: np.ndarray, min_k: int, max_k: int) -> np.ndarray:
    """The hidden codes of k = min_k..max_k: a listing's anti-join then builds its hash table over
    those only (at 50M high-entropy events 16.5M codes are hidden, a few hundred of them features)."""
    k = hidden_codes.astype(np.uint64) >> np.uint64(60)
    return hidden_codes[(k >= min_k) & (k <= max_k)]


def _code_frame(codes: np.ndarray) -> pa.Table:
    return pa.table({"code": pa.array(codes, type=pa.uint64())})


def list_kpaths(
    con: duckdb.DuckDBPyConnection,
    *,
    min_k: int = 2,
    max_k: int = 2,
    min_users: int = DEFAULT_MIN_USERS,
    min_sessions: int = 1,
    limit: int | None = None,
    total_sessions: int | None = None,
    hidden: np.ndarray | None = None,
) -> Listing:
    """Contiguous paths of length min_k..max_k, most sessions first, suppression applied.

    ``suppressed_count`` counts every hidden row of that length, whatever ``min_sessions``.
    ``hidden`` is ``hidden_kpath_codes(con, min_users=min_users)`` when the caller has it already."""
    if hidden is None:
        hidden = hidden_kpath_codes(con, min_users=min_users)
    hidden = _hidden_of_length(hidden, min_k, max_k)
    names = feature_names(con)
    with registered(con, hidden_kpath_codes=_code_frame(hidden)):
        rows = fetch_dicts(
            con,
            "list_kpaths",
            names=names,
            bits=id_bits(len(names)),
            min_k=min_k,
            max_k=max_k,
            min_users=min_users,
            min_sessions=min_sessions,
            total_sessions=_total_sessions(con) if total_sessions is None else total_sessions,
            limit=limit,
        )
    return Listing(rows, len(hidden), min_users)


def list_full_paths(
    con: duckdb.DuckDBPyConnection,
    *,
    min_users: int = DEFAULT_MIN_USERS,
    min_sessions: int = 1,
    limit: int | None = None,
    total_sessions: int | None = None,
) -> Listing:
    """Distinct complete paths, most sessions first, suppression applied."""
    hidden = hidden_full_path_ids(con, min_users=min_users)
    with registered(con, hidden_full_path_ids=pa.table({"path_id": pa.array(hidden)})):
        rows = fetch_dicts(
            con,
            "list_full_paths",
            names=feature_names(con),
            min_users=min_users,
            min_sessions=min_sessions,
            total_sessions=_total_sessions(con) if total_sessions is None else total_sessions,
            limit=limit,
        )
    return Listing(rows, len(hidden), min_users)


def list_features(
    con: duckdb.DuckDBPyConnection,
    *,
    min_users: int = DEFAULT_MIN_USERS,
    min_sessions: int = 1,
    limit: int | None = None,
    total_sessions: int | None = None,
    hidden: np.ndarray | None = None,
) -> Listing:
    """Features by occurrences with sessions and users, suppression applied (``hidden`` as in
    ``list_kpaths``)."""
    if hidden is None:
        hidden = hidden_kpath_codes(con, min_users=min_users)
    hidden = _hidden_of_length(hidden, 1, 1)
    with registered(con, hidden_kpath_codes=_code_frame(hidden)):
        rows = fetch_dicts(
            con,
            "list_feature_usage",
            min_users=min_users,
            min_sessions=min_sessions,
            total_sessions=_total_sessions(con) if total_sessions is None else total_sessions,
            limit=limit,
        )
    return Listing(rows, len(hidden), min_users)
