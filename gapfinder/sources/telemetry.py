"""Map a telemetry source onto canonical columns and decide how its timestamps are read."""

from __future__ import annotations

import os
import shutil
import tempfile
import weakref
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

import duckdb
from duckdb import CaseExpression, ColumnExpression, ConstantExpression, FunctionExpression
from duckdb import sqltypes as T

from gapfinder.errors import ConfigError, InputError, describe_database_error
from gapfinder.sources.feature_keys import (
    FeatureKeys,
    KeyReport,
    apply_rules,
    map_names_query,
    parse_template,
    template_expression,
)
from gapfinder.sources.fields import ATTRIBUTE_PREFIXES, field_expression
from gapfinder.sources.formats import CONVERTED_FORMATS, SourceFiles, open_relation, resolve_files
from gapfinder.sources.mapping import CANONICAL_COLUMNS, REQUIRED_COLUMNS

__all__ = ["EPOCH_UNITS", "OpenedSource", "TimestampReading", "open_telemetry"]

# Micro-seconds per unit, for integer or decimal epoch timestamps.
EPOCH_UNITS: dict[str, float] = {"s": 1e6, "ms": 1e3, "us": 1.0, "ns": 1e-3}
_TEXT_TYPES = {"VARCHAR"}
_NAIVE_TYPES = {"TIMESTAMP", "TIMESTAMP_NS", "TIMESTAMP_MS", "TIMESTAMP_S", "DATE", "TIMESTAMP WITH TIME ZONE"}
_NUMERIC_TYPES = {
    "TINYINT",
    "SMALLINT",
    "INTEGER",
    "BIGINT",
    "HUGEINT",
    "UTINYINT",
    "USMALLINT",
    "UINTEGER",
    "UBIGINT",
    "FLOAT",
    "DOUBLE",
}
# Epoch values at or above these bounds are read in the next finer unit (detection by size):
# 1e11 s is the year 5138, so anything larger is not seconds, and so on down to nanoseconds.
_EPOCH_DETECTION = ((1e11, "s"), (1e14, "ms"), (1e17, "us"))
# Timestamps outside this window are rejected and counted ("timestamp outside 1990..2100"):
# zeros read as 1970, or a 2^62 epoch read as 2116, are damaged values, not usage.
PLAUSIBLE_FROM = "1990-01-01 00:00:00+00"
PLAUSIBLE_TO = "2100-01-01 00:00:00+00"
_ZONE_SUFFIX = r"(Z|z|[+-][0-9]{2}(:?[0-9]{2})?)$"


@dataclass(frozen=True)
class TimestampReading:
    """How the timestamp column was interpreted, stated back to the user."""

    source_type: str
    kind: str  # "timestamptz", "timestamp", "text", "epoch"
    unit: str | None = None
    unit_detected: bool = False
    text_format: str | None = None
    unit_counts: tuple[tuple[str, int], ...] = ()
    described_as: str | None = None

    def describe(self) -> str:
        if self.described_as:
            return self.described_as
        if self.kind == "epoch":
            if self.unit_detected:
                counted = ", ".join(f"{n:,} in {u}" for u, n in self.unit_counts if n) or "no values"
                mixed = " (MIXED units: check the source)" if sum(1 for _, n in self.unit_counts if n) > 1 else ""
                return f"epoch numbers ({self.source_type}), unit detected per value from its size: {counted}{mixed}"
            return f"epoch {self.unit} ({self.source_type}; unit set by --ts-unit)"
        if self.kind == "text":
            fmt = f"format {self.text_format!r}" if self.text_format else "ISO-8601"
            return f"text timestamps, {fmt}; those without a zone taken as UTC"
        if self.kind == "timestamp":
            return f"{self.source_type} without time zone, taken as UTC"
        return f"{self.source_type}, converted to UTC"


