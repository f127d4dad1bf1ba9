"""gapfinder: how much of real usage do the automated tests cover, and what should they add?

The library behind the ``gapfinder`` command. A notebook can use it directly::

    from gapfinder import profile_telemetry
    summary = profile_telemetry(["events.parquet"], workspace="ws.duckdb")
"""

from __future__ import annotations

__version__ = "0.1.0"

from gapfinder.errors import ConfigError, GapfinderError, InputError, QueryError
from gapfinder.usage_profile import ProfileOptions, profile_telemetry

__all__ = [
    "ConfigError",
    "GapfinderError",
    "InputError",
    "ProfileOptions",
    "QueryError",
    "__version__",
    "profile_telemetry",
]
