"""The train marched through a horizon under cleaning plans: fouling grows by each exchanger's
law, an exchanger being cleaned is out of service on its bypass (both sides bypassed whole) for
its cleaning's duration and then starts clean, the furnace's limit cuts throughput, and every
step's fuel, CO₂ and money are added up — for many plans at once.

**Steps.** Step ``s`` is the period from ``start + s·step``; the network is rated once per step
at the fouling of the middle of the step (the midpoint rule for the step's energy), with the
operating plan in force at the step's start. Fouling laws without network conditions (linear,
asymptotic) advance by their exact steps, so every plan's fouling path is known before any
rating and all plans × steps are one batch of scenarios
(:func:`hxtrain.solver.simulation.evaluation.evaluate`). A threshold law's rate depends on the
film temperature and flow the network sets: the batch is rated again with the paths those
conditions give until the paths stop changing (each step's path is exact after as many passes as
steps before it at the latest; in practice a few).

**Cleaning.** A plan is a boolean array (plans, exchangers, steps), True where a cleaning
starts. During its ``duration_steps`` the exchanger's fouling does not grow; when it returns it
starts clean and fouls by its law's parameters after a cleaning (:class:`ExchangerLaw`: a law
fitted to a history that did not start at a cleaning has its starting value there, not the
clean value).

**Furnace limit.** Where the fired heater's duty would pass its maximum, the throughput (a flow
key path) is cut in proportion until the duty is within 0.1 % of the maximum (a secant step on
the batch of those scenarios); the tonnes not processed are priced at ``lost_value``.

Fuel = fired duty / furnace efficiency; CO₂ = fuel energy × emission factor.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from hxtrain.solver.simulation.evaluation import evaluate
from hxtrain.units.fouling_models import MODELS
from hxtrain.units.protocol import FIRED_HEATERS

FURNACE_TOLERANCE = 1e-3
"""Relative distance to the furnace's maximum duty accepted after a throughput cut."""
FURNACE_ITERATIONS = 4
RELAXATION_TOLERANCE = 1e-7
"""m²·K/W: threshold-law paths this close between passes are converged (a ten-thousandth of a
typical fouling resistance of 1e-3: far below what plant data resolve)."""
CHUNK = 20_000
"""Scenarios rated together (memory: about 2 kB a scenario for the crude demo)."""


@dataclass
class ExchangerLaw:
    """One exchanger's fouling law over the horizon: a model of
    :data:`~hxtrain.units.fouling_models.MODELS` by name, its parameters until its first
    cleaning (``before``) and after any cleaning (``after``: ``r_f0`` is then the fouling just
    after a cleaning), and its fouling at the start (m²·K/W)."""

    model: str
    before: dict
    after: dict
    initial: float


@dataclass
class Horizon:
    """What the march needs besides the plans: the case, the time grid, each exchanger's law and
    cleaning terms, the operating plan per step, the economics and the furnace limit."""

    case: object
    exchangers: list
    laws: dict
    """exchanger -> :class:`ExchangerLaw`."""
    duration: np.ndarray
    """(E,) steps out of service per cleaning."""
    cleaning_cost: np.ndarray
    """(E,) money per cleaning."""
    step_days: float
    steps: int
    settings: dict
    """key path -> (S,) value in force at each step (the operating plan)."""
    economics: dict
    furnace: object = None
    start: pd.Timestamp = pd.Timestamp("2027-01-01")
    new_limits_allowed: bool = False
    """False: a plan may not violate a limit (a design temperature, a temperature cross, an
    allowable pressure drop ...) that the train with no cleaning keeps over the whole horizon — a
    cleaning that breaks a design limit is no saving; such plans are ranked after every plan
    that keeps the rule. True: limits are only counted."""
    reference: dict = None
    """Limit -> (S,) bool: where the train with no cleaning violates each limit (set by
    :func:`set_reference`)."""
    penalty: float = 0.0
    """Money added to a plan's objective per step with a new limit violation: ten times the
    no-cleaning plan's total cost where new violations are refused (set by :func:`set_reference`)."""

    @property
    def times(self) -> pd.DatetimeIndex:
        return pd.DatetimeIndex(self.start + pd.to_timedelta(np.arange(self.steps) * self.step_days, unit="D"),
                                name="time")


