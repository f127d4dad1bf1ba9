"""The profile stage: read telemetry, sessionize it, count its paths and fit the usage model.

This is what ``gapfinder profile`` runs. All of it is written to the workspace in one
transaction; ``summarize_profile`` reads the summary back from the workspace at any time.
"""

from __future__ import annotations

import contextlib
import json
import os
from collections.abc import Callable, Iterator, Sequence
from dataclasses import asdict, dataclass, field
from datetime import datetime
from typing import TYPE_CHECKING, Any

import duckdb
import pyarrow as pa

from gapfinder.engines import EventEngine, make_engine
from gapfinder.errors import InputError, QueryError
from gapfinder.paths import (
    DEFAULT_MAX_K,
    build_paths,
    feature_names,
    hidden_kpath_codes,
    id_bits,
    list_features,
    list_full_paths,
    list_kpaths,
)
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.report.markdown import privacy_note
from gapfinder.sessions import SessionOptions
from gapfinder.sources import OpenedSource
from gapfinder.sources.feature_keys import FeatureKeys
from gapfinder.sql import fetch_dicts, first_row, registered, run
from gapfinder.usage_model import END, START, UsageModel
from gapfinder.workspace import StageRecord, Workspace, open_for_stage

if TYPE_CHECKING:
    from gapfinder.engines.spark import SparkSettings

__all__ = ["ProfileOptions", "load_usage_model", "profile_telemetry", "summarize_profile"]

Progress = Callable[[str], None]


@dataclass(frozen=True)
class ProfileOptions:
    """Everything ``profile`` can be told; the defaults suit most product telemetry."""

    mapping: dict[str, str] = field(default_factory=dict)
    feature_keys: FeatureKeys = field(default_factory=FeatureKeys)
    ts_unit: str | None = None
    ts_format: str | None = None
    sessions: SessionOptions = field(default_factory=SessionOptions)
    max_k: int = DEFAULT_MAX_K
    include_automated: bool = False
    pseudonymize_key: bytes | None = None
    threads: int | None = None
    memory_limit: str | None = None
    # None: every pass in DuckDB; else the event-scale passes on Apache Spark (gapfinder.engines.spark).
    spark: SparkSettings | None = None


def _iso(value: Any) -> str | None:
    return value.isoformat() if isinstance(value, datetime) else None


def _fit_model(con: duckdb.DuckDBPyConnection) -> UsageModel:
    names = feature_names(con)
    edges = [
        (r["source"], r["target"], r["occurrences"])
        for r in fetch_dicts(con, "list_transition_counts", names=names, bits=id_bits(len(names)))
    ]
    model = UsageModel.from_transitions(edges)
    edge_rows = [
        {"source": a, "target": b, "count": d["count"], "probability": d["probability"]}
        for a, b, d in sorted(model.G.edges(data=True))
    ]
    edge_frame = pa.Table.from_pylist(
        edge_rows,
        schema=pa.schema(
            [("source", pa.string()), ("target", pa.string()), ("count", pa.int64()), ("probability", pa.float64())]
        ),
    )
    visit_frame = pa.Table.from_pylist(
        [asdict(v) for v in model.feature_visits()],
        schema=pa.schema(
            [
                ("event", pa.string()),
                ("expected_visits", pa.float64()),
                ("visit_probability", pa.float64()),
                ("expected_sessions_to_first", pa.float64()),
                ("long_run_share", pa.float64()),
            ]
        ),
    )
    with registered(con, usage_edges_frame=edge_frame, feature_model_frame=visit_frame):
        run(con, "create_usage_edges")
        run(con, "create_feature_model")
    return model


def load_usage_model(con: duckdb.DuckDBPyConnection) -> UsageModel:
    """The usage model as stored in the workspace (no refit)."""
    rows = con.execute("SELECT source, target, count FROM usage_edges").fetchall()
    return UsageModel.from_transitions((a, b, int(c)) for a, b, c in rows)


@contextlib.contextmanager
def _reading(label: str) -> Iterator[None]:
    """Database errors while the telemetry is read name the input and never quote its rows."""
    try:
        yield
    except QueryError as exc:
        raise InputError(f"{label}: cannot be read: {exc.reason}; fix or remove that row") from None


