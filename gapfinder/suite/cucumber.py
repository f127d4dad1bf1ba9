"""Cucumber's own result formats: the executed steps, their status and the step definition each matched.

Two formats, both written by cucumber runners (cucumber-jvm, cucumber-js, behave with a formatter)
and the JSON one also by ``pytest-bdd --cucumberjson``:

- **Cucumber JSON** (the legacy report): a list of features, each with ``elements`` (scenarios and
  backgrounds) whose ``steps`` carry ``keyword``, ``name``, ``match.location`` and
  ``result.status``. A background's steps are run before the scenario that follows it.
- **Cucumber Messages** (NDJSON, one envelope per line): ``pickle`` (the scenario as run),
  ``stepDefinition`` (with its pattern), ``testCase`` (which definition each step matched),
  ``testCaseStarted``/``testStepFinished``/``testCaseFinished`` (statuses and times).

A step's name is its step definition's pattern where the format has one (Messages), otherwise the
template (``gherkin.step_template``) most of the definition's steps share, so a mapping is written
once per step definition rather than once per step text. Assertion steps (``Then`` and the
``And``/``But`` after it) exercise no feature and are left out. A scenario failed when a step
failed (or was ambiguous), was skipped when a step was skipped, pending or undefined, and
passed otherwise; only the steps that ran are its steps.
"""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path
from typing import Any

from gapfinder.errors import InputError
from gapfinder.safe_io import read_text
from gapfinder.suite.gherkin import StepPhrases, name_steps, step_template
from gapfinder.suite.model import ReaderReport, TestTrace, json_lines

__all__ = ["read_cucumber_json", "read_cucumber_messages"]

_FAILED = frozenset({"failed", "ambiguous"})
_NOT_RUN = frozenset({"skipped", "pending", "undefined", "unknown"})


def _outcome(statuses: list[str]) -> str:
    if any(s in _FAILED for s in statuses):
        return "failed"
    if any(s in _NOT_RUN for s in statuses) or not statuses:
        return "skipped"
    return "passed"


def _load_json(path: Path) -> Any:
    try:
        return json.loads(read_text(path, what="Cucumber JSON report"))
    except json.JSONDecodeError as exc:
        raise InputError(f"{path}:{exc.lineno}:{exc.colno}: not valid JSON ({exc.msg})") from None


def read_cucumber_json(
    path: str | Path, phrases: StepPhrases | None = None, *, label: str | None = None, keep_assertions: bool = False
) -> ReaderReport:
    """Read a Cucumber JSON report into one test per scenario run."""
    where = str(path)
    phrases = phrases or StepPhrases()
    data = _load_json(Path(path))
    if not isinstance(data, list):
        raise InputError(f"{where}:1:1: a Cucumber JSON report is a list of features")
    report = ReaderReport()
    scenarios: list[tuple[str, str, tuple[str, ...], list[tuple[str, str, str, str]]]] = []
    templates: dict[str, Counter[str]] = {}
    try:
        for feature in data:
            uri = str(feature.get("uri") or label or where)
            feature_name = str(feature.get("name") or "")
            feature_tags = tuple(str(t.get("name")) for t in feature.get("tags") or [])
            background: list[tuple[str, str, str, str]] = []
            for element in feature.get("elements") or []:
                raw: list[tuple[str, str, str, str]] = []
                previous = "context"
                for step in element.get("steps") or []:
                    keyword = str(step.get("keyword") or "").strip().lower()
                    kind = {"given": "context", "when": "action", "then": "assertion"}.get(keyword, previous)
                    previous = kind
                    text = str(step.get("name") or "").strip()
                    definition = str((step.get("match") or {}).get("location") or "")
                    status = str((step.get("result") or {}).get("status") or "unknown").lower()
                    raw.append((text, definition, kind, status))
                    if definition:
                        templates.setdefault(definition, Counter())[step_template(text)] += 1
                if str(element.get("type") or "scenario") == "background":
                    background = raw
                    continue
                tags = feature_tags + tuple(str(t.get("name")) for t in element.get("tags") or [])
                name = str(element.get("name") or "").strip() or "(unnamed scenario)"
                scenarios.append((f"{uri}::{feature_name}", name, tags, background + raw))
                background = []
    except (AttributeError, TypeError):
        raise InputError(
            f"{where}:1:1: a feature or scenario has the wrong JSON type (the Cucumber JSON report format is expected)"
        ) from None
    names = {d: min(c.items(), key=lambda kv: (-kv[1], kv[0]))[0] for d, c in templates.items()}
    counts: dict[str, int] = {}
    for key, name, tags, raw in scenarios:
        uri, _, feature_name = key.partition("::")
        steps, types = name_steps(raw, phrases, report, names_by_definition=names, keep_assertions=keep_assertions)
        local = f"{uri}::{name}"
        counts[local] = counts.get(local, 0) + 1
        test_id = local if counts[local] == 1 else f"{local} #{counts[local]}"
        report.traces.append(
            TestTrace(
                test_id,
                steps,
                where,
                "cucumber",
                outcome=_outcome([s for *_, s in raw]),
                tags=tags,
                feature=feature_name,
                name=name,
                step_types=types,
            )
        )
    if not report.traces:
        raise InputError(f"{where}: the Cucumber JSON report holds no scenario")
    return report


