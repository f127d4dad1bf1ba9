"""One exception tree for the whole package.

The library raises these; the command line turns each into one line on stderr and exit code 2.
Every message names the file, column, row or option at fault and what to do about it.
"""

from __future__ import annotations

import re

__all__ = ["ConfigError", "GapfinderError", "InputError", "QueryError", "describe_database_error"]


class GapfinderError(Exception):
    """Base class: a problem the user can fix, reported without a traceback."""


class InputError(GapfinderError):
    """Telemetry or test traces that cannot be read or lack what is needed."""


class ConfigError(GapfinderError):
    """An option, mapping or configuration file with a value gapfinder cannot use."""


class QueryError(GapfinderError):
    """A query under queries/ failed against the workspace (usually a stale or foreign file).

    ``reason`` is the database's complaint in words that carry no row content."""

    def __init__(self, message: str, *, reason: str | None = None) -> None:
        super().__init__(message)
        self.reason = reason or message


# Phrases of DuckDB's error messages that carry no row content, mapped to what gapfinder says.
_DATABASE_REASONS = (
    (re.compile(r"Expected Number of Columns: (\d+) Found: (\d+)"), "expected {0} columns, found {1}"),
    (re.compile(r"unterminated quote", re.I), "a quoted value is not closed"),
    (re.compile(r"Invalid unicode|not utf-8 encoded|invalid UTF-8", re.I), "the text is not valid UTF-8"),
    (re.compile(r"Malformed JSON", re.I), "malformed JSON"),
    (
        re.compile(r"in record/value (\d+): Expected ([A-Z]+), but got ([A-Z]+)"),
        "JSON value {0}: a field holds {2} where the format needs {1}",
    ),
    (re.compile(r"gzip|zlib|deflate|compressed", re.I), "the compressed file is cut short or damaged"),
    (re.compile(r"Could not convert|Conversion Error", re.I), "a value cannot be converted to the column's type"),
    (re.compile(r"Could not set lock|Conflicting lock", re.I), "another gapfinder process is using this workspace"),
    (re.compile(r"No space left on device", re.I), "the disk is full"),
    (re.compile(r"Permission denied", re.I), "permission denied"),
    (re.compile(r"Read-only file system", re.I), "the file system is read-only"),
    (re.compile(r"Out of Memory", re.I), "out of memory: pass --memory-limit to spill to disk"),
    (re.compile(r"not a valid DuckDB database|file is not a valid|Corrupt|truncated", re.I), "the file is damaged"),
    (re.compile(r"Catalog Error", re.I), "the workspace lacks a table or column this gapfinder expects"),
    (re.compile(r"Binder Error", re.I), "the data lacks a column or type the query expects"),
)
_DATABASE_LINE = re.compile(r"(?:on Line|in line|line):? (\d+)", re.I)
_DATABASE_FILE = re.compile(r'(?:file = |in file ")([^"\n]+)')


def describe_database_error(exc: BaseException) -> str:
    """One line about a DuckDB error that never repeats row content.

    DuckDB's messages quote the offending row (``Original Line: ...``) or value (``Could not
    convert string 'alice@example.com'``), which would print personal data. Only the file name,
    the line number and a reason from a fixed list are kept.

    >>> describe_database_error(Exception("Invalid Input Error: CSV Error on Line: 7\\nOriginal Line: a@b,1"))
    'line 7: the row cannot be read'
    """
    text = str(exc)
    reason = next((say.format(*m.groups()) for pattern, say in _DATABASE_REASONS if (m := pattern.search(text))), None)
    line = _DATABASE_LINE.search(text)
    file = _DATABASE_FILE.search(text)
    parts = []
    if file:
        parts.append(file.group(1).strip())
    if line:
        parts.append(f"line {line.group(1)}")
    where = ", ".join(parts)
    what = reason or ("the row cannot be read" if line else f"database error ({type(exc).__name__})")
    return f"{where}: {what}" if where else what
