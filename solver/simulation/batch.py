"""Batch evaluation: many scenarios of one topology in one vectorized pass.

The calculation order and the tear set are found once; every unit model works on arrays with
the scenarios on the leading axis; tear convergence is tracked per scenario. A scenario that
does not converge, or that asks for the impossible (a heater target below its inlet, a fluid out
of its data range), gets NaN results and says why in ``message``: no number of it is reported as
an answer.
"""

from __future__ import annotations

import contextvars
import multiprocessing
import hashlib
import os
import sys
import time
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from hxtrain.network.scenarios import scenario_count

from hxtrain.solver.simulation import part_transfer
from hxtrain.solver.simulation.evaluation import NOT_CONVERGED, NOT_VALID, STATUS_NAMES, SUCCESS, as_case, evaluate
from hxtrain.solver.simulation.results import named_findings, scenario_summary, violated_limits


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
    processes: int = 1
    """How many processes solved the batch at once: 1 where it stayed in this one (a split
    would not pay, or the case had not been timed yet), else the parts solved side by side (on
    a cluster, its tasks)."""
    plan: list | None = field(default=None, repr=False)
    """The calculation order and tear sets (:mod:`.sequencing`), found once and reused by the
    batch's other parts: scenarios vary values, never the network's structure."""
    planning_seconds: float = 0.0
    """CPU seconds this part spent finding the calculation order (0 where it was given)."""


PROCESS_MINIMUM = 4000
"""Fewest scenarios per process worth starting one for."""
PROCESS_COST = 0.05
"""Seconds a worker process costs beyond its share of the solving: its start (a fork, 20-23 ms
measured on a 2-core virtual machine) and the return of its part (through shared memory,
:mod:`.part_transfer`: ~10 ms per 50,000 crude-demo scenarios), with a margin of about 1.5.
A batch is split only where the time the other processes save is larger (:func:`_pays`)."""
SHARED_SPEED = 0.75
"""How fast a process is taken to solve while the others solve too, against alone, until a split
of the case is timed (:func:`_timed_split`): measured 0.58-0.93 on a 2-core virtual machine (two
processes each solving 10,000 or 50,000 crude-demo scenarios at once, against one alone: the
cores share the host's memory bandwidth, and the fixed-property form, mostly memory traffic,
slows most)."""
FIXED_COST_SCENARIOS = 3300.0
"""A batch's fixed cost (order, tears, each unit's per-call cost in every pass), counted in
scenarios: a batch of n scenarios costs about (n + FIXED_COST_SCENARIOS) times one scenario.
Measured on the crude demo (batches of 1 to 20,000, CPU time, best of 5): 0.055 s and 15.5 µs
a scenario as shipped (3,550), 0.011 s and 3.4 µs in the fixed-property form (3,240). Both
figures are the cost of the same ~100 numpy operations a pass, called on one scenario or on
each, so their ratio holds across cases and machines more closely than either. A split saves
only the scenarios' part; every process pays the fixed cost."""
PIECE_SCENARIOS = 40_000
"""Most scenarios solved at once: a larger batch is solved in pieces of at most this many, one
after the other, in each process. Its arrays then stay within the caches, and its memory stays
bounded (about 5 kB a scenario on the crude demo: 550 MB at 100,000 at once). Measured on the
crude demo, idle 2-core machine (CPU time, best of 3, alternated), pieces of 100,000 (none),
50,000, 40,000, 25,000 and 12,500: 100,000 scenarios with fixed properties 0.53, 0.48, 0.45,
0.45 and 0.49 s; as shipped 1.85, 1.71, 1.73, 1.81 and 1.98 s; 200,000 with fixed properties
1.04 s in one piece against 0.82 s in pieces of 40,000. Each piece costs a batch's fixed cost
(:data:`FIXED_COST_SCENARIOS`), which smaller pieces pay too often."""
LEARNING_PART = 50_000
"""A case's first split-allowed batch of at least :data:`LEARNING_BATCHES` times this many
scenarios solves this many here first, timed, and decides the rest by them; a smaller first
batch is solved whole here and timed (:func:`_timed_here`): it is not split, since nothing says
yet that a split would pay, and a timing made apart from it would cost a batch's fixed cost
again (about a sixth of a batch of 20,000)."""
LEARNING_BATCHES = 4
"""See :data:`LEARNING_PART`: the timed part's own fixed cost is then at most 1.7 % of the
batch (3,300 scenarios' worth in 200,000)."""


