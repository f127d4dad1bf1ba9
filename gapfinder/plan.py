"""Plan: the set of new test scenarios, within a budget, that buys the most usage-weighted coverage.

Candidate scenarios: for each top gap, a complete session path that contains it — the most
probable route from START to the gap's first step, between its steps (the direct transition when
people take it), and from its last step to END, under the usage model (shortest paths on edge
costs −log p with networkx). Every scenario is thus a path people really take end to end.

Selection: each scenario covers field items — transitions, k-paths or mined patterns, per the
objective — that neither the suite nor an earlier pick exercises, worth their field occurrences
(patterns: sessions). With unit cost per test the greedy choice of the largest marginal gain
achieves at least 1 − (1 − 1/B)^B ≥ 1 − 1/e of the optimum for a budget of B tests (Nemhauser,
Wolsey & Fisher 1978). With a cost per step the greedy choice of the largest gain per step alone
has no guarantee; following Khuller, Moss & Naor (1999) every start of up to three scenarios
within the budget is completed greedily and the best result kept, which achieves 1 − 1/e; when the
candidates are too many to enumerate, the better of the cost-effective greedy and the best single
scenario is kept, which achieves ½(1 − 1/e) (this bound is recalled from memory of that paper; the
tests check it against brute-force optima on random instances).

References
----------
G. L. Nemhauser, L. A. Wolsey, M. L. Fisher, "An analysis of approximations for maximizing
submodular set functions — I", Mathematical Programming 14 (1978) 265–294.
S. Khuller, A. Moss, J. Naor, "The budgeted maximum coverage problem", Information Processing
Letters 70 (1999) 39–45.
"""

from __future__ import annotations

import itertools
import json
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import networkx as nx
import numpy as np
import pyarrow as pa

from gapfinder.coverage import (
    FieldItems,
    TestPaths,
    compute_coverage,
    exercised_codes,
    load_field_items,
    load_test_paths,
    occurs_in,
)
from gapfinder.errors import ConfigError
from gapfinder.gaps import GapOptions, find_gaps
from gapfinder.paths import feature_names
from gapfinder.sql import first_row, registered, run
from gapfinder.usage_model import END, START, UsageModel
from gapfinder.workspace import StageRecord, Workspace, stage_clock

__all__ = [
    "COSTS",
    "OBJECTIVES",
    "PlanOptions",
    "greedy_max_coverage",
    "load_plan",
    "make_plan",
    "scenario_through",
]

OBJECTIVES = ("transitions", "kpaths", "patterns")
COSTS = ("tests", "steps")
ENUMERATION_LIMIT = 50_000  # starts of up to three scenarios tried exhaustively for step costs


@dataclass(frozen=True)
class PlanOptions:
    """The budget and what it buys. ``budget`` counts tests (cost tests) or steps (cost steps)."""

    budget: int = 8
    cost: str = "tests"
    objective: str = "transitions"
    candidates: int = 30
    min_users: int = 5
    tz: str | None = None  # for the gaps' trends: the time zone whose midnights cut days
    sample: int = 0  # > 0: that many scenarios drawn as random walks of the usage chain instead
    seed: int = 1

    def __post_init__(self) -> None:
        if self.sample < 0:
            raise ConfigError(f"--sample {self.sample}: give 1 or more scenarios to draw")
        if self.budget < 1:
            raise ConfigError(f"--budget {self.budget}: give 1 or more")
        if self.cost not in COSTS:
            raise ConfigError(f"--cost {self.cost!r}: give one of {', '.join(COSTS)}")
        if self.objective not in OBJECTIVES:
            raise ConfigError(f"--objective {self.objective!r}: give one of {', '.join(OBJECTIVES)}")


@dataclass
class Selection:
    """What the selection chose: indices in order, each one's marginal gain, and the bound."""

    chosen: list[int]
    gains: list[float]
    total: float
    guarantee: str
    bound: float
    method: str = "greedy"
    notes: list[str] = field(default_factory=list)


