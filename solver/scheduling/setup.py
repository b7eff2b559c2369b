"""From a checked schedule file to what the march needs: each exchanger's fouling law (written in
the file, or fitted to plant data by :func:`hxtrain.solver.monitoring.monitor`), the operating
plan per step, and the cleaning terms as arrays.

A law fitted to plant data starts from the fitted fouling at the data's last window. Its
parameters hold until the exchanger's first cleaning in the plan; after a cleaning the exchanger
starts clean: ``r_f0`` (where the law's curve starts) becomes the fouling just after a cleaning —
the fitted ``r_f0`` where the fitted history itself began at a cleaning, else zero. An exchanger
whose plant data determine no law keeps its last back-calculated fouling (a linear law of rate
zero), and says so.
"""

from __future__ import annotations

import functools

import numpy as np
import pandas as pd

from hxtrain.network.changes import existing_number
from hxtrain.network.errors import CaseError
from hxtrain.network.reading import read_document
from hxtrain.network.schedule_file import ScheduleFile, asymptote_problem

from .horizon import ExchangerLaw, Horizon


SOURCE_COLUMNS = ["exchanger", "model", "source", "initial"]
"""The table of where each exchanger's law came from (:func:`build_horizon`)."""


def fitted_laws(schedule: ScheduleFile, progress=None) -> tuple[dict, pd.DataFrame]:
    """Laws from the plant data the schedule names (exchanger -> ExchangerLaw), and a table of
    where each came from."""
    from hxtrain.solver.monitoring.monitor import monitor

    result = monitor(schedule.monitoring_file, progress=progress)
    laws, rows = {}, []
    chosen = result.fits[result.fits["chosen"]].set_index("exchanger") if not result.fits.empty else pd.DataFrame()
    today = result.today()
    logged = result.cleanings
    for name in today.index:
        if name in chosen.index:
            row = chosen.loc[name]
            before = dict(row["parameters"])
            began_clean = _history_began_at_cleaning(logged, name, row["since"])
            after = {**before, "r_f0": before.get("r_f0", 0.0) if began_clean else 0.0}
            laws[name] = ExchangerLaw(row["model"], before, after, float(row["fouling_now"]))
            rows.append((name, row["model"], "fitted to plant data (initial: the law at the last window, not that "
                                             "window's own value)", float(row["fouling_now"])))
        elif np.isfinite(today.loc[name, "fouling"]):
            held = {"r_f0": 0.0, "rate": 0.0}
            laws[name] = ExchangerLaw("linear", held, held, float(max(today.loc[name, "fouling"], 0.0)))
            rows.append((name, "held", "no law determined by the plant data: its last fouling held",
                         float(today.loc[name, "fouling"])))
    return laws, pd.DataFrame(rows, columns=SOURCE_COLUMNS)


def _history_began_at_cleaning(cleanings: pd.DataFrame, name, since) -> bool:
    if cleanings is None or cleanings.empty:
        return False
    mine = cleanings[cleanings["exchanger"] == name]
    return bool((mine["time"] == since).any())


def written_laws(schedule: ScheduleFile, measured=None) -> tuple[dict, pd.DataFrame]:
    """The laws the schedule file writes (``r_f0`` is the fouling just after a cleaning), and
    their rows of the table of where each came from. A law starts from its ``initial``; where
    the file gives none, from the fouling now of ``measured`` (the laws from plant data), else
    from the case's fouling: the table says which."""
    measured = measured or {}
    laws, rows = {}, []
    for name, law in schedule.fouling.items():
        initial, start = float(law.initial), ""
        if not law.initial_written:  # the start chosen here is checked here, whichever it is
            start, words = " (no initial given: the case's fouling)", "the case's fouling (the default initial)"
            if name in measured:
                initial = float(measured[name].initial)
                start, words = " (no initial given: the plant data's fouling now)", "the plant data's fouling now"
            problem = asymptote_problem(law.model, law.parameters, initial, words)
            if problem:
                raise schedule.error(("fouling", "exchangers", name, "r_inf"), problem)
        laws[name] = ExchangerLaw(law.model, dict(law.parameters), dict(law.parameters), initial)
        rows.append((name, law.model, f"written in the schedule file{start}", initial))
    return laws, pd.DataFrame(rows, columns=SOURCE_COLUMNS)


def operating_settings(schedule: ScheduleFile) -> dict:
    """key path -> (steps,) value in force at each step's start: the operating plan, each key at
    the case's own value until an entry sets it (the furnace's throughput key always, so that a
    cut can scale it)."""
    keys = sorted({k for _, values in schedule.operation for k in values}
                  | ({schedule.furnace.throughput} if schedule.furnace is not None else set()))
    if not keys:
        return {}
    data = read_document(schedule.case.file).data if schedule.case.file else None
    starts = schedule.start + np.arange(schedule.steps) * schedule.step
    settings = {}
    for key in keys:
        current = _case_value(data, key)
        series = np.full(schedule.steps, current, dtype=float)
        for when, values in schedule.operation:
            if key in values:
                series[starts >= when] = values[key]
        if np.isnan(series).any():
            raise CaseError(f"the operating plan sets '{key}' only from a later date, and the case gives no value "
                            "for it before", file=schedule.file, path=("operation",))
        settings[key] = series
    return settings


