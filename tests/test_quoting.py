"""The one quoting path: arbitrary Unicode names never break or inject into generated files.

Every exported pytest module must compile, define exactly one test per planned scenario and run
no code of a name; every exported Gherkin file must parse (gherkin-official) into exactly the
planned scenarios with the planned number of steps; Markdown cells never split; rich never
reads a name as markup.
"""

from __future__ import annotations

import ast
import io
from pathlib import Path
from typing import Any

import pytest
from gherkin.parser import Parser
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from gapfinder.export import export_plan
from gapfinder.quoting import (
    gherkin_text,
    markdown_code,
    markdown_text,
    python_identifier,
    python_string,
    python_text,
    terminal_text,
)

HOSTILE = [
    '"""\nimport os; os.system("touch /tmp/gapfinder_pwned")\n"""',
    "'''; raise SystemExit('pwned') #",
    "back\\slash\\N{BULLET}\\x00",
    "nul\x00byte",
    "line\nbreak\rScenario: injected\n  Given evil",
    "@tag Feature: nested",
    "<script>alert(1)</script>|pipe|`tick`",
    "[/]",
    "[bold red]markup[/]",
    "\u2028separator\u2029para\x85next",
    "\ud800 lone surrogate",
    "Given I am a keyword",
    "# a comment",
    '"""',
    "|",
    "",
    "   ",
    "class",
    "123_start",
    "émoji 🎉 ünïcode",
]

names = st.text(alphabet=st.characters(codec=None, exclude_categories=()), min_size=0, max_size=40)


def _plan(events: list[str]) -> dict[str, Any]:
    """A stored-plan-shaped dictionary whose scenarios walk through the given event names."""
    scenarios = []
    for n in range(0, len(events), 2):
        path = events[n : n + 3] or ["fallback"]
        scenarios.append(
            {
                "scenario": len(scenarios) + 1,
                "name": " then ".join(path),
                "path": path,
                "steps": len(path),
                "probability": 0.01,
                "gain": 10,
                "gain_share": 0.1,
                "gaps": [len(scenarios) + 1],
                "gap_path": path,
                "sessions": 100,
                "users": 50,
                "share": 0.05,
                "share_low": 0.04,
                "share_high": 0.06,
                "error_rate": 0.1,
                "error_lift": 1.5,
                "reason": f"because {path[0]}",
            }
        )
    return {"scenarios": scenarios}


# Calls the exported files make themselves; none of them takes data from the plan except step("event").
_FIXED_CALLS = {
    "NotImplementedError",
    "skip",
    "record_step",
    "function",
    "wraps",
    "sha256",
    "hexdigest",
    "encode",
    "str",
    "resolve",
    "with_name",
    "spec_from_file_location",
    "module_from_spec",
    "exec_module",
    "_load_steps",
    "Path",
    "step",
}


def _check_pytest_export(plan: dict[str, Any], folder: Path) -> None:
    result = export_plan(plan, folder, as_format="pytest", force=True)
    tests = 0
    events = {e for row in plan["scenarios"] for e in row["path"]}
    for name in result.files:
        source = (folder / name).read_text(encoding="utf-8")
        tree = ast.parse(source)  # compiles: no name broke out of a literal, docstring or comment
        compile(source, name, "exec")
        calls = [n for n in ast.walk(tree) if isinstance(n, ast.Call)]
        for call in calls:  # the only calls are the ones export writes itself
            func = call.func
            label = func.attr if isinstance(func, ast.Attribute) else getattr(func, "id", "?")
            assert label in _FIXED_CALLS or (
                isinstance(func, ast.Attribute) and isinstance(func.value, ast.Name) and func.value.id == "steps"
            ), (name, ast.dump(call))
            if label == "step":  # the decorator names its event as one string literal
                (argument,) = call.args
                assert isinstance(argument, ast.Constant) and argument.value in events
        tests += sum(1 for n in tree.body if isinstance(n, ast.FunctionDef) and n.name.startswith("test_"))
        for node in tree.body:
            if isinstance(node, ast.FunctionDef) and node.decorator_list and not node.name.startswith("test_"):
                raise_ = node.body[-1]
                assert isinstance(raise_, ast.Raise)
    assert tests == len(plan["scenarios"])