def scenario_through(model: UsageModel, path: Sequence[str]) -> tuple[list[str], float] | None:
    """The most probable complete session (without START/END) that contains ``path`` in order,
    and its probability under the usage model; None when the model cannot connect it.

    Examples
    --------
    >>> model = UsageModel.from_transitions([("START", "a", 3), ("START", "b", 1), ("a", "b", 2),
    ...                                      ("a", "END", 1), ("b", "END", 3)])
    >>> scenario_through(model, ["b"])
    (['a', 'b'], 0.5)
    """
    G = model.G
    steps = [s for s in path]
    anchors = [*([START] if steps[0] != START else []), *steps, *([END] if steps[-1] != END else [])]
    route = [anchors[0]]
    cost = 0.0
    for a, b in itertools.pairwise(anchors):
        if not (G.has_node(a) and G.has_node(b)):
            return None
        if G.has_edge(a, b):
            leg = [a, b]
        else:
            try:
                leg = nx.dijkstra_path(G, a, b, weight="cost")
            except nx.NetworkXNoPath:
                return None
        cost += sum(G.edges[x, y]["cost"] for x, y in itertools.pairwise(leg))
        route.extend(leg[1:])
    return route[1:-1], math.exp(-cost)


def greedy_max_coverage(
    sets: Sequence[set[int]],
    weights: dict[int, float],
    budget: float,
    *,
    costs: Sequence[float] | None = None,
    covered: set[int] | None = None,
) -> Selection:
    """Choose sets within ``budget`` maximizing the weight of newly covered elements.

    Unit costs (``costs`` None): the greedy of Nemhauser, Wolsey & Fisher. Other costs: the partial
    enumeration of Khuller, Moss & Naor when it is small enough, else their modified greedy.

    Examples
    --------
    The instance worked by hand in the tests: A = {1,2,3,4}, B = {1,2,5}, C = {3,4,6}, budget 2.
    Greedy takes A, then B (or C): 5 elements; the optimum B ∪ C covers 6.

    >>> pick = greedy_max_coverage([{1, 2, 3, 4}, {1, 2, 5}, {3, 4, 6}], {e: 1 for e in range(1, 7)}, 2)
    >>> pick.chosen, pick.total
    ([0, 1], 5.0)
    """
    already = set(covered or ())
    if costs is None:
        chosen, gains, total = _greedy(sets, weights, already, [1.0] * len(sets), budget, by_ratio=False)
        b = int(budget)
        bound = 1 - (1 - 1 / b) ** b if b >= 1 else 0.0
        return Selection(chosen, gains, total, f"≥ 1 − (1 − 1/{b})^{b} = {bound:.3f} of the optimum", bound)
    cost_list = [float(c) for c in costs]
    affordable = [i for i, c in enumerate(cost_list) if c <= budget]
    starts = sum(math.comb(len(affordable), r) for r in range(1, 4))
    if starts <= ENUMERATION_LIMIT:
        best: tuple[float, list[int], list[float]] = (0.0, [], [])
        for r in range(1, 4):
            for seed in itertools.combinations(affordable, r):
                spent = sum(cost_list[i] for i in seed)
                if spent > budget:
                    continue
                covered_now = set(already)
                gains = []
                for i in seed:
                    gain = sum(weights.get(e, 0.0) for e in sets[i] - covered_now)
                    gains.append(gain)
                    covered_now |= sets[i]
                rest, rest_gains, rest_total = _greedy(
                    sets, weights, covered_now, cost_list, budget - spent, by_ratio=True, exclude=set(seed)
                )
                total = sum(gains) + rest_total
                if total > best[0] + 1e-12:
                    best = (total, [*seed, *rest], [*gains, *rest_gains])
        bound = 1 - 1 / math.e
        return Selection(
            best[1],
            best[2],
            best[0],
            f"≥ 1 − 1/e = {bound:.3f} of the optimum (partial enumeration)",
            bound,
            "enumeration",
        )
    chosen, gains, total = _greedy(sets, weights, already, cost_list, budget, by_ratio=True)
    single = max(affordable, key=lambda i: sum(weights.get(e, 0.0) for e in sets[i] - already), default=None)
    if single is not None:
        single_gain = sum(weights.get(e, 0.0) for e in sets[single] - already)
        if single_gain > total:
            chosen, gains, total = [single], [single_gain], single_gain
    bound = (1 - 1 / math.e) / 2
    return Selection(
        chosen, gains, total, f"≥ ½(1 − 1/e) = {bound:.3f} of the optimum (modified greedy)", bound, "modified greedy"
    )


