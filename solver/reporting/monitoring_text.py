"""The console report of ``hxtrain monitor``, and its tables for ``--out``: today's state of each
exchanger, what fouling costs, the instruments to check, the fouling laws found, and the
projected dates of limits, with the violated and projected limits last, in a box.

Every number is shown in the units chosen (``--units``, the case's ``settings.display_units``)
through :mod:`.display_units`: the tables name their columns with unit endings
(:mod:`.plant_tables`), the console tables fit 120 columns unless ``--wide``."""

from __future__ import annotations

import textwrap

import numpy as np
import pandas as pd

from . import plant_tables as names
from .console_tables import fixed, render
from .display_units import Display, by_quantity, current
from .text import boxed, fitted, note_lines

from hxtrain.network.fields import counted
from hxtrain.network.monitoring_file import shown_duration
from hxtrain.solver.monitoring.excursions import EXCURSION
from hxtrain.solver.monitoring.historian import HELD, IMPOSSIBLE, SPIKE, TIME_REPEATED

TREND_DAYS = 90
"""The fouling trend is the weighted least-squares slope over the last this many days of
identifiable windows since the exchanger's last cleaning, given per 30 days with its expanded
uncertainty (k = 2): over a shorter span the noise of daily back-calculated fouling swamps it."""
SPIKES_SHOWN = 8
"""Spikes named one by one in the report (the rest are counted; all are in the skipped rows)."""
NAMED_ONE_BY_ONE = (SPIKE, IMPOSSIBLE, TIME_REPEATED)
"""Readings and rows left out that the console names one by one (the first :data:`SPIKES_SHOWN`)."""


def fouling_trend(state: pd.DataFrame, cleanings: pd.DataFrame, days=TREND_DAYS) -> pd.DataFrame:
    """Per exchanger: ``trend_per_30_days`` (m²·K/W) and ``trend_plus_minus`` (k = 2), NaN with
    fewer than 4 usable windows."""
    rows = {}
    for unit, table in state.groupby("unit"):
        table = table[table["status"].isin(["identified", "negative fouling"])]
        if not table.empty:
            since = _last_cleaning(cleanings, unit)
            table = table[table.index >= max(table.index[-1] - pd.Timedelta(days=days), since)]
        if len(table) < 4:
            rows[unit] = (np.nan, np.nan)
            continue
        t = np.asarray((table.index - table.index[0]) / pd.Timedelta(days=1), float)
        w = 1.0 / table["fouling_sigma"].to_numpy() ** 2
        tm = np.sum(w * t) / np.sum(w)
        sxx = np.sum(w * (t - tm) ** 2)
        slope = np.sum(w * (t - tm) * table["fouling"].to_numpy()) / sxx
        rows[unit] = (30.0 * slope, 2.0 * 30.0 / np.sqrt(sxx))
    return pd.DataFrame.from_dict(rows, orient="index", columns=["trend_per_30_days", "trend_plus_minus"])


def _last_cleaning(cleanings, unit):
    if cleanings is None or cleanings.empty or "exchanger" not in cleanings:
        return pd.Timestamp.min
    mine = cleanings[(cleanings["exchanger"] == unit) & cleanings.get("lasting", True)]
    return mine["time"].max() if len(mine) else pd.Timestamp.min


WIDTH = 118
"""Console lines are kept within 120 columns."""
HEADINGS = {"duty_kw": "duty", "u_w_m2_k": "U", "u_clean_w_m2_k": "U clean", "fouling_m2_k_w": "R_f",
            "plus_minus_95_m2_k_w": "± (95 %)", "trend_per_30_days_m2_k_w": "trend/30 d",
            "trend_plus_minus_m2_k_w": "±", "law": "law", "share_of_cost": "cost share", "status": "status"}
FOULING_DIGITS = 6
"""Decimals of fouling resistances on the console: 0.000043 m²·K/W of trend is two digits."""
INSTRUMENT_WORDS = {"windows_eliminated": "windows removed", "windows_persistently_off": "windows off",
                    "off_from": "off from",
                    "median_bias_k": "T bias", "median_bias_kg_s": "flow bias", "median_bias_kw": "duty bias"}


