"""Loads the SQL files under queries/ and runs them with bound parameters.

Each file holds one statement and opens with a comment saying what it returns and which
``$parameters`` it binds. Values are always bound, never formatted into the text.
"""

from __future__ import annotations

import contextlib
import functools
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import duckdb
import numpy as np

from gapfinder.errors import QueryError, describe_database_error

__all__ = ["fetch_arrow", "fetch_dicts", "fetch_numpy", "first_row", "load", "query_dir", "registered", "run"]


@functools.cache
def query_dir() -> Path:
    """The folder holding the .sql files: inside the wheel, or the source tree's queries/."""
    packaged = Path(__file__).parent / "queries"
    if packaged.is_dir():
        return packaged
    source_tree = Path(__file__).resolve().parent.parent / "queries"
    if source_tree.is_dir():
        return source_tree
    raise QueryError("gapfinder's queries/ folder is missing: reinstall the package")


@functools.cache
def load(name: str) -> str:
    """The text of ``queries/<name>.sql``."""
    path = query_dir() / f"{name}.sql"
    try:
        return path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise QueryError(f"no query named {name!r} in {query_dir()}") from None


def run(con: duckdb.DuckDBPyConnection, name: str, /, **params: Any) -> duckdb.DuckDBPyConnection:
    """Execute ``queries/<name>.sql`` with ``params`` bound to its ``$parameters``."""
    with _failing_as(name):
        return con.execute(load(name), params or None)


@contextlib.contextmanager
def _failing_as(name: str) -> Iterator[None]:
    """A DuckDB error inside the block becomes a QueryError naming the query, with its reason."""
    try:
        yield
    except duckdb.Error as exc:
        reason = describe_database_error(exc)
        raise QueryError(f"query {name}.sql failed: {reason}", reason=reason) from None


def first_row(cursor: duckdb.DuckDBPyConnection) -> Any:
    """The first row of a result, or None, leaving no unfinished result on the connection (DuckDB 2
    refuses other work on a connection whose result was only partly fetched)."""
    rows = cursor.fetchall()
    return rows[0] if rows else None


def fetch_dicts(con: duckdb.DuckDBPyConnection, name: str, /, **params: Any) -> list[dict[str, Any]]:
    """Run a query and return its rows as dictionaries keyed by column name."""
    cursor = run(con, name, **params)
    columns = [d[0] for d in cursor.description or []]
    return [dict(zip(columns, row, strict=True)) for row in cursor.fetchall()]


def fetch_arrow(con: duckdb.DuckDBPyConnection, name: str, /, **params: Any) -> Any:
    """Run a query and return its result as a pyarrow Table (columns go straight to numpy).

    Read through a relation (``con.sql``), whose Arrow output is not copied: Arrow output of an
    ``execute`` result is copied once (DuckDB 2 warns of it), which for the 18.4M k-paths of 50M
    high-entropy events cost 0.45 GB of peak memory.
    """
    with _failing_as(name):
        relation = con.sql(load(name), params=params or None)
        return relation.to_arrow_table() if hasattr(relation, "to_arrow_table") else relation.arrow()


def fetch_numpy(
    con: duckdb.DuckDBPyConnection, name: str, /, *, batch_rows: int = 1 << 20, **params: Any
) -> dict[str, np.ndarray]:
    """Run a query whose columns are numbers without NULLs and return them as numpy arrays.

    The rows are counted first and the arrays made at their final size, then filled batch by batch
    from DuckDB's Arrow stream: only one batch is held beside them (reading a whole Arrow table or
    DuckDB's own ``fetchnumpy`` holds the rows twice: for the 30M k-paths of 100M high-entropy
    events, 0.2-0.45 GB more at the peak). A NULL is a broken workspace, reported as such."""
    with _failing_as(name):
        relation = con.sql(load(name), params=params or None)
        total = int(relation.shape[0])
        reader = relation.to_arrow_reader(batch_rows)
        columns = {field.name: np.empty(total, dtype=field.type.to_pandas_dtype()) for field in reader.schema}
        at = 0
        for batch in reader:
            rows = batch.num_rows
            for column, values in zip(batch.schema.names, batch.columns, strict=True):
                if values.null_count:
                    raise QueryError(f"query {name}.sql returned NULL in column {column!r}: profile again")
                columns[column][at : at + rows] = values.to_numpy(zero_copy_only=False)
            at += rows
    if at != total:
        raise QueryError(f"query {name}.sql returned {at} rows where it counted {total}: run it again")
    return columns


@contextlib.contextmanager
def registered(con: duckdb.DuckDBPyConnection, **frames: Any) -> Iterator[duckdb.DuckDBPyConnection]:
    """Register Arrow tables as views for the queries run inside the block; unregister after."""
    for name, frame in frames.items():
        con.register(name, frame)
    try:
        yield con
    finally:
        for name in frames:
            con.unregister(name)


def list_arrays(column: Any) -> tuple[np.ndarray, np.ndarray]:
    """(offsets from 0, values) of an Arrow list column without nulls, read chunk by chunk (no combined
    copy): the flat arrays the compiled kernels take."""
    offsets = [np.zeros(1, dtype=np.int64)]
    values = [np.zeros(0, dtype=np.int32)]
    base = 0
    for chunk in column.chunks:
        if len(chunk) == 0:
            continue
        bounds = chunk.offsets.to_numpy().astype(np.int64)
        values.append(chunk.values.to_numpy(zero_copy_only=False)[bounds[0] : bounds[-1]])
        offsets.append(bounds[1:] - bounds[0] + base)
        base += int(bounds[-1] - bounds[0])
    return np.concatenate(offsets), np.concatenate(values)