def _greedy(
    sets: Sequence[set[int]],
    weights: dict[int, float],
    covered: set[int],
    costs: list[float],
    budget: float,
    *,
    by_ratio: bool,
    exclude: set[int] | None = None,
) -> tuple[list[int], list[float], float]:
    covered = set(covered)
    remaining = [i for i in range(len(sets)) if i not in (exclude or set())]
    chosen: list[int] = []
    gains: list[float] = []
    spent = 0.0
    while remaining:
        best_i, best_key, best_gain = -1, 0.0, 0.0
        for i in remaining:
            if spent + costs[i] > budget:
                continue
            gain = sum(weights.get(e, 0.0) for e in sets[i] - covered)
            key = gain / costs[i] if by_ratio else gain
            if gain > 0 and key > best_key + 1e-12:
                best_i, best_key, best_gain = i, key, gain
        if best_i < 0:
            break
        chosen.append(best_i)
        gains.append(best_gain)
        covered |= sets[best_i]
        spent += costs[best_i]
        remaining.remove(best_i)
    return chosen, gains, sum(gains)


def _objective_items(
    items: FieldItems, objective: str, framed_paths: list[list[int]]
) -> tuple[list[set[int]], dict[int, float], float]:
    """For each framed path, the objective's items it exercises (as ids); the weight of each item
    some path exercises; and the objective's total weight over every field item.

    k-path items are found by binary search in the field items' sorted codes, and weights are kept
    only for the items the paths exercise: a dict over every k-path took tens of millions of
    entries at 100M events."""
    if objective == "patterns":
        weights = {i: float(s) for i, s in enumerate(items.pattern_sessions.tolist())}
        gap = items.pattern_gap
        sets = [{i for i, p in enumerate(items.patterns) if occurs_in(p, framed, gap)} for framed in framed_paths]
        return sets, weights, sum(weights.values())
    keep = items.k == 2 if objective == "transitions" else items.k >= 2
    rows = np.flatnonzero(keep)
    kept_codes = items.code[rows]  # ascending: the field items come in code order
    sets = []
    for framed in framed_paths:
        codes = np.array(
            sorted(
                exercised_codes(
                    framed, max_k=2 if objective == "transitions" else items.max_k, max_gap=0, bits=items.bits
                )
            ),
            dtype=np.uint64,
        )
        at = np.minimum(np.searchsorted(kept_codes, codes), max(len(kept_codes) - 1, 0))
        found = kept_codes[at] == codes if len(kept_codes) else np.zeros(len(codes), dtype=bool)
        sets.append(set(rows[at[found]].tolist()))
    used = sorted(set().union(*sets)) if sets else []
    weights = {r: float(items.occurrences[r]) for r in used}
    return sets, weights, float(items.occurrences[rows].sum())


def plan_gap_options(options: PlanOptions) -> GapOptions:
    """The gap search a plan draws its candidates from."""
    return GapOptions(top=options.candidates, min_users=options.min_users, tz=options.tz)


