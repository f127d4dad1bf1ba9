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
