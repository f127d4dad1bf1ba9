"""gapfinder: how much of real usage do the automated tests cover, and what should they add?

The library behind the ``gapfinder`` command. A notebook can use every stage directly::

    from gapfinder import Workspace, profile_telemetry, load_suite, find_gaps
    profile_telemetry(["events.parquet"], "ws.duckdb")
    with Workspace("ws.duckdb") as ws:
        load_suite(ws, ["tests/catalog.yaml"])
        gaps = find_gaps(ws)

Stages are imported on first use (PEP 562), so ``import gapfinder`` and ``gapfinder --help`` stay
quick: the miner's compiled kernels load only when something mines.
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

from gapfinder.errors import ConfigError, GapfinderError, InputError, QueryError

# public name -> module that defines it
_LAZY = {
    "ProfileOptions": "gapfinder.usage_profile",
    "profile_telemetry": "gapfinder.usage_profile",
    "Workspace": "gapfinder.workspace",
    "MiningOptions": "gapfinder.patterns",
    "mine_workspace": "gapfinder.patterns",
    "SequenceDatabase": "gapfinder.mining",
    "mine_patterns": "gapfinder.mining",
    "SuiteOptions": "gapfinder.suite",
    "load_suite": "gapfinder.suite",
    "NameAligner": "gapfinder.align",
    "coverage_report": "gapfinder.coverage",
    "GapOptions": "gapfinder.gaps",
    "find_gaps": "gapfinder.gaps",
    "unused_tests": "gapfinder.gaps",
    "PlanOptions": "gapfinder.plan",
    "make_plan": "gapfinder.plan",
    "export_plan": "gapfinder.export",
    "run_pipeline": "gapfinder.pipeline",
    "AuditOptions": "gapfinder.audit",
    "audit": "gapfinder.audit",
    "run_gate": "gapfinder.gate",
}

__all__ = [
    "AuditOptions",
    "ConfigError",
    "GapOptions",
    "GapfinderError",
    "InputError",
    "MiningOptions",
    "NameAligner",
    "PlanOptions",
    "ProfileOptions",
    "QueryError",
    "SequenceDatabase",
    "SuiteOptions",
    "Workspace",
    "__version__",
    "audit",
    "coverage_report",
    "export_plan",
    "find_gaps",
    "load_suite",
    "make_plan",
    "mine_patterns",
    "mine_workspace",
    "profile_telemetry",
    "run_gate",
    "run_pipeline",
    "unused_tests",
]


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'gapfinder' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
