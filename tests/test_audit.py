"""Audit and gate on the committed sample: the manifest's second-quarter rollout is the truth."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from gapfinder.audit import AuditOptions, audit, parse_period
from gapfinder.errors import ConfigError
from gapfinder.gate import parse_floor, run_gate
from gapfinder.workspace import Workspace
from tests.helpers import SAMPLE

MANIFEST = json.loads((SAMPLE / "manifest.json").read_text())


@pytest.fixture(scope="module")
def quarters(suite_workspace: Path) -> dict:
    options = AuditOptions(
        period=parse_period("2026-04-01..2026-06-30"), against=parse_period("2026-01-01..2026-03-31"), by="platform"
    )
    with Workspace(suite_workspace, read_only=True) as ws:
        return audit(ws, options)


def test_the_second_quarter_rollout_is_a_top_mover_and_new(quarters: dict) -> None:
    feature = MANIFEST["rolled_out_in_second_quarter"]["feature"]
    top = [m["path"] for m in quarters["movers"][:3]]
    assert [feature] in top
    mover = next(m for m in quarters["movers"] if m["path"] == [feature])
    assert mover["share_before"] == 0 and mover["p_value"] < 1e-6 and mover["change_low"] > 0
    assert any(feature in n["path"] for n in quarters["new"])


def test_audit_figures_are_consistent(quarters: dict) -> None:
    assert 0 < quarters["distance"]["features"] < 1 and 0 < quarters["distance"]["transitions"] < 1
    changes = [abs(m["change"]) for m in quarters["movers"]]
    assert changes == sorted(changes, reverse=True)
    assert (
        sum(t["sessions"] for t in quarters["trend"])
        == quarters["current"]["sessions"] + quarters["previous"]["sessions"]
    )
    assert [t["bucket"][:7] for t in quarters["trend"]] == [f"2026-0{m}" for m in range(1, 7)]
    before = quarters["coverage"]["previous"]["transitions"]["by_occurrences"]
    after = quarters["coverage"]["current"]["transitions"]["by_occurrences"]
    assert after < before  # the untested waitlist arrived in the second quarter
    assert {s["value"] for s in quarters["segments"]} == {"ios", "android", "web"}


def test_against_another_workspace_compares_by_name(suite_workspace: Path, sample_workspace: Path) -> None:
    with Workspace(suite_workspace, read_only=True) as ws:
        result = audit(ws, AuditOptions(against_workspace=str(sample_workspace)))
    assert result["distance"]["features"] == pytest.approx(0, abs=1e-9)  # the same telemetry
    assert all(abs(m["change"]) < 1e-12 for m in result["movers"])


@pytest.mark.parametrize("text", ["2026-04-01", "2026-06-30..2026-04-01", "2026-13-01..2026-14-01"])
def test_bad_periods(text: str) -> None:
    with pytest.raises(ConfigError, match="--period"):
        parse_period(text)


def test_gate_fails_above_and_passes_below_the_measured_coverage(suite_workspace: Path) -> None:
    with Workspace(suite_workspace, read_only=True) as ws:
        measured = run_gate(ws, [parse_floor("transitions=0")])["checks"][0]["value"]
        high = run_gate(ws, [parse_floor(f"transitions={min(1.0, measured + 0.01)}")])
        low = run_gate(ws, [parse_floor(f"transitions={measured - 0.01}"), parse_floor("kpaths.unweighted=0.01")])
    assert not high["passed"] and low["passed"]
    assert len(low["checks"]) == 2


def test_gate_counts_new_gaps_against_a_baseline(suite_workspace: Path, tmp_path: Path) -> None:
    baseline = tmp_path / "gaps.json"
    baseline.write_text(json.dumps({"gaps": [{"path": ["nothing", "known"], "folded": []}]}))
    with Workspace(suite_workspace, read_only=True) as ws:
        result = run_gate(ws, [], max_new_gaps=2, top=5, baseline=str(baseline))
    check = result["checks"][0]
    assert check["value"] == 5 and not result["passed"]


@pytest.mark.parametrize("text", ["transitions", "vibes=0.5", "transitions=1.5", "transitions.loudly=0.5"])
def test_bad_floors(text: str) -> None:
    with pytest.raises(ConfigError, match="--min-coverage"):
        parse_floor(text)
