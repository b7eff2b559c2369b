"""Calculation order: strongly connected blocks in topological order, and tear streams inside
each cyclic block.

The unit graph has cycles even without a process recycle: a product cooled through E-105, then
E-103, then E-101 while the crude runs E-101 -> E-103 -> E-105 couples the exchangers both ways.
Each strongly connected component (Tarjan's algorithm, through networkx) is one block; blocks are
solved in topological order of the condensed graph, so each block sees converged inlets.

Tear set, by block size:

* up to :data:`EXACT_SEGMENTS` segments and :data:`MAX_CYCLES` simple cycles: the fewest
  segments whose removal leaves the block acyclic, found as a minimum set cover of the block's
  simple cycles (every cycle must contain a torn segment), solved exactly as a 0-1 integer
  programme with scipy's HiGHS-based ``milp`` (a sparse cover matrix). This is the set-covering
  formulation of tearing discussed by Upadhye & Grens (AIChE J. 21, 1975) and in Westerberg,
  Hutchison, Motard & Winter, Process Flowsheeting (Cambridge, 1979), ch. 3 (from memory).
* above that: the greedy ordering of Eades, Lin & Smyth (Inf. Process. Lett. 47, 1993, from
  memory) — peel off sinks and sources, else the unit with the most outgoing less incoming
  segments — and every segment that runs backwards in that order is torn. It costs
  O(segments log units) and enumerates no cycles. Beside it a lower bound is reported: edge-
  disjoint cycles found by short searches (each needs a tear of its own), so the answer is
  known to be within ``len(tears) - lower_bound`` of the fewest.

Cyclic blocks at the same depth of the condensed graph are independent of each other; where
they have many tears together they are merged into one block (see :func:`_merged`).

Blocks of the same structure (repeated trains: the same units and segments up to their names,
named in the same order) share one tear search. Blocks with many tears are converged on all
their segments at once (:mod:`.block_newton`), where the tear set only names what the tables
report; so a heuristic set costs nothing in convergence.
"""

from __future__ import annotations

import heapq
from collections import defaultdict
from dataclasses import dataclass

import networkx as nx
import numpy as np

MAX_CYCLES = 20_000
EXACT_SEGMENTS = 200
"""Largest block (in segments) whose simple cycles are enumerated for the exact tear set."""
CYCLE_SEARCH_DEPTH = 64
"""Longest cycle (in segments) the lower-bound search looks for."""
SEARCH_BUDGET = 50
"""Visits the lower-bound searches may make together, per segment of the block."""


@dataclass
class Block:
    """Units solved together, in calculation order, and the segments torn to break their cycles."""

    units: list[str]
    tears: list[int]
    method: str = "acyclic"
    lower_bound: int | None = None
    """Fewest tears this block can have, where known (equal to ``len(tears)`` when exact)."""
    parts: list[Block] | None = None
    """For a run of blocks converged together (:mod:`.block_runs`): its blocks in calculation
    order, solved one by one if the run does not converge."""


def plan_calculation(graph: nx.MultiDiGraph) -> list[Block]:
    """Blocks of the unit graph in calculation order, each with its tear segments. Independent
    cyclic blocks at one depth of the condensed graph are merged into one (:func:`_merged`)."""
    condensed = nx.condensation(graph)
    component_of = condensed.graph["mapping"]
    inside = defaultdict(list)  # component -> its segments (u, v, key), in one pass over the graph
    for u, v, k in graph.edges(keys=True):
        if component_of[u] == component_of[v]:
            inside[component_of[u]].append((u, v, k))
    depth, cyclic_at = {}, defaultdict(list)
    blocks, solved = [], {}  # structure of a block -> its tears as positions in that structure
    for component in nx.topological_sort(condensed):
        depth[component] = 1 + max((depth[p] for p in condensed.predecessors(component)), default=-1)
        members = condensed.nodes[component]["members"]
        edges = sorted(inside[component], key=lambda e: e[2])
        if not edges:
            blocks.append((depth[component], Block(list(members), [])))
            continue
        rank = {n: i for i, n in enumerate(sorted(members, key=str))}
        structure = tuple((rank[u], rank[v]) for u, v, _ in edges)
        if structure not in solved:  # repeated trains share one tear search
            tears, method, bound = _tears_and_bound(graph, members, edges)
            position = {k: i for i, (_, _, k) in enumerate(edges)}
            solved[structure] = ([position[k] for k in tears], method, bound)
        places, method, bound = solved[structure]
        tears = sorted(edges[i][2] for i in places)
        cyclic_at[depth[component]].append(Block(_order_without(members, edges, tears), tears, method, bound))
    for level, cyclic in cyclic_at.items():
        blocks.extend((level, block) for block in _merged(cyclic))
    return [block for _, block in sorted(blocks, key=lambda pair: pair[0])]  # stable: topological within a depth


