"""Cucumber's result formats as their producers write them.

Sources:
- Cucumber JSON written by ``pytest-bdd --cucumberjson`` (PyPI ``pytest-bdd``), run inside the test
  in a subprocess on an invented feature with a passing, a failing and a skipped scenario;
- Cucumber Messages built with the ``cucumber-messages`` package's own types (``Envelope``,
  ``Pickle``, ``TestCase``, ...) and serialized with its JSON converter, the NDJSON that cucumber
  runners write.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from gapfinder.suite import read_suite
from gapfinder.suite.cucumber import read_cucumber_messages

FEATURE = """Feature: Borrowing
  Scenario: Reserve a drill
    Given I sign in as "maria"
    When I search the catalogue for "drill"
    And I reserve the tool
    Then I see the reservation

  Scenario: Reserve a saw
    Given I sign in as "ana"
    When I search the catalogue for "saw"
    And I reserve the tool
    Then I see the reservation

  Scenario: Pay by card
    Given I sign in as "ana"
    When I pay the deposit by card
    Then the deposit is paid
"""

STEPS = """
import pytest
from pytest_bdd import given, parsers, scenarios, then, when

scenarios("borrowing.feature")


def pytest_bdd_apply_tag(tag, function):
    return None


@given(parsers.parse('I sign in as "{name}"'))
def sign_in(name):
    pass


@when(parsers.parse('I search the catalogue for "{what}"'))
def search(what):
    pass


@when("I reserve the tool")
def reserve():
    pass


@then("I see the reservation")
def see():
    pass


@when("I pay the deposit by card")
def pay():
    raise RuntimeError("the card gateway is down")


@then("the deposit is paid")
def paid():
    pass
