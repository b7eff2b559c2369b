"""The console report of ``hxtrain schedule`` and its tables for ``--out``: the optimised plan as
a grid of exchangers by month, its cleanings, the costs beside the baselines, and the limits the
plan violates, last, in a box."""

from __future__ import annotations

import textwrap

import numpy as np
import pandas as pd

from hxtrain.solver.simulation.results import CAUTION

from .monitoring_text import WIDTH, _count
from .text import boxed

COST_HEADINGS = {"cleanings": "cleanings", "cleaning_cost": "cleaning", "fuel_gj": "fuel GJ", "fuel_cost": "fuel",
                 "co2_t": "CO2 t", "co2_cost": "CO2", "lost_throughput_t": "lost t", "lost_throughput_cost": "lost",
                 "total_cost": "total", "optimised_saves": "saves", "saving_share_of_fouling_cost": "share",
                 "limit_steps": "limit steps", "new_limit_steps": "new"}


def plan_grid(result) -> pd.DataFrame:
    """Exchangers by month: ``##`` where the exchanger is out of service for cleaning in that
    month, ``.`` where it runs."""
    horizon = result.horizon
    months = pd.period_range(horizon.times[0], horizon.times[-1], freq="M")
    busy = np.zeros((len(horizon.exchangers), len(months)), bool)
    for row in result.plan.itertuples():
        e = horizon.exchangers.index(row.exchanger)
        out = pd.period_range(row.start, row.back_in_service - pd.Timedelta(days=1), freq="M")
        busy[e, months.get_indexer(out[out.isin(months)])] = True
    return pd.DataFrame(np.where(busy, "##", " ."), index=pd.Index(horizon.exchangers, name="exchanger"),
                        columns=[m.strftime("%Y-%m") for m in months])


def schedule_report(result) -> str:
    schedule, horizon = result.schedule, result.horizon
    currency = schedule.economics.get("currency", "")
    end = horizon.times[-1] + pd.Timedelta(days=horizon.step_days)
    cleanable = int(sum(1 for n in horizon.exchangers if n in schedule.cleaning and schedule.cleaning[n].allowed))
    parts = [f"hxtrain schedule: {schedule.title or schedule.file}", f"schedule file: {schedule.file}",
             *textwrap.wrap(f"NOTE: {CAUTION}", WIDTH, subsequent_indent="      "), "",
             f"Horizon: {_day(horizon.times[0])} to {_day(end)}, {_count(horizon.steps, 'step')} of "
             f"{_count(horizon.step_days, 'day') if horizon.step_days == int(horizon.step_days) else f'{horizon.step_days:g} days'}",
             f"  {len(horizon.exchangers)} exchangers with fouling laws, {cleanable} may be cleaned, at most "
             f"{schedule.at_most_at_once} at once"]
    for first, last, why in schedule.not_allowed:
        parts.append(f"  no cleaning in the steps from {_day(horizon.start + first * schedule.step)} to "
                     f"{_day(horizon.start + (last + 1) * schedule.step - pd.Timedelta(days=1))} (whole steps): {why}")
    if schedule.furnace is not None:
        f = schedule.furnace
        parts.append(f"  {f.heater} fires at most {f.maximum_duty / 1000:,.2f} MW; beyond it {f.throughput} is cut, "
                     f"{f.lost_value:g} {currency} a tonne not processed")
    parts += ["", "Fouling laws", result.laws.to_string(float_format=lambda v: f"{v:.3g}")]
    parts += ["", f"Optimised plan: {_count(len(result.plan), 'cleaning')} ({result.plan['cost'].sum():,.0f} {currency}); "
                  "## = out of service for cleaning in that month", _grid_text(plan_grid(result))]
    if len(result.plan):
        shown = result.plan.assign(start=result.plan["start"].map(_day),
                                   back_in_service=result.plan["back_in_service"].map(_day))
        parts += ["", shown.to_string(index=False, float_format=lambda v: f"{v:,.0f}")]
    rule = ("new limit violations are refused: a plan may not break a limit where the train with no cleaning "
            "keeps it" if not horizon.new_limits_allowed else "new limit violations are allowed and only counted")
    parts += ["", f"Costs over the horizon ({currency}; saves: the plan's total less the optimised plan's; share: "
                  "of that plan's cost of fouling;", f"limit steps: steps with a limit violated; new: of them, "
                  f"where no cleaning keeps the limit — {rule})", _cost_text(result.comparison)]
    history = result.search
    parts += ["", f"Search: {_count(int(history['plans_marched'].sum()), 'plan')} marched in {result.seconds:,.0f} s, "
                  f"{_count(len(history), 'round')}", "  (cycle MILP about each trajectory, then local search on the network)"]
    parts += boxed("LIMITS THE OPTIMISED PLAN VIOLATES", _limit_lines(result), count=len(result.limits))
    return "\n".join(parts)


def _day(when) -> str:
    return pd.Timestamp(when).strftime("%Y-%m-%d")


def _grid_text(grid: pd.DataFrame) -> str:
    """The grid with a line of years over a line of month numbers."""
    years, months = zip(*(c.split("-") for c in grid.columns))
    year_line = "".join(f"'{y[2:]}" if k == 0 or years[k - 1] != y else "   " for k, y in enumerate(years))
    lines = [" " * 10 + year_line.rstrip(), " " * 10 + "".join(f"{m:>3}" for m in months)]
    lines += [f"{name:<10}" + "".join(f"{v:>3}" for v in row) for name, row in grid.iterrows()]
    return "\n".join(lines)


def _cost_text(comparison: pd.DataFrame) -> str:
    table = comparison[[c for c in COST_HEADINGS if c in comparison]].rename(columns=COST_HEADINGS)

    def fmt(value, column):
        if column == "share":
            return f"{100 * value:.0f} %" if np.isfinite(value) else ""
        if column in ("cleanings", "limit steps", "new"):
            return f"{int(value)}"
        return f"{value / 1e6:,.2f} M" if abs(value) >= 1e6 else f"{value:,.0f}"
    shown = pd.DataFrame({c: [fmt(v, c) for v in table[c]] for c in table.columns}, index=table.index)
    return shown.drop(columns=["fuel GJ", "CO2 t", "lost t"], errors="ignore").to_string()


def _limit_lines(result):
    lines = []
    for row in result.limits.itertuples():
        text = (f"{row.unit}: {row.message} — in {row.steps} of {result.horizon.steps} steps, first at "
                f"{_day(row.first)}  [{row.key}]")
        lines += textwrap.wrap(text, WIDTH - 3, subsequent_indent="   ")
    return lines


def schedule_tables(result) -> dict:
    """The tables ``--out`` writes, by name."""
    return {"plan": result.plan, "plan_by_month": plan_grid(result), "comparison": result.comparison,
            "steps": result.steps, "fouling_laws": result.laws, "search": result.search, "limits": result.limits}