def today_table(result) -> pd.DataFrame:
    """Each exchanger at the last reconciled window: duty, U, clean U, fouling with its expanded
    uncertainty, the trend, the chosen law, its share of the fouling cost and its status."""
    today = result.today()
    if today.empty:
        return today
    table = pd.DataFrame(index=today.index)
    table["duty_kw"] = today["duty"]
    table["u_w_m2_k"] = today["u_service"]
    table["u_clean_w_m2_k"] = today["u_clean"]
    table["fouling_m2_k_w"] = today["fouling"]
    table["plus_minus_95_m2_k_w"] = today.get("fouling_expanded")
    trend = fouling_trend(result.state, result.cleanings).reindex(table.index)
    table["trend_per_30_days_m2_k_w"] = trend["trend_per_30_days"]
    table["trend_plus_minus_m2_k_w"] = trend["trend_plus_minus"]
    if not result.shares.empty:
        table["share_of_cost"] = result.shares["share"].reindex(table.index)
    if not result.fits.empty:
        chosen = result.fits[result.fits["chosen"]].set_index("exchanger")["model"]
        table["law"] = chosen.reindex(table.index).fillna("none determined")
    table["status"] = today["status"]
    return table.rename_axis("exchanger")


def monitoring_report(result, display: Display | None = None) -> str:
    """The printed report, in ``display``'s units (default: the command's choice, with the
    case's ``settings.display_units``)."""
    m, history = result.monitoring, result.history
    display = (display or current()).with_case(m.case)
    windows = result.windows
    currency = (m.economics or {}).get("currency", "")
    parts = [f"hxtrain monitor: {m.title or m.file}", f"monitoring file: {m.file}",  # paths whole, to be copied
             f"plant data file: {m.data_path}",
             *note_lines(display), "",
             f"Plant data: {len(history.samples)} rows from {_day(history.samples.index.min())} "
             f"to {_day(history.samples.index.max())}" + _rows_without_readings(history)]
    parts += _skipped_lines(history.skipped)
    steady = int(windows["steady"].sum())
    parts.append(f"Windows of {shown_duration(m.window)}: {len(windows):,}; steady {steady:,}; reconciled "
                 f"{int(windows['reconciled'].sum())}; global test passed in {int(windows['passed'].sum())} "
                 f"(significance {m.significance:g})")
    parts += _gap_lines(windows, m.window, display, history.samples.index.to_series().diff().median())
    parts += _unsteady_lines(windows, display)
    parts += _redundancy_lines(result)
    today = today_table(result)
    if not today.empty:
        fouling_digits = {c: FOULING_DIGITS for c in today if c.endswith("_m2_k_w")}
        span = (history.samples.index.max() - history.samples.index.min()) / pd.Timedelta(days=1)
        trend = f"{TREND_DAYS} days" if span >= TREND_DAYS else f"{span:.0f} days (all the data)"
        parts += ["", *fitted(f"Exchangers at {_day(_last(result))} (fouling on the outside area; ± is the 95 % "
                              f"expanded uncertainty, k = 2; the trend is over the last {trend}; cost share: the fired "
                              "duty cleaning it alone saves, as a share of the sum of those savings)", display, " "),
                  render(today.assign(share_of_cost=_percent(today["share_of_cost"])) if "share_of_cost" in today
                         else today, display, HEADINGS,
                         fouling_digits)]
    parts += _excursion_lines(result.state)
    parts += _cost_lines(result, currency, display)
    if not result.instruments.empty:
        instruments = names.by_tag_quantity(result.instruments, names.tag_quantities(m, result.instruments.index),
                                            ["median_bias"])
        parts += ["", "Instruments to check (removed as a gross error in a window, or reading persistently off",
                  "the others; bias: the reading less the others' estimate, median over those windows)",
                  render(instruments.assign(**{c: instruments[c].map(_day) for c in ("first", "last", "off_from")}),
                         display, INSTRUMENT_WORDS)]
    if not result.cleanings.empty:
        shown = result.cleanings[["exchanger", "time", "source", "drop", "lasting"]].rename(columns=names.CLEANING_NAMES)
        parts += ["", "Cleanings (logged, found in the data as a lasting drop, or both; drop: the fall in R_f)",
                  render(shown.assign(time=shown["time"].map(_day)), display, digits={"drop_m2_k_w": FOULING_DIGITS})]
    parts += _projection_lines(result, display)
    for note in getattr(result, "notes", []):
        parts += [""] + textwrap.wrap(f"Note: {display.message(note)}", WIDTH)
    limits = [display.message(line) for line in _limit_lines(result)]
    wrapped = [part for line in limits for part in textwrap.wrap(line, WIDTH - 3, subsequent_indent="   ")]
    parts += boxed("LIMITS VIOLATED OR PROJECTED", wrapped, count=len(limits))
    return "\n".join(parts)


