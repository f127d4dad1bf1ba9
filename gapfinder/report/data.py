"""Everything a report shows, gathered from the workspace once (for the HTML and Markdown pages)."""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from typing import Any

import numpy as np

from gapfinder import __version__
from gapfinder.audit import AuditOptions, audit
from gapfinder.coverage import coverage_report as compute_coverage_report
from gapfinder.coverage import exercised_masks, load_field_items, load_test_paths
from gapfinder.gaps import GapOptions, find_gaps
from gapfinder.paths import feature_names
from gapfinder.plan import load_plan
from gapfinder.usage_profile import summarize_profile
from gapfinder.workspace import Workspace

__all__ = ["path_diagram", "report_data"]


def path_diagram(
    ws: Workspace,
    *,
    max_features: int = 12,
    max_edges: int = 36,
    min_users: int = 5,
    required: Sequence[Sequence[str]] = (),
) -> dict[str, Any]:
    """The most used features and transitions, laid out left to right, each edge marked exercised or not.

    Layers: a feature's layer is its distance from START in the drawn graph (END last); within a
    layer, features are ordered by occurrences. Only transitions with at least ``min_users`` users
    are drawn. Every event of the ``required`` paths (the listed gaps) is drawn, with the
    transitions between consecutive steps of those paths, whatever their rank.
    """
    items = load_field_items(ws)
    tests = load_test_paths(ws)
    exercised, _ = exercised_masks(tests, items)
    names = feature_names(ws.con)
    features = np.flatnonzero(items.k == 1)
    top = features[np.argsort(-items.occurrences[features], kind="stable")[:max_features]]
    ids = {name: i for i, name in enumerate(names)}
    needed = {ids[e] for path in required for e in path if e in ids}
    shown = {items.path(int(r))[0] for r in top} | {0, 1} | needed
    wanted = {(ids[a], ids[b]) for path in required for a, b in itertools.pairwise(path) if a in ids and b in ids}
    rows = [
        int(r) for r in np.flatnonzero((items.k == 2) & (items.users >= min_users)) if set(items.path(int(r))) <= shown
    ]
    rows.sort(key=lambda r: -int(items.occurrences[r]))
    rows = rows[:max_edges] + [r for r in rows[max_edges:] if items.path(r) in wanted]
    edges: list[dict[str, Any]] = [
        {
            "source": names[items.path(r)[0]],
            "target": names[items.path(r)[1]],
            "occurrences": int(items.occurrences[r]),
            "sessions": int(items.sessions[r]),
            "exercised": bool(exercised[r]),
        }
        for r in rows
    ]
    layer = _layers(edges)
    occurrences = {names[items.path(int(r))[0]]: int(items.occurrences[r]) for r in top}
    nodes_in_edges: set[str] = {str(e["source"]) for e in edges} | {str(e["target"]) for e in edges}
    nodes = [
        {"name": n, "layer": layer[n], "occurrences": occurrences.get(n, 0)}
        for n in sorted(nodes_in_edges | {"START", "END"}, key=lambda n: (layer[n], -occurrences.get(n, 0), n))
    ]
    return {"nodes": nodes, "edges": edges}


def _layers(edges: list[dict[str, Any]]) -> dict[str, int]:
    """Left-to-right layers: each feature hangs off its heaviest incoming transition (the way most
    people reach it), and its layer is its depth in that tree from START; END goes last. A feature
    whose heaviest way in loops back on itself is placed just after START."""
    parent: dict[str, tuple[int, str]] = {}
    for e in edges:
        source, target = str(e["source"]), str(e["target"])
        if source != target and target not in ("START", "END"):
            best = parent.get(target)
            if best is None or (e["occurrences"], source) > best:
                parent[target] = (int(e["occurrences"]), source)
    layer: dict[str, int] = {"START": 0}

    def depth(node: str, seen: frozenset[str]) -> int:
        if node in layer:
            return layer[node]
        if node in seen or node not in parent:
            return 0
        return depth(parent[node][1], seen | {node}) + 1

    # every feature drawn gets a layer, also one whose ways in were not among the edges kept (it
    # starts a chain of its own, just after START)
    drawn = {str(e["source"]) for e in edges} | {str(e["target"]) for e in edges} | set(parent)
    for node in sorted(drawn - {"START", "END"}):
        layer[node] = max(1, depth(node, frozenset()))
    layer["END"] = max(layer.values(), default=0) + 1
    return layer


def report_data(ws: Workspace, *, top: int = 10, min_users: int = 5, tz: str | None = None) -> dict[str, Any]:
    """Profile, coverage, gaps, plan (when one is stored), drift, effort against usage, journey
    families and the path diagram."""
    ws.require("suite_tests", hint="run `gapfinder suite TRACES... -w ...` first")
    profile = summarize_profile(ws, top=5, min_users=min_users)
    coverage = compute_coverage_report(ws)
    gaps = find_gaps(ws, GapOptions(top=top, min_users=min_users, tz=tz))
    plan = load_plan(ws) if ws.has_table("plan_scenarios") else None
    drift = audit(ws, AuditOptions(top=8, min_users=min_users, tz=tz))
    from gapfinder.effort import EffortOptions, effort_report
    from gapfinder.families import FamilyOptions, journey_families

    effort = effort_report(ws, EffortOptions(min_users=min_users))
    families = journey_families(ws, FamilyOptions(min_users=min_users))
    return {
        "version": __version__,
        "workspace": str(ws.path),
        "profile": profile,
        "coverage": coverage,
        "gaps": gaps,
        "plan": plan,
        "drift": drift,
        "effort": effort,
        "families": families,
        "diagram": path_diagram(ws, min_users=min_users, required=[g["path"] for g in gaps["gaps"]]),
    }
