"""Periods of the telemetry: half-open windows of whole UTC days, labelled with the days they hold.

Every stage that compares an earlier and a recent part of the data (the trend of a gap, the
default audit, `check --max-new-gaps`, the report) splits it the same way: the days from the first
session's day to the last session's day, cut at the day that begins the second half. A feature
rolled out on a day therefore falls wholly in one half, and its earlier share is zero.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, date, datetime, timedelta
from typing import Any

__all__ = ["Period", "day_of", "split_in_halves"]


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
            "to": (self.end - timedelta(days=1)).date().isoformat() if self.end else None,
        }


def day_of(moment: datetime) -> date:
    """The UTC day of a moment (a naive one is taken as UTC)."""
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC).date()


def _midnight(day: date) -> datetime:
    return datetime(day.year, day.month, day.day, tzinfo=UTC)


def split_in_halves(first_start: datetime, last_start: datetime) -> tuple[Period, Period]:
    """(earlier, recent): the data's days cut in two at a midnight (UTC), the earlier half no longer.

    Examples
    --------
    >>> earlier, recent = split_in_halves(datetime(2026, 1, 1, 8, tzinfo=UTC), datetime(2026, 6, 30, 22, tzinfo=UTC))
    >>> earlier.label, recent.label
    ('2026-01-01..2026-03-31', '2026-04-01..2026-06-30')
    """
    first, last = day_of(first_start), day_of(last_start)
    days = (last - first).days + 1
    cut = first + timedelta(days=max(1, days // 2))
    before_cut = cut - timedelta(days=1)
    earlier = Period(_midnight(first), _midnight(cut), f"{first.isoformat()}..{before_cut.isoformat()}")
    recent_last = max(last, cut)
    recent = Period(
        _midnight(cut), _midnight(recent_last) + timedelta(days=1), f"{cut.isoformat()}..{recent_last.isoformat()}"
    )
    return earlier, recent
