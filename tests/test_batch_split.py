"""The batch split: a worker's part comes back through shared memory (``part_transfer``); a
case's first split-allowed batch is solved here and timed, without the batch's fixed cost; a
later batch is split only where the time saved exceeds what the processes cost (``batch._pays``).

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


def _timed_then_split(case, values, **options):
    """A case's first split-allowed batch is solved here and timed; the second is the split."""
    case = batch_module.as_case(case)
    first = simulate_batch(case, values, workers=2, **options)
    assert first.processes == 1 and batch_module._remembered(batch_module._identity(case), values,
                                                               options.get("metrics", False))
    return simulate_batch(case, values, workers=2, **options)


def test_a_split_batch_with_metrics_equals_one_batch_and_leaves_no_block(monkeypatch):
    """Every named result of every unit (``metrics``: one float column each) comes back from the
    worker through its block: the table equals the one-process table exactly."""
    monkeypatch.setattr(batch_module, "PROCESS_MINIMUM", 4)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    monkeypatch.setattr(batch_module, "FIXED_COST_SCENARIOS", 0.0)  # so that a few scenarios split
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 30)}
    path = demo_case_path("crude_preheat")
    before = _shared_blocks()
    whole = simulate_batch(path, values, metrics=True)
    split = _timed_then_split(path, values, metrics=True)
    assert split.processes == 2 and _shared_blocks() == before
    assert list(split.table.columns) == list(whole.table.columns)
    assert (split.table.dtypes == whole.table.dtypes).all()
    pd.testing.assert_frame_equal(split.table, whole.table, check_exact=False, rtol=1e-11, atol=1e-9)


@pytest.mark.parametrize("each, scenarios, parts, splits", [
    (6.5e-6, 18_000, 2, False),   # 18,000 scenarios of the fixed-property crude demo: would save ~0.03 s, costs 0.05
    (6.5e-6, 98_000, 2, True),    # the same at 98,000: saves ~0.21 s
    (55e-6, 12_000, 2, True),     # costlier scenarios: saves ~0.16 s
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


def _consistent(fake_solves, each, planning=0.0):
    """Fake batches whose fixed cost is :data:`batch.FIXED_COST_SCENARIOS` scenarios' worth."""
    return fake_solves(each * batch_module.FIXED_COST_SCENARIOS, each, planning)


def test_a_first_batch_is_solved_here_whole_and_timed(fake_solves):
    """Nothing is known of a case before its first split-allowed batch, and a timing made apart
    from the batch would be a batch of its own, with its fixed cost (about a sixth of a batch of
    20,000 on the crude demo): the first batch is solved here, whole (no process started), and
    timed in CPU time less the finding of the calculation order (10 ms here, once a batch): one
    scenario's cost is its time over its scenarios and a batch's fixed cost in scenarios."""
    solved = _consistent(fake_solves, 14e-6, planning=0.010)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    assert simulate_batch(case, values, workers=2).processes == 1 and solved == [20_000]
    assert batch_module._remembered(batch_module._identity(case), values, False).each == pytest.approx(14e-6, rel=1e-9)


def test_a_case_whose_split_cannot_pay_stays_whole_in_this_process(fake_solves):
    """4 µs a scenario (the crude demo's fixed-property form): two processes would save ~0.03 s
    of a batch of 20,000, less than a process costs; every batch stays here, whole, and the
    cost of a scenario is the least any of them measured (a process's first batches also pay
    for the growth of its heap)."""
    solved = _consistent(fake_solves, 4e-6)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    simulate_batch(case, values, workers=2)
    known = batch_module._remembered(batch_module._identity(case), values, False)
    known.each *= 1.5  # as a first batch in a cold process might have measured
    for _ in range(2):
        assert simulate_batch(case, values, workers=2).processes == 1
    assert solved == [20_000] * 3 and known.each == pytest.approx(4e-6, rel=1e-9)


def test_what_a_batch_measured_decides_only_its_case_and_varied_keys(fake_solves, monkeypatch):
    """A study sends many batches of one case: what the first measured is kept for the case
    object and its varied keys. Another case, or other varied keys, are timed again (solved
    whole here), and no process is started for them."""
    solved = _consistent(fake_solves, 20e-6)
    monkeypatch.setattr(batch_module, "_split", lambda *args: pytest.fail("split before its case was timed"))
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    simulate_batch(case, values, workers=2)
    simulate_batch(case, {"streams.crude.supply_temperature": np.linspace(20.0, 40.0, 20_000)}, workers=2)
    simulate_batch(batch_module.as_case(demo_case_path("crude_preheat")), values, workers=2)
    simulate_batch(case, values, workers=2, metrics=True)
    assert solved == [20_000] * 4


def test_a_timed_case_splits_its_later_batches_alike(monkeypatch):
    """Where the case's first batch measured that a split pays, its later batches are split from
    their first scenario: the same table and temperatures as one process."""
    monkeypatch.setattr(batch_module, "PROCESS_MINIMUM", 4)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    monkeypatch.setattr(batch_module, "FIXED_COST_SCENARIOS", 0.0)  # so that a few scenarios split
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 30)}
    whole = simulate_batch(case, values)
    later = _timed_then_split(case, values)
    assert later.processes == 2
    pd.testing.assert_frame_equal(later.table, whole.table, check_exact=False, rtol=1e-11, atol=1e-9)
    np.testing.assert_allclose(later.temperature, whole.temperature, rtol=0, atol=1e-9)


