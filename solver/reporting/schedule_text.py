"""The console report of ``hxtrain schedule`` and its tables for ``--out``: the optimised plan as
a grid of exchangers by month, its cleanings, the costs beside the baselines, and the limits the
plan violates, last, in a box.

Every number is in the units chosen (``--units``, the case's ``settings.display_units``) through
:mod:`.display_units`; money in the economics' currency (:mod:`.plant_tables` names the columns)."""

from __future__ import annotations

import textwrap

import numpy as np
import pandas as pd

from hxtrain.network.monitoring_file import shown_duration
from hxtrain.network.paths import listed

from . import plant_tables as names
from .console_tables import fixed, render
from .display_units import Display, current
from .monitoring_text import FOULING_DIGITS, WIDTH, _count, amount
from .text import boxed, note_lines

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


def schedule_report(result, display: Display | None = None) -> str:
    """The printed report, in ``display``'s units (default: the command's choice, with the
    case's ``settings.display_units``)."""
    schedule, horizon = result.schedule, result.horizon
    display = (display or current()).with_case(schedule.case)
    currency = schedule.economics.get("currency", "")
    # the horizon's last day, as periods are given (its end less a second, whatever the step)
    end = horizon.times[-1] + pd.Timedelta(days=horizon.step_days) - pd.Timedelta(seconds=1)
    cleanable = int(sum(1 for n in horizon.exchangers if n in schedule.cleaning and schedule.cleaning[n].allowed))
    parts = [f"hxtrain schedule: {schedule.title or schedule.file}", f"schedule file: {schedule.file}",
             *note_lines(display), "",
             f"Horizon: {_day(horizon.times[0])} to {_day(end)}, {_count(horizon.steps, 'step')} of "
             f"{_count(int(horizon.step_days), 'day') if horizon.step_days == int(horizon.step_days) else f'{horizon.step_days:g} days'}",
             f"  {len(horizon.exchangers)} exchangers with fouling laws, {cleanable} may be cleaned, at most "
             f"{schedule.at_most_at_once} at once"]
    for first, last, why in schedule.not_allowed:
        parts.append(f"  no cleaning in the steps from {_day(horizon.start + first * schedule.step)} to "
                     f"{_day(horizon.start + (last + 1) * schedule.step - pd.Timedelta(days=1))} (whole steps): {why}")
    if schedule.beyond_horizon:
        parts += textwrap.wrap("left out, beyond the horizon: " + "; ".join(f"{what} ({key})" for key, what
                                                                              in schedule.beyond_horizon),
                               WIDTH, initial_indent="  ", subsequent_indent="    ", break_on_hyphens=False)
    left_out = schedule.baselines.get("intervals_left_out") or []
    if left_out:
        parts += textwrap.wrap(f"the default fixed-interval baselines of {listed([shown_duration(d) for d in left_out])}"
                               " are not shorter than the horizon: left out", WIDTH, initial_indent="  ",
                               subsequent_indent="    ")
    if schedule.furnace is not None:
        f = schedule.furnace
        parts.append(f"  {f.heater} fires at most {amount(display, 'duty', f.maximum_duty)}; beyond it {f.throughput} "
                     f"is cut, {f.lost_value:g} {currency} a tonne not processed")
    laws = law_table(result)
    parts += ["", *textwrap.wrap("Fouling laws (initial: the fouling at the horizon's start; r_f0: the law's own value "
                                 "at its time origin, as fitted or written; r_f0 after cleaning: where it starts again "
                                 "after a cleaning)", WIDTH),
              render(laws, display, names.parameter_words(laws.columns.drop(["model", "source"]), display),
                     {c: ".3g" if "_per_day" in c else FOULING_DIGITS for c in laws if c.endswith("_m2_k_w")})]
    parts += ["", f"Optimised plan: {_count(len(result.plan), 'cleaning')} ({result.plan['cost'].sum():,.0f} {currency}); "
                  "## = out of service for cleaning in that month", _grid_text(plan_grid(result))]
    if len(result.plan):
        shown = result.plan.assign(start=result.plan["start"].map(_day),
                                   back_in_service=result.plan["back_in_service"].map(_day))
        parts += ["", render(shown, display, {"cost": f"cost {currency}"}, {"cost": 0})]
    rule = ("the optimised plan may not break a limit the train with no cleaning keeps throughout; the baselines "
            "are shown as their rules make them, new violations and all" if not horizon.new_limits_allowed
            else "new limit violations are allowed and only counted")
    heading = (f"Costs over the horizon ({currency}; saves: the plan's total less the optimised plan's; share: of "
               f"that plan's cost of fouling; limit steps: steps with a limit violated; new: of them, steps "
               f"breaking a limit the train with no cleaning never breaks — {rule})")
    parts += ["", *textwrap.wrap(heading, WIDTH), _cost_text(result.comparison), *_new_baseline_limits(result)]
    history = result.search
    parts += ["", f"Search: {_count(int(history['plans_marched'].sum()), 'plan')} marched in {result.seconds:,.0f} s, "
                  f"{_count(len(history), 'round')}", "  (cycle MILP about each trajectory, then local search on the network)"]
    parts += boxed("LIMITS THE OPTIMISED PLAN VIOLATES", _limit_lines(result, display), count=len(result.limits))
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
            return f"{fixed(100 * value, 0)} %" if np.isfinite(value) else ""
        if column in ("cleanings", "limit steps", "new"):
            return f"{int(value)}"
        return f"{value / 1e6:,.2f} M" if abs(value) >= 1e6 else fixed(value, 0)
    shown = pd.DataFrame({c: [fmt(v, c) for v in table[c]] for c in table.columns}, index=table.index)
    return shown.drop(columns=["fuel GJ", "CO2 t", "lost t"], errors="ignore").to_string()


