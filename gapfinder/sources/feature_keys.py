"""Feature keys: what one usage event is called, from its name, its attributes and rewrite rules.

Real telemetry often names events generically (``screen_view`` with ``screen=checkout``) or puts ids
inside names (``/tools/4711/reserve``). A feature key is built in three steps:

1. a template (``--feature "{event}:{screen}"``) joins the event with chosen fields (any field
   ``--map`` accepts: a column, ``attr:NAME``, ``properties.screen``); each literal goes with the
   placeholder after it and is left out when that placeholder has no value, so ``click`` without a
   screen stays ``click``;
2. the user's rewrite rules (``--rewrite 'PATTERN=>REPLACEMENT'``), in order, with DuckDB's
   ``regexp_replace`` (RE2 syntax, every match, ``\\1`` for groups);
3. unless ``--keep-ids``: ids templated (UUIDs → ``{uuid}``, numbers that stand as their own path
   segment or have four digits or more → ``{n}``, hex runs of eight or more → ``{hex}``).

Rules run on the distinct names (one pass over the events collects them), never per event; the
events then take their rewritten name through a join with the names that changed. The report says
how many names each rule collapsed. When more distinct names are left than sessions can encode, the
error names the segment of the names that varies most and proposes a rule for it.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

import duckdb
from duckdb import CaseExpression, ConstantExpression, FunctionExpression

from gapfinder.errors import ConfigError, InputError, QueryError
from gapfinder.sql import fetch_dicts, load, registered, run

__all__ = [
    "DEFAULT_ID_RULES",
    "FeatureKeys",
    "KeyReport",
    "describe_feature_keys",
    "parse_rewrite",
    "parse_template",
]

# (label, RE2 pattern, replacement). Each runs twice so that neighbouring segments (``/1/2``), whose
# shared separator the first pass consumed, are caught too.
DEFAULT_ID_RULES: tuple[tuple[str, str, str], ...] = (
    ("UUIDs → {uuid}", r"[0-9A-Fa-f]{8}-[0-9A-Fa-f]{4}-[0-9A-Fa-f]{4}-[0-9A-Fa-f]{4}-[0-9A-Fa-f]{12}", "{uuid}"),
    ("path-segment numbers → {n}", r"(^|[/=#?&])[0-9]+([^0-9A-Za-z]|$)", r"\1{n}\2"),
    ("numbers of 4+ digits → {n}", r"(^|[^0-9A-Za-z{])[0-9]{4,}([^0-9A-Za-z}]|$)", r"\1{n}\2"),
    ("hex runs of 8+ → {hex}", r"(^|[^0-9A-Za-z{])[0-9A-Fa-f]{8,}([^0-9A-Za-z}]|$)", r"\1{hex}\2"),
)
_PLACEHOLDER = re.compile(r"\{([^{}]*)\}")
_DELIMITERS = ("/", "_", "-", ".", ":", " ")


@dataclass(frozen=True)
class FeatureKeys:
    """How feature names are formed. The default: the event as it is, ids templated."""

    template: str | None = None
    rewrites: tuple[tuple[str, str], ...] = ()
    template_ids: bool = True

    def as_parameters(self) -> dict[str, Any]:
        return {
            "template": self.template,
            "rewrites": [f"{p}=>{r}" for p, r in self.rewrites],
            "template_ids": self.template_ids,
        }

    @classmethod
    def from_parameters(cls, parameters: dict[str, Any] | None) -> FeatureKeys:
        """The inverse of ``as_parameters`` (the defaults for None)."""
        if not parameters:
            return cls()
        return cls(
            template=parameters.get("template"),
            rewrites=tuple(parse_rewrite(item) for item in parameters.get("rewrites", [])),
            template_ids=bool(parameters.get("template_ids", True)),
        )

    def rules(self) -> list[tuple[str, str, str, int]]:
        """(label, pattern, replacement, passes) in the order they run."""
        rules = [(f"--rewrite {p}=>{r}", p, r, 1) for p, r in self.rewrites]
        if self.template_ids:
            rules.extend((label, p, r, 2) for label, p, r in DEFAULT_ID_RULES)
        return rules


@dataclass
class KeyReport:
    """What the feature keys did: distinct names before and after each rule."""

    template: str | None = None
    raw_names: int = 0
    names: int = 0
    rules: list[dict[str, Any]] = field(default_factory=list)

    def as_dict(self) -> dict[str, Any]:
        return {"template": self.template, "raw_names": self.raw_names, "names": self.names, "rules": self.rules}


def describe_feature_keys(report: dict[str, Any]) -> str:
    """One line on what the feature keys did, from ``KeyReport.as_dict()``."""
    text = f"event names: {report['raw_names']:,} distinct"
    if report.get("template"):
        text += f" from the template {report['template']}"
    collapsed = [r for r in report.get("rules", []) if r["names_after"] != r["names_before"]]
    if not collapsed:
        return text + ("; no rewrite rule or id template changed one" if report.get("rules") else "")
    steps = "; ".join(f"{r['rule']}: {r['names_before'] - r['names_after']:,} fewer" for r in collapsed)
    return f"{text} → {report['names']:,} features ({steps})"


def parse_template(template: str) -> list[tuple[str, str]]:
    """``"{event}:{screen}"`` → ``[("", "event"), (":", "screen")]`` plus a trailing literal as ``(text, "")``."""
    pieces: list[tuple[str, str]] = []
    at = 0
    for match in _PLACEHOLDER.finditer(template):
        name = match.group(1).strip()
        if not name:
            raise ConfigError(f"--feature {template!r}: an empty placeholder {{}}; name a field, e.g. {{screen}}")
        pieces.append((template[at : match.start()], name))
        at = match.end()
    if not pieces:
        raise ConfigError(f"--feature {template!r}: no placeholder; write e.g. '{{event}}:{{screen}}'")
    rest = template[at:]
    if "{" in rest or "}" in rest or any("{" in lit or "}" in lit for lit, _ in pieces):
        raise ConfigError(f"--feature {template!r}: unbalanced braces; placeholders look like {{name}}")
    if rest:
        pieces.append((rest, ""))
    return pieces


def parse_rewrite(item: str) -> tuple[str, str]:
    """``'PATTERN=>REPLACEMENT'`` → (pattern, replacement)."""
    pattern, sep, replacement = item.partition("=>")
    if not sep or not pattern:
        raise ConfigError(f"--rewrite {item!r}: write PATTERN=>REPLACEMENT, e.g. '/tools/[0-9]+/=>/tools/{{id}}/'")
    return pattern, replacement


def template_expression(pieces: list[tuple[str, str]], values: dict[str, duckdb.Expression]) -> duckdb.Expression:
    """The feature-key expression: each literal joins the value after it when that value is present."""
    parts: list[duckdb.Expression] = []
    for literal, name in pieces:
        if not name:
            continue
        value = FunctionExpression("nullif", FunctionExpression("trim", values[name]), ConstantExpression(""))
        parts.append(
            CaseExpression(
                value.isnotnull(), FunctionExpression("concat", ConstantExpression(literal), value)
            ).otherwise(ConstantExpression(""))
        )
    joined = FunctionExpression("concat", *parts) if len(parts) > 1 else parts[0]
    trailing = pieces[-1][0] if pieces[-1][1] == "" else ""
    if trailing:
        joined = FunctionExpression("concat", joined, ConstantExpression(trailing))
    return FunctionExpression("nullif", joined, ConstantExpression(trailing))


def _check_rule(con: duckdb.DuckDBPyConnection, label: str, pattern: str, replacement: str) -> None:
    try:
        con.execute(
            "SELECT regexp_replace('x', $pattern, $replacement, 'g')", {"pattern": pattern, "replacement": replacement}
        ).fetchall()
    except duckdb.Error:
        raise ConfigError(
            f"{label}: not a regular expression DuckDB (RE2) accepts; escape special characters with \\ "
            "and use \\1 for a group in the replacement"
        ) from None


def apply_rules(
    con: duckdb.DuckDBPyConnection,
    keys: FeatureKeys,
    *,
    max_names: int,
    label: str,
    name_counts: Any = None,
) -> tuple[bool, KeyReport]:
    """Collect the distinct names of ``mapped_source_raw`` and run the rules on them.

    ``name_counts`` (an Arrow table of ``raw``, ``events``) gives the distinct names instead, when
    another engine counted them. Leaves the temporary table ``event_name_map`` (raw → name, changed
    names only) and returns whether any name changed, with the report. Refuses more than
    ``max_names`` distinct names after the rules.
    """
    report = KeyReport(template=keys.template)
    rules = keys.rules()
    for rule_label, pattern, replacement, _passes in rules:
        _check_rule(con, rule_label, pattern, replacement)
    try:
        if name_counts is None:
            run(con, "create_raw_event_names")
        else:
            with registered(con, raw_name_counts_frame=name_counts):
                run(con, "create_raw_event_names_from_counts")
        report.raw_names = report.names = _count_names(con)
        for rule_label, pattern, replacement, passes in rules:
            for _ in range(passes):
                run(con, "rewrite_event_names", pattern=pattern, replacement=replacement)
            after = _count_names(con)
            report.rules.append({"rule": rule_label, "names_before": report.names, "names_after": after})
            report.names = after
        run(con, "create_event_name_map")
    except QueryError as exc:
        raise InputError(f"{label}: cannot be read: {exc.reason}; fix or remove that row") from None
    if report.names > max_names:
        raise InputError(_too_many_names(con, report.names, max_names, label))
    rows = con.execute("SELECT count(*) FROM event_name_map").fetchall()
    return bool(rows and rows[0][0]), report


def _count_names(con: duckdb.DuckDBPyConnection) -> int:
    rows = run(con, "count_event_names").fetchall()
    return int(rows[0][0]) if rows else 0


def _too_many_names(con: duckdb.DuckDBPyConnection, names: int, max_names: int, label: str) -> str:
    """The error for too many names, with the most varying segment and a rule that would template it."""
    best: tuple[int, str, int] | None = None
    for delimiter in _DELIMITERS:
        for row in fetch_dicts(con, "list_varying_name_segments", delimiter=delimiter):
            if best is None or row["distinct_values"] > best[0]:
                best = (int(row["distinct_values"]), delimiter, int(row["position"]))
    message = f"{label}: {names:,} distinct event names after the rewrite rules; gapfinder handles up to {max_names:,}"
    if best is None or best[0] < 2:
        return message + ": map a coarser event column, or template the names with --rewrite 'PATTERN=>REPLACEMENT'"
    distinct, delimiter, position = best
    d = re.escape(delimiter)
    rule = f"^((?:[^{d}]*{d}){{{position - 1}}})[^{d}]+=>\\1{{id}}" if position > 1 else f"^[^{d}]+=>{{id}}"
    return (
        f"{message}. Segment {position} of the names split at {delimiter!r} varies most ({distinct:,} distinct "
        f"values); template it with --rewrite '{rule}', or map a coarser event column"
    )


def map_names_query() -> str:
    """The SQL that gives each event of ``mapped_source_raw`` its rewritten name."""
    return load("map_event_names")
