"""The state of the train in each window of plant data: measurements reconciled against the
network's balances, gross errors found and removed, and each unit's condition (an exchanger's
duty, UA, service and clean U, fouling resistance) with its uncertainty.

Reconciliation (:mod:`.reconciliation`) adjusts the measured flows and temperatures within
their uncertainties so that every mass and enthalpy balance of the network holds
(:mod:`.network_balances`); serial elimination (:mod:`.gross_errors`) removes, window by window,
the measurement the tests blame until the global test passes. A unit's condition is then read
from the reconciled port states; its fouling uncertainty is the reconciled covariance carried
through the back-calculation (first order: the delta method), so that an exchanger whose
fouling the instruments cannot resolve is reported as not identifiable instead of as a number.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from hxtrain.units.protocol import PortStates

from .gross_errors import DEFAULT_ALPHA, first_of_largest, global_test, measurement_test, serial_elimination, \
    sidak_critical_value
from .network_balances import FLOW, TEMPERATURE, UNKNOWN, NetworkBalances
from .reconciliation import reconcile_nonlinear

CHUNK = 1024
"""Windows reconciled together: the stacked Jacobians and covariances of a chunk stay small."""
IDENTIFIABLE_SHARE = 0.25
"""An exchanger's fouling is identified when its expanded uncertainty (k = 2, about 95 %) is at
most this share of its clean resistance 1/U_clean (common practice: past it the instruments
cannot tell a fouled exchanger from a clean one within a quarter of its U)."""
IDENTIFIED = "identified"
STEP_TOLERANCE = 1e-7
"""A window has converged when, besides every balance closing to 1e-9 (scaled), the next step
moves no variable by more than this share of its size plus its measurement's standard deviation:
a ten-millionth of a standard deviation changes no conclusion drawn from the data."""
PERSISTENCE_ROUNDS = 8
"""Rounds of leaving out persistently biased measurements (one per window per round)."""
PERSISTENCE_SPAN = 28
"""Windows over which a measurement's disagreements are averaged to find a persistent bias (two
weeks of daily windows; common practice for a drift to be told from noise)."""
MIN_PERSISTENCE = 7
"""Fewest of those windows a measurement must have been tested in."""
DELTA_STEP = 1e-6
"""Relative step of the central differences that carry the covariance through a condition."""


@dataclass
class WindowStates:
    """Reconciled variables of every window (W windows, N variables of :class:`NetworkBalances`)."""

    balances: NetworkBalances
    values: np.ndarray
    """(W, N) reconciled values; NaN where a variable is not observable or the window failed."""
    covariance: np.ndarray
    """(W, N, N) their covariance (first order)."""
    success: np.ndarray
    message: np.ndarray
    statistic: np.ndarray
    degrees_of_freedom: np.ndarray
    passed: np.ndarray
    """(W,) the global test passes after serial elimination."""
    eliminated: list
    """Per window, the eliminated measurements (gross_errors.Elimination) in order."""
    adjustments: np.ndarray
    """(W, tags) measurement minus reconciled value; NaN for eliminated or missing ones."""
    standardized: np.ndarray
    """(W, tags) each measurement's standardized disagreement with the others: its standardized
    adjustment, or for a measurement left out its reading less the others' estimate over that
    difference's standard deviation; NaN where it was not measured or not redundant."""
    withheld: np.ndarray
    """(W, tags) left out of the window for reading persistently off the others."""
    redundant: np.ndarray = None
    """(W, tags) the balances check the measurement (it could be adjusted): redundant."""


def start_values(net, evaluation) -> np.ndarray:
    """A start for every variable: the base case's simulated temperatures and flows, and each
    unit's unknowns (a heater's duty) solved from its balances at those states (the balances
    are linear in them)."""
    balances = NetworkBalances(net, [])
    temperature = evaluation.solution.temperature[0]
    flow = np.broadcast_to(evaluation.net.flow, evaluation.solution.temperature.shape)[0]
    z = np.zeros((1, len(balances.variables)))
    for c, variable in enumerate(balances.variables):
        if variable.kind == TEMPERATURE:
            z[0, c] = temperature[variable.index]
        elif variable.kind == FLOW:
            z[0, c] = flow[variable.index]
    for c, variable in enumerate(balances.variables):
        if variable.kind == UNKNOWN:
            zero, one = z.copy(), z.copy()
            one[0, c] = 1.0
            at_zero = balances.unit_residuals(variable.unit, zero)
            slope = balances.unit_residuals(variable.unit, one) - at_zero
            row = np.flatnonzero(np.abs(slope[0]) > 0.0)
            z[0, c] = -at_zero[0, row[0]] / slope[0, row[0]] if row.size else 0.0
    return z[0]


