"""Shared fixtures: a small hand-made telemetry file and a workspace profiled from it."""

from __future__ import annotations

from pathlib import Path

import pytest

from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from tests.helpers import at, write_events


@pytest.fixture
def shop_events(tmp_path: Path) -> Path:
    """A small hand-made telemetry file: 6 users, 3 flows, one user with two sessions."""
    flows = {
        "buy": ["open", "list", "item", "pay"],
        "look": ["open", "search", "item"],
        "tune": ["open", "settings"],
    }
    rows = []
    plan = [("u1", "buy"), ("u2", "buy"), ("u3", "look"), ("u4", "buy"), ("u5", "look"), ("u6", "tune"), ("u1", "look")]
    for n, (user, flow) in enumerate(plan):
        start = n * 7200  # two hours apart: separate sessions
        rows += [(user, at(start + 30 * i), e, "ok") for i, e in enumerate(flows[flow])]
    return write_events(tmp_path / "shop.parquet", rows, ("user_id", "ts", "event", "outcome"))


@pytest.fixture
def profiled(tmp_path: Path, shop_events: Path) -> Path:
    ws = tmp_path / "ws.duckdb"
    profile_telemetry([shop_events], ws, ProfileOptions(), min_users=1)
    return ws


@pytest.fixture(scope="session")
def sample_workspace(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The committed sample telemetry, profiled once per test session (do not write to it)."""
    from tests.helpers import SAMPLE

    ws = tmp_path_factory.mktemp("sample") / "sample.duckdb"
    profile_telemetry([SAMPLE / "field"], ws, ProfileOptions())
    return ws


@pytest.fixture(scope="session")
def suite_workspace(tmp_path_factory: pytest.TempPathFactory, sample_workspace: Path) -> Path:
    """The sample workspace with the demo suite stored and patterns mined (copy it before writing)."""
    import shutil

    from gapfinder.patterns import MiningOptions, mine_workspace
    from gapfinder.suite import load_suite
    from gapfinder.workspace import Workspace
    from tests.helpers import SAMPLE

    ws_path = tmp_path_factory.mktemp("suite") / "suite.duckdb"
    shutil.copy(sample_workspace, ws_path)
    with Workspace(ws_path) as ws:
        load_suite(ws, [SAMPLE / "tests" / "suite_traces.csv"])
        mine_workspace(ws, MiningOptions())
    return ws_path
