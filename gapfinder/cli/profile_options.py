"""The options of how telemetry is read, named and sessionized, shared by `profile` and `run`."""

from __future__ import annotations

import os
from collections.abc import Callable
from typing import Any

import click

from gapfinder.cli.params import F, FiniteFloat

__all__ = ["PROFILE_OPTION_NAMES", "profile_options", "profile_options_from"]


def _config_path(config: str | None) -> str | None:
    if config:
        return config
    return "gapfinder.toml" if os.path.exists("gapfinder.toml") else None


def _parse_mapping(config: str | None, items: tuple[str, ...]) -> dict[str, str]:
    from gapfinder.sources import load_config_columns, parse_map_options

    mapping: dict[str, str] = {}
    path = _config_path(config)
    if path:
        mapping.update(load_config_columns(path))
    mapping.update(parse_map_options(items))
    return mapping


def _feature_keys(config: str | None, template: str | None, rewrites: tuple[str, ...], keep_ids: bool) -> Any:
    """FeatureKeys from the options, over the ``[features]`` table of the configuration file."""
    from gapfinder.sources.feature_keys import FeatureKeys, parse_rewrite, parse_template
    from gapfinder.sources.mapping import load_config_features

    path = _config_path(config)
    configured = load_config_features(path) if path else {}
    chosen_template = template or configured.get("template")
    if chosen_template is not None:
        parse_template(chosen_template)
    rules = rewrites or tuple(configured.get("rewrite", ()))
    return FeatureKeys(
        template=chosen_template,
        rewrites=tuple(parse_rewrite(item) for item in rules),
        template_ids=not keep_ids and bool(configured.get("template_ids", True)),
    )


def profile_options(func: F) -> F:
    """The options of how telemetry is read and sessionized, shared by `profile` and `run`."""
    decorators: list[Callable[[F], F]] = [
        click.option(
            "--map",
            "maps",
            multiple=True,
            metavar="CANONICAL=SOURCE",
            help="Map a canonical column (user_id, session_id, ts, event, app_version, platform, "
            "outcome) to a source field: a column, a nested field such as properties.screen, or for "
            "OpenTelemetry/XES input attr:NAME, resource:NAME (OTLP) or case:NAME (XES); repeatable.",
        ),
        click.option(
            "--feature",
            "feature_template",
            metavar="TEMPLATE",
            help="Build each feature name from the event and other fields, e.g. '{event}:{screen}' "
            "(a literal is left out when the field after it is empty).",
        ),
        click.option(
            "--rewrite",
            "rewrites",
            multiple=True,
            metavar="PATTERN=>REPLACEMENT",
            help="Rewrite feature names with a regular expression (RE2, \\1 for groups), in order; "
            "repeatable. E.g. '/tools/[0-9]+/=>/tools/{id}/'.",
        ),
        click.option(
            "--keep-ids",
            is_flag=True,
            help="Keep numbers, UUIDs and hex ids inside event names (by default they become {n}, {uuid}, {hex}).",
        ),
        click.option(
            "--config",
            type=click.Path(dir_okay=False),
            help="A gapfinder.toml whose [columns] table maps columns and [features] table forms feature "
            "names (default: ./gapfinder.toml if present).",
        ),
        click.option(
            "--ts-unit",
            type=click.Choice(["s", "ms", "us", "ns"]),
            help="Unit of epoch-number timestamps (default: detected from their size).",
        ),
        click.option("--ts-format", help="strptime format of text timestamps (default: ISO-8601)."),
        click.option(
            "--idle",
            default=30.0,
            show_default=True,
            type=FiniteFloat(min=0, min_open=True),
            help="Minutes of inactivity that end a session (ignored with a session column).",
        ),
        click.option(
            "--drop",
            "drop_events",
            multiple=True,
            metavar="EVENT",
            help="An event to remove before sessionizing (heartbeats, pings); repeatable.",
        ),
        click.option("--collapse-repeats", is_flag=True, help="Drop an event that repeats the one just before it."),
        click.option(
            "--max-events",
            default=500,
            show_default=True,
            type=click.IntRange(min=0),
            help="Cut sessions longer than this many events (0: no cap); the cut is reported.",
        ),
        click.option(
            "--error-outcome",
            "error_outcomes",
            multiple=True,
            metavar="VALUE",
            help="An outcome value that means failure (default: error, fail, failed, exception, ...).",
        ),
        click.option(
            "--automated/--no-automated",
            "flag_automated",
            default=True,
            show_default=True,
            help="Flag accounts far outside the rest as automated and keep them apart.",
        ),
        click.option("--include-automated", is_flag=True, help="Count flagged automated sessions in the paths too."),
        click.option(
            "--max-k",
            default=5,
            show_default=True,
            type=click.IntRange(min=2),
            help="Longest contiguous path (k-path) to count.",
        ),
        click.option(
            "--key-env",
            metavar="VAR",
            help="Pseudonymize user ids with the HMAC-SHA256 key in this environment variable.",
        ),
        click.option(
            "--key-file", type=click.Path(dir_okay=False), help="Pseudonymize user ids with the key in this file."
        ),
        click.option(
            "--threads",
            type=click.IntRange(min=1),
            help="Threads for DuckDB, the k-path counter and the pattern miner and matcher (default: all cores).",
        ),
        click.option(
            "--memory-limit",
            metavar="SIZE",
            help="DuckDB memory limit, e.g. 2GB (default: 60 % of memory, at most 2.25 GiB); more spills to disk.",
        ),
        click.option(
            "--engine",
            type=click.Choice(["duckdb", "spark"]),
            default="duckdb",
            show_default=True,
            help="Where the passes over every event run: DuckDB on this machine, or Apache Spark "
            "(pip install 'gapfinder[spark]'; Parquet on any path Spark reads, such as s3a://).",
        ),
        click.option(
            "--spark-master",
            metavar="URL",
            help="Spark master for --engine spark (default: the active session, else local[*]).",
        ),
        click.option(
            "--spark-conf",
            "spark_conf",
            multiple=True,
            metavar="KEY=VALUE",
            help="A Spark setting for --engine spark, e.g. spark.executor.memory=8g; repeatable.",
        ),
        click.option(
            "--spark-staging",
            metavar="FOLDER",
            help="Folder Spark writes the per-session results to and this machine reads "
            "(default: a private temporary folder; on a cluster, a shared mount).",
        ),
    ]
    for decorate in reversed(decorators):
        func = decorate(func)
    return func