@dataclass
class Outcome:
    """Per plan (P plans) and step (S): the fouling rated, out of service, fired duty, heater
    inlet, throughput share kept, limits violated; per plan the cost lines and the total."""

    fouling: np.ndarray
    """(P, E, S) m²·K/W at the middle of each step."""
    out_of_service: np.ndarray
    fired: np.ndarray
    """(P, S) kW, all fired heaters."""
    throughput: np.ndarray
    """(P, S) share of the planned throughput processed (1 without a cut)."""
    limits: np.ndarray
    """(P, S) limits violated in the step."""
    new_limits: np.ndarray
    """(P, S) limits violated in the step that the train with no cleaning does not violate there
    (all of them before a reference is set)."""
    success: np.ndarray
    """(P,) every step of the plan has an answer."""
    message: np.ndarray
    costs: pd.DataFrame
    """Per plan: cleanings, cleaning_cost, fuel_gj, fuel_cost, co2_t, co2_cost, lost_t, lost_cost,
    total_cost, limit_steps."""
    conditions: dict = None
    """Threshold laws' conditions along each plan: exchanger -> name -> (P, S)."""
    violations: dict = None
    """Limit -> (P, S) bool: where each plan violates it."""


def out_of_service(plans: np.ndarray, duration: np.ndarray) -> np.ndarray:
    """(P, E, S) True while an exchanger is being cleaned.

    >>> out_of_service(np.array([[[False, True, False, False]]]), np.array([2])).astype(int).tolist()
    [[[0, 1, 1, 0]]]
    """
    busy = np.zeros_like(plans)
    for e, d in enumerate(duration):
        for lag in range(int(d)):
            busy[:, e, lag:] |= plans[:, e, :plans.shape[2] - lag]
    return busy


def fouling_paths(horizon: Horizon, plans, conditions=None):
    """(P, E, S) fouling at the middle of each step under each plan. ``conditions`` gives, for a
    threshold law, per exchanger a dict of condition name -> (P, S) values (the network's)."""
    plans = np.asarray(plans, bool)
    busy = out_of_service(plans, horizon.duration)
    count, exchangers, steps = plans.shape
    middle = np.zeros((count, exchangers, steps))
    dt = horizon.step_days
    for e, name in enumerate(horizon.exchangers):
        law = horizon.laws[name]
        model = MODELS[law.model]
        r = np.full(count, float(law.initial))
        cleaned = np.zeros(count, bool)
        for s in range(steps):
            now = {q.name: conditions[name][q.name][:, s] for q in model.conditions} if model.conditions else {}
            if s:
                returning = busy[:, e, s - 1] & ~busy[:, e, s]
                cleaned |= returning
                r = np.where(returning, law.after.get("r_f0", 0.0), r)

            def advance(days):
                return np.where(cleaned, model.step(r, days, **law.after, **now), model.step(r, days, **law.before, **now))

            middle[:, e, s] = np.where(busy[:, e, s], r, advance(0.5 * dt))
            r = np.where(busy[:, e, s], r, advance(dt))
    return middle, busy


def scenario_values(horizon: Horizon, fouling, busy, throughput=None) -> dict:
    """Key path -> one value per scenario (plans × steps, plan-major) for the rating: each
    exchanger's fouling, and its bypasses, whole while it is out of service, else the case's own."""
    count, exchangers, steps = fouling.shape
    values = {k: np.tile(np.asarray(v, float), count) for k, v in horizon.settings.items()}
    for e, name in enumerate(horizon.exchangers):
        base = ".".join(horizon.case.keys[name])
        values[f"{base}.fouling.shell"] = fouling[:, e, :].reshape(-1)
        values[f"{base}.fouling.tube"] = np.zeros(count * steps)
        out = busy[:, e, :].reshape(-1)
        spec = horizon.case.exchangers[name]["spec"]  # in service, each side keeps the case's own bypass
        values[f"{base}.bypass.hot"] = np.where(out, 1.0, spec.bypass_hot)
        values[f"{base}.bypass.cold"] = np.where(out, 1.0, spec.bypass_cold)
    if throughput is not None and horizon.furnace is not None:
        key = horizon.furnace.throughput
        values[key] = values[key] * throughput.reshape(-1)
    return values


