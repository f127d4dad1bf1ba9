"""Sessionization and cleaning: from usable events to sessions, with automated traffic apart.

Without a session column each user's events are split at idle gaps longer than ``idle_minutes``
(default 30 minutes, the common practice in web-usage mining: Cooley, Mobasher & Srivastava,
"Data preparation for mining World Wide Web browsing patterns", Knowledge and Information Systems
1, 1999). Users whose behaviour is far outside the rest are flagged as automated; their sessions
stay in the ``sessions`` table with ``is_automated`` set and are left out of the usage profile.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any

import duckdb

from gapfinder.errors import ConfigError, InputError
from gapfinder.privacy import hmac_pads
from gapfinder.session_cuts import write_raw_sessions
from gapfinder.sql import fetch_dicts, first_row, run

__all__ = [
    "DEFAULT_ERROR_OUTCOMES",
    "SessionOptions",
    "SourceRowCounts",
    "build_sessions",
    "check_feature_count",
    "count_source_rows",
    "finish_sessions",
]

# Paths are rebuilt from (position << 16 | event id), so event ids must fit in 16 bits.
MAX_FEATURES = 65_534

DEFAULT_ERROR_OUTCOMES: tuple[str, ...] = (
    "error",
    "err",
    "fail",
    "failed",
    "failure",
    "exception",
    "crash",
    "timeout",
)


@dataclass(frozen=True)
class SessionOptions:
    """How events become sessions.

    idle_minutes: a gap longer than this starts a new session (ignored with a session column).
    drop_events: event names removed before sessionization (heartbeats, background pings).
    collapse_repeats: drop an event equal to the one just before it in the same session.
    max_events: sessions longer than this are cut (0 for no cap); the cut is reported.
    error_outcomes: outcome values (case-insensitive) that mean the event failed.
    flag_automated: single out users far outside the rest (see create_automated_users.sql).
    automated_min_z, automated_min_ratio, automated_min_events: its three thresholds.
    """

    idle_minutes: float = 30.0
    drop_events: tuple[str, ...] = ()
    collapse_repeats: bool = False
    max_events: int = 500
    error_outcomes: tuple[str, ...] = DEFAULT_ERROR_OUTCOMES
    flag_automated: bool = True
    automated_min_z: float = 3.5
    automated_min_ratio: float = 10.0
    automated_min_events: int = 200

    def __post_init__(self) -> None:
        if self.idle_minutes <= 0:
            raise ConfigError(f"--idle {self.idle_minutes}: give a positive number of minutes")
        if self.max_events < 0:
            raise ConfigError(f"--max-events {self.max_events}: give 0 (no cap) or a positive cap")

    def as_parameters(self) -> dict[str, Any]:
        return asdict(self)


@dataclass
class SourceRowCounts:
    """What reading found: rows read, rows rejected per reason, noise dropped, time range."""

    rows_read: int = 0
    usable_rows: int = 0
    rejected: dict[str, int] = field(default_factory=dict)
    noise_dropped: int = 0
    naive_timestamps: int = 0
    first_ts: Any = None
    last_ts: Any = None

    @classmethod
    def from_rows(cls, rows: list[dict[str, Any]]) -> SourceRowCounts:
        """From the rows of count_source_rows.sql (one per reason, NULL for usable rows)."""
        counts = cls()
        for row in rows:
            counts.rows_read += row["row_count"]
            counts.naive_timestamps += row["naive_ts_count"]
            if row["reason"] is None:
                counts.usable_rows = row["row_count"]
                counts.noise_dropped = row["noise_count"]
                counts.first_ts, counts.last_ts = row["first_ts"], row["last_ts"]
            else:
                counts.rejected[row["reason"]] = row["row_count"]
        return counts


def count_source_rows(con: duckdb.DuckDBPyConnection, options: SessionOptions) -> SourceRowCounts:
    """Count source rows per rejection reason. One scan of ``mapped_source`` writes the temporary
    ``source_digest``, which ``build_sessions`` then reads its event vocabulary from."""
    run(con, "create_source_digest", noise_events=list(options.drop_events))
    return SourceRowCounts.from_rows(fetch_dicts(con, "count_source_rows"))


def build_sessions(
    con: duckdb.DuckDBPyConnection,
    *,
    options: SessionOptions,
    use_session_column: bool,
    include_automated: bool = False,
    pseudonymize_key: bytes | None = None,
) -> None:
    """Write features, users, automated_users, full_paths and sessions from ``mapped_source``.

    One pass over the events groups each user's events into a sorted list of integer keys, from
    which the sessions are cut; the dictionaries (event names; outcome, app version and platform)
    come from the ``source_digest`` that ``count_source_rows`` wrote (made here when it did not
    run). Everything after works on sessions.
    """
    noise = list(options.drop_events)
    error_outcomes = [o.lower() for o in options.error_outcomes]
    if not first_row(run(con, "has_temp_table", name="source_digest"))[0]:
        run(con, "create_source_digest", noise_events=noise)
    run(con, "create_event_vocabulary")
    run(con, "drop_source_digest")
    run(con, "create_features")
    feature_count = run(con, "count_features").fetchall()
    check_feature_count(int(feature_count[0][0]) if feature_count else 0)
    inner, outer = hmac_pads(pseudonymize_key) if pseudonymize_key else (None, None)
    # One pass groups the events into sorted lists of integer keys (per session with a session
    # column, else per user); the user keys come from those lists and the sessions are cut from
    # them, so no sort of every event row is needed.
    run(con, "create_event_attributes", error_outcomes=error_outcomes)
    run(con, "create_event_codes")
    run(con, "drop_event_vocabulary")
    run(con, "create_event_lists", by_session=use_session_column)
    run(con, "drop_event_codes")
    run(con, "create_user_keys_from_event_lists")
    run(con, "create_user_labels", inner_pad=inner, outer_pad=outer)
    write_raw_sessions(
        con,
        idle_us=None if use_session_column else round(options.idle_minutes * 60 * 1_000_000),
        collapse_repeats=options.collapse_repeats,
        max_events=options.max_events,
    )
    run(con, "drop_event_attributes")
    finish_sessions(con, options=options, include_automated=include_automated)


def check_feature_count(count: int) -> None:
    """Refuse more distinct event names than paths can encode."""
    if count > MAX_FEATURES:
        raise InputError(
            f"the telemetry has {count:,} distinct event names; gapfinder handles up to "
            f"{MAX_FEATURES:,}: map a coarser event column or drop the noisiest events with --drop"
        )


def finish_sessions(con: duckdb.DuckDBPyConnection, *, options: SessionOptions, include_automated: bool) -> None:
    """From the temporary table raw_sessions (one row per session, from either engine): write
    automated_users, full_paths and sessions, then drop the temporary tables."""
    run(
        con,
        "create_automated_users",
        min_robust_z=options.automated_min_z,
        min_ratio=options.automated_min_ratio,
        # Turning flagging off keeps the (then empty) table so later stages read one schema.
        min_events=options.automated_min_events if options.flag_automated else 2**62,
    )
    run(con, "create_full_paths", include_automated=include_automated)
    run(con, "create_sessions")
    run(con, "create_user_paths")
    run(con, "update_full_path_users", include_automated=include_automated)
    run(con, "drop_raw_sessions")
    run(con, "drop_user_keys")