def reconcile_windows(net, evaluation, measured, values, sigma, alpha=DEFAULT_ALPHA, persistence=True) -> WindowStates:
    """Reconcile every window of ``values`` (W, tags; NaN where a tag has no reading) with
    standard deviations ``sigma`` (W, tags) against the balances of ``net``; ``measured`` gives
    each tag's variable (see :class:`NetworkBalances`). ``evaluation`` is the base case's (for
    start values).

    Each window's gross errors are removed by serial elimination; with ``persistence``, the
    measurements that read off the others persistently (:func:`persistence_statistic`) are then
    left out where they do, one per window per round, worst first, and those windows reconciled
    again, until none is left (at most :data:`PERSISTENCE_ROUNDS` rounds): a biased instrument
    smears its error over the measurements it shares balances with, so only the worst is taken
    each round, as serial elimination does within one window."""
    balances = NetworkBalances(net, measured)
    z0 = start_values(net, evaluation)
    start = balances.split(z0[None, :])
    values, sigma = np.atleast_2d(values).astype(float), np.atleast_2d(sigma).astype(float)
    windows, variables = values.shape[0], len(balances.variables)
    out = WindowStates(balances, np.full((windows, variables), np.nan), np.full((windows, variables, variables), np.nan),
                       np.zeros(windows, bool), np.full(windows, "", dtype=object), np.full(windows, np.nan),
                       np.zeros(windows, int), np.zeros(windows, bool), [[] for _ in range(windows)],
                       np.full(values.shape, np.nan), np.full(values.shape, np.nan), np.zeros(values.shape, bool),
                       np.zeros(values.shape, bool))
    _reconcile_rows(out, np.arange(windows), values, sigma, start, alpha)
    for _ in range(PERSISTENCE_ROUNDS if persistence else 0):
        statistic, critical = persistence_statistic(out, alpha=alpha)
        over = (statistic > critical[:, None]) & ~out.withheld & np.isfinite(values)
        rows = np.flatnonzero(over.any(axis=1))
        if not rows.size:
            break
        worst, _ = first_of_largest(np.where(over[rows], statistic[rows], -np.inf))
        out.withheld[rows, worst] = True
        _reconcile_rows(out, rows, values, sigma, start, alpha)
    return out


def _reconcile_rows(out, rows, values, sigma, start, alpha):
    for first in range(0, rows.size, CHUNK):
        part = rows[first:first + CHUNK]
        _reconcile_chunk(out, part, values[part], np.where(out.withheld[part], np.nan, values[part]), sigma[part],
                         start, alpha)


def _reconcile_chunk(out, rows, readings, used, sigma, start, alpha):
    """Reconcile windows ``rows`` with the measurements ``used`` (``readings`` with the withheld
    ones blanked) and store what was found."""
    balances = out.balances
    x0, u0 = start
    warm = {}

    def reconcile(measurements, picked):
        # windows reconciled again after an elimination start from their last solution: only the
        # eliminated measurement's neighbourhood moves, so a step or two finishes them
        u_start = np.where(np.isfinite(warm["u"][picked]), warm["u"][picked], u0) if warm else u0
        x_start = np.where(np.isfinite(warm["x"][picked]), warm["x"][picked], x0) if warm else x0
        result = reconcile_nonlinear(measurements, sigma[picked], balances.constraints, balances.jacobian, u_start,
                                     measured_start=x_start, step_tolerance=STEP_TOLERANCE)
        if not warm:
            warm.update(x=np.array(result["x"]), u=np.array(result["u"]))
        return result

    found = serial_elimination(reconcile, used, alpha)
    result = found.result
    test = global_test(result, alpha)
    n = len(balances.tag_column)
    z = balances.full(result["x"], result["u"])
    selection = np.zeros((len(balances.variables), n + len(balances.unmeasured)))
    selection[balances.tag_column[balances.primary], balances.primary] = 1.0
    selection[balances.unmeasured, n + np.arange(len(balances.unmeasured))] = 1.0
    covariance = selection @ np.nan_to_num(result["covariance"]) @ selection.T
    determined = np.isfinite(z)
    covariance = np.where(determined[:, :, None] & determined[:, None, :], covariance, np.nan)
    success = np.asarray(result["success"], bool)
    out.values[rows] = np.where(success[:, None], z, np.nan)
    out.covariance[rows] = covariance
    out.success[rows] = success
    out.message[rows] = result["message"]
    out.statistic[rows] = test.statistic
    out.degrees_of_freedom[rows] = test.degrees_of_freedom
    out.passed[rows] = success & ~test.rejected
    measured = np.asarray(result["measured"], bool)
    out.redundant[rows] = np.asarray(result["redundant"], bool)
    out.adjustments[rows] = np.where(measured, result["adjustments"], np.nan)
    standardized = measurement_test(result, alpha).standardized_adjustments
    # a measurement left out (withheld, or eliminated here): its reading against the value the
    # others give, over the standard deviation of that difference
    variance = np.diagonal(result["x_covariance"], axis1=1, axis2=2)
    spread = np.sqrt(sigma ** 2 + np.where(np.isfinite(variance), variance, np.inf))
    left_out = np.isfinite(readings) & ~measured
    with np.errstate(invalid="ignore"):
        standardized = np.where(left_out, (readings - result["x"]) / spread, standardized)
    for i, row in enumerate(rows):
        out.eliminated[row] = found.eliminated[i]
    out.standardized[rows] = standardized


