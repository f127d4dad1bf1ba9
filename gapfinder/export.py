"""Export the stored plan as files that drop into a test repository.

- ``pytest``: ``gapfinder_steps.py``, a step registry with one function per event (each raising
  NotImplementedError until someone writes it), and one ``test_gapfinder_<group>.py`` module per
  scenario group, one ``test_`` function per scenario calling the steps in order, its docstring
  carrying the evidence, marked skip until its steps are implemented. Every step is decorated with
  ``@step("event")``, which records the event through gapfinder's pytest plugin when a run file is
  written (``pytest --gapfinder-trace run.ndjson``), so an implemented scenario counts as coverage
  next sprint with no fixture calls. Test modules load the registry from their own folder, so they
  collect in pytest's prepend, append and importlib modes and inside a package. Exporting again adds
  stubs for new events to the registry and never changes a step already there; a test module that
  was edited is kept (``force`` replaces test modules, never the registry's steps).
- ``gherkin``: one ``.feature`` per group, one Scenario per candidate (tagged ``@pending`` until it
  is implemented, and with rank and share), steps phrased from a phrase map (default: the event
  name's words; a YAML ``phrases: {event: "phrase"}`` overrides), and ``gapfinder_steps.yaml``: the
  steps map that ``gapfinder suite`` picks up beside the features, so every step reads back as its
  event with no option.
- ``json`` and ``csv``: every field of the plan.

A scenario's group is the last step of the gap it was built for (the feature it is about). File
names are slugs of ``[a-z0-9_]`` only, written inside ``--to``, never over an existing file
without ``force``; the same plan exported again gives identical bytes.
"""

from __future__ import annotations

import csv
import io
import json
import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import regex
import yaml

from gapfinder.align import read_yaml_table
from gapfinder.errors import ConfigError, InputError
from gapfinder.quoting import gherkin_text, python_identifier, python_string, python_text, slug, yaml_string
from gapfinder.safe_io import check_target, read_text, write_files

__all__ = ["EXPORT_FORMATS", "ExportResult", "export_plan", "slug"]

EXPORT_FORMATS = ("pytest", "gherkin", "json", "csv")
STEPS_MODULE = "gapfinder_steps"
STEPS_MAP = "gapfinder_steps.yaml"
_REGISTRY_HEAD = '''"""Step registry written by gapfinder export: one function per product event.

Implement each step with your test driver (API client, browser, app automation); the scenarios in
test_gapfinder_*.py call them in order. Remove a scenario's skip mark when its steps work. Keep the
@step decorator: it records the event for `gapfinder suite` when pytest runs with
--gapfinder-trace, so the scenario counts as coverage. Exporting again only adds new steps here."""

from collections.abc import Callable
from functools import wraps
from typing import Any

try:
    from gapfinder.pytest_plugin import record_step
except ImportError:  # gapfinder is not installed where the tests run: nothing is recorded

    def record_step(event: str) -> None:
        return None


def step(event: str) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Mark a function as performing ``event``; each call is recorded as one step of the running test."""

    def decorate(function: Callable[..., Any]) -> Callable[..., Any]:
        @wraps(function)
        def performed(*args: Any, **kwargs: Any) -> Any:
            record_step(event)
            return function(*args, **kwargs)

        return performed

    return decorate
'''
_LOAD_REGISTRY = '''def _load_steps() -> ModuleType:
    """The step registry beside this file, whatever pytest's import mode or package layout."""
    path = Path(__file__).resolve().with_name("gapfinder_steps.py")
    name = "gapfinder_steps_" + hashlib.sha256(str(path).encode()).hexdigest()[:12]
    if name not in sys.modules:
        spec = importlib.util.spec_from_file_location(name, path)
        assert spec is not None and spec.loader is not None
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        spec.loader.exec_module(module)
    return sys.modules[name]


steps = _load_steps()'''


@dataclass
class ExportResult:
    """What was written, relative to the target folder."""

    folder: Path
    files: list[str]
    scenarios: int
    kept: list[str] = field(default_factory=list)  # test modules that differ from the plan's and were kept


