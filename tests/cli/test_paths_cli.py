"""`gapfinder paths` through click's CliRunner: every kind and format, and its error paths."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from gapfinder.cli import cli


def invoke(*args: str) -> object:
    return CliRunner().invoke(cli, list(args))


def test_patterns_json_has_lists_and_support(ws: str) -> None:
    result = invoke("paths", "-w", ws, "--kind", "patterns", "--format", "json", "--top", "5")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["kind"] == "patterns" and len(data["rows"]) == 5
    for row in data["rows"]:
        assert isinstance(row["path"], list) and len(row["path"]) >= 2
        assert {"sessions", "users", "share", "closed"} <= row.keys()
    assert data["mining"]["max_gap"] == 2 and data["mining"]["closed"] is True
    assert data["min_support_sessions"] == -(-data["total_sessions"] // 100)


def test_patterns_table_and_unbounded_gap(ws: str) -> None:
    result = invoke("paths", "-w", ws, "--kind", "patterns", "--max-gap", "any", "--all-patterns", "--max-length", "3")
    assert result.exit_code == 0, result.output
    assert "Journeys" in result.stdout and "search_catalogue › view_tool" in result.stdout
    assert "any number of other events" in result.stdout and "held back" in result.stdout


def test_transitions_csv(ws: str) -> None:
    result = invoke("paths", "-w", ws, "--format", "csv", "--top", "4")
    assert result.exit_code == 0, result.output
    rows = list(csv.DictReader(io.StringIO(result.stdout)))
    assert len(rows) == 4 and json.loads(rows[0]["path"]) and int(rows[0]["sessions"]) >= int(rows[1]["sessions"])
    assert "held back" in result.stderr


@pytest.mark.parametrize("kind", ["features", "kpaths", "full"])
def test_other_kinds_in_json(ws: str, kind: str) -> None:
    result = invoke("paths", "-w", ws, "--kind", kind, "--format", "json", "--min-support", "100")
    assert result.exit_code == 0, result.output
    rows = json.loads(result.stdout)["rows"]
    assert rows and all(r["sessions"] >= 100 for r in rows)


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--max-gap", "-1"], "--max-gap"),
        (["--max-gap", "two"], "--max-gap"),
        (["--min-support", "0"], "--min-support"),
        (["--min-support", "2.5"], "--min-support"),
        (["--kind", "kpaths", "--max-length", "2"], "--max-length"),
    ],
)
def test_bad_options_exit_2_with_one_line(ws: str, args: list[str], needle: str) -> None:
    result = invoke("paths", "-w", ws, "--kind", "patterns", *args)
    assert result.exit_code == 2, result.output
    assert needle in result.stderr and "Traceback" not in result.output


def test_missing_workspace_is_one_clear_line(tmp_path: Path) -> None:
    result = invoke("paths", "-w", str(tmp_path / "none.duckdb"))
    assert result.exit_code == 2
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and "gapfinder profile" in lines[0]
    assert not (tmp_path / "none.duckdb").exists()


def test_unprofiled_workspace_for_patterns_is_one_clear_line(tmp_path: Path) -> None:
    result = invoke("paths", "-w", str(tmp_path / "new.duckdb"), "--kind", "patterns")
    assert result.exit_code == 2
    assert "gapfinder profile" in result.stderr and "Traceback" not in result.output


def test_patterns_are_one_row_per_journey_unless_each_is_asked(ws: str) -> None:
    one = json.loads(invoke("paths", "-w", ws, "--kind", "patterns", "--format", "json", "--top", "0").stdout)
    every = json.loads(
        invoke("paths", "-w", ws, "--kind", "patterns", "--format", "json", "--top", "0", "--each-pattern").stdout
    )
    assert one["one_per_journey"] and not every["one_per_journey"]
    assert len(one["rows"]) < len(every["rows"])
    assert sum(r["folded"] for r in one["rows"]) + len(one["rows"]) <= len(every["rows"])
    listed = {tuple(r["path"]) for r in every["rows"]}
    assert all(tuple(r["path"]) in listed for r in one["rows"])