def persistence_statistic(states: WindowStates, span=None, alpha=DEFAULT_ALPHA):
    """((W, tags) statistic, (W,) critical value): how far each measurement has read off the
    others, in the same direction, over the ``span`` windows ending at each window. The mean of
    n standardized disagreements has standard deviation 1/sqrt(n) for a sound instrument, so
    |sum| / sqrt(n) is a standard normal statistic, and a bias of a fraction of a standard
    deviation, too small for any one window's test, shows once it persists (a drifting
    thermocouple, a flow meter out of calibration). The critical value is Šidák's over the tags
    tested in the window times the W windows: the test is made at every window, so over the tags
    alone a sound instrument somewhere crossed it in every year of daily windows of pure noise
    (200 simulated years of 47 tags; the plant-data demo had four sound instruments called
    persistently off besides the drifting one); over every test made, in 2.5 % of those years
    (conservative: successive windows share 27 of their 28)."""
    span = PERSISTENCE_SPAN if span is None else span
    z = states.standardized
    present = np.isfinite(z)
    filled = np.where(present, z, 0.0)
    cumulative = np.vstack([np.zeros((1, z.shape[1])), np.cumsum(filled, axis=0)])
    counts = np.vstack([np.zeros((1, z.shape[1])), np.cumsum(present, axis=0)])
    ends = np.arange(1, z.shape[0] + 1)
    starts = np.maximum(ends - span, 0)
    total, n = cumulative[ends] - cumulative[starts], counts[ends] - counts[starts]
    tested = (n >= MIN_PERSISTENCE) & present
    statistic = np.where(tested, np.abs(total) / np.sqrt(np.maximum(n, 1)), 0.0)
    critical = sidak_critical_value(alpha, np.maximum(tested.sum(axis=1), 1) * z.shape[0])
    return statistic, critical


def unit_states(states: WindowStates, name: str, z=None) -> PortStates:
    """A unit's port states in every window from the reconciled variables (or ``z``)."""
    balances, net = states.balances, states.balances.net
    z = states.values if z is None else z
    ins, outs = net.inlets[name], net.outlets[name]
    t = balances.slot_column[:balances.segments]
    m = balances.slot_column[balances.segments:2 * balances.segments]
    return PortStates(z[:, t[ins]], z[:, m[ins]], z[:, t[outs]], z[:, m[outs]], tuple(net.fluids[s] for s in ins),
                      tuple(net.fluids[s] for s in outs))


def conditions(states: WindowStates, index) -> pd.DataFrame:
    """Every unit's condition in every window (units that have one), one row per (time, unit):
    its values, the fouling's standard uncertainty and whether it is identifiable, and a status:
    ``identified``, ``negative fouling`` (reported, never clipped: the clean model is optimistic or an
    instrument is wrong), ``not identifiable``, or the reason it has no value."""
    net = states.balances.net
    frames = []
    for name, unit in net.units.items():
        found = unit.condition(unit_states(states, name))
        if found is None:
            continue
        table = pd.DataFrame({k: v for k, v in found.items() if k != "reason"}, index=index)
        sigma = _fouling_uncertainty(states, name, unit) if "fouling" in found else None
        reason = np.where(states.success, found["reason"], "no reconciled data in this window")
        if sigma is not None:
            table["fouling_sigma"] = sigma
            with np.errstate(divide="ignore"):
                clean_resistance = 1.0 / table["u_clean"].to_numpy()
            identifiable = 2.0 * sigma <= IDENTIFIABLE_SHARE * clean_resistance
            table["identifiable"] = identifiable
            status = np.where(reason != "", reason, np.where(~identifiable, "not identifiable",
                              np.where(table["fouling"] < 0.0, "negative fouling", IDENTIFIED)))
        else:
            status = np.where(reason != "", reason, IDENTIFIED)
        table["status"] = status
        table.insert(0, "unit", name)
        frames.append(table)
    return pd.concat(frames).rename_axis("time") if frames else pd.DataFrame()


def _fouling_uncertainty(states: WindowStates, name, unit) -> np.ndarray:
    """Standard uncertainty of the back-calculated fouling: the gradient of the fouling with
    respect to the unit's own reconciled variables (central differences), through their
    covariance."""
    balances = states.balances
    columns = np.unique(balances.local_columns(name))
    z = states.values
    gradient = np.zeros((z.shape[0], columns.size))
    for k, c in enumerate(columns):
        step = DELTA_STEP * np.maximum(np.abs(np.nan_to_num(z[:, c])), 1.0)
        up, down = z.copy(), z.copy()
        up[:, c] += step
        down[:, c] -= step
        high = unit.condition(unit_states(states, name, up))["fouling"]
        low = unit.condition(unit_states(states, name, down))["fouling"]
        gradient[:, k] = (high - low) / (2.0 * step)
    local = states.covariance[:, columns[:, None], columns[None, :]]
    variance = np.einsum("wi,wij,wj->w", gradient, local, gradient)
    return np.sqrt(np.maximum(variance, 0.0))
