r"""The train marched forward in time with each exchanger's fitted fouling law: the fired
heaters' duty and inlet temperature over the coming months, every exchanger's fouling, and the
date each limit would be reached.

**Conditions.** Throughput, supply temperatures, heater settings and splits are held at one
window's reconciled values (the last window whose settings the data determine, through the
units' ``settings_from_states``: :func:`.fouling_cost.window_settings`); only fouling changes.
Fouling is set as each exchanger's total resistance on the outside-area basis (shell side, none
on the tube side), as it was back-calculated.

**Laws.** Each exchanger follows its chosen model (:class:`.fouling_fits.FoulingFits`), starting
from the fitted value at the last window; one without a chosen model keeps its last
back-calculated fouling (no growth: the data determine none). Laws that do not depend on the
network (linear, asymptotic) step exactly over any interval, so all steps are one batch. A
threshold law's rate depends on the film temperature and flow the network itself sets: its
fouling advances over each step at the rate the network's state at the start of that step gives
(explicit Euler in time, as the published models are used), while the other exchangers advance
by their own exact steps. That march is solved as repeated batches of all steps (waveform
relaxation): each pass rates every step with the fouling of the last pass and integrates the
threshold laws again, until no step's fouling changes by more than
:data:`RELAXATION_TOLERANCE`. Step s depends only on the steps before it, so it is exact after
s + 1 passes at the latest: the answer is the step-by-step march's (to 1e-12 m²K/W), in a few
batches instead of one solve per step.

**Limits.** The monitoring file's limits (a fired heater's largest duty, its lowest inlet
temperature) and the case's (findings of severity ``limit``: design temperatures, allowable
pressure drops, ...). Each limit's date is interpolated linearly between the last step inside
the limit and the first beyond it; a case limit is interpolated on its margin where its
finding carries the value and the limit, else dated at its first step beyond. A limit already
reached at the start is dated there and marked ``at_start``; NaT where it is not reached within
the horizon.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from hxtrain.network.errors import CaseError
from hxtrain.network.monitoring_file import DEFAULT_HORIZON, DEFAULT_STEP  # half a year in weekly steps
from hxtrain.solver.simulation.evaluation import as_case, evaluate
from hxtrain.units.fouling_models import MODELS
from hxtrain.units.protocol import FIRED_HEATERS, PortStates

from .fouling_cost import window_settings
from .fouling_fits import FoulingFits, fouling_side_conditions

__all__ = ["Projection", "FoulingLaw", "project", "project_network", "evaluation_conditions", "crossing_date",
           "DEFAULT_HORIZON", "DEFAULT_STEP"]

LIMIT_VALUE_KEYS = ("lim", "design")
"""Names under which a unit's limit finding carries its limit (with the value it checks)."""
DAY = pd.Timedelta(days=1)
RELAXATION_TOLERANCE = 1e-12
"""m²K/W: threshold fouling paths are repeated until no step's fouling changes by more."""


@dataclass
class FoulingLaw:
    """An exchanger's fouling law: a model of :data:`~hxtrain.units.fouling_models.MODELS` by
    name with its parameters, and the fouling (m²K/W) it starts from."""

    model: str
    parameters: dict
    start: float
    source: str = "fitted"


@dataclass
class Projection:
    """``steps``: indexed by time, columns ``success``, ``message``, ``HEATER.fired_duty_kw``
    and ``HEATER.inlet_c`` per fired heater, ``TAG.fouling_m2_k_w`` per exchanger with a law.
    ``limits``: one row per limit: source (monitoring file / case), unit, limit (what), key,
    value (the limit, NaN for case findings), date (NaT when not reached), at_start,
    interpolated. ``laws``: per exchanger, the model, its parameters, starting fouling and
    source (fitted, or held where no model was determined)."""

    steps: pd.DataFrame
    limits: pd.DataFrame
    laws: pd.DataFrame
    evaluation: object = None
    """The evaluation of all steps (one scenario per step): every unit's report and the solution."""


def crossing_date(times, values, limit, rising=True):
    """(date, at_start): when ``values`` (one per time of ``times``) first reach ``limit``
    (from below if ``rising``, else from above), interpolated linearly between the two steps
    around the crossing and rounded to the second; (times[0], True) if already there at the
    start; (NaT, False) if never.

    >>> t = pd.date_range("2026-01-01", periods=3, freq="7D")
    >>> crossing_date(t, [10.0, 20.0, 30.0], 25.0)
    (Timestamp('2026-01-11 12:00:00'), False)
    """
    times, values = pd.DatetimeIndex(times), np.asarray(values, float)
    with np.errstate(invalid="ignore"):
        past = values >= limit if rising else values <= limit
    if not past.any():
        return pd.NaT, False
    s = int(np.argmax(past))
    if s == 0:
        return times[0], True
    before, after = values[s - 1], values[s]
    share = (limit - before) / (after - before) if np.isfinite(before) and after != before else 1.0
    return (times[s - 1] + float(np.clip(share, 0.0, 1.0)) * (times[s] - times[s - 1])).round("s"), False


