"""Bad input through the Spark engine: one line on stderr, exit 2, no row content, nothing written."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner

from gapfinder.cli import cli
from tests.helpers import at, write_events

pytestmark = pytest.mark.spark

SECRET = "spark-secret-carol@example.com"


def _events(folder: Path) -> str:
    rows = [(SECRET, at(60 * i), "open" if i % 2 else "list") for i in range(20)]
    return str(write_events(folder / "events.parquet", rows))


CASES = {
    "attribute-field": lambda f: [_events(f), "--map", "platform=attr:os.type"],
    "ts-format": lambda f: [_events(f), "--ts-format", "%d/%m/%Y"],
    "feature-template": lambda f: [_events(f), "--feature", "{event}:{screen}"],
    "unknown-column": lambda f: [_events(f), "--map", "event=nope"],
    "garbage-parquet": lambda f: [str(_garbage(f))],
    "missing-remote-path": lambda f: ["file:///no/such/folder/events.parquet"],
}


def _garbage(folder: Path) -> Path:
    path = folder / "g.parquet"
    path.write_bytes(b"PAR1" + SECRET.encode() + b" not really parquet PAR1")
    return path


@pytest.mark.parametrize("case", sorted(CASES))
def test_bad_input_through_spark_is_refused_cleanly(spark: Any, tmp_path: Path, case: str) -> None:
    ws = tmp_path / "ws.duckdb"
    args = ["profile", *CASES[case](tmp_path), "-w", str(ws), "--engine", "spark"]
    result = CliRunner().invoke(cli, args, catch_exceptions=False)
    stderr = result.stderr.strip()
    assert result.exit_code == 2, (case, stderr)
    assert len(stderr.splitlines()) == 1 and stderr.startswith("gapfinder: "), stderr
    assert SECRET not in stderr + result.stdout
    assert "Traceback" not in stderr
    assert not ws.exists(), "nothing is written for refused input"
    assert not [p for p in tmp_path.rglob("gapfinder-*")], "the staging folder is removed"