@dataclass
class OpenedSource:
    """A telemetry input mapped onto canonical columns (exposed as the view ``mapped_source``).

    ``notes`` say what a converted format (OTLP, XES) held and which conventions filled the columns;
    ``feature_keys`` what the feature template and rewrite rules did. ``close()`` removes the scratch
    folder of a converted format once the events have been read.
    """

    files: SourceFiles
    mapping: dict[str, str]
    source_columns: list[str]
    timestamp: TimestampReading
    has_session_column: bool
    segment_columns: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    feature_keys: KeyReport | None = None
    scratch: Scratch | None = None

    @property
    def file_count(self) -> int:
        return len(self.files.files)

    def close(self) -> None:
        if self.scratch is not None:
            self.scratch.cleanup()
            self.scratch = None


def _timestamp_expression(
    con: duckdb.DuckDBPyConnection,
    relation: duckdb.DuckDBPyRelation,
    col: duckdb.Expression,
    type_name: str,
    *,
    ts_unit: str | None,
    ts_format: str | None,
    label: str,
    column: str,
) -> tuple[duckdb.Expression, duckdb.Expression, TimestampReading]:
    """(converted TIMESTAMPTZ expression, is-naive expression, reading) for the ts field ``col``."""
    base = type_name.split("(")[0].upper()
    if ts_unit is not None and ts_unit not in EPOCH_UNITS:
        raise ConfigError(f"--ts-unit {ts_unit!r}: use one of {', '.join(EPOCH_UNITS)}")
    if base == "TIMESTAMP WITH TIME ZONE":
        return col, ConstantExpression(False), TimestampReading(type_name, "timestamptz")
    if base in _NAIVE_TYPES:
        return (
            col.cast(T.TIMESTAMP_TZ),
            ConstantExpression(True),
            TimestampReading(type_name, "timestamp"),
        )
    is_numeric_text = False
    if base in _TEXT_TYPES and ts_format is None:
        sample = relation.filter(col.isnotnull()).select(col.alias("v")).limit(1000)
        values = [r[0] for r in sample.fetchall()]
        is_numeric_text = bool(values) and all(
            v.strip().replace(".", "", 1).isdigit() for v in values if isinstance(v, str)
        )
    if base in _NUMERIC_TYPES or is_numeric_text or (ts_unit and base in _TEXT_TYPES):
        number = col.try_cast(T.DOUBLE)
        size = FunctionExpression("abs", number)
        if ts_unit is not None:
            micros = number * ConstantExpression(EPOCH_UNITS[ts_unit])
            reading = TimestampReading(type_name, "epoch", unit=ts_unit)
        else:
            # Each value's unit from its own size, so a column mixing seconds and milliseconds is read
            # right and the summary says it is mixed (a single guess from the median would turn half
            # of such a column into 1970).
            micros = (
                CaseExpression(size < ConstantExpression(_EPOCH_DETECTION[0][0]), number * ConstantExpression(1e6))
                .when(size < ConstantExpression(_EPOCH_DETECTION[1][0]), number * ConstantExpression(1e3))
                .when(size < ConstantExpression(_EPOCH_DETECTION[2][0]), number)
                .otherwise(number * ConstantExpression(1e-3))
            )
            aggregates = [
                FunctionExpression("count", number).alias("n"),
                *(
                    FunctionExpression(
                        "sum",
                        CaseExpression(size < ConstantExpression(bound), ConstantExpression(1)).otherwise(
                            ConstantExpression(0)
                        ),
                    ).alias(f"below_{unit}")
                    for bound, unit in _EPOCH_DETECTION
                ),
            ]
            row = relation.aggregate(aggregates).fetchall()[0]
            total, below = int(row[0] or 0), [int(v or 0) for v in row[1:]]
            per_unit = (
                ("s", below[0]),
                ("ms", below[1] - below[0]),
                ("us", below[2] - below[1]),
                ("ns", total - below[2]),
            )
            main = max(per_unit, key=lambda kv: kv[1])[0] if total else "s"
            reading = TimestampReading(type_name, "epoch", unit=main, unit_detected=True, unit_counts=per_unit)
        # Outside about ±290,000 years make_timestamp overflows; such values are unparsable.
        in_range = FunctionExpression("abs", micros) < ConstantExpression(9.2e18)
        converted = (
            CaseExpression(in_range, FunctionExpression("make_timestamp", micros.cast(T.BIGINT)))
            .otherwise(ConstantExpression(None))
            .cast(T.TIMESTAMP_TZ)
        )
        return converted, ConstantExpression(False), reading
    if base in _TEXT_TYPES:
        if ts_format:
            parsed = FunctionExpression("try_strptime", col, ConstantExpression(ts_format))
            naive = ConstantExpression("%z" not in ts_format and "%Z" not in ts_format)
            return (
                parsed.cast(T.TIMESTAMP_TZ),
                naive,
                TimestampReading(type_name, "text", text_format=ts_format),
            )
        naive = FunctionExpression("regexp_matches", FunctionExpression("trim", col), ConstantExpression(_ZONE_SUFFIX))
        return (
            FunctionExpression("trim", col).try_cast(T.TIMESTAMP_TZ),
            ~naive,
            TimestampReading(type_name, "text"),
        )
    raise InputError(
        f"{label}: timestamp column {column!r} has type {type_name}; gapfinder reads timestamps, "
        "ISO-8601 text or epoch numbers"
    )


