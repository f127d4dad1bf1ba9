"""plan, export and run through click's CliRunner."""

from __future__ import annotations

import json
from pathlib import Path

import duckdb
from click.testing import CliRunner

from gapfinder.cli import cli
from tests.helpers import SAMPLE


def invoke(*args: str) -> object:
    return CliRunner().invoke(cli, list(args))


def test_plan_then_export(ws: str, tmp_path: Path) -> None:
    assert invoke("suite", str(SAMPLE / "tests" / "suite_traces.csv"), "-w", ws).exit_code == 0
    result = invoke("plan", "-w", ws, "--budget", "3", "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert len(data["scenarios"]) == 3 and all(isinstance(s["path"], list) for s in data["scenarios"])
    table = invoke("plan", "-w", ws, "--budget", "3")
    assert "Plan: 3 scenario(s)" in table.stdout and "optimum" in table.stdout
    out = tmp_path / "candidates"
    exported = invoke("export", "-w", ws, "--to", str(out), "--as", "gherkin")
    assert exported.exit_code == 0, exported.output
    assert list(out.glob("*.feature"))


def test_export_without_a_plan_is_one_clear_line(ws: str, tmp_path: Path) -> None:
    result = invoke("export", "-w", ws, "--to", str(tmp_path / "x"))
    assert result.exit_code == 2 and "gapfinder plan" in result.stderr


def test_run_writes_everything(tmp_path: Path) -> None:
    out = tmp_path / "report"
    result = invoke(
        "run",
        str(SAMPLE / "field"),
        "--tests",
        str(SAMPLE / "tests" / "suite_traces.csv"),
        "--out",
        str(out),
        "--budget",
        "5",
    )
    assert result.exit_code == 0, result.output
    summary = (out / "summary.md").read_text()
    assert "# Test coverage against real usage" in summary and "## Next sprint: 5 new scenario(s)" in summary
    # the page leads with the answer: next sprint's scenarios come before coverage and gaps
    assert summary.index("## Next sprint") < summary.index("## Coverage now") < summary.index("untested paths")
    assert "| in the plan |" in summary and "planned: scenario" in summary
    assert (out / "pytest" / "gapfinder_steps.py").exists() and list((out / "gherkin").glob("*.feature"))
    assert json.loads((out / "gapfinder_plan.json").read_text())["budget"] == 5
    # every stage's wall time is in `runs`, gap ranking (which writes no table) included
    con = duckdb.connect(str(out / "workspace.duckdb"), read_only=True)
    try:
        stages = [row[0] for row in con.execute("SELECT stage FROM runs WHERE seconds > 0 ORDER BY run_id").fetchall()]
    finally:
        con.close()
    assert stages == ["profile", "suite", "patterns", "gaps", "plan"]


def test_run_with_a_missing_test_source_fails_before_writing(tmp_path: Path) -> None:
    out = tmp_path / "report"
    result = invoke("run", str(SAMPLE / "field"), "--tests", str(tmp_path / "nope.yaml"), "--out", str(out))
    assert result.exit_code == 2 and "nope.yaml" in result.stderr
    assert not out.exists()


def test_run_pseudonymizes_when_given_a_key(tmp_path: Path, monkeypatch: object) -> None:
    import duckdb

    monkeypatch.setenv("GF_TEST_KEY", "a key long enough for the test")  # type: ignore[attr-defined]
    out = tmp_path / "report"
    args = ["run", str(SAMPLE / "field"), "--tests", str(SAMPLE / "tests" / "suite_traces.csv"), "--out", str(out)]
    result = invoke(*args, "--budget", "2", "--key-env", "GF_TEST_KEY")
    assert result.exit_code == 0, result.output
    con = duckdb.connect(str(out / "workspace.duckdb"), read_only=True)
    labels = [r[0] for r in con.execute("SELECT user_label FROM users LIMIT 50").fetchall()]
    con.close()
    assert all(len(label) == 64 and int(label, 16) >= 0 for label in labels)  # HMAC-SHA256 hex, not the raw ids
    missing = invoke(*args, "--key-env", "GF_UNSET_KEY")
    assert missing.exit_code == 2 and "GF_UNSET_KEY" in missing.stderr


def test_run_takes_the_stages_options_and_keeps_implemented_steps(tmp_path: Path) -> None:
    out = tmp_path / "report"
    features = tmp_path / "features"
    features.mkdir()
    (features / "loans.feature").write_text(
        "Feature: Loans\n"
        "  Scenario: Extend\n"
        '    Given I sign in as "ana"\n'
        "    When I extend the loan\n"
        "    And I polish the drill\n"
        "    Then I see the new date\n"
        "  @wip\n"
        "  Scenario: Waitlist\n"
        '    Given I sign in as "ana"\n'
        "    When I join the queue\n"
    )
    args = [
        "run",
        str(SAMPLE / "field"),
        "--tests",
        str(features),
        "--out",
        str(out),
        "--budget",
        "3",
        "--idle",
        "20",
        "--drop",
        "open_notifications",
        "--tags",
        "not @wip",
    ]
    first = invoke(*args)
    assert first.exit_code == 0, first.output
    assert "1 of 2 tests counted" in first.stderr and "2 unmapped" in first.stderr
    summary = (out / "summary.md").read_text()
    assert "Suite: 1 of 2 tests count as exercising (left out: 1 excluded by --tags)" in summary
    assert "## Tests not read (1)" in summary  # polishing the drill maps to no field event
    registry = out / "pytest" / "gapfinder_steps.py"
    text = registry.read_text()
    implemented = text.replace("    raise NotImplementedError('login')", "    pass  # implemented", 1)
    assert implemented != text
    registry.write_text(implemented)
    again = invoke(*args, "--budget", "4")
    assert again.exit_code == 0, again.output
    assert registry.read_text().startswith(implemented)


def test_plan_sample_draws_walks_of_the_usage_chain_and_exports_them(ws: str, tmp_path: Path) -> None:
    assert invoke("suite", str(SAMPLE / "tests" / "suite_traces.csv"), "-w", ws).exit_code == 0
    result = invoke("plan", "-w", ws, "--sample", "300", "--seed", "3", "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["kind"] == "sampled" and data["sample"] == 300
    drawn = [s["drawn"] for s in data["scenarios"]]
    assert drawn == sorted(drawn, reverse=True) and sum(drawn) <= 300
    assert len({tuple(s["path"]) for s in data["scenarios"]}) == len(data["scenarios"])
    again = json.loads(invoke("plan", "-w", ws, "--sample", "300", "--seed", "3", "--format", "json").stdout)
    assert [s["path"] for s in again["scenarios"]] == [s["path"] for s in data["scenarios"]]
    other = json.loads(invoke("plan", "-w", ws, "--sample", "300", "--seed", "4", "--format", "json").stdout)
    assert [s["path"] for s in other["scenarios"]] != [s["path"] for s in data["scenarios"]]
    table = invoke("plan", "-w", ws, "--sample", "50")
    assert table.exit_code == 0 and "walks of the usage chain" in table.stdout
    for as_format in ("pytest", "gherkin"):
        out = tmp_path / as_format
        exported = invoke("export", "-w", ws, "--to", str(out), "--as", as_format)
        assert exported.exit_code == 0, exported.output
    for module in (tmp_path / "pytest").glob("*.py"):
        compile(module.read_text(), str(module), "exec")
    assert "usage-sampled session" in "".join(p.read_text() for p in (tmp_path / "gherkin").glob("*.feature"))
