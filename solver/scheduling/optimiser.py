"""The cleaning plan of least total cost over the horizon.

Method (named, with its sources in :mod:`.cycle_milp`):

Limits: where new limit violations are refused (the default: a plan may not break a design
temperature, make a temperature cross or pass an allowable pressure drop that the train with no
cleaning keeps over the whole horizon), a step with a new violation adds a penalty larger than any saving to the
objective the search minimises (:func:`.horizon.plan_costs`); the MILP does not see limits, the
local search mends what its plans break, and no cleaning is the answer where nothing else keeps
the rule.

1. **Successive linearisation with a cycle MILP.** About the trajectory of the current plan
   (first: no cleaning) the network's costs are made separable (:mod:`.linearised_costs`) and
   the plan of least separable cost is found exactly by HiGHS (:mod:`.cycle_milp`: each
   exchanger's cleanings as a path through its cycles, at most ``k`` cleanings at once, none in
   a period with no cleaning). The new plan is marched through the real network
   (:mod:`.horizon`) and the costs linearised again about its trajectory, until the plan
   repeats or its true cost stops falling (at most :data:`LINEARISATIONS` rounds).
2. **Local search on the real network.** From the best plan so far, every neighbour — each
   cleaning moved by 1, 2 or 4 steps either way, each cleaning dropped, a cleaning added in the
   middle of each long gap of each exchanger — that keeps the rules is marched, all neighbours as
   one batch of scenarios; the best one that lowers the total cost is taken, until none does.

The answer is a local optimum of the true (nonlinear) cost, reached from the MILP's global
optimum of its linearisation; the tests compare it with the exhaustive optimum on small
instances.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .cycle_milp import plan_from_cycles
from .horizon import Horizon, march, out_of_service, set_reference
from .linearised_costs import cycle_costs

LINEARISATIONS = 4
SHIFTS = (-4, -2, -1, 1, 2, 4)
MAX_SEARCH_ROUNDS = 30


@dataclass
class Search:
    """The plan found and how: its march, the rounds (stage, total cost, cleanings, plans
    marched), and the evaluations made."""

    plan: np.ndarray
    outcome: object
    history: pd.DataFrame
    plans_marched: int = 0
    messages: list = field(default_factory=list)


def feasible(plans, allowed, duration, at_once) -> np.ndarray:
    """(P,) the plans keep the rules: starts only where allowed, an exchanger's next cleaning
    not before its last is done, at most ``at_once`` out of service at any step."""
    plans = np.asarray(plans, bool)
    ok = ~(plans & ~allowed[None]).any(axis=(1, 2))
    busy = out_of_service(plans, duration)
    counted = np.zeros(plans.shape[::2], int)
    for e, d in enumerate(duration):
        for lag in range(int(d)):
            counted[:, lag:] += plans[:, e, :plans.shape[2] - lag]
    overlap = (counted > busy.sum(axis=1)).any(axis=1)  # an exchanger's cleanings overlap themselves
    return ok & ~overlap & (busy.sum(axis=1) <= at_once).all(axis=1)


def neighbours(plan, allowed, duration, at_once) -> np.ndarray:
    """Every plan one move away from ``plan`` that keeps the rules (module text)."""
    plan = np.asarray(plan, bool)
    exchangers, steps = plan.shape
    found = []
    for e, s in zip(*np.nonzero(plan)):
        without = plan.copy()
        without[e, s] = False
        found.append(without)
        for shift in SHIFTS:
            if 0 <= s + shift < steps:
                moved = without.copy()
                moved[e, s + shift] = True
                found.append(moved)
    for e in range(exchangers):
        starts = list(np.flatnonzero(plan[e]))
        edges = [-1] + starts + [steps]
        for left, right in zip(edges[:-1], edges[1:]):
            gap_start = left + (int(duration[e]) if left >= 0 else 1)
            if right - gap_start >= 2 * int(duration[e]) + 2:
                added = plan.copy()
                middle = (gap_start + right) // 2
                candidates = np.flatnonzero(allowed[e, gap_start:right])
                if candidates.size:
                    added[e, gap_start + candidates[np.argmin(np.abs(candidates + gap_start - middle))]] = True
                    found.append(added)
    if not found:
        return np.zeros((0, exchangers, steps), bool)
    found = np.unique(np.array(found), axis=0)
    return found[feasible(found, allowed, duration, at_once)]


def optimise(horizon: Horizon, allowed, at_once, progress=None) -> Search:
    """The plan of least total cost (module text); ``progress`` takes (stage, round, best cost)."""
    say = progress or (lambda *a: None)
    exchangers, steps = len(horizon.exchangers), horizon.steps
    plan = np.zeros((exchangers, steps), bool)
    outcome = set_reference(horizon, plan, march(horizon, plan[None]))
    idle, idle_outcome = plan, outcome
    best, best_outcome = plan, outcome  # the start of the local search: the lowest total cost so far
    rows = [("no cleaning", 0, _objective(outcome, 0), 0, 1)]
    marched, messages = 1, []
    seen = {plan.tobytes()}
    for round_ in range(1, LINEARISATIONS + 1):
        say("linearising", round_, rows[-1][2])
        costs = cycle_costs(horizon, outcome, plan, allowed, at_once)
        candidate, result = plan_from_cycles(costs)
        if result.x is None:
            messages.append(f"the cycle MILP found no plan: {result.message}")
            break
        if candidate.tobytes() in seen:
            break
        seen.add(candidate.tobytes())
        outcome = march(horizon, candidate[None])
        marched += 1
        rows.append(("cycle MILP", round_, _objective(outcome, 0), int(candidate.sum()), 1))
        plan = candidate
        # the MILP knows no limits: rank its plans by their cost alone, and let the local search
        # mend a plan that breaks a limit (its moves lower the penalised objective first)
        if outcome.success[0] and _total(outcome, 0) < _total(best_outcome, 0):
            best, best_outcome = candidate, outcome
        else:
            break
    for round_ in range(1, MAX_SEARCH_ROUNDS + 1):
        current = _objective(best_outcome, 0)
        say("local search", round_, current)
        options = neighbours(best, allowed, horizon.duration, at_once)
        if not len(options):
            break
        trial = march(horizon, options)
        marched += len(options)
        totals = np.where(trial.success, trial.costs["ranked_cost"].to_numpy(), np.inf)
        k = int(np.argmin(totals))
        if not totals[k] < current * (1.0 - 1e-9):
            rows.append(("local search", round_, current, int(best.sum()), len(options)))
            break
        chosen, chosen_outcome = options[k], _one(trial, k)
        combined = _combined(best, options, totals, current, allowed, horizon.duration, at_once)
        if combined is not None:
            together = march(horizon, combined[None])
            marched += 1
            if together.success[0] and _objective(together, 0) < totals[k]:
                chosen, chosen_outcome = combined, together
        best, best_outcome = chosen, chosen_outcome
        rows.append(("local search", round_, _objective(best_outcome, 0), int(best.sum()),
                     len(options)))
    if not _objective(best_outcome, 0) <= _objective(idle_outcome, 0):
        best, best_outcome = idle, idle_outcome
        messages.append("no plan found that keeps the limits and costs less than no cleaning")
    return Search(best, best_outcome, pd.DataFrame(rows, columns=["stage", "round", "ranked_cost", "cleanings",
                                                                  "plans_marched"]), marched, messages)


def _total(outcome, k) -> float:
    return float(outcome.costs["total_cost"].iloc[k]) if outcome.success[k] else np.inf


def _objective(outcome, k) -> float:
    """What the search minimises for plan ``k``: its total cost, plus the penalty for steps with
    new limit violations where those are refused (:func:`.horizon.plan_costs`)."""
    return float(outcome.costs["ranked_cost"].iloc[k]) if outcome.success[k] else np.inf


def _combined(plan, options, totals, current, allowed, duration, at_once):
    """The improving moves that touch different exchangers, applied together (best first, each
    kept only if the rules still hold): one march tells whether they add up. None when fewer than
    two combine."""
    improving = [k for k in np.argsort(totals) if totals[k] < current * (1.0 - 1e-9)]
    combined, touched, applied = plan.copy(), set(), 0
    for k in improving:
        changed = set(np.flatnonzero((options[k] != plan).any(axis=1)))
        if changed & touched:
            continue
        trial = combined.copy()
        trial[list(changed)] = options[k][list(changed)]
        if feasible(trial[None], allowed, duration, at_once)[0]:
            combined, touched, applied = trial, touched | changed, applied + 1
    return combined if applied >= 2 else None


def _one(outcome, k):
    """The march of plan ``k`` of a batch, as a batch of one."""
    from dataclasses import replace

    pick = slice(k, k + 1)
    conditions = {n: {q: v[pick] for q, v in c.items()} for n, c in (outcome.conditions or {}).items()}
    return replace(outcome, fouling=outcome.fouling[pick], out_of_service=outcome.out_of_service[pick],
                   fired=outcome.fired[pick], throughput=outcome.throughput[pick], limits=outcome.limits[pick],
                   new_limits=outcome.new_limits[pick], success=outcome.success[pick], message=outcome.message[pick],
                   costs=outcome.costs.iloc[pick].reset_index(drop=True), conditions=conditions,
                   violations={n: v[pick] for n, v in (outcome.violations or {}).items()})