def _group_of(row: dict[str, Any]) -> str:
    inner = [s for s in row["gap_path"] if s not in ("START", "END")]
    return slug(inner[-1] if inner else row["path"][-1])


def _evidence_lines(row: dict[str, Any]) -> list[str]:
    if row.get("kind") == "sampled":
        return [
            f"Scenario {int(row['scenario'])}, a usage-sampled session: {' > '.join(row['path'])}",
            f"Why: {row['reason']}; probability of this exact walk {row['probability']:.2e}",
            f"Adds {100 * row['gain_share']:.2f} % of the plan objective (field occurrences of untested items)",
        ]
    failing = row.get("failing_step")
    where = (
        f"; {failing} fails most, {row['error_lift']:.1f}× its rate elsewhere"
        if failing and row.get("error_lift")
        else ""
    )
    return [
        f"Scenario {int(row['scenario'])}, for gap #{', #'.join(str(g) for g in row['gaps'])}: "
        f"{' > '.join(row['gap_path'])}",
        f"Sessions: {row['sessions']:,}; users: {row['users']:,}; share {100 * row['share']:.2f} % "
        f"(95 % interval {100 * row['share_low']:.2f}–{100 * row['share_high']:.2f} %)",
        f"A step of the path itself failed in {100 * row['error_rate']:.1f} % of those sessions{where}",
        f"Why: {row['reason']}",
        f"Adds {100 * row['gain_share']:.2f} % of the plan objective (field occurrences of untested items)",
    ]


def registry_events(text: str, where: str = STEPS_MODULE + ".py") -> dict[str, str]:
    """{event: function name} of the ``@step("event")`` functions an existing registry defines."""
    import ast

    try:
        tree = ast.parse(text)
    except SyntaxError as exc:
        raise ConfigError(
            f"{where}:{exc.lineno}: is not valid Python, so no step can be added to it; fix it, then export again"
        ) from None
    found: dict[str, str] = {}
    for node in tree.body:
        if not isinstance(node, ast.FunctionDef):
            continue
        for decorator in node.decorator_list:
            if (
                isinstance(decorator, ast.Call)
                and isinstance(decorator.func, ast.Name)
                and decorator.func.id == "step"
                and decorator.args
                and isinstance(decorator.args[0], ast.Constant)
                and isinstance(decorator.args[0].value, str)
            ):
                found.setdefault(decorator.args[0].value, node.name)
    return found


def _step_stub(event: str, name: str) -> list[str]:
    return [
        "",
        "",
        f"@step({python_string(event)})",
        f"def {name}() -> None:",
        f'    """Perform the event {python_text(event)} as a user would."""',
        f"    raise NotImplementedError({python_string(event)})",
    ]


def _pytest_files(plan: dict[str, Any], existing_registry: str | None = None) -> dict[str, str]:
    known = registry_events(existing_registry) if existing_registry is not None else {}
    names: dict[str, str] = {}
    for function in known.values():
        names[f"\x00taken:{function}"] = function  # keep the names of existing steps from being reused
    events = sorted({e for row in plan["scenarios"] for e in row["path"]})
    functions = {e: known[e] for e in events if e in known}
    for event in events:
        if event not in functions:
            # a step named test… would look like a test to pytest: such names get a step_ prefix
            prefix = "step_" if slug(event, limit=50).startswith("test") else ""
            functions[event] = python_identifier(event, names, prefix=prefix)
    new = [e for e in events if e not in known]
    if existing_registry is None:
        registry = _REGISTRY_HEAD.rstrip("\n").split("\n")
        for event in events:
            registry += _step_stub(event, functions[event])
        registry_text = "\n".join(registry) + "\n"
    else:
        added: list[str] = []
        for event in new:
            added += _step_stub(event, functions[event])
        registry_text = existing_registry.rstrip("\n") + "\n" + "\n".join(added) + "\n" if added else existing_registry
    files = {f"{STEPS_MODULE}.py": registry_text}
    groups: dict[str, list[dict[str, Any]]] = {}
    for row in plan["scenarios"]:
        groups.setdefault(_group_of(row), []).append(row)
    for group, rows in sorted(groups.items()):
        lines = [
            f'"""Candidate scenarios from gapfinder: journeys ending in {python_text(group)}, not yet tested."""',
            "",
            "import hashlib",
            "import importlib.util",
            "import sys",
            "from pathlib import Path",
            "from types import ModuleType",
            "",
            "import pytest",
            "",
            'PENDING = "gapfinder candidate: implement its steps in gapfinder_steps.py, then remove this mark"',
            "",
            "",
            *_LOAD_REGISTRY.split("\n"),
        ]
        test_names: dict[str, str] = {}
        for row in rows:
            key = row["name"] if row["name"] not in test_names else f"{row['name']} (scenario {row['scenario']})"
            name = python_identifier(key, test_names, prefix="test_")
            lines += ["", "", "@pytest.mark.skip(reason=PENDING)", f"def {name}() -> None:"]
            lines.append(f'    """Scenario {int(row["scenario"])}: {python_text(" > ".join(row["path"]))}.')
            lines.append("")
            lines += [f"    {python_text(line)}".rstrip() for line in _evidence_lines(row)]
            lines.append('    """')
            lines += [f"    steps.{functions[event]}()" for event in row["path"]]
        files[f"test_gapfinder_{group}.py"] = "\n".join(lines) + "\n"
    return files


