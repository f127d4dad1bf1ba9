"""Helpers for tests: small telemetry files written on the fly."""

from __future__ import annotations

from collections.abc import Sequence
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq

T0 = datetime(2026, 3, 2, 9, 0, tzinfo=UTC)
SAMPLE = Path(__file__).resolve().parent.parent / "sample_telemetry"


def write_events(
    path: Path, rows: Sequence[tuple[Any, ...]], names: Sequence[str] = ("user_id", "ts", "event")
) -> Path:
    """Write rows (one tuple per event) as Parquet with the given column names."""
    columns = list(zip(*rows, strict=True)) if rows else [[] for _ in names]
    arrays = {}
    for name, values in zip(names, columns, strict=True):
        if values and isinstance(values[0], datetime):
            arrays[name] = pa.array(values, pa.timestamp("us", tz="UTC"))
        else:
            arrays[name] = pa.array(list(values))
    pq.write_table(pa.table(arrays), path)
    return path


def at(seconds: float) -> datetime:
    return T0 + timedelta(seconds=seconds)
