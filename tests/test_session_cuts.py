"""The session cutter (gapfinder/session_cuts.py) against the SQL that defines raw_sessions.

Every engine of the cutter (compiled, vectorized) must write exactly the rows of
create_raw_sessions_by_idle_gap.sql / create_raw_sessions_by_session_column.sql on the same
event lists, under every option that changes the cut (idle gap or session column, collapsed
repeats, the event cap), with ties, gaps exactly at the threshold and failures.
"""

from __future__ import annotations

import tempfile
from datetime import datetime
from pathlib import Path
from typing import Any
from unittest import mock

import duckdb
import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
from hypothesis import given, settings
from hypothesis import strategies as st

import gapfinder.session_cuts
import gapfinder.sessions
from gapfinder.session_cuts import cut_sessions, write_raw_sessions
from gapfinder.sessions import SessionOptions
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from tests.helpers import at

COLUMNS = ("user_id", "session", "ts", "event", "outcome", "app_version")


def _write(path: Path, rows: list[tuple[Any, ...]]) -> Path:
    columns = list(zip(*rows, strict=True))
    arrays = {
        name: pa.array(list(values), pa.timestamp("us", tz="UTC") if isinstance(values[0], datetime) else pa.string())
        for name, values in zip(COLUMNS, columns, strict=True)
    }
    pq.write_table(pa.table(arrays), path)
    return path


def _differences(con: duckdb.DuckDBPyConnection) -> tuple[int, int]:
    counts = []
    for left, right in (("expected", "raw_sessions"), ("raw_sessions", "expected")):
        query = f"SELECT count(*) FROM (SELECT * FROM {left} EXCEPT ALL SELECT * FROM {right})"
        counts.append(con.execute(query).fetchall()[0][0])
    return counts[0], counts[1]


def _profile_comparing_engines(
    rows: list[tuple[Any, ...]], options: SessionOptions, by_session: bool, batch_lists: int = 65_536
) -> list[str]:
    """Profile ``rows``; at the cut, write raw_sessions with every engine (reading ``batch_lists``
    lists at a time) and record how many rows of the SQL definition each missed and added."""
    report: list[str] = []

    def every_engine(con: duckdb.DuckDBPyConnection, **kwargs: Any) -> None:
        # Each engine drops event_lists once read: keep a copy to hand the next one the same lists.
        con.execute("CREATE TEMP TABLE lists_copy AS SELECT * FROM event_lists")
        write_raw_sessions(con, engine="sql", **kwargs)
        con.execute("CREATE OR REPLACE TEMP TABLE expected AS SELECT * FROM raw_sessions")
        expected_schema = con.execute("DESCRIBE expected").fetchall()
        for engine in ("vectorized", "compiled"):
            con.execute("DROP TABLE raw_sessions")
            con.execute("CREATE TEMP TABLE event_lists AS SELECT * FROM lists_copy")
            write_raw_sessions(con, engine=engine, **kwargs)
            assert not con.execute("SELECT count(*) FROM duckdb_tables() WHERE table_name = 'event_lists'").fetchall()[
                0
            ][0]
            assert con.execute("DESCRIBE raw_sessions").fetchall() == expected_schema, engine
            report.append(f"{engine}: {_differences(con)}")

    with tempfile.TemporaryDirectory() as tmp:
        path = _write(Path(tmp) / "e.parquet", rows)
        mapping = {"session_id": "session"} if by_session else {}
        profile_options = ProfileOptions(mapping=mapping, sessions=options)
        with (
            mock.patch.object(gapfinder.sessions, "write_raw_sessions", every_engine),
            mock.patch.object(gapfinder.session_cuts, "BATCH_LISTS", batch_lists),
        ):
            profile_telemetry([path], Path(tmp) / "ws.duckdb", profile_options, min_users=1)
    return report


