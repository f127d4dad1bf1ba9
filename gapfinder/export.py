"""Export the stored plan as files that drop into a test repository.

- ``pytest``: ``gapfinder_steps.py``, a step registry with one function per event (each raising
  NotImplementedError until someone writes it), and one ``test_gapfinder_<group>.py`` module per
  scenario group, one ``test_`` function per scenario calling the steps in order, its docstring
  carrying the evidence, marked skip until its steps are implemented.
- ``gherkin``: one ``.feature`` per group, one Scenario per candidate, steps phrased from a phrase
  map (default: the event name's words; a YAML ``phrases: {event: "phrase"}`` overrides), tagged
  with rank and share.
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
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from gapfinder.align import read_yaml_table
from gapfinder.errors import ConfigError, InputError
from gapfinder.quoting import gherkin_text, python_identifier, python_string, python_text, slug
from gapfinder.safe_io import check_target, write_files

__all__ = ["EXPORT_FORMATS", "ExportResult", "export_plan", "slug"]

EXPORT_FORMATS = ("pytest", "gherkin", "json", "csv")
STEPS_MODULE = "gapfinder_steps"


@dataclass
class ExportResult:
    """What was written, relative to the target folder."""

    folder: Path
    files: list[str]
    scenarios: int


def _group_of(row: dict[str, Any]) -> str:
    inner = [s for s in row["gap_path"] if s not in ("START", "END")]
    return slug(inner[-1] if inner else row["path"][-1])


def _evidence_lines(row: dict[str, Any]) -> list[str]:
    lift = f", {row['error_lift']:.1f}× the usual error rate" if row.get("error_lift") else ""
    return [
        f"Gap #{', #'.join(str(g) for g in row['gaps'])}: {' > '.join(row['gap_path'])}",
        f"Sessions: {row['sessions']:,}; users: {row['users']:,}; share {100 * row['share']:.2f} % "
        f"(95 % interval {100 * row['share_low']:.2f}–{100 * row['share_high']:.2f} %)",
        f"Errors in {100 * row['error_rate']:.1f} % of those sessions{lift}",
        f"Why: {row['reason']}",
        f"Adds {100 * row['gain_share']:.2f} % of the plan objective; scenario probability {row['probability']:.4g}",
    ]


def _pytest_files(plan: dict[str, Any]) -> dict[str, str]:
    names: dict[str, str] = {}
    events = sorted({e for row in plan["scenarios"] for e in row["path"]})
    for event in events:
        python_identifier(event, names)
    registry = [
        '"""Step registry written by gapfinder export: one function per product event.',
        "",
        "Implement each step with your test driver (API client, browser, app automation); the",
        "scenarios in test_gapfinder_*.py call them in order. Remove a scenario's skip mark when",
        'its steps work."""',
        "",
    ]
    for event in events:
        registry += [
            "",
            f"def {names[event]}() -> None:",
            f'    """Perform the event {python_text(event)} as a user would."""',
            f"    raise NotImplementedError({python_string(event)})",
            "",
        ]
    files = {f"{STEPS_MODULE}.py": "\n".join(registry).rstrip() + "\n"}
    groups: dict[str, list[dict[str, Any]]] = {}
    for row in plan["scenarios"]:
        groups.setdefault(_group_of(row), []).append(row)
    for group, rows in sorted(groups.items()):
        lines = [
            f'"""Candidate scenarios from gapfinder: journeys ending in {python_text(group)}, not yet tested."""',
            "",
            "import pytest",
            "",
            f"import {STEPS_MODULE} as steps",
            "",
            'PENDING = "gapfinder candidate: implement its steps in gapfinder_steps.py, then remove this mark"',
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
            lines += [f"    steps.{names[event]}()" for event in row["path"]]
        files[f"test_gapfinder_{group}.py"] = "\n".join(lines) + "\n"
    return files


def _phrase(event: str, phrases: dict[str, str]) -> str:
    return gherkin_text(phrases.get(event) or f"I {event.replace('_', ' ')}")


def _gherkin_files(plan: dict[str, Any], phrases: dict[str, str]) -> dict[str, str]:
    groups: dict[str, list[dict[str, Any]]] = {}
    for row in plan["scenarios"]:
        groups.setdefault(_group_of(row), []).append(row)
    files = {}
    for group, rows in sorted(groups.items()):
        lines = [
            f"Feature: Journeys ending in {group.replace('_', ' ')} that no test exercised",
            "  Candidate scenarios from gapfinder, most worth a test first. Each is the most probable",
            "  complete session through an untested path; its comments carry the evidence.",
        ]
        for row in rows:
            lines.append("")
            lines += [f"  # {gherkin_text(line)}" for line in _evidence_lines(row)]
            lines.append(
                f"  @gapfinder @rank-{int(row['scenario'])} @share-{100 * float(row['share']):.1f}pct".replace(".", "_")
            )
            lines.append(f"  Scenario: {gherkin_text(row['name'])}")
            for n, event in enumerate(row["path"]):
                keyword_ = (
                    "Given"
                    if n == 0
                    else ("Then" if n == len(row["path"]) - 1 and n > 1 else ("When" if n == 1 else "And"))
                )
                lines.append(f"    {keyword_} {_phrase(event, phrases)}")
        files[f"gapfinder_{group}.feature"] = "\n".join(lines) + "\n"
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
        "reason",
    ]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(columns)
    for row in plan["scenarios"]:
        writer.writerow([json.dumps(row[c]) if isinstance(row[c], list) else row[c] for c in columns])
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
    if as_format == "pytest":
        files = _pytest_files(plan)
    elif as_format == "gherkin":
        files = _gherkin_files(plan, phrases)
    elif as_format == "json":
        # where the workspace lay is left out: the same plan gives the same bytes wherever it is
        portable = {k: v for k, v in plan.items() if k != "workspace"}
        files = {"gapfinder_plan.json": json.dumps(portable, indent=2, sort_keys=True, default=str) + "\n"}
    else:
        files = {"gapfinder_plan.csv": _csv_file(plan)}
    for name, text in files.items():
        if not re.fullmatch(r"[a-z0-9_]+\.(py|feature|json|csv)", name):
            raise ConfigError(f"refusing to write {name!r}: not a name export makes")  # defence in depth
        path = check_target(target, name, option="--to") if target.exists() else target / name
        if path.exists() and not force and path.read_text(encoding="utf-8", errors="replace") != text:
            raise ConfigError(f"{path} exists and differs: pass --force to overwrite it")
    write_files(target, files, option="--to")
    return ExportResult(target, sorted(files), len(plan["scenarios"]))
