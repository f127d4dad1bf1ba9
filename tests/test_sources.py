"""Reading: formats, folders and hive partitions, timestamp kinds, column mapping from TOML."""

from __future__ import annotations

import json
from pathlib import Path

import duckdb
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from gapfinder.errors import ConfigError, InputError
from gapfinder.sources import load_config_columns, open_telemetry, parse_map_options
from gapfinder.workspace import connect_memory

EXPECTED = "2026-01-01 10:00:00+00"


def first_ts(con: duckdb.DuckDBPyConnection) -> str:
    row = con.execute("SELECT min(ts)::VARCHAR FROM mapped_source").fetchone()
    assert row is not None
    return str(row[0])


@pytest.mark.parametrize(
    ("values", "arrow_type", "kind", "unit"),
    [
        ([1767261600], pa.int64(), "epoch", "s"),
        ([1767261600000], pa.int64(), "epoch", "ms"),
        ([1767261600000000], pa.int64(), "epoch", "us"),
        ([1767261600000000000], pa.int64(), "epoch", "ns"),
        (["2026-01-01T10:00:00Z"], pa.string(), "text", None),
        (["2026-01-01T12:00:00+02:00"], pa.string(), "text", None),
        (["2026-01-01 10:00:00"], pa.string(), "text", None),
    ],
)
def test_timestamp_kinds(tmp_path: Path, values: list, arrow_type: pa.DataType, kind: str, unit: str | None) -> None:
    path = tmp_path / "e.parquet"
    pq.write_table(pa.table({"user_id": ["u"], "ts": pa.array(values, arrow_type), "event": ["a"]}), path)
    con = connect_memory()
    opened = open_telemetry(con, [path])
    assert opened.timestamp.kind == kind and opened.timestamp.unit == unit
    assert first_ts(con) == EXPECTED


def test_naive_timestamp_column_is_taken_as_utc(tmp_path: Path) -> None:
    path = tmp_path / "e.parquet"
    pq.write_table(
        pa.table({"user_id": ["u"], "ts": pa.array([1767261600000000], pa.timestamp("us")), "event": ["a"]}), path
    )
    con = connect_memory()
    assert open_telemetry(con, [path]).timestamp.kind == "timestamp"
    assert first_ts(con) == EXPECTED


def test_explicit_unit_overrides_detection(tmp_path: Path) -> None:
    path = tmp_path / "e.parquet"
    pq.write_table(pa.table({"user_id": ["u"], "ts": [1767261600000], "event": ["a"]}), path)
    con = connect_memory()
    assert open_telemetry(con, [path], ts_unit="ms").timestamp.unit_detected is False
    assert first_ts(con) == EXPECTED


@pytest.mark.parametrize("fmt", ["csv", "tsv", "ndjson"])
def test_text_formats(tmp_path: Path, fmt: str) -> None:
    rows = [("u1", "2026-01-01T10:00:00Z", "a"), ("u2", "2026-01-01T10:00:01Z", "b")]
    path = tmp_path / f"e.{fmt}"
    if fmt == "ndjson":
        path.write_text("".join(json.dumps(dict(zip(["user_id", "ts", "event"], r, strict=True))) + "\n" for r in rows))
    else:
        sep = "\t" if fmt == "tsv" else ","
        path.write_text(f"user_id{sep}ts{sep}event\n" + "".join(sep.join(r) + "\n" for r in rows))
    con = connect_memory()
    open_telemetry(con, [path])
    assert con.execute("SELECT count(*) FROM mapped_source").fetchone() == (2,)
    assert first_ts(con) == EXPECTED


def test_hive_partitioned_folder_and_glob(tmp_path: Path) -> None:
    for month in ("2026-01", "2026-02"):
        folder = tmp_path / "field" / f"month={month}"
        folder.mkdir(parents=True)
        pq.write_table(
            pa.table({"user_id": ["u"], "ts": ["2026-01-01T10:00:00Z"], "event": ["a"]}), folder / "p.parquet"
        )
    con = connect_memory()
    opened = open_telemetry(con, [tmp_path / "field"])
    assert opened.file_count == 2 and "month" in opened.source_columns
    opened = open_telemetry(con, [str(tmp_path / "field" / "*" / "*.parquet")])
    assert opened.file_count == 2


def test_mixed_formats_are_refused(tmp_path: Path) -> None:
    (tmp_path / "a.csv").write_text("user_id,ts,event\n")
    (tmp_path / "b.ndjson").write_text("{}\n")
    with pytest.raises(InputError, match="mixes formats"):
        open_telemetry(connect_memory(), [tmp_path / "a.csv", tmp_path / "b.ndjson"])


def test_map_options_and_toml(tmp_path: Path) -> None:
    assert parse_map_options(["user_id = member"]) == {"user_id": "member"}
    with pytest.raises(ConfigError):
        parse_map_options(["user_id=a", "user_id=b"])
    config = tmp_path / "gapfinder.toml"
    config.write_text('[columns]\nuser_id = "member"\nts = "occurred_at"\n')
    assert load_config_columns(config) == {"user_id": "member", "ts": "occurred_at"}
    config.write_text('[columns]\nwho = "member"\n')
    with pytest.raises(ConfigError, match="who"):
        load_config_columns(config)


def test_json_array_document_reads_like_ndjson(tmp_path: Path) -> None:
    rows = [
        {"user_id": "u", "ts": "2026-01-01T10:00:00Z", "event": "a"},
        {"user_id": "u", "ts": 1767261660, "event": "b"},
    ]
    array = tmp_path / "export.json"
    array.write_text(json.dumps(rows[:1]))
    con = connect_memory()
    open_telemetry(con, [array])
    assert first_ts(con) == EXPECTED
