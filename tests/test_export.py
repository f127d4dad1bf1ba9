"""Exported skeletons: collected by pytest, all skipped; Gherkin parses; safe, stable file writing."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from gapfinder.errors import ConfigError
from gapfinder.export import export_plan, slug
from gapfinder.plan import PlanOptions, load_plan, make_plan
from gapfinder.workspace import Workspace


@pytest.fixture(scope="module")
def plan(tmp_path_factory: pytest.TempPathFactory, suite_workspace: Path) -> dict:
    ws_path = tmp_path_factory.mktemp("export") / "ws.duckdb"
    shutil.copy(suite_workspace, ws_path)
    with Workspace(ws_path) as ws:
        make_plan(ws, PlanOptions(budget=6))
        return load_plan(ws)


def test_pytest_skeletons_collect_one_item_per_scenario_all_skipped(plan: dict, tmp_path: Path) -> None:
    export_plan(plan, tmp_path, as_format="pytest")
    collected = subprocess.run(
        [sys.executable, "-m", "pytest", "--collect-only", "-q", "-p", "no:cacheprovider", str(tmp_path)],
        cwd=tmp_path,
        capture_output=True,
        text=True,
    )
    items = [ln for ln in collected.stdout.splitlines() if "::test_" in ln]
    assert len(items) == len(plan["scenarios"]), collected.stdout
    ran = subprocess.run(
        [sys.executable, "-m", "pytest", "-q", "-rs", "-p", "no:cacheprovider", str(tmp_path)],
        cwd=tmp_path,
        capture_output=True,
        text=True,
    )
    assert ran.returncode == 0, ran.stdout
    assert f"{len(plan['scenarios'])} skipped" in ran.stdout and "implement its steps" in ran.stdout
    registry = (tmp_path / "gapfinder_steps.py").read_text()
    assert "raise NotImplementedError('pay_deposit_voucher')" in registry


def test_gherkin_parses_with_one_scenario_per_candidate(plan: dict, tmp_path: Path) -> None:
    from gherkin.parser import Parser

    result = export_plan(plan, tmp_path, as_format="gherkin")
    scenarios = 0
    for name in result.files:
        if not name.endswith(".feature"):
            continue
        document = Parser().parse((tmp_path / name).read_text())
        children = document["feature"]["children"]
        scenarios += sum(1 for c in children if "scenario" in c)
        assert all("@gapfinder" in [t["name"] for t in c["scenario"]["tags"]] for c in children if "scenario" in c)
    assert scenarios == len(plan["scenarios"])


def test_phrase_map_overrides_default_phrases(plan: dict, tmp_path: Path) -> None:
    phrases = tmp_path / "phrases.yaml"
    phrases.write_text('phrases:\n  login: "I sign in with my member card"\n')
    export_plan(plan, tmp_path / "out", as_format="gherkin", phrase_map=str(phrases))
    text = "".join(p.read_text() for p in (tmp_path / "out").glob("*.feature"))
    assert "Given I sign in with my member card" in text and "I login" not in text


def test_json_and_csv_carry_every_field(plan: dict, tmp_path: Path) -> None:
    export_plan(plan, tmp_path, as_format="json")
    export_plan(plan, tmp_path, as_format="csv")
    data = json.loads((tmp_path / "gapfinder_plan.json").read_text())
    assert data["scenarios"] == plan["scenarios"]
    header = (tmp_path / "gapfinder_plan.csv").read_text().splitlines()[0].split(",")
    assert {"scenario", "path", "gain_share", "sessions", "users", "share", "reason"} <= set(header)


def test_reexport_is_byte_identical_and_keeps_edited_work(plan: dict, tmp_path: Path) -> None:
    first = export_plan(plan, tmp_path, as_format="pytest")
    before = {name: (tmp_path / name).read_bytes() for name in first.files}
    export_plan(plan, tmp_path, as_format="pytest")  # same content: allowed, unchanged
    assert {name: (tmp_path / name).read_bytes() for name in first.files} == before
    target = tmp_path / first.files[-1]
    target.write_text("# my edits\n")
    again = export_plan(plan, tmp_path, as_format="pytest")
    assert again.kept == [first.files[-1]] and target.read_text() == "# my edits\n"
    export_plan(plan, tmp_path, as_format="pytest", force=True)
    assert target.read_bytes() == before[first.files[-1]]
    # Gherkin and data files are still refused without --force
    export_plan(plan, tmp_path / "g", as_format="json")
    (tmp_path / "g" / "gapfinder_plan.json").write_text("{}")
    with pytest.raises(ConfigError, match="--force"):
        export_plan(plan, tmp_path / "g", as_format="json")


def test_reexport_adds_new_steps_and_never_touches_an_implemented_one(plan: dict, tmp_path: Path) -> None:
    smaller = {**plan, "scenarios": plan["scenarios"][:1]}
    export_plan(smaller, tmp_path, as_format="pytest")
    registry = tmp_path / "gapfinder_steps.py"
    first_event = smaller["scenarios"][0]["path"][0]
    text = registry.read_text()
    implemented = text.replace(f"    raise NotImplementedError({first_event!r})", "    pass  # implemented", 1)
    assert implemented != text
    registry.write_text(implemented)
    for force in (False, True):  # not even --force replaces a step
        export_plan(plan, tmp_path, as_format="pytest", force=force)
        merged = registry.read_text()
        assert merged.startswith(implemented)
        assert merged.count(f"@step({first_event!r})") == 1
        for event in {e for row in plan["scenarios"] for e in row["path"]}:
            assert f"@step({event!r})" in merged
    broken = tmp_path / "b"
    export_plan(smaller, broken, as_format="pytest")
    (broken / "gapfinder_steps.py").write_text("def oops(:\n")
    with pytest.raises(ConfigError, match=r"gapfinder_steps.py:1: is not valid Python"):
        export_plan(plan, broken, as_format="pytest")


@pytest.mark.parametrize("mode", ["prepend", "append", "importlib", "package"])
def test_skeletons_collect_in_every_import_mode_and_in_a_package(plan: dict, tmp_path: Path, mode: str) -> None:
    folder = tmp_path / "tests" / "gapfinder"
    export_plan(plan, folder, as_format="pytest")
    args = [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "tests"]
    if mode == "package":
        (tmp_path / "tests" / "__init__.py").write_text("")
        (folder / "__init__.py").write_text("")
    else:
        args += [f"--import-mode={mode}"]
    ran = subprocess.run(args, cwd=tmp_path, capture_output=True, text=True)
    assert ran.returncode == 0, ran.stdout + ran.stderr
    assert f"{len(plan['scenarios'])} skipped" in ran.stdout


def test_the_sprint_loop_closes(plan: dict, tmp_path: Path, suite_workspace: Path) -> None:
    """Export the plan, implement the steps trivially, run pytest with the plugin, read the new run
    beside the old suite: transition coverage equals the plan's "after" figure."""
    from gapfinder.coverage import coverage_report
    from gapfinder.suite import load_suite
    from tests.helpers import SAMPLE

    folder = tmp_path / "repo" / "tests"
    export_plan(plan, folder, as_format="pytest")
    registry = folder / "gapfinder_steps.py"
    registry.write_text(registry.read_text().replace("    raise NotImplementedError(", "    print("))
    for module in folder.glob("test_gapfinder_*.py"):
        module.write_text(module.read_text().replace("@pytest.mark.skip(reason=PENDING)\n", ""))
    run_file = tmp_path / "run.ndjson"
    ran = subprocess.run(
        [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "--gapfinder-trace", str(run_file), "tests"],
        cwd=tmp_path / "repo",
        capture_output=True,
        text=True,
    )
    assert ran.returncode == 0, ran.stdout + ran.stderr
    ws_path = tmp_path / "ws.duckdb"
    shutil.copy(suite_workspace, ws_path)
    with Workspace(ws_path) as ws:
        make_plan(ws, PlanOptions(budget=6))
        summary = load_suite(ws, [SAMPLE / "tests" / "suite_traces.csv", run_file])
        assert summary["unmapped_step_count"] == 0
        assert summary["test_count"] == 8 + len(plan["scenarios"])
        result = coverage_report(ws)
    after = plan["coverage"]["transitions"]["after"]
    assert result["metrics"]["transitions"]["strict"]["by_sessions"] == pytest.approx(after, abs=1e-9)
    assert all(p["exercised_by"] for p in result["planned"])  # planned and done


