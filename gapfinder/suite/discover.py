"""Which files of a test repository are test sources, and of which kind.

A folder from a real repository holds much besides test sources: fixture ``.json`` and ``.yml``
files, snapshots, build output. A file is taken by what it holds, not only by its extension:

- ``.feature``: Gherkin;
- ``.xml``: JUnit XML when its root element is ``<testsuites>`` or ``<testsuite>``;
- ``.json``/``.ndjson``/``.jsonl``: OTLP/JSON traces (``resourceSpans``), a Cucumber JSON report
  (a list of features with ``elements``), Cucumber Messages (one envelope per line), the pytest
  plugin's run file (``gapfinder_run``) or a trace table (objects with a test id and an event);
- ``.yaml``/``.yml``: a catalog when it has a top-level ``tests:`` key; ``gapfinder_steps.yaml``
  with a ``steps:`` key is a steps map for the Gherkin files in its folder and below;
- ``.csv``/``.tsv``/``.parquet``: a trace table when it has a test id and an event column.

Inside a folder, hidden files and folders and dependency or fixture folders (``fixtures``,
``node_modules``, ``__pycache__``, virtual environments) are not looked at, and other files are
counted as ignored. A file named on the command line is read as what it looks like, and a table
(``.csv``, ``.parquet``, ``.json``…) that looks like nothing else as a trace table, so that an
error can name the column it lacks.
"""

from __future__ import annotations

import glob
import json
import os
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from gapfinder.errors import InputError

__all__ = ["STEPS_MAP_NAME", "SuiteFile", "discover_suite_files", "sniff_kind"]

SKIPPED_FOLDERS = frozenset(
    {"fixtures", "fixture", "__fixtures__", "node_modules", "__pycache__", "venv", "site-packages", "__snapshots__"}
)
_HEAD_BYTES = 65536
# A steps map beside .feature files (as `gapfinder export --as gherkin` writes one) applies to the
# features in its folder and below.
STEPS_MAP_NAME = "gapfinder_steps.yaml"
_FIRST_TAG = re.compile(rb"<\s*([A-Za-z_][\w.:-]*)")
_MARKUP_PREFIX = re.compile(rb"\A\s*(?:<\?.*?\?>\s*|<!--.*?-->\s*|<!DOCTYPE[^>]*?(?:\[.*?\])?\s*>\s*)*", re.S)
_NAMED_FALLBACK = {
    ".csv": "trace-csv",
    ".tsv": "trace-tsv",
    ".parquet": "trace-parquet",
    ".pq": "trace-parquet",
    ".ndjson": "trace-ndjson",
    ".jsonl": "trace-ndjson",
    ".json": "trace-ndjson",
}
_MESSAGE_KEYS = frozenset(
    {"meta", "source", "gherkinDocument", "pickle", "stepDefinition", "testRunStarted", "testCase", "testCaseStarted"}
)


@dataclass(frozen=True)
class SuiteFile:
    """One test source: its path, the reader it needs, and the name its tests carry (relative to the folder given)."""

    path: Path
    kind: str  # gherkin, junit, otlp, cucumber-json/-messages, plugin-run, catalog, trace-parquet/csv/tsv/ndjson
    label: str


def _head(path: Path) -> bytes:
    with open(path, "rb") as handle:
        return handle.read(_HEAD_BYTES)


def _first_json_line(head: bytes) -> object:
    for line in head.splitlines():
        if line.strip():
            try:
                return json.loads(line)
            except (json.JSONDecodeError, UnicodeDecodeError):
                return None
    return None