def _gap_lines(windows: pd.DataFrame, window, display: Display | None = None, spacing=None) -> list[str]:
    """The stretches of windows without a single reading (a historian outage, a gap in the
    export): said, not only counted as not steady (within ``display``'s width); where the window
    is shorter than the data's usual ``spacing`` (their median), that is said instead."""
    empty = (windows["samples"] == 0).to_numpy()
    if not empty.any():
        return []
    window = pd.Timedelta(window)
    if spacing is not None and pd.notna(spacing) and pd.Timedelta(spacing) > window:
        said = (f"the window ({shown_duration(window)}) is shorter than the data's usual spacing "
                f"({shown_duration(pd.Timedelta(spacing))}); a window of at least the spacing gives every window its "
                "readings")
    else:
        starts = np.flatnonzero(empty & ~np.concatenate([[False], empty[:-1]]))
        ends = np.flatnonzero(empty & ~np.concatenate([empty[1:], [False]]))
        said = "; ".join(f"{b - a + 1:,} from {windows.index[a]:%Y-%m-%d %H:%M}" for a, b in zip(starts, ends))
    return fitted(f"  no data at all in {int(empty.sum()):,} windows: {said}", display or current(), "    ")


def _rows_without_readings(history) -> str:
    """Where rows of the file with a readable time had no usable reading of any tag (left out of
    the row count): how many."""
    empty = history.rows - history.skipped_rows - len(history.samples)
    return f" ({empty:,} more with no usable reading of any tag)" if empty > 0 else ""


def _unsteady_lines(windows: pd.DataFrame, display: Display | None = None) -> list[str]:
    """The windows with data that the steady-state test set aside, by reason: how many, the tags
    named first and the first and last window (a flow meter reading zero for a week had shown only
    as a smaller steady count)."""
    unsteady = windows[~windows["steady"].astype(bool) & (windows["samples"] > 0)]
    if unsteady.empty:
        return []
    said, display = [], display or current()
    reasons = unsteady["not_steady_because"].astype(str)
    kinds = reasons.str.split(": ", n=1).str[0]
    for kind, rows in unsteady.groupby(kinds.to_numpy(), sort=False):
        tags = sorted(set(reasons[rows.index].str.split(": ", n=1).str[1].str.split(" ").str[0].dropna()))
        when = f"{rows.index.min():%Y-%m-%d}" + (f" to {rows.index.max():%Y-%m-%d}" if len(rows) > 1 else "")
        kind = display.message(kind)  # "above 5 K" in the units shown
        named = f"{', '.join(tags)}; " if tags else ""
        said.append(f"{kind} in {len(rows):,} ({named}{when})")
    return fitted(f"  not steady, with data, in {len(unsteady):,} windows: " + "; ".join(said), display,
                  "    ", break_on_hyphens=False)