def _check_ts_format(con: duckdb.DuckDBPyConnection, ts_format: str) -> None:
    """Refuse a --ts-format that DuckDB's strptime does not understand (instead of ignoring it)."""
    if "%" not in ts_format:
        raise ConfigError(f"--ts-format {ts_format!r}: give strptime codes such as '%d/%m/%Y %H:%M'")
    try:
        con.execute("SELECT try_strptime('2026-01-01', $format)", {"format": ts_format}).fetchall()
    except duckdb.Error:
        raise ConfigError(
            f"--ts-format {ts_format!r}: not a strptime format (unknown % code); see the strptime codes, "
            "e.g. '%d/%m/%Y %H:%M'"
        ) from None


class Scratch:
    """A private folder (mode 0700) for a converted source, removed by ``cleanup()`` or at exit.

    It is kept alive until then even if the caller drops the ``OpenedSource``: the view
    ``mapped_source`` still reads from it."""

    _live: ClassVar[set[Scratch]] = set()

    def __init__(self) -> None:
        self.name = tempfile.mkdtemp(prefix="gapfinder-source-")
        self._finalizer = weakref.finalize(self, shutil.rmtree, self.name, ignore_errors=True)
        Scratch._live.add(self)

    def cleanup(self) -> None:
        Scratch._live.discard(self)
        self._finalizer()


def _convert(con: duckdb.DuckDBPyConnection, files: SourceFiles) -> tuple[SourceFiles, Any, list[str], Any]:
    """Read an OTLP or XES input once into Parquet in a private scratch folder."""
    scratch = Scratch()
    out = Path(scratch.name) / "events.parquet"
    try:
        if files.format == "xes":
            from gapfinder.sources.xes import convert_xes

            facts: Any = convert_xes(list(files.files), out)
        else:
            from gapfinder.sources.otlp import convert_otlp

            facts = convert_otlp(con, files.files, files.format, out, label=files.label)
    except BaseException:
        scratch.cleanup()
        raise
    converted = SourceFiles(format="parquet", files=(str(out),), label=files.label)
    return converted, scratch, [facts.describe()], facts


def _default_fields(files: SourceFiles, facts: Any, types: dict[str, str]) -> dict[str, str]:
    """Canonical columns a converted source fills by convention (the rest are left unmapped)."""
    chosen = {c: c for c in CANONICAL_COLUMNS if c in types}
    if files.format == "otlp-logs" and not facts.sessions_from_attribute:
        chosen.pop("session_id", None)  # no session.id anywhere: sessions from idle gaps
    return chosen


