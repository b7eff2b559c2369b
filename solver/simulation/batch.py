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

import numpy as np
import pandas as pd

from hxtrain.network.scenarios import scenario_count

from hxtrain.solver.simulation.evaluation import NOT_CONVERGED, NOT_VALID, STATUS_NAMES, SUCCESS, as_case, evaluate
from hxtrain.solver.simulation.results import scenario_summary


@dataclass
class BatchResult:
    table: pd.DataFrame
    """One row per scenario (see :func:`scenario_table`): the varied values, ``success``,
    ``status``, ``converged``, ``valid``, ``message`` and the key outputs (the totals, heater
    inlet temperatures, limits violated, warnings, relative energy imbalance); NaN outputs
    where a scenario is not a success."""
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
    see :mod:`hxtrain.network.scenarios` for the paths that may vary) of ``case`` (a file, a
    mapping or a Case): the evaluation's view as one row per scenario.

    ``workers`` > 1 splits the scenarios into that many contiguous parts, each solved as a batch
    of its own in a separate process (at least :data:`PROCESS_MINIMUM` scenarios a part; fewer
    scenarios use fewer processes). Every scenario converges on its own either way; ``iterations``
    is then the largest over the parts."""
    case = as_case(case)
    scenarios = scenario_count(values)
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
    evaluation = evaluate(case, values, tolerance=tolerance, max_iterations=max_iterations)
    table = pd.DataFrame({path: np.broadcast_to(np.asarray(v, dtype=float).reshape(-1), (evaluation.batch,))
                          for path, v in values.items()})
    table = pd.concat([table, scenario_table(evaluation)], axis=1)
    return BatchResult(table, evaluation.iterations, evaluation.temperature)


def scenario_table(evaluation) -> pd.DataFrame:
    """One row per scenario of an evaluation, the same columns for every batch: ``success``,
    ``status`` (0 success, 1 not converged, 2 not valid, 3 a check failed: see
    :mod:`.evaluation`), ``status_text``, ``converged``, ``valid``, ``message``, then the
    headline numbers (NaN where the scenario is not a success)."""
    status = evaluation.status
    table = pd.DataFrame({"success": status == SUCCESS, "status": status,
                          "status_text": [STATUS_NAMES[int(s)] for s in status],
                          "converged": evaluation.solution.converged & (status != NOT_CONVERGED),
                          "valid": status != NOT_VALID,
                          "message": [evaluation.reason(k) for k in range(evaluation.batch)]})
    for name, column in scenario_summary(evaluation).items():
        table[name] = column
    table["relative_imbalance"] = evaluation.balance["relative_imbalance"]
    return table
