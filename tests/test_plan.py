"""Budgeted selection against the exact optimum, scenario completion, and the demo's planted truth."""

from __future__ import annotations

import itertools
import json
import math
import shutil
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import gapfinder.plan as plan_module
from gapfinder.coverage import occurs_in
from gapfinder.errors import ConfigError
from gapfinder.plan import PlanOptions, greedy_max_coverage, load_plan, make_plan, scenario_through
from gapfinder.usage_model import UsageModel
from gapfinder.workspace import Workspace
from tests.helpers import SAMPLE

MANIFEST = json.loads((SAMPLE / "manifest.json").read_text())


def optimum(sets: list[set[int]], weights: dict[int, float], budget: float, costs: list[float]) -> float:
    best = 0.0
    for r in range(len(sets) + 1):
        for pick in itertools.combinations(range(len(sets)), r):
            if sum(costs[i] for i in pick) <= budget:
                covered = set().union(*(sets[i] for i in pick)) if pick else set()
                best = max(best, sum(weights[e] for e in covered))
    return best


def test_hand_worked_instance() -> None:
    """Computed by hand (not from a publication): A={1,2,3,4}, B={1,2,5}, C={3,4,6}, budget 2.
    Greedy takes A, then B or C, and covers 5 elements; the optimum B ∪ C covers 6."""
    sets = [{1, 2, 3, 4}, {1, 2, 5}, {3, 4, 6}]
    weights = {e: 1.0 for e in range(1, 7)}
    pick = greedy_max_coverage(sets, weights, 2)
    assert pick.chosen[0] == 0 and pick.chosen[1] in (1, 2) and pick.total == 5
    assert optimum(sets, weights, 2, [1, 1, 1]) == 6
    assert pick.total >= pick.bound * 6


instances = st.lists(st.sets(st.integers(0, 9), max_size=6), min_size=1, max_size=7)


@settings(max_examples=200, deadline=None)
@given(sets=instances, data=st.data(), budget=st.integers(1, 4))
def test_unit_cost_greedy_meets_its_bound(sets: list[set[int]], data: st.DataObject, budget: int) -> None:
    weights = {e: data.draw(st.floats(0.1, 10)) for e in range(10)}
    pick = greedy_max_coverage(sets, weights, budget)
    best = optimum(sets, weights, budget, [1.0] * len(sets))
    assert len(pick.chosen) <= budget
    assert pick.total >= (1 - (1 - 1 / budget) ** budget) * best - 1e-9
    assert pick.total == pytest.approx(sum(weights[e] for e in set().union(*(sets[i] for i in pick.chosen))))


@settings(max_examples=150, deadline=None)
@given(sets=instances, data=st.data(), budget=st.integers(1, 12), enumerate_starts=st.booleans())
def test_step_cost_selection_meets_its_bound(
    sets: list[set[int]], data: st.DataObject, budget: int, enumerate_starts: bool
) -> None:
    weights = {e: data.draw(st.floats(0.1, 10)) for e in range(10)}
    costs = [float(data.draw(st.integers(1, 6))) for _ in sets]
    with pytest.MonkeyPatch.context() as patch:
        if not enumerate_starts:
            patch.setattr(plan_module, "ENUMERATION_LIMIT", -1)  # force the modified greedy
        pick = greedy_max_coverage(sets, weights, budget, costs=costs)
    best = optimum(sets, weights, budget, costs)
    assert sum(costs[i] for i in pick.chosen) <= budget
    expected_bound = (1 - 1 / math.e) if enumerate_starts else (1 - 1 / math.e) / 2
    assert pick.bound == pytest.approx(expected_bound)
    assert pick.total >= pick.bound * best - 1e-9


def test_scenario_is_the_most_probable_session_through_the_path() -> None:
    model = UsageModel.from_transitions(
        [
            ("START", "a", 6),
            ("START", "c", 4),
            ("a", "b", 3),
            ("a", "END", 3),
            ("c", "b", 1),
            ("c", "END", 3),
            ("b", "END", 4),
        ]
    )
    steps, probability = scenario_through(model, ["b"])  # type: ignore[misc]
    assert steps == ["a", "b"] and probability == pytest.approx(0.6 * 0.5 * 1.0)
    steps, _ = scenario_through(model, ["c", "b"])  # type: ignore[misc]
    assert steps == ["c", "b"]
    assert scenario_through(model, ["b", "a"]) is None  # nobody goes from b back to a