def _redundancy_lines(result) -> list[str]:
    """Which measurements the balances check and which unmeasured values they determine."""
    table, unmeasured = result.measurements, result.unmeasured
    if table is None or table.empty:
        return []
    checked = table["redundant_share"] >= 0.5
    lines = [f"Redundancy: the balances check {int(checked.sum())} of {len(table)} tags in most windows"]
    lone = table.index[~checked]
    if len(lone):
        lines += textwrap.wrap("  checked in fewer than half the windows (little else measures what they feed: a "
                               "fault there shows only where the balances reach it, as under 'Instruments to "
                               "check'): " + ", ".join(lone), WIDTH, subsequent_indent="    ")
    if unmeasured is not None and not unmeasured.empty:
        hidden = unmeasured.index[unmeasured["observable_share"] < 0.5]
        lines.append(f"  unmeasured values: {len(unmeasured)}, determined by the balances in most windows: "
                     f"{len(unmeasured) - len(hidden)}")
        if len(hidden):
            lines += textwrap.wrap("  not determined: " + "; ".join(hidden), WIDTH, subsequent_indent="    ")
    return lines


def _when(time) -> str:
    return "(no time)" if pd.isna(time) else f"{pd.Timestamp(time):%Y-%m-%d %H:%M}"


def _skipped_lines(skipped: pd.DataFrame) -> list[str]:
    """What the reader left out, by reason: whole rows and single cells."""
    if skipped is None or skipped.empty:
        return []
    lines = []
    for reason, rows in skipped.groupby("reason", sort=False):
        cells = rows["column"].notna() & (rows["column"] != "")
        whole = rows.loc[~cells, "row"].nunique()
        columns = rows.loc[cells, "column"].value_counts()
        if len(columns) == 1:
            most = f" (column {columns.index[0]})"
        elif len(columns) > 1:
            most = f" (in {len(columns)} columns" + (f", most in {columns.index[0]}: {columns.iloc[0]})"
                                                     if columns.iloc[0] > columns.iloc[1] else ")")
        else:
            most = ""
        numbers = rows.loc[~cells, "row"].drop_duplicates()
        shown = ", ".join(map(str, numbers.head(SPIKES_SHOWN))) + (", ..." if len(numbers) > SPIKES_SHOWN else "")
        parts = (([f"{counted(whole, 'row')} (data file row{'s' if whole > 1 else ''} {shown})"] if whole else [])
                 + ([f"{counted(int(cells.sum()), 'cell')}{most}"] if cells.any() else []))
        lines.append(f"  left out ({reason}): {' and '.join(parts)}")
        if reason in NAMED_ONE_BY_ONE:  # each named, with why (a spike: its neighbours)
            lines += [part for r in rows.head(SPIKES_SHOWN).itertuples() for part in textwrap.wrap(
                f"    {r.column + ' at ' if r.column else ''}{_when(r.time)} (data file row {r.row}): {r.detail}",
                WIDTH, subsequent_indent="      ", break_on_hyphens=False)]
            if len(rows) > SPIKES_SHOWN:
                lines.append(f"    and {len(rows) - SPIKES_SHOWN} more (the skipped rows table, written by --out)")
        if reason == HELD:  # a frozen reading: each run named once
            lines += [part for (column, detail), run in rows.groupby(["column", "detail"], sort=False)
                      for part in textwrap.wrap(f"    {column} (data file rows {run['row'].min()}-{run['row'].max()}): "
                                                f"{detail}; a frozen transmitter, or the historian holding its last "
                                                "value?", WIDTH, subsequent_indent="      ", break_on_hyphens=False)]
    return lines


def _numbered(table: pd.DataFrame, name: str) -> pd.DataFrame:
    """``table`` with its rows numbered from 1 under ``name`` (a file's 'row' would be read as the
    data file's row beside data_file_row)."""
    return table.set_axis(pd.RangeIndex(1, len(table) + 1, name=name))


def _excursion_lines(state: pd.DataFrame) -> list[str]:
    """The windows whose fouling stands above the level before and after them
    (:mod:`.monitoring.excursions`), per exchanger."""
    if state.empty or "status" not in state:
        return []
    hit = state[state["status"] == EXCURSION]
    if hit.empty:
        return []
    days = hit.groupby("unit", sort=False).apply(lambda rows: ", ".join(map(_day, rows.index)))
    return ["", *textwrap.wrap("Excursions (a window's fouling above the level both before and after it: an "
                               "unmeasured bypass, an instrument reading off or an upset; left out of the fitted laws, "
                               "the cleanings and the cost): "
                               + "; ".join(f"{unit} {when}" for unit, when in days.items()),
                               WIDTH)]


