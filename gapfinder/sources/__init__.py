"""Readers that turn telemetry files into gapfinder's canonical events.

``open_telemetry`` resolves the input files, maps their columns onto the canonical names
(``--map canonical=source`` or a ``[columns]`` table in ``gapfinder.toml``), decides how the
timestamp column is to be read, and exposes the result as the temporary view ``mapped_source``.
Nothing is read eagerly: the view is scanned by the sessionization queries.
"""

from gapfinder.sources.mapping import (
    CANONICAL_COLUMNS,
    REQUIRED_COLUMNS,
    load_config_columns,
    parse_map_options,
)
from gapfinder.sources.telemetry import OpenedSource, TimestampReading, open_telemetry

__all__ = [
    "CANONICAL_COLUMNS",
    "REQUIRED_COLUMNS",
    "OpenedSource",
    "TimestampReading",
    "load_config_columns",
    "open_telemetry",
    "parse_map_options",
]