def _check_gherkin_export(plan: dict[str, Any], folder: Path) -> None:
    import yaml

    from gapfinder.suite import read_suite

    result = export_plan(plan, folder, as_format="gherkin", force=True)
    scenarios = []
    for name in result.files:
        if not name.endswith(".feature"):
            continue
        document = Parser().parse((folder / name).read_text(encoding="utf-8"))
        for child in document["feature"]["children"]:
            scenarios.append(child["scenario"])
    assert len(scenarios) == len(plan["scenarios"])
    assert sorted(len(s["steps"]) for s in scenarios) == sorted(len(r["path"]) for r in plan["scenarios"])
    # the steps map beside them is valid YAML and reads every step back as its event
    table = yaml.safe_load((folder / "gapfinder_steps.yaml").read_text(encoding="utf-8"))["steps"]
    named = {e for row in plan["scenarios"] for e in row["path"] if e.strip()}
    assert set(table.values()) == named
    if any(not e.strip() for row in plan["scenarios"] for e in row["path"]):
        return  # a blank event name cannot be read back as an event
    read_back = read_suite([folder])
    assert sorted(t.steps for t in read_back.traces) == sorted(list(r["path"]) for r in plan["scenarios"])


@pytest.mark.parametrize("name", HOSTILE)
def test_hostile_names_export_safely(name: str, tmp_path: Path) -> None:
    plan = _plan([name, "login", f"{name}!"])
    _check_pytest_export(plan, tmp_path / "py")
    _check_gherkin_export(plan, tmp_path / "gherkin")


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(events=st.lists(names, min_size=1, max_size=6, unique=True))
def test_arbitrary_unicode_names_export_safely(events: list[str], tmp_path_factory: pytest.TempPathFactory) -> None:
    folder = tmp_path_factory.mktemp("q")
    plan = _plan(events)
    _check_pytest_export(plan, folder / "py")
    _check_gherkin_export(plan, folder / "gherkin")


def test_exported_hostile_module_runs_no_code_when_collected(tmp_path: Path) -> None:
    """Collect the skeletons with pytest in a subprocess: the marker file a name tries to create
    never appears, and every scenario is one skipped test."""
    import subprocess
    import sys

    marker = tmp_path / "pwned"
    evil = f'"""\nopen({str(marker)!r}, "w").write("x")\n"""'
    plan = _plan([evil, "login", "x\\N{BULLET}y"])
    export_plan(plan, tmp_path / "out", as_format="pytest")
    ran = subprocess.run(
        [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", str(tmp_path / "out")],
        cwd=tmp_path / "out",
        capture_output=True,
        text=True,
    )
    assert f"{len(plan['scenarios'])} skipped" in ran.stdout, ran.stdout + ran.stderr
    assert not marker.exists()


@given(text=names)
def test_python_string_round_trips(text: str) -> None:
    assert ast.literal_eval(python_string(text)) == text


@given(text=names)
def test_python_text_is_inert_inside_a_docstring(text: str) -> None:
    source = f'def f():\n    """{python_text(text)}"""\n'
    tree = ast.parse(source)
    assert ast.get_docstring(tree.body[0], clean=False) == text  # type: ignore[arg-type]
    assert len(source.splitlines()) == 2


@given(st.lists(names, min_size=1, max_size=8, unique=True))
def test_python_identifiers_are_valid_and_distinct(texts: list[str]) -> None:
    taken: dict[str, str] = {}
    made = [python_identifier(t, taken) for t in texts]
    assert len(set(made)) == len(made)
    for identifier in made:
        assert identifier.isidentifier() and identifier.isascii()
        compile(f"def {identifier}(): pass", "x", "exec")
    # stable: a name keeps its identifier whatever else is exported beside it (absent a hash clash)
    assert python_identifier(texts[0], {}) == made[0]
    assert python_identifier(texts[-1], {}) == made[-1] or made[-1].rsplit("_", 1)[-1].isdigit()


@given(text=names)
def test_gherkin_text_is_one_plain_line(text: str) -> None:
    line = gherkin_text(text)
    assert line and len(line.splitlines()) == 1 and line == line.strip()
    source = f"Feature: f\n  Scenario: {line}\n    Given {line}\n"
    document = Parser().parse(source)
    scenario = document["feature"]["children"][0]["scenario"]
    assert len(scenario["steps"]) == 1 and scenario["steps"][0]["text"] == line


@given(text=names)
def test_markdown_cells_never_split(text: str) -> None:
    for cell in (markdown_code(text), markdown_text(text)):
        assert "\n" not in cell and "\r" not in cell
        assert "<" not in cell.replace("&lt;", "") or cell.startswith("`")
        unescaped_pipes = [i for i, ch in enumerate(cell) if ch == "|" and (i == 0 or cell[i - 1] != "\\")]
        assert not unescaped_pipes


@given(text=names)
def test_terminal_text_renders_literally(text: str) -> None:
    from rich.console import Console

    out = io.StringIO()
    console = Console(file=out, width=400, no_color=True, highlight=False, legacy_windows=False)
    console.print(terminal_text(text), soft_wrap=True)
    assert out.getvalue()  # rendering never raises on markup-looking names such as "[/]"
