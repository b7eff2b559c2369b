"""The network's costs linearised about one plan's trajectory: what a unit of each exchanger's
fouling costs at each step, what each exchanger costs while it is out of service, and so the
separable cycle costs of :mod:`.cycle_milp`.

About the trajectory of a plan (its fouling paths and ratings), each step's fired duty is taken
as the clean network's plus each exchanger's own share,
``Q(s) ≈ Q_clean(s) + Σ_e g_e(s)·R_e(s)``, with ``g_e(s)`` the secant slope between the
trajectory and the same step with exchanger ``e`` alone clean (the secant rather than the tangent:
a cycle's fouling spans zero to its peak). Out of service, exchanger ``e`` costs
``Q(e bypassed) − Q(e clean)`` at that step. All these are one batch of scenarios: each step
with each exchanger clean, and with each bypassed.

A kilowatt-step is priced as fuel (and CO₂) where the furnace runs below its limit, and as the
throughput it displaces where the furnace is at its limit (the tonnes per kilowatt there are the
step's throughput over its fired duty: the duty is taken as proportional to throughput).
"""

from __future__ import annotations

import numpy as np

from hxtrain.units.fouling_models import MODELS

from .cycle_milp import CycleCosts
from .horizon import FURNACE_TOLERANCE, Horizon, Outcome, _rate, scenario_values

SECONDS_PER_DAY = 86_400.0


def kilowatt_step_price(horizon: Horizon, outcome: Outcome, plan_index=0) -> np.ndarray:
    """(S,) money per kW of fired duty held over one step, along the plan's trajectory."""
    economics = horizon.economics
    seconds = horizon.step_days * SECONDS_PER_DAY
    fuel = seconds / 1e6 / economics["furnace_efficiency"]
    price = np.full(horizon.steps, fuel * (economics["fuel_price"] + economics["co2_per_fuel"] / 1000.0
                                           * economics.get("co2_price", 0.0)))
    furnace = horizon.furnace
    if furnace is None:
        return price
    fired = outcome.fired[plan_index]
    at_limit = fired >= furnace.maximum_duty * (1.0 - FURNACE_TOLERANCE)
    planned = np.asarray(horizon.settings.get(furnace.throughput, np.zeros(horizon.steps)), float)
    flow = planned * outcome.throughput[plan_index]
    tonnes_per_kw = np.where(fired > 0, flow / np.where(fired > 0, fired, 1.0), 0.0) * seconds / 1000.0
    return np.where(at_limit, tonnes_per_kw * furnace.lost_value, price)


def cycle_costs(horizon: Horizon, outcome: Outcome, plan, allowed, at_once, plan_index=0) -> CycleCosts:
    """The separable costs about the trajectory of ``plan`` (whose march is ``outcome``)."""
    exchangers, steps = len(horizon.exchangers), horizon.steps
    fouling = outcome.fouling[plan_index]
    busy = outcome.out_of_service[plan_index]
    price = kilowatt_step_price(horizon, outcome, plan_index)
    base = outcome.fired[plan_index]
    # scenarios: each step with each exchanger clean, then with each exchanger bypassed
    trials = 2 * exchangers
    f = np.repeat(fouling[None], trials, axis=0)
    b = np.repeat(busy[None], trials, axis=0)
    for e in range(exchangers):
        f[e, e, :] = 0.0
        b[e, e, :] = False
        b[exchangers + e, e, :] = True
    share = np.repeat(outcome.throughput[plan_index][None], trials, axis=0)
    fired = _rate(horizon, scenario_values(horizon, f, b, share)).fired.reshape(trials, steps)
    clean, bypassed = fired[:exchangers], fired[exchangers:]
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = np.where(fouling > 1e-9, (base[None, :] - clean) / fouling, 0.0)
    slope = np.nan_to_num(np.maximum(slope, 0.0))
    downtime = np.nan_to_num(np.maximum(bypassed - clean, 0.0)) * price[None, :]
    never = _never_cleaned_paths(horizon, outcome, plan_index)
    now = slope * never * price[None, :]
    fresh = np.zeros((exchangers, steps, steps))
    for e, name in enumerate(horizon.exchangers):
        grown = _fresh_path(horizon, name, steps, outcome, plan_index, e)
        for s0 in range(steps):
            span = steps - s0
            fresh[e, s0, s0:] = slope[e, s0:] * grown[:span] * price[s0:]
    cleaning = np.zeros((exchangers, steps))
    window = np.concatenate([np.zeros((exchangers, 1)), np.cumsum(downtime, axis=1)], axis=1)
    for e in range(exchangers):
        d = int(horizon.duration[e])
        ends = np.minimum(np.arange(steps) + d, steps)
        cleaning[e] = horizon.cleaning_cost[e] + window[e, ends] - window[e, np.arange(steps)]
    return CycleCosts(now, fresh, cleaning, horizon.duration, allowed, at_once)


def _never_cleaned_paths(horizon, outcome, plan_index):
    """(E, S) each exchanger's fouling at the middle of each step if it is never cleaned."""
    from .horizon import fouling_paths

    exchangers = len(horizon.exchangers)
    conditions = _conditions_of(horizon, outcome, plan_index)
    none = np.zeros((1, exchangers, horizon.steps), bool)
    return fouling_paths(horizon, none, conditions)[0][0]


def _fresh_path(horizon, name, steps, outcome, plan_index, e):
    """(S,) an exchanger's fouling at the middle of each step of a cycle started clean, by its
    law after a cleaning (threshold laws at the trajectory's conditions of the same steps)."""
    law = horizon.laws[name]
    model = MODELS[law.model]
    conditions = _conditions_of(horizon, outcome, plan_index)
    r = float(law.after.get("r_f0", 0.0))
    dt = horizon.step_days
    path = np.zeros(steps)
    for s in range(steps):
        now = {q.name: conditions[name][q.name][0, s] for q in model.conditions} if model.conditions else {}
        path[s] = model.step(r, 0.5 * dt, **law.after, **now)
        r = model.step(r, dt, **law.after, **now)
    return np.asarray(path, float)


def _conditions_of(horizon, outcome, plan_index):
    """Threshold laws' conditions along the plan's trajectory (None without threshold laws); a
    step where the exchanger was out of service (no flow through it: no conditions) takes the
    last conditions it had in service (the first it has, before any)."""
    if not outcome.conditions:
        return None
    return {n: {k: _filled(v[plan_index:plan_index + 1]) for k, v in c.items()} for n, c in outcome.conditions.items()}


def _filled(row):
    """(1, S) with NaN replaced by the last finite value before it (or the first after it)."""
    values = np.asarray(row, float)[0]
    finite = np.isfinite(values)
    if not finite.any():
        return row
    index = np.where(finite, np.arange(values.size), -1)
    np.maximum.accumulate(index, out=index)
    first = np.flatnonzero(finite)[0]
    index[index < 0] = first
    return values[index][None, :]
