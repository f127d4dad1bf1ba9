"""A test catalog: the simplest way to tell gapfinder what the tests do.

A YAML file with a top-level key ``tests`` holding a list of ``{id: ..., steps: [event, ...]}``::

    tests:
      - id: test_browse_catalogue
        steps: [login, search_catalogue, view_tool]
"""

from __future__ import annotations

from pathlib import Path

import yaml

from gapfinder.errors import InputError
from gapfinder.safe_io import read_text
from gapfinder.suite.model import ReaderReport, TestTrace

__all__ = ["read_catalog"]


def read_catalog(path: str | Path) -> ReaderReport:
    """Read a catalog file; every malformed entry is an error naming the file and the entry."""
    where = str(path)
    try:
        data = yaml.safe_load(read_text(path, what="test catalog"))
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f" at line {mark.line + 1}" if mark is not None else ""
        raise InputError(f"{where}: not valid YAML{line}; a catalog is `tests:` with a list of id/steps") from None
    if not isinstance(data, dict) or not isinstance(data.get("tests"), list):
        raise InputError(f"{where}: a catalog needs a top-level `tests:` holding a list of {{id, steps}} entries")
    report = ReaderReport()
    seen: set[str] = set()
    for n, entry in enumerate(data["tests"], start=1):
        if not isinstance(entry, dict) or "id" not in entry or "steps" not in entry:
            raise InputError(f"{where}: test entry {n} needs `id` and `steps`")
        test_id = str(entry["id"]).strip()
        steps = entry["steps"]
        if not test_id:
            raise InputError(f"{where}: test entry {n} has an empty id")
        if not isinstance(steps, list) or not all(isinstance(s, str | int) and str(s).strip() for s in steps):
            raise InputError(f"{where}: test {test_id!r} (entry {n}): `steps` must be a list of event names")
        if test_id in seen:
            raise InputError(f"{where}: test id {test_id!r} appears twice; give each test one entry")
        seen.add(test_id)
        report.traces.append(TestTrace(test_id, [str(s).strip() for s in steps], where, "catalog"))
    if not report.traces:
        raise InputError(f"{where}: the catalog lists no tests")
    return report
