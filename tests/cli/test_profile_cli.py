"""The profile and demo commands through click's CliRunner: output and every error path."""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest
from click.testing import CliRunner

from gapfinder.cli import cli
from tests.helpers import SAMPLE, at, write_events


def invoke(*args: str) -> object:
    return CliRunner().invoke(cli, list(args))


def assert_one_line_error(result: object, *needles: str) -> None:
    assert result.exit_code == 2, result.output  # type: ignore[attr-defined]
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]  # type: ignore[attr-defined]
    assert len(lines) == 1, result.stderr  # type: ignore[attr-defined]
    assert "Traceback" not in result.output  # type: ignore[attr-defined]
    for needle in needles:
        assert needle in lines[0]


def test_profile_sample_json(tmp_path: Path) -> None:
    result = invoke("profile", str(SAMPLE / "field"), "-w", str(tmp_path / "w.duckdb"), "--format", "json")
    assert result.exit_code == 0, result.output
    summary = json.loads(result.stdout)
    assert summary["sessions"]["count"] > 10_000
    assert summary["automated"]["users"] == 1
    assert all(isinstance(r["path"], list) for r in summary["transitions"]["top"])


def test_profile_table_and_csv(tmp_path: Path, shop_events: Path) -> None:
    table = invoke("profile", str(shop_events), "-w", str(tmp_path / "a.duckdb"), "--min-users", "1")
    assert table.exit_code == 0 and "Most taken transitions" in table.stdout
    as_csv = invoke("profile", str(shop_events), "-w", str(tmp_path / "b.duckdb"), "--format", "csv")
    assert as_csv.exit_code == 0 and as_csv.stdout.startswith("key,value\n")


def test_profile_with_other_column_names(tmp_path: Path) -> None:
    rows = [(f"p{u}", at(u * 9000 + 20 * i), e) for u in range(8) for i, e in enumerate(["a", "b", "c"])]
    path = write_events(tmp_path / "x.parquet", rows, ("member", "occurred_at", "action"))
    result = invoke(
        "profile",
        str(path),
        "-w",
        str(tmp_path / "w.duckdb"),
        "--map",
        "user_id=member",
        "--map",
        "ts=occurred_at",
        "--map",
        "event=action",
        "--format",
        "json",
    )
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["sessions"]["count"] == 8


def test_missing_column_names_it_and_the_columns(tmp_path: Path) -> None:
    path = write_events(tmp_path / "x.parquet", [("p", at(0), "a")], ("member", "ts", "event"))
    result = invoke("profile", str(path), "-w", str(tmp_path / "w.duckdb"))
    assert_one_line_error(result, "user_id", "member, ts, event")
    assert not (tmp_path / "w.duckdb").exists()  # nothing half-written


def test_bad_map_syntax(shop_events: Path, tmp_path: Path) -> None:
    assert_one_line_error(
        invoke("profile", str(shop_events), "-w", str(tmp_path / "w.duckdb"), "--map", "user_id:who"),
        "canonical=source",
    )


def test_unknown_canonical_name(shop_events: Path, tmp_path: Path) -> None:
    assert_one_line_error(
        invoke("profile", str(shop_events), "-w", str(tmp_path / "w.duckdb"), "--map", "person=who"), "person"
    )


def test_missing_file(tmp_path: Path) -> None:
    assert_one_line_error(
        invoke("profile", str(tmp_path / "nope.parquet"), "-w", str(tmp_path / "w.duckdb")), "nope.parquet"
    )


def test_empty_file(tmp_path: Path) -> None:
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    assert_one_line_error(invoke("profile", str(empty), "-w", str(tmp_path / "w.duckdb")), "empty.csv", "empty")


def test_header_only_file(tmp_path: Path) -> None:
    only = tmp_path / "only.csv"
    only.write_text("user_id,ts,event\n")
    assert_one_line_error(invoke("profile", str(only), "-w", str(tmp_path / "w.duckdb")), "only.csv")


def test_corrupt_parquet(tmp_path: Path) -> None:
    bad = tmp_path / "bad.parquet"
    bad.write_bytes(b"this is not parquet at all")
    assert_one_line_error(invoke("profile", str(bad), "-w", str(tmp_path / "w.duckdb")), "bad.parquet")


@pytest.mark.skipif(os.geteuid() == 0, reason="root can read files without read permission")
def test_unreadable_file(tmp_path: Path, shop_events: Path) -> None:
    shop_events.chmod(0)
    assert_one_line_error(invoke("profile", str(shop_events), "-w", str(tmp_path / "w.duckdb")), "cannot be read")


def test_unreadable_file_as_folder(tmp_path: Path) -> None:
    folder = tmp_path / "events.parquet"
    folder.mkdir()
    assert_one_line_error(invoke("profile", str(folder), "-w", str(tmp_path / "w.duckdb")), "events.parquet")


