"""Batch evaluation: many scenarios of one topology in one vectorized pass.

The calculation order and the tear set are found once; every unit model works on arrays with
the scenarios on the leading axis; tear convergence is tracked per scenario. A scenario that
does not converge, or that asks for the impossible (a heater target below its inlet, a fluid out
of its data range), gets NaN results and says why in ``message``: no number of it is reported as
an answer.
"""

from __future__ import annotations

import multiprocessing
import sys
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from hxtrain.network import Case
from hxtrain.network.case import case_from_document
from hxtrain.network.batch import batch_network, check_values
from hxtrain.network.reading import read_document

from .checks import enthalpy_balance, out_of_range
from .engine import inlets_of, solve_temperatures
from .sequencing import plan_calculation


@dataclass
class BatchResult:
    table: pd.DataFrame
    """One row per scenario: the varied values, ``converged``, ``valid``, ``message`` and the key
    outputs (heat recovered, heater and cooler duties, heater inlet temperatures, limits
    violated, warnings, relative energy imbalance)."""
    iterations: int
    temperature: np.ndarray
    """(scenarios, segments) °C, NaN where a scenario is not converged or not valid; segments in
    the order of the one-case streams table."""


PROCESS_MINIMUM = 5000
"""Fewest scenarios per process worth starting one for: a worker costs a process start and the
transfer of the case and its results. A judgement, not an optimum: at 5,000 scenarios a part
the crude demo as shipped gains from a second process, its fixed-property form does not."""


def simulate_batch(case, values: dict, *, tolerance=None, max_iterations=None, workers=1) -> BatchResult:
    """Simulate the scenarios given by ``values`` (key path -> array, one value per scenario;
    see :mod:`hxtrain.network.batch` for the paths that may vary).

    ``workers`` > 1 splits the scenarios into that many contiguous parts, each solved as a batch
    of its own in a separate process (at least :data:`PROCESS_MINIMUM` scenarios a part; fewer
    scenarios use fewer processes). Every scenario converges on its own either way; ``iterations``
    is then the largest over the parts."""
    if not isinstance(case, Case):
        document = read_document(Path(case))
        check_values(document, values)
        case = case_from_document(document)
    tolerance = tolerance if tolerance is not None else case.settings.tolerance
    max_iterations = max_iterations if max_iterations is not None else case.settings.max_iterations
    scenarios = len(np.atleast_1d(next(iter(values.values())))) if values else 1
    parts = max(1, min(int(workers), scenarios // PROCESS_MINIMUM))
    if parts == 1:
        return _solve_batch(case, values, tolerance, max_iterations)
    pieces = np.array_split(np.arange(scenarios), parts)
    jobs = [{path: np.atleast_1d(np.asarray(v, dtype=float))[piece] for path, v in values.items()} for piece in pieces]
    with ProcessPoolExecutor(parts, mp_context=_process_context()) as pool:
        results = list(pool.map(_solve_batch, [case] * parts, jobs, [tolerance] * parts, [max_iterations] * parts))
    return BatchResult(pd.concat([r.table for r in results], ignore_index=True), max(r.iterations for r in results),
                       np.concatenate([r.temperature for r in results]))


def _process_context():
    """Fork on Linux (the workers inherit the loaded modules: no start-up import); spawn
    elsewhere, where forking a process that has used the system's maths libraries is unsafe."""
    return multiprocessing.get_context("fork" if sys.platform.startswith("linux") else "spawn")


def _solve_batch(case, values, tolerance, max_iterations) -> BatchResult:
    net, batch = batch_network(case, values)
    solution = solve_temperatures(net, tolerance=tolerance, max_iterations=max_iterations, batch=batch,
                                  plan=plan_calculation(net.graph), raise_on_failure=False)
    outputs, valid, messages = summarize(net, solution.temperature)
    ok = solution.converged & valid
    table = pd.DataFrame({path: np.asarray(v, dtype=float) for path, v in values.items()})
    table["converged"] = solution.converged
    table["valid"] = valid
    table["message"] = np.where(solution.converged, messages, "temperatures did not converge")
    for name, column in outputs.items():
        table[name] = np.where(ok, column, np.nan)
    temperature = np.where(ok[:, None], solution.temperature, np.nan)
    return BatchResult(table, solution.iterations, temperature)


def summarize(net, temperature):
    """Key outputs per scenario from the units' reports, as in ``key_outputs`` of one run."""
    batch = temperature.shape[0]
    flow = np.broadcast_to(net.flow, temperature.shape)
    totals = {"exchanger": np.zeros(batch), "heater": np.zeros(batch), "cooler": np.zeros(batch)}
    inlets, limits, warnings = {}, np.zeros(batch), np.zeros(batch)
    valid, messages = np.ones(batch, bool), np.full(batch, "", dtype=object)
    heat_added = np.zeros(batch)
    for name, unit in net.units.items():
        report = unit.report(inlets_of(net, name, temperature, flow))
        if unit.kind in totals:
            totals[unit.kind] = totals[unit.kind] + report.quantities["duty"]
        if unit.kind == "heater":
            inlets[f"{name}_inlet_c"] = report.quantities["t_cold_in"]
        heat_added = heat_added + report.heat_added
        for finding in report.findings:
            if finding.severity == "limit":
                limits += finding.active
            elif finding.severity == "warning":
                warnings += finding.active
            else:
                _invalidate(valid, messages, finding.active, finding.messages, finding.key)
    extrapolated = _range_checks(net, temperature, flow, valid, messages)
    outputs = {"heat_recovered_kw": totals["exchanger"], "heater_duty_kw": totals["heater"],
               "cooler_duty_kw": totals["cooler"], **inlets, "limit_violations": limits,
               "warnings": warnings + extrapolated,
               "relative_imbalance": enthalpy_balance(net, temperature, flow, heat_added)["relative_imbalance"]}
    return outputs, valid, messages


def _invalidate(valid, messages, active, texts, key):
    for i in np.flatnonzero(active & valid):
        messages[i] = f"{key}: {texts[i]}"
    valid &= ~active


def _range_checks(net, temperature, flow, valid, messages):
    warned = np.zeros(temperature.shape[0])
    for seg, member, outside in out_of_range(net, temperature, flow):
        if member.extrapolate:
            warned += outside
        else:
            texts = np.full(len(outside), f"segment {seg.label} outside fluid '{member.name}' data range", object)
            _invalidate(valid, messages, outside, texts, member.range_key)
    return warned
