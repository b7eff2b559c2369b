"""Large blocks and runs of blocks (:mod:`hxtrain.solver.simulation.block_newton`) over a batch in
which a unit's own values differ from scenario to scenario: a UA, or a blend's fractions that
follow a varied flow or a varied split. Such values lie along the batch axis, so the Jacobian's
perturbed copies must not be stacked on it (they were, and these batches stopped with a numpy
broadcasting error)."""

from __future__ import annotations

import numpy as np
import pytest

from hxtrain.network import case_from_mapping
from hxtrain.solver.simulation.evaluation import evaluate
from hxtrain.solver.simulation.size_ladder import ladder_case

VARIED = [
    ("side_by_side", "exchangers.T0E0.ua", [60.0, 90.0, 130.0]),
    ("side_by_side", "streams.T0heavy.flow", [50.0, 70.0, 90.0]),  # the blend's fractions follow
    ("side_by_side", "splitters.T1split.branches.a.fraction", [0.3, 0.6, 0.8]),
    ("side_by_side", "streams.T2light.supply_temperature", [35.0, 45.0, 60.0]),
    ("countercurrent", "exchangers.E3.ua", [20.0, 40.0, 80.0]),  # one block of many tears
]


@pytest.mark.parametrize("shape, path, values", VARIED, ids=[v[1] for v in VARIED])
def test_a_value_varied_over_the_batch_in_a_large_block_gives_each_scenario_its_own_answer(shape, path, values):
    """Each scenario of the batch against the same value evaluated alone: every one a success,
    its block converged by Newton on all its segments, the temperatures within twice the
    tolerance (each is within the tolerance of the solution)."""
    case = case_from_mapping(ladder_case(shape, 100, "varying"))
    together = evaluate(case, {path: np.array(values)})
    assert together.success.all(), [together.reason(k) for k in range(together.batch)]
    assert any(o.tears is not None and o.tears.held is not None for o in together.solution.blocks)
    alone = np.concatenate([evaluate(case, {path: np.array([v])}).temperature for v in values])
    assert np.isfinite(alone).all()
    assert np.max(np.abs(together.temperature - alone)) <= 2 * case.settings.tolerance
    assert np.ptp(together.temperature, axis=0).max() > 1.0  # the varied value moved the answer