def test_rejected_rows_are_counted_per_reason(tmp_path: Path) -> None:
    csv_file = tmp_path / "e.csv"
    csv_file.write_text(
        "user_id,ts,event\nu1,2026-01-01T10:00:00Z,a\nu1,,b\nu1,yesterday,c\n,2026-01-01T10:00:05Z,d\n"
        "u1,2026-01-01T10:00:09,\n"
    )
    result = invoke("profile", str(csv_file), "-w", str(tmp_path / "w.duckdb"), "--format", "json", "--min-users", "1")
    assert result.exit_code == 0, result.output
    reading = json.loads(result.stdout)["reading"]
    assert reading["rejected"] == {
        "missing timestamp": 1,
        "unparsable timestamp": 1,
        "missing user id": 1,
        "missing event": 1,
    }
    assert reading["rows_read"] == 5


def test_demo_command_writes_files(tmp_path: Path) -> None:
    result = invoke("demo", "--out", str(tmp_path / "d"), "--events", "5000", "--seed", "3")
    assert result.exit_code == 0, result.output
    assert (tmp_path / "d" / "manifest.json").exists()
    again = invoke("demo", "--out", str(tmp_path / "d"), "--events", "5000")
    assert_one_line_error(again, "already holds")


def test_profile_reads_the_committed_otlp_logs_like_the_parquet(tmp_path: Path) -> None:
    otel = invoke("profile", str(SAMPLE / "otlp"), "-w", str(tmp_path / "o.duckdb"), "--format", "json")
    assert otel.exit_code == 0, otel.output
    summary = json.loads(otel.stdout)
    assert summary["reading"]["format"] == "otlp-logs"
    assert summary["reading"]["notes"] == ["OTLP log records: 10,688; users from user.id (10,688)"]
    january = tmp_path / "january.parquet"
    import duckdb

    duckdb.connect().execute(
        "COPY (SELECT * FROM read_parquet($f, hive_partitioning = true) WHERE month = '2026-01') TO $p",
        {"f": [str(p) for p in (SAMPLE / "field").rglob("*.parquet")], "p": str(january)},
    )
    plain = json.loads(invoke("profile", str(january), "-w", str(tmp_path / "p.duckdb"), "--format", "json").stdout)
    for key in ("count", "users", "events", "with_errors"):
        assert summary["sessions"][key] == plain["sessions"][key]
    assert summary["transitions"]["top"] == plain["transitions"]["top"]


def test_profile_export_with_feature_template_and_config(tmp_path: Path) -> None:
    args = ["profile", str(SAMPLE / "export"), "--format", "json", "--map", "event=event_name"]
    by_option = invoke(*args, "-w", str(tmp_path / "a.duckdb"), "--feature", "{event}:{properties.screen}")
    assert by_option.exit_code == 0, by_option.output
    summary = json.loads(by_option.stdout)
    features = {r["event"] for r in summary["features"]["top"]}
    assert "screen_view:search_catalogue" in features and any(f.startswith("/tools/{n}/") for f in features)
    keys = summary["reading"]["feature_keys"]
    assert keys["raw_names"] > keys["names"] == summary["features"]["count"]
    config = tmp_path / "gapfinder.toml"
    config.write_text('[features]\ntemplate = "{event}:{properties.screen}"\n')
    by_config = invoke(*args, "-w", str(tmp_path / "b.duckdb"), "--config", str(config))
    assert json.loads(by_config.stdout)["features"] == summary["features"]
    kept = invoke(*args, "-w", str(tmp_path / "c.duckdb"), "--keep-ids", "--feature", "{event}")
    assert json.loads(kept.stdout)["features"]["count"] > 1000  # the tool numbers stay in the names


def test_profile_table_states_what_the_rules_did(tmp_path: Path) -> None:
    result = invoke(
        "profile",
        str(SAMPLE / "export"),
        "-w",
        str(tmp_path / "t.duckdb"),
        "--map",
        "event=event_name",
        "--rewrite",
        "^/tools/[0-9]+/=>/tools/{id}/",
    )
    assert result.exit_code == 0, result.output
    assert "--rewrite ^/tools/[0-9]+/=>/tools/{id}/:" in result.stdout and "fewer" in result.stdout


@pytest.mark.parametrize(("kind", "pattern"), [("otlp", "logs-*.jsonl.gz"), ("export", "events-*.parquet")])
def test_demo_writes_other_shapes(tmp_path: Path, kind: str, pattern: str) -> None:
    result = invoke("demo", "--out", str(tmp_path / "d"), "--events", "2000", "--as", kind)
    assert result.exit_code == 0, result.output
    written = sorted((tmp_path / "d" / "field").glob(pattern))
    assert len(written) == 6 and not list((tmp_path / "d" / "field").glob("month=*"))