def _parts_in_turn(monkeypatch, clock, overlap):
    """Replace the split by the parts solved one after the other on the fake clock, then the
    clock moved back by ``overlap`` of a part's time (the time two parts ran at once)."""
    solve, plans = batch_module._solve_batch, []

    def parts(case, jobs, tolerance, max_iterations, metrics, plan, measured):
        plans.append(plan)
        start = clock[0]
        results = [solve(case, job, tolerance, max_iterations, metrics, plan) for job in jobs]
        clock[0] -= overlap * (clock[0] - start) / len(jobs)
        return results

    monkeypatch.setattr(batch_module, "_split", parts)
    return plans


@pytest.mark.parametrize("overlap, splits_again", [(0.0, False), (0.9, True)])
def test_a_split_that_did_not_pay_is_not_made_again(fake_solves, monkeypatch, overlap, splits_again):
    """How fast a case's processes solve while sharing the machine is measured on its first
    split: its wall time, less a batch's fixed cost and the processes' own, against the cost per
    scenario its batches solved here measured. A batch that is mostly memory traffic slows when
    two share the memory (two processes solving 10,000 scenarios each of the crude demo's
    fixed-property form measured 0.58 of their speed alone); where the measured speed says a split does not pay, the case's
    later batches stay in one process. Here a scenario costs 20 µs; the two parts of the split
    are solved one after the other (``overlap`` 0: no gain) or nine tenths of each part at the
    same time as the other's."""
    solved = _consistent(fake_solves, 20e-6)
    _parts_in_turn(monkeypatch, fake_solves.clock, overlap)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    assert simulate_batch(case, values, workers=2).processes == 1
    assert simulate_batch(case, values, workers=2).processes == 2
    known = batch_module._remembered(batch_module._identity(case), values, False)
    part_alone = 20e-6 * (10_000 + batch_module.FIXED_COST_SCENARIOS)
    wall = 2 * part_alone * (1.0 - overlap / 2)
    assert known.shared_speed == pytest.approx(part_alone / wall, rel=1e-9)
    solved.clear()
    assert simulate_batch(case, values, workers=2).processes == (2 if splits_again else 1)
    assert solved == ([10_000, 10_000] if splits_again else [20_000])


def test_a_large_first_batch_is_timed_on_its_first_part_and_the_rest_decided_by_it(fake_solves, monkeypatch):
    """A first batch of at least LEARNING_BATCHES x LEARNING_PART scenarios: its first part is
    solved here and timed (its own fixed cost then a small share of the batch), and the rest is
    split where that timing says it pays, reusing the first part's calculation order."""
    solved = _consistent(fake_solves, 20e-6, planning=0.010)
    plans = _parts_in_turn(monkeypatch, fake_solves.clock, 0.9)
    monkeypatch.setattr(batch_module, "LEARNING_PART", 5_000)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    result = simulate_batch(case, values, workers=2)
    assert solved == [5_000, 7_500, 7_500] and result.processes == 2 and plans == [["the order"]]
    np.testing.assert_array_equal(result.table["n"], np.concatenate([np.arange(5_000)] + [np.arange(7_500)] * 2))


