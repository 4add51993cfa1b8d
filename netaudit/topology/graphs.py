"""Small graph helpers for the topology: connected groups and a maximum-weight pairing.

Designs have tens of thousands of nets and almost no edges between them (0 ohm links,
series resistors, bus splitters), so a union-find over the edges is all connected groups
need. The pairing of data lines with clock lines is a maximum-weight matching; almost every
candidate group is a single data line with a single clock line, answered here directly, and
only groups with a real choice in them go to networkx's matching (imported then, not before:
its import is a large share of a small audit's time).
"""

from __future__ import annotations

from typing import Hashable, Iterable, TypeVar

N = TypeVar("N", bound=Hashable)


def connected_groups(nodes: Iterable[N], edges: Iterable[tuple[N, N]]) -> list[set[N]]:
    """The connected groups of the graph, each a set, in the order their first node appears
    in ``nodes`` (nodes named only by an edge come after, in edge order)."""
    parent: dict[N, N] = {}

    def root(x: N) -> N:
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for a, b in edges:
        parent.setdefault(a, a)
        parent.setdefault(b, b)
        ra, rb = root(a), root(b)
        if ra != rb:
            parent[rb] = ra
    groups: dict[N, set[N]] = {}
    out: list[set[N]] = []
    seen: set[N] = set()
    for node in list(nodes) + list(parent):
        if node in seen:
            continue
        seen.add(node)
        if node not in parent:
            out.append({node})
            continue
        r = root(node)
        group = groups.get(r)
        if group is None:
            group = groups[r] = set()
            out.append(group)
        group.add(node)
    return out


def max_weight_pairs(weights: dict[tuple[N, N], float]) -> set[tuple[N, N]]:
    """A maximum-weight matching of the graph whose edge weights are ``weights`` (one entry
    per edge, ``(u, v)``; weights positive). Returns the chosen edges as ``(u, v)`` keys."""
    adjacency: dict[N, list[tuple[N, N]]] = {}
    for edge in weights:
        u, v = edge
        adjacency.setdefault(u, []).append(edge)
        adjacency.setdefault(v, []).append(edge)
    chosen: set[tuple[N, N]] = set()
    hard: dict[tuple[N, N], float] = {}
    for group in connected_groups(adjacency, weights):
        edges = {e for n in group for e in adjacency[n]}
        hub = [n for n in group if len(adjacency[n]) == len(edges)]
        if hub:
            # Every edge of the group meets one node (a single edge, or a star): a matching
            # holds at most one of them, so the heaviest one is the answer when it is unique.
            best = max(weights[e] for e in edges)
            top = [e for e in edges if weights[e] == best]
            if len(top) == 1:
                chosen.add(top[0])
                continue
        hard.update((e, weights[e]) for e in edges)
    if hard:
        import networkx as nx

        graph = nx.Graph()
        for (u, v), w in hard.items():
            graph.add_edge(u, v, weight=w)
        for u, v in nx.max_weight_matching(graph):
            chosen.add((u, v) if (u, v) in hard else (v, u))
    return chosen