def make_plan(
    ws: Workspace, options: PlanOptions | None = None, *, gaps: dict[str, Any] | None = None
) -> dict[str, Any]:
    """Build candidate scenarios from the top gaps, select within the budget, store and return the plan.

    ``gaps`` is a result of ``find_gaps`` already computed with ``plan_gap_options(options)`` (or
    with a larger ``top`` over the same pool: ranks do not move with ``top``); without it the gaps
    are found here."""
    from gapfinder.usage_profile import load_usage_model

    began = stage_clock()
    options = options or PlanOptions()
    tests = load_test_paths(ws)
    items = load_field_items(ws)
    if options.sample:
        return _sampled_plan(ws, options, tests, items, began)
    if options.objective == "patterns" and not items.patterns:
        raise ConfigError("--objective patterns: no mined patterns yet; run `gapfinder paths --kind patterns` first")
    if gaps is None:
        gap_result = find_gaps(ws, plan_gap_options(options))
    else:
        gap_result = {**gaps, "gaps": gaps["gaps"][: options.candidates]}
    model = load_usage_model(ws.con)
    names = feature_names(ws.con)
    ids = {name: i for i, name in enumerate(names)}

    scenarios: list[dict[str, Any]] = []
    seen: dict[tuple[str, ...], dict[str, Any]] = {}
    unreachable = 0
    unreachable_ranks: set[int] = set()
    for gap in gap_result["gaps"]:
        built = scenario_through(model, gap["path"])
        if built is None:
            unreachable += 1
            unreachable_ranks.add(gap["rank"])
            continue
        steps, probability = built
        key = tuple(steps)
        if key in seen:
            seen[key]["gaps"].append(gap["rank"])
            continue
        scenario = {"steps": steps, "probability": probability, "gaps": [gap["rank"]], "gap": gap}
        seen[key] = scenario
        scenarios.append(scenario)
    framed = [[0, *(ids[s] for s in sc["steps"]), 1] for sc in scenarios]
    sets, weights, objective_total = _objective_items(items, options.objective, framed)
    suite_sets, _, _ = _objective_items(items, options.objective, tests.framed)
    covered = set().union(*suite_sets) if suite_sets else set()
    costs = None if options.cost == "tests" else [float(len(sc["steps"])) for sc in scenarios]
    selection = greedy_max_coverage(sets, weights, options.budget, costs=costs, covered=covered)

    chosen = [scenarios[i] for i in selection.chosen]
    before = compute_coverage(tests, items, per_test=False)["metrics"]
    extended = TestPaths(
        [*tests.test_ids, *(f"plan_{n}" for n in range(1, len(chosen) + 1))],
        [*tests.framed, *(framed[i] for i in selection.chosen)],
    )
    after = compute_coverage(extended, items, per_test=False)["metrics"]
    rows = []
    for n, (i, gain) in enumerate(zip(selection.chosen, selection.gains, strict=True), start=1):
        sc = scenarios[i]
        gap = sc["gap"]
        rows.append(
            {
                "scenario": n,
                "name": _scenario_name(sc["steps"]),
                "path": sc["steps"],
                "steps": len(sc["steps"]),
                "probability": sc["probability"],
                "gain": gain,
                "gain_share": gain / objective_total if objective_total else 0.0,
                "gaps": sorted(sc["gaps"]),
                "gap_path": gap["path"],
                "sessions": gap["sessions"],
                "users": gap["users"],
                "share": gap["share"],
                "share_low": gap["share_low"],
                "share_high": gap["share_high"],
                "error_rate": gap["error_rate"],
                "error_lift": gap["error_lift"],
                "failing_step": (gap.get("failing_step") or {}).get("event"),
                "reason": gap["reason"],
            }
        )
    headline = {
        metric: {
            "before": before[metric]["strict"]["by_sessions"],
            "after": after[metric]["strict"]["by_sessions"],
            "before_by_occurrences": before[metric]["strict"]["by_occurrences"],
            "after_by_occurrences": after[metric]["strict"]["by_occurrences"],
            "before_unweighted": before[metric]["strict"]["unweighted"],
            "after_unweighted": after[metric]["strict"]["unweighted"],
        }
        for metric in before
        if metric != "patterns" or items.patterns
    }
    plan = {
        "workspace": str(ws.path),
        "budget": options.budget,
        "cost": options.cost,
        "objective": options.objective,
        "candidates": len(scenarios),
        "unreachable_gaps": unreachable,
        "scenarios": rows,
        "gain": selection.total,
        "gain_share": selection.total / objective_total if objective_total else 0.0,
        "guarantee": selection.guarantee,
        "method": selection.method,
        "coverage": headline,
    }
    plan["gap_decisions"] = _gap_decisions(
        gap_result["gaps"],
        scenarios,
        selection,
        sets,
        weights,
        covered,
        unreachable_ranks,
        objective_total,
        options.objective,
    )
    if ws.has_table("plan_scenarios"):
        from gapfinder.coverage import planned_and_done

        plan["earlier_plan"] = planned_and_done(ws, tests)
    _store(ws, plan, options, began)
    return plan


