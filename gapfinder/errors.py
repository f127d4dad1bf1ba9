"""One exception tree for the whole package.

The library raises these; the command line turns each into one line on stderr and exit code 2.
Every message names the file, column, row or option at fault and what to do about it.
"""

from __future__ import annotations

__all__ = ["ConfigError", "GapfinderError", "InputError", "QueryError"]


class GapfinderError(Exception):
    """Base class: a problem the user can fix, reported without a traceback."""


class InputError(GapfinderError):
    """Telemetry or test traces that cannot be read or lack what is needed."""


class ConfigError(GapfinderError):
    """An option, mapping or configuration file with a value gapfinder cannot use."""


class QueryError(GapfinderError):
    """A query under queries/ failed against the workspace (usually a stale or foreign file)."""
