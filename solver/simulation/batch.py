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
import sys
import time
import weakref
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from hxtrain.network.scenarios import scenario_count

from hxtrain.solver.simulation import part_transfer
from hxtrain.solver.simulation.evaluation import NOT_CONVERGED, NOT_VALID, STATUS_NAMES, SUCCESS, as_case, evaluate
from hxtrain.solver.simulation.results import scenario_summary, violated_limits


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
    """How many processes solved the batch at once: 1 where it stayed in this one (the probe
    found a split would not pay), else the parts solved side by side (on a cluster, its tasks)."""
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
"""How fast a process solves while the others solve too, against alone: measured 0.7-1.0 on a
2-core virtual machine (two processes solving 10,000 crude-demo scenarios at once each took
1.0-1.45 times as long as one alone: the cores share the host's memory bandwidth)."""
PROBE = 2000
"""Scenarios solved first, in this process, to measure what one costs before splitting the rest."""
PROBE_GROWTH = 2
"""The second probe's size in first probes (see :func:`_probe`)."""
SECOND_PROBE_WORTH = 3.0
"""A second probe is made only where the first says a split could save more than this many times
what the processes cost: it costs a batch's fixed cost itself, and the first probe's cost per
scenario, which includes the fixed cost, overstates the saving (about twice for the crude demo's
fixed-property form in a batch of 20,000)."""
CLEARLY_WORTH = 50e-6
"""Seconds: a first probe dearer than this a scenario, its fixed cost included, is taken at its
word (no second probe). The crude demo's fixed cost is ~0.09 s as shipped (first probe ~90 µs a
scenario, 37 µs without the fixed cost) and ~0.02 s in the fixed-property form (~15 µs and
6.5 µs); a second probe costs that fixed cost again, which as shipped ate the gain of a split
of 20,000 scenarios."""


@dataclass
class _Measured:
    """What the probes of a case's first split-allowed batch found, kept for its later batches
    (:func:`_remembered`): a study sends many batches of one case, and each probe is a batch with
    its own fixed cost, which is lost wherever the batch then stays in one process."""

    each: float
    """Seconds a scenario costs: without the batch's fixed cost (``exact``, two probes), or the
    first probe's cost with it (an upper bound: one probe was enough to refuse a split)."""
    exact: bool
    segments: int
    float_columns: tuple
    """What a worker's shared block is sized after (see :mod:`.part_transfer`)."""
    fixed: float = 0.0
    """Seconds a batch of the case costs besides its scenarios (order, tears, each unit's calls),
    from the two probes (0 after one)."""
    shared_speed: float = SHARED_SPEED
    """How fast this case's processes solved while the others did too, against alone: as
    :data:`SHARED_SPEED` until a split of its batches is timed (:func:`_timed_split`), then as
    measured (a batch that is mostly memory traffic, such as the fixed-property form's, slows
    more when two share the memory than one that is mostly arithmetic, as shipped)."""


_MEASURED: dict = {}
"""(id of a case, its varied key paths, metrics or not) -> :class:`_Measured`, dropped when the
case is. Only a split is decided from it: the calculation order is found again (a study may
change the case between batches)."""


def _remembered(case, values, metrics) -> _Measured | None:
    return _MEASURED.get((id(case), tuple(sorted(values)), bool(metrics)))