def test_names_cannot_escape_the_folder(plan: dict, tmp_path: Path) -> None:
    hostile = json.loads(json.dumps(plan))
    hostile["scenarios"][0]["gap_path"] = ["../../etc/passwd"]
    hostile["scenarios"][0]["name"] = "../../evil"
    result = export_plan(hostile, tmp_path / "out", as_format="pytest")
    assert all("/" not in name and not name.startswith(".") for name in result.files)
    assert not (tmp_path / "etc").exists()
    assert slug("../../etc/passwd") == "etc_passwd"


def test_suite_reads_the_exported_gherkin_with_every_step_mapped(
    plan: dict, tmp_path: Path, suite_workspace: Path
) -> None:
    from gapfinder.suite import SuiteOptions, load_suite

    export_plan(plan, tmp_path / "features", as_format="gherkin")
    ws_path = tmp_path / "ws.duckdb"
    shutil.copy(suite_workspace, ws_path)
    with Workspace(ws_path) as ws:
        summary = load_suite(ws, [tmp_path / "features"], SuiteOptions(count_all=True))
    assert summary["test_count"] == len(plan["scenarios"])
    assert summary["unmapped_step_count"] == 0
    assert summary["mapped_step_count"] == sum(len(r["path"]) for r in plan["scenarios"])
    with Workspace(ws_path) as ws:
        pending = load_suite(ws, [tmp_path / "features"])
    assert pending["left_out"] == {"excluded by --tags": len(plan["scenarios"])}  # @pending until implemented
