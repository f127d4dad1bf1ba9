"""Feature keys: templates over attributes and nested fields, rewrite rules, ids templated by default."""

from __future__ import annotations

import json
import re
from pathlib import Path

import duckdb
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from gapfinder.errors import ConfigError, InputError
from gapfinder.sources import open_telemetry
from gapfinder.sources.feature_keys import FeatureKeys, parse_rewrite, parse_template
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from gapfinder.workspace import connect_memory
from tests.helpers import SAMPLE, at, write_events


def _names(path: Path, keys: FeatureKeys, mapping: dict[str, str] | None = None) -> list[str]:
    con = connect_memory()
    open_telemetry(con, [path], mapping or {}, feature_keys=keys)
    return [r[0] for r in con.execute("SELECT event FROM mapped_source ORDER BY ts").fetchall()]


def test_ids_in_names_are_templated_by_default(tmp_path: Path) -> None:
    names = [
        "/tools/4711/reserve",
        "/tools/12/reserve",
        "order-8f3a9c2d11",
        "open_invoice_20260104",
        "item/550e8400-e29b-41d4-a716-446655440000/view",
        "step_2",
        "error_404",
        "/a/1/2/3",
    ]
    path = write_events(tmp_path / "e.parquet", [("u", at(i), n) for i, n in enumerate(names)])
    assert _names(path, FeatureKeys()) == [
        "/tools/{n}/reserve",
        "/tools/{n}/reserve",
        "order-{hex}",
        "open_invoice_{n}",
        "item/{uuid}/view",
        "step_2",  # short numbers inside a word stay: wizard steps and status codes are features
        "error_404",
        "/a/{n}/{n}/{n}",
    ]
    assert _names(path, FeatureKeys(template_ids=False)) == names


def test_template_over_json_properties_and_missing_values(tmp_path: Path) -> None:
    rows = [
        ("u", at(0), "screen_view", json.dumps({"screen": "checkout"})),
        ("u", at(1), "click", json.dumps({"element": "pay"})),
        ("u", at(2), "screen_view", "{}"),
    ]
    path = write_events(tmp_path / "e.parquet", rows, ("user_id", "ts", "event", "properties"))
    keys = FeatureKeys(template="{event}:{properties.screen}")
    # a literal is left out with the empty value after it
    assert _names(path, keys) == ["screen_view:checkout", "click", "screen_view"]


def test_template_over_parquet_struct_and_map(tmp_path: Path) -> None:
    table = pa.table(
        {
            "user_id": ["u", "u"],
            "ts": pa.array([at(0), at(1)], pa.timestamp("us", tz="UTC")),
            "event": ["screen_view", "screen_view"],
            "context": pa.array(
                [{"page": {"name": "home"}}, {"page": {"name": "cart"}}],
                pa.struct([("page", pa.struct([("name", pa.string())]))]),
            ),
            "labels": pa.array([[("tab", "a")], [("tab", "b")]], pa.map_(pa.string(), pa.string())),
        }
    )
    path = tmp_path / "e.parquet"
    pq.write_table(table, path)
    assert _names(path, FeatureKeys(template="{event}/{context.page.name}/{labels.tab}")) == [
        "screen_view/home/a",
        "screen_view/cart/b",
    ]
    with pytest.raises(InputError, match="no field 'nope'"):
        _names(path, FeatureKeys(template="{context.nope}"))


def test_user_rules_run_in_order_before_the_id_templates(tmp_path: Path) -> None:
    names = ["/tools/4711/reserve", "/tools/drill-9/reserve", "/help"]
    path = write_events(tmp_path / "e.parquet", [("u", at(i), n) for i, n in enumerate(names)])
    keys = FeatureKeys(rewrites=(parse_rewrite("^/tools/[^/]+/=>/tools/{id}/"), parse_rewrite("^/help$=>help")))
    assert _names(path, keys) == ["/tools/{id}/reserve", "/tools/{id}/reserve", "help"]


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: parse_template("{event}:{}"), "empty placeholder"),
        (lambda: parse_template("plain"), "no placeholder"),
        (lambda: parse_template("{event}:{screen"), "unbalanced"),
        (lambda: parse_rewrite("no arrow"), "PATTERN=>REPLACEMENT"),
    ],
)
def test_bad_templates_and_rules_are_refused(call, message: str) -> None:
    with pytest.raises(ConfigError, match=message):
        call()


