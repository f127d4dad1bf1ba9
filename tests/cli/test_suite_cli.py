"""suite, align, coverage, gaps and unused through click's CliRunner."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from gapfinder.cli import cli
from tests.helpers import SAMPLE

DATA = Path(__file__).resolve().parent.parent / "data" / "suite"


def invoke(*args: str) -> object:
    return CliRunner().invoke(cli, list(args))


def test_suite_then_gaps_in_every_format(ws: str) -> None:
    stored = invoke("suite", str(SAMPLE / "tests" / "suite_traces.csv"), "-w", ws, "--format", "json")
    assert stored.exit_code == 0, stored.output
    assert json.loads(stored.stdout)["test_count"] == 8
    as_json = invoke("gaps", "-w", ws, "--top", "5", "--format", "json")
    assert as_json.exit_code == 0, as_json.output
    gaps = json.loads(as_json.stdout)["gaps"]
    assert len(gaps) == 5 and all({"path", "sessions", "users", "share", "reason"} <= g.keys() for g in gaps)
    as_csv = invoke("gaps", "-w", ws, "--top", "5", "--format", "csv")
    rows = list(csv.DictReader(io.StringIO(as_csv.stdout)))
    assert len(rows) == 5 and rows[0]["rank"] == "1" and json.loads(rows[0]["path"])
    table = invoke("gaps", "-w", ws, "--top", "5")
    assert table.exit_code == 0 and "Gaps, most worth a test first" in table.stdout


def test_coverage_and_unused(ws: str) -> None:
    invoke("suite", str(SAMPLE / "tests" / "suite_traces.csv"), "-w", ws)
    result = invoke("coverage", "-w", ws, "--max-gap", "1", "--format", "json")
    assert result.exit_code == 0, result.output
    metrics = json.loads(result.stdout)["metrics"]
    assert 0 < metrics["transitions"]["strict"]["by_sessions"] <= metrics["transitions"]["lenient"]["by_sessions"] <= 1
    table = invoke("coverage", "-w", ws)
    assert "Exercised share" in table.stdout
    unused = invoke("unused", "-w", ws, "--format", "json")
    assert {"test_delete_account", "test_voucher_from_notifications"} <= {
        r["test_id"] for r in json.loads(unused.stdout)["unused"]
    }


def test_align_suggests_and_writes_aliases(ws: str, tmp_path: Path) -> None:
    catalog = tmp_path / "catalog.yaml"
    catalog.write_text(
        "tests:\n"
        "  - {id: t1, steps: [login, Open Notifications, extending loans]}\n"
        "  - {id: t2, steps: ['I sign in as \"{}\"', I log out]}\n"
    )
    stored = invoke("suite", str(catalog), "-w", ws, "--format", "json")
    assert stored.exit_code == 0, stored.output
    # "Open Notifications" and the sign-in phrasing resolve by normalization, with no alias
    assert {r["step"] for r in json.loads(stored.stdout)["unmapped_steps"]} == {"extending loans", "I log out"}
    aliases = tmp_path / "aliases.yaml"
    result = invoke("align", "-w", ws, "--write", str(aliases), "--format", "json")
    assert result.exit_code == 0, result.output
    rows = {r["step"]: r for r in json.loads(result.stdout)["suggestions"]}
    assert rows["extending loans"]["event"] == "extend_loan"
    assert rows["I log out"]["event"] is None  # the field has no sign-out event, and login is its opposite
    assert all(c["event"] != "login" for c in rows["I log out"]["candidates"])
    again = invoke("suite", str(catalog), "-w", ws, "--aliases", str(aliases), "--format", "json")
    assert [r["step"] for r in json.loads(again.stdout)["unmapped_steps"]] == ["I log out"]


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["suite", str(DATA / "missing.yaml")], "no such file"),
        (["suite", str(DATA / "traces.csv")], "--map test_id=COLUMN"),
        (["suite", str(DATA / "traces.csv"), "--map", "user=x"], "not a canonical column"),
        (["gaps"], "gapfinder suite"),
        (["coverage"], "gapfinder suite"),
    ],
)
def test_errors_are_one_line_exit_2(ws: str, args: list[str], needle: str) -> None:
    result = invoke(*args[:1], *args[1:], "-w", ws)
    assert result.exit_code == 2, result.output
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and needle in lines[0], result.stderr


def test_a_second_suite_says_what_it_replaced_and_add_adds(ws: str, tmp_path: Path) -> None:
    first = invoke("suite", str(DATA / "catalog.yaml"), "-w", ws, "--format", "json")
    assert json.loads(first.stdout)["replaced"] is None
    second = invoke("suite", str(DATA / "report.xml"), "-w", ws)
    assert second.exit_code == 0 and "replaced the stored suite of 2 tests" in second.stdout
    added = invoke("suite", str(DATA / "catalog.yaml"), "-w", ws, "--add", "--format", "json")
    summary = json.loads(added.stdout)
    assert summary["test_count"] == 3 + 2
    assert summary["inputs"] == [str(DATA / "report.xml"), str(DATA / "catalog.yaml")]
