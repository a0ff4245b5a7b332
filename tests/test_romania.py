"""costing.network.search.astar on the Romania road map worked example of Russell & Norvig,
"Artificial Intelligence: A Modern Approach", 3rd ed.: Fig 3.2 (map) and Fig 3.22 (straight-line
distances to Bucharest). Values as recorded in shared/references.md section 2:

* edge list (23 undirected roads, 20 cities, total 2483 km): [V-DOC] aimacode/aima-python
  `aima/search.py` `romania_map` (references.md 2.2);
* h_SLD table: [V-2ND] identical in several independent code copies, not read in the book itself
  (references.md 2.3);
* A* route Arad-Sibiu-Rimnicu Vilcea-Pitesti-Bucharest = 418 and greedy best-first route via
  Fagaras = 450: book results [MEM], reproduced with networkx [V-LIB] (references.md 2.4);
* A* expansion order Arad, Sibiu, Rimnicu Vilcea, Fagaras, Pitesti, Bucharest: book's A* stage
  figure [MEM], computed [V-LIB] (references.md 2.4);
* true road distances to Bucharest: [V-LIB] (references.md 2.4).
"""

from __future__ import annotations

import heapq

import networkx as nx
import pytest

from costing.network.search import astar

# references.md 2.2 [V-DOC] aimacode/aima-python romania_map ("Drobeta" as in the 3rd edition)
ROADS = [
    ("Arad", "Zerind", 75), ("Arad", "Sibiu", 140), ("Arad", "Timisoara", 118),
    ("Zerind", "Oradea", 71), ("Oradea", "Sibiu", 151), ("Timisoara", "Lugoj", 111),
    ("Lugoj", "Mehadia", 70), ("Mehadia", "Drobeta", 75), ("Drobeta", "Craiova", 120),
    ("Craiova", "Rimnicu Vilcea", 146), ("Craiova", "Pitesti", 138), ("Sibiu", "Fagaras", 99),
    ("Sibiu", "Rimnicu Vilcea", 80), ("Rimnicu Vilcea", "Pitesti", 97), ("Fagaras", "Bucharest", 211),
    ("Pitesti", "Bucharest", 101), ("Bucharest", "Giurgiu", 90), ("Bucharest", "Urziceni", 85),
    ("Urziceni", "Hirsova", 98), ("Hirsova", "Eforie", 86), ("Urziceni", "Vaslui", 142),
    ("Vaslui", "Iasi", 92), ("Iasi", "Neamt", 87),
]

# references.md 2.3 [V-2ND]: straight-line distance to Bucharest, km (AIMA 3rd ed. Fig 3.22)
H_SLD = {
    "Arad": 366, "Bucharest": 0, "Craiova": 160, "Drobeta": 242, "Eforie": 161, "Fagaras": 176,
    "Giurgiu": 77, "Hirsova": 151, "Iasi": 226, "Lugoj": 244, "Mehadia": 241, "Neamt": 234,
    "Oradea": 380, "Pitesti": 100, "Rimnicu Vilcea": 193, "Sibiu": 253, "Timisoara": 329,
    "Urziceni": 80, "Vaslui": 199, "Zerind": 374,
}

# references.md 2.4 [V-LIB]: true road distance to Bucharest
TRUE_TO_BUCHAREST = {
    "Arad": 418, "Bucharest": 0, "Craiova": 239, "Drobeta": 359, "Eforie": 269, "Fagaras": 211,
    "Giurgiu": 90, "Hirsova": 183, "Iasi": 319, "Lugoj": 504, "Mehadia": 434, "Neamt": 406,
    "Oradea": 429, "Pitesti": 101, "Rimnicu Vilcea": 198, "Sibiu": 278, "Timisoara": 536,
    "Urziceni": 85, "Vaslui": 227, "Zerind": 493,
}

OPTIMAL = ["Arad", "Sibiu", "Rimnicu Vilcea", "Pitesti", "Bucharest"]  # 418, references.md 2.4
GREEDY = ["Arad", "Sibiu", "Fagaras", "Bucharest"]  # 450, references.md 2.4
ASTAR_EXPANSIONS = ["Arad", "Sibiu", "Rimnicu Vilcea", "Fagaras", "Pitesti", "Bucharest"]  # 2.4

CITIES = sorted(H_SLD)
ID = {c: i for i, c in enumerate(CITIES)}


def adjacency():
    """Both directions of each road; edge id 2k is road k as listed, 2k + 1 the reverse."""
    adj = [[] for _ in CITIES]
    for k, (a, b, km) in enumerate(ROADS):
        adj[ID[a]].append((ID[b], float(km), 2 * k))
        adj[ID[b]].append((ID[a], float(km), 2 * k + 1))
    return adj


class RecordingAdjacency(list):
    """An adjacency list that notes which node's lanes are read: the search reads adj[u] when it
    expands u, so the notes are the expansion order."""

    def __init__(self, rows):
        super().__init__(rows)
        self.read: list[int] = []

    def __getitem__(self, u):
        self.read.append(u)
        return super().__getitem__(u)


H_LIST = [float(H_SLD[c]) for c in CITIES]


def names(nodes):
    return [CITIES[v] for v in nodes]


