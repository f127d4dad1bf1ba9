"""Gherkin ``.feature`` files, parsed with the ``gherkin-official`` package.

Each scenario becomes a test (Scenario Outlines are expanded, one test per Examples row, by the
package's pickle compiler). A steps map turns step phrases into event names: a YAML file whose key
``steps`` maps regular expressions (matched against the whole step text, case-insensitive) to an
event name, or to null for steps that exercise no feature (``Given the app is open``)::

    steps:
      "I search the catalogue( for .+)?": search_catalogue
      "I pay the deposit by card": pay_deposit_card
      "the app is open": null

A step no phrase matches keeps its text as the step name and is listed as unmatched, so that
``gapfinder align`` can suggest an event for it.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import regex

from gapfinder.align import read_yaml_table
from gapfinder.errors import ConfigError, InputError
from gapfinder.safe_io import read_text
from gapfinder.suite.model import ReaderReport, TestTrace

__all__ = ["StepPhrases", "read_feature_file"]


MATCH_SECONDS = 0.5


@dataclass(frozen=True)
class StepPhrases:
    """Compiled phrase → event rules, first match wins."""

    rules: tuple[tuple[Any, str | None], ...] = ()
    source: str = ""

    @classmethod
    def load(cls, path: str | Path) -> StepPhrases:
        where = str(path)
        table = read_yaml_table(path, key="steps", option="--steps-map", what="phrase patterns to events")
        rules = []
        for phrase, event in table.items():
            try:
                pattern = regex.compile(str(phrase), regex.IGNORECASE | regex.V0)
            except regex.error as exc:
                raise ConfigError(
                    f"--steps-map {where}: phrase {phrase!r} is not a valid regular expression ({exc})"
                ) from None
            if event is not None and not (isinstance(event, str) and event.strip()):
                raise ConfigError(f"--steps-map {where}: phrase {phrase!r} must map to an event name or null")
            rules.append((pattern, event.strip() if isinstance(event, str) else None))
        return cls(tuple(rules), where)

    def event_for(self, text: str) -> tuple[bool, str | None]:
        """(matched, event): event None with matched True means the step is ignored on purpose."""
        for pattern, event in self.rules:
            try:
                # The `regex` engine with a time bound: a phrase that backtracks catastrophically
                # (such as "(a|aa)+$") stops with an error naming it instead of hanging the run.
                if pattern.fullmatch(text.strip(), timeout=MATCH_SECONDS):
                    return True, event
            except TimeoutError:
                raise ConfigError(
                    f"--steps-map {self.source}: phrase {pattern.pattern!r} took over {MATCH_SECONDS} s on one step "
                    "(it backtracks catastrophically); rewrite it without nested repetition"
                ) from None
        return False, None


def read_feature_file(path: str | Path, phrases: StepPhrases | None = None) -> ReaderReport:
    """Read one .feature file into one test per scenario (outline rows expanded)."""
    from gherkin.errors import CompositeParserException, ParserError
    from gherkin.parser import Parser
    from gherkin.pickles.compiler import Compiler

    where = str(path)
    try:
        document = Parser().parse(read_text(path, what="Gherkin file"))
    except (CompositeParserException, ParserError) as exc:
        first = str(exc).strip().splitlines()[0]
        raise InputError(f"{where}: not valid Gherkin ({first})") from None
    document = {**document, "uri": where}  # type: ignore[typeddict-unknown-key]
    feature = (document.get("feature") or {}).get("name", "") or Path(path).stem
    phrases = phrases or StepPhrases()
    report = ReaderReport()
    counts: dict[str, int] = {}
    for pickle in Compiler().compile(document):  # type: ignore[arg-type]
        steps: list[str] = []
        for step in pickle["steps"]:
            text = step["text"].strip()
            matched, event = phrases.event_for(text)
            if matched and event is None:
                report.ignored_phrases[text] = report.ignored_phrases.get(text, 0) + 1
            elif matched and event is not None:
                steps.append(event)
            else:
                report.unmatched_phrases[text] = report.unmatched_phrases.get(text, 0) + 1
                steps.append(text)
        name = f"{feature}: {pickle['name']}"
        counts[name] = counts.get(name, 0) + 1
        test_id = name if counts[name] == 1 else f"{name} #{counts[name]}"
        report.traces.append(TestTrace(test_id, steps, where, "gherkin"))
    if not report.traces:
        raise InputError(f"{where}: the feature file holds no scenario")
    return report