def open_telemetry(
    con: duckdb.DuckDBPyConnection,
    inputs: Sequence[str | os.PathLike[str]],
    mapping: dict[str, str] | None = None,
    *,
    ts_unit: str | None = None,
    ts_format: str | None = None,
    extra_columns: Sequence[str] = (),
    feature_keys: FeatureKeys | None = None,
    max_names: int = 65_534,
) -> OpenedSource:
    """Create the temporary view ``mapped_source`` over the telemetry with canonical columns.

    The view has ``user_id``, ``session_id``, ``event``, ``app_version``, ``platform`` and
    ``outcome`` as text (NULL when not mapped), ``ts`` as TIMESTAMPTZ in UTC (NULL when the raw
    value is missing or cannot be read), ``has_raw_ts`` and ``is_naive_ts``; and each of
    ``extra_columns`` (such as ``test_id`` for test-run telemetry) as text, NULL when not mapped.
    A mapping's source is any field ``fields.field_expression`` accepts (a column, ``attr:NAME``,
    ``resource:NAME``, ``case:NAME``, ``properties.screen``). ``feature_keys`` form the event names
    (template, rewrite rules, id templates; see ``feature_keys``).
    """
    files = resolve_files(inputs)
    scratch = None
    notes: list[str] = []
    facts: Any = None
    read_files = files
    if files.format in CONVERTED_FORMATS:
        read_files, scratch, notes, facts = _convert(con, files)
    try:
        return _open_mapped(
            con,
            files,
            read_files,
            dict(mapping or {}),
            facts=facts,
            notes=notes,
            scratch=scratch,
            ts_unit=ts_unit,
            ts_format=ts_format,
            extra_columns=extra_columns,
            feature_keys=feature_keys or FeatureKeys(),
            max_names=max_names,
        )
    except BaseException:
        if scratch is not None:
            scratch.cleanup()
        raise


