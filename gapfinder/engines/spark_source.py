"""Map a Parquet source read by Spark onto the canonical columns, as ``sources.telemetry`` does in DuckDB.

The same rules as on one machine: canonical columns found by name unless mapped with ``--map``
(a column, or a nested field ``a.b`` of a struct, a map or JSON text); timestamps that carry a zone
are instants, those without are taken as UTC; epoch numbers get their unit per value from their
size unless ``--ts-unit`` says; text is read as ISO-8601; values outside 1990..2099 are rejected and
counted. Attribute fields (``attr:NAME``), ``--ts-format`` and ``--feature`` templates are read by
DuckDB's readers only: for those, give local files, which are mapped on this machine first.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any

from gapfinder.errors import ConfigError, InputError
from gapfinder.sources.fields import ATTRIBUTE_PREFIXES
from gapfinder.sources.formats import SourceFiles
from gapfinder.sources.mapping import CANONICAL_COLUMNS, REQUIRED_COLUMNS
from gapfinder.sources.telemetry import (
    _EPOCH_DETECTION,
    _ZONE_SUFFIX,
    EPOCH_UNITS,
    OpenedSource,
    TimestampReading,
)

__all__ = ["MappedSparkSource", "map_spark_source", "spark_type_name"]

_PLAUSIBLE_FROM = datetime(1990, 1, 1, tzinfo=UTC)
_PLAUSIBLE_TO = datetime(2100, 1, 1, tzinfo=UTC)


@dataclass
class MappedSparkSource:
    frame: Any
    source: OpenedSource


def spark_type_name(data_type: Any) -> str:
    """The DuckDB name of a Spark type, so that the summary reads the same on both engines."""
    from pyspark.sql import types as S

    simple = {
        S.ByteType: "TINYINT",
        S.ShortType: "SMALLINT",
        S.IntegerType: "INTEGER",
        S.LongType: "BIGINT",
        S.FloatType: "FLOAT",
        S.DoubleType: "DOUBLE",
        S.StringType: "VARCHAR",
        S.TimestampType: "TIMESTAMP WITH TIME ZONE",
        S.TimestampNTZType: "TIMESTAMP",
        S.DateType: "DATE",
        S.BooleanType: "BOOLEAN",
    }
    for kind, name in simple.items():
        if isinstance(data_type, kind):
            return name
    if isinstance(data_type, S.DecimalType):
        return f"DECIMAL({data_type.precision},{data_type.scale})"
    return data_type.simpleString().upper()


def _quoted(name: str) -> str:
    return "`" + name.replace("`", "``") + "`"


def _field(frame: Any, spec: str, *, label: str, option: str) -> Any:
    """The Column for a mapped field: a top-level column, else a dotted path into structs, maps or JSON text."""
    from pyspark.sql import functions as F
    from pyspark.sql import types as S

    if spec.partition(":")[0] in ATTRIBUTE_PREFIXES and ":" in spec:
        raise ConfigError(
            f"{option}: attribute fields are read by DuckDB's OpenTelemetry and XES readers; with --engine spark "
            "give those files as local paths (they are mapped on this machine first) or map a column"
        )
    if spec in frame.columns:
        return frame[_quoted(spec)]
    head, _, rest = spec.partition(".")
    if not rest or head not in frame.columns:
        raise InputError(f"{label}: {option}: no column {spec!r}; the columns are {', '.join(frame.columns)}")
    top = frame.schema[head].dataType
    if isinstance(top, S.StringType):
        return F.get_json_object(frame[_quoted(head)], "$." + rest)
    column = frame[_quoted(head)]
    for part in rest.split("."):
        if isinstance(top, S.StructType) and part in top.fieldNames():
            column, top = column.getField(part), top[part].dataType
        elif isinstance(top, S.MapType):
            column, top = column.getItem(part), top.valueType
        else:
            raise InputError(f"{label}: {option}: {spec!r} names no field of column {head!r}")
    return column


def _timestamp(
    frame: Any, column: Any, type_name: str, *, ts_unit: str | None, label: str, spec: str
) -> tuple[Any, Any, TimestampReading]:
    """(timestamp Column, is-naive Column, reading), with the DuckDB engine's rules."""
    from pyspark.sql import functions as F

    base = type_name.split("(")[0]
    if base == "TIMESTAMP WITH TIME ZONE":
        return column, F.lit(False), TimestampReading(type_name, "timestamptz")
    if base in ("TIMESTAMP", "DATE"):
        return column.cast("timestamp"), F.lit(True), TimestampReading(type_name, "timestamp")
    numeric = base in ("TINYINT", "SMALLINT", "INTEGER", "BIGINT", "FLOAT", "DOUBLE", "DECIMAL")
    is_numeric_text = False
    if base == "VARCHAR":
        sample = [r[0] for r in frame.filter(column.isNotNull()).select(column).limit(1000).collect()]
        is_numeric_text = bool(sample) and all(v.strip().replace(".", "", 1).isdigit() for v in sample)
    if numeric or is_numeric_text or (ts_unit and base == "VARCHAR"):
        number = column.try_cast("double")
        size = F.abs(number)
        if ts_unit is not None:
            micros = number * F.lit(EPOCH_UNITS[ts_unit])
            reading = TimestampReading(type_name, "epoch", unit=ts_unit)
        else:
            micros = (
                F.when(size < F.lit(_EPOCH_DETECTION[0][0]), number * F.lit(1e6))
                .when(size < F.lit(_EPOCH_DETECTION[1][0]), number * F.lit(1e3))
                .when(size < F.lit(_EPOCH_DETECTION[2][0]), number)
                .otherwise(number * F.lit(1e-3))
            )
            row = frame.agg(
                F.count(number).alias("n"),
                *(
                    F.sum(F.when(size < F.lit(bound), 1).otherwise(0)).alias(f"below_{unit}")
                    for bound, unit in _EPOCH_DETECTION
                ),
            ).collect()[0]
            total, below = int(row[0] or 0), [int(v or 0) for v in row[1:]]
            per_unit = (
                ("s", below[0]),
                ("ms", below[1] - below[0]),
                ("us", below[2] - below[1]),
                ("ns", total - below[2]),
            )
            main = max(per_unit, key=lambda kv: kv[1])[0] if total else "s"
            reading = TimestampReading(type_name, "epoch", unit=main, unit_detected=True, unit_counts=per_unit)
        # DuckDB casts a DOUBLE to the nearest BIGINT with halves to even (2.5 -> 2, 3.5 -> 4): bround().
        converted = F.when(F.abs(micros) < F.lit(9.2e18), F.timestamp_micros(F.bround(micros).cast("bigint")))
        return converted, F.lit(False), reading
    if base == "VARCHAR":
        trimmed = F.trim(column)
        return (
            trimmed.try_cast("timestamp"),
            ~F.coalesce(trimmed.rlike(_ZONE_SUFFIX), F.lit(False)),
            TimestampReading(type_name, "text"),
        )
    raise InputError(
        f"{label}: timestamp column {spec!r} has type {type_name}; gapfinder reads timestamps, "
        "ISO-8601 text or epoch numbers"
    )


