r"""The cleaning plan that minimises a separable cost, as a mixed-integer linear programme over
cleaning cycles (solved by HiGHS through :func:`scipy.optimize.milp`).

Each exchanger's horizon is a path through its cleaning starts: from the horizon's start to its
first cleaning, from each cleaning to the next, from the last to the horizon's end. An arc from
cleaning start ``a`` to the next start ``b`` costs the cleaning (its price and what the network
loses while the exchanger is out of service on its bypass, steps ``a .. a+d-1``) and the fouling
cost of the cycle that follows (steps ``a+d .. b-1``, the exchanger fouling from clean); the arc
from the horizon's start carries the fouling cost of the exchanger as it is now. One unit of flow
from start to end per exchanger picks one plan; binary arcs make it a shortest-path problem per
exchanger, and the limit on cleanings at once couples the exchangers:

.. math::

    \min \sum_e \sum_{(a,b)} c_{e,ab}\, x_{e,ab} \quad \text{s.t.} \quad
    \text{flow conservation per exchanger}, \qquad
    \sum_e \sum_{a \le t < a + d_e} \sum_b x_{e,ab} \le k \;\; \forall t, \qquad x \in \{0, 1\}.

Starts whose cleaning would overlap a period with no cleaning allowed have no arcs. The cost of
an arc comes from the caller (:class:`CycleCosts`): the network's marginal costs linearised
about a trajectory, which the optimiser refines by solving again about the new plan's
trajectory (successive linearisation, in the spirit of the MILP planning of network cleaning by
Lavaja & Bagajewicz 2004 and the cycle formulation of Smaïli, Vassiliadis & Wilson 2001; both
from memory).

References
----------
.. [1] Lavaja, J. H., and M. J. Bagajewicz. "On a new MILP model for the planning of heat-exchanger
       network cleaning." Ind. Eng. Chem. Res. 43 (2004) 3924-3938 (from memory).
.. [2] Smaïli, F., V. S. Vassiliadis and D. I. Wilson. "Mitigation of fouling in refinery heat
       exchanger networks by optimal management of cleaning." Energy & Fuels 15 (2001) 1038-1056
       (from memory).
.. [3] Huangfu, Q., and J. A. J. Hall. "Parallelizing the dual revised simplex method." Math.
       Prog. Comp. 10 (2018) 119-142: HiGHS (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.optimize import Bounds, LinearConstraint, milp

__all__ = ["CycleCosts", "plan_from_cycles"]


@dataclass
class CycleCosts:
    """The separable costs of every exchanger's possible cycles over S steps (E exchangers), in
    money: each exchanger's fouling cost per step as it is now and after a cleaning, and what
    each cleaning costs."""

    now: np.ndarray
    """(E, S) cost of each step with the exchanger never cleaned (fouling on from now)."""
    fresh: np.ndarray
    """(E, S, S) cost of step ``s`` for a cycle whose clean running starts at step ``s0``
    (``fresh[e, s0, s]``, zero for ``s < s0``)."""
    cleaning: np.ndarray
    """(E, S) the cost of a cleaning started at step ``s``: its price and the cost of the
    exchanger being out of service for its duration."""
    duration: np.ndarray
    """(E,) steps out of service per cleaning."""
    allowed: np.ndarray
    """(E, S) a cleaning may start at step ``s`` (the exchanger may be cleaned, and the cleaning
    overlaps no period with no cleaning allowed)."""
    at_once: int

    @property
    def shape(self):
        return self.now.shape


def _arcs(costs: CycleCosts, e: int):
    """Arcs of exchanger ``e``: (tail, head, cost, start) with nodes -1 (start), each allowed
    cleaning start, and S (end); ``start`` is the cleaning an arc begins with (-1 for the first)."""
    steps = costs.shape[1]
    starts = np.flatnonzero(costs.allowed[e])
    d = int(costs.duration[e])
    now_cum = np.concatenate([[0.0], np.cumsum(costs.now[e])])
    arcs = [(-1, steps, now_cum[steps], -1)]
    arcs += [(-1, b, now_cum[b], -1) for b in starts]
    for a in starts:
        running = a + d
        fresh_cum = np.concatenate([[0.0], np.cumsum(costs.fresh[e, min(running, steps - 1)])]) if running < steps \
            else np.zeros(steps + 1)
        base = costs.cleaning[e, a]
        for b in starts[starts >= running]:
            arcs.append((a, b, base + fresh_cum[b] - fresh_cum[running], a))
        arcs.append((a, steps, base + (fresh_cum[steps] - fresh_cum[running] if running < steps else 0.0), a))
    return arcs


def plan_from_cycles(costs: CycleCosts, time_limit=120.0):
    """The plan of least separable cost: (E, S) bool, True where a cleaning starts, and the
    scipy result (``status``, ``message``, ``fun``: the plan's separable cost)."""
    exchangers, steps = costs.shape
    tails, heads, values, begins, owners = [], [], [], [], []
    for e in range(exchangers):
        for tail, head, cost, begin in _arcs(costs, e):
            tails.append(tail), heads.append(head), values.append(cost), begins.append(begin), owners.append(e)
    tails, heads, begins, owners = (np.array(v) for v in (tails, heads, begins, owners))
    values = np.array(values, dtype=float)
    arcs = len(values)
    # flow conservation: per exchanger, node -1 emits one unit, node S absorbs one, others balance
    node_index = {}
    rows, cols, data, lower, upper = [], [], [], [], []

    def node_row(e, node):
        key = (e, node)
        if key not in node_index:
            node_index[key] = len(node_index)
            demand = 1.0 if node == -1 else (-1.0 if node == steps else 0.0)
            lower.append(demand), upper.append(demand)
        return node_index[key]

    for j in range(arcs):
        rows += [node_row(owners[j], tails[j]), node_row(owners[j], heads[j])]
        cols += [j, j]
        data += [1.0, -1.0]
    conservation = sp.csr_matrix((data, (rows, cols)), shape=(len(node_index), arcs))
    # at most k cleanings at once: arc j begins a cleaning occupying steps begin .. begin + d - 1
    r_rows, r_cols = [], []
    for j in np.flatnonzero(begins >= 0):
        d = int(costs.duration[owners[j]])
        for t in range(begins[j], min(begins[j] + d, steps)):
            r_rows.append(t), r_cols.append(j)
    resource = sp.csr_matrix((np.ones(len(r_rows)), (r_rows, r_cols)), shape=(steps, arcs))
    constraints = [LinearConstraint(conservation, np.array(lower), np.array(upper)),
                   LinearConstraint(resource, -np.inf, float(costs.at_once))]
    result = milp(values, constraints=constraints, integrality=np.ones(arcs), bounds=Bounds(0.0, 1.0),
                  options={"time_limit": time_limit, "disp": False})
    plan = np.zeros((exchangers, steps), dtype=bool)
    if result.x is not None:
        chosen = result.x > 0.5
        for j in np.flatnonzero(chosen & (begins >= 0)):
            plan[owners[j], begins[j]] = True
    return plan, result