def evaluation_conditions(evaluation, units=None) -> pd.DataFrame:
    """Each unit's condition (of ``units``, default all) in every scenario of an evaluation, as
    plant data would give it from the simulated port states (the units' own ``condition``): one
    row per (scenario, unit), indexed by scenario, columns as :func:`.plant_state.conditions`
    (without the uncertainty)."""
    net = evaluation.net
    t = evaluation.solution.temperature
    m = np.broadcast_to(net.flow, t.shape)
    frames = []
    for name, unit in net.units.items():
        if units is not None and name not in units:
            continue
        ins, outs = net.inlets[name], net.outlets[name]
        states = PortStates(t[:, ins], m[:, ins], t[:, outs], m[:, outs], tuple(net.fluids[s] for s in ins),
                            tuple(net.fluids[s] for s in outs))
        found = unit.condition(states)
        if found is not None:
            frame = pd.DataFrame({k: v for k, v in found.items() if k != "reason"}, index=pd.RangeIndex(t.shape[0]))
            frame.insert(0, "unit", name)
            frames.append(frame)
    return pd.concat(frames).rename_axis("scenario") if frames else pd.DataFrame()


_FOULING_KEYS = (".fouling.shell", ".fouling.tube")


def _fouling_paths(case, name):
    base = ".".join(case.keys[name])
    return tuple(base + key for key in _FOULING_KEYS)


def _read_steps(evaluation, laws, fouling, times):
    """The per-step table, and each limit finding's (active, margin or None, messages) over the
    steps: the margin (checked value less its limit) where the finding carries both."""
    ok = evaluation.success
    rows = {"success": ok, "message": evaluation.message}
    for name, report in evaluation.reports.items():
        if FIRED_HEATERS in report.totals:
            for column, metric in (("fired_duty_kw", "duty"), ("inlet_c", "inlet")):
                rows[f"{name}.{column}"] = np.where(ok, report.metrics[metric], np.nan)
    for name in laws:
        rows[f"{name}.fouling_m2_k_w"] = fouling[name]
    findings, seen = {}, {}
    for unit, finding in evaluation.findings:
        if finding.severity != "limit":
            continue
        name = (unit, finding.key, finding.kind)
        seen[name] = seen.get(name, -1) + 1  # one check may appear once per side (a design temperature)
        limit_key = next((v for v in LIMIT_VALUE_KEYS if v in finding.values), None)
        others = [v for v in finding.values if v != limit_key]
        margin = None
        if limit_key and len(others) == 1:
            checked, limit = (np.asarray(finding.values[k], float) for k in (others[0], limit_key))
            margin = np.broadcast_to(checked - limit, finding.active.shape)
        findings[name + (seen[name],)] = (finding.active, margin, finding.messages)
    return pd.DataFrame(rows, index=pd.DatetimeIndex(times, name="time")), findings


def _limit_rows(steps, findings, limits):
    times, rows = steps.index, []
    for kind, rising, what in (("fired_duty", True, "fired duty above {v:,.1f} kW"),
                               ("inlet_temperature", False, "inlet temperature below {v:,.1f} °C")):
        column = "fired_duty_kw" if kind == "fired_duty" else "inlet_c"
        for heater, value in (limits or {}).get(kind, {}).items():
            series = steps.get(f"{heater}.{column}")
            date, at_start = crossing_date(times, series, value, rising) if series is not None else (pd.NaT, False)
            rows.append(("monitoring file", heater, what.format(v=value), f"limits.{kind}.{heater}", value, date, at_start,
                         bool(pd.notna(date) and not at_start)))
    for (unit, key, kind, _), (active, margin, messages) in findings.items():
        if not active.any():
            if margin is not None:  # a limit with a value (design temperature, pressure drop): not reached
                rows.append(("case", unit, kind, key, np.nan, pd.NaT, False, False))
            continue
        s = int(np.argmax(active))
        interpolated = s > 0 and margin is not None and margin[s - 1] <= 0.0 < margin[s]
        date = crossing_date(times[s - 1:s + 1], margin[s - 1:s + 1], 0.0)[0] if interpolated else times[s]
        rows.append(("case", unit, f"{kind}: {messages[s]}", key, np.nan, date, s == 0, bool(interpolated)))
    columns = ["source", "unit", "limit", "key", "value", "date", "at_start", "interpolated"]
    return pd.DataFrame(rows, columns=columns).astype({"date": "datetime64[ns]"})


