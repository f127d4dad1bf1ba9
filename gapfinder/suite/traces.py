"""Trace files: Parquet, CSV/TSV or NDJSON rows of (test id, step number or time, event).

Columns default to ``test_id``, ``step_no`` (or ``ts``) and ``event``; ``--map`` names others, as
for telemetry (``--map test_id=case --map event=action``). Files are read by DuckDB; rows without
a test id or an event are counted and reported.
"""

from __future__ import annotations

import duckdb
from duckdb import ColumnExpression

from gapfinder.errors import InputError, describe_database_error
from gapfinder.quoting import printable
from gapfinder.sources.formats import SourceFiles, open_relation
from gapfinder.suite.model import ReaderReport, TestTrace
from gapfinder.workspace import connect_memory

__all__ = ["TRACE_COLUMNS", "read_trace_files"]

TRACE_COLUMNS: tuple[str, ...] = ("test_id", "step_no", "ts", "event")


def read_trace_files(source: SourceFiles, mapping: dict[str, str] | None = None) -> ReaderReport:
    """Read the traces in ``source`` (files of one format) into TestTrace objects."""
    mapping = mapping or {}
    con = connect_memory()
    try:
        relation = open_relation(con, source)
        columns = {c.lower(): c for c in relation.columns}

        def column(canonical: str, required: bool) -> str | None:
            wanted = mapping.get(canonical, canonical)
            if wanted.lower() in columns:
                return columns[wanted.lower()]
            if required:
                how = f"--map {canonical}=COLUMN" if canonical not in mapping else f"the column {wanted!r}"
                raise InputError(
                    f"{source.label}: no {wanted!r} column for {canonical} (columns: {', '.join(relation.columns)}); "
                    f"name it with {how}"
                )
            return None

        test_col = column("test_id", True)
        event_col = column("event", True)
        order_col = column("step_no", False) or column("ts", False)
        if order_col is None:
            raise InputError(
                f"{source.label}: no step_no or ts column to order each test's steps "
                f"(columns: {', '.join(relation.columns)}); name one with --map step_no=COLUMN"
            )
        assert test_col is not None and event_col is not None  # required above
        # Identifiers come from the file's own schema, through DuckDB's expression API.
        order_expr = ColumnExpression(order_col)
        order_type = str(dict(zip(relation.columns, relation.types, strict=True))[order_col]).upper()
        if order_type == "VARCHAR":
            # Step numbers read as text would sort "10" before "2": read them as numbers or refuse.
            as_number = order_expr.try_cast("DOUBLE")
            bad = relation.filter(order_expr.isnotnull() & as_number.isnull()).aggregate("count(*)").fetchall()
            if bad and bad[0][0]:
                raise InputError(
                    f"{source.label}: column {order_col!r}: {bad[0][0]:,} value(s) are not numbers; "
                    "number each test's steps 1, 2, 3 … (or give a ts column of timestamps)"
                )
            order_expr = as_number
        picked = relation.select(
            ColumnExpression(test_col).cast("VARCHAR").alias("test_id"),
            ColumnExpression(event_col).cast("VARCHAR").alias("event"),
            order_expr.alias("step_order"),
        )
        rows = picked.order("test_id, step_order, event").fetchall()
    except duckdb.Error as exc:
        raise InputError(f"{source.label}: cannot read the test traces ({describe_database_error(exc)})") from None
    finally:
        con.close()
    report = ReaderReport()
    steps: dict[str, list[str]] = {}
    previous: tuple[object, object] | None = None
    for raw_test, _raw_event, order in rows:
        if order is not None and previous == (raw_test, order):
            raise InputError(
                f"{source.label}: test {printable(str(raw_test))!r} has two steps numbered {order} in column "
                f"{order_col!r}; give each step of a test its own number"
            )
        previous = (raw_test, order)
    for raw_test, raw_event, _order in rows:
        test_id, event = (raw_test or "").strip(), (raw_event or "").strip()
        if not test_id:
            report.skip("trace rows without a test id")
        elif not event:
            report.skip("trace rows without an event")
        else:
            steps.setdefault(test_id, []).append(event)
    label = source.files[0] if len(source.files) == 1 else source.label
    report.traces = [TestTrace(t, s, label, "trace") for t, s in steps.items()]
    if not report.traces:
        raise InputError(f"{source.label}: no test steps found (every row lacks a test id or an event)")
    return report