def profile_options_from(values: dict[str, Any]) -> Any:
    """ProfileOptions from the parsed values of `profile_options` (the keys are removed from ``values``)."""
    from gapfinder.privacy import read_key
    from gapfinder.sessions import DEFAULT_ERROR_OUTCOMES, SessionOptions
    from gapfinder.usage_profile import ProfileOptions
    from gapfinder.workspace import use_engine

    v = {k: values.pop(k) for k in PROFILE_OPTION_NAMES}
    spark = _spark_settings(v)
    # Every later stage of the command (run's suite, patterns, gaps, plan) works with the same limits.
    use_engine(threads=v["threads"], memory_limit=v["memory_limit"])
    return ProfileOptions(
        mapping=_parse_mapping(v["config"], v["maps"]),
        feature_keys=_feature_keys(v["config"], v["feature_template"], v["rewrites"], v["keep_ids"]),
        ts_unit=v["ts_unit"],
        ts_format=v["ts_format"],
        sessions=SessionOptions(
            idle_minutes=v["idle"],
            drop_events=v["drop_events"],
            collapse_repeats=v["collapse_repeats"],
            max_events=v["max_events"],
            error_outcomes=v["error_outcomes"] or DEFAULT_ERROR_OUTCOMES,
            flag_automated=v["flag_automated"],
        ),
        max_k=v["max_k"],
        include_automated=v["include_automated"],
        pseudonymize_key=read_key(env_var=v["key_env"], key_file=v["key_file"]),
        threads=v["threads"],
        memory_limit=v["memory_limit"],
        spark=spark,
    )


def _spark_settings(v: dict[str, Any]) -> Any:
    """SparkSettings for --engine spark; the Spark options without it are refused."""
    given = [name for name in ("spark_master", "spark_conf", "spark_staging") if v[name]]
    if v["engine"] != "spark":
        if given:
            option = "--" + given[0].replace("_", "-")
            raise click.UsageError(f"{option} needs --engine spark")
        return None
    from gapfinder.engines.spark import SparkSettings, parse_spark_conf

    return SparkSettings(master=v["spark_master"], conf=parse_spark_conf(v["spark_conf"]), staging=v["spark_staging"])


PROFILE_OPTION_NAMES = (
    "maps",
    "feature_template",
    "rewrites",
    "keep_ids",
    "config",
    "ts_unit",
    "ts_format",
    "idle",
    "drop_events",
    "collapse_repeats",
    "max_events",
    "error_outcomes",
    "flag_automated",
    "include_automated",
    "max_k",
    "key_env",
    "key_file",
    "threads",
    "memory_limit",
    "engine",
    "spark_master",
    "spark_conf",
    "spark_staging",
)