def _sampled_plan(
    ws: Workspace, options: PlanOptions, tests: TestPaths, items: FieldItems, began: tuple[Any, float]
) -> dict[str, Any]:
    """A plan of usage-sampled scenarios: ``options.sample`` random walks of the usage chain, each
    distinct walk once with how often it was drawn, most drawn first; what each adds to the objective
    beyond the suite and the walks before it."""
    from gapfinder.sampling import sample_walks
    from gapfinder.usage_profile import load_usage_model

    model = load_usage_model(ws.con)
    ids = {name: i for i, name in enumerate(feature_names(ws.con))}
    sampled = sample_walks(model, options.sample, seed=options.seed)
    distinct = [(list(walk), drawn) for walk, drawn in sampled.distinct() if walk]
    framed = [[0, *(ids[s] for s in walk), 1] for walk, _ in distinct]
    sets, weights, objective_total = _objective_items(items, options.objective, framed)
    suite_sets, _, _ = _objective_items(items, options.objective, tests.framed)
    covered = set().union(*suite_sets) if suite_sets else set()
    rows, total_gain = [], 0.0
    for n, ((walk, drawn), exercised) in enumerate(zip(distinct, sets, strict=True), start=1):
        new = exercised - covered
        gain = sum(weights[i] for i in new)
        covered |= new
        total_gain += gain
        probability = math.prod(model.G[a][b]["probability"] for a, b in itertools.pairwise([START, *walk, END]))
        rows.append(
            {
                "scenario": n,
                "kind": "sampled",
                "name": _scenario_name(walk),
                "path": walk,
                "steps": len(walk),
                "probability": probability,
                "drawn": drawn,
                "gain": gain,
                "gain_share": gain / objective_total if objective_total else 0.0,
                "gaps": [],
                "gap_path": walk,
                "share": drawn / options.sample,
                "reason": f"drawn {drawn} of {options.sample} times from the usage chain (seed {options.seed})",
            }
        )
    before = compute_coverage(tests, items, per_test=False)["metrics"]
    extended = TestPaths([*tests.test_ids, *(f"sample_{n}" for n in range(len(framed)))], [*tests.framed, *framed])
    after = compute_coverage(extended, items, per_test=False)["metrics"]
    plan: dict[str, Any] = {
        "workspace": str(ws.path),
        "kind": "sampled",
        "sample": options.sample,
        "seed": options.seed,
        "truncated_walks": sampled.truncated,
        "budget": options.sample,
        "cost": "tests",
        "objective": options.objective,
        "candidates": len(distinct),
        "unreachable_gaps": 0,
        "scenarios": rows,
        "gain": total_gain,
        "gain_share": total_gain / objective_total if objective_total else 0.0,
        "guarantee": (
            "statistical usage testing: the walks' transition frequencies converge to the users' as the sample grows"
        ),
        "method": "random walks of the usage chain",
        "coverage": {
            metric: {"before": before[metric]["strict"]["by_sessions"], "after": after[metric]["strict"]["by_sessions"]}
            for metric in before
            if metric != "patterns" or items.patterns
        },
        "gap_decisions": [],
    }
    _store(ws, plan, options, began)
    return plan