@pytest.fixture(scope="module")
def demo_ws(tmp_path_factory: pytest.TempPathFactory, suite_workspace: Path) -> Path:
    ws_path = tmp_path_factory.mktemp("plan") / "ws.duckdb"
    shutil.copy(suite_workspace, ws_path)
    return ws_path


@pytest.mark.parametrize("objective", ["transitions", "kpaths", "patterns"])
def test_budget_of_the_planted_count_closes_every_planted_journey(demo_ws: Path, objective: str) -> None:
    planted = MANIFEST["untested_journeys"]
    with Workspace(demo_ws) as ws:
        result = make_plan(ws, PlanOptions(budget=len(planted), objective=objective))
    paths = [s["path"] for s in result["scenarios"]]
    assert len(paths) <= len(planted)
    for journey in planted:
        signature = journey["signature_transition"]
        assert any(occurs_in(signature, p, 0) for p in paths), f"{journey['journey']} not exercised by the plan"
    for metric, figures in result["coverage"].items():
        assert figures["after"] >= figures["before"], metric


def test_step_budget_and_stored_plan(demo_ws: Path) -> None:
    with Workspace(demo_ws) as ws:
        result = make_plan(ws, PlanOptions(budget=12, cost="steps"))
        stored = load_plan(ws)
    assert sum(s["steps"] for s in result["scenarios"]) <= 12
    assert "1 − 1/e" in result["guarantee"]
    assert [s["path"] for s in stored["scenarios"]] == [s["path"] for s in result["scenarios"]]
    assert all(s["gain"] > 0 for s in result["scenarios"])


def test_bad_plan_options() -> None:
    with pytest.raises(ConfigError, match="--budget"):
        PlanOptions(budget=0)
    with pytest.raises(ConfigError, match="--objective"):
        PlanOptions(objective="vibes")


def test_every_ranked_gap_says_whether_the_plan_covers_it(suite_workspace: Path, tmp_path: Path) -> None:
    import shutil

    from gapfinder.plan import PlanOptions, make_plan
    from gapfinder.workspace import Workspace

    ws_path = tmp_path / "ws.duckdb"
    shutil.copy(suite_workspace, ws_path)
    with Workspace(ws_path) as ws:
        plan = make_plan(ws, PlanOptions(budget=3))
    decisions = plan["gap_decisions"]
    assert decisions and [d["rank"] for d in decisions] == sorted(d["rank"] for d in decisions)
    statuses = {"planned", "covered indirectly", "no gain", "over budget", "no scenario", "not considered"}
    assert {d["status"] for d in decisions} <= statuses
    planned_ranks = {g for s in plan["scenarios"] for g in s["gaps"]}
    for d in decisions:
        assert (d["status"] == "planned") == (d["rank"] in planned_ranks), d
        assert d["why"]
    assert any(d["status"] == "over budget" and "smallest planned one adds" in d["why"] for d in decisions)


def test_a_plan_from_gaps_found_once_equals_the_plan_that_finds_its_own(demo_ws: Path) -> None:
    """run finds the gaps once for its listing and its plan: ranks do not move with `top`."""
    import dataclasses

    from gapfinder.gaps import find_gaps
    from gapfinder.plan import plan_gap_options

    options = PlanOptions(budget=4)
    with Workspace(demo_ws) as ws:
        alone = make_plan(ws, options)
        wider = find_gaps(ws, dataclasses.replace(plan_gap_options(options), top=options.candidates))
        shorter = find_gaps(ws, dataclasses.replace(plan_gap_options(options), top=10))
        shared = make_plan(ws, options, gaps=wider)
    assert [g["path"] for g in shorter["gaps"]] == [g["path"] for g in wider["gaps"][:10]]
    assert [s["path"] for s in shared["scenarios"]] == [s["path"] for s in alone["scenarios"]]
    assert shared["coverage"] == alone["coverage"]
