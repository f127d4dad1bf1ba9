"""The demo generator: deterministic, and what it plants is recovered by the profile."""

from __future__ import annotations

import json
from pathlib import Path

import duckdb
import pytest

import gapfinder.demo as demo_module
from gapfinder.demo import generate_demo
from gapfinder.usage_profile import profile_telemetry
from tests.helpers import SAMPLE

FIELD_QUERY = (
    "SELECT user_id, ts, event::VARCHAR, app_version::VARCHAR, platform::VARCHAR, outcome::VARCHAR "
    "FROM read_parquet($files, hive_partitioning = true) ORDER BY ALL"
)


def field_rows(files: list[Path]) -> list[tuple]:
    return duckdb.execute(FIELD_QUERY, {"files": [str(f) for f in sorted(files)]}).fetchall()


def test_same_seed_same_files(tmp_path: Path) -> None:
    a = generate_demo(tmp_path / "a", events=8000, seed=11)
    b = generate_demo(tmp_path / "b", events=8000, seed=11)
    for fa, fb in zip(a.field_files, b.field_files, strict=True):
        assert duckdb.sql(f"SELECT * FROM '{fa}' EXCEPT SELECT * FROM '{fb}'").fetchall() == []
    assert a.manifest_file.read_text() == b.manifest_file.read_text()


def test_profile_recovers_what_was_planted(tmp_path: Path) -> None:
    demo = generate_demo(tmp_path / "d", events=40_000, seed=5)
    manifest = json.loads(demo.manifest_file.read_text())
    summary = profile_telemetry([demo.out / "field"], tmp_path / "w.duckdb")
    assert summary["automated"]["users"] == 1
    assert summary["automated"]["events"] == manifest["automated_account"]["events"]
    con = duckdb.connect(str(tmp_path / "w.duckdb"), read_only=True)
    feature = manifest["rolled_out_in_second_quarter"]["feature"]
    first = con.execute(
        "SELECT min(s.started_at)::DATE::VARCHAR FROM sessions s, features f "
        "WHERE f.event = $f AND list_contains(s.path, f.event_id)",
        {"f": feature},
    ).fetchone()
    assert first is not None and first[0] >= manifest["period"]["second_quarter_from"]
    error_rate = con.execute("SELECT avg((error_count > 0)::INT) FROM sessions WHERE NOT is_automated").fetchone()
    assert error_rate is not None and 0.02 < error_rate[0] < 0.15


def test_the_committed_sample_is_what_the_generator_writes(tmp_path: Path) -> None:
    """One block of sessions draws what the generator drew before it made events block by block,
    so sample_telemetry/ (written by `gapfinder demo --events 60000 --seed 7`) is reproduced."""
    demo = generate_demo(tmp_path / "s", events=60_000, seed=7)
    assert field_rows(demo.field_files) == field_rows(sorted((SAMPLE / "field").rglob("*.parquet")))
    assert demo.manifest_file.read_text() == (SAMPLE / "manifest.json").read_text()


def test_blocks_of_sessions_keep_every_month_ordered_and_leave_no_parts(tmp_path: Path) -> None:
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(demo_module, "CHUNK_SESSIONS", 700)
        a = generate_demo(tmp_path / "a", events=20_000, seed=3)
        b = generate_demo(tmp_path / "b", events=20_000, seed=3)
    assert field_rows(a.field_files) == field_rows(b.field_files)
    manifest = json.loads(a.manifest_file.read_text())
    assert a.session_count > 3 * 700 and len(field_rows(a.field_files)) == manifest["field_events"] == a.event_count
    for file in a.field_files:
        rows = duckdb.execute("SELECT user_id, ts FROM read_parquet($f)", {"f": str(file)}).fetchall()
        assert rows == sorted(rows), f"{file} is not ordered by member and time"
    assert sorted(p.name for p in (tmp_path / "a").iterdir()) == ["field", "manifest.json", "staging_run", "tests"]
