"""A layered (Sugiyama-style) layout for the path diagram: layers, crossing reduction, edge routes.

1. Cycles are broken by reversing the back edges of a depth-first search from START (heaviest
   transitions first), so the rest is a DAG; START is layer 0, END the last layer.
2. Each node's layer is its longest distance from START in that DAG (networkx's topological order).
3. An edge that spans several layers gets one dummy point per layer it crosses, so it is routed
   through free slots between boxes instead of over them.
4. Within each layer, nodes and dummy points are ordered by the barycentre of their neighbours in
   the layer before (downward sweeps) and after (upward sweeps), a few rounds, fewest crossings kept.

References
----------
K. Sugiyama, S. Tagawa and M. Toda, "Methods for visual understanding of hierarchical system
structures", IEEE Transactions on Systems, Man, and Cybernetics 11(2) (1981), 109–125.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from typing import Any

import networkx as nx

__all__ = ["Layout", "layered_layout"]


@dataclass
class Layout:
    """Slots per layer (node names, or ``("dummy", edge index, layer)`` tuples) and each edge's route."""

    layers: list[list[Any]] = field(default_factory=list)
    slot: dict[Any, tuple[int, int]] = field(default_factory=dict)  # node or dummy -> (layer, index)
    routes: list[list[Any]] = field(default_factory=list)  # per edge: node, dummies..., node
    backward: list[bool] = field(default_factory=list)  # per edge: drawn against the layers' flow


def _crossings(layers: list[list[Any]], links: list[tuple[Any, Any]], slot: dict[Any, tuple[int, int]]) -> int:
    pairs = [(slot[a], slot[b]) for a, b in links]
    count = 0
    for i, ((la, ia), (_, ib)) in enumerate(pairs):
        for (lc, ic), (_, id_) in pairs[i + 1 :]:
            if la == lc and (ia - ic) * (ib - id_) < 0:
                count += 1
    return count


def layered_layout(nodes: list[str], edges: list[tuple[str, str, float]], *, rounds: int = 8) -> Layout:
    """Lay out ``nodes`` (START and END among them) with weighted ``edges`` (source, target, weight)."""
    G = nx.DiGraph()
    G.add_nodes_from(nodes)
    for s, t, w in edges:
        if s != t:
            G.add_edge(s, t, weight=w)
    # 1. break cycles: a depth-first search from START along the heaviest edges first
    reversed_edges: set[tuple[str, str]] = set()
    state: dict[str, int] = {}

    def visit(root: str) -> None:
        stack = [(root, iter(sorted(G.successors(root), key=lambda n: (-G[root][n]["weight"], n))))]
        state[root] = 1
        while stack:
            node, children = stack[-1]
            child = next(children, None)
            if child is None:
                state[node] = 2
                stack.pop()
                continue
            if state.get(child) == 1:
                reversed_edges.add((node, child))
            elif child not in state:
                state[child] = 1
                stack.append((child, iter(sorted(G.successors(child), key=lambda n: (-G[child][n]["weight"], n)))))

    for root in ["START", *sorted(n for n in nodes if n != "START")]:
        if root in G and root not in state:
            visit(root)
    D = nx.DiGraph()
    D.add_nodes_from(nodes)
    for s, t in G.edges:
        if "END" in (s, t) or "START" in (s, t):
            if t == "START" or s == "END":
                D.add_edge(t, s)
            else:
                D.add_edge(s, t)
        elif (s, t) in reversed_edges:
            D.add_edge(t, s)
        else:
            D.add_edge(s, t)
    # 2. layers by longest distance from the sources (START first, END last)
    layer: dict[str, int] = {}
    for n in nx.topological_sort(D):
        preds = [layer[p] + 1 for p in D.predecessors(n)]
        layer[n] = max(preds, default=0 if n == "START" else 1)
    layer["START"] = 0
    last = max([v for k, v in layer.items() if k != "END"], default=0) + 1
    layer["END"] = max(last, layer.get("END", 0))
    # 3. dummy points for edges spanning layers
    layout = Layout()
    count = max(layer.values()) + 1
    layout.layers = [[] for _ in range(count)]
    for n in sorted(nodes, key=lambda n: (layer[n], n)):
        layout.layers[layer[n]].append(n)
    links: list[tuple[Any, Any]] = []
    for index, (s, t, _w) in enumerate(edges):
        if s == t:
            layout.routes.append([s])
            layout.backward.append(False)
            continue
        a, b = layer[s], layer[t]
        backward = b <= a
        route: list[Any] = [s]
        if not backward:  # a backward edge runs in the lane above the boxes: no slots
            for mid in range(a + 1, b):
                dummy = ("dummy", index, mid)
                layout.layers[mid].append(dummy)
                route.append(dummy)
        route.append(t)
        layout.routes.append(route)
        layout.backward.append(backward)
        if not backward:
            links += list(itertools.pairwise(route))

    # 4. crossing reduction by barycentres
    def index_all() -> dict[Any, tuple[int, int]]:
        return {x: (li, i) for li, members in enumerate(layout.layers) for i, x in enumerate(members)}

    neighbours_before: dict[Any, list[Any]] = {}
    neighbours_after: dict[Any, list[Any]] = {}
    for a, b in links:
        neighbours_after.setdefault(a, []).append(b)
        neighbours_before.setdefault(b, []).append(a)
    best = [list(m) for m in layout.layers]
    best_cross = _crossings(layout.layers, links, index_all())
    for r in range(rounds):
        downward = r % 2 == 0
        order = range(1, count) if downward else range(count - 2, -1, -1)
        for li in order:
            slot = index_all()
            near = neighbours_before if downward else neighbours_after

            def centre(x: Any, near: dict[Any, list[Any]] = near, slot: dict[Any, tuple[int, int]] = slot) -> float:
                around = [slot[n][1] for n in near.get(x, [])]
                return sum(around) / len(around) if around else slot[x][1]

            layout.layers[li].sort(key=lambda x: (centre(x), str(x)))
        crossing = _crossings(layout.layers, links, index_all())
        if crossing < best_cross:
            best, best_cross = [list(m) for m in layout.layers], crossing
    layout.layers = best
    layout.slot = index_all()
    return layout
