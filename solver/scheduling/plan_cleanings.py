"""``plan_cleanings(path)``: the cleaning plan of least total cost for a schedule file, beside the
baselines, as tables.

Every plan — the optimised one and each baseline — is marched through the same network on the
same horizon (:mod:`.horizon`), so their costs differ only by the plan. The saving of the
optimised plan against a baseline is its total cost less the optimised one's, and as a share of
the baseline's cost of fouling (its total less the total of a train that never fouls: the
horizon marched with every exchanger clean and never fouling, no cleaning paid).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from hxtrain.network.schedule_file import ScheduleFile, load_schedule
from hxtrain.units.protocol import FIRED_HEATERS

from .baselines import baseline_plans
from .horizon import ExchangerLaw, Horizon, march, scenario_values, step_lines
from .linearised_costs import _conditions_of
from .optimiser import Search, optimise
from .setup import allowed_starts, build_horizon

OPTIMISED = "optimised"


@dataclass
class ScheduleResult:
    """The plans and their costs. ``comparison``: one row per plan (optimised first) with the
    cost lines, cleanings, limit steps and the saving of the optimised plan against it.
    ``plan``: one row per cleaning of the optimised plan (exchanger, start, back in service,
    cost). ``steps``: per step of the optimised plan, each exchanger's fouling and whether it is
    out of service, the fired duty, the throughput share and the step's cost. ``laws``: where
    each exchanger's fouling law came from. ``search``: the optimiser's rounds."""

    schedule: ScheduleFile
    horizon: Horizon
    comparison: pd.DataFrame
    plan: pd.DataFrame
    steps: pd.DataFrame
    laws: pd.DataFrame
    search: pd.DataFrame
    plans: dict
    seconds: float
    baseline_cleanings: pd.DataFrame = None
    """Every baseline's cleanings, one row each: ``baseline``, then the columns of ``plan``."""
    limits: pd.DataFrame = None
    """The limits the optimised plan violates: unit, limit, key, steps violated, the dates of
    the first and the worst, the worst's message; and the same limit on the train with no
    cleaning: ``no_cleaning_steps`` (0 where it keeps the limit), ``no_cleaning_worst`` and
    ``no_cleaning_message`` (a plan may make a standing violation worse: a cleaning warms the
    train downstream)."""
    baseline_limits: pd.DataFrame = None
    """The same for every baseline, one row per (baseline, limit): ``baseline``, then the columns
    of ``limits``; a limit with ``no_cleaning_steps`` 0 is one the baseline breaks anew."""


def plan_cleanings(path_or_schedule, progress=None) -> ScheduleResult:
    """Optimise the schedule's cleaning plan and measure it against the baselines."""
    say = progress or (lambda *a: None)
    started = time.perf_counter()
    schedule = (path_or_schedule if isinstance(path_or_schedule, ScheduleFile)
                else load_schedule(path_or_schedule))
    say("fouling laws", 0, None)
    horizon, laws = build_horizon(schedule, progress=lambda text: say(text, 0, None))
    allowed = allowed_starts(schedule, horizon)
    search = optimise(horizon, allowed, schedule.at_most_at_once, progress=say)
    say("baselines", 0, None)
    none = march(horizon, np.zeros((1,) + allowed.shape, bool))
    conditions = _conditions_of(horizon, none, 0)
    baselines = baseline_plans(horizon, allowed, schedule.at_most_at_once, schedule.baselines["fixed_intervals"],
                               schedule.baselines["fouling_threshold"], conditions)
    names = list(baselines)
    outcome = march(horizon, np.array([baselines[n] for n in names]))  # scored against the reference the search set
    clean = _never_fouling(horizon)
    comparison = _comparison(search, outcome, names, clean)
    plans = {OPTIMISED: search.plan, **baselines}
    steps, limits = _step_table(horizon, search.outcome)
    reference = _plan_limits(horizon, _rated(horizon, none), 1)[0]
    limits = _beside_no_cleaning(limits, reference)
    # each baseline's limits, those the train with no cleaning keeps among them (its new ones): the
    # baselines rated in one batch, plans x steps
    beside = [_beside_no_cleaning(table, reference).assign(baseline=name)
              for name, table in zip(names, _plan_limits(horizon, _rated(horizon, outcome), len(names)))]
    baseline_limits = pd.concat(beside, ignore_index=True) if beside else limits.iloc[:0].assign(baseline="")
    cleanings = pd.concat([_plan_table(schedule, horizon, plan).assign(baseline=name) for name, plan in baselines.items()],
                          ignore_index=True)
    cleanings = cleanings[["baseline", *cleanings.columns.drop("baseline")]].astype(
        {"start": "datetime64[ns]", "back_in_service": "datetime64[ns]"})  # a plan with none had left them text
    return ScheduleResult(schedule, horizon, comparison, _plan_table(schedule, horizon, search.plan), steps, laws,
                          search.history, plans, time.perf_counter() - started, cleanings, limits,
                          baseline_limits[["baseline", *baseline_limits.columns.drop("baseline")]])