def map_spark_source(
    frame: Any, files: SourceFiles, request: Any, *, type_name: Callable[[Any], str]
) -> MappedSparkSource:
    """The frame with the canonical columns of ``mapped_source`` (see ``sources.telemetry``)."""
    from pyspark.sql import functions as F

    if request.ts_format is not None:
        raise ConfigError(
            f"--ts-format {request.ts_format!r}: with --engine spark text timestamps are read as ISO-8601; give "
            "local files (mapped on this machine first) or store timestamps as timestamps"
        )
    if request.feature_keys.template:
        raise ConfigError(
            "--feature: with --engine spark feature templates need local files (mapped on this machine first); "
            "or store the feature name in one column and map it with --map event=COLUMN"
        )
    chosen = dict(request.mapping)
    for canonical in CANONICAL_COLUMNS:
        if canonical not in chosen and canonical in frame.columns:
            chosen[canonical] = canonical
    for canonical in REQUIRED_COLUMNS:
        if canonical not in chosen:
            raise InputError(
                f"{files.label}: required column {canonical!r} is missing; the columns are "
                f"{', '.join(frame.columns)}. Map one with --map {canonical}=<column>"
            )
    columns = {
        canonical: _field(frame, spec, label=files.label, option=f"--map {canonical}={spec}")
        for canonical, spec in chosen.items()
    }
    raw_ts = columns["ts"]
    ts_type = type_name(frame.select(raw_ts).schema[0].dataType)
    ts, naive, reading = _timestamp(
        frame, raw_ts, ts_type, ts_unit=request.ts_unit, label=files.label, spec=chosen["ts"]
    )
    within = (ts >= F.lit(_PLAUSIBLE_FROM)) & (ts < F.lit(_PLAUSIBLE_TO))
    projections = []
    for canonical in CANONICAL_COLUMNS:
        if canonical == "ts":
            projections += [
                F.when(within, ts).alias("ts"),
                (ts.isNotNull() & ~within).alias("is_ts_outside_window"),
                raw_ts.isNotNull().alias("has_raw_ts"),
                naive.alias("is_naive_ts"),
            ]
        elif canonical in columns:
            projections.append(columns[canonical].cast("string").alias(canonical))
        else:
            projections.append(F.lit(None).cast("string").alias(canonical))
    source = OpenedSource(
        files=files,
        mapping=chosen,
        source_columns=list(frame.columns),
        timestamp=reading,
        has_session_column="session_id" in chosen,
        segment_columns=[c for c in ("app_version", "platform") if c in chosen],
    )
    return MappedSparkSource(frame=frame.select(*projections), source=source)
