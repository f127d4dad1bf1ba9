"""The wheel ships every queries/*.sql file, and every query file is documented."""

from __future__ import annotations

import re
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
QUERIES = sorted((ROOT / "queries").glob("*.sql")) + sorted((ROOT / "queries" / "spark").glob("*.sql"))


def _query_name(query: Path) -> str:
    """The name the code loads a query by: ``name`` or ``spark/name``."""
    return query.relative_to(ROOT / "queries").with_suffix("").as_posix()


def test_wheel_contains_every_query(tmp_path: Path) -> None:
    pytest.importorskip("hatchling")
    subprocess.run(
        [sys.executable, "-m", "hatchling", "build", "-t", "wheel", "-d", str(tmp_path)],
        cwd=ROOT,
        check=True,
        capture_output=True,
    )
    (wheel,) = tmp_path.glob("*.whl")
    names = set(zipfile.ZipFile(wheel).namelist())
    missing = [q.name for q in QUERIES if f"gapfinder/queries/{_query_name(q)}.sql" not in names]
    assert not missing and QUERIES


@pytest.mark.parametrize("query", QUERIES, ids=_query_name)
def test_query_file_opens_with_purpose_and_parameters(query: Path) -> None:
    text = query.read_text()
    header = "".join(line for line in text.splitlines(keepends=True) if line.startswith("--"))
    assert text.startswith("-- "), "open with a comment saying what the query returns"
    assert "Parameters" in header
    marker = ":" if query.parent.name == "spark" else "$"  # Spark SQL binds :name, DuckDB $name
    for name in set(re.findall(r"(?<![:\w])" + re.escape(marker) + r"([a-z_]+)", text)):
        assert f"{marker}{name}" in header, f"{marker}{name} is bound but not named in the header"
    body = "\n".join(line for line in text.splitlines() if not line.startswith("--"))
    assert body.count(";") == 1, "one statement per file"


def test_every_query_is_used() -> None:
    source = "".join(p.read_text() for p in (ROOT / "gapfinder").rglob("*.py"))
    unused = [_query_name(q) for q in QUERIES if f'"{_query_name(q)}"' not in source]
    assert not unused


def test_every_public_name_resolves_and_import_stays_light() -> None:
    import gapfinder

    for name in gapfinder.__all__:
        assert getattr(gapfinder, name) is not None, name
    quick = subprocess.run(
        [sys.executable, "-c", "import sys, gapfinder; print('numba' in sys.modules)"],
        capture_output=True,
        text=True,
        check=True,
    )
    assert quick.stdout.strip() == "False"  # the compiled miner loads only when something mines