def _open_mapped(
    con: duckdb.DuckDBPyConnection,
    files: SourceFiles,
    read_files: SourceFiles,
    chosen: dict[str, str],
    *,
    facts: Any,
    notes: list[str],
    scratch: Any,
    ts_unit: str | None,
    ts_format: str | None,
    extra_columns: Sequence[str],
    feature_keys: FeatureKeys,
    max_names: int,
) -> OpenedSource:
    relation = open_relation(con, read_files)
    try:
        source_columns = list(relation.columns)
        source_types = [str(t) for t in relation.types]
    except duckdb.Error as exc:
        raise InputError(f"{files.label}: cannot be read ({describe_database_error(exc)})") from None
    types = dict(zip(source_columns, source_types, strict=True))
    converted = files.format in CONVERTED_FORMATS
    if converted:
        defaults = _default_fields(files, facts, types)
        if files.format == "otlp-traces" and facts.entry_spans:
            relation = relation.filter(ColumnExpression("span_kind").isin(ConstantExpression(2), ConstantExpression(5)))
            notes.append(
                f"spans: the {facts.entry_spans:,} entry spans (SERVER, CONSUMER) are the events; the calls they make "
                "are not"
            )
        for canonical, column in defaults.items():
            chosen.setdefault(canonical, column)
        if chosen.get("user_id") == "user_id":
            used = facts.user_id_from if files.format != "xes" else {}
            fallback = [n for n in used if n not in ("user.id", "enduser.pseudo.id", "enduser.id")]
            if fallback:
                notes.append(
                    "users: no user.id, enduser.pseudo.id or enduser.id attribute on "
                    f"{sum(used[n] for n in fallback):,} records; they count {', '.join(fallback)} as the user "
                    "(map another with --map user_id=attr:NAME)"
                )
    else:
        for canonical in (*CANONICAL_COLUMNS, *extra_columns):
            if canonical not in chosen and canonical in types:
                chosen[canonical] = canonical
    expressions: dict[str, duckdb.Expression] = {}
    for canonical, spec in chosen.items():
        expressions[canonical] = field_expression(
            relation, types, spec, label=files.label, option=f"--map {canonical}={spec}"
        )
    for canonical in REQUIRED_COLUMNS:
        if canonical not in chosen:
            raise InputError(
                f"{files.label}: required column {canonical!r} is missing; the columns are "
                f"{', '.join(source_columns)}. Map one with --map {canonical}=<column>"
            )
    ts_spec = chosen["ts"]
    ts_type = str(relation.select(expressions["ts"].alias("v")).types[0])
    if ts_format is not None:
        _check_ts_format(con, ts_format)
        if ts_type.split("(")[0].upper() not in _TEXT_TYPES:
            if read_files.format not in ("csv", "tsv") or ts_spec not in types:
                raise ConfigError(
                    f"--ts-format {ts_format!r}: column {ts_spec!r} of {files.label} already holds "
                    f"{ts_type} values, not text; drop --ts-format"
                )
            # The CSV sniffer typed the column itself (perhaps day-first): read its text instead.
            relation = open_relation(con, read_files, text_columns=(ts_spec,))
            ts_type = "VARCHAR"
    ts_expr, naive_expr, reading = _timestamp_expression(
        con,
        relation,
        expressions["ts"],
        ts_type,
        ts_unit=ts_unit,
        ts_format=ts_format,
        label=files.label,
        column=ts_spec,
    )
    raw_ts_present = expressions["ts"].isnotnull()
    if converted and ts_spec == "ts" and files.format != "xes":
        raw_ts_present = ColumnExpression("has_time")
        reading = TimestampReading(
            ts_type,
            "epoch",
            unit="ns",
            described_as="OTLP timeUnixNano (observedTimeUnixNano where it is 0), nanoseconds since the epoch "
            "kept to the microsecond",
        )
    event_expr = expressions["event"]
    if feature_keys.template:
        pieces = parse_template(feature_keys.template)
        values: dict[str, duckdb.Expression] = {}
        for _literal, name in pieces:
            if not name or name in values:
                continue
            if name in expressions:
                values[name] = expressions[name].cast(T.VARCHAR)
            else:
                explicit = name in types or name.partition(":")[0] in ATTRIBUTE_PREFIXES
                spec = name if explicit or "attributes" not in types else f"attr:{name}"
                values[name] = field_expression(
                    relation, types, spec, label=files.label, option=f"--feature {feature_keys.template!r}"
                ).cast(T.VARCHAR)
        event_expr = template_expression(pieces, values)
    projections: list[duckdb.Expression] = []
    within = (ts_expr >= ConstantExpression(PLAUSIBLE_FROM).cast(T.TIMESTAMP_TZ)) & (
        ts_expr < ConstantExpression(PLAUSIBLE_TO).cast(T.TIMESTAMP_TZ)
    )
    for canonical in CANONICAL_COLUMNS:
        if canonical == "ts":
            projections.append(CaseExpression(within, ts_expr).otherwise(ConstantExpression(None)).alias("ts"))
            projections.append((ts_expr.isnotnull() & ~within).alias("is_ts_outside_window"))
            projections.append(raw_ts_present.alias("has_raw_ts"))
            projections.append(naive_expr.alias("is_naive_ts"))
        elif canonical == "event":
            projections.append(event_expr.cast(T.VARCHAR).alias("event"))
        elif canonical in chosen:
            projections.append(expressions[canonical].cast(T.VARCHAR).alias(canonical))
        else:
            projections.append(ConstantExpression(None).cast(T.VARCHAR).alias(canonical))
    for extra in extra_columns:
        if extra in chosen:
            projections.append(expressions[extra].cast(T.VARCHAR).alias(extra))
        else:
            projections.append(ConstantExpression(None).cast(T.VARCHAR).alias(extra))
    mapped = relation.select(*projections)
    report = None
    if feature_keys.template or feature_keys.rules():
        # A registered relation is a temporary view: nothing pointing at the files is persisted.
        con.register("mapped_source_raw", mapped)
        try:
            renamed, report = apply_rules(con, feature_keys, max_names=max_names, label=files.label)
        finally:
            con.unregister("mapped_source_raw")
        if renamed:
            named = mapped.query("mapped_source_raw", map_names_query())
            assert named is not None
            mapped = named
    con.register("mapped_source", mapped)
    return OpenedSource(
        files=files,
        mapping=chosen,
        source_columns=source_columns,
        timestamp=reading,
        has_session_column="session_id" in chosen,
        segment_columns=[c for c in ("app_version", "platform") if c in chosen],
        notes=notes,
        feature_keys=report,
        scratch=scratch,
    )