def profile_telemetry(
    inputs: Sequence[str | os.PathLike[str]],
    workspace: str | os.PathLike[str],
    options: ProfileOptions | None = None,
    *,
    progress: Progress | None = None,
    top: int = 10,
    min_users: int = DEFAULT_MIN_USERS,
) -> dict[str, Any]:
    """Profile telemetry into ``workspace`` and return the summary (see ``summarize_profile``).

    Examples
    --------
    >>> summary = profile_telemetry(["sample_telemetry/field"], "ws.duckdb")  # doctest: +SKIP
    >>> summary["sessions"]["count"]  # doctest: +SKIP
    """
    options = options or ProfileOptions()
    say = progress or (lambda _message: None)
    with open_for_stage(workspace, threads=options.threads, memory_limit=options.memory_limit) as ws:
        record = StageRecord(
            stage="profile",
            inputs=[os.fspath(i) for i in inputs],
            parameters={
                "mapping": options.mapping,
                "feature_keys": options.feature_keys.as_parameters(),
                "ts_unit": options.ts_unit,
                "ts_format": options.ts_format,
                "sessions": options.sessions.as_parameters(),
                "max_k": options.max_k,
                "include_automated": options.include_automated,
                "pseudonymized": options.pseudonymize_key is not None,
            },
        )
        engine = make_engine(options.spark)
        if options.spark is not None:
            record.parameters["engine"] = options.spark.as_parameters()
        say("reading telemetry" if options.spark is None else "reading telemetry with Spark")
        try:
            source = engine.open(ws.con, inputs, options)
            return _profile_source(ws, engine, source, record, options, say=say, top=top, min_users=min_users)
        finally:
            engine.close()


def _profile_source(
    ws: Workspace,
    engine: EventEngine,
    source: OpenedSource,
    record: StageRecord,
    options: ProfileOptions,
    *,
    say: Progress,
    top: int,
    min_users: int,
) -> dict[str, Any]:
    with _reading(source.files.label):
        counts = engine.count_rows(ws.con, options.sessions)
    if counts.rows_read == 0:
        raise InputError(f"{source.files.label}: no events in the input (0 rows)")
    if counts.usable_rows - counts.noise_dropped <= 0:
        reasons = ", ".join(f"{n} {r}" for r, n in counts.rejected.items()) or "all were noise"
        raise InputError(f"{source.files.label}: none of {counts.rows_read} rows is usable ({reasons})")
    reading = {
        "label": source.files.label,
        "format": source.files.format,
        "file_count": source.file_count,
        "mapping": source.mapping,
        "timestamp": source.timestamp.describe(),
        "naive_timestamps": counts.naive_timestamps,
        "rows_read": counts.rows_read,
        "usable_rows": counts.usable_rows,
        "rejected": counts.rejected,
        "noise_dropped": counts.noise_dropped,
        "first_ts": _iso(counts.first_ts),
        "last_ts": _iso(counts.last_ts),
        "formed_by": _formed_by(source, options.sessions.idle_minutes),
        "segment_columns": source.segment_columns,
        "notes": source.notes,
        "feature_keys": source.feature_keys.as_dict() if source.feature_keys else None,
        "feature_key_options": options.feature_keys.as_parameters(),
        "pseudonymized": options.pseudonymize_key is not None,
    }
    with ws.stage(record) as con:
        cleared = _clear_dependent_stages(ws)
        say("forming sessions")
        with _reading(source.files.label):
            engine.build_sessions(
                con,
                options=options.sessions,
                use_session_column=source.has_session_column,
                include_automated=options.include_automated,
                pseudonymize_key=options.pseudonymize_key,
            )
        say("counting paths")
        ws.release_cached_memory()  # the k-path counter holds arrays of every k-path it finds
        build_paths(con, max_k=options.max_k, include_automated=options.include_automated)
        say("fitting the usage model")
        _fit_model(con)
        run(con, "upsert_meta", key="profile_reading", value=json.dumps(reading, sort_keys=True))
        stats = fetch_dicts(con, "summarize_sessions")[0]
        record.row_counts = {
            "rows_read": counts.rows_read,
            "sessions": stats["session_count"],
            "users": stats["user_count"],
            "features": len([n for n in feature_names(con) if n not in (START, END)]),
        }
    # The summary only reads, so it runs after the commit: the tables written in the transaction
    # (30M k-paths at 100M high-entropy events) stay in memory until then, and the summary's
    # suppression holds arrays of every k-path beside them (profile's peak 4.69 -> GB).
    ws.release_cached_memory()
    summary = summarize_profile(ws, top=top, min_users=min_users)
    summary["cleared"] = cleared
    ws.extend_recorded_run(record)
    return summary