def _phrase(event: str, phrases: dict[str, str]) -> str:
    return gherkin_text(phrases.get(event) or f"I {event.replace('_', ' ')}")


def _gherkin_files(plan: dict[str, Any], phrases: dict[str, str], earlier_map: str | None = None) -> dict[str, str]:
    groups: dict[str, list[dict[str, Any]]] = {}
    for row in plan["scenarios"]:
        groups.setdefault(_group_of(row), []).append(row)
    events = sorted({e for row in plan["scenarios"] for e in row["path"]})
    # one phrase per event, so that the steps map reads each step back as its own event
    phrase_of: dict[str, str] = {}
    taken: set[str] = set()
    for event in events:
        phrase, n = _phrase(event, phrases), 1
        while phrase.casefold() in taken:
            n += 1
            phrase = f"{_phrase(event, phrases)} ({n})"
        taken.add(phrase.casefold())
        phrase_of[event] = phrase
    files = {}
    for group, rows in sorted(groups.items()):
        lines = (
            [
                f"Feature: Usage-sampled journeys ending in {group.replace('_', ' ')}",
                "  Scenarios from gapfinder, drawn as random walks of the usage chain, most drawn first,",
                "  so that the suite steps as users do; its comments carry the evidence. Remove a",
                "  scenario's @pending tag when its steps are implemented: then it counts as coverage.",
            ]
            if plan.get("kind") == "sampled"
            else [
                f"Feature: Journeys ending in {group.replace('_', ' ')} that no test exercised",
                "  Candidate scenarios from gapfinder, most worth a test first. Each is the most probable",
                "  complete session through an untested path; its comments carry the evidence. Remove a",
                "  scenario's @pending tag when its steps are implemented: then it counts as coverage.",
            ]
        )
        for row in rows:
            lines.append("")
            lines += [f"  # {gherkin_text(line)}" for line in _evidence_lines(row)]
            gap_tags = " ".join(f"@gap-{int(g)}" for g in row["gaps"])
            share = f"{100 * float(row['share']):.1f}".replace(".", "_")
            lines.append(f"  @gapfinder @pending @scenario-{int(row['scenario'])} {gap_tags} @share-{share}pct")
            lines.append(f"  Scenario: {gherkin_text(row['name'])}")
            for n, event in enumerate(row["path"]):
                # Given, When, then And: every step is an action (a Then would read as an assertion)
                keyword_ = "Given" if n == 0 else ("When" if n == 1 else "And")
                lines.append(f"    {keyword_} {phrase_of[event]}")
        files[f"gapfinder_{group}.feature"] = "\n".join(lines) + "\n"
    steps_map = [
        "# Written by gapfinder export: the phrase of each exported step and the event it performs.",
        "# `gapfinder suite` reads it for the .feature files in this folder and below.",
        "steps:",
    ]
    entries: dict[str, str] = {}
    if earlier_map is not None:  # the features of earlier exports keep their phrases
        try:
            table = (yaml.safe_load(earlier_map) or {}).get("steps") or {}
        except (yaml.YAMLError, AttributeError):
            table = {}
        entries.update({str(k): str(v) for k, v in table.items() if isinstance(v, str) and v.strip()})
    for event in events:
        if not event.strip():
            continue  # a blank name is no event a steps map can name
        pattern = regex.escape(phrase_of[event], special_only=True, literal_spaces=True)
        entries.setdefault(pattern, event)
    for pattern, event in entries.items():
        steps_map.append(f"  {yaml_string(pattern)}: {yaml_string(event)}")
    if len(steps_map) == 3:
        steps_map[-1] = "steps: {}"
    files[STEPS_MAP] = "\n".join(steps_map) + "\n"
    return files


