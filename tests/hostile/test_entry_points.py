"""A corpus of malformed and hostile inputs across every entry point.

Each case is built by code here (no committed fixtures) and must end with: exit code 2, exactly
one line on stderr, no traceback, no raw user id on stdout or stderr, the pre-existing workspace
logically unchanged (every table's contents compared), and nothing written outside the case's
own folder.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
from collections.abc import Callable
from pathlib import Path

import duckdb
import pytest
from click.testing import CliRunner

from gapfinder.cli import cli
from tests.helpers import SAMPLE

SECRET = "carol.secret@private.example"  # a raw user id that must never be echoed

Case = Callable[[Path, str], list[str]]  # (folder, workspace) -> argv


def _csv(path: Path, text: str) -> str:
    path.write_text(text, encoding="utf-8")
    return str(path)


def _linked_demo_blocks(folder: Path) -> str:
    """A demo --out folder whose block folder is a link to the folder outside the case."""
    out = folder / "d"
    out.mkdir()
    (out / ".gapfinder-demo-blocks").symlink_to(folder.parent / "outside", target_is_directory=True)
    return str(out)


def _bytes(path: Path, data: bytes) -> str:
    path.write_bytes(data)
    return str(path)


def _long_csv(folder: Path, tail: str) -> str:
    lines = ["user_id,ts,event"] + [
        f"u{n % 9}@x.example,2026-01-0{1 + n % 9}T10:00:00Z,ev{n % 5}" for n in range(25_000)
    ]
    return _csv(folder / "long.csv", "\n".join(lines) + "\n" + tail)


def _catalog(folder: Path, text: str, name: str = "catalog.yaml") -> str:
    return _csv(folder / name, text)


def _add_vanished(folder: Path, ws: str) -> None:
    """Store a suite read from a file that is then deleted, so that `--add` must read it again."""
    from gapfinder.suite import load_suite
    from gapfinder.workspace import Workspace

    gone = folder / "gone.yaml"
    gone.write_text("tests:\n  - {id: t, steps: [login]}\n")
    with Workspace(ws) as workspace:
        load_suite(workspace, [gone])
    gone.unlink()


def _plan_ws(ws: str) -> str:
    """The workspace with a stored plan (for export cases)."""
    from gapfinder.plan import PlanOptions, make_plan
    from gapfinder.workspace import Workspace

    with Workspace(ws) as w:
        make_plan(w, PlanOptions(budget=2))
    return ws


CASES: dict[str, Case] = {
    # --- effort, families, plan --sample, check --max-divergence ---
    "effort-critical-unknown-feature": lambda f, w: ["effort", "-w", w, "--critical", "no_such_feature=2"],
    "effort-critical-not-a-number": lambda f, w: ["effort", "-w", w, "--critical", "login=many"],
    "effort-minimums-above-the-suite": lambda f, w: ["effort", "-w", w, "--tests", "2", "--critical", "login=5"],
    "families-min-paths-one": lambda f, w: ["families", "-w", w, "--min-paths", "1"],
    "plan-sample-zero": lambda f, w: ["plan", "-w", w, "--sample", "0"],
    "check-max-divergence-negative": lambda f, w: ["check", "-w", w, "--max-divergence", "-0.5"],
    # --- the Spark engine's options (refused before Spark starts) ---
    "spark-master-without-engine": lambda f, w: [
        "profile",
        str(SAMPLE / "field"),
        "-w",
        w,
        "--spark-master",
        "local[2]",
    ],
    "spark-conf-malformed": lambda f, w: [
        "profile",
        str(SAMPLE / "field"),
        "-w",
        w,
        "--engine",
        "spark",
        "--spark-conf",
        f"{SECRET}",
    ],
    "spark-staging-remote": lambda f, w: [
        "profile",
        str(SAMPLE / "field"),
        "-w",
        w,
        "--engine",
        "spark",
        "--spark-staging",
        "s3a://bucket/stage",
    ],
    "spark-staging-missing": lambda f, w: [
        "profile",
        str(SAMPLE / "field"),
        "-w",
        w,
        "--engine",
        "spark",
        "--spark-staging",
        str(f / "no-such-folder"),
    ],
    # --- telemetry readers (profile) ---
    "csv-empty": lambda f, w: ["profile", _csv(f / "e.csv", ""), "-w", w],
    "csv-header-only": lambda f, w: ["profile", _csv(f / "h.csv", "user_id,ts,event\n"), "-w", w],
    "csv-bad-row-past-sniffing": lambda f, w: [
        "profile",
        _long_csv(f, f"{SECRET},2026-01-01T00:00:00Z,a,extra,x\n"),
        "-w",
        w,
    ],
    "csv-unterminated-quote": lambda f, w: ["profile", _long_csv(f, f'{SECRET},"2026-01-01\n'), "-w", w],
    "csv-not-utf8": lambda f, w: ["profile", _bytes(f / "b.csv", b"user_id,ts,event\ncarol\xff\xfe,1,a\n"), "-w", w],
    "ndjson-malformed": lambda f, w: [
        "profile",
        _csv(f / "m.ndjson", f'{{"user_id":"{SECRET}","ts":1}}\n{{oops\n'),
        "-w",
        w,
    ],
    "ndjson-not-utf8": lambda f, w: [
        "profile",
        _bytes(f / "b.ndjson", b'{"user_id":"\xff","ts":1,"event":"a"}\n'),
        "-w",
        w,
    ],
    "parquet-garbage": lambda f, w: ["profile", _bytes(f / "g.parquet", b"PAR1 not really parquet"), "-w", w],
    "missing-required-column": lambda f, w: [
        "profile",
        _csv(f / "c.csv", f"who,ts,event\n{SECRET},1767225600,a\n"),
        "-w",
        w,
    ],
    "map-to-missing-column": lambda f, w: [
        "profile",
        _csv(f / "c.csv", "user_id,ts,event\nu,1767225600,a\n"),
        "-w",
        w,
        "--map",
        "user_id=nope",
    ],
    "map-without-equals": lambda f, w: [
        "profile",
        _csv(f / "c.csv", "user_id,ts,event\nu,1767225600,a\n"),
        "-w",
        w,
        "--map",
        "user_id",
    ],
    "map-unknown-canonical": lambda f, w: [
        "profile",
        _csv(f / "c.csv", "user_id,ts,event\nu,1767225600,a\n"),
        "-w",
        w,
        "--map",
        "colour=event",
    ],
    "unknown-extension": lambda f, w: ["profile", _csv(f / "events.xlsx", "x"), "-w", w],
    "mixed-formats": lambda f, w: [
        "profile",
        _csv(f / "a.csv", "user_id,ts,event\n"),
        _csv(f / "b.ndjson", "{}\n"),
        "-w",
        w,
    ],
    "no-such-file": lambda f, w: ["profile", str(f / "missing.parquet"), "-w", w],
    "glob-matches-nothing": lambda f, w: ["profile", str(f / "*.parquet"), "-w", w],
    "empty-folder": lambda f, w: ["profile", str((f / "empty").mkdir() or f / "empty"), "-w", w],
    "idle-nan": lambda f, w: ["profile", "x.csv", "-w", w, "--idle", "nan"],
    "idle-inf": lambda f, w: ["profile", "x.csv", "-w", w, "--idle", "inf"],
    "idle-negative": lambda f, w: ["profile", "x.csv", "-w", w, "--idle", "-5"],
    "ts-format-unknown-code": lambda f, w: [
        "profile",
        _csv(f / "c.csv", "user_id,ts,event\nu,01/02/2026,a\n"),
        "-w",
        w,
        "--ts-format",
        "%Q",
    ],
    "ts-format-on-typed-parquet": lambda f, w: [
        "profile",
        "sample_telemetry/field",
        "-w",
        w,
        "--ts-format",
        "%d/%m/%Y",
    ],
    "ts-unit-bogus": lambda f, w: ["profile", "x.csv", "-w", w, "--ts-unit", "days"],
    "memory-limit-bogus": lambda f, w: [
        "profile",
        _csv(f / "c.csv", "user_id,ts,event\nu,1767225600,a\n"),
        "-w",
        w,
        "--memory-limit",
        "lots",
    ],
    "threads-zero": lambda f, w: ["profile", "x.csv", "-w", w, "--threads", "0"],
    "max-k-too-big": lambda f, w: [
        "profile",
        _csv(f / "c.csv", "user_id,ts,event\nu,1767225600,a\n"),
        "-w",
        w,
        "--max-k",
        "9",
    ],
    "config-missing": lambda f, w: ["profile", "x.csv", "-w", w, "--config", str(f / "none.toml")],
    "config-not-utf8": lambda f, w: [
        "profile",
        "x.csv",
        "-w",
        w,
        "--config",
        _bytes(f / "g.toml", b'[columns]\nuser_id = "\xff"\n'),
    ],
    "config-invalid-toml": lambda f, w: ["profile", "x.csv", "-w", w, "--config", _csv(f / "g.toml", "[columns\n")],
    "key-file-missing": lambda f, w: ["profile", "x.csv", "-w", w, "--key-file", str(f / "nokey")],
    "key-file-short": lambda f, w: ["profile", "x.csv", "-w", w, "--key-file", _csv(f / "k", "short")],
    "key-env-unset": lambda f, w: ["profile", "x.csv", "-w", w, "--key-env", "GAPFINDER_TEST_UNSET_KEY"],
    "no-usable-rows": lambda f, w: [
        "profile",
        _csv(f / "c.csv", "user_id,ts,event\n,1767225600,a\n,1767225601,b\n"),
        "-w",
        w,
    ],
    "timestamps-of-wrong-type": lambda f, w: [
        "profile",
        _csv(f / "c.ndjson", '{"user_id":"u","ts":true,"event":"a"}\n'),
        "-w",
        w,
    ],
    "workspace-is-a-folder": lambda f, w: [
        "profile",
        "sample_telemetry/field",
        "-w",
        str((f / "d.duckdb").mkdir() or f / "d.duckdb"),
    ],
    "workspace-garbage": lambda f, w: ["paths", "-w", _bytes(f / "g.duckdb", b"not a database" * 100)],
    "workspace-truncated": lambda f, w: ["paths", "-w", _bytes(f / "t.duckdb", Path(w).read_bytes()[:6000])],
    "workspace-folder-missing": lambda f, w: ["profile", "sample_telemetry/field", "-w", str(f / "no" / "ws.duckdb")],
    # --- test-suite readers (suite) ---
    "catalog-not-utf8": lambda f, w: [
        "suite",
        _bytes(f / "c.yaml", b"tests:\n  - id: \xff\n    steps: [a]\n"),
        "-w",
        w,
    ],
    "catalog-invalid-yaml": lambda f, w: ["suite", _catalog(f, "tests: [\n"), "-w", w],
    "catalog-without-tests": lambda f, w: ["suite", _catalog(f, "cases: []\n"), "-w", w],
    "catalog-entry-without-steps": lambda f, w: ["suite", _catalog(f, "tests:\n  - id: t1\n"), "-w", w],
    "catalog-duplicate-ids": lambda f, w: [
        "suite",
        _catalog(f, "tests:\n  - {id: t, steps: [a]}\n  - {id: t, steps: [b]}\n"),
        "-w",
        w,
    ],
    "gherkin-not-utf8": lambda f, w: [
        "suite",
        _bytes(f / "x.feature", b"Feature: f\n  Scenario: \xff\n    Given a\n"),
        "-w",
        w,
    ],
    "gherkin-invalid": lambda f, w: [
        "suite",
        _csv(f / "x.feature", "Feature: f\n  Scenario: s\n    Given a\nFeature: twice\n  Examples:\n"),
        "-w",
        w,
    ],
    "junit-malformed": lambda f, w: ["suite", _csv(f / "r.xml", "<testsuite><testcase name='a'>"), "-w", w],
    "junit-entity-expansion": lambda f, w: [
        "suite",
        _csv(
            f / "r.xml",
            '<?xml version="1.0"?><!DOCTYPE x [<!ENTITY a "aaaa"><!ENTITY b "&a;&a;&a;">]>'
            '<testsuite><testcase name="&b;"/></testsuite>',
        ),
        "-w",
        w,
    ],
    "otlp-not-utf8": lambda f, w: ["suite", _bytes(f / "t.json", b'{"resourceSpans": [{"x": "\xff"}]}'), "-w", w],
    "otlp-wrong-types": lambda f, w: ["suite", _csv(f / "t.json", '{"resourceSpans": [1, "two"]}\n'), "-w", w],
    "otlp-scope-not-list": lambda f, w: [
        "suite",
        _csv(f / "t.json", '{"resourceSpans": [{"scopeSpans": 7}]}\n'),
        "-w",
        w,
    ],
    "trace-step-not-numeric": lambda f, w: [
        "suite",
        _csv(f / "t.csv", "test_id,step_no,event\nt1,one,login\nt1,2,search\n"),
        "-w",
        w,
    ],
    "trace-duplicate-step": lambda f, w: [
        "suite",
        _csv(f / "t.csv", "test_id,step_no,event\nt1,1,login\nt1,1,search\n"),
        "-w",
        w,
    ],
    "trace-no-order-column": lambda f, w: ["suite", _csv(f / "t.csv", "test_id,event\nt1,login\n"), "-w", w],
    "steps-map-missing": lambda f, w: [
        "suite",
        _csv(f / "x.feature", "Feature: f\n  Scenario: s\n    Given a\n"),
        "-w",
        w,
        "--steps-map",
        str(f / "none.yaml"),
    ],
    "steps-map-catastrophic": lambda f, w: [
        "suite",
        _csv(f / "x.feature", "Feature: f\n  Scenario: s\n    Given " + "a" * 40 + "!\n"),
        "-w",
        w,
        "--steps-map",
        _csv(f / "m.yaml", 'steps:\n  "(a|aa)+$": login\n'),
    ],
    "steps-map-invalid-regex": lambda f, w: [
        "suite",
        _csv(f / "x.feature", "Feature: f\n  Scenario: s\n    Given a\n"),
        "-w",
        w,
        "--steps-map",
        _csv(f / "m.yaml", 'steps:\n  "(unclosed": login\n'),
    ],
    "aliases-invalid-yaml": lambda f, w: [
        "suite",
        "sample_telemetry/tests/suite_traces.csv",
        "-w",
        w,
        "--aliases",
        _csv(f / "a.yaml", "aliases: [\n"),
    ],
    "gherkin-unknown-encoding": lambda f, w: [
        "suite",
        _csv(f / "x.feature", "# encoding: klingon-8\nFeature: f\n  Scenario: s\n    Given a\n"),
        "-w",
        w,
    ],
    "gherkin-no-scenario": lambda f, w: ["suite", _csv(f / "x.feature", "Feature: only a title\n"), "-w", w],
    "folder-of-unreadable-features": lambda f, w: [
        "suite",
        (_csv(f / "a.feature", "not gherkin\n"), _bytes(f / "b.feature", b"Feature: \xff\n"), str(f))[-1],
        "-w",
        w,
    ],
    "folder-strict-stops-at-the-first": lambda f, w: [
        "suite",
        (
            _csv(f / "a.feature", "Feature: f\n  Scenario: s\n    Given a\n"),
            _csv(f / "b.feature", "nonsense\n"),
            str(f),
        )[-1],
        "-w",
        w,
        "--strict",
    ],
    "cucumber-json-wrong-types": lambda f, w: ["suite", _csv(f / "c.json", '[{"elements": 5}]'), "-w", w],
    "cucumber-json-truncated": lambda f, w: ["suite", _csv(f / "c.json", '[{"elements": [{"steps": ['), "-w", w],
    "cucumber-messages-wrong-types": lambda f, w: [
        "suite",
        _csv(f / "m.ndjson", '{"meta": {}}\n{"pickle": 7}\n'),
        "-w",
        w,
    ],
    "cucumber-messages-bad-line": lambda f, w: ["suite", _csv(f / "m.ndjson", '{"meta": {}}\n{oops\n'), "-w", w],
    "plugin-run-bad-outcome": lambda f, w: [
        "suite",
        _csv(f / "r.ndjson", '{"gapfinder_run": 1}\n{"test_id": "t", "outcome": "maybe", "steps": []}\n'),
        "-w",
        w,
    ],
    "plugin-run-newer": lambda f, w: ["suite", _csv(f / "r.ndjson", '{"gapfinder_run": 99}\n'), "-w", w],
    "suite-tags-invalid": lambda f, w: [
        "suite",
        "sample_telemetry/tests/suite_traces.csv",
        "-w",
        w,
        "--tags",
        "@a and",
    ],
    "suite-events-missing": lambda f, w: [
        "suite",
        "sample_telemetry/staging_run/pytest_run.ndjson",
        "-w",
        w,
        "--events",
        str(f / "none.parquet"),
    ],
    "suite-events-map-bogus": lambda f, w: [
        "suite",
        "sample_telemetry/staging_run/pytest_run.ndjson",
        "-w",
        w,
        "--events",
        "sample_telemetry/staging_run/events.parquet",
        "--events-map",
        "person=user_id",
    ],
    "suite-events-no-windows": lambda f, w: [
        "suite",
        "sample_telemetry/tests/suite_traces.csv",
        "-w",
        w,
        "--events",
        "sample_telemetry/staging_run/events.parquet",
    ],
    "run-tags-invalid": lambda f, w: [
        "run",
        "sample_telemetry/field",
        "--tests",
        "sample_telemetry/tests/suite_traces.csv",
        "--out",
        str(f / "out"),
        "--tags",
        "not",
    ],
    "gaps-tz-unknown": lambda f, w: ["gaps", "-w", w, "--tz", "Mars/Olympus"],
    "audit-tz-unknown": lambda f, w: ["audit", "-w", w, "--tz", "Nowhere/At_All"],
    "steps-map-beside-features-invalid": lambda f, w: [
        "suite",
        (
            _csv(f / "x.feature", "Feature: f\n  Scenario: s\n    Given a\n"),
            _csv(f / "gapfinder_steps.yaml", 'steps:\n  "(unclosed": login\n'),
            str(f),
        )[-1],
        "-w",
        w,
    ],
    "suite-add-to-a-vanished-source": lambda f, w: [
        "suite",
        "sample_telemetry/tests/suite_traces.csv",
        "--add",
        "-w",
        (lambda ws: (_add_vanished(f, ws), ws)[1])(w),
    ],
    # --- listing, gate, audit, export, report ---
    # --- OpenTelemetry logs, XES, feature keys (profile) ---
    "otlp-logs-truncated": lambda f, w: [
        "profile",
        _csv(f / "l.json", '{"resourceLogs": [{"scopeLogs": [{"logRecords": [{"timeUnixNano": "1'),
        "-w",
        w,
    ],
    "otlp-logs-wrong-types": lambda f, w: [
        "profile",
        _csv(f / "l.jsonl", '{"resourceLogs": [{"scopeLogs": "' + SECRET + '"}]}\n'),
        "-w",
        w,
    ],
    "otlp-logs-not-utf8": lambda f, w: [
        "profile",
        _bytes(f / "l.jsonl", b'{"resourceLogs": [{"scopeLogs": [{"logRecords": [{"eventName": "\xff\xfe"}]}]}]}\n'),
        "-w",
        w,
    ],
    "otlp-logs-gzip-truncated": lambda f, w: [
        "profile",
        _bytes(f / "l.json.gz", __import__("gzip").compress(b'{"resourceLogs": []}\n' * 500)[:60]),
        "-w",
        w,
    ],
    "otlp-logs-no-usable-record": lambda f, w: [
        "profile",
        _csv(f / "l.json", '{"resourceLogs": [{"scopeLogs": [{"logRecords": [{"body": {"stringValue": "x"}}]}]}]}'),
        "-w",
        w,
    ],
    "xes-entity-bomb": lambda f, w: [
        "profile",
        _csv(
            f / "bomb.xes",
            '<?xml version="1.0"?>\n<!DOCTYPE log [<!ENTITY a "' + SECRET + '"><!ENTITY b "&a;&a;&a;&a;&a;&a;">'
            '<!ENTITY c "&b;&b;&b;&b;&b;&b;">]>\n<log><trace><event><string key="concept:name" value="&c;"/>'
            "</event></trace></log>",
        ),
        "-w",
        w,
    ],
    "xes-external-entity": lambda f, w: [
        "profile",
        _csv(
            f / "ext.xes",
            '<?xml version="1.0"?>\n<!DOCTYPE log [<!ENTITY x SYSTEM "file:///etc/passwd">]>\n'
            '<log><trace><event><string key="concept:name" value="&x;"/></event></trace></log>',
        ),
        "-w",
        w,
    ],
    "xes-truncated": lambda f, w: [
        "profile",
        _csv(f / "t.xes", '<log><trace><string key="concept:name" value="' + SECRET + '"/><event><string key='),
        "-w",
        w,
    ],
    "xes-not-utf8": lambda f, w: [
        "profile",
        _bytes(
            f / "n.xes",
            b'<?xml version="1.0" encoding="UTF-8"?><log><trace><string key="a" value="\xff"/></trace></log>',
        ),
        "-w",
        w,
    ],
    "xes-gzip-truncated": lambda f, w: [
        "profile",
        _bytes(f / "g.xes.gz", __import__("gzip").compress(b"<log>" + b"<trace></trace>" * 400 + b"</log>")[:50]),
        "-w",
        w,
    ],
    "xes-not-a-log": lambda f, w: ["profile", _csv(f / "x.xes", "<html><body/></html>"), "-w", w],
    "feature-template-unbalanced": lambda f, w: ["profile", "x.csv", "-w", w, "--feature", "{event}:{screen"],
    "feature-template-unknown-field": lambda f, w: [
        "profile",
        _csv(f / "e.csv", f"user_id,ts,event\n{SECRET},2026-01-01T00:00:00Z,a\n"),
        "-w",
        w,
        "--feature",
        "{event}:{nowhere}",
    ],
    "rewrite-invalid-regex": lambda f, w: [
        "profile",
        _csv(f / "e.csv", f"user_id,ts,event\n{SECRET},2026-01-01T00:00:00Z,a\n"),
        "-w",
        w,
        "--rewrite",
        "(unclosed=>x",
    ],
    "rewrite-without-arrow": lambda f, w: ["profile", "x.csv", "-w", w, "--rewrite", "just a pattern"],
    "map-attr-on-parquet": lambda f, w: [
        "profile",
        _csv(f / "e.csv", f"user_id,ts,event\n{SECRET},2026-01-01T00:00:00Z,a\n"),
        "-w",
        w,
        "--map",
        "user_id=attr:user.id",
    ],
    "map-nested-into-a-number": lambda f, w: [
        "profile",
        _csv(f / "e.csv", f"user_id,ts,event,n\n{SECRET},2026-01-01T00:00:00Z,a,5\n"),
        "-w",
        w,
        "--map",
        "event=n.screen",
    ],
    "config-features-bad": lambda f, w: [
        "profile",
        "x.csv",
        "-w",
        w,
        "--config",
        _csv(f / "c.toml", "[features]\nrewrite = 'not a list'\n"),
    ],
    "gaps-memory-limit-too-small": lambda f, w: ["gaps", "-w", w, "--memory-limit", "1KB"],
    "coverage-memory-limit-no-unit": lambda f, w: ["coverage", "-w", w, "--memory-limit", "4096"],
    "paths-threads-zero": lambda f, w: ["paths", "-w", w, "--threads", "0"],
    "demo-as-unknown-shape": lambda f, w: ["demo", "--out", str(f / "d"), "--as", "xml"],
    "demo-block-folder-is-a-link": lambda f, w: ["demo", "--out", _linked_demo_blocks(f), "--events", "2000"],
    "paths-missing-workspace": lambda f, w: ["paths", "-w", str(f / "none.duckdb")],
    "paths-kind-bogus": lambda f, w: ["paths", "-w", w, "--kind", "everything"],
    "paths-min-support-nan": lambda f, w: ["paths", "-w", w, "--min-support", "nan"],
    "paths-max-gap-negative": lambda f, w: ["paths", "-w", w, "--max-gap", "-1"],
    "check-baseline-list": lambda f, w: [
        "check",
        "-w",
        w,
        "--max-new-gaps",
        "0",
        "--baseline",
        _csv(f / "b.json", "[1, 2]"),
    ],
    "check-baseline-bad-entries": lambda f, w: [
        "check",
        "-w",
        w,
        "--max-new-gaps",
        "0",
        "--baseline",
        _csv(f / "b.json", '{"gaps": [1, {"path": 3}]}'),
    ],
    "check-baseline-not-json": lambda f, w: [
        "check",
        "-w",
        w,
        "--max-new-gaps",
        "0",
        "--baseline",
        _csv(f / "b.json", "{"),
    ],
    "check-floor-bogus": lambda f, w: ["check", "-w", w, "--min-coverage", "everything=lots"],
    "check-floor-above-one": lambda f, w: ["check", "-w", w, "--min-coverage", "transitions=2"],
    "audit-year-9999": lambda f, w: ["audit", "-w", w, "--period", "9999-01-01..9999-12-31"],
    "audit-empty-period": lambda f, w: ["audit", "-w", w, "--period", "2030-01-01..2030-03-31"],
    "audit-period-garbage": lambda f, w: ["audit", "-w", w, "--period", "last quarter"],
    "audit-against-garbage-workspace": lambda f, w: [
        "audit",
        "-w",
        w,
        "--against-workspace",
        _bytes(f / "o.duckdb", b"junk" * 50),
    ],
    "export-to-a-file": lambda f, w: ["export", "-w", _plan_ws(w), "--to", _csv(f / "afile", "x")],
    "export-over-a-broken-step-registry": lambda f, w: [
        "export",
        "-w",
        _plan_ws(w),
        "--to",
        ((f / "out").mkdir() or _csv(f / "out" / "gapfinder_steps.py", "def oops(:\n")) and str(f / "out"),
    ],
    "export-phrases-invalid": lambda f, w: [
        "export",
        "-w",
        _plan_ws(w),
        "--to",
        str(f / "out"),
        "--as",
        "gherkin",
        "--phrases",
        _csv(f / "p.yaml", "phrases: [\n"),
    ],
    "export-over-planted-symlink": lambda f, w: _planted_symlink(f, w),
    "report-without-outputs": lambda f, w: ["report", "-w", w],
    "report-into-missing-folder": lambda f, w: ["report", "-w", w, "-o", str(f / "no" / "r.html")],
    "report-over-symlink": lambda f, w: ["report", "-w", w, "-o", _symlink_out(f, "r.html")],
    "align-write-over-symlink": lambda f, w: ["align", "-w", w, "--write", _symlink_out(f, "aliases.yaml")],
    "unknown-command": lambda f, w: ["frobnicate"],
    "unknown-option": lambda f, w: ["paths", "-w", w, "--colour", "red"],
    "newer-workspace-schema": lambda f, w: ["paths", "-w", _newer_schema(f, w)],
}


def _symlink_out(folder: Path, name: str) -> str:
    link = folder / name
    link.symlink_to(folder.parent / "outside" / name)
    return str(link)


def _planted_symlink(folder: Path, ws: str) -> list[str]:
    out = folder / "out"
    out.mkdir()
    (out / "gapfinder_plan.json").symlink_to(folder.parent / "outside" / "stolen.json")
    return ["export", "-w", _plan_ws(ws), "--to", str(out), "--as", "json"]


def _newer_schema(folder: Path, ws: str) -> str:
    copy = folder / "newer.duckdb"
    shutil.copy(ws, copy)
    con = duckdb.connect(str(copy))
    con.execute("UPDATE meta SET value = '99' WHERE key = 'schema_version'")
    con.close()
    return str(copy)


@pytest.fixture(scope="module")
def secret_workspace(tmp_path_factory: pytest.TempPathFactory, suite_workspace: Path) -> Path:
    """The sample suite workspace; its users table gets a distinctive id to look for in outputs."""
    target = tmp_path_factory.mktemp("hostile") / "base.duckdb"
    shutil.copy(suite_workspace, target)
    return target


def _snapshot(path: Path) -> dict[str, str]:
    con = duckdb.connect(str(path), read_only=True)
    try:
        tables = [r[0] for r in con.execute("SELECT table_name FROM duckdb_tables() ORDER BY 1").fetchall()]
        out = {}
        for table in tables:
            if table == "runs":
                rows = con.execute("SELECT stage, inputs, parameters FROM runs ORDER BY run_id").fetchall()
            else:
                rows = sorted(map(repr, con.execute(f'SELECT * FROM "{table}"').fetchall()))
            out[table] = hashlib.sha256(repr(rows).encode()).hexdigest()
        return out
    finally:
        con.close()


def _listing(root: Path) -> set[str]:
    return {str(p.relative_to(root)) for p in root.rglob("*")} if root.exists() else set()


@pytest.mark.parametrize("case", sorted(CASES))
def test_hostile_input_is_refused_cleanly(case: str, tmp_path: Path, secret_workspace: Path) -> None:
    folder = tmp_path / "case"
    folder.mkdir()
    outside = tmp_path / "outside"
    outside.mkdir()
    ws = folder / "ws.duckdb"
    shutil.copy(secret_workspace, ws)
    args = CASES[case](folder, str(ws))
    before = _snapshot(ws)
    env = {k: v for k, v in os.environ.items() if k != "GAPFINDER_TEST_UNSET_KEY"}
    result = CliRunner(env=env).invoke(cli, args, catch_exceptions=False)
    stderr = result.stderr.strip()
    assert result.exit_code == 2, (case, result.exit_code, stderr, result.stdout[-500:])
    assert len(stderr.splitlines()) == 1, (case, stderr)
    assert stderr.startswith("gapfinder: ")
    assert "Traceback" not in stderr + result.stdout
    assert SECRET not in stderr + result.stdout
    assert "Original Line" not in stderr
    assert _snapshot(ws) == before, case
    assert _listing(outside) == set(), f"{case} wrote outside its folder: {_listing(outside)}"
    leftovers = [p for p in _listing(folder) if p.endswith(".tmp") or ".gapfinder-run-" in p]
    assert not leftovers, leftovers


def test_corpus_is_large_enough() -> None:
    assert len(CASES) >= 60


def test_errors_in_json_output_mode_are_one_line_too(tmp_path: Path) -> None:
    result = CliRunner().invoke(cli, ["paths", "-w", str(tmp_path / "none.duckdb"), "--format", "json"])
    assert result.exit_code == 2 and len(result.stderr.strip().splitlines()) == 1
    assert not result.stdout.strip() or json.loads(result.stdout) is not None