def _formed_by(source: OpenedSource, idle_minutes: float) -> str:
    if not source.has_session_column:
        return f"idle gaps longer than {idle_minutes:g} minutes"
    column = source.mapping["session_id"]
    if column == "session_id" and source.files.format == "xes":
        return "the log's traces (cases)"
    if column == "session_id" and source.files.format == "otlp-logs":
        return "the session.id attribute"
    if column == "session_id" and source.files.format == "otlp-traces":
        return "the session.id attribute, else the trace"
    return f"the input's session column {column!r}"


# Stages whose tables hold event ids of the profile they were built on, with their meta keys.
_DEPENDENT_STAGES = {
    "suite": ((("suite_tests", "drop_suite_tests"), ("suite_steps", "drop_suite_steps")), "suite_reading"),
    "patterns": ((("patterns", "drop_patterns"),), "patterns_parameters"),
    "plan": ((("plan_scenarios", "drop_plan_scenarios"),), "plan"),
}


def _clear_dependent_stages(ws: Workspace) -> list[str]:
    """Drop the suite, patterns and plan of an earlier profile: a new profile renumbers events, so
    their event ids would silently point at other features. Returns the stages cleared."""
    cleared = []
    for stage, (tables, meta_key) in _DEPENDENT_STAGES.items():
        present = [query for table, query in tables if ws.has_table(table)]
        for query in present:
            run(ws.con, query)
        run(ws.con, "delete_meta", key=meta_key)
        if present:
            cleared.append(stage)
    return cleared


def summarize_profile(ws: Workspace, *, top: int = 10, min_users: int = DEFAULT_MIN_USERS) -> dict[str, Any]:
    """The profile summary from the workspace: reading, sessions, features, paths, model, bots."""
    ws.require("sessions", "kpaths", "usage_edges", hint="run `gapfinder profile TELEMETRY -w ...` first")
    con = ws.con
    meta = first_row(con.execute("SELECT value FROM meta WHERE key = 'profile_reading'"))
    reading = json.loads(meta[0]) if meta else {}
    stats = fetch_dicts(con, "summarize_sessions")[0]
    names = feature_names(con)
    total = int(stats["session_count"] or 0)
    # The suppression pattern is computed over every k-path once and shared by both listings.
    hidden = hidden_kpath_codes(con, min_users=min_users)
    features = list_features(con, min_users=min_users, limit=top, total_sessions=total, hidden=hidden)
    transitions = list_kpaths(
        con, min_k=2, max_k=2, min_users=min_users, limit=top, total_sessions=total, hidden=hidden
    )
    full_paths = list_full_paths(con, min_users=min_users, limit=top, total_sessions=total)
    distinct_paths = first_row(con.execute("SELECT count(*) FROM full_paths"))
    model = load_usage_model(con)
    accounts = fetch_dicts(con, "list_automated_users")
    return {
        "workspace": str(ws.path),
        "reading": reading,
        "sessions": {
            "count": stats["session_count"],
            "users": stats["user_count"],
            "events": stats["event_count"],
            "formed_by": reading.get("formed_by"),
            "length": {
                "median": stats["length_median"],
                "p95": stats["length_p95"],
                "max": stats["length_max"],
            },
            "truncated": stats["truncated_count"],
            "with_errors": stats["error_session_count"],
        },
        "features": {
            "count": len([n for n in names if n not in (START, END)]),
            "top": features.rows,
            "suppressed": features.suppressed_count,
        },
        "transitions": {"top": transitions.rows, "suppressed": transitions.suppressed_count},
        "full_paths": {
            "distinct": int(distinct_paths[0]) if distinct_paths else 0,
            "top": full_paths.rows,
            "suppressed": full_paths.suppressed_count,
        },
        "usage_model": {
            "expected_session_length": model.expected_session_length(),
            "most_probable_paths": [{"path": path, "probability": p} for path, p in model.most_probable_paths(5)],
        },
        "automated": {
            "users": stats["automated_user_count"],
            "sessions": stats["automated_session_count"],
            "events": stats["automated_event_count"],
            "accounts": accounts,
        },
        "privacy": {
            "min_users": min_users,
            "pseudonymized": bool(reading.get("pseudonymized")),
            "note": privacy_note(min_users, bool(reading.get("pseudonymized"))),
        },
    }


def summary_to_json(summary: dict[str, Any]) -> str:
    """The summary as JSON text (stable key order)."""
    return json.dumps(summary, indent=2, sort_keys=True, default=str)