event_rows = st.lists(
    st.tuples(
        st.sampled_from(["ann", "bob", "cy"]),
        st.sampled_from(["s1", "s2", None]),
        # seconds on a 30 s grid (ties and gaps of exactly the 60 s threshold are common) or anywhere
        st.one_of(st.integers(min_value=0, max_value=14).map(lambda n: at(30 * n)), st.integers(0, 400).map(at)),
        st.sampled_from(["a", "b", "c"]),
        st.sampled_from(["ok", "error", None]),
        st.sampled_from(["1.0", "2.0", None]),
    ),
    min_size=1,
    max_size=50,
)


@settings(max_examples=40, deadline=None)
@given(
    rows=event_rows,
    collapse=st.booleans(),
    max_events=st.sampled_from([0, 1, 2, 5]),
    by_session=st.booleans(),
    batch_lists=st.sampled_from([1, 2, 65_536]),
)
def test_every_engine_writes_the_rows_of_the_sql_definition(
    rows: list[tuple[Any, ...]], collapse: bool, max_events: int, by_session: bool, batch_lists: int
) -> None:
    """Lists read one or two at a time, too: a user's sessions then span batches."""
    options = SessionOptions(idle_minutes=1.0, collapse_repeats=collapse, max_events=max_events, flag_automated=False)
    report = _profile_comparing_engines(rows, options, by_session, batch_lists)
    assert report == ["vectorized: (0, 0)", "compiled: (0, 0)"]


def test_a_user_with_many_sessions_and_a_long_capped_one() -> None:
    """One user with 3,000 events: sessions every 40 events by an idle gap, one of 400 events cut at 100."""
    rows = []
    clock = 0
    for i in range(3000):
        clock += 7_200 if i % 40 == 0 and not 1000 <= i < 1400 else 5
        rows.append(("ann", None, at(clock), "abc"[i % 3 // 2], "error" if i % 17 == 0 else "ok", "1.0"))
    rows += [(user, None, at(10 * n), "a", None, None) for n, user in enumerate(["bob", "cy", "dee"])]
    options = SessionOptions(idle_minutes=30.0, collapse_repeats=True, max_events=100, flag_automated=False)
    assert _profile_comparing_engines(rows, options, by_session=False) == ["vectorized: (0, 0)", "compiled: (0, 0)"]


def _batch(draw: st.DrawFn) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    lengths = draw(st.lists(st.integers(1, 12), min_size=1, max_size=20))
    times, words = [], []
    for length in lengths:
        times.extend(sorted(draw(st.lists(st.integers(0, 500), min_size=length, max_size=length))))
        words.extend(draw(st.lists(st.integers(0, 2**32 - 1), min_size=length, max_size=length)))
    # The key layout of event_lists: (epoch µs + 2**63) << 48 | event id << 32 | attributes << 1 | failed,
    # with the event id kept to three values so repeats are common.
    keys = [((t + 2**63 - 250) << 48) | ((w % 3) << 32) | (w & 0xFFFFFFFF) for t, w in zip(times, words, strict=True)]
    low = np.array([k & (2**64 - 1) for k in keys], dtype=np.uint64)
    high = np.array([k >> 64 for k in keys], dtype=np.uint64)
    return np.r_[0, np.cumsum(lengths)].astype(np.int64), low, high


@settings(max_examples=80, deadline=None)
@given(
    batch=st.composite(_batch)(),
    idle_us=st.sampled_from([None, 0, 30, 100]),
    collapse=st.booleans(),
    max_events=st.sampled_from([0, 1, 3]),
)
def test_compiled_and_vectorized_cuts_agree(
    batch: tuple[np.ndarray, np.ndarray, np.ndarray], idle_us: int | None, collapse: bool, max_events: int
) -> None:
    offsets, low, high = batch
    options: dict[str, Any] = {"idle_us": idle_us, "collapse_repeats": collapse, "max_events": max_events}
    vectorized = cut_sessions(offsets, low, high, engine="vectorized", **options)
    compiled = cut_sessions(offsets, low, high, engine="compiled", **options)
    for name in vectorized.__dataclass_fields__:
        assert np.array_equal(getattr(vectorized, name), getattr(compiled, name)), name
    assert int(vectorized.event_count.sum()) <= len(low)
    assert len(vectorized.path_values) == int(vectorized.path_offsets[-1])