@dataclass
class Rating:
    """The rating of scenarios (plans × steps, plan-major): fired duty (kW), limits violated,
    success and reasons, and each threshold law's conditions (exchanger -> name -> (N,))."""

    fired: np.ndarray
    limits: np.ndarray
    success: np.ndarray
    message: np.ndarray
    conditions: dict
    violations: dict = None
    """Limit (unit, key path, kind, occurrence) -> (N,) bool: where it is violated."""


def _adaptive(horizon) -> list:
    return [n for n in horizon.exchangers if MODELS[horizon.laws[n].model].conditions]


def _rate(horizon: Horizon, values) -> Rating:
    """Rate the scenarios, in chunks of :data:`CHUNK`."""
    from hxtrain.solver.monitoring.fouling_fits import fouling_side_conditions
    from hxtrain.solver.monitoring.projection import evaluation_conditions

    n = len(next(iter(values.values())))
    adaptive = _adaptive(horizon)
    out = Rating(np.full(n, np.nan), np.zeros(n, int), np.zeros(n, bool), np.full(n, "", dtype=object),
                 {name: {q.name: np.full(n, np.nan) for q in MODELS[horizon.laws[name].model].conditions}
                  for name in adaptive}, {})
    for start in range(0, n, CHUNK):
        part = slice(start, min(start + CHUNK, n))
        ev = evaluate(horizon.case, {k: v[part] for k, v in values.items()})
        out.fired[part] = np.where(ev.success, ev.totals[FIRED_HEATERS], np.nan)
        out.limits[part] = sum(f.active.astype(int) for _, f in ev.findings if f.severity == "limit") if ev.findings else 0
        for name, active in _limit_activity(ev).items():
            out.violations.setdefault(name, np.zeros(n, bool))[part] = active
        out.success[part], out.message[part] = ev.success, [ev.reason(k) for k in range(ev.batch)]
        if adaptive:
            table = evaluation_conditions(ev, adaptive)
            side = fouling_side_conditions(ev.net, table)
            for name in adaptive:
                rows = side[(table["unit"] == name).to_numpy()]
                for key, array in out.conditions[name].items():
                    array[part] = rows[key].to_numpy()
    return out


def _limit_activity(evaluation) -> dict:
    """Each limit finding of an evaluation (named by unit, key path, kind and its occurrence: a
    check may appear once per side) -> where it is active."""
    found, seen = {}, {}
    for unit, finding in evaluation.findings:
        if finding.severity == "limit":
            name = (unit, finding.key, finding.kind)
            seen[name] = seen.get(name, -1) + 1
            found[name + (seen[name],)] = np.asarray(finding.active, bool)
    return found


def new_violations(violations: dict, reference, count, steps) -> np.ndarray:
    """(P, S) the limits violated that the reference (the train with no cleaning) keeps over the
    whole horizon. A limit the uncleaned train already breaks (a standing violation: a design
    temperature exceeded most weeks) is not new where a plan breaks it in more steps: every
    cleaning warms the train's outlet, so counting those steps would forbid any cleaning
    upstream of it; such steps are still counted as limit steps and the plan's violations shown.
    """
    new = np.zeros((count, steps), int)
    for name, active in violations.items():
        standing = reference is not None and name in reference and bool(np.any(reference[name]))
        if not standing:
            new += active.reshape(count, steps).astype(int)
    return new


