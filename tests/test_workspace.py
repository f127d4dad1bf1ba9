"""Workspace: runs are recorded, and a failed stage leaves the previous results intact."""

from __future__ import annotations

from pathlib import Path

import duckdb
import pytest

from gapfinder.errors import InputError
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from tests.helpers import at, write_events


def test_runs_are_recorded(profiled: Path) -> None:
    con = duckdb.connect(str(profiled), read_only=True)
    stage, counts = con.execute("SELECT stage, row_counts FROM runs").fetchone()  # type: ignore[misc]
    assert stage == "profile" and '"sessions": 7' in counts


def test_failed_stage_keeps_previous_results(profiled: Path, tmp_path: Path) -> None:
    before = duckdb.connect(str(profiled), read_only=True).execute("SELECT count(*) FROM sessions").fetchone()
    bad = write_events(tmp_path / "bad.parquet", [("u", at(0), "a")], ("member", "ts", "event"))
    with pytest.raises(InputError):
        profile_telemetry([bad], profiled, ProfileOptions())
    con = duckdb.connect(str(profiled), read_only=True)
    assert con.execute("SELECT count(*) FROM sessions").fetchone() == before
    assert con.execute("SELECT count(*) FROM runs").fetchone() == (1,)


def test_pseudonymized_labels_hide_ids(tmp_path: Path, shop_events: Path) -> None:
    ws = tmp_path / "p.duckdb"
    profile_telemetry([shop_events], ws, ProfileOptions(pseudonymize_key=b"k" * 32), min_users=1)
    labels = [r[0] for r in duckdb.connect(str(ws), read_only=True).execute("SELECT user_label FROM users").fetchall()]
    assert all(len(label) == 64 and not label.startswith("u") for label in labels)


def test_a_new_profile_clears_stages_built_on_the_old_event_numbering(tmp_path: Path, shop_events: Path) -> None:
    """Re-profiling renumbers events; a stored suite or pattern set would then point at other features."""
    from gapfinder.patterns import MiningOptions, mine_workspace
    from gapfinder.suite import load_suite
    from gapfinder.usage_profile import ProfileOptions, profile_telemetry
    from gapfinder.workspace import Workspace

    ws_path = tmp_path / "ws.duckdb"
    profile_telemetry([shop_events], ws_path, ProfileOptions(), min_users=1)
    catalog = tmp_path / "tests.yaml"
    catalog.write_text("tests:\n  - id: t\n    steps: [open, list, item]\n")
    with Workspace(ws_path) as ws:
        load_suite(ws, [catalog])
        mine_workspace(ws, MiningOptions(min_support=1))
    summary = profile_telemetry([shop_events], ws_path, ProfileOptions(), min_users=1)
    assert summary["cleared"] == ["suite", "patterns"]
    with Workspace(ws_path, read_only=True) as ws:
        assert not ws.has_table("suite_tests") and not ws.has_table("patterns")


def _memory_setting(con: duckdb.DuckDBPyConnection) -> str:
    return str(con.execute("SELECT current_setting('memory_limit')").fetchall()[0][0])


def test_connections_get_a_bounded_memory_limit_by_default(tmp_path: Path) -> None:
    from gapfinder.workspace import Workspace, connect_memory, default_memory_limit, machine_memory

    literal = default_memory_limit()
    mebibytes = int(literal.removesuffix("MiB"))
    assert mebibytes <= 3 * 1024
    total = machine_memory()
    if total:
        assert mebibytes * 1024**2 <= max(0.6 * total, 256 * 1024**2)
    expected = duckdb.connect()
    expected.execute("SET memory_limit = $l", {"l": literal})
    with Workspace(tmp_path / "w.duckdb") as ws:
        assert _memory_setting(ws.con) == _memory_setting(expected)
        spill = ws.con.execute("SELECT current_setting('temp_directory')").fetchall()[0][0]
        assert spill.endswith("w.duckdb.tmp")
    con = connect_memory()
    assert _memory_setting(con) == _memory_setting(expected)
    assert "gapfinder-spill-" in con.execute("SELECT current_setting('temp_directory')").fetchall()[0][0]