def _never_fouling(horizon: Horizon) -> float:
    """Total cost of the horizon with every exchanger clean and never fouling (nothing cleaned)."""
    laws = {n: ExchangerLaw("linear", {"r_f0": 0.0, "rate": 0.0}, {"r_f0": 0.0, "rate": 0.0}, 0.0)
            for n in horizon.exchangers}
    clean = replace(horizon, laws=laws)
    return float(march(clean, np.zeros((1, len(horizon.exchangers), horizon.steps), bool)).costs["total_cost"].iloc[0])


def _comparison(search: Search, outcome, names, clean_total) -> pd.DataFrame:
    rows = pd.concat([search.outcome.costs, outcome.costs], ignore_index=True)
    rows.index = pd.Index([OPTIMISED] + names, name="plan")
    rows["answer"] = [search.outcome.message[0] or "ok"] + [m or "ok" for m in outcome.message]
    rows["cost_of_fouling"] = rows["total_cost"] - clean_total
    best = rows.loc[OPTIMISED, "total_cost"]
    rows["optimised_saves"] = rows["total_cost"] - best
    with np.errstate(invalid="ignore", divide="ignore"):
        rows["saving_share_of_fouling_cost"] = rows["optimised_saves"] / rows["cost_of_fouling"]
    return rows


def _plan_table(schedule: ScheduleFile, horizon: Horizon, plan) -> pd.DataFrame:
    rows = []
    for e, s in zip(*np.nonzero(plan)):
        name = horizon.exchangers[e]
        d = int(horizon.duration[e])
        rows.append({"exchanger": name, "start": schedule.start + s * schedule.step,
                     "back_in_service": schedule.start + (s + d) * schedule.step, "steps_out": d,
                     "cost": float(horizon.cleaning_cost[e])})
    table = pd.DataFrame(rows, columns=["exchanger", "start", "back_in_service", "steps_out", "cost"])
    return table.sort_values(["start", "exchanger"]).reset_index(drop=True)


def _beside_no_cleaning(limits: pd.DataFrame, reference: pd.DataFrame) -> pd.DataFrame:
    """The plan's ``limits`` with the same limit (unit, kind, key) on the train with no cleaning:
    its steps violated (0: kept), the date and message of its worst step."""
    named = reference.set_index(["unit", "limit", "key"])
    shown = limits.join(named[["steps", "worst", "message"]].rename(columns=lambda c: f"no_cleaning_{c}"),
                        on=["unit", "limit", "key"])
    shown["no_cleaning_steps"] = shown["no_cleaning_steps"].fillna(0).astype(int)
    shown["no_cleaning_message"] = shown["no_cleaning_message"].fillna("")
    return shown


def _step_table(horizon: Horizon, outcome) -> pd.DataFrame:
    """Per step of a marched plan (``outcome``'s first): each exchanger's fouling (m²·K/W, NaN
    while out of service) and duty, the fired duty, the heaters' inlet temperatures, the
    throughput share, limits; and the limits violated, one row each."""
    fouling, busy = outcome.fouling[:1], outcome.out_of_service[:1]
    evaluation = _rated(horizon, outcome, 1)
    table = pd.DataFrame(index=horizon.times)
    for e, name in enumerate(horizon.exchangers):
        table[f"{name}.fouling_m2_k_w"] = np.where(busy[0, e], np.nan, fouling[0, e])
        table[f"{name}.duty_kw"] = evaluation.reports[name].metrics["duty"]
    for name, report in evaluation.reports.items():
        if FIRED_HEATERS in report.totals:
            table[f"{name}.fired_duty_kw"] = report.metrics["duty"]
            table[f"{name}.inlet_c"] = report.metrics["inlet"]
    table["throughput_share"] = outcome.throughput[0]
    for column, values in step_lines(horizon, outcome.fired[:1], outcome.throughput[:1]).items():
        table[column] = values[0]
    table["limits_violated"] = outcome.limits[0]
    return table, _plan_limits(horizon, evaluation, 1)[0]


def _rated(horizon: Horizon, outcome, plans=None):
    """The evaluation of ``outcome``'s first ``plans`` plans (all by default), plans x steps."""
    from hxtrain.solver.simulation.evaluation import evaluate

    some = slice(0, plans)
    return evaluate(horizon.case, scenario_values(horizon, outcome.fouling[some], outcome.out_of_service[some],
                                                  outcome.throughput[some]))


def _plan_limits(horizon: Horizon, evaluation, plans) -> list[pd.DataFrame]:
    """The limits each of ``plans`` plans violates, one row each, from the ``evaluation`` of them
    all (plans x steps, plan-major): the steps violated, the first and the worst, its message."""
    steps, tables = horizon.steps, []
    for k in range(plans):
        mine = np.zeros(plans * steps, bool)
        mine[k * steps:(k + 1) * steps] = True
        rows = []
        for unit, finding in evaluation.findings:
            if finding.severity != "limit" or not (finding.active & mine).any():
                continue
            own = replace(finding, active=finding.active & mine)
            first, worst = int(np.argmax(own.active)), own.worst()
            rows.append({"unit": unit, "limit": finding.kind, "key": finding.key, "steps": int(own.active.sum()),
                         "first": horizon.times[first - k * steps], "worst": horizon.times[worst - k * steps],
                         "message": own.messages[worst]})
        tables.append(pd.DataFrame(rows, columns=["unit", "limit", "key", "steps", "first", "worst", "message"]))
    return tables
