"""Which reader a telemetry path needs, and the DuckDB relation that reads it.

Readers are chosen by file extension, and JSON files by content too: a file that opens as an
OpenTelemetry export request (``{"resourceLogs": ...`` or ``{"resourceSpans": ...``) is OTLP. A
folder is searched recursively for files of one kind; hive-style folders
(``month=2026-01/part.parquet``) add their keys as columns.
"""

from __future__ import annotations

import glob
import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import duckdb

from gapfinder.errors import InputError, describe_database_error

__all__ = ["CONVERTED_FORMATS", "FORMATS", "SourceFiles", "open_relation", "resolve_files"]

# extension -> format name; compressed CSV/NDJSON are read by DuckDB directly.
FORMATS: dict[str, str] = {
    ".parquet": "parquet",
    ".pq": "parquet",
    ".csv": "csv",
    ".csv.gz": "csv",
    ".tsv": "tsv",
    ".tsv.gz": "tsv",
    ".ndjson": "ndjson",
    ".jsonl": "ndjson",
    ".json": "ndjson",
    ".ndjson.gz": "ndjson",
    ".jsonl.gz": "ndjson",
    ".json.gz": "ndjson",
    ".xes": "xes",
    ".xes.gz": "xes",
}
# Formats read once into a Parquet file in a scratch folder before the passes over the events.
CONVERTED_FORMATS = ("otlp-logs", "otlp-traces", "xes")
_FILE_KINDS = ".parquet, .csv, .tsv, .ndjson, .jsonl, .json (OTLP too) or .xes"


@dataclass(frozen=True)
class SourceFiles:
    """The files behind one telemetry input, all of one format."""

    format: str
    files: tuple[str, ...]
    label: str


def _format_of(path: str) -> str | None:
    name = path.lower()
    for ext in sorted(FORMATS, key=len, reverse=True):
        if name.endswith(ext):
            return FORMATS[ext]
    return None


def _content_format(path: str) -> str | None:
    """The format of a file: by extension, and for JSON by whether it opens as an OTLP request."""
    kind = _format_of(path)
    if kind == "ndjson":
        from gapfinder.sources.otlp import sniff_otlp_kind

        return sniff_otlp_kind(path) or kind
    return kind


def resolve_files(inputs: Sequence[str | os.PathLike[str]]) -> SourceFiles:
    """Expand files, folders and globs into one sorted list of readable files of one format."""
    if not inputs:
        raise InputError("no telemetry given: pass a file, folder or glob of events")
    found: list[str] = []
    for raw in inputs:
        item = os.fspath(raw)
        if any(ch in item for ch in "*?["):
            matches = sorted(glob.glob(item, recursive=True))
            if not matches:
                raise InputError(f"{item}: the pattern matches no file")
            found.extend(m for m in matches if Path(m).is_file())
        elif Path(item).is_dir():
            inside = sorted(str(p) for p in Path(item).rglob("*") if p.is_file() and _format_of(str(p)))
            if not inside:
                raise InputError(f"{item}: the folder holds no {_FILE_KINDS} file")
            found.extend(inside)
        elif Path(item).is_file():
            found.append(item)
        else:
            raise InputError(f"{item}: no such file or folder")
    kinds: dict[str, str] = {}
    for f in found:
        if _format_of(f) is None:
            raise InputError(f"{f}: unknown file type; use {_FILE_KINDS} (optionally .gz)")
        if not os.access(f, os.R_OK):
            raise InputError(f"{f}: the file cannot be read (permission denied)")
        kind = _content_format(f)
        assert kind is not None
        kinds.setdefault(kind, f)
    if len(kinds) > 1:
        listed = ", ".join(f"{k} ({v})" for k, v in kinds.items())
        raise InputError(f"telemetry mixes formats ({listed}): give files of one format per run")
    label = ", ".join(os.fspath(i) for i in inputs)
    return SourceFiles(format=next(iter(kinds)), files=tuple(found), label=label)


def open_relation(
    con: duckdb.DuckDBPyConnection, source: SourceFiles, *, text_columns: Sequence[str] = ()
) -> duckdb.DuckDBPyRelation:
    """A lazy DuckDB relation over every file of the source, columns united by name.

    ``text_columns`` of a CSV/TSV source are read as text rather than as the type DuckDB's
    sniffer would infer (so that ``--ts-format`` sees the characters of the file)."""
    files = list(source.files)
    try:
        if source.format == "parquet":
            return con.read_parquet(files, hive_partitioning=True, union_by_name=True)
        if source.format in ("csv", "tsv"):
            for f in files:
                if os.path.getsize(f) == 0:
                    raise InputError(f"{f}: the file is empty; it needs a header row and events")
            delimiter = "\t" if source.format == "tsv" else ","
            if text_columns:
                return con.read_csv(
                    files,
                    header=True,
                    sep=delimiter,
                    union_by_name=True,
                    dtype={c: "VARCHAR" for c in text_columns},
                )
            return con.read_csv(files, header=True, sep=delimiter, union_by_name=True)
        for f in files:
            if os.path.getsize(f) == 0:
                raise InputError(f"{f}: the file is empty; it needs one JSON object per line")
        # "auto": one object per line, or a document holding an array of objects (a .json export).
        return con.read_json(files, format="auto", union_by_name=True)
    except duckdb.Error as exc:
        raise InputError(
            f"{source.label}: cannot be read as {source.format} ({describe_database_error(exc)})"
        ) from None