def test_a_case_given_as_a_file_is_remembered_until_the_file_changes(fake_solves, tmp_path):
    """A file given again (as a study or a script does) is the same case while it is unchanged:
    its second batch is decided by the first's timing; once the file is written again, its next
    batch is timed afresh (the case may now cost otherwise)."""
    solved = _consistent(fake_solves, 4e-6)  # a split would not pay: both batches solved here
    path = tmp_path / "case.yaml"
    path.write_bytes(demo_case_path("crude_preheat").read_bytes())
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    known = []
    for _ in range(2):
        simulate_batch(str(path), values, workers=2)
        known.append(batch_module._remembered(batch_module._identity(str(path)), values, False))
    assert known[0] is known[1] and len(solved) == 2
    path.write_bytes(path.read_bytes() + b"\n# edited\n")
    assert batch_module._remembered(batch_module._identity(path), values, False) is None


def test_a_case_changed_in_place_is_timed_afresh(fake_solves):
    """A case object changed in place (another fluid model, a fixed UA) may cost otherwise a
    scenario: its timings are kept by its content, so it is another case."""
    _consistent(fake_solves, 20e-6)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 20_000)}
    simulate_batch(case, values, workers=2)
    assert batch_module._remembered(batch_module._identity(case), values, False) is not None
    case.streams["crude"]["flow"] *= 1.1
    assert batch_module._remembered(batch_module._identity(case), values, False) is None


def test_a_batch_larger_than_a_piece_is_solved_in_pieces_with_one_order(monkeypatch):
    """A batch of more than PIECE_SCENARIOS scenarios is solved in pieces one after the other
    (its arrays within the caches, its memory bounded), all with the calculation order found for
    the first: the same table and temperatures as one piece, within the tolerance's scatter."""
    from hxtrain.solver.simulation import evaluation

    path = demo_case_path("crude_preheat")
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 23), "exchangers.E-110.bypass.cold": np.linspace(0, 0.3, 23)}
    whole = simulate_batch(path, values, metrics=True)
    monkeypatch.setattr(batch_module, "PIECE_SCENARIOS", 5)
    searches, pieces, search, evaluate = [], [], evaluation.plan_calculation, batch_module.evaluate
    monkeypatch.setattr(evaluation, "plan_calculation", lambda graph: searches.append(graph) or search(graph))
    monkeypatch.setattr(batch_module, "evaluate", lambda case, v, **kw: pieces.append(len(v["streams.crude.flow"]))
                        or evaluate(case, v, **kw))
    pieced = simulate_batch(path, values, metrics=True)
    assert pieces == [5, 5, 5, 4, 4] and len(searches) == 1
    assert list(pieced.table.index) == list(range(23))
    pd.testing.assert_frame_equal(pieced.table, whole.table, check_exact=False, rtol=1e-11, atol=1e-9)
    np.testing.assert_allclose(pieced.temperature, whole.temperature, rtol=0, atol=1e-9)


def test_a_later_batch_of_a_timed_case_reuses_its_calculation_order(monkeypatch):
    """The same case (its file or its content) and varied keys: the order and tear sets found
    for its first batch serve its later ones and their parts (a 10,000-unit network spends ~0.8 s
    finding them); the answers are the same."""
    from hxtrain.solver.simulation import evaluation

    monkeypatch.setattr(batch_module, "PROCESS_MINIMUM", 4)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 1e9)  # stays in this process
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 12)}
    first = simulate_batch(case, values, workers=2)
    searches, search = [], evaluation.plan_calculation
    monkeypatch.setattr(evaluation, "plan_calculation", lambda graph: searches.append(graph) or search(graph))
    later = simulate_batch(case, values, workers=2)
    assert searches == []
    np.testing.assert_array_equal(later.temperature, first.temperature)
    simulate_batch(case, {"streams.crude.supply_temperature": np.linspace(20.0, 40.0, 12)}, workers=2)
    assert len(searches) == 1  # other varied keys: found afresh