@dataclass
class _Measured:
    """What a case's batches solved in this process measured, kept for its later batches
    (:func:`_remembered`): a study sends many batches of one case."""

    each: float
    """Seconds a scenario costs in this process alone: the least of the case's batches solved
    here, each timed in CPU time less its finding of the order, over :func:`_in_scenarios` (a
    process's first batches also pay for its heap's growth)."""
    segments: int
    float_columns: tuple
    """What a worker's shared block is sized after (see :mod:`.part_transfer`)."""
    plan: list | None = None
    """The calculation order found for the case's batches (the same file or content, the same
    varied keys): a later batch and its parts reuse it."""
    shared_speed: float = SHARED_SPEED
    """How fast this case's processes solved while the others did too, against alone: as
    :data:`SHARED_SPEED` until a split of its batches is timed (:func:`_timed_split`), then as
    measured (a batch that is mostly memory traffic, such as the fixed-property form's, slows
    more when two share the memory than one that is mostly arithmetic, as shipped)."""


_MEASURED: dict = {}
"""(the case's identity (:func:`_identity`), its varied key paths, metrics or not) ->
:class:`_Measured`, the latest :data:`REMEMBERED` kept."""
REMEMBERED = 256


def _identity(given) -> tuple:
    """What a case's timings are kept under: a file by its path, modification time and size; a
    mapping or a Case by its text (its ``repr``: a case changed in place, or another fluid
    object, is another case, timed afresh)."""
    if isinstance(given, (str, os.PathLike)):
        stat = os.stat(given)
        return "file", os.path.realpath(given), stat.st_mtime_ns, stat.st_size
    return "case", hashlib.sha1(repr(given).encode()).hexdigest()


def _remembered(who, values, metrics) -> _Measured | None:
    return _MEASURED.get((who, tuple(sorted(values)), bool(metrics)))


def _learn(who, values, metrics, each, result) -> _Measured:
    key = (who, tuple(sorted(values)), bool(metrics))
    known = _MEASURED.pop(key, None) or _Measured(each, 0, ())
    known.each = min(known.each, each)
    known.segments, known.float_columns = result.temperature.shape[1], part_transfer.float_columns(result.table)
    known.plan = result.plan
    _MEASURED[key] = known  # the latest last
    while len(_MEASURED) > REMEMBERED:
        _MEASURED.pop(next(iter(_MEASURED)))
    return known


_CLUSTER = contextvars.ContextVar("hxtrain_batch_cluster", default=None)


@contextmanager
def batches_on(cluster):
    """Within this block every :func:`simulate_batch` (sweeps and Monte Carlo included) splits
    its scenarios over ``cluster`` — an object with ``parts`` (how many pieces to cut a batch
    into), ``minimum`` (fewest scenarios a piece) and ``map(function, *argument lists)``
    returning the results in order (see :mod:`hxtrain.solver.studies.distributed`)."""
    token = _CLUSTER.set(cluster)
    try:
        yield cluster
    finally:
        _CLUSTER.reset(token)