def _merged(cyclic: list[Block]) -> list[Block]:
    """Cyclic blocks at one depth of the condensed graph (no segment joins them, so their order
    is free) as one block where they have more tears together than the engine's
    ``LARGE_BLOCK_TEARS``, else unchanged. The merged block is then converged on all its
    segments at once, one stacked call per unit class per sweep, instead of one call per unit
    per block: side-by-side trains of a site (hundreds of one-tear blocks of a few units each)
    spent their time in that per-call overhead."""
    from hxtrain.solver.simulation.engine import LARGE_BLOCK_TEARS

    if len(cyclic) < 2 or sum(len(b.tears) for b in cyclic) <= LARGE_BLOCK_TEARS:
        return cyclic
    methods = list(dict.fromkeys(b.method for b in cyclic))
    bounds = [b.lower_bound for b in cyclic]
    return [Block([u for b in cyclic for u in b.units], sorted(t for b in cyclic for t in b.tears),
                  f"{len(cyclic)} independent blocks merged: " + "; ".join(methods),
                  None if None in bounds else sum(bounds))]


def _without(sub: nx.MultiDiGraph, tears) -> nx.MultiDiGraph:
    cut = nx.MultiDiGraph()
    cut.add_nodes_from(sub.nodes)
    cut.add_edges_from((u, v, k) for u, v, k in sub.edges(keys=True) if k not in tears)
    return cut


def _order_without(members, edges, tears) -> list[str]:
    """The units in topological order once the tears are cut, the smallest name first among
    those ready (Kahn's algorithm with a heap: the order networkx's lexicographical sort gives)."""
    cut = set(tears)
    following, waiting = defaultdict(list), {n: 0 for n in members}
    for u, v, k in edges:
        if k not in cut:
            following[u].append(v)
            waiting[v] += 1
    ready = [n for n, count in waiting.items() if count == 0]
    heapq.heapify(ready)
    order = []
    while ready:
        n = heapq.heappop(ready)
        order.append(n)
        for v in following[n]:
            waiting[v] -= 1
            if waiting[v] == 0:
                heapq.heappush(ready, v)
    return order


def edge_cycles(sub: nx.MultiDiGraph, limit=MAX_CYCLES):
    """Simple cycles of a multigraph as sets of edge keys (parallel edges give separate cycles);
    None when there are more than ``limit``."""
    split = nx.DiGraph()
    for u, v, k in sub.edges(keys=True):
        split.add_edge(("unit", u), ("segment", k))
        split.add_edge(("segment", k), ("unit", v))
    cycles = []
    for cycle in nx.simple_cycles(split):
        cycles.append(frozenset(node[1] for node in cycle if node[0] == "segment"))
        if len(cycles) > limit:
            return None
    return cycles


def _tears_and_bound(graph, members, edges):
    """(tears, method, lower bound) of one block: exact where small enough, else greedy."""
    if len(edges) <= EXACT_SEGMENTS:
        tears, method = choose_tears(graph.subgraph(members))
        if method.startswith("minimum"):
            return tears, method, len(tears)
    else:
        tears, method = _greedy(members, edges), GREEDY
    bound = _bound(edges)
    return tears, f"{method}; at least {bound} needed (disjoint cycles)", bound


GREEDY = "greedy ordering (Eades-Lin-Smyth)"


def choose_tears(sub: nx.MultiDiGraph):
    """Tear segments for one cyclic block; returns (segment keys, method name): the fewest up
    to the exact bound, the greedy ordering above it (see the module notes)."""
    cycles = edge_cycles(sub) if sub.number_of_edges() <= EXACT_SEGMENTS else None
    if cycles is None:
        return greedy_tears(sub), GREEDY
    from scipy.optimize import Bounds, LinearConstraint, milp
    from scipy.sparse import csr_matrix

    keys = sorted({k for cycle in cycles for k in cycle})
    column = {k: j for j, k in enumerate(keys)}
    rows = [i for i, cycle in enumerate(cycles) for _ in cycle]
    cols = [column[k] for cycle in cycles for k in cycle]
    cover = csr_matrix((np.ones(len(rows)), (rows, cols)), shape=(len(cycles), len(keys)))
    result = milp(
        c=np.ones(len(keys)),
        constraints=LinearConstraint(cover, lb=1.0, ub=np.inf),
        integrality=np.ones(len(keys)),
        bounds=Bounds(0.0, 1.0),
    )
    if not result.success:  # pragma: no cover - HiGHS solves these small covers; keep a way out
        return _depth_first_tears(sub), "depth-first heuristic"
    tears = [k for k, x in zip(keys, result.x) if x > 0.5]
    return tears, "minimum cycle cover (MILP)"


def greedy_tears(sub: nx.MultiDiGraph) -> list[int]:
    """Segments running backwards in the Eades-Lin-Smyth ordering of the block's units: a
    feedback set found in O(segments log units) (heap with lazy deletion)."""
    return _greedy(sub.nodes, list(sub.edges(keys=True)))