def _case_value(data, key):
    try:
        return existing_number(data, key, ())[3]
    except (CaseError, TypeError, KeyError):
        return np.nan


def build_horizon(schedule: ScheduleFile, progress=None) -> tuple[Horizon, pd.DataFrame]:
    """The :class:`Horizon` of a schedule, and the table of where each law came from."""
    laws, sources = ({}, pd.DataFrame(columns=SOURCE_COLUMNS))
    if schedule.monitoring_file is not None:
        laws, sources = fitted_laws(schedule, progress)
    written, rows = written_laws(schedule, laws)
    laws.update(written)
    if written:
        sources = pd.concat([sources[~sources["exchanger"].isin(list(written))], rows], ignore_index=True)
    exchangers = [name for name in schedule.case.exchangers if name in laws]
    terms = [schedule.cleaning.get(name) for name in exchangers]
    duration = np.array([t.duration_steps if t is not None else 1 for t in terms])
    cost = np.array([t.cost if t is not None else 0.0 for t in terms], dtype=float)
    horizon = Horizon(schedule.case, exchangers, laws, duration, cost, schedule.step / pd.Timedelta(days=1),
                      schedule.steps, operating_settings(schedule), dict(schedule.economics), schedule.furnace,
                      schedule.start, new_limits_allowed=schedule.new_limits_allowed)
    from hxtrain.solver.simulation.evaluation import evaluate

    base = functools.cache(lambda: evaluate(schedule.case))  # the case as written: evaluated once, if needed
    _check_threshold_conditions(schedule, horizon, written, base)
    _check_furnace_limit(schedule, base)
    order = {name: k for k, name in enumerate(schedule.case.exchangers)}  # the table in the case's order
    return horizon, sources.sort_values("exchanger", key=lambda tags: tags.map(order), kind="stable").set_index(
        "exchanger")


def _check_furnace_limit(schedule: ScheduleFile, base):
    """A furnace limit far from the case's fired duty (``base()``: the case's evaluation) is a
    unit slip (a bare 40 read as kW would cut the throughput to nothing in every plan): refused,
    as the monitoring file's is."""
    from hxtrain.solver.monitoring.historian import fired_limit_slip

    furnace = schedule.furnace
    if furnace is None:
        return
    slip = fired_limit_slip(furnace.maximum_duty, furnace.heater, base())
    if slip:
        raise schedule.error(("furnace", "maximum_duty"), slip)


def _check_threshold_conditions(schedule: ScheduleFile, horizon: Horizon, written, base):
    """A threshold law's rate follows the tube side's Reynolds number, film temperature and wall
    shear, which the network gives only from film coefficients and the tube-side fluid's
    viscosity, conductivity and density: without them it is refused, naming the law, before
    any plan is rated (its costs would have no number)."""
    from hxtrain.solver.monitoring.fouling_fits import fouling_side_conditions
    from hxtrain.solver.monitoring.projection import evaluation_conditions
    from hxtrain.units.fouling_models import MODELS

    adaptive = [n for n in horizon.exchangers if MODELS[horizon.laws[n].model].conditions]
    if not adaptive:
        return
    evaluation = base()
    table = evaluation_conditions(evaluation, adaptive)
    side = fouling_side_conditions(evaluation.net, table)
    for name in adaptive:
        needed = [c.name for c in MODELS[horizon.laws[name].model].conditions]
        rows = side.loc[(table["unit"] == name).to_numpy(), needed]
        if rows.notna().all().all():
            continue
        where = ("fouling", "exchangers", name, "model") if name in written else ("fouling", "from_monitoring")
        raise schedule.error(where, f"{name}'s {horizon.laws[name].model} law follows the tube side's conditions "
                                    f"({', '.join(needed)}), which the case cannot give for {name}: they need its U "
                                    "from films ('film' or 'geometry') and its tube-side fluid's viscosity, "
                                    "conductivity and density; give those in the case, or use a law without "
                                    "conditions (linear, asymptotic)")


def allowed_starts(schedule: ScheduleFile, horizon: Horizon) -> np.ndarray:
    """(E, S) True where a cleaning of each exchanger may start: the exchanger may be cleaned and
    its whole cleaning lies inside the horizon and outside every period with no cleaning."""
    steps = horizon.steps
    blocked = np.zeros(steps, bool)
    for first, last, _ in schedule.not_allowed:
        blocked[max(first, 0):min(last, steps - 1) + 1] = True
    allowed = np.zeros((len(horizon.exchangers), steps), bool)
    for e, name in enumerate(horizon.exchangers):
        terms = schedule.cleaning.get(name)
        if terms is None or not terms.allowed:
            continue
        d = int(horizon.duration[e])
        for s in range(steps - d + 1):
            allowed[e, s] = not blocked[s:s + d].any()
    return allowed
