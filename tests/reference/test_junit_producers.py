"""JUnit XML as real producers write it: pytest's own writer (both families) and a Surefire-style report.

Sources:
- pytest's ``--junitxml`` writer (``_pytest/junitxml.py``), run inside the test in a subprocess with
  ``junit_family=legacy`` (xunit1) and ``junit_family=xunit2``, on a module with passing, failing,
  erroring, skipped and xfailed tests: its report is the reference for outcomes and windows.
- ``tests/data/suite/surefire/``: hand-written in the shape of Maven Surefire's
  ``TEST-<class>.xml`` (the ``surefire-test-report-3.0.xsd`` schema: a ``<testsuite>`` root with
  ``<properties>``, ``<failure>``, ``<error>`` and ``<skipped>`` children of ``<testcase>``); the
  shape is written from memory of Surefire's output, not copied from a real report.
"""

from __future__ import annotations

import itertools
import subprocess
import sys
from pathlib import Path

import pytest

from gapfinder.suite import read_suite
from gapfinder.suite.junit import read_junit_xml

DATA = Path(__file__).resolve().parent.parent / "data" / "suite"

MODULE = """
import json
import time

import pytest


def test_passes(record_property):
    record_property("steps", json.dumps(["login", "search_catalogue"]))
    time.sleep(0.05)


def test_fails():
    assert 1 == 2


@pytest.fixture
def broken():
    raise RuntimeError("no database")


def test_errors(broken):
    pass


@pytest.mark.skip(reason="later")
def test_skipped():
    pass


@pytest.mark.xfail(reason="known bug")
def test_xfailed():
    assert False
"""


@pytest.mark.parametrize("family", ["legacy", "xunit2"])
def test_pytest_junitxml_outcomes_and_windows(tmp_path: Path, family: str) -> None:
    (tmp_path / "test_shed.py").write_text(MODULE)
    report = tmp_path / "report.xml"
    done = subprocess.run(
        [
            sys.executable,
            "-m",
            "pytest",
            "-q",
            "-p",
            "no:cacheprovider",
            "-o",
            f"junit_family={family}",
            f"--junitxml={report}",
            "test_shed.py",
        ],
        cwd=tmp_path,
        capture_output=True,
        text=True,
    )
    assert done.returncode == 1, done.stdout + done.stderr  # one test fails on purpose
    traces = {t.test_id: t for t in read_junit_xml(report).traces}
    assert {k: t.outcome for k, t in traces.items()} == {
        "test_shed::test_passes": "passed",
        "test_shed::test_fails": "failed",
        "test_shed::test_errors": "failed",
        "test_shed::test_skipped": "skipped",
        "test_shed::test_xfailed": "skipped",
    }
    passes = traces["test_shed::test_passes"]
    if family == "legacy":  # xunit2 has no <properties> inside a test case
        assert passes.steps == ["login", "search_catalogue"]
    assert passes.started is not None and passes.finished is not None
    assert passes.finished - passes.started >= 0.05
    # cases run one after another: each window starts where the previous one ended
    ordered = sorted(traces.values(), key=lambda t: t.started or 0)
    for before, after in itertools.pairwise(ordered):
        assert after.started == pytest.approx(before.finished)


def test_surefire_report() -> None:
    report = read_suite([DATA / "surefire"])
    outcomes = {t.test_id: t.outcome for t in report.traces}
    assert outcomes == {
        "org.toolshed.ReservationTest::reservesADrill": "passed",
        "org.toolshed.ReservationTest::refusesAnExpiredCard": "failed",
        "org.toolshed.ReservationTest::timesOutOnSlowPayments": "failed",
        "org.toolshed.ReservationTest::waitlistsABusyTool": "skipped",
    }
    assert all(t.steps == [] and t.started is None for t in report.traces)  # Surefire writes no timestamp