def _limit_lines(result, display: Display):
    lines = []
    for row in result.limits.itertuples():
        text = (f"{row.unit}: at worst {display.message(row.message)} — in {row.steps} of {result.horizon.steps} "
                f"steps, first at {_day(row.first)}, worst at {_day(row.worst)}  [{row.key}]")
        lines += textwrap.wrap(text, WIDTH - 3, subsequent_indent="   ")
        reference = (f"with no cleaning: in {row.no_cleaning_steps} of {result.horizon.steps} steps, at worst "
                     f"{display.message(row.no_cleaning_message)} at {_day(row.no_cleaning_worst)}"
                     if row.no_cleaning_steps else "with no cleaning: kept in every step")
        lines += textwrap.wrap(reference, WIDTH - 3, initial_indent="   ", subsequent_indent="   ")
    return lines


def law_table(result) -> pd.DataFrame:
    """Each exchanger's fouling law: where it came from, its fouling at the start, its parameters
    in columns of their own (each named with its unit) and ``r_f0`` after a cleaning."""
    laws = result.laws.rename(columns={"initial": "initial_m2_k_w"})  # indexed by exchanger
    horizon = result.horizon.laws
    model = [horizon[n].model if n in horizon else m for n, m in zip(laws.index, laws["model"])]
    laws["parameters"] = [horizon[n].before if n in horizon else {} for n in laws.index]
    laws = names.spread_parameters(laws.assign(model_name=model), {"parameters": ""}, "model_name")
    after = [horizon[n].after.get("r_f0", np.nan) if n in horizon else np.nan for n in laws.index]
    at = laws.columns.get_loc("r_f0_m2_k_w") + 1 if "r_f0_m2_k_w" in laws else len(laws.columns)
    laws.insert(at, "r_f0_after_cleaning_m2_k_w", np.asarray(after, float))
    laws["initial_m2_k_w"] = pd.to_numeric(laws["initial_m2_k_w"], errors="coerce")
    return laws.drop(columns="model_name")


def _new_baseline_limits(result) -> list[str]:
    """The limits each baseline breaks that the train with no cleaning keeps (its "new" limit
    steps), named: a trial saw their count and could not tell which limit it was."""
    table = result.baseline_limits
    if table is None or table.empty or not (table["no_cleaning_steps"] == 0).any():
        return []
    lines = ["", *textwrap.wrap("New limit violations of the baselines (limits the train with no cleaning keeps; each "
                                "worst step's message in the baseline_limits table of --out):", WIDTH)]
    for baseline, rows in table[table["no_cleaning_steps"] == 0].groupby("baseline", sort=False):
        said = "; ".join(f"{r.unit} {r.limit} in {_count(r.steps, 'step')} (worst {_day(r.worst)})"
                         for r in rows.itertuples())
        lines += textwrap.wrap(f"  {baseline}: {said}", WIDTH, subsequent_indent="      ", break_on_hyphens=False)
    return lines


def schedule_tables(result) -> dict:
    """The tables ``--out`` writes, by name: quantities under their unit endings (converted on
    writing), money in the economics' currency, the laws' parameters in columns of their own."""
    currency = result.schedule.economics.get("currency", "")
    return {"plan": names.money(result.plan, currency), "plan_by_month": plan_grid(result),
            "comparison": names.money(result.comparison, currency), "steps": names.money(result.steps, currency),
            "fouling_laws": law_table(result), "search": names.money(result.search, currency),
            "baseline_cleanings": names.money(result.baseline_cleanings, currency),
            "limits": result.limits, "baseline_limits": result.baseline_limits}
