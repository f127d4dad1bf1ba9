"""Trace files: Parquet, CSV/TSV or NDJSON rows of (test id, step number or time, event).

Columns default to ``test_id``, ``step_no`` (or ``ts``) and ``event``; ``--map`` names others, as
for telemetry (``--map test_id=case --map event=action``). Files are read by DuckDB; rows without
a test id or an event are counted and reported.
"""

from __future__ import annotations

import duckdb
from duckdb import ColumnExpression

from gapfinder.errors import InputError
from gapfinder.sources.formats import SourceFiles, open_relation
from gapfinder.suite.model import ReaderReport, TestTrace

__all__ = ["TRACE_COLUMNS", "read_trace_files"]

TRACE_COLUMNS: tuple[str, ...] = ("test_id", "step_no", "ts", "event")


def read_trace_files(source: SourceFiles, mapping: dict[str, str] | None = None) -> ReaderReport:
    """Read the traces in ``source`` (files of one format) into TestTrace objects."""
    mapping = mapping or {}
    con = duckdb.connect(":memory:")
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
        picked = relation.select(
            ColumnExpression(test_col).cast("VARCHAR").alias("test_id"),
            ColumnExpression(event_col).cast("VARCHAR").alias("event"),
            ColumnExpression(order_col).alias("step_order"),
        )
        rows = picked.order("test_id, step_order, event").fetchall()
    except duckdb.Error as exc:
        message = str(exc).strip().splitlines()[0]
        raise InputError(f"{source.label}: cannot read the test traces ({message})") from None
    finally:
        con.close()
    report = ReaderReport()
    steps: dict[str, list[str]] = {}
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
