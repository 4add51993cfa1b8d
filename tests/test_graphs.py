"""The topology's graph helpers agree with networkx, the reference graph library."""

from __future__ import annotations

import random

import networkx as nx
import pytest

from netaudit.topology.graphs import connected_groups, max_weight_pairs


def _random_graph(rng: random.Random, nodes: int, edges: int) -> tuple[list[int], list[tuple[int, int]]]:
    names = list(range(nodes))
    rng.shuffle(names)
    return names, [(rng.randrange(nodes), rng.randrange(nodes)) for _ in range(edges)]


@pytest.mark.parametrize("seed", range(40))
def test_connected_groups_equal_networkx_components_in_the_same_order(seed):
    rng = random.Random(seed)
    nodes, edges = _random_graph(rng, rng.randrange(1, 60), rng.randrange(0, 50))
    g = nx.Graph()
    g.add_nodes_from(nodes)
    g.add_edges_from(edges)
    assert connected_groups(nodes, edges) == list(nx.connected_components(g))


def test_connected_groups_take_nodes_named_only_by_edges():
    assert connected_groups(["a"], [("b", "c")]) == [{"a"}, {"b", "c"}]


def _matching_weight(pairs, weights) -> float:
    return sum(weights[p] for p in pairs)


@pytest.mark.parametrize("seed", range(60))
def test_pairing_weight_equals_networkx_maximum_weight_matching(seed):
    rng = random.Random(seed)
    weights: dict[tuple[tuple[str, int], tuple[str, int]], float] = {}
    for _ in range(rng.randrange(1, 25)):
        edge = (("sda", rng.randrange(12)), ("scl", rng.randrange(12)))
        weights[edge] = weights.get(edge, 0.0) + rng.choice([1.0, 3.0, 4.0, 1000.0])
    pairs = max_weight_pairs(weights)
    assert pairs <= set(weights)
    used = [n for p in pairs for n in p]
    assert len(used) == len(set(used)), "a node is in two pairs"
    g = nx.Graph()
    for (u, v), w in weights.items():
        g.add_edge(u, v, weight=w)
    reference = nx.max_weight_matching(g)
    ref_pairs = {(u, v) if (u, v) in weights else (v, u) for u, v in reference}
    assert _matching_weight(pairs, weights) == _matching_weight(ref_pairs, weights)


def test_a_star_keeps_its_heaviest_edge():
    weights = {(("sda", 1), ("scl", 1)): 3.0, (("sda", 1), ("scl", 2)): 4.0}
    assert max_weight_pairs(weights) == {(("sda", 1), ("scl", 2))}
