"""One test per suite reader on small hand-written files (tests/data/suite), good and malformed."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from gapfinder.errors import ConfigError, InputError
from gapfinder.sources.formats import SourceFiles
from gapfinder.suite import SuiteOptions, read_suite
from gapfinder.suite.catalog import read_catalog
from gapfinder.suite.gherkin import StepPhrases, read_feature_file
from gapfinder.suite.junit import read_junit_xml
from gapfinder.suite.otlp import read_otlp_json
from gapfinder.suite.traces import read_trace_files

DATA = Path(__file__).resolve().parent / "data" / "suite"


def steps_of(report: object) -> dict[str, list[str]]:
    return {t.test_id: t.steps for t in report.traces}  # type: ignore[attr-defined]


def test_catalog() -> None:
    assert steps_of(read_catalog(DATA / "catalog.yaml")) == {
        "test_browse": ["login", "search_catalogue", "view_tool"],
        "test_extend": ["login", "Open Notifications", "extend my loan"],
    }


@pytest.mark.parametrize(
    ("text", "needle"),
    [
        ("tests: [{id: a}]", "entry 1 needs `id` and `steps`"),
        ("tests: [{id: a, steps: login}]", "must be a list"),
        ("tests: [{id: a, steps: [x]}, {id: a, steps: [y]}]", "appears twice"),
        ("nothing: here", "top-level `tests:`"),
        ("tests: [\n  - {id: a", "not valid YAML"),
    ],
)
def test_catalog_malformed(tmp_path: Path, text: str, needle: str) -> None:
    path = tmp_path / "bad.yaml"
    path.write_text(text)
    with pytest.raises(InputError, match=needle) as error:
        read_catalog(path)
    assert str(path) in str(error.value)


def test_trace_csv_with_mapped_columns_is_ordered_by_step() -> None:
    source = SourceFiles("csv", (str(DATA / "traces.csv"),), str(DATA / "traces.csv"))
    report = read_trace_files(source, {"test_id": "case", "step_no": "seq", "event": "action"})
    assert steps_of(report) == {"t_other": ["login"], "t_pay": ["login", "search_catalogue", "pay_deposit_card"]}


def test_trace_csv_without_the_mapping_names_the_missing_column() -> None:
    source = SourceFiles("csv", (str(DATA / "traces.csv"),), str(DATA / "traces.csv"))
    with pytest.raises(InputError, match="--map test_id=COLUMN"):
        read_trace_files(source)


def test_gherkin_with_phrases_expands_outlines() -> None:
    report = read_feature_file(DATA / "loans.feature", StepPhrases.load(DATA / "phrases.yaml"), label="loans.feature")
    assert steps_of(report) == {
        "loans.feature::Extend a loan": ["login", "open_notifications", "extend_loan"],
        "loans.feature::Pay the deposit": ["login", "pay_deposit_card"],
        "loans.feature::Pay the deposit #2": ["login", "pay_deposit_voucher"],
    }
    assert report.unmatched_phrases == {}
    assert report.skipped == {"assertion steps (Then …), which exercise no feature": 1}
    assert report.ignored_phrases == {"the app is open": 1}
    kept = read_feature_file(DATA / "loans.feature", StepPhrases.load(DATA / "phrases.yaml"), keep_assertions=True)
    assert kept.unmatched_phrases == {"I see the new return date": 1}


def test_gherkin_malformed(tmp_path: Path) -> None:
    path = tmp_path / "bad.feature"
    path.write_text("this is not Gherkin\nFeature: x\n")
    with pytest.raises(InputError, match=r"bad.feature:1:1: not valid Gherkin: expected: .*got 'this is not Gherkin'"):
        read_feature_file(path)


def test_steps_map_with_a_bad_expression(tmp_path: Path) -> None:
    path = tmp_path / "p.yaml"
    path.write_text('steps:\n  "I (pay": pay\n')
    with pytest.raises(ConfigError, match="not a valid regular expression"):
        StepPhrases.load(path)


def test_junit_xml() -> None:
    report = read_junit_xml(DATA / "report.xml")
    assert steps_of(report) == {
        "tests.test_loans::test_extend": ["login", "open_notifications", "extend_loan"],
        "tests.test_loans::test_return": ["login", "return_tool"],
        "tests.test_misc::test_without_steps": [],
    }
    assert {t.outcome for t in report.traces} == {"passed"}


@pytest.mark.parametrize(
    ("text", "needle"),
    [
        ("<testsuites><testcase name='a'>", "not well-formed XML"),
        ("<html/>", "root element is <html>"),
        (
            "<testsuite><testcase name='a'><properties>"
            "<property name='steps' value='[1'/></properties></testcase></testsuite>",
            "not a JSON list",
        ),
        ("<testsuite></testsuite>", "holds no test case"),
        ('<!DOCTYPE x [<!ENTITY a "aaaa">]><testsuite><testcase name="&a;"/></testsuite>', "refused unsafe XML"),
    ],
)
def test_junit_malformed(tmp_path: Path, text: str, needle: str) -> None:
    path = tmp_path / "bad.xml"
    path.write_text(text)
    with pytest.raises(InputError, match=needle):
        read_junit_xml(path)


def test_otlp_json_orders_spans_by_start_and_counts_untagged() -> None:
    report = read_otlp_json(DATA / "spans.json")
    assert steps_of(report) == {"test_search": ["login", "search_catalogue"]}
    assert report.skipped == {"spans of no test (no test.case.name on them or a parent)": 1}


def test_otlp_without_test_names(tmp_path: Path) -> None:
    path = tmp_path / "x.json"
    path.write_text('{"resourceSpans": [{"scopeSpans": [{"spans": [{"name": "a"}]}]}]}')
    with pytest.raises(InputError, match="no span carries"):
        read_otlp_json(path)


def test_read_suite_mixes_sources_and_separates_a_test_in_two(tmp_path: Path) -> None:
    report = read_suite([DATA / "catalog.yaml", DATA / "report.xml", DATA / "spans.json", DATA / "catalog.yaml"])
    assert {t.kind for t in report.traces} == {"catalog", "junit", "otlp"}
    assert len(report.traces) == 6  # a file given twice is read once
    copy = tmp_path / "again.yaml"
    copy.write_text((DATA / "catalog.yaml").read_text())
    both = read_suite([DATA / "catalog.yaml", copy], SuiteOptions())
    ids = sorted(t.test_id for t in both.traces)
    assert len(ids) == len(set(ids)) == 4
    assert f"{copy}::test_browse" in ids
    assert any("appear in two sources" in p for p in both.problems)


def test_pytest_plugin_writes_a_trace_that_reads_back(tmp_path: Path) -> None:
    test_file = tmp_path / "test_app.py"
    test_file.write_text(
        "def test_extend(feature_trace):\n"
        "    feature_trace('login')\n"
        "    feature_trace('open_notifications')\n"
        "    feature_trace('extend_loan')\n\n"
        "def test_plain():\n"
        "    assert True\n"
    )
    trace = tmp_path / "out" / "trace.ndjson"
    done = subprocess.run(
        [
            sys.executable,
            "-m",
            "pytest",
            "-q",
            "-p",
            "gapfinder.pytest_plugin",
            "--gapfinder-trace",
            str(trace),
            str(test_file),
        ],
        cwd=tmp_path,
        capture_output=True,
        text=True,
    )
    assert done.returncode == 0, done.stdout + done.stderr
    report = read_suite([trace])
    assert steps_of(report) == {
        "test_app.py::test_extend": ["login", "open_notifications", "extend_loan"],
        "test_app.py::test_plain": [],
    }
    assert all(t.started is not None and t.finished is not None and t.finished >= t.started for t in report.traces)


def test_pretty_printed_otlp_in_the_official_examples_shape() -> None:
    """Shaped like open-telemetry/opentelemetry-proto's examples/trace.json (pretty-printed, hex ids,
    integer nanoseconds, scope attributes); the content is our own."""
    report = read_suite([DATA / "otlp_pretty_trace.json"])
    (trace,) = report.traces
    assert trace.test_id == "tests/e2e/test_borrow.py::test_reserve_a_drill"
    assert trace.steps == ["search_catalogue", "reserve_tool", "check_stock"]
    assert trace.outcome == "passed" and trace.finished - trace.started == 3.0


def test_a_junit_report_lends_its_outcomes_to_the_scenarios_it_ran(tmp_path: Path) -> None:
    """Cucumber runners write one JUnit case per scenario: class = feature name, name = scenario name."""
    feature = tmp_path / "features" / "loans.feature"
    feature.parent.mkdir()
    feature.write_text((DATA / "loans.feature").read_text())
    report = tmp_path / "TEST-loans.xml"
    report.write_text(
        '<testsuite name="Loans" timestamp="2026-07-01T09:00:00Z">'
        '<testcase classname="Loans" name="Extend a loan" time="1.5"><failure message="x"/></testcase>'
        '<testcase classname="Loans" name="Pay the deposit" time="0.5"/>'
        "</testsuite>"
    )
    read = read_suite([tmp_path / "features", report], SuiteOptions(steps_map=str(DATA / "phrases.yaml")))
    by_name = {(t.name, t.kind): t for t in read.traces}
    assert read.joined_results == 2
    assert by_name[("Extend a loan", "gherkin")].outcome == "failed"
    assert by_name[("Extend a loan", "gherkin")].steps == ["login", "open_notifications", "extend_loan"]
    deposits = [t.outcome for t in read.traces if t.name == "Pay the deposit"]
    assert deposits == ["passed", "unknown"]  # the report names the outline once: its first row
    assert not any(t.kind == "junit" for t in read.traces)  # joined, not listed twice
    # the outline's second row had no case in the report: it keeps the text's unknown outcome
    assert sorted(t.outcome for t in read.traces) == ["failed", "passed", "unknown"]


def test_the_plugin_merges_pytest_xdist_workers(tmp_path: Path) -> None:
    pytest.importorskip("xdist")
    (tmp_path / "test_many.py").write_text(
        "import pytest\n"
        "from gapfinder.pytest_plugin import record_step\n"
        "@pytest.mark.parametrize('n', range(8))\n"
        "def test_step(n):\n"
        "    record_step(f'event_{n}')\n"
    )
    run_file = tmp_path / "run.ndjson"
    done = subprocess.run(
        [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "-n", "2", "--gapfinder-trace", str(run_file)],
        cwd=tmp_path,
        capture_output=True,
        text=True,
    )
    assert done.returncode == 0, done.stdout + done.stderr
    steps = {t.test_id: t.steps for t in read_suite([run_file]).traces}
    assert steps == {f"test_many.py::test_step[{n}]": [f"event_{n}"] for n in range(8)}