def _seconds(stamp: Any) -> float | None:
    if not isinstance(stamp, dict):
        return None
    try:
        return int(stamp.get("seconds", 0)) + int(stamp.get("nanos", 0)) / 1e9
    except (TypeError, ValueError):
        return None


def read_cucumber_messages(
    path: str | Path, phrases: StepPhrases | None = None, *, label: str | None = None, keep_assertions: bool = False
) -> ReaderReport:
    """Read Cucumber Messages (NDJSON envelopes) into one test per test case run (its last attempt)."""
    where = str(path)
    phrases = phrases or StepPhrases()
    pickles: dict[str, dict[str, Any]] = {}
    definitions: dict[str, str] = {}
    cases: dict[str, dict[str, Any]] = {}
    runs: dict[str, dict[str, Any]] = {}  # testCaseStarted id -> {case, started, finished, statuses}
    features: dict[str, str] = {}
    for n, envelope in json_lines(path, what="Cucumber Messages file", needs="a Cucumber Messages envelope"):
        try:
            if "gherkinDocument" in envelope:
                document = envelope["gherkinDocument"]
                features[str(document.get("uri"))] = str((document.get("feature") or {}).get("name") or "")
            elif "pickle" in envelope:
                pickles[str(envelope["pickle"]["id"])] = envelope["pickle"]
            elif "stepDefinition" in envelope:
                definition = envelope["stepDefinition"]
                definitions[str(definition["id"])] = str((definition.get("pattern") or {}).get("source") or "")
            elif "testCase" in envelope:
                cases[str(envelope["testCase"]["id"])] = envelope["testCase"]
            elif "testCaseStarted" in envelope:
                started = envelope["testCaseStarted"]
                runs[str(started["id"])] = {
                    "case": str(started["testCaseId"]),
                    "attempt": int(started.get("attempt") or 0),
                    "started": _seconds(started.get("timestamp")),
                    "finished": None,
                    "statuses": {},
                }
            elif "testStepFinished" in envelope:
                finished = envelope["testStepFinished"]
                run = runs.get(str(finished["testCaseStartedId"]))
                if run is not None:
                    status = str((finished.get("testStepResult") or {}).get("status") or "UNKNOWN").lower()
                    run["statuses"][str(finished["testStepId"])] = status
            elif "testCaseFinished" in envelope:
                finished = envelope["testCaseFinished"]
                run = runs.get(str(finished["testCaseStartedId"]))
                if run is not None:
                    run["finished"] = _seconds(finished.get("timestamp"))
                    run["retried"] = bool(finished.get("willBeRetried"))
        except (AttributeError, KeyError, TypeError, ValueError):
            raise InputError(
                f"{where}:{n}:1: an envelope lacks a field or has the wrong JSON type (Cucumber Messages expected)"
            ) from None
    report = ReaderReport()
    counts: dict[str, int] = {}
    for run in runs.values():
        if run.get("retried"):
            continue  # a later attempt of the same test case follows
        case = cases.get(run["case"])
        pickle = pickles.get(str(case.get("pickleId"))) if case else None
        if case is None or pickle is None:
            report.skip("test cases whose pickle or test case message is missing")
            continue
        pickle_steps = {str(s.get("id")): s for s in pickle.get("steps") or []}
        raw: list[tuple[str, str, str, str]] = []
        statuses: list[str] = []
        names: dict[str, str] = {}
        for test_step in case.get("testSteps") or []:
            status = run["statuses"].get(str(test_step.get("id")), "unknown")
            pickle_step = pickle_steps.get(str(test_step.get("pickleStepId") or ""))
            if pickle_step is None:  # a hook
                if status in _FAILED:
                    statuses.append(status)
                continue
            statuses.append(status)
            ids = test_step.get("stepDefinitionIds") or []
            definition = str(ids[0]) if len(ids) == 1 else ""
            if definition and definitions.get(definition):
                names[definition] = definitions[definition]
            step_type = {"Context": "context", "Action": "action", "Outcome": "assertion"}.get(
                str(pickle_step.get("type")), "action"
            )
            raw.append((str(pickle_step.get("text") or "").strip(), definition, step_type, status))
        steps, types = name_steps(raw, phrases, report, names_by_definition=names, keep_assertions=keep_assertions)
        uri = str(pickle.get("uri") or label or where)
        name = str(pickle.get("name") or "").strip() or "(unnamed scenario)"
        local = f"{uri}::{name}"
        counts[local] = counts.get(local, 0) + 1
        report.traces.append(
            TestTrace(
                local if counts[local] == 1 else f"{local} #{counts[local]}",
                steps,
                where,
                "cucumber",
                outcome=_outcome(statuses),
                tags=tuple(str(t.get("name")) for t in pickle.get("tags") or []),
                feature=features.get(uri, ""),
                name=name,
                started=run["started"],
                finished=run["finished"],
                step_types=types,
            )
        )
    if not report.traces:
        raise InputError(f"{where}: the Cucumber Messages file holds no test case that ran")
    return report