def _csv_file(plan: dict[str, Any]) -> str:
    columns = [
        "scenario",
        "name",
        "path",
        "steps",
        "probability",
        "gain",
        "gain_share",
        "gaps",
        "gap_path",
        "sessions",
        "users",
        "share",
        "share_low",
        "share_high",
        "error_rate",
        "error_lift",
        "failing_step",
        "reason",
    ]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(columns)
    for row in plan["scenarios"]:
        writer.writerow([json.dumps(row.get(c)) if isinstance(row.get(c), list) else row.get(c) for c in columns])
    return buffer.getvalue()


def export_plan(
    plan: dict[str, Any],
    folder: str | os.PathLike[str],
    *,
    as_format: str = "pytest",
    force: bool = False,
    phrase_map: str | None = None,
) -> ExportResult:
    """Write the plan's scenarios into ``folder`` in one format; refuse to overwrite without force."""
    if as_format not in EXPORT_FORMATS:
        raise ConfigError(f"--as {as_format!r}: give one of {', '.join(EXPORT_FORMATS)}")
    if not plan.get("scenarios"):
        raise InputError("the stored plan has no scenarios: run `gapfinder plan` with gaps to close first")
    target = Path(folder)
    if target.exists() and not target.is_dir():
        raise ConfigError(f"--to {target}: exists and is not a folder")
    phrases: dict[str, str] = {}
    if phrase_map:
        phrases = {
            str(k): str(v)
            for k, v in read_yaml_table(
                phrase_map, key="phrases", option="--phrases", what="event names to step phrases"
            ).items()
        }
    kept: list[str] = []
    if as_format == "pytest":
        registry_path = target / f"{STEPS_MODULE}.py"
        existing = None
        if target.exists() and check_target(target, registry_path.name, option="--to").exists():
            existing = read_text(registry_path, what="step registry")
        files = _pytest_files(plan, existing)
    elif as_format == "gherkin":
        earlier = None
        if target.exists() and check_target(target, STEPS_MAP, option="--to").exists():
            earlier = read_text(target / STEPS_MAP, what="steps map")
        files = _gherkin_files(plan, phrases, earlier)
    elif as_format == "json":
        # where the workspace lay is left out: the same plan gives the same bytes wherever it is
        portable = {k: v for k, v in plan.items() if k != "workspace"}
        files = {"gapfinder_plan.json": json.dumps(portable, indent=2, sort_keys=True, default=str) + "\n"}
    else:
        files = {"gapfinder_plan.csv": _csv_file(plan)}
    for name, text in list(files.items()):
        if not re.fullmatch(r"[a-z0-9_]+\.(py|feature|json|csv|yaml)", name):
            raise ConfigError(f"refusing to write {name!r}: not a name export makes")  # defence in depth
        path = check_target(target, name, option="--to") if target.exists() else target / name
        if not path.exists() or name in (f"{STEPS_MODULE}.py", STEPS_MAP):
            continue
        current = path.read_text(encoding="utf-8", errors="replace")
        if current == text:
            continue
        if as_format == "pytest" and name.startswith("test_gapfinder_") and not force:
            # an edited test module is someone's work in progress: keep it, say so
            kept.append(name)
            del files[name]
        elif not force:
            raise ConfigError(f"{path} exists and differs: pass --force to overwrite it")
    write_files(target, files, option="--to")
    return ExportResult(target, sorted(files), len(plan["scenarios"]), kept=kept)
