"""The batch split: a worker's part comes back through shared memory (``part_transfer``); the
probe times a scenario without the batch's fixed cost; a batch is split only where the time
saved exceeds what the processes cost (``batch._pays``).

The independent path is the batch solved in one process: a split batch must give the same
table (every column, in order, the same dtypes) and temperatures.
"""

import os

import numpy as np
import pandas as pd
import pytest

from hxtrain.solver import demo_case_path
from hxtrain.solver.simulation import batch as batch_module
from hxtrain.solver.simulation import part_transfer
from hxtrain.solver.simulation.batch import BatchResult, simulate_batch


def _shared_blocks():
    return set(os.listdir("/dev/shm")) if os.path.isdir("/dev/shm") else set()


def test_a_part_written_and_collected_is_the_part(monkeypatch):
    """Round trip without a worker: floats through the block, the rest as sent; columns, order
    and dtypes (bool, int, text, float) as they were."""
    result = batch_module._solve_batch(demo_case_path("crude_preheat"),
                                       {"streams.crude.flow": np.linspace(70.0, 110.0, 7)}, None, None, metrics=True)
    columns = part_transfer.float_columns(result.table)
    assert "fired_heater_duty_kw" in columns and "success" not in columns and "message" not in columns
    with part_transfer.reserve([7], result.temperature.shape[1], columns) as (blocks, parts):
        sent = part_transfer.solve_into(parts[0], result)
        assert "fired_heater_duty_kw" not in sent.table.columns  # it went through the block
        back = part_transfer.collect(blocks[0], parts[0], sent, BatchResult)
    pd.testing.assert_frame_equal(back.table, result.table)
    np.testing.assert_array_equal(back.temperature, result.temperature)
    assert (back.iterations, back.processes) == (result.iterations, result.processes)
    assert [b.tears for b in back.plan] == [b.tears for b in result.plan]


def test_a_part_of_another_shape_comes_back_whole():
    """A block sized for other columns or rows is not used: the whole result goes through the
    pipe, so nothing is read from the wrong place."""
    result = batch_module._solve_batch(demo_case_path("crude_preheat"),
                                       {"streams.crude.flow": np.linspace(70.0, 110.0, 5)}, None, None)
    segments = result.temperature.shape[1]
    for rows, columns in ((5, ("not_a_column",)), (6, part_transfer.float_columns(result.table))):
        with part_transfer.reserve([rows], segments, columns) as (blocks, parts):
            sent = part_transfer.solve_into(parts[0], result)
            assert sent is result
            assert part_transfer.collect(blocks[0], parts[0], sent, BatchResult) is result


def test_the_blocks_are_freed_when_a_part_fails():
    before = _shared_blocks()
    with pytest.raises(RuntimeError):
        with part_transfer.reserve([10, 20], 3, ("a",)):
            assert len(_shared_blocks() - before) == 2 or not os.path.isdir("/dev/shm")
            raise RuntimeError("a worker failed")
    assert _shared_blocks() == before


def test_a_split_batch_with_metrics_equals_one_batch_and_leaves_no_block(monkeypatch):
    """Every named result of every unit (``metrics``: one float column each) comes back from the
    worker through its block: the table equals the one-process table exactly."""
    monkeypatch.setattr(batch_module, "PROBE", 4)
    monkeypatch.setattr(batch_module, "PROCESS_MINIMUM", 4)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 30)}
    path = demo_case_path("crude_preheat")
    before = _shared_blocks()
    whole = simulate_batch(path, values, metrics=True)
    split = simulate_batch(path, values, metrics=True, workers=2)
    assert split.processes == 2 and _shared_blocks() == before
    assert list(split.table.columns) == list(whole.table.columns)
    assert (split.table.dtypes == whole.table.dtypes).all()
    pd.testing.assert_frame_equal(split.table, whole.table, check_exact=False, rtol=1e-11, atol=1e-9)


@pytest.mark.parametrize("each, scenarios, parts, splits", [
    (6.5e-6, 18_000, 2, False),   # the fixed-property crude demo at 20,000: would save ~0.04 s, costs 0.05 s
    (6.5e-6, 98_000, 2, True),    # the same at 100,000: saves ~0.21 s
    (55e-6, 12_000, 2, True),     # as shipped: saves ~0.22 s
    (1e-6, 1_000_000, 1, False),  # one part is no split
])
def test_a_split_pays_only_where_the_time_saved_exceeds_the_processes_cost(each, scenarios, parts, splits, monkeypatch):
    monkeypatch.setattr(batch_module, "SHARED_SPEED", 0.75)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.05)
    assert batch_module._pays(each, scenarios, parts) is splits


@pytest.fixture
def fake_solves(monkeypatch):
    """Replace the batch's solve by one that advances a fake clock by ``fixed`` seconds a batch
    and ``each`` a scenario; returns a function that sets them and the list of batch sizes solved."""
    clock, solved, costs = [0.0], [], {}

    class Clock:
        @staticmethod
        def process_time():
            return clock[0]

        perf_counter = process_time

    def solve(case, values, tolerance, max_iterations, metrics=False, plan=None):
        count = len(next(iter(values.values())))
        solved.append(count)
        planning = costs["planning"] if plan is None else 0.0
        clock[0] += costs["fixed"] + costs["each"] * count + planning
        return BatchResult(pd.DataFrame({"n": np.arange(count)}), 1, np.zeros((count, 1)), plan=["the order"],
                           planning_seconds=planning)

    def refuse(*args, **kwargs):
        raise AssertionError("a process pool was started")

    monkeypatch.setattr(batch_module, "time", Clock)
    monkeypatch.setattr(batch_module, "_solve_batch", solve)
    monkeypatch.setattr(batch_module, "ProcessPoolExecutor", refuse)

    def costing(fixed, each, planning=0.0):
        costs.update(fixed=fixed, each=each, planning=planning)
        return solved

    costing.clock = clock

    return costing


