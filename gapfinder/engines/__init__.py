"""Engines for the event-scale passes of ``profile``: DuckDB on one machine, Apache Spark past it.

An engine reads the telemetry, counts its rows per rejection reason and forms the sessions: the
only work that touches every event. What it hands back is the same in both: the ``features`` and
``users`` tables and the temporary table ``raw_sessions`` (one row per session) in the DuckDB
workspace; ``sessions.finish_sessions`` and every later stage run on those, unchanged.

>>> engine = DuckDBEngine()
>>> engine.name
'duckdb'
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from typing import TYPE_CHECKING, Protocol

import duckdb

from gapfinder.sessions import SessionOptions, SourceRowCounts, build_sessions, count_source_rows
from gapfinder.sources import OpenedSource, open_telemetry
from gapfinder.sources.feature_keys import FeatureKeys

if TYPE_CHECKING:
    from gapfinder.engines.spark import SparkSettings

__all__ = ["ENGINE_NAMES", "DuckDBEngine", "EventEngine", "SourceRequest", "make_engine"]

ENGINE_NAMES = ("duckdb", "spark")


class SourceRequest(Protocol):
    """What an engine needs to know about reading the telemetry (``ProfileOptions`` is one)."""

    @property
    def mapping(self) -> dict[str, str]: ...
    @property
    def feature_keys(self) -> FeatureKeys: ...
    @property
    def ts_unit(self) -> str | None: ...
    @property
    def ts_format(self) -> str | None: ...


class EventEngine(Protocol):
    """The event-scale passes of ``profile``, in the order they are called."""

    name: str

    def open(
        self, con: duckdb.DuckDBPyConnection, inputs: Sequence[str | os.PathLike[str]], request: SourceRequest
    ) -> OpenedSource:
        """Map the telemetry onto the canonical columns; say how it was read."""
        ...

    def count_rows(self, con: duckdb.DuckDBPyConnection, options: SessionOptions) -> SourceRowCounts:
        """Rows read, rejected per reason, noise, time range: one pass over the events."""
        ...

    def build_sessions(
        self,
        con: duckdb.DuckDBPyConnection,
        *,
        options: SessionOptions,
        use_session_column: bool,
        include_automated: bool,
        pseudonymize_key: bytes | None,
    ) -> None:
        """Write features, users, automated_users, full_paths and sessions into the workspace."""
        ...

    def close(self) -> None:
        """Release what the engine holds for this input (scratch and staging folders)."""
        ...


class DuckDBEngine:
    """Every pass in the workspace's own DuckDB connection (out of core, one machine)."""

    name = "duckdb"

    def __init__(self) -> None:
        self._source: OpenedSource | None = None

    def open(
        self, con: duckdb.DuckDBPyConnection, inputs: Sequence[str | os.PathLike[str]], request: SourceRequest
    ) -> OpenedSource:
        from gapfinder.sessions import MAX_FEATURES

        self._source = open_telemetry(
            con,
            inputs,
            request.mapping,
            ts_unit=request.ts_unit,
            ts_format=request.ts_format,
            feature_keys=request.feature_keys,
            max_names=MAX_FEATURES,
        )
        return self._source

    def count_rows(self, con: duckdb.DuckDBPyConnection, options: SessionOptions) -> SourceRowCounts:
        return count_source_rows(con, options)

    def build_sessions(
        self,
        con: duckdb.DuckDBPyConnection,
        *,
        options: SessionOptions,
        use_session_column: bool,
        include_automated: bool,
        pseudonymize_key: bytes | None,
    ) -> None:
        build_sessions(
            con,
            options=options,
            use_session_column=use_session_column,
            include_automated=include_automated,
            pseudonymize_key=pseudonymize_key,
        )
        con.unregister("mapped_source")

    def close(self) -> None:
        if self._source is not None:
            self._source.close()
            self._source = None


def make_engine(spark: SparkSettings | None) -> EventEngine:
    """DuckDB without Spark settings, else the Spark engine with them."""
    if spark is None:
        return DuckDBEngine()
    from gapfinder.engines.spark import SparkEngine

    return SparkEngine(spark)
