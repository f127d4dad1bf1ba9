"""The patterns stage against the workspace: SQL k-paths, exact distinct users, persistence."""

from __future__ import annotations

import itertools
import json
import shutil
from pathlib import Path

import duckdb
import pytest

from gapfinder.coverage import unpack_code
from gapfinder.errors import ConfigError
from gapfinder.paths import feature_names, id_bits
from gapfinder.patterns import MiningOptions, list_patterns, load_sequences, mine_workspace, usage_paths
from gapfinder.workspace import Workspace


def contains(path: list[int], pattern: tuple[int, ...], max_gap: int | None) -> bool:
    for pos in itertools.combinations(range(len(path)), len(pattern)):
        if all(path[p] == e for p, e in zip(pos, pattern, strict=True)) and (
            max_gap is None or all(b - a - 1 <= max_gap for a, b in itertools.pairwise(pos))
        ):
            return True
    return False


@pytest.fixture
def sample_copy(tmp_path: Path, sample_workspace: Path) -> Path:
    target = tmp_path / "copy.duckdb"
    shutil.copy(sample_workspace, target)
    return target


def test_contiguous_patterns_equal_sql_kpaths(sample_copy: Path) -> None:
    """With --max-gap 0 a pattern is a contiguous run: its sessions and users must equal the
    kpaths table's (computed independently in SQL), for every run without START/END."""
    with Workspace(sample_copy) as ws:
        found = mine_workspace(ws, MiningOptions(min_support=1, min_length=1, max_length=5, max_gap=0, closed=False))
        kpaths = ws.con.execute("SELECT code, sessions, users FROM kpaths WHERE k <= 5").fetchall()
        bits = id_bits(len(feature_names(ws.con)))
    runs = {unpack_code(code, bits): (s, u) for code, s, u in kpaths}
    expected = {path: counts for path, counts in runs.items() if not {0, 1} & set(path)}  # no START or END
    ours = {
        p: (int(s), int(u))
        for p, s, u in zip(found.patterns.paths, found.patterns.sessions, found.patterns.users, strict=True)
    }
    assert len(expected) > 100
    assert ours == expected


@pytest.mark.parametrize("max_gap", [None, 1])
def test_users_are_exact_distinct_users(sample_copy: Path, max_gap: int | None) -> None:
    with Workspace(sample_copy) as ws:
        found = mine_workspace(ws, MiningOptions(min_support=50, max_length=4, max_gap=max_gap, closed=False))
        sessions = ws.con.execute("SELECT path, user_key FROM sessions WHERE NOT is_automated").fetchall()
    users_by_path: dict[tuple[int, ...], set[int]] = {}
    sessions_by_path: dict[tuple[int, ...], int] = {}
    for path, user in sessions:
        users_by_path.setdefault(tuple(path), set()).add(user)
        sessions_by_path[tuple(path)] = sessions_by_path.get(tuple(path), 0) + 1
    assert len(found.patterns) > 20
    for pattern, support, users in zip(
        found.patterns.paths, found.patterns.sessions, found.patterns.users, strict=True
    ):
        hits = [p for p in users_by_path if contains(list(p), pattern, max_gap)]
        assert support == sum(sessions_by_path[p] for p in hits)
        assert users == len(set().union(*(users_by_path[p] for p in hits)))


def test_patterns_are_stored_with_their_parameters(sample_copy: Path) -> None:
    options = MiningOptions(min_support=0.02, max_gap=1)
    with Workspace(sample_copy) as ws:
        found = mine_workspace(ws, options)
        stored = ws.con.execute("SELECT count(*), min(pattern_no), bool_and(is_closed) FROM patterns").fetchone()
        run = ws.con.execute("SELECT parameters, row_counts FROM runs WHERE stage = 'patterns'").fetchall()
        listing = list_patterns(ws.con, min_users=5)
    assert stored == (len(found.patterns), 1, True)
    parameters = json.loads(run[-1][0])
    assert parameters["max_gap"] == 1 and parameters["min_support"] == 0.02 and parameters["closed"] is True
    assert parameters["min_support_sessions"] == found.min_support_sessions
    assert json.loads(run[-1][1])["patterns"] == len(found.patterns)
    assert [r["sessions"] for r in listing.rows] == sorted((r["sessions"] for r in listing.rows), reverse=True)
    assert all(len(r["path"]) >= 2 and all(isinstance(e, str) for e in r["path"]) for r in listing.rows)


def test_failed_mining_keeps_the_previous_patterns(sample_copy: Path) -> None:
    with Workspace(sample_copy) as ws:
        first = mine_workspace(ws, MiningOptions(min_support=0.05))
        with pytest.raises(ConfigError, match="patterns qualify"):
            mine_workspace(ws, MiningOptions(min_support=1, closed=False, max_gap=None, max_patterns=10))
        count = ws.con.execute("SELECT count(*) FROM patterns").fetchone()
    assert count == (len(first.patterns),)


def test_privacy_floor_on_patterns_counts_what_it_hides(profiled: Path) -> None:
    with Workspace(profiled) as ws:
        result = usage_paths(ws, "patterns", min_support=1, min_users=3, top=0)
        everything = usage_paths(ws, "patterns", min_support=1, min_users=1, top=0)
    assert all(r["users"] >= 3 for r in result["rows"])
    assert result["suppressed"] > 0
    assert len(result["rows"]) + result["suppressed"] == len(everything["rows"])


def test_sequences_come_from_counted_sessions_only(sample_copy: Path) -> None:
    con = duckdb.connect(str(sample_copy), read_only=True)
    db = load_sequences(con)
    human = con.execute("SELECT count(*) FROM sessions WHERE NOT is_automated").fetchone()
    con.close()
    assert human is not None and db.session_count == human[0]
    assert db.user_ptr is not None and db.user_ptr[-1] == len(db.user_ids)  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("kind", "extra"),
    [("features", "occurrences"), ("transitions", "occurrences"), ("kpaths", "occurrences"), ("full", "error_rate")],
)
def test_every_kind_lists_paths_with_support(sample_workspace: Path, kind: str, extra: str) -> None:
    with Workspace(sample_workspace, read_only=True) as ws:
        result = usage_paths(ws, kind, min_support=0.05, top=10)
    assert result["rows"] and len(result["rows"]) <= 10
    floor = result["min_support_sessions"]
    assert floor == -(-result["total_sessions"] * 5 // 100)
    for row in result["rows"]:
        assert row["sessions"] >= floor and row["users"] >= 5 and extra in row
        assert row["share"] == pytest.approx(row["sessions"] / result["total_sessions"])
