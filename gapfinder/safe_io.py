"""The one way gapfinder writes a file: confined to its folder, atomic, and all or nothing.

Every output (exported skeletons, reports, the run summary, alias files, the pytest plugin's
trace) goes through :func:`write_files`:

- each target is checked before anything is written: its name must be a plain file name, it
  must not be a symbolic link, and it must resolve inside the folder given;
- each file is first written to a temporary file created with ``O_EXCL`` (``mkstemp``) in the
  same folder, so a planted file or link at a predictable temporary name is never followed;
- the temporaries are flushed to disk, then each is renamed over its target (``os.replace``,
  atomic on POSIX); if anything fails before the renames, every temporary is removed and no
  target changes;
- errors of the file system (full disk, read-only folder, permission denied) become an
  :class:`~gapfinder.errors.InputError` naming the file and the reason: exit code 2.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Mapping
from pathlib import Path

from gapfinder.errors import ConfigError, InputError

__all__ = ["check_target", "write_files", "write_text"]


def _reason(exc: OSError) -> str:
    return exc.strerror or type(exc).__name__


def check_target(folder: Path, name: str, *, option: str) -> Path:
    """The path of ``name`` inside ``folder``, refusing names with a folder part, links and
    anything that would resolve outside the folder."""
    if not name or name in (".", "..") or "/" in name or "\\" in name or "\x00" in name:
        raise ConfigError(f"{option}: refusing to write {name!r}: not a plain file name")
    root = folder.resolve()
    target = root / name
    if target.is_symlink():
        raise ConfigError(f"{option}: refusing to write {target}: it is a symbolic link; remove it first")
    if target.resolve().parent != root:
        raise ConfigError(f"{option}: refusing to write {name!r}: it would leave {root}")
    if target.exists() and not target.is_file():
        raise ConfigError(f"{option}: {target} exists and is not a file")
    return target


def write_files(
    folder: str | os.PathLike[str],
    files: Mapping[str, str | bytes],
    *,
    option: str = "--to",
    create: bool = True,
) -> list[Path]:
    """Write every ``name → content`` into ``folder`` atomically; none is replaced unless all
    could be written. Returns the targets in the order given."""
    base = Path(folder)
    if base.exists() and not base.is_dir():
        raise ConfigError(f"{option} {base}: exists and is not a folder")
    if not base.exists():
        if not create:
            raise ConfigError(f"{option} {base}: the folder does not exist; create it first")
        try:
            base.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise InputError(f"{option} {base}: cannot create the folder ({_reason(exc)})") from None
    targets = [(check_target(base, name, option=option), content) for name, content in files.items()]
    temporaries: list[tuple[str, Path]] = []
    try:
        for target, content in targets:
            # a lone surrogate from a hostile name is written as its escape, keeping the file UTF-8
            data = content.encode("utf-8", "backslashreplace") if isinstance(content, str) else content
            fd, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
            temporaries.append((temporary, target))
            with os.fdopen(fd, "wb") as handle:
                handle.write(data)
                handle.flush()
                os.fsync(handle.fileno())
            if target.exists():
                with contextlib.suppress(OSError):
                    os.chmod(temporary, target.stat().st_mode & 0o777)
            else:
                umask = os.umask(0)
                os.umask(umask)
                os.chmod(temporary, 0o666 & ~umask)
    except OSError as exc:
        for temporary, _ in temporaries:
            with contextlib.suppress(OSError):
                os.unlink(temporary)
        where = exc.filename or (temporaries[-1][1] if temporaries else base)
        raise InputError(f"{option}: cannot write {where} ({_reason(exc)}); nothing was changed") from None
    done = 0
    try:
        for temporary, target in temporaries:
            os.replace(temporary, target)
            done += 1
    except OSError as exc:  # pragma: no cover - a rename in one folder fails only if the folder vanished
        for temporary, _ in temporaries[done:]:
            with contextlib.suppress(OSError):
                os.unlink(temporary)
        raise InputError(f"{option}: cannot write {temporaries[done][1]} ({_reason(exc)})") from None
    return [target for target, _ in targets]


def write_text(path: str | os.PathLike[str], text: str, *, option: str) -> Path:
    """Write one text file atomically, confined to its folder (which must exist)."""
    target = Path(path)
    return write_files(
        target.parent if str(target.parent) else Path("."), {target.name: text}, option=option, create=False
    )[0]


def read_text(path: str | os.PathLike[str], *, what: str = "file", option: str | None = None) -> str:
    """The UTF-8 text of an input file (a byte-order mark is dropped); a file that is missing,
    unreadable or not UTF-8 is an error naming it (and ``option``, which makes it a ConfigError)
    and, for bad bytes, the line and byte where decoding failed."""
    target = Path(path)
    error: type[Exception] = ConfigError if option else InputError
    where = f"{option} {target}" if option else str(target)
    try:
        data = target.read_bytes()
    except FileNotFoundError:
        raise error(f"{where}: no such file") from None
    except IsADirectoryError:
        raise error(f"{where}: is a folder, not a {what}") from None
    except OSError as exc:
        raise error(f"{where}: the {what} cannot be read ({_reason(exc)})") from None
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise error(f"{where}:{line}: the {what} is not UTF-8 text (byte {exc.start}); save it as UTF-8") from None