def test_use_engine_sets_every_later_connection_and_the_cli_resets_it(tmp_path: Path) -> None:
    from click.testing import CliRunner

    from gapfinder.cli import cli
    from gapfinder.errors import ConfigError
    from gapfinder.workspace import Workspace, engine_settings, use_engine

    try:
        use_engine(memory_limit="1GiB", threads=1)
        with Workspace(tmp_path / "w.duckdb") as ws:
            assert _memory_setting(ws.con) == "1.0 GiB"
            assert ws.con.execute("SELECT current_setting('threads')").fetchall()[0][0] == 1
        with pytest.raises(ConfigError, match="at least 64MiB"):
            use_engine(memory_limit="10MB")
        CliRunner().invoke(cli, ["paths", "-w", str(tmp_path / "none.duckdb")])
        assert engine_settings()["threads"] is None  # each command starts from the defaults
    finally:
        use_engine(threads=None, memory_limit=None)


def test_runs_record_the_whole_stage(profiled: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """The seconds in `runs` cover the stage's computation, not only its final writes."""
    import time

    from gapfinder import patterns
    from gapfinder.workspace import Workspace

    slow = patterns.load_sequences

    def load_slowly(con: duckdb.DuckDBPyConnection, **options: bool) -> object:
        time.sleep(0.3)
        return slow(con, **options)

    monkeypatch.setattr(patterns, "load_sequences", load_slowly)
    with Workspace(profiled) as ws:
        patterns.mine_workspace(ws, patterns.MiningOptions(min_support=0.01))
        seconds = ws.con.execute("SELECT seconds FROM runs WHERE stage = 'patterns'").fetchall()[-1][0]
    assert seconds >= 0.3


def test_a_share_of_the_memory_limit_follows_the_limit_connections_get() -> None:
    from gapfinder.workspace import memory_limit_share, use_engine

    try:
        use_engine(memory_limit="2000MiB")
        assert memory_limit_share(0.6) == "1200MiB"
        use_engine(memory_limit="1GB")
        assert memory_limit_share(0.5) == "476MiB"  # 500,000,000 bytes
        use_engine(memory_limit="100MB")
        assert memory_limit_share(0.1) == "64MiB"  # never under DuckDB's useful minimum
    finally:
        use_engine(memory_limit=None)


def test_releasing_cached_memory_keeps_the_limit_and_the_data(tmp_path: Path) -> None:
    from gapfinder.workspace import Workspace

    with Workspace(tmp_path / "ws.duckdb", memory_limit="300MB") as ws:
        before = ws.con.execute("SELECT current_setting('memory_limit')").fetchall()
        ws.con.execute("CREATE TABLE t AS SELECT range AS x FROM range(2000000)")
        ws.release_cached_memory()
        assert ws.con.execute("SELECT current_setting('memory_limit')").fetchall() == before
        assert ws.con.execute("SELECT sum(x) FROM t").fetchall() == [(1999999 * 2000000 // 2,)]


def test_derived_values_are_kept_until_their_stages_run_again(profiled: Path) -> None:
    """`run` reads the distinct paths and the k-paths once for several stages; a new run of a stage
    they come from (here a patterns run) makes the kept value stale, and it is made again."""
    from gapfinder import patterns
    from gapfinder.coverage import load_field_items
    from gapfinder.workspace import Workspace

    with Workspace(profiled) as ws:
        made: list[int] = []

        def make() -> list[int]:
            made.append(1)
            return [len(made)]

        first = ws.derived("probe", ("profile", "patterns"), make)
        assert ws.derived("probe", ("profile", "patterns"), make) is first and len(made) == 1
        items = load_field_items(ws)
        assert load_field_items(ws) is items
        with pytest.raises(ValueError, match="read-only"):
            items.sessions[0] = 0  # kept for several stages: nobody may change it in place
        with_users = patterns.workspace_sequences(ws)
        without = patterns.workspace_sequences(ws, with_users=False)
        assert without.items is with_users.items and without.user_ptr is None and with_users.user_ptr is not None
        patterns.mine_workspace(ws, patterns.MiningOptions(min_support=0.01))
        assert ws.derived("probe", ("profile", "patterns"), make) == [2]  # patterns ran again
        assert load_field_items(ws) is not items
        assert patterns.workspace_sequences(ws) is with_users  # mining does not touch the paths
        ws.forget_derived()
        assert patterns.workspace_sequences(ws) is not with_users