def simulate_batch(case, values: dict, *, tolerance=None, max_iterations=None, workers=1,
                   metrics=False) -> BatchResult:
    """Simulate the scenarios given by ``values`` (key path -> array, one value per scenario;
    see :mod:`hxtrain.network.scenarios` for the paths that may vary) of ``case`` (a file, a
    mapping or a Case): the evaluation's view as one row per scenario.

    ``workers`` > 1 may split the scenarios over that many processes, from what the case's
    earlier batches measured (:func:`_remembered`: the same case, by its file or its content
    (:func:`_identity`), the same varied keys and ``metrics``; a study sends many batches of one
    case): only where the time other processes would save exceeds what they cost
    (:func:`_pays`) is the batch cut into contiguous parts (at least :data:`PROCESS_MINIMUM`
    scenarios a part), this process solving one of them while worker processes solve the
    others and return their floats through shared memory. A case's first such batch is solved
    here and timed, so a second process never makes it slower; one of at least
    :data:`LEARNING_BATCHES` x :data:`LEARNING_PART` scenarios is timed on its first part and
    the rest decided by that. The first split times how fast the processes solved together
    (:func:`_timed_split`): on a machine where they could not, that one split is slower than one
    process, and the case is split again only where its batches are large enough that the
    measured speed says it pays. Inside :func:`batches_on` the parts go to that cluster
    instead. Every scenario converges on its own either way; ``iterations`` is the largest over
    the parts. ``metrics`` adds a column per named result of every unit (``TAG.duty``,
    ``TAG.cold_out``, ...: what a study may target), NaN where a scenario is not a success."""
    given, case = case, as_case(case)
    scenarios = scenario_count(values)
    cluster = _CLUSTER.get()
    if cluster is not None:
        parts = max(1, min(int(cluster.parts), scenarios // max(1, int(cluster.minimum))))
        if parts > 1:
            return _joined(cluster.map(_solve_batch, [case] * parts, _pieces(values, scenarios, parts),
                                       [tolerance] * parts, [max_iterations] * parts, [metrics] * parts),
                           processes=parts)
        return _solve_batch(case, values, tolerance, max_iterations, metrics)
    if int(workers) <= 1 or scenarios < 2 * PROCESS_MINIMUM:
        return _solve_batch(case, values, tolerance, max_iterations, metrics)
    job = (case, _identity(given), tolerance, max_iterations, metrics)
    if _remembered(job[1], values, metrics) is None and scenarios >= LEARNING_BATCHES * LEARNING_PART:
        first = _timed_here(*job, _take(values, slice(0, LEARNING_PART)))
        rest, processes = _decided(*job, _take(values, slice(LEARNING_PART, scenarios)), workers, first.plan)
        return _joined([first, *rest], processes)
    return _joined(*_decided(*job, values, workers))


def _decided(case, who, tolerance, max_iterations, metrics, values, workers, plan=None):
    """(the results of ``values``' parts, how many processes solved them): split where what the
    case measured says it pays, else solved here and timed."""
    scenarios, known = scenario_count(values), _remembered(who, values, metrics)
    parts, plan = _parts(workers, scenarios), plan or (known and known.plan)
    if known is None or not _pays(known.each, scenarios, parts, known.shared_speed):
        return [_timed_here(case, who, tolerance, max_iterations, metrics, values, plan)], 1
    return _timed_split(case, _pieces(values, scenarios, parts), tolerance, max_iterations, metrics, plan,
                        known), parts


def _parts(workers, scenarios) -> int:
    """Parts to cut ``scenarios`` into: one a process allowed, none smaller than
    :data:`PROCESS_MINIMUM`."""
    return max(1, min(int(workers), scenarios // PROCESS_MINIMUM))


def _pays(each, scenarios, parts, shared_speed=SHARED_SPEED) -> bool:
    """Whether ``parts`` processes solve ``scenarios`` scenarios of ``each`` seconds sooner than
    this process alone: alone the batch costs :func:`_in_scenarios` (its scenarios and the fixed
    cost of each of its pieces) x each; split, every process pays for its share and its own
    pieces at ``shared_speed``, and :data:`PROCESS_COST` for every other process."""
    alone = _in_scenarios(scenarios) * each
    split = _in_scenarios(-(-scenarios // parts)) * each / shared_speed
    return parts > 1 and alone - split > PROCESS_COST * (parts - 1)


def _timed_here(case, who, tolerance, max_iterations, metrics, values, plan=None) -> BatchResult:
    """``values`` solved in this process, timed in its CPU time (another program's load on the
    machine is not a cost of the case) less the time spent finding the calculation order (once a
    batch, and reused by its parts): what one scenario costs, learnt for the case's later
    batches (:func:`_learn`)."""
    start = time.process_time()
    result = _solve_batch(case, values, tolerance, max_iterations, metrics, plan)
    seconds = time.process_time() - start - result.planning_seconds
    _learn(who, values, metrics, max(0.0, seconds) / _in_scenarios(scenario_count(values)), result)
    return result


def _timed_split(case, jobs, tolerance, max_iterations, metrics, plan, measured: _Measured):
    """:func:`_split`, timed: the speed its processes solved at while sharing the machine, what
    its largest part would cost alone (``measured.each`` x :func:`_in_scenarios`) against the
    wall time less :data:`PROCESS_COST` for every other process, becomes the
    case's ``shared_speed`` for its later batches (a split that did not pay is not made again
    at that size)."""
    start = time.perf_counter()
    results = _split(case, jobs, tolerance, max_iterations, metrics, plan, measured)
    seconds, parts = time.perf_counter() - start, len(jobs)
    solving = seconds - PROCESS_COST * (parts - 1)
    alone = measured.each * _in_scenarios(max(scenario_count(job) for job in jobs))
    measured.shared_speed = min(1.0, alone / solving) if solving > 0.0 else 1.0
    return results


def _split(case, jobs, tolerance, max_iterations, metrics, plan, measured: _Measured):
    """The results of ``jobs`` (value sets), the first solved in this process, the others by
    worker processes that return their floats through shared memory sized after ``measured``;
    ``plan``: the calculation order, or None to find it in each process."""
    sizes = [scenario_count(job) for job in jobs[1:]]
    with part_transfer.reserve(sizes, measured.segments, measured.float_columns) as (blocks, shared):
        others = len(jobs) - 1
        with ProcessPoolExecutor(others, mp_context=_process_context()) as pool:
            sent = pool.map(_solve_part, [case] * others, jobs[1:], [tolerance] * others, [max_iterations] * others,
                            [metrics] * others, [plan] * others, shared)
            mine = _solve_batch(case, jobs[0], tolerance, max_iterations, metrics, plan)  # this process takes a part
            return [mine, *(part_transfer.collect(block, part, piece, BatchResult)
                            for block, part, piece in zip(blocks, shared, sent))]


def _solve_part(case, values, tolerance, max_iterations, metrics, plan, shared):
    """A worker process's part: solved, its floats written to the shared block."""
    return part_transfer.solve_into(shared, _solve_batch(case, values, tolerance, max_iterations, metrics, plan))


def _take(values, where):
    return {path: np.atleast_1d(np.asarray(v, dtype=float))[where] for path, v in values.items()}


def _pieces(values, scenarios, parts):
    return [_take(values, piece) for piece in np.array_split(np.arange(scenarios), parts)]


def _joined(results, processes=1) -> BatchResult:
    results = list(results)
    if len(results) == 1:
        return results[0]
    return BatchResult(pd.concat([r.table for r in results], ignore_index=True), max(r.iterations for r in results),
                       np.concatenate([r.temperature for r in results]), processes, results[0].plan)


def _process_context():
    """Fork on Linux (the workers inherit the loaded modules: no start-up import); spawn
    elsewhere, where forking a process that has used the system's maths libraries is unsafe."""
    return multiprocessing.get_context("fork" if sys.platform.startswith("linux") else "spawn")


def _solve_batch(case, values, tolerance, max_iterations, metrics=False, plan=None) -> BatchResult:
    """``values`` solved in this process, in pieces of at most :data:`PIECE_SCENARIOS` scenarios
    one after the other (:func:`_piece_count`), all with the calculation order of the first."""
    scenarios = scenario_count(values)
    if scenarios <= PIECE_SCENARIOS:
        return _solve_piece(case, values, tolerance, max_iterations, metrics, plan)
    results = []
    for piece in _pieces(values, scenarios, _piece_count(scenarios)):
        results.append(_solve_piece(case, piece, tolerance, max_iterations, metrics, plan))
        plan = results[0].plan
    joined = _joined(results)
    joined.planning_seconds = results[0].planning_seconds
    return joined


def _in_scenarios(scenarios) -> float:
    """What a batch of ``scenarios`` costs in this process, counted in scenarios: they and a
    batch's fixed cost for each of its pieces."""
    return scenarios + _piece_count(scenarios) * FIXED_COST_SCENARIOS


def _piece_count(scenarios) -> int:
    """Pieces a batch of ``scenarios`` is solved in, in this process: one per
    :data:`PIECE_SCENARIOS` or part of it."""
    return max(1, -(-int(scenarios) // PIECE_SCENARIOS))


def _solve_piece(case, values, tolerance, max_iterations, metrics=False, plan=None) -> BatchResult:
    evaluation = evaluate(case, values, tolerance=tolerance, max_iterations=max_iterations, plan=plan)
    table = pd.DataFrame({path: np.broadcast_to(np.asarray(v, dtype=float).reshape(-1), (evaluation.batch,))
                          for path, v in values.items()})
    parts = [table, scenario_table(evaluation)]
    if metrics:
        ok = evaluation.success
        parts.append(pd.DataFrame({f"{name}.{m}": np.where(ok, np.broadcast_to(v, (evaluation.batch,)), np.nan)
                                   for name, report in evaluation.reports.items() for m, v in report.metrics.items()}))
    table = pd.concat(parts, axis=1)
    return BatchResult(table, evaluation.iterations, evaluation.temperature,
                       plan=[outcome.block for outcome in evaluation.solution.blocks],
                       planning_seconds=evaluation.planning_seconds)


def scenario_table(evaluation) -> pd.DataFrame:
    """One row per scenario of an evaluation, the same columns for every batch: ``success``,
    ``status`` (0 success, 1 not converged, 2 not valid, 3 a check failed: see
    :mod:`.evaluation`), ``status_text``, ``converged``, ``valid``, ``message``, then the
    headline numbers (NaN where the scenario is not a success), then ``violated_limits``, the
    limits the scenario violates (:func:`.results.violated_limits`), and last ``warning_names``,
    its warnings named alike (the ``warnings`` column counts them)."""
    status = evaluation.status
    names = np.array([STATUS_NAMES[code] for code in sorted(STATUS_NAMES)], dtype=object)
    message = np.full(evaluation.batch, "", dtype=object)
    for k in np.flatnonzero(status != SUCCESS):  # only the scenarios that have a reason are worded
        message[k] = evaluation.reason(k)
    table = pd.DataFrame({"success": status == SUCCESS, "status": status,
                          "status_text": names[np.searchsorted(sorted(STATUS_NAMES), status)],
                          # a scenario that is not valid was not solved as asked: converged says nothing
                          "converged": pd.array(np.where(status == NOT_VALID, None,
                                                         evaluation.solution.converged & (status != NOT_CONVERGED)),
                                                dtype="boolean"),
                          "valid": status != NOT_VALID,
                          "message": message})
    for name, column in scenario_summary(evaluation).items():
        table[name] = column
    table["relative_imbalance"] = evaluation.balance["relative_imbalance"]
    table["violated_limits"] = violated_limits(evaluation)
    table["warning_names"] = named_findings(evaluation, "warning")
    return table