def test_invalid_regular_expression_names_the_option(tmp_path: Path) -> None:
    path = write_events(tmp_path / "e.parquet", [("u", at(0), "a")])
    with pytest.raises(ConfigError, match=r"--rewrite \(\[=>x: not a regular expression"):
        _names(path, FeatureKeys(rewrites=(("([", "x"),)))


def test_too_many_names_proposes_a_rule_for_the_varying_segment(tmp_path: Path) -> None:
    rows = [("u", at(i), f"/shop/item-{i:x}z/view") for i in range(40)]
    path = write_events(tmp_path / "e.parquet", rows)
    con = connect_memory()
    with pytest.raises(InputError) as caught:
        open_telemetry(con, [path], feature_keys=FeatureKeys(), max_names=10)
    message = str(caught.value)
    assert "40 distinct event names" in message and "Segment 3" in message
    proposed = re.search(r"--rewrite '(.+?)'", message)
    assert proposed is not None
    # the proposed rule, applied, brings the names under the limit
    assert set(_names(path, FeatureKeys(rewrites=(parse_rewrite(proposed.group(1)),)))) == {"/shop/{id}/view"}


_segment = st.one_of(
    st.text(alphabet="abcdefghijklmnopqrstuvwxyz_", min_size=1, max_size=8),
    st.integers(min_value=0, max_value=10**9).map(str),
    st.uuids().map(str),
)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(names=st.lists(st.lists(_segment, min_size=1, max_size=5).map("/".join), min_size=1, max_size=30))
def test_id_templates_remove_the_ids_and_never_add_names(tmp_path: Path, names: list[str]) -> None:
    con = duckdb.connect()
    con.execute("SET TimeZone = 'UTC'")
    path = tmp_path / "e.parquet"
    pq.write_table(
        pa.table(
            {
                "user_id": ["u"] * len(names),
                "ts": pa.array([at(i) for i in range(len(names))], pa.timestamp("us", tz="UTC")),
                "event": names,
            }
        ),
        path,
    )
    open_telemetry(con, [path], feature_keys=FeatureKeys())
    rows = con.execute("SELECT event FROM mapped_source ORDER BY ts").fetchall()
    templated = [r[0] for r in rows]
    assert len(set(templated)) <= len(set(names))  # a rewrite is a function of the name
    for raw, name in zip(names, templated, strict=True):
        for segment in raw.split("/"):
            if segment.isdigit() or re.fullmatch(r"[0-9a-f]{8}-[0-9a-f-]{27}", segment):
                # every number standing as a path segment and every UUID is gone from the name
                assert not any(part == segment for part in name.split("/")), (raw, name)
        assert not re.search(r"(^|/)[0-9]+(/|$)", name), (raw, name)


def test_demo_with_ids_injected_profiles_like_the_clean_demo(tmp_path: Path) -> None:
    """Each event name of the sample telemetry gets a per-event id; the default templates undo it."""
    clean = ProfileOptions()
    dirty_file = tmp_path / "dirty.parquet"
    con = duckdb.connect()
    con.execute(
        "COPY (SELECT * REPLACE ('/app/' || CAST(event AS VARCHAR) || '/' || CAST(hash(user_id, ts) % 100000 AS "
        "VARCHAR) AS event) FROM read_parquet($files, hive_partitioning = true)) TO $path (FORMAT parquet)",
        {"files": [str(p) for p in sorted((SAMPLE / "field").rglob("*.parquet"))], "path": str(dirty_file)},
    )
    ours = profile_telemetry([dirty_file], tmp_path / "dirty.duckdb", clean, min_users=1)
    theirs = profile_telemetry([SAMPLE / "field"], tmp_path / "clean.duckdb", clean, min_users=1)
    assert ours["reading"]["feature_keys"]["raw_names"] > 10_000
    assert ours["features"]["count"] == theirs["features"]["count"]
    for key in ("count", "users", "events", "with_errors"):
        assert ours["sessions"][key] == theirs["sessions"][key]
    strip = {f"/app/{r['event']}/{{n}}": r["event"] for r in theirs["features"]["top"]}
    assert [(strip[r["event"]], r["occurrences"], r["users"]) for r in ours["features"]["top"]] == [
        (r["event"], r["occurrences"], r["users"]) for r in theirs["features"]["top"]
    ]
    assert ours["full_paths"]["distinct"] == theirs["full_paths"]["distinct"]