def _last(result):
    """The time the last reconciled window's values stand for (the mean time of its samples)."""
    windows = result.windows
    done = windows[windows["reconciled"]] if windows["reconciled"].any() else windows
    return done["mean_time"].iloc[-1] if "mean_time" in done else done.index[-1]


def _count(n, word) -> str:
    """``1 window``, ``2 windows``."""
    return f"{n:,} {word}" + ("" if n == 1 else "s")


def _percent(shares):
    return shares.map(lambda v: f"{100 * v:.1f} %" if np.isfinite(v) else "")


def _day(when) -> str:
    return "" if pd.isna(when) else pd.Timestamp(when).strftime("%Y-%m-%d")


def amount(display: Display, quantity: str, value, digits=None, difference=False) -> str:
    """A stored (SI) value of ``quantity`` in the shown unit, with its label: '80.502 MMBtu/h'."""
    column = display.column(f"x{by_quantity()[quantity].ending}")
    return f"{fixed(float(column.convert([value], difference)[0]), column.digits if digits is None else digits)} " \
           f"{column.label}"


def _cost_lines(result, currency, display: Display):
    cost, windows = result.cost, len(result.windows)
    answered = cost[cost["answer"] == "ok"]
    if answered.empty:
        why = cost["answer"].value_counts()
        return ["", "What fouling costs: no window with an answer"
                + (f" ({why.index[0]}{'' if len(why) == 1 else ', and other reasons'})" if len(why) else "")]
    last = answered.iloc[-1]
    duty = [amount(display, "duty", last[c]) for c in ("fired_duty_fouled_kw", "fired_duty_clean_kw", "fouling_penalty_kw")]
    lines = ["", f"What fouling costs at {_day(answered.index[-1])}: fired duty {duty[0]} as fouled against {duty[1]} "
                 f"clean: {duty[2]}"]
    if "cost_per_day" in cost:
        lines.append(f"  fuel {amount(display, 'energy', last['fuel_gj_per_day'])}/day; {last['cost_per_day']:,.0f} "
                     f"{currency}/day for fuel and CO2; CO2 {last['co2_t_per_day']:,.2f} t/day")
        lines.append(f"  over the {_count(len(answered), 'steady window')} with an answer: "
                     f"{answered['cost_cumulative'].iloc[-1]:,.0f} {currency}, CO2 {answered['co2_t_cumulative'].iloc[-1]:,.0f} t")
        lines.append(f"  (of {_count(windows, 'window')} in the data: transient windows are not costed)")
    unanswered = cost.loc[cost["answer"] != "ok", "answer"]
    for reason, count in unanswered.value_counts(sort=False).items():  # each reason once, in order of first window
        lines += textwrap.wrap(f"{_count(count, 'window')} without a cost: {reason}", WIDTH - 2, initial_indent="  ",
                               subsequent_indent="    ")
    mismatch = cost["model_mismatch_k"].dropna()
    if len(mismatch):
        lines.append(f"  the fouled simulation reproduces the reconciled temperatures to "
                     f"{amount(display, 'temperature_difference', mismatch.median())} (median window), "
                     f"{amount(display, 'temperature_difference', mismatch.max())} at worst")
    return lines


def _projection_lines(result, display: Display):
    steps = result.projection
    if steps is None or steps.empty:
        return []
    first, last = steps.index[0], steps.index[-1]
    lines = ["", *fitted(f"Projection from {_day(first)} to {_day(last)} with each exchanger's fitted law, "
                         "conditions held at the last window (it starts from the laws' values there, which smooth "
                         "the windows' scatter: its first figures differ a little from the last window's own)",
                         display, indent="  ")]
    for column in steps.columns:
        if column.endswith(".fired_duty_kw") or column.endswith(".inlet_c"):
            unit, what = column.split(".", 1)
            label, quantity = ("fired duty", "duty") if what == "fired_duty_kw" else ("inlet temperature", "temperature")
            lines.append(f"  {unit} {label}: {amount(display, quantity, steps[column].iloc[0])} -> "
                         f"{amount(display, quantity, steps[column].iloc[-1])}")
    return lines