def _gap_decisions(
    gaps: list[dict[str, Any]],
    scenarios: list[dict[str, Any]],
    selection: Selection,
    sets: list[set[int]],
    weights: dict[int, float],
    covered: set[int],
    unreachable: set[int],
    objective_total: float,
    objective: str,
) -> list[dict[str, Any]]:
    """For each ranked gap, whether the plan covers it and, if not, why."""
    number_of = {i: n for n, i in enumerate(selection.chosen, start=1)}
    after = set(covered).union(*(sets[i] for i in selection.chosen)) if selection.chosen else set(covered)
    smallest = min(selection.gains) if selection.gains else 0.0
    scenario_of_gap: dict[int, int] = {}
    for i, scenario in enumerate(scenarios):
        for rank in scenario["gaps"]:
            scenario_of_gap.setdefault(rank, i)
    decisions = []
    for gap in gaps:
        rank = gap["rank"]
        built = scenario_of_gap.get(rank)
        if rank in unreachable:
            status, why = "no scenario", "the usage model has no complete session through its path"
        elif built is None:
            status, why = "not considered", "no candidate scenario was built for it"
        elif built in number_of:
            status, why = "planned", f"scenario {number_of[built]} exercises it"
        else:
            rest = sum(weights[x] for x in sets[built] - after)
            by = next(
                (
                    number_of[j]
                    for j in selection.chosen
                    if occurs_in(
                        gap["path"],
                        ["START", *scenarios[j]["steps"], "END"],
                        None if gap["kind"] == "pattern" else 0,
                    )
                ),
                None,
            )
            if by is not None:
                status, why = "covered indirectly", f"scenario {by} exercises it on the way"
            elif rest == 0:
                status = "no gain"
                why = (
                    f"the planned scenarios already add every {objective.rstrip('s')} its scenario would add; "
                    "the path as a whole stays untested"
                )
            else:
                share = rest / objective_total if objective_total else 0.0
                least = smallest / objective_total if objective_total else 0.0
                status = "over budget"
                why = (
                    f"budget spent on bigger gains: its scenario would add {100 * share:.2f} % of the objective, "
                    f"the smallest planned one adds {100 * least:.2f} %"
                )
        decisions.append({"rank": rank, "path": gap["path"], "status": status, "why": why})
    return decisions


def _scenario_name(steps: Sequence[str]) -> str:
    """The scenario's name, made of its own steps in order."""
    inner = [s for s in steps if s not in (START, END)] or list(steps)
    return " then ".join(s.replace("_", " ") for s in inner)


def _store(ws: Workspace, plan: dict[str, Any], options: PlanOptions, began: tuple[Any, float]) -> None:
    frame = pa.table(
        {
            "scenario_no": pa.array([r["scenario"] for r in plan["scenarios"]], pa.int32()),
            "path": pa.array([r["path"] for r in plan["scenarios"]], pa.list_(pa.string())),
            "details": pa.array([json.dumps(r, sort_keys=True) for r in plan["scenarios"]], pa.string()),
        }
    )
    record = StageRecord(
        began=began,
        stage="plan",
        inputs=[str(ws.path)],
        parameters={
            "budget": options.budget,
            "cost": options.cost,
            "objective": options.objective,
            "sample": options.sample,
            "seed": options.seed,
        },
        row_counts={"scenarios": frame.num_rows, "candidates": plan["candidates"]},
    )
    summary = {k: v for k, v in plan.items() if k != "scenarios"}
    with ws.stage(record) as con:
        with registered(con, plan_frame=frame):
            run(con, "create_plan_scenarios")
        run(con, "upsert_meta", key="plan", value=json.dumps(summary, sort_keys=True, default=str))


def load_plan(ws: Workspace) -> dict[str, Any]:
    """The stored plan (as ``make_plan`` returned it)."""
    ws.require("plan_scenarios", hint="run `gapfinder plan -w ... --budget N` first")
    meta = first_row(ws.con.execute("SELECT value FROM meta WHERE key = 'plan'"))
    plan: dict[str, Any] = json.loads(meta[0]) if meta else {}
    rows = ws.con.execute("SELECT details FROM plan_scenarios ORDER BY scenario_no").fetchall()
    plan["scenarios"] = [json.loads(r[0]) for r in rows]
    return plan
