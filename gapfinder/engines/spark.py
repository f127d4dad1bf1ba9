"""The Spark engine: the event-scale passes of ``profile`` on Apache Spark, for telemetry past one machine.

Spark reads the events (Parquet on any path it can read: ``s3a://``, ``abfss://``, ``hdfs://``,
local), maps them onto the canonical columns (``spark_source``), counts the rows per rejection
reason and forms the sessions with the queries under ``queries/spark/`` — hand-written twins of the
DuckDB queries, because an automatic dialect rewrite of list slicing, 1-based lambdas and packed
integers was found to give wrong answers without an error. What comes back is small or per session:
the distinct event names and their counts (the feature-key rules run on them in DuckDB) and one
row per session with its user id, written by Spark's executors as Parquet into a staging folder
that this machine reads; the users are numbered and labelled in DuckDB from those rows, so Spark
reads the events once for the counts and once for the sessions. Automated-traffic flags, distinct
paths, k-paths and the usage model are then built in DuckDB from the sessions, exactly as on one
machine, so every later stage runs unchanged.

Local files of other formats (CSV, NDJSON, OpenTelemetry, XES) are first mapped by DuckDB's readers
into Parquet in a scratch folder, and Spark reads that.

pyspark is an optional extra (``pip install "gapfinder[spark]"``) and needs a Java 17+ runtime.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
import uuid
import warnings
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import duckdb

from gapfinder.errors import ConfigError, InputError, QueryError
from gapfinder.privacy import hmac_pads
from gapfinder.sessions import MAX_FEATURES, SessionOptions, SourceRowCounts, check_feature_count, finish_sessions
from gapfinder.sources import OpenedSource, open_telemetry
from gapfinder.sources.feature_keys import apply_rules
from gapfinder.sources.formats import SourceFiles, resolve_files
from gapfinder.sql import fetch_arrow, fetch_dicts, first_row, load, registered, run

__all__ = ["SparkSettings", "spark_session"]

# Settings every gapfinder query relies on: UTC wall clock, errors instead of silent overflow
# (ANSI mode), and Parquet timestamps DuckDB reads as microseconds.
_REQUIRED_CONF = (
    ("spark.sql.session.timeZone", "UTC"),
    ("spark.sql.ansi.enabled", "true"),
    ("spark.sql.parquet.outputTimestampType", "TIMESTAMP_MICROS"),
)


@dataclass(frozen=True)
class SparkSettings:
    """Where and how Spark runs.

    master: the Spark master URL (``local[*]``, ``spark://host:7077``, ``yarn``, ...); None uses an
        active Spark session when there is one (a notebook's), else ``local[*]``.
    conf: extra Spark settings as (key, value) pairs, applied when the session is created.
    staging: a folder both Spark and this machine can reach (a shared mount on a cluster) where
        Spark writes the per-session results; default: a private temporary folder here, which suits
        ``local[*]`` and clusters whose executors share this machine's file system.
    """

    master: str | None = None
    conf: tuple[tuple[str, str], ...] = ()
    staging: str | None = None

    def as_parameters(self) -> dict[str, Any]:
        """What the workspace records: the engine and master, and only the keys of the settings
        (their values may be credentials)."""
        return {"name": "spark", "master": self.master, "conf_keys": sorted(k for k, _ in self.conf)}


def parse_spark_conf(items: Sequence[str]) -> tuple[tuple[str, str], ...]:
    """``KEY=VALUE`` options as pairs.

    >>> parse_spark_conf(["spark.executor.memory=4g"])
    (('spark.executor.memory', '4g'),)
    """
    pairs: list[tuple[str, str]] = []
    for item in items:
        key, sep, value = item.partition("=")
        if not sep or not key.strip():
            # The value is not echoed: Spark settings often carry credentials.
            raise ConfigError(f"--spark-conf (item {len(pairs) + 1}): give KEY=VALUE, e.g. spark.executor.memory=4g")
        pairs.append((key.strip(), value))
    return tuple(pairs)


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return text[0][:200] if text else type(exc).__name__


def spark_session(settings: SparkSettings) -> Any:
    """The Spark session to run on, with gapfinder's required settings applied."""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            from pyspark.sql import SparkSession
    except ImportError:
        raise ConfigError(
            "--engine spark: pyspark is not installed; pip install 'gapfinder[spark]' (it needs Java 17 or newer)"
        ) from None
    spark = SparkSession.getActiveSession() if settings.master is None else None
    if spark is None:
        builder = SparkSession.builder.master(settings.master or "local[*]").appName("gapfinder")
        builder = builder.config("spark.ui.showConsoleProgress", "false")
        for key, value in settings.conf:
            builder = builder.config(key, value)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                spark = builder.getOrCreate()
        except Exception as exc:
            raise ConfigError(
                f"--engine spark: Spark did not start ({_first_line(exc)}); check `java -version` (17 or newer) "
                "and --spark-master"
            ) from None
        spark.sparkContext.setLogLevel("ERROR")
    for key, value in _REQUIRED_CONF:
        spark.conf.set(key, value)
    return spark


def spark_sql(spark: Any, name: str, /, **params: Any) -> Any:
    """A DataFrame of ``queries/spark/<name>.sql`` with ``params`` bound to its ``:parameters``."""
    text = load(name).rstrip().rstrip(";")
    try:
        return spark.sql(text, args=params or None)
    except Exception as exc:
        raise QueryError(f"query {name}.sql failed: {_first_line(exc)}", reason=_first_line(exc)) from None


def _is_uri(item: str) -> bool:
    return "://" in item


class _Staging:
    """A folder Spark writes into and DuckDB reads from; removed when closed."""

    def __init__(self, base: str | None) -> None:
        if base is not None and _is_uri(base) and not base.startswith("file://"):
            raise ConfigError(
                f"--spark-staging {base}: give a folder this machine can read too (a local path or shared mount)"
            )
        if base is None:
            self.path = Path(tempfile.mkdtemp(prefix="gapfinder-spark-"))
            self._owned = self.path
        else:
            root = Path(base.removeprefix("file://"))
            if not root.is_dir():
                raise ConfigError(f"--spark-staging {base}: no such folder; create it first")
            self.path = root / f"gapfinder-{os.getpid()}-{uuid.uuid4().hex[:8]}"
            self.path.mkdir(mode=0o700)
            self._owned = self.path

    def folder(self, name: str) -> str:
        return str(self.path / name)

    def parquet_files(self, name: str) -> list[str]:
        files = sorted(str(p) for p in (self.path / name).glob("*.parquet"))
        if not files:
            raise QueryError(f"Spark wrote no {name} files into {self.path}")
        return files

    def cleanup(self) -> None:
        shutil.rmtree(self._owned, ignore_errors=True)


@contextlib.contextmanager
def _spark_reading(label: str) -> Iterator[None]:
    """Spark errors while events are read name the input and never quote its rows."""
    try:
        yield
    except (InputError, ConfigError):
        raise
    except QueryError as exc:
        raise InputError(f"{label}: cannot be read with Spark: {exc.reason}") from None
    except Exception as exc:
        raise InputError(f"{label}: cannot be read with Spark: {_describe_spark_error(exc)}") from None


# Spark's error conditions (and, for errors raised in the JVM, words of their message) said in
# gapfinder's words; the message itself is never shown, since it can quote a row.
_SPARK_REASONS = (
    ("PATH_NOT_FOUND", "no such file or folder; check the path"),
    ("UNABLE_TO_INFER_SCHEMA", "no Parquet files there; check the path"),
    ("is not a Parquet file", "not a Parquet file; check the path"),
    ("FAILED_READ_FILE", "a file cannot be read as Parquet; check the files"),
    ("CAST_INVALID_INPUT", "a value cannot be converted; check --map and --ts-unit"),
    ("ARITHMETIC_OVERFLOW", "a value is out of range; check --map and --ts-unit"),
    ("DATATYPE_MISMATCH", "a mapped column has an unusable type; check --map"),
)


def _describe_spark_error(exc: BaseException) -> str:
    condition = ""
    for getter in ("getCondition", "getErrorClass"):
        method = getattr(exc, getter, None)
        if callable(method):
            with contextlib.suppress(Exception):
                condition = str(method() or "")
            if condition:
                break
    text = f"{condition} {exc}"
    for marker, reason in _SPARK_REASONS:
        if marker in text:
            return reason
    return f"Spark failed ({condition or type(exc).__name__}); check the files and --map"


class SparkEngine:
    """The event-scale passes on Spark; see the module docstring."""

    name = "spark"

    def __init__(self, settings: SparkSettings) -> None:
        self.settings = settings
        self._spark: Any = None
        self._staging: _Staging | None = None
        self._source: OpenedSource | None = None
        self._label = ""

    def open(
        self, con: duckdb.DuckDBPyConnection, inputs: Sequence[str | os.PathLike[str]], request: Any
    ) -> OpenedSource:
        from gapfinder.engines.spark_source import map_spark_source, spark_type_name

        items = [os.fspath(i) for i in inputs]
        if not items:
            raise InputError("no telemetry given: pass a file, folder or glob of events")
        remote = [i for i in items if _is_uri(i)]
        files = (
            SourceFiles(format="parquet", files=tuple(items), label=", ".join(items))
            if remote
            else resolve_files(items)
        )
        self._label = files.label
        self._staging = _Staging(self.settings.staging)
        self._spark = spark_session(self.settings)
        if files.format != "parquet":
            # DuckDB's reader maps the file; Spark reads the mapped rows from Parquet.
            local = open_telemetry(
                con,
                items,
                request.mapping,
                ts_unit=request.ts_unit,
                ts_format=request.ts_format,
                feature_keys=request.feature_keys,
                max_names=MAX_FEATURES,
            )
            try:
                target = self._staging.folder("mapped_source.parquet")
                run(con, "write_mapped_source", path=target)
            finally:
                con.unregister("mapped_source")
                local.close()
            with _spark_reading(files.label):
                self._spark.read.parquet(target).createOrReplaceTempView("mapped_source")
            self._source = local
            return local
        with _spark_reading(files.label):
            frame = self._spark.read.parquet(*files.files)
            mapped = map_spark_source(frame, files, request, type_name=spark_type_name)
            mapped.frame.createOrReplaceTempView("mapped_source")
            if request.feature_keys.template or request.feature_keys.rules():
                counts = spark_sql(self._spark, "spark/count_raw_event_names").toArrow()
                renamed, report = apply_rules(
                    con, request.feature_keys, max_names=MAX_FEATURES, label=files.label, name_counts=counts
                )
                mapped.source.feature_keys = report
                if renamed:
                    self._rename_events(con, mapped.frame)
        self._source = mapped.source
        return mapped.source

    def _rename_events(self, con: duckdb.DuckDBPyConnection, frame: Any) -> None:
        """Join the names the rules changed (a small table) back onto the events."""
        from pyspark.sql import functions as F

        changed = fetch_arrow(con, "list_event_name_map")
        names = self._spark.createDataFrame(changed).hint("broadcast")
        joined = frame.join(names, F.trim(frame["event"]) == names["raw"], "left")
        renamed = joined.select(
            *(
                (F.when(names["raw"].isNull(), frame["event"]).otherwise(names["name"]).alias("event"))
                if column == "event"
                else frame[column]
                for column in frame.columns
            )
        )
        renamed.createOrReplaceTempView("mapped_source")

    def count_rows(self, con: duckdb.DuckDBPyConnection, options: SessionOptions) -> SourceRowCounts:
        """One Spark scan groups the source (``spark/create_source_digest``); the groups come back
        into DuckDB's ``source_digest``, where the row counts and, later, the event names are read."""
        self._load_digest(con, options)
        return SourceRowCounts.from_rows(fetch_dicts(con, "count_source_rows"))

    def _load_digest(self, con: duckdb.DuckDBPyConnection, options: SessionOptions) -> None:
        with _spark_reading(self._label):
            digest = spark_sql(self._spark, "spark/create_source_digest", noise_events=list(options.drop_events))
            frame = digest.toArrow()
        with registered(con, engine_source_digest=frame):
            run(con, "load_engine_source_digest")

    def build_sessions(
        self,
        con: duckdb.DuckDBPyConnection,
        *,
        options: SessionOptions,
        use_session_column: bool,
        include_automated: bool,
        pseudonymize_key: bytes | None,
    ) -> None:
        assert self._staging is not None
        spark, staging = self._spark, self._staging
        noise = list(options.drop_events)
        if not first_row(run(con, "has_temp_table", name="source_digest"))[0]:
            self._load_digest(con, options)
        # the event names come from the digest, numbered as on DuckDB
        run(con, "create_event_vocabulary")
        run(con, "drop_source_digest")
        run(con, "create_features")
        run(con, "drop_event_vocabulary")
        counted = run(con, "count_features").fetchall()
        check_feature_count(int(counted[0][0]) if counted else 0)
        with _spark_reading(self._label):
            features = fetch_arrow(con, "list_feature_ids")
            spark.createDataFrame(features).hint("broadcast").createOrReplaceTempView("features")
            shared = {
                "collapse_repeats": options.collapse_repeats,
                "max_events": options.max_events,
                "noise_events": noise,
                "error_outcomes": [o.lower() for o in options.error_outcomes],
            }
            if use_session_column:
                sessions = spark_sql(spark, "spark/create_raw_sessions_by_session_column", **shared)
            else:
                idle_us = round(options.idle_minutes * 60 * 1_000_000)
                sessions = spark_sql(spark, "spark/create_raw_sessions_by_idle_gap", idle_us=idle_us, **shared)
            sessions.write.parquet(staging.folder("raw_sessions"))
        # One pass over the events: the sessions carry user ids, and the users are numbered (and
        # pseudonymized) here from those rows, the way the DuckDB engine numbers them.
        session_files = staging.parquet_files("raw_sessions")
        run(con, "create_user_keys_from_engine_sessions", files=session_files)
        inner, outer = hmac_pads(pseudonymize_key) if pseudonymize_key else (None, None)
        run(con, "create_user_labels", inner_pad=inner, outer_pad=outer)
        run(con, "load_engine_raw_sessions", files=session_files)
        finish_sessions(con, options=options, include_automated=include_automated)

    def close(self) -> None:
        if self._spark is not None:
            for view in ("mapped_source", "features"):
                with contextlib.suppress(Exception):
                    self._spark.catalog.dropTempView(view)
        if self._staging is not None:
            self._staging.cleanup()
            self._staging = None
        if self._source is not None:
            self._source.close()
            self._source = None
