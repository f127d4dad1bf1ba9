"""Column mapping: which source column feeds each canonical column."""

from __future__ import annotations

import tomllib
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from gapfinder.errors import ConfigError
from gapfinder.safe_io import read_text

__all__ = [
    "CANONICAL_COLUMNS",
    "REQUIRED_COLUMNS",
    "load_config_columns",
    "load_config_features",
    "parse_map_options",
]

CANONICAL_COLUMNS: tuple[str, ...] = (
    "user_id",
    "session_id",
    "ts",
    "event",
    "app_version",
    "platform",
    "outcome",
)
REQUIRED_COLUMNS: tuple[str, ...] = ("user_id", "ts", "event")


def _check_canonical(name: str, where: str, allowed: tuple[str, ...] = CANONICAL_COLUMNS) -> None:
    if name not in allowed:
        raise ConfigError(f"{where}: {name!r} is not a canonical column; use one of {', '.join(allowed)}")


def parse_map_options(items: Iterable[str], *, allowed: tuple[str, ...] = CANONICAL_COLUMNS) -> dict[str, str]:
    """Parse repeated ``--map canonical=source`` options into a dictionary.

    Examples
    --------
    >>> parse_map_options(["user_id=member", "ts=occurred_at"])
    {'user_id': 'member', 'ts': 'occurred_at'}
    """
    mapping: dict[str, str] = {}
    for item in items:
        canonical, sep, source = item.partition("=")
        canonical, source = canonical.strip(), source.strip()
        if not sep or not canonical or not source:
            raise ConfigError(f"--map {item!r}: write canonical=source, for example --map user_id=member")
        _check_canonical(canonical, f"--map {item!r}", allowed)
        if canonical in mapping and mapping[canonical] != source:
            raise ConfigError(f"--map maps {canonical!r} twice ({mapping[canonical]!r}, {source!r})")
        mapping[canonical] = source
    return mapping


def _load_config(config: Path) -> dict[str, Any]:
    try:
        return tomllib.loads(read_text(config, what="configuration file", option="--config"))
    except FileNotFoundError:
        raise ConfigError(f"{config}: no such configuration file") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{config}: not valid TOML ({exc})") from None


def load_config_features(path: str | Path) -> dict[str, Any]:
    """The ``[features]`` table of a gapfinder.toml file.

    ``template`` (text, like ``--feature``), ``rewrite`` (a list of ``PATTERN=>REPLACEMENT`` texts,
    run in order) and ``template_ids`` (true/false, false like ``--keep-ids``).

    Examples
    --------
    A file holding::

        [features]
        template = "{event}:{screen}"
        rewrite = ['/tools/[0-9]+/=>/tools/{id}/']
    """
    config = Path(path)
    table = _load_config(config).get("features", {})
    if not isinstance(table, dict):
        raise ConfigError(f"{config}: [features] must be a table (template, rewrite, template_ids)")
    unknown = sorted(set(table) - {"template", "rewrite", "template_ids"})
    if unknown:
        raise ConfigError(f"{config} [features]: unknown key {unknown[0]!r}; use template, rewrite or template_ids")
    if "template" in table and not isinstance(table["template"], str):
        raise ConfigError(f'{config} [features]: template must be text such as "{{event}}:{{screen}}"')
    rewrite = table.get("rewrite", [])
    if not isinstance(rewrite, list) or not all(isinstance(r, str) for r in rewrite):
        raise ConfigError(f"{config} [features]: rewrite must be a list of 'PATTERN=>REPLACEMENT' texts")
    if "template_ids" in table and not isinstance(table["template_ids"], bool):
        raise ConfigError(f"{config} [features]: template_ids must be true or false")
    return dict(table)


def load_config_columns(path: str | Path) -> dict[str, str]:
    """The ``[columns]`` table of a gapfinder.toml file (canonical name = source column)."""
    config = Path(path)
    data = _load_config(config)
    columns = data.get("columns", {})
    if not isinstance(columns, dict):
        raise ConfigError(f'{config}: [columns] must be a table of canonical = "source" pairs')
    mapping: dict[str, str] = {}
    for canonical, source in columns.items():
        _check_canonical(canonical, f"{config} [columns]")
        if not isinstance(source, str) or not source.strip():
            raise ConfigError(f"{config} [columns]: {canonical} must name a source column as a string")
        mapping[canonical] = source.strip()
    return mapping
