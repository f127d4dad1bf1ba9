"""The demo generator: deterministic, and what it plants is recovered by the profile."""

from __future__ import annotations

import json
from pathlib import Path

import duckdb

from gapfinder.demo import generate_demo
from gapfinder.usage_profile import profile_telemetry


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