def test_the_map_is_the_published_one():
    assert len(ROADS) == 23 and len(CITIES) == 20
    assert sum(km for _a, _b, km in ROADS) == 2483  # references.md 2.2
    assert {c for a, b, _km in ROADS for c in (a, b)} == set(CITIES)


def test_h_sld_is_admissible_and_consistent():
    # consistency on every road, both directions: h(u) <= w(u, v) + h(v)
    for a, b, km in ROADS:
        assert H_SLD[a] <= km + H_SLD[b]
        assert H_SLD[b] <= km + H_SLD[a]
    # admissible: never above the true road distance (reference library networkx, checked against
    # the references.md 2.4 [V-LIB] table)
    g = nx.Graph()
    g.add_weighted_edges_from(ROADS)
    true = nx.single_source_dijkstra_path_length(g, "Bucharest")
    assert true == TRUE_TO_BUCHAREST
    assert all(H_SLD[c] <= true[c] for c in CITIES)


def test_astar_finds_the_418_km_route_in_the_book_order():
    adj = RecordingAdjacency(adjacency())
    res = astar(adj, ID["Arad"], ID["Bucharest"], H_LIST)
    assert res.found
    assert res.weight == 418.0  # 140 + 80 + 97 + 101
    assert names(res.nodes) == OPTIMAL
    assert [ROADS[e // 2][2] for e in res.edges] == [140, 80, 97, 101]
    assert res.stats.settled == 6
    # the target's lanes may or may not be read once it is settled; the order is the book's
    order = list(dict.fromkeys(names(adj.read)))
    assert order in (ASTAR_EXPANSIONS[:-1], ASTAR_EXPANSIONS)


def test_astar_with_a_callable_bound_is_the_same():
    asked: list[str] = []

    def h(v: int) -> float:
        asked.append(CITIES[v])
        return H_LIST[v]

    res = astar(adjacency(), ID["Arad"], ID["Bucharest"], h)
    assert names(res.nodes) == OPTIMAL and res.weight == 418.0
    assert res.stats.settled == 6
    # every city put on the frontier was bounded: Arad, then the neighbours of the expanded cities
    assert set(asked) <= set(CITIES)
    assert {"Arad", "Sibiu", "Timisoara", "Zerind", "Fagaras", "Rimnicu Vilcea", "Pitesti",
            "Craiova", "Bucharest"} <= set(asked)


def test_uniform_cost_gives_the_same_route_and_settles_more():
    a = astar(adjacency(), ID["Arad"], ID["Bucharest"], H_LIST)
    u = astar(adjacency(), ID["Arad"], ID["Bucharest"], None)
    assert names(u.nodes) == OPTIMAL and u.weight == 418.0  # references.md 2.4 [V-LIB]
    # uniform-cost settles every city nearer Arad than 418 km (networkx, reference library)
    g = nx.Graph()
    g.add_weighted_edges_from(ROADS)
    nearer = [c for c, d in nx.single_source_dijkstra_path_length(g, "Arad").items() if d < 418]
    assert u.stats.settled >= len(nearer) + 1 > a.stats.settled


def test_networkx_astar_agrees():
    """Reference library: networkx.astar_path with the same table."""
    g = nx.Graph()
    g.add_weighted_edges_from(ROADS)
    path = nx.astar_path(g, "Arad", "Bucharest", heuristic=lambda u, _t: H_SLD[u], weight="weight")
    assert path == OPTIMAL
    assert nx.path_weight(g, path, "weight") == 418


def greedy_best_first(adj, source, target, h):
    """Best-first graph search ordered by h alone (no g term); returns (nodes, weight, expanded)."""
    parent = {source: (None, 0.0)}
    frontier = [(h[source], 0, source)]
    closed, expanded, counter = set(), [], 0
    while frontier:
        _h, _c, u = heapq.heappop(frontier)
        if u in closed:
            continue
        closed.add(u)
        expanded.append(u)
        if u == target:
            break
        for v, w, _e in adj[u]:
            if v not in closed and v not in parent:
                parent[v] = (u, w)
                counter += 1
                heapq.heappush(frontier, (h[v], counter, v))
    nodes, weight, v = [], 0.0, target
    while v is not None:
        nodes.append(v)
        u, w = parent[v]
        weight += w
        v = u
    return nodes[::-1], weight, expanded


def test_greedy_best_first_takes_the_450_km_route():
    """Without the g term the search follows the smallest h and pays 32 km more (references.md 2.4:
    book result [MEM], reproduced [V-LIB])."""
    nodes, weight, expanded = greedy_best_first(adjacency(), ID["Arad"], ID["Bucharest"], H_LIST)
    assert names(nodes) == GREEDY
    assert weight == 450.0  # 140 + 99 + 211
    assert names(expanded) == GREEDY  # expands only Arad, Sibiu, Fagaras, Bucharest
    res = astar(adjacency(), ID["Arad"], ID["Bucharest"], H_LIST)
    assert weight - res.weight == 32.0


@pytest.mark.parametrize("city", CITIES)
def test_every_city_to_bucharest(city):
    """A* with h_SLD gives the true road distance from every city (references.md 2.4 [V-LIB])."""
    res = astar(adjacency(), ID[city], ID["Bucharest"], H_LIST)
    assert res.found and res.weight == TRUE_TO_BUCHAREST[city]
    assert sum(ROADS[e // 2][2] for e in res.edges) == TRUE_TO_BUCHAREST[city]
