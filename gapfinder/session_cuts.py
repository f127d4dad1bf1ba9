"""Cutting sessions out of each user's sorted events, vectorized with numpy over Arrow batches.

``event_lists`` holds, per user (or per user and session id), the user's events as one sorted list
of HUGEINT keys ``(epoch microseconds + 2**63) << 48 | event id << 32 | attributes id << 1 |
is error``. DuckDB hands the lists over as Arrow ``decimal128`` values (16 bytes, little-endian two's
complement), which numpy reads in place as (low, high) 64-bit words. Each batch of lists is cut with
a handful of whole-array operations (no loop over events): a session starts at a list's first event
or after a gap longer than the idle threshold; repeats dropped under ``collapse_repeats`` are masked;
counts, errors, paths (cut at ``max_events``) and failed positions come from cumulative sums. The
sessions go back to DuckDB as one Arrow table, which ``create_raw_sessions_from_cuts.sql`` turns into
``raw_sessions``.

The same work in SQL (list lambdas over every event: ``create_raw_sessions_by_idle_gap.sql``, kept as
the definition the tests compare against) took 9.1 s of a 40 s profile of 50M events.
"""

from __future__ import annotations

import contextlib
import functools
import shutil
import tempfile
from collections.abc import Generator
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import duckdb
import numpy as np
import pyarrow as pa
from numba import njit

from gapfinder.sql import fetch_arrow, first_row, registered, run

__all__ = ["SessionCuts", "cut_sessions", "write_raw_sessions"]

BATCH_LISTS = 65_536  # lists (users, or sessions with a session column) read at a time
STAGING_COMPRESSION = None  # the staged sessions are read once, right away: not worth compressing
COMPILED_MIN_EVENTS = 500_000  # below this a batch is cut by numpy (numba's start-up costs ~0.5 s)
ENGINES = ("auto", "compiled", "vectorized")
_SIGN = np.uint64(1 << 63)
_ZERO = np.uint64(0)
_S1 = np.uint64(1)
_S16 = np.uint64(16)
_S32 = np.uint64(32)
_S48 = np.uint64(48)
_M16 = np.uint64(65535)
_M31 = np.uint64(0x7FFFFFFF)
_UTC_MICROSECONDS = pa.timestamp("us", tz="UTC")  # read by DuckDB as TIMESTAMPTZ, no conversion


@dataclass(frozen=True)
class SessionCuts:
    """The sessions cut from one batch of lists: ``list_index`` says which list each came from."""

    list_index: np.ndarray  # int64, the session's list in the batch
    session_no: np.ndarray  # int32, 1, 2, ... within the list
    started_us: np.ndarray  # int64, epoch microseconds of the first event
    ended_us: np.ndarray  # int64, of the last event (a dropped repeat included when cutting at gaps)
    event_count: np.ndarray  # int32, kept events
    error_count: np.ndarray  # int32, kept events that failed
    path_offsets: np.ndarray  # int32, into path_values
    path_values: np.ndarray  # int32, event ids (at most max_events per session when positive)
    error_offsets: np.ndarray  # int32, into error_values
    error_values: np.ndarray  # int32, positions in the path (from 1) whose event failed
    is_truncated: np.ndarray  # bool
    attributes_id: np.ndarray  # int32, of the session's first event


def _exclusive_cumsum(counts: np.ndarray) -> np.ndarray:
    out = np.zeros(len(counts) + 1, dtype=np.int64)
    np.cumsum(counts, out=out[1:])
    return out


