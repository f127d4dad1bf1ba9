"""Test-run telemetry: the app's own events during a test run, attributed to tests."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from gapfinder.coverage import coverage_report
from gapfinder.errors import InputError
from gapfinder.suite import SuiteOptions, load_suite, read_suite
from gapfinder.workspace import Workspace
from tests.helpers import SAMPLE

STAGING = SAMPLE / "staging_run"


def _by_name(traces: list) -> dict[str, list[str]]:
    return {t.test_id.rsplit("::", 1)[-1]: t.steps for t in traces}


def test_the_demo_staging_run_gives_the_suite_of_its_traces() -> None:
    from_events = read_suite([STAGING / "pytest_run.ndjson"], SuiteOptions(events=(str(STAGING / "events.parquet"),)))
    from_traces = read_suite([SAMPLE / "tests" / "suite_traces.csv"])
    assert _by_name(from_events.traces) == _by_name(from_traces.traces)
    assert from_events.events_reading["attributed"] == from_events.events_reading["events"] == 28
    assert from_events.problems == []


def test_coverage_from_the_staging_run_equals_coverage_from_the_traces(tmp_path: Path, sample_workspace: Path) -> None:
    import shutil

    figures = []
    for n, (inputs, options) in enumerate(
        [
            ([STAGING / "pytest_run.ndjson"], SuiteOptions(events=(str(STAGING / "events.parquet"),))),
            ([SAMPLE / "tests" / "suite_traces.csv"], SuiteOptions()),
        ]
    ):
        ws_path = tmp_path / f"w{n}.duckdb"
        shutil.copy(sample_workspace, ws_path)
        with Workspace(ws_path) as ws:
            load_suite(ws, inputs, options)
            result = coverage_report(ws)
        figures.append({m: v["strict"] for m, v in result["metrics"].items()})
    assert figures[0] == figures[1]


def test_events_with_a_test_id_column_need_no_windows(tmp_path: Path) -> None:
    events = tmp_path / "run.csv"
    events.write_text(
        "account,at,action,case\n"
        "qa1,2026-07-01T09:00:01Z,login,t_pay\n"
        "qa1,2026-07-01T09:00:03Z,pay_deposit_card,t_pay\n"
        "qa1,2026-07-01T09:00:02Z,search_catalogue,t_pay\n"
        "qa2,2026-07-01T09:00:02Z,login,t_other\n"
    )
    catalog = tmp_path / "catalog.yaml"
    catalog.write_text("tests:\n  - {id: t_named_only, steps: [login]}\n")
    options = SuiteOptions(
        events=(str(events),),
        events_mapping={"user_id": "account", "ts": "at", "event": "action", "test_id": "case"},
    )
    report = read_suite([catalog], options)
    steps = {t.test_id: t.steps for t in report.traces}
    assert steps == {
        "t_named_only": ["login"],
        "t_pay": ["login", "search_catalogue", "pay_deposit_card"],
        "t_other": ["login"],
    }
    assert report.events_reading["by"] == "test_id"


def _windows_file(path: Path, rows: list[tuple[str, float, float, str | None]]) -> Path:
    import json

    lines = [json.dumps({"gapfinder_run": 1})]
    for test_id, start, end, user in rows:
        record = {"test_id": test_id, "outcome": "passed", "started": start, "finished": end, "steps": []}
        record["user_id"] = user
        lines.append(json.dumps(record))
    path.write_text("\n".join(lines) + "\n")
    return path


T0 = 1_782_896_400.0  # 2026-07-01 09:00:00 UTC


def test_tests_running_at_once_are_separated_by_their_account(tmp_path: Path) -> None:
    events = tmp_path / "events.csv"
    events.write_text(
        "user_id,ts,event\n"
        "qa1,2026-07-01T09:00:01Z,login\n"
        "qa2,2026-07-01T09:00:01.5Z,sign_up\n"
        "qa1,2026-07-01T09:00:02Z,search_catalogue\n"
        "qa2,2026-07-01T09:00:02.5Z,login\n"
        "qa3,2026-07-01T09:00:09Z,login\n"
    )
    overlapping = [("a", T0, T0 + 3, None), ("b", T0 + 1, T0 + 4, None)]
    shared = read_suite([_windows_file(tmp_path / "w1.ndjson", overlapping)], SuiteOptions(events=(str(events),)))
    assert shared.events_reading["shared"] == 4  # every event of qa1 and qa2 lies in both windows
    assert shared.events_reading["events"] - shared.events_reading["attributed"] == 1  # qa3's login is in no window
    assert any("running at once" in p for p in shared.problems)
    assert any("fell in no test's time window" in p for p in shared.problems)
    named = [("a", T0, T0 + 3, "qa1"), ("b", T0 + 1, T0 + 4, "qa2")]
    separated = read_suite([_windows_file(tmp_path / "w2.ndjson", named)], SuiteOptions(events=(str(events),)))
    assert {t.test_id: t.steps for t in separated.traces} == {
        "a": ["login", "search_catalogue"],
        "b": ["sign_up", "login"],
    }
    assert separated.events_reading["shared"] == 0


def test_events_without_windows_or_test_ids_say_what_to_do(tmp_path: Path) -> None:
    events = tmp_path / "events.csv"
    events.write_text("user_id,ts,event\nqa1,2026-07-01T09:00:01Z,login\n")
    catalog = tmp_path / "catalog.yaml"
    catalog.write_text("tests:\n  - {id: t, steps: [login]}\n")
    with pytest.raises(InputError, match="no test source gives time windows"):
        read_suite([catalog], SuiteOptions(events=(str(events),)))


def test_a_real_pytest_run_with_the_plugin_and_app_telemetry(tmp_path: Path) -> None:
    """The plugin's windows from a real pytest run; the 'app' writes its events as the tests drive it."""
    app_log = tmp_path / "app_events.csv"
    (tmp_path / "test_shed.py").write_text(
        "import datetime, pathlib, time\n"
        f"LOG = pathlib.Path({str(app_log)!r})\n"
        "def emit(event):\n"
        "    if not LOG.exists():\n"
        "        LOG.write_text('user_id,ts,event\\n')\n"
        "    now = datetime.datetime.now(datetime.timezone.utc).isoformat()\n"
        "    with LOG.open('a') as f:\n"
        "        f.write(f'qa,{now},{event}\\n')\n"
        "    time.sleep(0.02)\n"
        "def test_browse():\n"
        "    emit('login'); emit('search_catalogue'); emit('view_tool')\n"
        "def test_pay():\n"
        "    emit('login'); emit('pay_deposit_card')\n"
        "    assert False, 'declined'\n"
    )
    run_file = tmp_path / "run.ndjson"
    done = subprocess.run(
        [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "--gapfinder-trace", str(run_file)],
        cwd=tmp_path,
        capture_output=True,
        text=True,
    )
    assert done.returncode == 1, done.stdout + done.stderr
    report = read_suite([run_file], SuiteOptions(events=(str(app_log),)))
    traces = {t.test_id: t for t in report.traces}
    assert traces["test_shed.py::test_browse"].steps == ["login", "search_catalogue", "view_tool"]
    assert traces["test_shed.py::test_pay"].steps == ["login", "pay_deposit_card"]
    assert traces["test_shed.py::test_pay"].outcome == "failed"


def test_staging_run_as_opentelemetry_logs_reads_like_the_parquet(tmp_path: Path) -> None:
    """Whatever profile reads, suite reads as a recorded test run: the staging events as OTLP logs."""
    import duckdb

    from gapfinder.sql import run

    otlp = tmp_path / "events.jsonl.gz"
    con = duckdb.connect()
    con.execute("SET TimeZone = 'UTC'")
    run(con, "write_demo_otlp_logs", files=[str(STAGING / "events.parquet")], path=str(otlp))
    from_otlp = read_suite([STAGING / "pytest_run.ndjson"], SuiteOptions(events=(str(otlp),)))
    from_parquet = read_suite([STAGING / "pytest_run.ndjson"], SuiteOptions(events=(str(STAGING / "events.parquet"),)))
    assert _by_name(from_otlp.traces) == _by_name(from_parquet.traces)
    assert from_otlp.events_reading["attributed"] == 28
