"""Folders from a test repository: files taken by content, unreadable ones skipped with one line each."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from gapfinder.cli import cli
from gapfinder.errors import InputError
from gapfinder.suite import SuiteOptions, read_suite
from gapfinder.suite.discover import sniff_kind
from gapfinder.suite.gherkin import step_template
from tests.helpers import SAMPLE

REPO = Path(__file__).resolve().parent / "data" / "suite" / "repo"


@pytest.fixture
def ws(tmp_path: Path, sample_workspace: Path) -> str:
    """A private copy of the profiled sample workspace."""
    target = tmp_path / "w.duckdb"
    shutil.copy(sample_workspace, target)
    return str(target)


def test_a_repository_folder_reads_what_it_can_and_names_what_it_skips() -> None:
    report = read_suite([REPO])
    ids = [t.test_id for t in report.traces]
    assert len(ids) == len(set(ids)) == 9
    # ids carry the path relative to the folder given, so same-named scenarios of two files differ
    assert "features/borrowing.feature::Reserve a drill" in ids
    assert "features/account/profile.feature::Reserve a drill" in ids
    # hidden folders and fixture folders are not read; other files are counted, not read
    assert not any("hidden" in i or "fixtures" in i for i in ids)
    assert report.files_ignored == 1  # config.yml has no `tests:` key
    assert report.files_read == {"gherkin": 4}
    problems = "\n".join(report.problems)
    assert "broken.feature:5:5: not valid Gherkin: inconsistent cell count" in problems
    assert "draft.feature:1:1: the feature file holds no scenario" in problems
    assert "not_utf8.feature:2:16: not UTF-8 text" in problems
    assert len(report.problems) == 3


def test_strict_fails_on_the_first_unreadable_file() -> None:
    with pytest.raises(InputError, match=r"broken\.feature:5:5"):
        read_suite([REPO], SuiteOptions(strict=True))


def test_an_encoding_header_is_honoured() -> None:
    report = read_suite([REPO / "features" / "latin.feature"])
    assert [t.steps for t in report.traces] == [["I order a café"]]


def test_steps_become_templates_and_assertions_exercise_nothing() -> None:
    by_id = {t.test_id: t for t in read_suite([REPO]).traces}
    drill = by_id["features/borrowing.feature::Reserve a drill"]
    assert drill.steps == ['I sign in as "{}"', 'I search the catalogue for "{}"', "I reserve the tool"]
    assert drill.step_types == ["context", "action", "action"]
    assert by_id["features/borrowing.feature::Pay the deposit #3"].tags == ("@borrowing", "@slow")


@pytest.mark.parametrize(
    ("text", "template"),
    [
        ('I follow "Terms and conditions"', 'I follow "{}"'),
        ("I wait 30 seconds", "I wait {} seconds"),
        ("I pay 12.50 at 10:30", "I pay {} at {}"),
        ("I open <page>", "I open <{}>"),
        ("I'm on the 'home' page", "I'm on the '{}' page"),
        ("version2 loads", "version2 loads"),
    ],
)
def test_step_templates(text: str, template: str) -> None:
    assert step_template(text) == template


def test_nothing_usable_is_one_error_naming_the_file(tmp_path: Path) -> None:
    bad = tmp_path / "x.feature"
    bad.write_text("Feature: only a title\n")
    with pytest.raises(InputError, match=r"x.feature:1:1: the feature file holds no scenario"):
        read_suite([tmp_path])
    other = tmp_path / "more.feature"
    other.write_text("not gherkin\n")
    with pytest.raises(InputError, match=r"no test could be read: 2 file\(s\) skipped"):
        read_suite([tmp_path])


def test_a_folder_of_nothing_says_so(tmp_path: Path) -> None:
    (tmp_path / "data.json").write_text('{"a": 1}')
    with pytest.raises(InputError, match="no test source found"):
        read_suite([tmp_path])


@pytest.mark.parametrize(
    ("name", "text", "kind"),
    [
        ("r.xml", '<?xml version="1.0"?>\n<!-- by surefire -->\n<testsuite name="x"/>', "junit"),
        ("r.xml", "<project><modelVersion/></project>", None),
        ("t.json", '{\n  "resourceSpans": []\n}', "otlp"),
        ("c.json", '[{"uri": "a.feature", "elements": []}]', "cucumber-json"),
        ("m.ndjson", '{"meta": {"protocolVersion": "24"}}\n{"source": {}}\n', "cucumber-messages"),
        ("p.json", '{"name": "left-pad", "version": "1.0.0"}', None),
        ("t.ndjson", '{"test_id": "a", "event": "login", "step_no": 1}\n', "trace-ndjson"),
        ("c.yaml", "tests:\n  - id: a\n    steps: [login]\n", "catalog"),
        ("ci.yml", "jobs:\n  test: {}\n", None),
        ("t.csv", "test_id,step_no,event\na,1,login\n", "trace-csv"),
        ("data.csv", "name,price\ndrill,20\n", None),
    ],
)
def test_files_are_taken_by_content(tmp_path: Path, name: str, text: str, kind: str | None) -> None:
    path = tmp_path / name
    path.write_text(text)
    assert sniff_kind(path) == kind


def test_cli_warns_once_per_skipped_file_and_still_stores_the_rest(tmp_path: Path, ws: str) -> None:
    result = CliRunner().invoke(cli, ["suite", str(REPO), "-w", ws, "--format", "json"])
    assert result.exit_code == 0, result.output
    warnings = [ln for ln in result.stderr.splitlines() if ln.startswith("gapfinder: warning: ")]
    assert len(warnings) == 3
    assert all("Traceback" not in ln for ln in result.stderr.splitlines())


def test_tags_and_outcomes_decide_what_counts(ws: str) -> None:
    import json

    stored = CliRunner().invoke(cli, ["suite", str(REPO), "-w", ws, "--format", "json"])
    summary = json.loads(stored.stdout)
    assert summary["left_out"] == {"excluded by --tags": 1}  # the @wip scenario
    assert summary["counted_test_count"] == summary["test_count"] - 1
    slow_too = CliRunner().invoke(
        cli, ["suite", str(REPO), "-w", ws, "--format", "json", "--tags", "not @wip and not @slow"]
    )
    assert json.loads(slow_too.stdout)["left_out"] == {"excluded by --tags": 2}
    everything = CliRunner().invoke(cli, ["suite", str(REPO), "-w", ws, "--format", "json", "--count-all"])
    again = json.loads(everything.stdout)
    assert again["left_out"] == {} and again["replaced"]["tests"] == 9
    bad = CliRunner().invoke(cli, ["suite", str(REPO), "-w", ws, "--tags", "not and"])
    assert bad.exit_code == 2 and "--tags 'not and': not a Cucumber tag expression" in bad.stderr


def test_failed_and_skipped_tests_are_left_out_and_coverage_says_so(tmp_path: Path, ws: str) -> None:
    import json

    report = tmp_path / "junit.xml"
    report.write_text(
        "<testsuite>"
        '<testcase classname="t" name="ok"><properties><property name="steps" value=\'["login"]\'/></properties>'
        "</testcase>"
        '<testcase classname="t" name="broken"><failure message="x"/><properties>'
        '<property name="steps" value=\'["login", "search_catalogue"]\'/></properties></testcase>'
        '<testcase classname="t" name="later"><skipped/></testcase>'
        "</testsuite>"
    )
    shutil.copy(SAMPLE / "tests" / "suite_traces.csv", tmp_path / "traces.csv")
    stored = CliRunner().invoke(cli, ["suite", str(report), "-w", ws, "--format", "json"])
    assert stored.exit_code == 0, stored.output
    summary = json.loads(stored.stdout)
    assert summary["left_out"] == {"failed": 1, "skipped": 1}
    coverage = CliRunner().invoke(cli, ["coverage", "-w", ws, "--format", "json"])
    result = json.loads(coverage.stdout)
    assert result["test_count"] == 1
    assert result["suite"]["left_out"] == {"failed": 1, "skipped": 1}
    table = CliRunner().invoke(cli, ["coverage", "-w", ws])
    assert "left out" in table.stdout and "failed" in table.stdout


def test_a_suite_of_only_failed_tests_is_stored_and_coverage_says_why_it_is_empty(tmp_path: Path, ws: str) -> None:
    report = tmp_path / "r.xml"
    report.write_text('<testsuite><testcase name="a"><failure/></testcase></testsuite>')
    stored = CliRunner().invoke(cli, ["suite", str(report), "-w", ws])
    assert stored.exit_code == 0 and "none of the 1 test(s) read counts" in stored.stderr
    coverage = CliRunner().invoke(cli, ["coverage", "-w", ws])
    assert coverage.exit_code == 2 and "--count-all" in coverage.stderr
