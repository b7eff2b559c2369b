"""Batch evaluation: many scenarios of one topology in one pass agree with one-by-one solves."""

import numpy as np
import pandas as pd
import pytest

from hxtrain.network import CaseError, load_case
from hxtrain.network.batch import is_batchable
from hxtrain.solver import demo_case_path, simulate
from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.solver.studies import key_outputs


def single(path, changes):
    case = load_case(path)
    for apply in changes:
        apply(case)
    return simulate(case)


@pytest.mark.parametrize("demo,stream", [("feed_effluent", "fresh_feed"), ("product_cooling", "naphtha")])
def test_batch_equals_single_solves_on_constant_cp_demos(demo, stream):
    path = demo_case_path(demo)
    base_flow = load_case(path).streams[stream]["flow"]
    flows = base_flow * np.array([0.6, 0.9, 1.0, 1.2])
    batch = simulate_batch(path, {f"streams.{stream}.flow": flows})
    assert batch.table["converged"].all() and batch.table["valid"].all()
    for i, flow in enumerate(flows):
        one = single(path, [lambda c, f=flow: c.streams[stream].__setitem__("flow", f)])
        np.testing.assert_allclose(batch.temperature[i], one.streams["temperature_c"].to_numpy(), rtol=0, atol=1e-9)
        expected = key_outputs(one)
        for key, value in expected.items():
            assert batch.table.loc[i, key] == pytest.approx(value, rel=1e-9, abs=1e-9), key


def test_batch_equals_single_solves_on_the_crude_demo_with_several_values():
    """cp(T), film-scaled U, fouling and a bypass varied together: agreement to 1e-9 K."""
    path = demo_case_path("crude_preheat")
    flows = np.array([70.0, 95.0, 105.0])
    fouling = np.array([0.0, 0.0009, 0.0005])
    bypass = np.array([0.0, 0.05, 0.2])
    batch = simulate_batch(path, {"streams.crude.flow": flows, "exchangers.E-112.fouling.tube": fouling,
                                  "exchangers.E-110.bypass.cold": bypass})
    for i in range(3):
        def change(case, i=i):
            case.streams["crude"]["flow"] = flows[i]
            case.exchangers["E-112"]["spec"].thermal.fouling_tube = fouling[i]
            case.exchangers["E-110"]["spec"].bypass_cold = bypass[i]

        one = single(path, [change])
        np.testing.assert_allclose(batch.temperature[i], one.streams["temperature_c"].to_numpy(), rtol=0, atol=1e-9)
        assert batch.table.loc[i, "fired_heater_duty_kw"] == pytest.approx(one.summary["fired_heater_duty_kw"], rel=1e-12)
        assert batch.table.loc[i, "relative_imbalance"] < 1e-9


def test_split_fraction_varies_flows_per_scenario():
    path = demo_case_path("product_cooling")
    fractions = np.array([0.2, 0.4, 0.7])
    batch = simulate_batch(path, {"splitters.cw_split.branches.first.fraction": fractions})
    for i, x in enumerate(fractions):
        def change(case, x=x):
            case.splitters["cw_split"]["fractions"] = {"first": x, "second": 1.0 - x}

        one = single(path, [change])
        np.testing.assert_allclose(batch.temperature[i], one.streams["temperature_c"].to_numpy(), rtol=0, atol=1e-9)


def test_impossible_scenario_is_flagged_not_reported():
    """A crude flow of -5 kg/s in one scenario: that row is not valid, with NaN results and the
    key path in its message; the others are answered. (A cooler target above its inlet was the
    example here until such a cooler idled with a warning: see the next test.)"""
    path = demo_case_path("crude_preheat")
    batch = simulate_batch(path, {"streams.crude.flow": np.array([95.0, -5.0])})
    assert list(batch.table["valid"]) == [True, False]
    assert "streams.crude.flow" in batch.table.loc[1, "message"]
    assert np.isnan(batch.table.loc[1, "fired_heater_duty_kw"]) and np.isnan(batch.temperature[1]).all()
    assert np.isfinite(batch.table.loc[0, "fired_heater_duty_kw"])


def test_cooler_past_its_target_idles_with_a_warning_in_a_batch():
    """C-104 (kerosene cooler) with a target above its inlet: its valve closes, zero duty, a
    warning; the scenario is answered."""
    path = demo_case_path("crude_preheat")
    targets = np.array([45.0, 300.0])
    batch = simulate_batch(path, {"coolers.C-104.outlet_temperature": targets})
    assert list(batch.table["success"]) == [True, True]
    assert batch.table.loc[1, "warnings"] == batch.table.loc[0, "warnings"] + 1
    assert batch.table.loc[1, "cooler_duty_kw"] < batch.table.loc[0, "cooler_duty_kw"]


