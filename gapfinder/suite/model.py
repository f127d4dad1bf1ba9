"""What every suite reader produces: a test and the ordered steps it exercises."""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = ["ReaderReport", "TestTrace"]


@dataclass
class TestTrace:
    """One test: its id, its steps in order (names as the suite spells them), and where it came from."""

    __test__ = False  # not a pytest test class, despite the name

    test_id: str
    steps: list[str]
    source: str
    kind: str


@dataclass
class ReaderReport:
    """What a reader found besides the traces: things it could not use, never dropped silently."""

    traces: list[TestTrace] = field(default_factory=list)
    skipped: dict[str, int] = field(default_factory=dict)  # reason -> count
    unmatched_phrases: dict[str, int] = field(default_factory=dict)  # Gherkin steps no phrase matched
    ignored_phrases: dict[str, int] = field(default_factory=dict)  # Gherkin steps mapped to nothing on purpose

    def skip(self, reason: str, count: int = 1) -> None:
        if count:
            self.skipped[reason] = self.skipped.get(reason, 0) + count

    def extend(self, other: ReaderReport) -> None:
        self.traces.extend(other.traces)
        for reason, n in other.skipped.items():
            self.skip(reason, n)
        for bucket, theirs in (
            (self.unmatched_phrases, other.unmatched_phrases),
            (self.ignored_phrases, other.ignored_phrases),
        ):
            for phrase, n in theirs.items():
                bucket[phrase] = bucket.get(phrase, 0) + n