def sniff_kind(path: Path, test_columns: tuple[str, str] = ("test_id", "event")) -> str | None:
    """The reader ``path`` needs, decided from its extension and first bytes; None when it is no test source."""
    name = path.name.lower()
    suffix = path.suffix.lower()
    if suffix == ".feature":
        return "gherkin"
    try:
        head = _head(path)
    except OSError:
        return None
    wanted = {c.lower() for c in test_columns}
    if suffix == ".xml":
        rest = _MARKUP_PREFIX.sub(b"", head.lstrip(b"\xef\xbb\xbf"), count=1)
        match = _FIRST_TAG.match(rest.lstrip())
        return "junit" if match and match.group(1).split(b":")[-1] in (b"testsuites", b"testsuite") else None
    if suffix in (".json", ".ndjson", ".jsonl"):
        text = head.lstrip(b"\xef\xbb\xbf").lstrip()
        if b'"resourceSpans"' in head:
            return "otlp"
        if text.startswith(b"[") and b'"elements"' in head:
            return "cucumber-json"
        first = _first_json_line(text)
        if isinstance(first, dict):
            if _MESSAGE_KEYS & first.keys():
                return "cucumber-messages"
            if "gapfinder_run" in first:
                return "plugin-run"
            if wanted <= {k.lower() for k in first}:
                return "trace-ndjson"
        return None
    if suffix in (".yaml", ".yml"):
        if name == STEPS_MAP_NAME and re.search(rb"(?m)^steps\s*:", head):
            return "steps-map"
        return "catalog" if re.search(rb"(?m)^tests\s*:", head) else None
    if suffix in (".csv", ".tsv"):
        first_line = head.split(b"\n", 1)[0].decode("utf-8", errors="replace").lstrip("\ufeff")
        columns = {c.strip().strip('"').lower() for c in first_line.split("\t" if suffix == ".tsv" else ",")}
        return f"trace-{suffix[1:]}" if wanted <= columns else None
    if suffix in (".parquet", ".pq") or name.endswith(".parquet"):
        import pyarrow.parquet as pq

        try:
            columns = {c.lower() for c in pq.read_schema(path).names}
        except Exception:  # a file that is no Parquet is no test source
            return None
        return "trace-parquet" if wanted <= columns else None
    return None


def _walk(folder: Path) -> list[Path]:
    found: list[Path] = []
    for root, dirs, files in os.walk(folder):
        dirs[:] = sorted(d for d in dirs if not d.startswith(".") and d.lower() not in SKIPPED_FOLDERS)
        found.extend(Path(root) / f for f in sorted(files) if not f.startswith("."))
    return found


def discover_suite_files(
    inputs: Sequence[str | os.PathLike[str]], test_columns: tuple[str, str] = ("test_id", "event")
) -> tuple[list[SuiteFile], list[str], int]:
    """(test sources, problems with named files, count of other files ignored in folders)."""
    chosen: list[SuiteFile] = []
    problems: list[str] = []
    ignored = 0
    seen: set[Path] = set()

    def take(path: Path, label: str, *, named: bool) -> None:
        nonlocal ignored
        resolved = path.resolve()
        if resolved in seen:
            return
        seen.add(resolved)
        kind = sniff_kind(path, test_columns)
        if kind is None and named:
            kind = _NAMED_FALLBACK.get(path.suffix.lower())  # read as a trace table, to say which column is missing
        if kind is None:
            if named:
                problems.append(
                    f"{path}: not a test source gapfinder recognises (Gherkin .feature, JUnit XML, OTLP/JSON, "
                    "Cucumber JSON or Messages, a catalog with `tests:`, or a trace table with test_id and event)"
                )
            else:
                ignored += 1
            return
        if not os.access(path, os.R_OK):
            problems.append(f"{path}: the file cannot be read (permission denied)")
            return
        chosen.append(SuiteFile(path, kind, label))

    for raw in inputs:
        item = os.fspath(raw)
        if any(ch in item for ch in "*?["):
            matches = [Path(m) for m in sorted(glob.glob(item, recursive=True)) if Path(m).is_file()]
            if not matches:
                raise InputError(f"{item}: the pattern matches no file")
            for match in matches:
                take(match, match.as_posix(), named=False)
        elif Path(item).is_dir():
            base = Path(item)
            for path in _walk(base):
                take(path, path.relative_to(base).as_posix(), named=False)
        elif Path(item).is_file():
            take(Path(item), Path(item).as_posix(), named=True)
        else:
            raise InputError(f"{item}: no such file or folder")
    return chosen, problems, ignored
