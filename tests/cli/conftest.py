"""Fixtures for the CLI tests."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest


@pytest.fixture
def ws(tmp_path: Path, sample_workspace: Path) -> str:
    """A private copy of the profiled sample workspace."""
    target = tmp_path / "w.duckdb"
    shutil.copy(sample_workspace, target)
    return str(target)