def set_reference(horizon: Horizon, plan, outcome_of_no_cleaning) -> Outcome:
    """Make the no-cleaning plan's violations the reference of new ones and set the penalty
    (mutates ``horizon``); returns that plan's outcome scored against it."""
    from dataclasses import replace

    outcome = outcome_of_no_cleaning
    horizon.reference = {k: v[0] for k, v in outcome.violations.items()}
    total = float(outcome.costs["total_cost"].iloc[0])
    horizon.penalty = 0.0 if horizon.new_limits_allowed else 10.0 * abs(total)
    new = np.zeros_like(outcome.new_limits)
    return replace(outcome, new_limits=new, costs=plan_costs(horizon, np.asarray(plan, bool)[None], outcome.fired,
                                                             outcome.throughput, outcome.limits, outcome.success, new))


def march(horizon: Horizon, plans) -> Outcome:
    """Every plan marched through the horizon (module text)."""
    plans = np.asarray(plans, bool)
    count, _, steps = plans.shape
    adaptive = _adaptive(horizon)
    fouling, busy = fouling_paths(horizon, plans, _first_conditions(horizon, plans) if adaptive else None)
    throughput = np.ones((count, steps))
    rating = _rate(horizon, scenario_values(horizon, fouling, busy))
    if adaptive:
        fouling, rating = _relax(horizon, plans, fouling, rating)
    conditions = _shaped(rating.conditions, count, steps)
    if horizon.furnace is not None:
        throughput = _cut_throughput(horizon, fouling, busy, throughput, rating)
    fired, limits = rating.fired.reshape(count, steps), rating.limits.reshape(count, steps)
    new = new_violations(rating.violations, horizon.reference, count, steps)
    ok = rating.success.reshape(count, steps)
    why = rating.message.reshape(count, steps)
    plan_ok = ok.all(axis=1)
    plan_message = np.array([next((f"step {s + 1}: {why[p, s]}" for s in range(steps) if not ok[p, s]), "")
                             for p in range(count)], dtype=object)
    return Outcome(fouling, busy, fired, throughput, limits, new, plan_ok, plan_message,
                   plan_costs(horizon, plans, fired, throughput, limits, plan_ok, new), conditions,
                   {k: v.reshape(count, steps) for k, v in rating.violations.items()})


def _shaped(conditions, count, steps):
    return {n: {k: v.reshape(count, steps) for k, v in c.items()} for n, c in conditions.items()}


def _first_conditions(horizon, plans):
    """A first guess for threshold laws: the conditions of the start (first step's operation, the
    initial fouling, nothing out of service) held over the horizon."""
    from dataclasses import replace

    count, _, steps = plans.shape
    first = replace(horizon, steps=1, settings={k: np.asarray(v)[:1] for k, v in horizon.settings.items()})
    start = np.zeros((1, len(horizon.exchangers), 1), bool)
    initial = np.array([[[horizon.laws[n].initial] for n in horizon.exchangers]])
    rating = _rate(first, scenario_values(first, initial, start))
    return {n: {k: np.broadcast_to(v[0], (count, steps)) for k, v in c.items()} for n, c in rating.conditions.items()}


def _relax(horizon, plans, fouling, rating):
    """Rate again with the conditions the network sets until the threshold paths settle."""
    count, _, steps = plans.shape
    for _ in range(steps + 1):
        new, busy = fouling_paths(horizon, plans, _shaped(rating.conditions, count, steps))
        change = float(np.nanmax(np.abs(new - fouling), initial=0.0))
        fouling = new
        rating = _rate(horizon, scenario_values(horizon, fouling, busy))
        if not change > RELAXATION_TOLERANCE:
            break
    return fouling, rating


