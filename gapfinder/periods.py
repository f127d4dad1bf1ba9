"""Periods of the telemetry: half-open windows of whole UTC days, labelled with the days they hold.

Every stage that compares an earlier and a recent part of the data (the trend of a gap, the
default audit, `check --max-new-gaps`, the report) splits it the same way: the days from the first
session's day to the last session's day, cut at the day that begins the second half. Days are UTC
days unless ``--tz`` names another time zone. A feature
rolled out on a day therefore falls wholly in one half, and its earlier share is zero.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, date, datetime, timedelta, tzinfo
from typing import Any
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from gapfinder.errors import ConfigError

__all__ = ["Period", "day_of", "split_in_halves", "time_zone"]


def time_zone(name: str | None) -> tzinfo:
    """The time zone whose midnights cut the data into days (``--tz``); UTC by default."""
    if not name or name.upper() == "UTC":
        return UTC
    try:
        return ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError):
        raise ConfigError(f"--tz {name!r}: not a time zone name; give an IANA name such as Europe/Lisbon") from None


@dataclass(frozen=True)
class Period:
    """A half-open window of session starts [start, end); None is open."""

    start: datetime | None
    end: datetime | None
    label: str

    def as_dict(self) -> dict[str, Any]:
        return {
            "label": self.label,
            "from": self.start.date().isoformat() if self.start else None,
            "to": (self.end.date() - timedelta(days=1)).isoformat() if self.end else None,
        }


def day_of(moment: datetime, zone: tzinfo = UTC) -> date:
    """The day of a moment in ``zone`` (a naive moment is taken as UTC)."""
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(zone).date()


def midnight(day: date, zone: tzinfo = UTC) -> datetime:
    """The start of ``day`` in ``zone``."""
    return datetime(day.year, day.month, day.day, tzinfo=zone)


def split_in_halves(first_start: datetime, last_start: datetime, zone: tzinfo = UTC) -> tuple[Period, Period]:
    """(earlier, recent): the data's days cut in two at a midnight (UTC, or ``zone``), the earlier
    half no longer.

    Examples
    --------
    >>> earlier, recent = split_in_halves(datetime(2026, 1, 1, 8, tzinfo=UTC), datetime(2026, 6, 30, 22, tzinfo=UTC))
    >>> earlier.label, recent.label
    ('2026-01-01..2026-03-31', '2026-04-01..2026-06-30')
    """
    first, last = day_of(first_start, zone), day_of(last_start, zone)
    days = (last - first).days + 1
    cut = first + timedelta(days=max(1, days // 2))
    before_cut = cut - timedelta(days=1)
    earlier = Period(midnight(first, zone), midnight(cut, zone), f"{first.isoformat()}..{before_cut.isoformat()}")
    recent_last = max(last, cut)
    recent = Period(
        midnight(cut, zone),
        midnight(recent_last + timedelta(days=1), zone),
        f"{cut.isoformat()}..{recent_last.isoformat()}",
    )
    return earlier, recent
