"""The workspace: one DuckDB file holding every stage's tables and a record of each run.

A stage writes all of its tables inside one transaction and appends a row to ``runs``; if
anything fails the transaction is rolled back, so the previous results stay intact. A workspace
file that a failed first stage would leave empty is removed again.
"""

from __future__ import annotations

import contextlib
import json
import os
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, TypeVar

import duckdb

from gapfinder import __version__
from gapfinder.errors import ConfigError, GapfinderError, InputError, describe_database_error
from gapfinder.sql import first_row, run

T = TypeVar("T")

__all__ = [
    "DEFAULT_WORKSPACE",
    "SCHEMA_VERSION",
    "StageRecord",
    "Workspace",
    "connect_memory",
    "default_memory_limit",
    "engine_settings",
    "memory_limit_share",
    "stage_clock",
    "use_engine",
]

DEFAULT_WORKSPACE = "gapfinder.duckdb"
SCHEMA_VERSION = 2  # 2: suite_tests has outcome, left_out and tags


# Without --memory-limit DuckDB may use 80 % of the machine; gapfinder caps it at this much, or 60 %
# of the memory the machine (or its container) has, whichever is less, and spills the rest to disk.
# 2.25 GiB: with Python, Arrow and memory DuckDB holds outside its limit on top, a whole `run` on 50M
# events peaks at 2.77-2.86 GB (3.03-3.08 GB under 2.5 GiB, in the same time), under the 3 GB a
# laptop can spare.
DEFAULT_MEMORY_CAP = 2304 * 1024**2
DEFAULT_MEMORY_SHARE = 0.6
_ENGINE: dict[str, Any] = {"threads": None, "memory_limit": None}