"""


def test_pytest_bdd_cucumber_json(tmp_path: Path) -> None:
    (tmp_path / "borrowing.feature").write_text(FEATURE)
    (tmp_path / "test_borrowing.py").write_text(STEPS)
    report = tmp_path / "cucumber.json"
    done = subprocess.run(
        [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", f"--cucumberjson={report}"],
        cwd=tmp_path,
        capture_output=True,
        text=True,
    )
    assert done.returncode == 1, done.stdout + done.stderr  # the card scenario fails on purpose
    traces = {t.name: t for t in read_suite([report]).traces}
    assert {n: t.outcome for n, t in traces.items()} == {
        "Reserve a drill": "passed",
        "Reserve a saw": "passed",
        "Pay by card": "failed",
    }
    # steps that ran, named once per step definition; the assertion step exercises nothing
    assert traces["Reserve a drill"].steps == [
        'I sign in as "{}"',
        'I search the catalogue for "{}"',
        "I reserve the tool",
    ]
    assert traces["Reserve a saw"].steps == traces["Reserve a drill"].steps
    assert traces["Pay by card"].steps == ['I sign in as "{}"']  # the failing step and those after it did not run


def test_cucumber_jvm_shaped_json_with_a_background_and_unrun_steps(tmp_path: Path) -> None:
    """Shape of cucumber-jvm's JSON formatter (background as its own element before each scenario,
    ``undefined``/``skipped`` statuses), written from memory of its output."""
    step = lambda keyword, name, status, where="": {  # noqa: E731
        "keyword": keyword,
        "name": name,
        "line": 3,
        "match": {"location": where} if where else {},
        "result": {"status": status, "duration": 1000},
    }
    background = {
        "type": "background",
        "keyword": "Background",
        "name": "",
        "steps": [step("Given ", 'I sign in as "ana"', "passed", "Steps.signIn(String)")],
    }
    data = [
        {
            "uri": "classpath:features/borrowing.feature",
            "name": "Borrowing",
            "keyword": "Feature",
            "tags": [{"name": "@borrowing", "line": 1}],
            "elements": [
                background,
                {
                    "type": "scenario",
                    "keyword": "Scenario",
                    "name": "Waitlist",
                    "tags": [{"name": "@later", "line": 5}],
                    "steps": [step("When ", "I join the waitlist", "undefined"), step("Then ", "I am told", "skipped")],
                },
                background,
                {
                    "type": "scenario",
                    "keyword": "Scenario",
                    "name": "Reserve",
                    "steps": [step("When ", "I reserve the tool", "passed", "Steps.reserve()")],
                },
            ],
        }
    ]
    path = tmp_path / "cucumber.json"
    path.write_text(json.dumps(data, indent=2))
    traces = {t.name: t for t in read_suite([path]).traces}
    assert traces["Waitlist"].outcome == "skipped" and traces["Waitlist"].tags == ("@borrowing", "@later")
    assert traces["Waitlist"].steps == ['I sign in as "{}"']
    assert traces["Reserve"].outcome == "passed"
    assert traces["Reserve"].steps == ['I sign in as "{}"', "I reserve the tool"]
    assert traces["Reserve"].test_id == "classpath:features/borrowing.feature::Reserve"


messages = pytest.importorskip("cucumber_messages")


def _envelopes() -> list[object]:
    m = messages
    stamp = m.Timestamp(seconds=1_767_225_600, nanos=0)
    later = m.Timestamp(seconds=1_767_225_601, nanos=500_000_000)
    steps = [
        m.PickleStep(ast_node_ids=["s1"], id="ps1", text='I sign in as "maria"', type=m.PickleStepType.context),
        m.PickleStep(ast_node_ids=["s2"], id="ps2", text="I reserve the tool", type=m.PickleStepType.action),
        m.PickleStep(ast_node_ids=["s3"], id="ps3", text="I see the reservation", type=m.PickleStepType.outcome),
    ]
    pickle = m.Pickle(
        ast_node_ids=["sc1"], id="p1", language="en", name="Reserve a drill", steps=steps, tags=[], uri="b.feature"
    )
    pattern = m.StepDefinitionPattern
    definitions = [
        m.StepDefinition(
            id="d1",
            pattern=pattern(source="I sign in as {string}", type=m.StepDefinitionPatternType.cucumber_expression),
            source_reference=m.SourceReference(uri="steps.js"),
        ),
        m.StepDefinition(
            id="d2",
            pattern=pattern(source="I reserve the tool", type=m.StepDefinitionPatternType.cucumber_expression),
            source_reference=m.SourceReference(uri="steps.js"),
        ),
        m.StepDefinition(
            id="d3",
            pattern=pattern(source="I see the reservation", type=m.StepDefinitionPatternType.cucumber_expression),
            source_reference=m.SourceReference(uri="steps.js"),
        ),
    ]
    test_steps = [
        m.TestStep(id=f"t{i}", pickle_step_id=f"ps{i}", step_definition_ids=[f"d{i}"], step_match_arguments_lists=[])
        for i in (1, 2, 3)
    ]
    result = m.TestStepResult(duration=m.Duration(seconds=0, nanos=1000), status=m.TestStepResultStatus.passed)
    out: list[object] = [
        m.Envelope(pickle=pickle),
        *[m.Envelope(step_definition=d) for d in definitions],
        m.Envelope(test_case=m.TestCase(id="c1", pickle_id="p1", test_steps=test_steps)),
        m.Envelope(test_case_started=m.TestCaseStarted(attempt=0, id="r1", test_case_id="c1", timestamp=stamp)),
    ]
    for i in (1, 2, 3):
        finished = m.TestStepFinished(
            test_case_started_id="r1", test_step_id=f"t{i}", test_step_result=result, timestamp=stamp
        )
        out.append(m.Envelope(test_step_finished=finished))
    out.append(
        m.Envelope(
            test_case_finished=m.TestCaseFinished(test_case_started_id="r1", timestamp=later, will_be_retried=False)
        )
    )
    return out


def test_cucumber_messages_from_the_packages_types(tmp_path: Path) -> None:
    from cucumber_messages.json_converter import JsonDataclassConverter

    converter = JsonDataclassConverter(module_scope=messages)
    path = tmp_path / "messages.ndjson"
    path.write_text("".join(json.dumps(converter.to_dict(e)) + "\n" for e in _envelopes()))
    report = read_suite([path])  # recognised by content
    (trace,) = report.traces
    assert trace.kind == "cucumber" and trace.outcome == "passed"
    assert trace.test_id == "b.feature::Reserve a drill"
    # named by step definition pattern; the assertion (Outcome) step exercises nothing
    assert trace.steps == ["I sign in as {string}", "I reserve the tool"]
    assert trace.started == 1_767_225_600 and trace.finished == pytest.approx(1_767_225_601.5)
    assert read_cucumber_messages(path).traces[0].steps == trace.steps
