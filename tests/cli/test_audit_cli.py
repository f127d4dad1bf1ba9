"""audit, check and report through click's CliRunner: output, exit codes 0 / 1 / 2."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from gapfinder.cli import cli
from tests.helpers import SAMPLE


def invoke(*args: str) -> object:
    return CliRunner().invoke(cli, list(args))


def with_suite(ws: str) -> str:
    assert invoke("suite", str(SAMPLE / "tests" / "suite_traces.csv"), "-w", ws).exit_code == 0
    return ws


def test_audit_json_and_table(ws: str) -> None:
    with_suite(ws)
    args = ["audit", "-w", ws, "--period", "2026-04-01..2026-06-30", "--against", "2026-01-01..2026-03-31"]
    result = invoke(*args, "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["movers"][0]["path"][0] == "join_waitlist"
    # the suite's divergence from each period's usage chain, and per month of the trend
    assert 0 < data["divergence"]["current"] < 5 and 0 < data["divergence"]["previous"] < 5
    assert len(data["trend"]) >= 2 and all(t["divergence"] > 0 for t in data["trend"])
    table = invoke(*args, "--by", "app_version")
    assert table.exit_code == 0 and "Moved most" in table.stdout and "coverage by segment" in table.stdout


def test_check_exit_codes(ws: str) -> None:
    with_suite(ws)
    failing = invoke("check", "-w", ws, "--min-coverage", "transitions=0.999")
    assert failing.exit_code == 1 and "FAIL" in failing.stdout and "coverage gate failed" in failing.stdout
    passing = invoke("check", "-w", ws, "--min-coverage", "transitions=0.5", "--format", "json")
    assert passing.exit_code == 0 and json.loads(passing.stdout)["passed"] is True
    bad = invoke("check", "-w", ws, "--min-coverage", "transitions=eighty")
    assert bad.exit_code == 2 and "--min-coverage" in bad.stderr
    nothing = invoke("check", "-w", ws)
    assert nothing.exit_code == 2 and "nothing to check" in nothing.stderr


def test_check_gates_the_divergence_of_the_tests_from_usage(ws: str) -> None:
    with_suite(ws)
    coverage = invoke("coverage", "-w", ws, "--format", "json")
    measured = json.loads(coverage.stdout)["representativeness"]
    assert 0 < measured["bits_per_step"] < 10 and measured["arcs_tested"] <= measured["usage_arcs"]
    below = invoke("check", "-w", ws, "--max-divergence", str(measured["bits_per_step"] / 2))
    assert below.exit_code == 1 and "bits/step" in below.stdout
    above = invoke("check", "-w", ws, "--max-divergence", str(measured["bits_per_step"] * 2), "--format", "json")
    assert above.exit_code == 0
    (entry,) = json.loads(above.stdout)["checks"]
    assert entry["value"] == measured["bits_per_step"]
    assert invoke("check", "-w", ws, "--max-divergence", "-1").exit_code == 2
    assert invoke("check", "-w", ws, "--max-divergence", "nan").exit_code == 2


def test_effort_lists_features_by_the_gap_between_effort_and_usage(ws: str) -> None:
    with_suite(ws)
    result = invoke("effort", "-w", ws, "--tests", "20", "--critical", "pay_deposit_card=3", "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    rows = {r["event"]: r for r in data["features"]}
    assert sum(r["recommended_tests"] for r in data["features"]) <= 20
    assert rows["pay_deposit_card"]["recommended_tests"] >= 3
    assert abs(sum(r["usage_share"] for r in data["features"]) - 1) < 0.05  # suppressed features aside
    for row in data["features"]:
        assert row["difference_low"] <= row["difference"] <= row["difference_high"]
        assert (row["verdict"] == "over-tested") == (row["difference_low"] > 0)
    table = invoke("effort", "-w", ws)
    assert table.exit_code == 0 and "Test effort against usage" in table.stdout
    bad = invoke("effort", "-w", ws, "--critical", "no_such_feature=2")
    assert bad.exit_code == 2 and "--critical no_such_feature" in bad.stderr
    assert invoke("effort", "-w", ws, "--critical", "pay=x").exit_code == 2


def test_families_lists_named_families_above_the_floor(ws: str) -> None:
    with_suite(ws)
    result = invoke("families", "-w", ws, "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert len(data["families"]) >= 5
    top = data["families"][0]
    assert top["name"] == " › ".join(top["typical_path"]) and top["session_share"] > 0.1
    assert all(f["users"] >= data["min_users"] for f in data["families"])
    table = invoke("families", "-w", ws)
    assert table.exit_code == 0 and "Journey families" in table.stdout
    assert invoke("families", "-w", ws, "--min-paths", "1").exit_code == 2


def test_report_writes_html_and_markdown(ws: str, tmp_path: Path) -> None:
    with_suite(ws)
    html, md = tmp_path / "coverage.html", tmp_path / "coverage.md"
    result = invoke("report", "-w", ws, "-o", str(html), "--markdown", str(md))
    assert result.exit_code == 0, result.output
    assert html.read_text().startswith("<!DOCTYPE html>") and md.read_text().startswith("# Test coverage")
    missing = invoke("report", "-w", ws)
    assert missing.exit_code == 2


def test_check_fails_on_a_release_that_brought_an_untested_journey(ws: str) -> None:
    with_suite(ws)
    # the waitlist rolled out on 2026-04-01, the first day of the data's recent half: it is new
    result = invoke("check", "-w", ws, "--max-new-gaps", "0")
    assert result.exit_code == 1, result.output


def test_the_trend_is_weighted_by_sessions(ws: str) -> None:
    with_suite(ws)
    data = json.loads(invoke("audit", "-w", ws, "--format", "json").stdout)
    for point in data["trend"]:
        assert 0 <= point["transitions_by_sessions"] <= 1
    assert data["current"]["from"] == "2026-04-01" and data["previous"]["to"] == "2026-03-31"