def _cut_vectorized(
    offsets: np.ndarray,
    low: np.ndarray,
    high: np.ndarray,
    *,
    idle_us: int | None,
    collapse_repeats: bool,
    max_events: int,
) -> SessionCuts:
    n = len(low)
    times = (high << np.uint64(16)) | (low >> np.uint64(48))
    event_ids = ((low >> np.uint64(32)) & np.uint64(65535)).astype(np.int32)
    failed = (low & np.uint64(1)).astype(bool)
    list_first = np.zeros(n, dtype=bool)
    list_first[offsets[:-1]] = True
    same_as_before = np.zeros(n, dtype=bool)
    same_as_before[1:] = event_ids[1:] == event_ids[:-1]
    if idle_us is None:
        starts_session = list_first
    else:
        starts_session = list_first.copy()
        # At a list's first event the difference is meaningless (and may wrap), but that event starts
        # a session anyway. Times are sorted within a list, so the difference never wraps there.
        starts_session[1:] |= (times[1:] - times[:-1]) > np.uint64(idle_us)
    dropped = (~starts_session & same_as_before) if collapse_repeats else np.zeros(n, dtype=bool)

    session_of_event = np.cumsum(starts_session) - 1
    starts = np.flatnonzero(starts_session)
    session_count = len(starts)
    kept = np.flatnonzero(~dropped)
    kept_session = session_of_event[kept]
    event_count = np.bincount(kept_session, minlength=session_count)
    if idle_us is None:
        # With a session column the time span runs from the first to the last kept event.
        last = kept[_exclusive_cumsum(event_count)[1:] - 1]
    else:
        last = np.empty(session_count, dtype=np.int64)
        last[:-1] = starts[1:] - 1
        if session_count:
            last[-1] = n - 1
    list_of_session = np.cumsum(list_first)[starts] - 1
    first_session_of_list = np.flatnonzero(np.r_[True, list_of_session[1:] != list_of_session[:-1]])
    sessions_per_list = np.diff(np.r_[first_session_of_list, session_count])
    session_no = np.arange(session_count) - np.repeat(first_session_of_list, sessions_per_list)

    position = np.arange(len(kept)) - _exclusive_cumsum(event_count)[kept_session]  # from 0 in the session
    kept_failed = failed[kept]
    error_count = np.bincount(kept_session[kept_failed], minlength=session_count)
    if max_events > 0:
        in_path = position < max_events
        path_length = np.minimum(event_count, max_events)
        is_truncated = event_count > max_events
    else:
        in_path = np.ones(len(kept), dtype=bool)
        path_length = event_count
        is_truncated = np.zeros(session_count, dtype=bool)
    path_values = event_ids[kept[in_path]]
    error_in_path = in_path & kept_failed
    error_values = (position[error_in_path] + 1).astype(np.int32)
    error_length = np.bincount(kept_session[error_in_path], minlength=session_count)
    signed = (times ^ _SIGN).view(np.int64)
    return SessionCuts(
        list_index=list_of_session,
        session_no=(session_no + 1).astype(np.int32),
        started_us=signed[starts],
        ended_us=signed[last],
        event_count=event_count.astype(np.int32),
        error_count=error_count.astype(np.int32),
        path_offsets=_exclusive_cumsum(path_length).astype(np.int32),
        path_values=path_values,
        error_offsets=_exclusive_cumsum(error_length).astype(np.int32),
        error_values=error_values,
        is_truncated=is_truncated,
        attributes_id=((low[starts] >> np.uint64(1)) & np.uint64(0x7FFFFFFF)).astype(np.int32),
    )


