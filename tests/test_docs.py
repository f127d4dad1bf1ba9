"""Every command has help text and appears in the README; the quick start stays true."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from gapfinder.cli import cli, command_names

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text()


@pytest.mark.parametrize("name", command_names())
def test_command_has_help_and_is_documented(name: str) -> None:
    command = cli.commands[name]
    assert command.help and len(command.help) > 20
    assert f"gapfinder {name}" in README
    result = CliRunner().invoke(cli, [name, "--help"])
    assert result.exit_code == 0 and "Usage:" in result.output


def test_readme_quick_start_uses_sample_data_and_pytest() -> None:
    quick = README.split("## Quick start", 1)[1].split("##", 1)[0]
    assert "sample_telemetry" in quick
    ci = (ROOT / ".ci" / "run").read_text()
    assert "python -m pytest" in quick and "python -m pytest" in ci


def test_developers_guide_lists_every_module() -> None:
    guide = (ROOT / "DEVELOPERS.md").read_text()
    for module in sorted((ROOT / "gapfinder").glob("*.py")):
        if module.stem != "__init__":
            assert module.name in guide, f"{module.name} missing from DEVELOPERS.md"