def test_the_probe_times_a_scenario_without_the_fixed_cost_of_a_batch(fake_solves):
    """A batch costs a fixed time besides its time per scenario; only the latter is split, so
    the probe must not take the fixed cost for a cost per scenario (30 ms a batch, 14 µs a
    scenario), nor the first probe's finding of the calculation order (10 ms, once; the second
    reuses the order) for a saving."""
    fake_solves(0.030, 14e-6, planning=0.010)
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    probes, each, _ = batch_module._probe(None, values, None, None, False, lambda cost: True)
    assert [len(r.table) for r in probes] == [batch_module.PROBE, batch_module.PROBE_GROWTH * batch_module.PROBE]
    assert each == pytest.approx(14e-6, rel=1e-6)


def test_a_first_probe_that_cannot_pay_well_is_not_followed_by_a_second(fake_solves):
    """The first probe's cost per scenario includes the batch's fixed cost, so it overstates the
    saving; where even that saving is small (fixed cost 20 ms, 4 µs a scenario, 20,000
    scenarios), no second probe is spent on it and the batch stays in this process."""
    solved = fake_solves(0.020, 4e-6)
    result = simulate_batch(demo_case_path("crude_preheat"), {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)},
                            workers=2)
    assert solved == [batch_module.PROBE, 20_000 - batch_module.PROBE] and result.processes == 1


def test_a_later_batch_of_the_same_case_is_decided_without_a_probe(fake_solves):
    """A study sends many batches of one case; the probe is a batch with its own fixed cost,
    lost wherever the batch then stays in one process (20 ms of a 100 ms batch here). The first
    batch's probe is remembered for the case object and its varied keys: a later batch that it
    says stays here is solved whole at once. Another case, or other varied keys, probe again."""
    solved = fake_solves(0.020, 4e-6)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    simulate_batch(case, values, workers=2)
    assert solved == [batch_module.PROBE, 20_000 - batch_module.PROBE]
    solved.clear()
    assert simulate_batch(case, values, workers=2).processes == 1
    assert solved == [20_000]
    solved.clear()
    simulate_batch(case, {"streams.crude.supply_temperature": np.linspace(20.0, 40.0, 20_000)}, workers=2)
    simulate_batch(batch_module.as_case(demo_case_path("crude_preheat")), values, workers=2)
    assert solved == [batch_module.PROBE, 20_000 - batch_module.PROBE] * 2


def test_a_remembered_cost_that_says_split_splits_the_whole_batch_alike(monkeypatch):
    """Where the first batch's probes found a split pays, a later batch is split from its first
    scenario (no probe solved here first): the same table and temperatures as one process."""
    monkeypatch.setattr(batch_module, "PROBE", 4)
    monkeypatch.setattr(batch_module, "PROCESS_MINIMUM", 4)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    monkeypatch.setattr(batch_module, "CLEARLY_WORTH", 0.0)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 30)}
    whole = simulate_batch(case, values)
    first = simulate_batch(case, values, workers=2)
    known = batch_module._remembered(case, values, False)
    assert first.processes == 2 and known is not None and known.exact
    solved = []
    monkeypatch.setattr(batch_module, "_probe", lambda *args: solved.append(args) or pytest.fail("probed again"))
    later = simulate_batch(case, values, workers=2)
    assert later.processes == 2 and not solved
    pd.testing.assert_frame_equal(later.table, whole.table, check_exact=False, rtol=1e-11, atol=1e-9)
    np.testing.assert_allclose(later.temperature, whole.temperature, rtol=0, atol=1e-9)


@pytest.mark.parametrize("overlap, splits_again", [(0.0, False), (0.9, True)])
def test_a_split_that_did_not_pay_is_not_made_again(fake_solves, monkeypatch, overlap, splits_again):
    """How fast a case's processes solve while sharing the machine is measured on its first
    split: its wall time, less a batch's fixed cost and the processes' own, against the probes'
    cost per scenario. A batch that is mostly memory traffic slows when two share the memory
    (the crude demo's fixed-property form at 100,000 scenarios measured 0.37 of its speed alone,
    and two processes took 1.13 times as long as one); where the measured speed says a split
    does not pay, the case's later batches stay in one process. Here a batch costs 20 ms and
    20 µs a scenario; the two parts of the first split's 16,000 scenarios are solved one after
    the other (``overlap`` 0: no gain) or nine tenths of each part at the same time as the
    other's."""
    solved = fake_solves(0.020, 20e-6)
    clock, solve = fake_solves.clock, batch_module._solve_batch

    def parts(case, jobs, tolerance, max_iterations, metrics, plan, measured):
        start = clock[0]
        results = [solve(case, job, tolerance, max_iterations, metrics, plan) for job in jobs]
        clock[0] -= overlap * (clock[0] - start) / len(jobs)  # the time two parts ran at once
        return results

    monkeypatch.setattr(batch_module, "_split", parts)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    assert simulate_batch(case, values, workers=2).processes == 2
    rest = 20_000 - (1 + batch_module.PROBE_GROWTH) * batch_module.PROBE
    known = batch_module._remembered(case, values, False)
    assert known.exact and known.each == pytest.approx(20e-6) and known.fixed == pytest.approx(0.020)
    wall = 2 * (0.020 + 20e-6 * rest / 2) * (1.0 - overlap / 2)
    assert known.shared_speed == pytest.approx(20e-6 * rest / (2 * (wall - 0.020)), rel=1e-9)
    solved.clear()
    assert simulate_batch(case, values, workers=2).processes == (2 if splits_again else 1)
    assert solved == ([10_000, 10_000] if splits_again else [20_000])