def test_unconverged_scenario_is_flagged():
    case = load_case(demo_case_path("crude_preheat"))  # not linear: one iteration is too few
    batch = simulate_batch(case, {"streams.crude.flow": np.array([90.0, 100.0])}, max_iterations=1)
    assert not batch.table["converged"].any()
    assert batch.table["fired_heater_duty_kw"].isna().all()
    assert (batch.table["message"] == "temperatures did not converge").all()


@pytest.mark.parametrize("path,ok", [
    ("streams.crude.flow", True), ("exchangers.E-110.bypass.cold", True),
    ("splitters.crude_split.branches.north.fraction", True), ("exchangers.E-104.shells", False),
    ("exchangers.E-104.area_per_shell", False), ("fluids.crude.density", False),
])
def test_which_paths_may_vary_in_a_batch(path, ok):
    assert is_batchable(path) is ok


def test_bad_batch_values_are_errors_naming_the_key():
    """A value out of bounds makes its scenario not valid (naming the key path), from a file or
    from a Case alike; a path that cannot vary is an error for the whole batch."""
    path = demo_case_path("crude_preheat")
    for case in (path, load_case(path)):
        table = simulate_batch(case, {"streams.crude.flow": np.array([50.0, -5.0])}).table
        assert list(table["valid"]) == [True, False] and "streams.crude.flow" in table.loc[1, "message"]
    with pytest.raises(CaseError, match="not a value a scenario can vary"):
        simulate_batch(path, {"exchangers.E-104.shells": np.array([1.0, 2.0])})


@pytest.mark.parametrize("start", ["platform default", "spawn"])
def test_a_batch_split_over_processes_equals_one_batch(start, monkeypatch):
    """``workers=2`` solves two halves in two processes: the same table and temperatures (each
    scenario converges on its own; the halves differ only in batch-wide stage choices). Spawned
    workers (the start method off Linux) import everything afresh."""
    import multiprocessing

    import hxtrain.solver.simulation.batch as batch_module

    # small parts, and splitting always judged worth it, so 30 scenarios really split
    monkeypatch.setattr(batch_module, "PROCESS_MINIMUM", 4)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    monkeypatch.setattr(batch_module, "FIXED_COST_SCENARIOS", 0.0)  # so that a few scenarios split
    if start == "spawn":
        monkeypatch.setattr(batch_module, "_process_context", lambda: multiprocessing.get_context("spawn"))
    started = []

    class Counted(batch_module.ProcessPoolExecutor):
        def __init__(self, workers, **kwargs):
            started.append(workers)
            super().__init__(workers, **kwargs)

    monkeypatch.setattr(batch_module, "ProcessPoolExecutor", Counted)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 30), "exchangers.E-110.bypass.cold": np.linspace(0, 0.3, 30)}
    whole = simulate_batch(case, values)
    assert simulate_batch(case, values, workers=2).processes == 1  # the case's first: solved here and timed
    split = simulate_batch(case, values, workers=2)
    assert started == [1]  # one worker process beside this one
    assert len(split.table) == 30 and split.table["converged"].all()
    np.testing.assert_array_equal(split.table["streams.crude.flow"], values["streams.crude.flow"])
    np.testing.assert_allclose(split.temperature, whole.temperature, rtol=0, atol=1e-9)
    np.testing.assert_allclose(split.table["fired_heater_duty_kw"], whole.table["fired_heater_duty_kw"], rtol=1e-12)


def test_a_small_batch_stays_in_one_process(monkeypatch):
    import hxtrain.solver.simulation.batch as batch_module

    def refuse(*args, **kwargs):
        raise AssertionError("a process pool was started for a small batch")

    monkeypatch.setattr(batch_module, "ProcessPoolExecutor", refuse)
    result = simulate_batch(demo_case_path("feed_effluent"), {"streams.fresh_feed.flow": np.array([58.0, 60.0])},
                            workers=2)
    assert result.table["converged"].all()


@pytest.mark.parametrize("demo", ["crude_preheat", "feed_effluent", "product_cooling", "desalter_and_reactor"])
def test_every_demo_case_can_go_to_a_worker_process(demo):
    """``workers`` > 1 pickles the case for the worker processes."""
    import pickle

    case = load_case(demo_case_path(demo))
    again = pickle.loads(pickle.dumps(case))
    pd.testing.assert_frame_equal(simulate(again).streams, simulate(case).streams)
