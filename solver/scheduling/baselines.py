"""The plans an optimised schedule is measured against, on the same horizon and network:

- **no cleaning**;
- **fixed intervals**: every exchanger that may be cleaned, every N steps (each interval the
  schedule file lists), each cleaning at the first step from its due date that the rules allow;
- **fouling threshold**: an exchanger is cleaned at the first step its fouling passes its
  threshold and the rules allow (the most fouled first where several are due);
- **one-step ranking, greedily**: at each step the exchangers are ranked by the fired duty cleaning
  each alone would save now (the ``hxtrain cleaning`` ranking at that step's state), and the first
  is cleaned when that saving, held for :data:`PAYBACK_WEEKS` and fading linearly to nothing
  as it fouls back, pays for its cleaning and its time out of service (common practice: a
  cleaning should pay back within about half a year).

The rule-based plans decide on each exchanger's fouling path as its law gives it (threshold laws
at the conditions of the train with no cleaning); every plan is then marched through the real
network (:func:`.horizon.march`) like the optimised one.
"""

from __future__ import annotations

import numpy as np

from .horizon import Horizon, _rate, fouling_paths, march, out_of_service, scenario_values
from .linearised_costs import kilowatt_step_price

PAYBACK_WEEKS = 26


def _fits(plan, e, s, allowed, duration, at_once) -> bool:
    """Can exchanger ``e`` start a cleaning at step ``s`` in ``plan``?"""
    if not allowed[e, s]:
        return False
    trial = plan.copy()
    trial[e, s] = True
    busy = out_of_service(trial[None], duration)[0]
    return busy.sum(axis=0).max() <= at_once and not (plan[e, max(0, s - int(duration[e]) + 1):s].any())


def fixed_interval_plan(horizon: Horizon, allowed, at_once, interval) -> np.ndarray:
    """Each exchanger cleaned every ``interval`` steps, from its first due date on, each cleaning
    at the first step the rules allow."""
    exchangers, steps = allowed.shape
    plan = np.zeros((exchangers, steps), bool)
    for e in range(exchangers):
        if not allowed[e].any():
            continue
        due = interval
        while due < steps:
            s = next((s for s in range(due, steps) if _fits(plan, e, s, allowed, horizon.duration, at_once)), None)
            if s is None:
                break
            plan[e, s] = True
            due = s + interval
    return plan


def threshold_plan(horizon: Horizon, allowed, at_once, thresholds, conditions=None) -> np.ndarray:
    """Clean each exchanger when its fouling passes its threshold (``thresholds``: exchanger ->
    m²·K/W), as the rules allow, the most fouled (relative to its threshold) first."""
    exchangers, steps = allowed.shape
    plan = np.zeros((exchangers, steps), bool)
    limit = np.array([thresholds.get(name, np.inf) for name in horizon.exchangers])
    for s in range(steps):
        fouling, busy = fouling_paths(horizon, plan[None], conditions)
        ratio = fouling[0, :, s] / limit
        for e in np.argsort(-ratio):
            if ratio[e] > 1.0 and not busy[0, e, s] and _fits(plan, e, s, allowed, horizon.duration, at_once):
                plan[e, s] = True
                busy = out_of_service(plan[None], horizon.duration)
    return plan


def greedy_ranking_plan(horizon: Horizon, allowed, at_once, conditions=None) -> np.ndarray:
    """The one-step ranking applied greedily (module text)."""
    exchangers, steps = allowed.shape
    plan = np.zeros((exchangers, steps), bool)
    payback = max(1, int(round(PAYBACK_WEEKS * 7 / horizon.step_days)))
    reference = march(horizon, plan[None])
    price = kilowatt_step_price(horizon, reference)
    for s in range(steps):
        fouling, busy = fouling_paths(horizon, plan[None], conditions)
        free = [e for e in range(exchangers) if not busy[0, e, s] and allowed[e, s]]
        if not free:
            continue
        f = np.repeat(fouling[:, :, s:s + 1], 1 + 2 * len(free), axis=0)
        b = np.repeat(busy[:, :, s:s + 1], 1 + 2 * len(free), axis=0)
        for k, e in enumerate(free):  # scenario 0: as it is; 1..n: e clean; n+1..2n: e bypassed
            f[1 + k, e, 0] = 0.0
            b[1 + len(free) + k, e, 0] = True
        one = _one_step(horizon, s)
        fired = _rate(one, scenario_values(one, f, b)).fired
        base = fired[0]
        saved = base - fired[1:1 + len(free)]
        lost = fired[1 + len(free):] - base
        for k in np.argsort(-saved):
            e = free[k]
            d = int(horizon.duration[e])
            value = saved[k] * price[s] * min(payback, steps - s - d) / 2.0
            outlay = horizon.cleaning_cost[e] + max(lost[k], 0.0) * price[s] * d
            if saved[k] > 0 and value > outlay and _fits(plan, e, s, allowed, horizon.duration, at_once):
                plan[e, s] = True
                break
    return plan


def _one_step(horizon: Horizon, s):
    from dataclasses import replace

    return replace(horizon, steps=1, settings={k: np.asarray(v)[s:s + 1] for k, v in horizon.settings.items()})


def baseline_plans(horizon: Horizon, allowed, at_once, intervals, thresholds, conditions=None) -> dict:
    """Name -> plan (E, S) of every baseline."""
    exchangers, steps = allowed.shape
    plans = {"no cleaning": np.zeros((exchangers, steps), bool)}
    for interval in intervals:
        plans[f"every {interval} steps"] = fixed_interval_plan(horizon, allowed, at_once, interval)
    plans["fouling threshold"] = threshold_plan(horizon, allowed, at_once, thresholds, conditions)
    plans["one-step ranking, greedily"] = greedy_ranking_plan(horizon, allowed, at_once, conditions)
    return plans
