"""The query runner's numpy reader (gapfinder.sql.fetch_numpy)."""

from __future__ import annotations

import duckdb
import numpy as np
import pytest

from gapfinder.errors import QueryError
from gapfinder.sql import fetch_numpy


def _kpaths(rows: list[tuple[int, int | None, int]]) -> duckdb.DuckDBPyConnection:
    con = duckdb.connect()
    con.execute("CREATE TABLE kpaths (code UBIGINT, occurrences BIGINT, users BIGINT)")
    if rows:
        con.executemany("INSERT INTO kpaths VALUES (?, ?, ?)", rows)
    return con


def test_columns_come_back_as_arrays_of_their_sql_types() -> None:
    top = (2 << 60) | 7  # a packed code above 2**63 would not fit a signed type
    columns = fetch_numpy(_kpaths([(1 << 63 | 5, 3, 2), (top, 4, 1)]), "list_kpath_cells")
    assert list(columns) == ["code", "occurrences", "users"]
    assert columns["code"].dtype == np.uint64
    assert columns["code"].tolist() == [1 << 63 | 5, top]
    assert columns["users"].tolist() == [2, 1]


def test_an_empty_result_keeps_the_types() -> None:
    columns = fetch_numpy(_kpaths([]), "list_kpath_cells")
    assert [len(v) for v in columns.values()] == [0, 0, 0]
    assert columns["code"].dtype == np.uint64


def test_a_null_is_reported_with_its_column() -> None:
    with pytest.raises(QueryError, match=r"list_kpath_cells\.sql returned NULL in column 'occurrences'"):
        fetch_numpy(_kpaths([(1, None, 2)]), "list_kpath_cells")


def test_rows_read_in_many_batches_fill_the_arrays_in_order() -> None:
    rows = [((k % 7 + 1) << 60 | k, k * 3, k % 5) for k in range(1000)]
    columns = fetch_numpy(_kpaths(rows), "list_kpath_cells", batch_rows=64)
    assert columns["code"].tolist() == [r[0] for r in rows]
    assert columns["occurrences"].tolist() == [r[1] for r in rows]
    assert columns["users"].dtype == np.int64