def machine_memory() -> int | None:
    """Bytes of memory this process may use: the machine's, or its container's limit when lower."""
    sizes: list[int] = []
    with contextlib.suppress(ValueError, OSError, AttributeError):
        sizes.append(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES"))
    for limit_file in ("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory/memory.limit_in_bytes"):
        with contextlib.suppress(OSError, ValueError):
            text = Path(limit_file).read_text().strip()
            if text.isdigit() and int(text) < 2**60:
                sizes.append(int(text))
    sizes = [s for s in sizes if s > 0]
    return min(sizes) if sizes else None


def default_memory_limit() -> str:
    """The DuckDB memory limit used when none is given, as a size literal (e.g. ``3072MiB``)."""
    total = machine_memory()
    limit = DEFAULT_MEMORY_CAP if total is None else min(DEFAULT_MEMORY_CAP, int(total * DEFAULT_MEMORY_SHARE))
    return f"{max(limit, 256 * 1024**2) // 1024**2}MiB"


_UNITS = ("K", "M", "G", "T", "KB", "MB", "GB", "TB", "KIB", "MIB", "GIB", "TIB")
_MIN_MEMORY = 64 * 1024**2


def _memory_literal(memory_limit: str) -> str:
    """A size literal DuckDB accepts, of at least 64 MiB; only digits and a unit are let through."""
    literal = memory_limit.strip().upper().replace(" ", "")
    _memory_bytes(memory_limit, literal)
    return literal


def _memory_bytes(memory_limit: str, literal: str) -> int:
    digits = literal.rstrip("KMGTIB")
    unit = literal[len(digits) :]
    if not digits.isdigit() or unit not in _UNITS:
        raise ConfigError(f"--memory-limit {memory_limit!r}: give a size with a unit, such as 4GB, 3GiB or 512MB")
    power = {"K": 1, "M": 2, "G": 3, "T": 4}[unit[0]]
    size = int(digits) * (1024 if "I" in unit else 1000) ** power
    if size < _MIN_MEMORY:
        raise ConfigError(f"--memory-limit {memory_limit!r}: give at least 64MiB")
    return size


def memory_limit_share(share: float) -> str:
    """``share`` of the memory limit connections get now (``engine_settings``), as a size literal of
    at least 64 MiB: for stages that hold large arrays in Python beside DuckDB, so that the two
    together stay near the limit the user gave."""
    literal = _memory_literal(engine_settings()["memory_limit"])
    size = _memory_bytes(literal, literal)
    return f"{max(int(size * share), _MIN_MEMORY) // 1024**2}MiB"


def use_engine(**settings: Any) -> None:
    """Set this process's DuckDB ``threads`` and ``memory_limit`` for every connection opened from now
    on (the CLI calls it with a command's ``--threads`` and ``--memory-limit``); None restores the
    default. Keys not given are left as they are. ``threads`` also bounds the threads of the
    compiled kernels (numba: k-path counts, pattern miner and matcher), so ``--threads 1`` keeps the
    whole command on one core."""
    unknown = set(settings) - set(_ENGINE)
    if unknown:
        raise TypeError(f"use_engine: unknown setting {sorted(unknown)[0]!r}")
    if settings.get("memory_limit") is not None:
        _memory_literal(settings["memory_limit"])
    _ENGINE.update(settings)
    # numba is imported only when a thread count is set (or was, and is now restored): importing it
    # costs a fraction of a second that commands without patterns need not pay.
    if "threads" in settings and (settings["threads"] or "numba" in sys.modules):
        import numba

        cores = int(numba.config.NUMBA_NUM_THREADS)  # type: ignore[attr-defined]
        numba.set_num_threads(min(int(settings["threads"]), cores) if settings["threads"] else cores)


def engine_settings() -> dict[str, Any]:
    """The threads and memory limit connections get: as set by ``use_engine``, else the defaults."""
    return {"threads": _ENGINE["threads"], "memory_limit": _ENGINE["memory_limit"] or default_memory_limit()}


def _configure(con: duckdb.DuckDBPyConnection, *, threads: int | None, memory_limit: str | None) -> None:
    con.execute("SET TimeZone = 'UTC'")
    threads = threads or _ENGINE["threads"]
    if threads:
        con.execute(f"SET threads = {int(threads)}")
    literal = _memory_literal(memory_limit or _ENGINE["memory_limit"] or default_memory_limit())
    con.execute("SET memory_limit = $limit", {"limit": literal})


def connect_memory(*, threads: int | None = None) -> duckdb.DuckDBPyConnection:
    """An in-memory DuckDB connection configured the way the workspace is (UTC, threads, memory
    limit), spilling to a folder of this process under the system's temporary directory."""
    con = duckdb.connect(":memory:")
    _configure(con, threads=threads, memory_limit=None)
    spill = Path(tempfile.gettempdir()) / f"gapfinder-spill-{os.getpid()}"
    con.execute("SET temp_directory = $dir", {"dir": str(spill)})
    return con


def stage_clock() -> tuple[datetime, float]:
    """When a stage began (wall time and a monotonic clock), for ``StageRecord.began``."""
    return datetime.now(UTC), time.perf_counter()


@dataclass
class StageRecord:
    """What a stage reports into the ``runs`` table."""

    stage: str
    inputs: list[str] = field(default_factory=list)
    parameters: dict[str, Any] = field(default_factory=dict)
    row_counts: dict[str, int] = field(default_factory=dict)
    began: tuple[datetime, float] = field(default_factory=stage_clock)  # the whole stage, not only its writes


class Workspace:
    """An open workspace file.

    Parameters
    ----------
    path:
        The DuckDB file; created when missing.
    threads, memory_limit:
        DuckDB settings for this connection (defaults: those of ``use_engine``, else all cores and
        ``default_memory_limit()``); work past the limit spills to ``<workspace>.tmp``.
    """

    def __init__(
        self,
        path: str | os.PathLike[str] = DEFAULT_WORKSPACE,
        *,
        threads: int | None = None,
        memory_limit: str | None = None,
        read_only: bool = False,
    ) -> None:
        self.path = Path(path)
        self.is_new = not self.path.exists()
        self._derived: dict[str, tuple[tuple[Any, ...], Any]] = {}
        if read_only and self.is_new:
            raise InputError(f"workspace {self.path} does not exist: run `gapfinder profile ... -w {self.path}` first")
        if self.path.parent and not self.path.parent.exists():
            raise ConfigError(f"workspace folder {self.path.parent} does not exist: create it first")
        try:
            self.con = duckdb.connect(str(self.path), read_only=read_only)
        except duckdb.Error as exc:
            reason = describe_database_error(exc)
            if "another gapfinder process" in reason:
                raise InputError(
                    f"workspace {self.path}: another gapfinder process is using this workspace; "
                    "wait for it to finish, or pass another --workspace"
                ) from None
            raise InputError(
                f"workspace {self.path} cannot be opened as a DuckDB file ({reason}): pass another --workspace"
            ) from None
        try:
            self._check_schema()
        except BaseException:
            self.con.close()
            raise
        _configure(self.con, threads=threads, memory_limit=memory_limit)
        self.memory_limit = _memory_literal(memory_limit or _ENGINE["memory_limit"] or default_memory_limit())
        spill = self.path.with_name(self.path.name + ".tmp")
        self.con.execute("SET temp_directory = $dir", {"dir": str(spill)})
        if not read_only:
            self._migrate()

    def _check_schema(self) -> None:
        """Refuse a workspace written by a newer gapfinder; an older one is migrated on write."""
        try:
            if not self.has_table("meta"):
                return
            row = first_row(self.con.execute("SELECT value FROM meta WHERE key = 'schema_version'"))
        except (duckdb.Error, GapfinderError):
            raise InputError(
                f"workspace {self.path} cannot be read (it is damaged or not a gapfinder workspace): "
                "pass another --workspace"
            ) from None
        if row is None:
            return
        try:
            version = int(row[0])
        except (TypeError, ValueError):
            raise InputError(
                f"workspace {self.path} has an unreadable schema version: pass another --workspace"
            ) from None
        if version > SCHEMA_VERSION:
            raise InputError(
                f"workspace {self.path} was written by a newer gapfinder (schema {version}; this version reads up to "
                f"{SCHEMA_VERSION}): upgrade gapfinder, or pass another --workspace"
            )

    def _migrate(self) -> None:
        run(self.con, "create_run_sequence")
        run(self.con, "create_runs_table")
        run(self.con, "create_meta_table")
        if self.has_table("suite_tests"):
            columns = {r[0] for r in self.con.execute("DESCRIBE suite_tests").fetchall()}
            if "left_out" not in columns:
                run(self.con, "migrate_suite_tests_outcomes")
        run(self.con, "upsert_meta", key="schema_version", value=str(SCHEMA_VERSION))

    def close(self) -> None:
        self._derived.clear()
        self.con.close()

    def derived(self, name: str, stages: tuple[str, ...], make: Callable[[], T]) -> T:
        """``make()``, kept on this object while none of ``stages`` has run again since.

        For arrays several stages read from the same tables (`run` loads the distinct paths for
        mining, gap ranking and unused tests, and the k-paths for gap ranking and the plan); a
        stage that rewrites those tables records a newer run, which makes the kept value stale."""
        version = tuple(first_row(run(self.con, "read_last_run_ids", stages=list(stages)))[0] or [])
        kept = self._derived.get(name)
        if kept is not None and kept[0] == version:
            return kept[1]
        self._derived.pop(name, None)  # let the stale value go before making the new one
        value = make()
        self._derived[name] = (version, value)
        return value

    def forget_derived(self, *names: str) -> None:
        """Let values kept by ``derived`` go (all of them when no name is given)."""
        for name in names or tuple(self._derived):
            self._derived.pop(name, None)

    def release_cached_memory(self) -> None:
        """Let DuckDB hand back what its buffer pool keeps cached (``release_cached_memory``).

        Called before the k-path count, the summary of `profile` and gap ranking: it took a 50M
        high-entropy profile's peak from 5.14 to 3.95 GB at no cost in time (51.6 s; the count
        started at 0.52 GB instead of 2.01)."""
        release_cached_memory(self.con, self.memory_limit)

    def __enter__(self) -> Workspace:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def has_table(self, name: str) -> bool:
        return bool(first_row(run(self.con, "has_table", name=name))[0])

    def require(self, *tables: str, hint: str) -> None:
        """Raise a clear error when a stage's inputs are not in the workspace yet."""
        missing = [t for t in tables if not self.has_table(t)]
        if missing:
            raise InputError(f"workspace {self.path} has no {', '.join(missing)} table yet: {hint}")

    @contextlib.contextmanager
    def stage(self, record: StageRecord) -> Iterator[duckdb.DuckDBPyConnection]:
        """Run a stage's writes in one transaction and record the run when they all succeed."""
        started, clock = record.began
        self.con.execute("BEGIN TRANSACTION")
        try:
            yield self.con
            run(
                self.con,
                "insert_run",
                stage=record.stage,
                started_at=started,
                finished_at=datetime.now(UTC),
                seconds=round(time.perf_counter() - clock, 3),
                package_version=__version__,
                inputs=json.dumps(record.inputs),
                parameters=json.dumps(record.parameters, default=str, sort_keys=True),
                row_counts=json.dumps(record.row_counts, sort_keys=True),
            )
            self.con.execute("COMMIT")
        except BaseException:
            with contextlib.suppress(duckdb.Error):
                self.con.execute("ROLLBACK")
            raise

    def extend_recorded_run(self, record: StageRecord) -> None:
        """Record the stage's wall time up to now: for read-only work done after its writes were
        committed (profile's summary reads the k-paths once DuckDB may move them out of memory)."""
        _, clock = record.began
        run(
            self.con,
            "update_run_finish",
            stage=record.stage,
            finished_at=datetime.now(UTC),
            seconds=round(time.perf_counter() - clock, 3),
        )

    def discard_if_new(self) -> None:
        """Remove a workspace file this process created, after a failure left it without results."""
        if not self.is_new:
            return
        with contextlib.suppress(duckdb.Error):
            self.close()
        for leftover in (self.path, self.path.with_name(self.path.name + ".wal")):
            with contextlib.suppress(FileNotFoundError):
                leftover.unlink()


def release_cached_memory(con: duckdb.DuckDBPyConnection, memory_limit: str | None = None) -> None:
    """Let DuckDB hand back what its buffer pool keeps cached, before Python works on large arrays.

    Lowering the limit makes DuckDB evict every buffer it can (tables on disk are read again when
    needed); the limit is then restored (``memory_limit``, or the one in force)."""
    limit = memory_limit or first_row(run(con, "read_memory_limit"))[0]
    try:
        con.execute("SET memory_limit = '64MiB'")
    except duckdb.Error:  # pinned memory it cannot give back: keep what it has
        pass
    finally:
        con.execute("SET memory_limit = $limit", {"limit": limit})


@contextlib.contextmanager
def open_for_stage(
    path: str | os.PathLike[str], *, threads: int | None = None, memory_limit: str | None = None
) -> Iterator[Workspace]:
    """Open a workspace for writing; a new file is removed again when the stage fails."""
    ws = Workspace(path, threads=threads, memory_limit=memory_limit)
    try:
        yield ws
    except (GapfinderError, duckdb.Error, KeyboardInterrupt):
        ws.discard_if_new()
        raise
    finally:
        with contextlib.suppress(duckdb.Error):
            ws.close()