def _limit_lines(result):
    lines = []
    dates = result.limit_dates
    if dates is not None and not dates.empty:
        reached = dates[dates["date"].notna()]
        for row in reached.itertuples():
            when = f"already at {_day(row.date)}" if row.at_start else f"projected for {_day(row.date)}"
            lines.append(f"{row.unit}: {row.limit} — {when}  [{row.key}]")
    return lines


def monitoring_tables(result, display: Display | None = None) -> dict:
    """The tables ``--out`` writes, by name: every quantity column named with its unit ending
    (converted on writing), money in the economics' currency, the fitted laws' parameters in
    columns of their own; texts that quote numbers (limits, messages) in ``display``'s units."""
    m = result.monitoring
    display = (display or current()).with_case(m.case)
    currency = (m.economics or {}).get("currency", "")
    fits = names.spread_parameters(result.fits, {"parameters": "", "standard_errors": "_sigma"})
    fits = fits.rename(columns=names.FIT_NAMES)
    if "held" in fits:
        fits["held"] = fits["held"].map(lambda h: ", ".join(h) if isinstance(h, (tuple, list)) else h)
    return {"today": today_table(result), "state": result.state.rename(columns=names.STATE_NAMES),
            "windows": result.windows,
            "measurements": names.by_tag_quantity(result.measurements, result.measurements.get("quantity", []),
                                                  ["mean_adjustment"]),
            "readings": _readings_by_quantity(result.readings),
            "unmeasured": result.unmeasured,
            "instruments": _by_tag(m, result.instruments, ["median_bias"]),
            "persistently_off": _by_tag(m, result.drifts, ["mean_bias", "last_bias"]),
            "removed": _by_tag(m, result.flagged, ["bias", "bias_sigma"]),
            "cost": names.money(result.cost.rename(columns=names.COST_NAMES), currency),
            "cost_shares": result.shares, "fouling_laws": fits,
            "cleanings": result.cleanings.rename(columns=names.CLEANING_NAMES),
            "projection": result.projection, "limit_dates": _limit_dates(result.limit_dates, display),
            # the file's own row number, apart from the row each written table numbers itself by
            "skipped_rows": _numbered(result.history.skipped.rename(columns={"row": "data_file_row"}), "skip")}


def _readings_by_quantity(readings):
    """The readings table's values under their quantity's ending: a reading and its reconciled
    value as values (``_c``), their difference as a difference (``_k``)."""
    quantities = readings.get("quantity", [])
    split = names.by_tag_quantity(readings, quantities, ["reading_less_reconciled"])
    return names.by_tag_quantity(split, quantities, ["reading", "reconciled"], names.VALUE_ENDINGS)


def _limit_dates(dates, display: Display):
    """The limit dates with each limit's value under its unit's ending (a fired duty's in kW, an
    inlet temperature's in °C) and its text in ``display``'s units."""
    if dates is None or dates.empty:
        return dates
    key = dates["key"].astype(str)
    dates = dates.assign(limit=dates["limit"].map(display.message))
    at = dates.columns.get_loc("value")
    value = dates.pop("value")
    dates.insert(at, "value_kw", value.where(key.str.startswith("limits.fired_duty.")))
    dates.insert(at + 1, "value_c", value.where(key.str.startswith("limits.inlet_temperature.")))
    return dates


def _by_tag(monitoring, table, columns):
    """``columns`` of a table of tags (by index or a ``tag`` column) split by what each tag measures."""
    if table is None or table.empty:
        return table
    tags = table["tag"] if "tag" in table.columns else table.index
    return names.by_tag_quantity(table, names.tag_quantities(monitoring, tags), columns)
