"""The one file writer: atomic, all or nothing, confined to its folder, errors as exit-2 errors."""

from __future__ import annotations

import errno
import os
from pathlib import Path

import pytest

from gapfinder.errors import ConfigError, InputError
from gapfinder.safe_io import read_text, write_files


def test_a_full_disk_changes_nothing_and_leaves_no_temporary(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "a.txt").write_text("old a")
    calls = {"n": 0}
    real_fsync = os.fsync

    def fsync_then_fill(fd: int) -> None:
        calls["n"] += 1
        if calls["n"] == 2:  # the second file hits a full disk
            raise OSError(errno.ENOSPC, "No space left on device")
        real_fsync(fd)

    monkeypatch.setattr(os, "fsync", fsync_then_fill)
    with pytest.raises(InputError, match="No space left on device"):
        write_files(tmp_path, {"a.txt": "new a", "b.txt": "new b"})
    assert (tmp_path / "a.txt").read_text() == "old a"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.txt"]


def test_a_planted_link_is_never_followed(tmp_path: Path) -> None:
    outside = tmp_path / "outside.txt"
    outside.write_text("keep")
    folder = tmp_path / "out"
    folder.mkdir()
    (folder / "report.html").symlink_to(outside)
    with pytest.raises(ConfigError, match="symbolic link"):
        write_files(folder, {"report.html": "x"})
    assert outside.read_text() == "keep"


def test_names_with_a_folder_part_are_refused(tmp_path: Path) -> None:
    for name in ("../escape.txt", "a/b.txt", "", ".."):
        with pytest.raises(ConfigError):
            write_files(tmp_path, {name: "x"})
    assert list(tmp_path.iterdir()) == []


def test_a_predictable_temporary_name_is_not_used(tmp_path: Path) -> None:
    outside = tmp_path / "victim"
    outside.write_text("keep")
    folder = tmp_path / "out"
    folder.mkdir()
    (folder / ".summary.md.tmp").symlink_to(outside)
    write_files(folder, {"summary.md": "fresh"})
    assert (folder / "summary.md").read_text() == "fresh" and outside.read_text() == "keep"


def test_reading_names_the_line_of_bad_bytes(tmp_path: Path) -> None:
    path = tmp_path / "x.yaml"
    path.write_bytes(b"a: 1\nb: \xff\n")
    with pytest.raises(InputError, match=r"x\.yaml:2: .*not UTF-8"):
        read_text(path, what="YAML file")
    with pytest.raises(ConfigError, match="--aliases"):
        read_text(tmp_path / "none.yaml", option="--aliases")
