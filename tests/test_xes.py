"""XES logs (IEEE 1849) read as field telemetry: the standard's constructs on an invented log."""

from __future__ import annotations

import gzip
from pathlib import Path

import pytest

from gapfinder.errors import InputError
from gapfinder.sources import open_telemetry
from gapfinder.usage_profile import profile_telemetry
from gapfinder.workspace import connect_memory

PERMITS = Path(__file__).resolve().parent.parent / "sample_telemetry" / "xes" / "permits.xes"


def _events(con) -> list[tuple]:
    return con.execute(
        "SELECT user_id, session_id, event, strftime(ts, '%Y-%m-%d %H:%M'), outcome FROM mapped_source ORDER BY ts"
    ).fetchall()


def test_classifier_globals_extensions_and_nesting() -> None:
    con = connect_memory()
    opened = open_telemetry(con, [PERMITS])
    assert opened.files.format == "xes"
    assert _events(con) == [
        # the first classifier names events (its lifecycle key has the prefix the log declared, lc:);
        # the global default fills the transition where the event has none; zones converted to UTC
        ("case-1", "case-1", "submit application:complete", "2026-03-02 08:00", None),
        ("case-1", "case-1", "check documents:start", "2026-03-02 08:30", None),
        ("case-1", "case-1", "check documents:complete", "2026-03-02 09:15", None),
        # a trace without concept:name is numbered; an aborting transition is an error
        ("#2", "#2", "submit application:complete", "2026-03-03 14:00", None),
        ("#2", "#2", "pay fee:ate_abort", "2026-03-03 14:05", "error"),
    ]
    assert "Activity and transition" in opened.notes[0]
    opened.close()


def test_attributes_of_events_and_traces_are_fields() -> None:
    con = connect_memory()
    open_telemetry(
        con,
        [PERMITS],
        {"user_id": "attr:org:resource", "platform": "case:channel", "app_version": "attr:pages"},
        feature_keys=None,
    )
    rows = con.execute("SELECT user_id, platform, app_version FROM mapped_source ORDER BY ts").fetchall()
    # the nested meta-attribute (team) and the list's item (concept:name) do not leak into the event
    assert rows == [
        ("clerk-a", "counter", None),
        ("UNKNOWN", "counter", None),
        ("UNKNOWN", "counter", "12"),
        ("UNKNOWN", "web", None),  # the global trace default
        ("UNKNOWN", "web", None),
    ]


def test_feature_template_replaces_the_classifier() -> None:
    from gapfinder.sources.feature_keys import FeatureKeys

    con = connect_memory()
    open_telemetry(con, [PERMITS], feature_keys=FeatureKeys(template="{concept:name}"))
    names = [r[0] for r in con.execute("SELECT event FROM mapped_source ORDER BY ts").fetchall()]
    assert names == ["submit application", "check documents", "check documents", "submit application", "pay fee"]


def test_gzip_and_profile(tmp_path: Path) -> None:
    packed = tmp_path / "permits.xes.gz"
    packed.write_bytes(gzip.compress(PERMITS.read_bytes()))
    summary = profile_telemetry([packed], tmp_path / "ws.duckdb", min_users=1)
    assert summary["sessions"]["count"] == 2
    assert summary["sessions"]["formed_by"] == "the log's traces (cases)"
    assert summary["reading"]["format"] == "xes"


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("<log><trace><event><string key='concept:name' value='a'/></event></trace>", "not well-formed"),
        ("<?xml version='1.0'?><notxes/>", "no <log> element"),
    ],
)
def test_broken_documents_are_refused_with_a_position(tmp_path: Path, text: str, expected: str) -> None:
    path = tmp_path / "broken.xes"
    path.write_text(text)
    with pytest.raises(InputError, match=expected):
        open_telemetry(connect_memory(), [path])


@pytest.mark.parametrize(("read_bytes", "batch_events"), [(97, 1), (333, 2), (4096, 3)])
def test_batches_cut_anywhere_give_the_same_events(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, read_bytes: int, batch_events: int
) -> None:
    """Chunks of the file end inside elements and batches end inside traces: nothing is lost or moved."""
    from gapfinder.sources import xes

    text = PERMITS.read_text()
    head, rest = text.split("<trace>", 1)
    body = "<trace>" + rest.rsplit("</log>", 1)[0]
    big = tmp_path / "many.xes"
    big.write_text(head + body * 40 + "</log>\n")
    whole = xes.convert_xes([str(big)], tmp_path / "whole.parquet")
    monkeypatch.setattr(xes, "_READ_BYTES", read_bytes)
    monkeypatch.setattr(xes, "_BATCH_EVENTS", batch_events)
    cut = xes.convert_xes([str(big)], tmp_path / "cut.parquet")
    assert (whole.traces, whole.events) == (cut.traces, cut.events) == (80, 200)
    con = connect_memory()
    query = (
        "SELECT * EXCLUDE (attributes, case_attributes), attributes::VARCHAR, case_attributes::VARCHAR "
        "FROM read_parquet($p) ORDER BY case_id, position"
    )
    assert (
        con.execute(query, {"p": str(tmp_path / "whole.parquet")}).fetchall()
        == con.execute(query, {"p": str(tmp_path / "cut.parquet")}).fetchall()
    )
