"""Periods cut at midnight: halves of whole days, the same for gaps, audit and check."""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

import pytest

from gapfinder.gaps import GapOptions, find_gaps
from gapfinder.periods import split_in_halves
from gapfinder.suite import load_suite
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from gapfinder.workspace import Workspace


@pytest.mark.parametrize(
    ("first", "last", "earlier", "recent"),
    [
        ("2026-01-01T08:00", "2026-06-30T22:00", "2026-01-01..2026-03-31", "2026-04-01..2026-06-30"),
        ("2026-01-01T00:00", "2026-01-10T23:59", "2026-01-01..2026-01-05", "2026-01-06..2026-01-10"),
        ("2026-01-01T00:00", "2026-01-11T00:00", "2026-01-01..2026-01-05", "2026-01-06..2026-01-11"),
        ("2026-03-05T10:00", "2026-03-05T11:00", "2026-03-05..2026-03-05", "2026-03-06..2026-03-06"),
    ],
)
def test_halves_are_whole_days(first: str, last: str, earlier: str, recent: str) -> None:
    a, b = split_in_halves(datetime.fromisoformat(first + "+00:00"), datetime.fromisoformat(last + "+00:00"))
    assert (a.label, b.label) == (earlier, recent)
    assert a.end == b.start and a.end is not None and (a.end.hour, a.end.minute) == (0, 0)


def _telemetry(path: Path, rollout: str) -> Path:
    """Ten days of 20 users a day; from ``rollout`` on, every session also uses `beta`."""
    rows = ["user_id,ts,event"]
    start = datetime(2026, 1, 1, tzinfo=UTC)
    launch = datetime.fromisoformat(rollout + "+00:00")
    for day in range(10):
        for user in range(20):
            for hour in (1, 13):
                at = start.replace(day=1 + day, hour=hour, minute=user)
                rows.append(f"u{user},{at.isoformat()},login")
                rows.append(f"u{user},{at.replace(second=10).isoformat()},search")
                if at >= launch:
                    rows.append(f"u{user},{at.replace(second=20).isoformat()},beta")
    path.write_text("\n".join(rows) + "\n")
    return path


@pytest.mark.parametrize(
    ("rollout", "label"),
    [
        ("2026-01-06T00:00", "new"),  # at the cut, midnight
        ("2026-01-06T12:00", "new"),  # on the cut's day, at noon
        ("2026-01-05T12:00", "rising"),  # half a day before the cut: seen before, so not new
    ],
)
def test_a_rollout_on_the_cut_day_is_new(tmp_path: Path, rollout: str, label: str) -> None:
    events = _telemetry(tmp_path / "events.csv", rollout)
    ws_path = tmp_path / "ws.duckdb"
    profile_telemetry([events], ws_path, ProfileOptions(), min_users=1)
    catalog = tmp_path / "suite.yaml"
    catalog.write_text("tests:\n  - {id: t, steps: [login, search]}\n")
    with Workspace(ws_path) as ws:
        load_suite(ws, [catalog])
        result = find_gaps(ws, GapOptions(kinds=("feature",), min_users=5))
    (beta,) = [g for g in result["gaps"] if g["path"] == ["beta"]]
    assert beta["trend"]["label"] == label, beta["trend"]
    assert result["periods"]["recent"]["from"] == "2026-01-06"
    assert result["periods"]["earlier"]["sessions"] + result["periods"]["recent"]["sessions"] == 400
    if label == "rising":
        assert beta["trend"]["ratio_low"] > 1


def test_days_can_be_cut_at_another_zones_midnight() -> None:
    from zoneinfo import ZoneInfo

    zone = ZoneInfo("America/Los_Angeles")
    first = datetime(2026, 1, 1, 6, tzinfo=UTC)  # still 31 December in Los Angeles
    last = datetime(2026, 1, 10, 12, tzinfo=UTC)
    earlier, recent = split_in_halves(first, last, zone)
    assert earlier.label == "2025-12-31..2026-01-04" and recent.label == "2026-01-05..2026-01-10"
    assert recent.start == datetime(2026, 1, 5, tzinfo=zone)  # midnight there, 08:00 UTC


def test_an_unknown_zone_is_refused() -> None:
    from gapfinder.errors import ConfigError

    with pytest.raises(ConfigError, match="--tz 'Mars/Olympus'"):
        GapOptions(tz="Mars/Olympus")