def _cut_throughput(horizon, fouling, busy, throughput, rating: Rating):
    """Cut the throughput of every scenario whose fired duty passes the furnace's maximum (secant
    steps on the duty against the share kept); ``rating`` is updated in place for those
    scenarios. Returns the share of the planned throughput kept (P, S)."""
    maximum = horizon.furnace.maximum_duty
    share = throughput.reshape(-1).copy()
    over = np.flatnonzero(rating.success & (rating.fired > maximum * (1.0 + FURNACE_TOLERANCE)))
    previous_share, previous_fired = share[over].copy(), rating.fired[over].copy()
    share[over] *= maximum / rating.fired[over]
    for _ in range(FURNACE_ITERATIONS):
        if not over.size:
            break
        values = scenario_values(horizon, fouling, busy, share.reshape(throughput.shape))
        found = _rate(horizon, {k: v[over] for k, v in values.items()})
        f = found.fired
        rating.fired[over], rating.limits[over] = f, found.limits
        for name, active in found.violations.items():
            rating.violations.setdefault(name, np.zeros(rating.fired.size, bool))[over] = active
        rating.success[over], rating.message[over] = found.success, found.message
        done = ~found.success | (np.abs(f - maximum) <= FURNACE_TOLERANCE * maximum)
        moved = share[over] != previous_share
        slope = (f - previous_fired) / np.where(moved, share[over] - previous_share, 1.0)
        usable = moved & np.isfinite(slope) & (slope > 0)
        guess = share[over] + (maximum - f) / np.where(usable, slope, f / share[over])
        previous_share, previous_fired = share[over].copy(), f
        share[over] = np.where(done, share[over], np.clip(guess, 0.05, 1.0))
        keep = ~done
        over, previous_share, previous_fired = over[keep], previous_share[keep], previous_fired[keep]
    return share.reshape(throughput.shape)


def plan_costs(horizon: Horizon, plans, fired, throughput, limits, success, new=None) -> pd.DataFrame:
    """The cost lines of each plan over the horizon (NaN for a plan without an answer): each
    step's lines (:func:`step_lines`) added up, the cleanings, the steps with limits violated
    and with new ones, and the ``ranked_cost`` the optimiser ranks by: the total cost plus
    :attr:`Horizon.penalty` per step with a new violation (so that where new violations are
    refused a plan keeping the rule always ranks first; not money spent: a plan that breaks no new
    limit ranks at its total cost)."""
    lines = step_lines(horizon, fired, throughput)
    cleanings = plans.sum(axis=2)
    new = np.zeros_like(limits) if new is None else new
    table = pd.DataFrame({"cleanings": cleanings.sum(axis=1),
                          "cleaning_cost": (cleanings * horizon.cleaning_cost[None, :]).sum(axis=1),
                          **{k: np.nansum(v, axis=1) for k, v in lines.items()},
                          "limit_steps": (limits > 0).sum(axis=1), "new_limit_steps": (new > 0).sum(axis=1)})
    table["total_cost"] = table[["cleaning_cost", "fuel_cost", "co2_cost", "lost_throughput_cost"]].sum(axis=1)
    table.loc[~np.asarray(success), ["fuel_gj", "fuel_cost", "co2_t", "co2_cost", "total_cost"]] = np.nan
    table["ranked_cost"] = table["total_cost"] + horizon.penalty * table["new_limit_steps"]
    return table


def step_lines(horizon: Horizon, fired, throughput) -> dict:
    """Each step's fuel (GJ) and its cost, CO₂ (t) and its cost, the throughput not processed (t)
    and its value: arrays shaped like ``fired`` (plans, steps)."""
    economics, seconds = horizon.economics, horizon.step_days * 86_400.0
    fuel = np.asarray(fired, float) * seconds / 1e6 / economics["furnace_efficiency"]
    co2 = fuel * economics["co2_per_fuel"] / 1000.0
    lost = np.zeros_like(fuel)
    if horizon.furnace is not None:
        planned = np.asarray(horizon.settings.get(horizon.furnace.throughput, np.zeros(fuel.shape[-1])), float)
        lost = (1.0 - np.asarray(throughput)) * planned * seconds / 1000.0
    lost_value = horizon.furnace.lost_value if horizon.furnace is not None else 0.0
    return {"fuel_gj": fuel, "fuel_cost": fuel * economics["fuel_price"], "co2_t": co2,
            "co2_cost": co2 * economics.get("co2_price", 0.0), "lost_throughput_t": lost,
            "lost_throughput_cost": lost * lost_value}