@njit(cache=True, nogil=True)
def _cut_compiled(  # pragma: no cover - compiled
    offsets: np.ndarray,
    low: np.ndarray,
    high: np.ndarray,
    idle_us: np.uint64,
    by_gap: bool,
    collapse_repeats: bool,
    max_events: int,
) -> tuple[np.ndarray, ...]:
    """One pass over the events of a batch: what ``_cut_vectorized`` computes, in a loop."""
    n = low.shape[0]
    list_index = np.empty(n, dtype=np.int64)
    session_no = np.empty(n, dtype=np.int32)
    started = np.empty(n, dtype=np.uint64)
    ended = np.empty(n, dtype=np.uint64)
    event_count = np.zeros(n, dtype=np.int32)
    error_count = np.zeros(n, dtype=np.int32)
    is_truncated = np.zeros(n, dtype=np.bool_)
    attributes = np.empty(n, dtype=np.int32)
    path_offsets = np.zeros(n + 1, dtype=np.int32)
    path_values = np.empty(n, dtype=np.int32)
    error_offsets = np.zeros(n + 1, dtype=np.int32)
    error_values = np.empty(n, dtype=np.int32)
    session = -1
    path_end = 0
    error_end = 0
    for li in range(offsets.shape[0] - 1):
        number = 0
        previous_time = _ZERO
        previous_event = np.int32(-1)
        for i in range(offsets[li], offsets[li + 1]):
            word = low[i]
            time = (high[i] << _S16) | (word >> _S48)
            event = np.int32((word >> _S32) & _M16)
            if i == offsets[li] or (by_gap and time - previous_time > idle_us):
                if session >= 0:
                    path_offsets[session + 1] = path_end
                    error_offsets[session + 1] = error_end
                session += 1
                number += 1
                list_index[session] = li
                session_no[session] = number
                started[session] = time
                ended[session] = time
                attributes[session] = np.int32((word >> _S1) & _M31)
            else:
                previous_time = time
                if collapse_repeats and event == previous_event:
                    if by_gap:  # cut at gaps, a dropped repeat still ends the time span
                        ended[session] = time
                    continue
                ended[session] = time
            previous_time = time
            previous_event = event
            position = event_count[session]
            event_count[session] = position + 1
            failed = (word & _S1) == _S1
            if failed:
                error_count[session] += 1
            if max_events == 0 or position < max_events:
                path_values[path_end] = event
                path_end += 1
                if failed:
                    error_values[error_end] = position + 1
                    error_end += 1
            else:
                is_truncated[session] = True
    count = session + 1
    if count:
        path_offsets[count] = path_end
        error_offsets[count] = error_end
    return (
        list_index[:count].copy(),
        session_no[:count].copy(),
        started[:count].copy(),
        ended[:count].copy(),
        event_count[:count].copy(),
        error_count[:count].copy(),
        path_offsets[: count + 1].copy(),
        path_values[:path_end].copy(),
        error_offsets[: count + 1].copy(),
        error_values[:error_end].copy(),
        is_truncated[:count].copy(),
        attributes[:count].copy(),
    )


def cut_sessions(
    offsets: np.ndarray,
    low: np.ndarray,
    high: np.ndarray,
    *,
    idle_us: int | None,
    collapse_repeats: bool,
    max_events: int,
    engine: str = "auto",
) -> SessionCuts:
    """Cut the sessions of a batch of non-empty sorted lists (``offsets`` from 0 into the key words
    ``low``/``high``). ``idle_us`` None: each list is one session (the input's session column).

    engine: "compiled" (numba, one pass), "vectorized" (numpy, whole-array operations; no compiler
    start-up, so it serves small batches) or "auto" (compiled from COMPILED_MIN_EVENTS events)."""
    if engine not in ENGINES:
        raise ValueError(f"engine {engine!r}: give one of {', '.join(ENGINES)}")
    if engine == "vectorized" or (engine == "auto" and len(low) < COMPILED_MIN_EVENTS):
        return _cut_vectorized(
            offsets, low, high, idle_us=idle_us, collapse_repeats=collapse_repeats, max_events=max_events
        )
    parts = _cut_compiled(
        offsets.astype(np.int64),
        low,
        high,
        np.uint64(idle_us or 0),
        idle_us is not None,
        collapse_repeats,
        max_events,
    )
    (list_index, session_no, started, ended, event_count, error_count) = parts[:6]
    (path_offsets, path_values, error_offsets, error_values, is_truncated, attributes) = parts[6:]
    return SessionCuts(
        list_index=list_index,
        session_no=session_no,
        started_us=(started ^ _SIGN).view(np.int64),
        ended_us=(ended ^ _SIGN).view(np.int64),
        event_count=event_count,
        error_count=error_count,
        path_offsets=path_offsets,
        path_values=path_values,
        error_offsets=error_offsets,
        error_values=error_values,
        is_truncated=is_truncated,
        attributes_id=attributes,
    )


