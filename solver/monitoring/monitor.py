"""``monitor(path)``: the state of the train from its plant data, in one call.

The monitoring file (:mod:`hxtrain.network.monitoring_file`) names the case, the historian data
and what each tag measures. The data are read and averaged over windows, transient windows set
aside (:mod:`.historian`, :mod:`.windows`); the steady windows are reconciled against the
network's balances with gross errors removed (:mod:`.plant_state`); every exchanger's duty,
UA, U and fouling is back-calculated with its uncertainty; the network is simulated in every
window as fouled and as clean for what fouling costs (:mod:`.fouling_cost`); fouling models are
fitted to each exchanger's history since its last cleaning (:mod:`.fouling_fits`) and the train
is projected forward with them (:mod:`.projection`).

Every table is a DataFrame indexed by time (window start) where it has a time axis.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from hxtrain.network.errors import CaseError
from hxtrain.network.monitoring_file import MonitoringFile, load_monitoring, shown_duration
from hxtrain.solver.simulation.evaluation import evaluate

from .excursions import mark_excursions
from .fouling_cost import fouling_cost
from .fouling_fits import fit_fouling
from .historian import History, read_history
from .network_balances import FLOW, TEMPERATURE, UNKNOWN
from .plant_state import WindowStates, conditions, reconcile_windows
from .projection import DEFAULT_HORIZON, DEFAULT_STEP, project

EXPANDED_COVERAGE = 2.0
"""Coverage factor of the expanded uncertainty reported beside each fouling resistance: k = 2,
about 95 % for a normal distribution (GUM, JCGM 100:2008, from memory)."""


@dataclass
class MonitoringResult:
    """Everything ``monitor`` found. Tables with a time axis are indexed by window start."""

    monitoring: MonitoringFile
    history: History
    windows: pd.DataFrame
    """Per window: samples, the mean time of its samples (what its values stand for: fouling laws
    are fitted at it), steady (and why not), reconciled, global test statistic, degrees of
    freedom, passed, measurements eliminated."""
    state: pd.DataFrame
    """Per (window, unit): duty, UA, U in service and clean, fouling with its standard and
    expanded uncertainty, identifiable, status."""
    flagged: pd.DataFrame
    """Per (window, tag) a measurement removed as a gross error: its statistic and estimated bias."""
    instruments: pd.DataFrame
    """Per tag: windows flagged, first and last time, the first window it read persistently off,
    median bias: the instruments to check."""
    cost: pd.DataFrame
    """Per window: fired duty fouled and clean, the penalty, fuel, money and CO₂."""
    shares: pd.DataFrame
    """Per exchanger at the last answered window: fired duty saved by cleaning it alone, and its
    share of the total fouling penalty."""
    drifts: pd.DataFrame = field(default_factory=pd.DataFrame)
    """Per (tag, period): a measurement that read persistently off the others (a drift or a
    calibration error too small for one window's test), its mean bias; left out of the
    reconciliation over that period."""
    measurements: pd.DataFrame = field(default_factory=pd.DataFrame)
    """Per tag: what it measures, windows used, the share of them in which the balances check it
    (redundant), its mean adjustment and mean standardised adjustment."""
    readings: pd.DataFrame = field(default_factory=pd.DataFrame)
    """Per steady window (the index) and tag (a column), in default units: the window's mean
    reading, the reconciled value of what it measures, their difference (reading less
    reconciled), the standardised disagreement, and whether the reconciliation used the reading
    (not eliminated, not withheld, not missing): what a back-calculation can be checked from by
    hand."""
    unmeasured: pd.DataFrame = field(default_factory=pd.DataFrame)
    """Per variable no tag measures: the share of windows in which the balances determine it
    (observable)."""
    fits: pd.DataFrame = field(default_factory=pd.DataFrame)
    cleanings: pd.DataFrame = field(default_factory=pd.DataFrame)
    projection: pd.DataFrame = field(default_factory=pd.DataFrame)
    limit_dates: pd.DataFrame = field(default_factory=pd.DataFrame)
    notes: list = field(default_factory=list)
    """What could not be done, and why (shown in the report)."""

    def today(self) -> pd.DataFrame:
        """The state of each exchanger at the last reconciled window."""
        done = self.windows.index[self.windows["reconciled"]]
        if not len(done) or self.state.empty:
            return pd.DataFrame()
        last = self.state.loc[self.state.index == done[-1]]
        return last.set_index("unit")


def monitor(path_or_monitoring, *, progress=None) -> MonitoringResult:
    """Read a monitoring file (or take a loaded one) and its data; reconcile, back-calculate,
    cost, fit and project. ``progress`` is an optional callable taking a text (a stage name)."""
    say = progress or (lambda text: None)
    monitoring = (path_or_monitoring if isinstance(path_or_monitoring, MonitoringFile)
                  else load_monitoring(path_or_monitoring))
    say("reading the plant data")
    history = read_history(monitoring)
    windows = history.windows(monitoring)
    tags = list(monitoring.tags.values())
    steady = windows.steady.to_numpy()
    index = windows.mean.index[steady]
    if not steady.any():
        reasons = windows.reason[windows.reason != ""].value_counts()
        why = "; ".join(f"{count} {reason}" for reason, count in reasons.head(3).items())
        counted = f"{len(steady)} window{'s' * (len(steady) != 1)}"
        raise monitoring.error(("steady_state",), f"no steady window among {counted} of "
                                                  f"{shown_duration(monitoring.window)}: nothing to reconcile ({why}); "
                                                  "check the window and the steady_state thresholds against the data")
    say(f"reconciling {int(steady.sum())} steady windows")
    base = evaluate(monitoring.case)
    net = base.net
    measured = [_measured_variable(t) for t in tags]
    columns = [t.name for t in tags]
    values = windows.mean[columns].to_numpy()[steady]
    sigma = windows.sigma[columns].to_numpy()[steady]
    states = reconcile_windows(net, base, measured, values, sigma, monitoring.significance)
    drifts = _persistent_table(states.withheld, values, states, index, columns)
    say("back-calculating every exchanger")
    state, excursions = mark_excursions(_state_table(conditions(states, index)))
    flagged = _flagged(states, index, columns)
    say("simulating each window fouled and clean")
    days = np.full(len(index), monitoring.window / pd.Timedelta(days=1))
    cost = fouling_cost(monitoring.case, states, index, days, monitoring.economics, excursions)
    shares = _cost_shares(monitoring.case, states, cost)
    result = MonitoringResult(monitoring, history, _window_table(windows, steady, states), state, flagged,
                              _instruments(states, values, index, columns), cost, shares, drifts=drifts,
                              measurements=_measurement_table(states, tags), unmeasured=_unmeasured_table(states),
                              readings=_readings_table(states, values, index, tags))
    _fit_and_project(result, states, index, say)
    return result


def _measured_variable(tag):
    if tag.quantity == "temperature":
        return (TEMPERATURE, tag.segment)
    if tag.quantity == "flow":
        return (FLOW, tag.segment)
    return (UNKNOWN, tag.point, "duty")


def _state_table(table: pd.DataFrame) -> pd.DataFrame:
    if table.empty or "fouling_sigma" not in table:
        return table
    position = table.columns.get_loc("fouling_sigma") + 1
    table.insert(position, "fouling_expanded", EXPANDED_COVERAGE * table["fouling_sigma"])
    return table


def _window_table(windows, steady, states: WindowStates) -> pd.DataFrame:
    table = pd.DataFrame({"samples": windows.count.sum(axis=1), "mean_time": windows.centre, "steady": windows.steady,
                          "not_steady_because": windows.reason}, index=windows.mean.index)
    for column in ("reconciled", "passed"):
        table[column] = False
    table["statistic"] = np.nan
    table["degrees_of_freedom"] = 0
    table["eliminated"] = 0
    rows = np.flatnonzero(steady)
    table.iloc[rows, table.columns.get_loc("reconciled")] = states.success
    table.iloc[rows, table.columns.get_loc("passed")] = states.passed
    table.iloc[rows, table.columns.get_loc("statistic")] = states.statistic
    table.iloc[rows, table.columns.get_loc("degrees_of_freedom")] = states.degrees_of_freedom
    table.iloc[rows, table.columns.get_loc("eliminated")] = [len(e) for e in states.eliminated]
    return table.rename_axis("time")


def _flagged(states: WindowStates, index, columns) -> pd.DataFrame:
    rows = [{"time": index[w], "tag": columns[e.measurement], "statistic": e.statistic, "bias": e.bias,
             "bias_sigma": e.bias_std,
             "indistinguishable_from": ", ".join(columns[j] for j in e.indistinguishable_from)}
            for w, eliminated in enumerate(states.eliminated) for e in eliminated]
    frame = pd.DataFrame(rows, columns=["time", "tag", "statistic", "bias", "bias_sigma", "indistinguishable_from"])
    return frame.set_index("time")


def _measurement_table(states: WindowStates, tags) -> pd.DataFrame:
    """Redundancy by tag (module text of :class:`MonitoringResult`)."""
    used = np.isfinite(states.adjustments)
    windows = used.sum(axis=0)
    with np.errstate(invalid="ignore"):
        table = pd.DataFrame({
            "quantity": [t.quantity for t in tags], "point": [t.point for t in tags], "windows_used": windows,
            "redundant_share": np.where(windows > 0, (states.redundant & used).sum(axis=0) / np.maximum(windows, 1),
                                        np.nan),
            "mean_adjustment": np.nanmean(np.where(used, states.adjustments, np.nan), axis=0),
            "mean_standardised": np.nanmean(np.where(used, states.standardized, np.nan), axis=0)},
            index=pd.Index([t.name for t in tags], name="tag"))
    return table


def _readings_table(states: WindowStates, values, index, tags) -> pd.DataFrame:
    """Each steady window's readings beside their reconciled values (:class:`MonitoringResult`)."""
    reconciled = states.values[:, states.balances.tag_column]
    each_tag = {"tag": [t.name for t in tags], "quantity": [t.quantity for t in tags], "point": [t.point for t in tags]}
    return pd.DataFrame({**{k: np.tile(v, len(index)) for k, v in each_tag.items()},
                         "reading": values.reshape(-1), "reconciled": reconciled.reshape(-1),
                         "reading_less_reconciled": (values - reconciled).reshape(-1),
                         "standardised": states.standardized.reshape(-1),
                         "used": np.isfinite(states.adjustments).reshape(-1)},
                        index=pd.Index(np.repeat(np.asarray(index), len(tags)), name="time"))  # tags in a column


def _unmeasured_table(states: WindowStates) -> pd.DataFrame:
    """Observability of every variable no tag measures: a segment's temperature or flow (named
    by the segment) or a unit's own unknown (a heater's duty)."""
    balances, net = states.balances, states.balances.net
    rows = []
    for c in balances.unmeasured:
        variable = balances.variables[c]
        what = (f"{variable.unit} {variable.name}" if variable.kind == UNKNOWN
                else f"{variable.kind} of {net.segments[variable.index].label}")
        determined = np.isfinite(states.values[:, c]) & states.success
        rows.append({"variable": what, "observable_share": float(determined.mean()) if determined.size else np.nan})
    return pd.DataFrame(rows, columns=["variable", "observable_share"]).set_index("variable")


def _persistent_table(biased, values, states: WindowStates, index, columns) -> pd.DataFrame:
    """One row per tag and period it read persistently off: from, to, windows, mean bias (the
    reading less the value the others give)."""
    rows = []
    estimate = states.values[:, states.balances.tag_column]
    for j, tag in enumerate(columns):
        flagged = biased[:, j]
        edges = np.flatnonzero(np.diff(np.concatenate([[0], flagged.astype(int), [0]])))
        for first, stop in zip(edges[::2], edges[1::2]):
            bias = values[first:stop, j] - estimate[first:stop, j]
            rows.append({"tag": tag, "from": index[first], "to": index[stop - 1], "windows": int(stop - first),
                         "mean_bias": float(np.nanmean(bias)) if np.isfinite(bias).any() else np.nan,
                         "last_bias": float(bias[np.isfinite(bias)][-1]) if np.isfinite(bias).any() else np.nan})
    return pd.DataFrame(rows, columns=["tag", "from", "to", "windows", "mean_bias", "last_bias"])


def _instruments(states: WindowStates, values, index, columns) -> pd.DataFrame:
    """The instruments to check, most windows first: those serial elimination removed (a gross
    error in a window) and those that read persistently off (over a period), with the median of
    their bias (reading less the others' estimate) over those windows."""
    bias = np.full(values.shape, np.nan)
    removed = np.zeros(values.shape, bool)
    for w, eliminated in enumerate(states.eliminated):
        for e in eliminated:
            removed[w, e.measurement] = True
            bias[w, e.measurement] = e.bias
    off = states.withheld
    estimate = states.values[:, states.balances.tag_column]
    bias = np.where(off, values - estimate, bias)
    counted = removed | off
    rows = []
    for j in np.flatnonzero(counted.any(axis=0)):
        when = index[counted[:, j]]
        finite = bias[counted[:, j], j]
        finite = finite[np.isfinite(finite)]
        rows.append({"tag": columns[j], "windows_eliminated": int(removed[:, j].sum()),
                     "windows_persistently_off": int(off[:, j].sum()), "first": when.min(), "last": when.max(),
                     # where a drift began, apart from a removal months before it (first/last span both)
                     "off_from": index[off[:, j]].min() if off[:, j].any() else pd.NaT,
                     "median_bias": float(np.median(finite)) if finite.size else np.nan})
    table = pd.DataFrame(rows, columns=["tag", "windows_eliminated", "windows_persistently_off", "first", "last",
                                        "off_from", "median_bias"]).set_index("tag")
    order = table["windows_eliminated"] + table["windows_persistently_off"]
    return table.loc[order.sort_values(ascending=False, kind="stable").index]


def _cost_shares(case, states: WindowStates, cost: pd.DataFrame) -> pd.DataFrame:
    """At the last window with a cost: the fired duty each exchanger's fouling costs (the fouled
    window against the same window with that exchanger alone clean) and its share of the sum."""
    from hxtrain.solver.simulation.batch import simulate_batch
    from hxtrain.units.protocol import FIRED_HEATERS

    from .fouling_cost import window_settings

    answered = np.flatnonzero(cost["answer"].to_numpy() == "ok")
    if not answered.size:
        return pd.DataFrame(columns=["fired_duty_saved_kw", "share"])
    last = answered[-1]
    values, fouling, _ = window_settings(states)
    exchangers = sorted({path.split(".")[1] for path in fouling})
    scenarios = 1 + len(exchangers)
    batch = {k: np.repeat(v[last], scenarios) for k, v in values.items()}
    for i, tag in enumerate(exchangers, start=1):
        for path in fouling:
            if path.split(".")[1] == tag:
                batch[path][i] = 0.0
    table = simulate_batch(case, batch).table
    fired = table[FIRED_HEATERS].to_numpy()
    saved = fired[0] - fired[1:]
    total = np.nansum(np.clip(saved, 0.0, None))
    return pd.DataFrame({"fired_duty_saved_kw": saved, "share": saved / total if total > 0 else np.nan},
                        index=pd.Index(exchangers, name="exchanger"))


def _fit_and_project(result: MonitoringResult, states: WindowStates, index, say):
    """Fouling models fitted to each exchanger's history, and the projection forward (the
    monitoring file's horizon and step, or half a year in weekly steps)."""
    monitoring = result.monitoring
    say("fitting fouling models")
    centres = result.windows["mean_time"]
    found = fit_fouling(result.state, monitoring.cleanings, states.balances.net, centres=centres)
    result.fits, result.cleanings = found.fits, found.cleanings
    horizon, step = monitoring.projection or (DEFAULT_HORIZON, DEFAULT_STEP)
    say("projecting forward")
    try:  # from the time the last window's values stand for, not its start
        ahead = project(monitoring.case, states, pd.DatetimeIndex(centres.reindex(index).to_numpy()), found,
                        monitoring.limits, horizon, step)
    except CaseError as exc:  # the state is still answered; only the projection has no start
        result.notes.append(f"no projection: {exc.message}")
        return
    result.projection, result.limit_dates = ahead.steps, ahead.limits
    if not (result.fits.empty or result.fits["chosen"].any()):
        result.notes.append("no fouling law was determined by the data: the projection holds every exchanger's "
                            "last fouling")
