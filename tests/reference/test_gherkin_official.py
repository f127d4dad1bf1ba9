"""Gherkin scenario counts and parse errors against gherkin-official's own parser and pickle compiler.

Source: the PyPI package ``gherkin-official`` (the Cucumber project's reference implementation of
Gherkin). Its compiler turns a document into pickles, one per scenario that would run (Background
steps prepended, Scenario Outlines expanded once per Examples row, Rules flattened); our reader must
produce exactly one test per pickle, with the pickle's steps, on invented fixtures covering
Background, Rule, Scenario Outline with several Examples, tags, doc strings, data tables, i18n
keywords (``# language: fr``), CRLF line ends and a file with no scenario. Parse errors must carry
the parser's own line and column.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from gherkin.errors import CompositeParserException, ParserError
from gherkin.parser import Parser
from gherkin.pickles.compiler import Compiler

from gapfinder.errors import InputError
from gapfinder.suite.gherkin import read_feature_file

REPO = Path(__file__).resolve().parent.parent / "data" / "suite" / "repo" / "features"

CRLF = "Feature: Line ends\r\n  Background:\r\n    Given I sign in\r\n\r\n  Scenario: one\r\n    When I search\r\n"
NO_SCENARIO = "Feature: Returns\n  Described later.\n"


def _pickles(text: str) -> list[dict]:
    document = Parser().parse(text)
    return list(Compiler().compile({**document, "uri": "x.feature"}))


def _fixtures(tmp_path: Path) -> list[Path]:
    files = [
        REPO / "borrowing.feature",
        REPO / "account" / "profile.feature",
        REPO / "account" / "idiomas.feature",
    ]
    crlf = tmp_path / "crlf.feature"
    crlf.write_bytes(CRLF.encode())
    return [*files, crlf]


def test_one_test_per_pickle_with_the_pickles_steps(tmp_path: Path) -> None:
    total = 0
    for path in _fixtures(tmp_path):
        pickles = _pickles(path.read_text(encoding="utf-8"))
        report = read_feature_file(path, keep_assertions=True)
        assert len(report.traces) == len(pickles), path.name
        for trace, pickle in zip(report.traces, pickles, strict=True):
            assert trace.name == pickle["name"]
            assert len(trace.steps) == len(pickle["steps"])
            assert trace.tags == tuple(t["name"] for t in pickle["tags"])
        total += len(pickles)
    # 5 in borrowing (2 scenarios + 3 outline rows in a Rule), 2 in profile, 1 French, 1 CRLF
    assert total == 9


def test_background_steps_come_first_and_crlf_reads_like_lf(tmp_path: Path) -> None:
    crlf = tmp_path / "crlf.feature"
    crlf.write_bytes(CRLF.encode())
    lf = tmp_path / "lf.feature"
    lf.write_text(CRLF.replace("\r\n", "\n"))
    assert (
        read_feature_file(crlf).traces[0].steps
        == read_feature_file(lf).traces[0].steps
        == [
            "I sign in",
            "I search",
        ]
    )


def test_a_file_with_no_scenario_has_no_pickle_and_is_named(tmp_path: Path) -> None:
    assert _pickles(NO_SCENARIO) == []
    path = tmp_path / "returns.feature"
    path.write_text(NO_SCENARIO)
    with pytest.raises(InputError, match=r"returns.feature:1:1: the feature file holds no scenario"):
        read_feature_file(path)


@pytest.mark.parametrize(
    "text",
    [
        "this is not Gherkin\nFeature: x\n",
        "Feature: f\n  Scenario: s\n    Given a\nFeature: twice\n",
        "Feature: Broken\n  Scenario: one\n    Given a step\n    | a | b |\n    | 1 |\n",
        "# language: xx\nFeature: f\n",
    ],
)
def test_parse_errors_carry_the_parsers_line_and_column(tmp_path: Path, text: str) -> None:
    with pytest.raises((CompositeParserException, ParserError)) as official:
        Parser().parse(text)
    errors = getattr(official.value, "errors", None) or [official.value]
    location = errors[0].location
    path = tmp_path / "bad.feature"
    path.write_text(text)
    with pytest.raises(InputError) as ours:
        read_feature_file(path)
    assert f"bad.feature:{location['line']}:{location.get('column') or 1}: not valid Gherkin: " in str(ours.value)