def _key_words(events: pa.ListArray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(offsets from 0, low words, high words) of a list<decimal128> column chunk, read in place."""
    bounds = events.offsets.to_numpy().astype(np.int64)
    values = events.values
    words = np.frombuffer(values.buffers()[1], dtype=np.uint64)
    start = (values.offset + int(bounds[0])) * 2
    stop = (values.offset + int(bounds[-1])) * 2
    return bounds - bounds[0], words[start:stop:2], words[start + 1 : stop : 2]


@dataclass(frozen=True)
class _Attributes:
    """event_attributes as Arrow dictionaries indexed by attributes id, NULLs masked."""

    app_versions: pa.Array
    platforms: pa.Array
    app_version_missing: np.ndarray  # bool per attributes id
    platform_missing: np.ndarray

    @classmethod
    def read(cls, con: duckdb.DuckDBPyConnection) -> _Attributes:
        table = fetch_arrow(con, "list_event_attributes")
        app_versions, platforms = (
            table.column("app_version").combine_chunks(),
            table.column("platform").combine_chunks(),
        )
        return cls(
            app_versions=app_versions,
            platforms=platforms,
            app_version_missing=app_versions.is_null().to_numpy(zero_copy_only=False),
            platform_missing=platforms.is_null().to_numpy(zero_copy_only=False),
        )

    def columns(self, attributes_id: np.ndarray) -> tuple[pa.DictionaryArray, pa.DictionaryArray]:
        """The app version and platform of each id, as dictionary arrays (no string is copied)."""
        return (
            pa.DictionaryArray.from_arrays(
                pa.array(attributes_id, mask=self.app_version_missing[attributes_id]), self.app_versions
            ),
            pa.DictionaryArray.from_arrays(
                pa.array(attributes_id, mask=self.platform_missing[attributes_id]), self.platforms
            ),
        )


def _sessions_batch(keys: np.ndarray, session_ids: Any, cuts: SessionCuts, attributes: _Attributes) -> pa.Table:
    """The sessions of one batch as Arrow columns: ``keys`` are the user keys of the batch's lists,
    ``session_ids`` their session ids (None when sessions are cut at idle gaps)."""
    app_version, platform = attributes.columns(cuts.attributes_id)
    columns = {
        "user_key": pa.array(keys[cuts.list_index]),
        "session_no": pa.array(cuts.session_no),
        "started_at": pa.array(cuts.started_us, type=_UTC_MICROSECONDS),
        "ended_at": pa.array(cuts.ended_us, type=_UTC_MICROSECONDS),
        "event_count": pa.array(cuts.event_count),
        "error_count": pa.array(cuts.error_count),
        "path": pa.ListArray.from_arrays(pa.array(cuts.path_offsets), pa.array(cuts.path_values)),
        "error_positions": pa.ListArray.from_arrays(pa.array(cuts.error_offsets), pa.array(cuts.error_values)),
        "is_truncated": pa.array(cuts.is_truncated),
        "app_version": app_version,
        "platform": platform,
    }
    if session_ids is not None:
        columns["session_id"] = session_ids.take(pa.array(cuts.list_index))
    return pa.table(columns, schema=_schema(session_ids is not None))


def write_raw_sessions(
    con: duckdb.DuckDBPyConnection,
    *,
    idle_us: int | None,
    collapse_repeats: bool,
    max_events: int,
    engine: str = "auto",
) -> None:
    """Write the temporary table raw_sessions from event_lists, user_keys and event_attributes:
    sessions cut at idle gaps longer than ``idle_us``, or one per list (``idle_us`` None, lists per
    session id). event_lists is dropped once read.

    The lists are read in ranges of BATCH_LISTS rows and each range's sessions are appended to an
    Arrow IPC stream staged beside DuckDB's spill folder, which DuckDB reads batch by batch once
    event_lists is dropped (Parquet took 4.1 s to write at 50M events, the IPC stream 0.3 s):
    at 50M events, collecting every range in Python held 0.75 GB more, and inserting each range into
    DuckDB left the process 0.6 GB larger (3.2-3.4 GB against 2.6 GB staged).

    engine: as for ``cut_sessions``, or "sql" for the queries that define the same table in SQL
    (``create_raw_sessions_by_idle_gap.sql``, ``create_raw_sessions_by_session_column.sql``; the
    tests hold the cutter to them)."""
    if engine == "sql":
        if idle_us is None:
            run(con, "create_raw_sessions_by_session_column", collapse_repeats=collapse_repeats, max_events=max_events)
        else:
            run(
                con,
                "create_raw_sessions_by_idle_gap",
                idle_us=idle_us,
                collapse_repeats=collapse_repeats,
                max_events=max_events,
            )
        run(con, "drop_event_lists")
        return
    with_session_id = idle_us is None
    users = fetch_arrow(con, "list_event_list_users")
    rows = users.column("list_row").to_numpy()
    lowest = int(rows.min()) if len(rows) else 0
    key_of_row = np.zeros(int(rows.max()) + 1 - lowest if len(rows) else 0, dtype=np.int32)
    key_of_row[rows - lowest] = users.column("user_key").to_numpy()
    attributes = _Attributes.read(con)
    cut = functools.partial(
        cut_sessions, idle_us=idle_us, collapse_repeats=collapse_repeats, max_events=max_events, engine=engine
    )
    # Staged beside DuckDB's spill folder (next to the workspace, or in the system's temporary folder).
    spill = Path(first_row(run(con, "read_spill_folder"))[0]).parent
    staging = Path(tempfile.mkdtemp(prefix="gapfinder-sessions-", dir=spill))
    try:
        staged = staging / "sessions.arrows"
        options = pa.ipc.IpcWriteOptions(compression=STAGING_COMPRESSION)
        with (
            pa.OSFile(str(staged), "wb") as sink,
            pa.ipc.new_stream(sink, _schema(with_session_id), options=options) as writer,
        ):
            # closed before anything else runs on the connection, also on an error
            lists_of_batches = _prefetched_lists(con, range(lowest, lowest + len(key_of_row), BATCH_LISTS))
            with contextlib.closing(lists_of_batches) as batches:
                for lists in batches:
                    for batch in lists.to_batches():
                        if batch.num_rows == 0:
                            continue
                        keys = key_of_row[batch.column("list_row").to_numpy() - lowest]
                        session_ids = batch.column("session_id") if with_session_id else None
                        cuts = cut(*_key_words(batch.column("events")))
                        writer.write_table(_sessions_batch(keys, session_ids, cuts, attributes))
        run(con, "drop_event_lists")
        name = "create_raw_sessions_from_session_cuts" if with_session_id else "create_raw_sessions_from_cuts"
        with pa.OSFile(str(staged), "rb") as source, registered(con, session_cuts=pa.ipc.open_stream(source)):
            run(con, name)
    finally:
        shutil.rmtree(staging, ignore_errors=True)


def _prefetched_lists(con: duckdb.DuckDBPyConnection, batch_starts: range) -> Generator[pa.Table, None, None]:
    """The event lists from each of ``batch_starts`` on (BATCH_LISTS rows each), in order, the next
    batch read by DuckDB on a worker while the caller cuts this one (only the worker uses ``con``
    meanwhile)."""

    def read(start: int) -> pa.Table:
        return fetch_arrow(con, "list_event_lists", first_row=start, end_row=start + BATCH_LISTS)

    starts = list(batch_starts)
    with ThreadPoolExecutor(max_workers=1) as reader:
        pending = reader.submit(read, starts[0]) if starts else None
        for following in [*starts[1:], None]:
            assert pending is not None
            lists = pending.result()
            pending = reader.submit(read, following) if following is not None else None
            yield lists


def _schema(with_session_id: bool) -> pa.Schema:
    fields = [
        ("user_key", pa.int32()),
        ("session_no", pa.int32()),
        ("started_at", _UTC_MICROSECONDS),
        ("ended_at", _UTC_MICROSECONDS),
        ("event_count", pa.int32()),
        ("error_count", pa.int32()),
        ("path", pa.list_(pa.int32())),
        ("error_positions", pa.list_(pa.int32())),
        ("is_truncated", pa.bool_()),
        ("app_version", pa.dictionary(pa.int32(), pa.string())),
        ("platform", pa.dictionary(pa.int32(), pa.string())),
    ]
    if with_session_id:
        fields.append(("session_id", pa.string()))
    return pa.schema(fields)