def _greedy(members, edges) -> list[int]:
    out_edges, in_edges = defaultdict(list), defaultdict(list)
    for u, v, k in edges:
        out_edges[u].append(v)
        in_edges[v].append(u)
    nodes = sorted(members, key=str)
    out_degree = {n: sum(1 for v in out_edges[n] if v != n) for n in nodes}
    in_degree = {n: sum(1 for u in in_edges[n] if u != n) for n in nodes}
    left, right, removed = [], [], set()
    heap = [(-(out_degree[n] - in_degree[n]), i, n) for i, n in enumerate(nodes)]
    heapq.heapify(heap)
    rank = {n: i for i, n in enumerate(nodes)}
    sinks = [n for n in nodes if out_degree[n] == 0]
    sources = [n for n in nodes if in_degree[n] == 0 and out_degree[n] > 0]

    def remove(n):
        removed.add(n)
        for v in out_edges[n]:
            if v not in removed:
                in_degree[v] -= 1
                _requeue(v)
        for u in in_edges[n]:
            if u not in removed:
                out_degree[u] -= 1
                _requeue(u)

    def _requeue(n):
        if out_degree[n] == 0:
            sinks.append(n)
        elif in_degree[n] == 0:
            sources.append(n)
        heapq.heappush(heap, (-(out_degree[n] - in_degree[n]), rank[n], n))

    while len(removed) < len(nodes):
        if sinks:
            n = sinks.pop()
            if n not in removed:
                right.append(n)
                remove(n)
            continue
        if sources:
            n = sources.pop()
            if n not in removed and out_degree[n] > 0 and in_degree[n] == 0:
                left.append(n)
                remove(n)
            continue
        score, _, n = heapq.heappop(heap)
        if n in removed or -score != out_degree[n] - in_degree[n]:
            continue
        left.append(n)
        remove(n)
    position = {n: i for i, n in enumerate(left + right[::-1])}
    return sorted(k for u, v, k in edges if position[v] <= position[u])


def disjoint_cycle_bound(sub: nx.MultiDiGraph, depth=CYCLE_SEARCH_DEPTH, budget=SEARCH_BUDGET) -> int:
    """A lower bound on the tears of a block: cycles of at most ``depth`` segments that share
    no segment, found greedily, shortest first from each segment (every one of them needs a
    tear of its own). The searches together visit at most ``budget`` times the segments, so
    the bound costs O(segments) however the cycles run."""
    return _bound(list(sub.edges(keys=True)), depth, budget)


def _bound(edges, depth=CYCLE_SEARCH_DEPTH, budget=SEARCH_BUDGET) -> int:
    edges = sorted(edges, key=lambda e: e[2])
    free = defaultdict(list)  # unit -> [(next unit, segment)]
    for u, v, k in edges:
        free[u].append((v, k))
    used, count = set(), 0
    allowance = [budget * max(1, len(edges))]
    for u, v, k in edges:
        if k in used or allowance[0] <= 0:
            continue
        path = [] if u == v else _short_path(free, v, u, depth - 1, used | {k}, allowance)
        if path is not None:
            used.update(path + [k])
            count += 1
    return count


def _short_path(free, start, goal, depth, used, allowance):
    """Segments of a shortest path start -> goal of at most ``depth`` segments avoiding
    ``used`` (breadth first); each visit spends one of ``allowance[0]``."""
    parent, frontier = {start: None}, [start]
    for _ in range(depth):
        following = []
        for node in frontier:
            for nxt, k in free[node]:
                allowance[0] -= 1
                if k in used or nxt in parent:
                    continue
                parent[nxt] = (node, k)
                if nxt == goal:
                    path = []
                    while parent[nxt] is not None:
                        nxt, seg = parent[nxt]
                        path.append(seg)
                    return path
                following.append(nxt)
        if allowance[0] <= 0:
            return None
        frontier = following
    return None


def _depth_first_tears(sub: nx.MultiDiGraph):
    tears = set()
    state = {}
    for start in sorted(sub.nodes):
        if start in state:
            continue
        stack = [(start, iter(sorted(sub.out_edges(start, keys=True), key=lambda e: e[2])))]
        state[start] = "open"
        while stack:
            node, edges = stack[-1]
            for _, v, k in edges:
                if state.get(v) == "open":
                    tears.add(k)
                elif v not in state:
                    state[v] = "open"
                    stack.append((v, iter(sorted(sub.out_edges(v, keys=True), key=lambda e: e[2]))))
                    break
            else:
                state[node] = "done"
                stack.pop()
    for k in sorted(tears):  # drop tears that are not needed
        trial = tears - {k}
        if nx.is_directed_acyclic_graph(_without(sub, trial)):
            tears = trial
    return sorted(tears)


__all__ = ["Block", "plan_calculation", "choose_tears", "greedy_tears", "disjoint_cycle_bound", "edge_cycles",
           "MAX_CYCLES", "EXACT_SEGMENTS"]
