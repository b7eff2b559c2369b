"""Runs of cyclic blocks converged together: a chain of blocks, each waiting on the one before
(trains in series on one cold stream, each heated countercurrently), converged as one block by
Newton on all their segments (:mod:`.block_newton`).

Why: solved one after another, each block of a few exchangers takes about four sweeps, and a
sweep of so few units is nearly all the fixed cost of a call (stacking, the in-service
iteration's numpy calls, one sparse LU): 1,000 trains in series spent 7 s so. Together their
Jacobian is block lower triangular, Newton's step carries each block's change downstream to
first order, and the whole run converges in about as many sweeps as its slowest block, each a
few stacked calls whatever its length. The run has the same solution, and the stated tolerance
means the same for it as for any block Newton converges: every segment within the tolerance of
what its unit computes and of the solution.

Which blocks join a run, scanning the plan from a cyclic block (the plan is in topological
order, so every block's feeders come before it):

* a cyclic block joins, whether it is fed by the run or independent of it;
* an acyclic block fed by the run with outlets joins once a later cyclic block joins (a mixer
  between trains); trailing ones, and those without outlets (products), wait until after it;
* an acyclic block fed only by blocks solved before the run is solved before it.

A run holds at most :data:`RUN_ELEMENTS` segment states over the batch: on a large batch every
block's sweep is already a long vectorized call, so there is nothing to save and each block
keeps its own iteration. A run is made only of two or more cyclic blocks with more tears
together than the engine's ``LARGE_BLOCK_TEARS``. It keeps its blocks (``Block.parts``): if the
run does not converge in every scenario, its blocks are solved one by one as without it.
"""

from __future__ import annotations

from hxtrain.solver.simulation.sequencing import Block

RUN_ELEMENTS = 200_000
"""Most segment states (segments times scenarios) one run holds. A stacked call over this many
is long past the size at which its fixed cost matters, and a run's Newton arrays (three
perturbed copies of its columns) stay at a few tens of MB."""

BEFORE, MEMBER, WAITING, AFTER = "before", "member", "waiting", "after"


def with_runs(net, plan: list[Block], batch: int, large_block_tears: int) -> list[Block]:
    """``plan`` with its runs of cyclic blocks joined (see the module notes), in an order that
    still gives every block converged inlets. Runs already in ``plan`` (a plan read back from an
    evaluation's outcomes) are first split into their blocks: they are formed for this batch."""
    plan = unjoined(plan)
    where = {unit: k for k, block in enumerate(plan) for unit in block.units}
    limit = max(1, RUN_ELEMENTS // max(1, batch))
    order, start = [], 0
    while start < len(plan):
        run = _run(net, plan, start, where, limit, large_block_tears) if plan[start].tears else None
        if run is None:
            order.append(plan[start])
            start += 1
            continue
        before, joined, after, start = run
        order.extend([*before, joined, *after])
    return order


def unjoined(plan: list[Block]) -> list[Block]:
    """``plan`` with every run replaced by its blocks, in calculation order."""
    return [part for block in plan for part in (unjoined(block.parts) if block.parts else [block])]


def _run(net, plan, start, where, limit, large_block_tears):
    """(blocks solved before the run, the run, blocks solved after it, where the scan stopped)
    for the run that starts at ``plan[start]``; None where no run of two cyclic blocks with
    enough tears starts there."""
    place = {start: MEMBER}
    members, waiting = [start], []
    size = _segments(net, plan[start])
    k = start + 1
    while k < len(plan):
        block = plan[k]
        fed_by_run = any(place.get(where[s]) in (MEMBER, WAITING) for s in _feeders(net, block))
        if not block.tears:
            has_outlets = any(net.outlets[u] for u in block.units)
            place[k] = (WAITING if has_outlets else AFTER) if fed_by_run else BEFORE
            if place[k] == WAITING:
                waiting.append(k)
        else:
            grown = size + _segments(net, block) + sum(_segments(net, plan[j]) for j in waiting)
            if grown > limit:
                break
            for j in (*waiting, k):
                place[j] = MEMBER
            members.extend([*waiting, k])
            size, waiting = grown, []
        k += 1
    cyclic = [plan[j] for j in members if plan[j].tears]
    if len(cyclic) < 2 or sum(len(b.tears) for b in cyclic) <= large_block_tears:
        return None
    before = [plan[j] for j in range(start + 1, k) if place[j] == BEFORE]
    after = [plan[j] for j in range(start + 1, k) if place[j] in (WAITING, AFTER)]
    parts = [plan[j] for j in members]
    methods = list(dict.fromkeys(b.method for b in cyclic))
    bounds = [b.lower_bound for b in cyclic]
    joined = Block([u for b in parts for u in b.units], sorted(t for b in cyclic for t in b.tears),
                   f"{len(cyclic)} blocks converged together as one run: " + "; ".join(methods),
                   None if None in bounds else sum(bounds), parts)
    return before, joined, after, k


def _feeders(net, block):
    """Units outside ``block`` whose outlets enter it."""
    inside = set(block.units)
    return {net.segments[s].source for u in block.units for s in net.inlets[u]} - inside


def _segments(net, block) -> int:
    return sum(len(net.outlets[u]) for u in block.units)


__all__ = ["with_runs", "unjoined", "RUN_ELEMENTS"]