def project_network(case, laws: dict, settings=None, start=None, horizon=DEFAULT_HORIZON, step=DEFAULT_STEP,
                    limits=None) -> Projection:
    """March ``case`` forward from ``start`` (a Timestamp; default 2026-01-01, only a label)
    over ``horizon`` in steps of ``step`` (the last step shortened to end at the horizon), with
    ``settings`` (key path -> value: the conditions held; or one value per time, start
    included, for conditions that change on a known schedule) and ``laws`` (exchanger ->
    :class:`FoulingLaw`); ``limits`` as the monitoring file's (``fired_duty``,
    ``inlet_temperature``: heater -> kW, °C). See the module text."""
    case = as_case(case)
    start = pd.Timestamp("2026-01-01") if start is None else pd.Timestamp(start)
    count = int(np.ceil(horizon / step))
    elapsed = np.minimum(np.arange(count + 1) * (step / DAY), horizon / DAY)
    times = start + pd.to_timedelta(elapsed, unit="D")
    dt = np.diff(elapsed)
    base = {k: np.broadcast_to(np.asarray(v, float).reshape(-1), (count + 1,)) for k, v in (settings or {}).items()}
    fouling = {name: np.full(count + 1, np.nan) for name in laws}
    for name, law in laws.items():
        fouling[name][0] = law.start
    adaptive = [n for n, law in laws.items() if MODELS[law.model].conditions]
    for name, law in laws.items():
        if name not in adaptive:  # exact steps: the whole path at once
            for s in range(count):
                fouling[name][s + 1] = MODELS[law.model].step(fouling[name][s], dt[s], **law.parameters)

    def scenario_values(rows):
        values = {k: v[rows] for k, v in base.items()}
        for name in laws:
            shell, tube = _fouling_paths(case, name)
            values[shell], values[tube] = fouling[name][rows], np.zeros(len(rows))
        return values

    every = np.arange(count + 1)
    for name in adaptive:  # first guess: no growth
        fouling[name][:] = laws[name].start
    evaluation = evaluate(case, scenario_values(every))
    for _ in range(count + 1):  # step s is exact after s + 1 passes: the sequential march at the latest
        if not adaptive:
            break
        table = evaluation_conditions(evaluation, adaptive)
        side = fouling_side_conditions(evaluation.net, table)
        change = 0.0
        for name in adaptive:
            law, rows = laws[name], side[(table["unit"] == name).to_numpy()]
            new = fouling[name].copy()
            for s in range(count):
                needed = {q.name: float(rows[q.name].iloc[s]) for q in MODELS[law.model].conditions}
                new[s + 1] = float(MODELS[law.model].step(new[s], dt[s], **law.parameters, **needed))
            change = max(change, float(np.nanmax(np.abs(new - fouling[name]), initial=0.0)))
            fouling[name] = new
        if not change > RELAXATION_TOLERANCE:  # NaN (a step without an answer) stops too
            break
        evaluation = evaluate(case, scenario_values(every))
    steps, findings = _read_steps(evaluation, laws, fouling, times)
    columns = ["exchanger", "model", "parameters", "start_fouling", "source"]
    laws_table = pd.DataFrame([(n, law.model, law.parameters, law.start, law.source) for n, law in laws.items()],
                              columns=columns)
    return Projection(steps, _limit_rows(steps, findings, limits), laws_table, evaluation)


def project(case, states, index, fits, limits=None, horizon=DEFAULT_HORIZON, step=DEFAULT_STEP) -> Projection:
    """Project the train of the reconciled windows ``states`` (indexed by ``index``) with the
    chosen fouling laws of ``fits`` (a :class:`.fouling_fits.FoulingFits`), from the last window
    whose settings the data determine. Exchangers without a chosen law keep their fouling of
    that window."""
    case = as_case(case)
    values, _, undetermined = window_settings(states)
    complete = states.success & (undetermined == "")
    for v in values.values():
        complete &= np.isfinite(v)
    if not complete.any():
        first = next((u for u in undetermined if u), "")
        advice = ("the temperatures and flows around it must be measured or follow from the balances"
                  if first.endswith(_FOULING_KEYS) else "measure it, or give it in the case")
        raise CaseError("no window has every setting the simulation needs determined by the plant data, so the "
                        "train cannot be projected" + (f" (for example {first}: {advice})"
                                                       if first else " (no window was reconciled)"))
    last = int(np.flatnonzero(complete)[-1])
    settings = {k: float(v[last]) for k, v in values.items()}
    start = pd.Timestamp(index[last])
    laws = {}
    chosen = fits.chosen() if isinstance(fits, FoulingFits) else fits[fits["chosen"]].set_index("exchanger")
    for name, row in chosen.iterrows():
        law = FoulingLaw(row["model"], dict(row["parameters"]), float(row["fouling_now"]))
        gap = (start - pd.Timestamp(row["now"])) / DAY
        if gap and not MODELS[law.model].conditions:  # the law at the start window itself
            law.start = float(MODELS[law.model].step(law.start, gap, **law.parameters))
        laws[name] = law
    for name in case.keys:
        shell = _fouling_paths(case, name)[0]
        if shell in settings and name not in laws:
            laws[name] = FoulingLaw("linear", {"r_f0": settings[shell], "rate": 0.0}, settings[shell],
                                    "held: no fouling model determined")
    return project_network(case, laws, settings, start, horizon, step, limits)
