"""The privacy scan of every output, and the fault tests: kill -9 mid-profile, two writers at once."""

from __future__ import annotations

import signal
import subprocess
import sys
import time
from pathlib import Path

import pyarrow.compute as pc
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner

from gapfinder.cli import cli
from tests.helpers import SAMPLE


def _email_telemetry(folder: Path) -> tuple[Path, list[str]]:
    """The committed sample with every member id replaced by a distinctive email address."""
    table = pq.read_table(SAMPLE / "field")
    ids = table.column("user_id").cast("string")
    emails = pc.binary_join_element_wise("member.", ids, "@people.example", "")
    table = table.set_column(table.schema.get_field_index("user_id"), "user_id", emails)
    if "month" in table.column_names:
        table = table.drop(["month"])
    path = folder / "field.parquet"
    pq.write_table(table, path)
    return path, sorted(set(emails.to_pylist()))


@pytest.mark.parametrize("keyed", [False, True], ids=["no-key", "with-key"])
def test_no_raw_id_in_any_output(tmp_path: Path, keyed: bool) -> None:
    telemetry, emails = _email_telemetry(tmp_path)
    out = tmp_path / "out"
    args = ["run", str(telemetry), "--tests", str(SAMPLE / "tests" / "suite_traces.csv"), "--out", str(out)]
    env = {}
    if keyed:
        args += ["--key-env", "GAPFINDER_TEST_KEY"]
        env["GAPFINDER_TEST_KEY"] = "a test key of sufficient length"
    ran = CliRunner(env=env).invoke(cli, args, catch_exceptions=False)
    assert ran.exit_code == 0, ran.stderr
    ws = out / "workspace.duckdb"
    report = CliRunner().invoke(
        cli, ["report", "-w", str(ws), "-o", str(out / "r.html"), "--markdown", str(out / "r.md")]
    )
    assert report.exit_code == 0, report.stderr
    printed = ran.stdout + ran.stderr + report.stdout + report.stderr
    for command in (
        ["profile", str(telemetry), "-w", str(tmp_path / "p.duckdb"), "--format", "json"],
        ["paths", "-w", str(ws), "--kind", "full", "--top", "0", "--format", "csv"],
        ["gaps", "-w", str(ws), "--format", "json"],
        ["coverage", "-w", str(ws), "--format", "json"],
        ["audit", "-w", str(ws), "--format", "json"],
        ["unused", "-w", str(ws)],
    ):
        listed = CliRunner().invoke(cli, command)
        assert listed.exit_code == 0, (command, listed.stderr)
        printed += listed.stdout + listed.stderr
    files = [p for p in out.rglob("*") if p.is_file() and p.name != "workspace.duckdb"]
    assert len(files) >= 8
    written = b"".join(p.read_bytes() for p in files)
    for email in emails[:: max(1, len(emails) // 200)]:
        assert email not in printed
        assert email.encode() not in written
    assert b"@people.example" not in written and "@people.example" not in printed
    summary = (out / "summary.md").read_text()
    if keyed:
        assert "pseudonymized" in summary
    else:
        assert "stores the raw user ids" in summary and "were pseudonymized" not in summary


@pytest.mark.slow
def test_kill_during_profile_leaves_the_earlier_workspace_identical(tmp_path: Path) -> None:
    demo = tmp_path / "demo"
    made = CliRunner().invoke(cli, ["demo", "--out", str(demo), "--events", "4000000"])
    assert made.exit_code == 0, made.stderr
    ws = tmp_path / "ws.duckdb"
    first = CliRunner().invoke(cli, ["profile", str(SAMPLE / "field"), "-w", str(ws)])
    assert first.exit_code == 0
    listing = (
        CliRunner().invoke(cli, ["paths", "-w", str(ws), "--kind", "full", "--top", "0", "--format", "csv"]).stdout
    )
    process = subprocess.Popen(
        [sys.executable, "-m", "gapfinder", "profile", str(demo / "field"), "-w", str(ws)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    time.sleep(2.0)  # well inside the profile of four million events (about 7 s on 2 cores)
    assert process.poll() is None, "profile finished before the kill: give it more events"
    process.send_signal(signal.SIGKILL)
    process.wait()
    after = CliRunner().invoke(cli, ["paths", "-w", str(ws), "--kind", "full", "--top", "0", "--format", "csv"])
    assert after.exit_code == 0, after.stderr
    assert after.stdout == listing


def test_a_second_writer_gets_one_clear_line(tmp_path: Path) -> None:
    ws = tmp_path / "ws.duckdb"
    assert CliRunner().invoke(cli, ["profile", str(SAMPLE / "field"), "-w", str(ws)]).exit_code == 0
    holder = subprocess.Popen(
        [
            sys.executable,
            "-c",
            f"import duckdb, time; c = duckdb.connect({str(ws)!r}); print('open', flush=True); time.sleep(30)",
        ],
        stdout=subprocess.PIPE,
        text=True,
    )
    try:
        assert holder.stdout is not None and holder.stdout.readline().strip() == "open"
        second = subprocess.run(
            [sys.executable, "-m", "gapfinder", "profile", str(SAMPLE / "field"), "-w", str(ws)],
            capture_output=True,
            text=True,
        )
    finally:
        holder.kill()
        holder.wait()
        if holder.stdout is not None:
            holder.stdout.close()
    assert second.returncode == 2, second.stderr
    assert len(second.stderr.strip().splitlines()) == 1
    assert "another gapfinder process is using this workspace" in second.stderr