def _remember(case, values, metrics, each, exact, probe, fixed=0.0) -> _Measured:
    key = (id(case), tuple(sorted(values)), bool(metrics))
    if key not in _MEASURED:
        weakref.finalize(case, _MEASURED.pop, key, None)
    _MEASURED[key] = _Measured(each, exact, probe.temperature.shape[1], part_transfer.float_columns(probe.table),
                               fixed)
    return _MEASURED[key]


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

    ``workers`` > 1 may split the scenarios over that many processes: the first few thousand
    are solved here, timed (:func:`_probe`); only where the time other processes would save
    exceeds what they cost (:func:`_pays`) is the rest cut into contiguous parts (at least
    :data:`PROCESS_MINIMUM` scenarios a part), this process solving one of them while worker
    processes solve the others and return their floats through shared memory. A later batch of
    the same case object with the same varied keys is decided from what the first one's probes
    measured (:func:`_remembered`), without probing again: split whole, or solved here. Inside
    :func:`batches_on` the parts go to that cluster instead. Every scenario converges on its own
    either way; ``iterations`` is the largest over the parts. ``metrics`` adds a column per named
    result of every unit (``TAG.duty``, ``TAG.cold_out``, ...: what a study may target), NaN where
    a scenario is not a success."""
    case = as_case(case)
    scenarios = scenario_count(values)
    cluster = _CLUSTER.get()
    if cluster is not None:
        parts = max(1, min(int(cluster.parts), scenarios // max(1, int(cluster.minimum))))
        if parts > 1:
            return _joined(cluster.map(_solve_batch, [case] * parts, _pieces(values, scenarios, parts),
                                       [tolerance] * parts, [max_iterations] * parts, [metrics] * parts),
                           processes=parts)
        return _solve_batch(case, values, tolerance, max_iterations, metrics)
    if int(workers) <= 1 or scenarios < (1 + PROBE_GROWTH) * PROBE + 2 * PROCESS_MINIMUM:
        return _solve_batch(case, values, tolerance, max_iterations, metrics)
    known, parts = _remembered(case, values, metrics), _parts(workers, scenarios)
    if known is not None and (known.exact or not _pays(known.each / SECOND_PROBE_WORTH, scenarios, parts,
                                                       known.shared_speed)):
        if not (known.exact and _pays(known.each, scenarios, parts, known.shared_speed)):
            return _solve_batch(case, values, tolerance, max_iterations, metrics)
        return _joined(_timed_split(case, _pieces(values, scenarios, parts), tolerance, max_iterations, metrics, None,
                                    known), processes=parts)
    first, each, bound = _probe(case, values, tolerance, max_iterations, metrics, lambda cost: _pays(
        cost / SECOND_PROBE_WORTH, scenarios - PROBE, _parts(workers, scenarios - PROBE)))
    # the first probe's cost beyond its scenarios' is the fixed cost of a batch
    measured = _remember(case, values, metrics, bound if each is None else each, each is not None, first[0],
                         0.0 if each is None else max(0.0, (bound - each) * PROBE))
    probed = sum(len(r.table) for r in first)
    rest = _take(values, slice(probed, scenarios))
    parts = _parts(workers, scenarios - probed)
    if parts == 1 or each is None or not _pays(each, scenarios - probed, parts):
        return _joined([*first, _solve_batch(case, rest, tolerance, max_iterations, metrics, first[0].plan)])
    return _joined([*first, *_timed_split(case, _pieces(rest, scenarios - probed, parts), tolerance, max_iterations,
                                          metrics, first[0].plan, measured)], processes=parts)


def _parts(workers, scenarios) -> int:
    """Parts to cut ``scenarios`` into: one a process allowed, none smaller than
    :data:`PROCESS_MINIMUM`."""
    return max(1, min(int(workers), scenarios // PROCESS_MINIMUM))


def _pays(each, scenarios, parts, shared_speed=SHARED_SPEED) -> bool:
    """Whether ``parts`` processes solve ``scenarios`` scenarios of ``each`` seconds sooner than
    this process alone: the time saved, each x scenarios x (1 - 1/(parts x ``shared_speed``)),
    beyond :data:`PROCESS_COST` for every other process."""
    saved = each * scenarios * (1.0 - 1.0 / (parts * shared_speed))
    return parts > 1 and saved > PROCESS_COST * (parts - 1)


def _timed_split(case, jobs, tolerance, max_iterations, metrics, plan, measured: _Measured):
    """:func:`_split`, timed: the speed its processes solved at while sharing the machine,
    ``measured.each`` x its scenarios against its wall time less the batch's fixed cost (which
    every part pays at once) and :data:`PROCESS_COST`, becomes the case's ``shared_speed`` for
    its later batches (a split that did not pay is not made again)."""
    start = time.perf_counter()
    results = _split(case, jobs, tolerance, max_iterations, metrics, plan, measured)
    seconds, parts = time.perf_counter() - start, len(jobs)
    solving = seconds - measured.fixed - PROCESS_COST * (parts - 1)
    if measured.exact and solving > 0.0:
        alone = measured.each * sum(scenario_count(job) for job in jobs)
        measured.shared_speed = min(1.0, alone / (parts * solving))
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


def _probe(case, values, tolerance, max_iterations, metrics, pays):
    """(the probes' results, the seconds one more scenario costs, or None where a split would
    not pay well even at the first probe's cost per scenario; and that first probe's cost per
    scenario, its fixed cost included). Every batch has a fixed cost
    (order, tears, each unit's per-call overhead in every sweep: ~0.02 s for the crude demo's
    fixed-property form, ~0.09 s as shipped) besides its cost per scenario, and a split saves only
    the latter: timed alone, 2,000 scenarios of the fixed form cost 15 µs each against 6.5 µs
    each in a batch of 20,000. So the first :data:`PROBE` scenarios are timed, and where even with
    the fixed cost a split at that cost would not pay well (``pays``), or they cost more than
    :data:`CLEARLY_WORTH` each, that is the answer; else the next :data:`PROBE_GROWTH` times as
    many are timed too: the difference of the two timings, per extra scenario, is the cost of
    one (the fixed cost cancels). Both probes are timed in this process's CPU time, so that
    another program's load on the machine does not pass for a cost of the case, and the first
    without its finding of the calculation order (which the second reuses; counted in, it made
    the difference too small by its cost)."""
    start = time.process_time()
    first = _solve_batch(case, _take(values, slice(0, PROBE)), tolerance, max_iterations, metrics)
    small = time.process_time() - start - first.planning_seconds
    if small / PROBE >= CLEARLY_WORTH:
        return [first], small / PROBE, small / PROBE
    if not pays(small / PROBE):
        return [first], None, small / PROBE
    start = time.process_time()
    second = _solve_batch(case, _take(values, slice(PROBE, (1 + PROBE_GROWTH) * PROBE)), tolerance, max_iterations,
                          metrics, first.plan)
    large = time.process_time() - start
    return [first, second], max(0.0, large - small) / ((PROBE_GROWTH - 1) * PROBE), small / PROBE


def _take(values, where):
    return {path: np.atleast_1d(np.asarray(v, dtype=float))[where] for path, v in values.items()}


def _pieces(values, scenarios, parts):
    return [_take(values, piece) for piece in np.array_split(np.arange(scenarios), parts)]


def _joined(results, processes=1) -> BatchResult:
    results = list(results)
    return BatchResult(pd.concat([r.table for r in results], ignore_index=True), max(r.iterations for r in results),
                       np.concatenate([r.temperature for r in results]), processes, results[0].plan)


def _process_context():
    """Fork on Linux (the workers inherit the loaded modules: no start-up import); spawn
    elsewhere, where forking a process that has used the system's maths libraries is unsafe."""
    return multiprocessing.get_context("fork" if sys.platform.startswith("linux") else "spawn")


def _solve_batch(case, values, tolerance, max_iterations, metrics=False, plan=None) -> BatchResult:
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
    headline numbers (NaN where the scenario is not a success), and last ``violated_limits``,
    the limits the scenario violates (:func:`.results.violated_limits`)."""
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
    return table
