"""Where a canonical column or a feature-key placeholder takes its value from.

A field is named by one of:

- a column of the source (``member``, or a column whose name holds a dot, matched first);
- ``attr:NAME``: an attribute of the OTLP log record or span, or of the XES event;
  ``resource:NAME``: an OTLP resource attribute; ``case:NAME``: an attribute of the XES trace;
- a dotted path into a nested column (``properties.screen``): a Parquet struct, a map, or JSON text
  (such as the ``properties`` column of an analytics export), walked one step at a time.

Every name reaches DuckDB as an identifier taken from the file's own schema or as a bound constant;
nothing is formatted into SQL text.
"""

from __future__ import annotations

import duckdb
from duckdb import ColumnExpression, ConstantExpression, FunctionExpression

from gapfinder.errors import InputError

__all__ = ["ATTRIBUTE_PREFIXES", "field_expression"]

# prefix -> the map column holding those attributes in the converted OTLP/XES sources
ATTRIBUTE_PREFIXES: dict[str, str] = {"attr": "attributes", "resource": "resource", "case": "case_attributes"}
_TEXT = ("VARCHAR", "JSON")


def _is_map(type_name: str) -> bool:
    return type_name.upper().startswith("MAP(")


def _json_pointer(parts: list[str]) -> str:
    return "/" + "/".join(p.replace("~", "~0").replace("/", "~1") for p in parts)


def field_expression(
    relation: duckdb.DuckDBPyRelation, types: dict[str, str], spec: str, *, label: str, option: str
) -> duckdb.Expression:
    """A DuckDB expression for ``spec`` over ``relation`` (whose columns and types are ``types``).

    ``option`` names what asked for it (``--map event=...``) in the error when nothing matches.
    """
    if spec in types:
        return ColumnExpression(spec)
    prefix, sep, name = spec.partition(":")
    if sep and prefix in ATTRIBUTE_PREFIXES:
        column = ATTRIBUTE_PREFIXES[prefix]
        if not name:
            raise InputError(f"{option}: {spec!r} names no attribute; write {prefix}:NAME")
        if column not in types or not _is_map(types[column]):
            where = "OpenTelemetry (OTLP) input" if prefix != "case" else "XES input"
            raise InputError(
                f"{option}: {spec!r} reads {prefix} attributes, which only {where} has; {label} has the "
                f"columns {', '.join(types)}"
            )
        return FunctionExpression("map_extract_value", ColumnExpression(column), ConstantExpression(name))
    parts = spec.split(".")
    for cut in range(len(parts) - 1, 0, -1):
        head = ".".join(parts[:cut])
        if head in types:
            return _walk(relation, ColumnExpression(head), types[head], parts[cut:], spec=spec, option=option)
    raise InputError(f"{option}: {label} has no column {spec!r}; the columns are {', '.join(types)}")


def _walk(
    relation: duckdb.DuckDBPyRelation,
    expression: duckdb.Expression,
    type_name: str,
    rest: list[str],
    *,
    spec: str,
    option: str,
) -> duckdb.Expression:
    """Step into a struct, map or JSON text one name at a time."""
    while rest:
        base = type_name.split("(")[0].strip().upper()
        if base in _TEXT:
            return FunctionExpression("json_extract_string", expression, ConstantExpression(_json_pointer(rest)))
        if _is_map(type_name):
            expression = FunctionExpression("map_extract_value", expression, ConstantExpression(rest[0]))
        elif base == "STRUCT":
            expression = FunctionExpression("struct_extract", expression, ConstantExpression(rest[0]))
        else:
            raise InputError(
                f"{option}: {spec!r} steps into {rest[0]!r}, but that part of the source holds {type_name}, not a "
                "struct, map or JSON text"
            )
        try:
            type_name = str(relation.select(expression.alias("v")).types[0])
        except duckdb.Error:
            raise InputError(f"{option}: {spec!r}: the nested column has no field {rest[0]!r}") from None
        rest = rest[1:]
    return expression
