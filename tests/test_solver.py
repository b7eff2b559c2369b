"""Calculation order, tearing, convergence and flows on small networks with known answers."""

import itertools

import networkx as nx
import numpy as np
import pytest

from hxtrain.network import CaseError, build_network, case_from_mapping, load_case
from hxtrain.solver import ConvergenceError, demo_case_path, simulate
from hxtrain.solver.simulation.convergence import converge_tears
from hxtrain.solver.simulation.sequencing import _depth_first_tears, choose_tears, edge_cycles, plan_calculation


def coupled_case(ua=200.0, recycle=None, max_iterations=500, hot_flow=20.0):
    """Cold stream through E1 -> E2 -> E3, hot stream back through E3 -> E2 -> E1 (countercurrent
    coupling); optionally part of the cold outlet recycled to its inlet (a true recycle)."""
    cold_path = "E1.cold -> E2.cold -> E3.cold -> H1 -> " + ("split" if recycle is not None else "out_cold")
    case = {
        "settings": {"max_iterations": max_iterations},
        "fluids": {"oil": {"cp": 2.5}},
        "streams": {
            "cold": {"fluid": "oil", "flow": 20.0, "supply_temperature": 30.0,
                     "path": "mix" if recycle is not None else cold_path},
            "hot": {"fluid": "oil", "flow": hot_flow, "supply_temperature": 300.0,
                    "path": "E3.hot -> E2.hot -> E1.hot -> out_hot"},
        },
        "exchangers": {tag: {"arrangement": "counterflow", "ua": ua} for tag in ("E1", "E2", "E3")},
        "heaters": {"H1": {"outlet_temperature": 320.0}},
        "products": {"out_cold": {}, "out_hot": {}},
    }
    if recycle is not None:
        case["mixers"] = {"mix": {"path": cold_path}}
        case["splitters"] = {"split": {"branches": {"back": {"fraction": recycle, "path": "mix"},
                                                    "on": {"fraction": 1 - recycle, "path": "out_cold"}}}}
    return case_from_mapping(case, "<test>")


def minimum_cover_size_by_brute_force(graph):
    keys = [k for _, _, k in graph.edges(keys=True)]
    for size in range(len(keys) + 1):
        for subset in itertools.combinations(keys, size):
            cut = nx.MultiDiGraph(graph)
            cut.remove_edges_from([(u, v, k) for u, v, k in graph.edges(keys=True) if k in subset])
            if nx.is_directed_acyclic_graph(cut):
                return size
    raise AssertionError("unreachable")


def test_tear_set_is_the_fewest_on_the_crude_demo():
    """The MILP cycle cover is minimal: no smaller set of segments breaks every cycle (brute force)."""
    net = build_network(load_case(demo_case_path("crude_preheat")))
    cyclic = [b for b in plan_calculation(net.graph) if b.tears]
    assert len(cyclic) == 1
    block = cyclic[0]
    sub = net.graph.subgraph(block.units)
    assert len(block.tears) == minimum_cover_size_by_brute_force(sub) == 3
    cut = nx.MultiDiGraph(sub)
    cut.remove_edges_from([(u, v, k) for u, v, k in sub.edges(keys=True) if k in block.tears])
    assert nx.is_directed_acyclic_graph(cut)


def test_parallel_edges_are_separate_cycles():
    graph = nx.MultiDiGraph()
    graph.add_edge("a", "b", key=0)
    graph.add_edge("b", "a", key=1)
    graph.add_edge("b", "a", key=2)
    cycles = edge_cycles(graph)
    assert sorted(sorted(c) for c in cycles) == [[0, 1], [0, 2]]
    tears, _ = choose_tears(graph)
    assert tears == [0]


def test_depth_first_fallback_breaks_every_cycle_without_spare_tears():
    rng = np.random.default_rng(3)
    graph = nx.MultiDiGraph()
    for k in range(60):
        u, v = rng.integers(0, 15, size=2)
        graph.add_edge(int(u), int(v), key=k)
    tears = _depth_first_tears(graph)
    cut = nx.MultiDiGraph(graph)
    cut.remove_edges_from([(u, v, k) for u, v, k in graph.edges(keys=True) if k in tears])
    assert nx.is_directed_acyclic_graph(cut)
    for k in tears:  # non-redundant: putting any one tear back leaves a cycle
        back = nx.MultiDiGraph(cut)
        back.add_edges_from([(u, v, kk) for u, v, kk in graph.edges(keys=True) if kk == k])
        assert not nx.is_directed_acyclic_graph(back)


def test_countercurrent_coupling_converges_and_balances():
    result = simulate(coupled_case())
    assert result.converged and len(result.tears) >= 1
    assert result.balance["relative_imbalance"] < 1e-9
    assert (result.tears["final_residual_k"] <= 1e-6).all()


@pytest.mark.parametrize("ua", [1e3, 1e5])
def test_high_ntu_coupling_converges(ua):
    """Near-pinched counterflow couplings (NTU up to ~2000) are strongly coupled both ways."""
    result = simulate(coupled_case(ua=ua))
    assert result.balance["relative_imbalance"] < 1e-9
    units = result.units
    exchangers = units[units["type"] == "exchanger"]
    # second law: every exchanger's outlets stay between its inlets
    assert (exchangers["hot_out_c"] >= exchangers["cold_in_c"] - 1e-9).all()
    assert (exchangers["cold_out_c"] <= exchangers["hot_in_c"] + 1e-9).all()


@pytest.mark.parametrize("recycle", [0.3, 0.9, 0.99])
def test_recycle_flows_and_convergence(recycle):
    """Fresh feed F with a fraction r of the loop returned: loop flow is F / (1 - r) (mass balance)."""
    result = simulate(coupled_case(recycle=recycle))
    streams = result.streams.set_index("segment")
    assert streams.loc["mix -> E1.cold", "flow_kg_s"] == pytest.approx(20.0 / (1 - recycle), rel=1e-12)
    assert streams.loc["split.on -> out_cold", "flow_kg_s"] == pytest.approx(20.0, rel=1e-12)
    assert result.balance["relative_imbalance"] < 1e-9


def test_non_convergence_is_an_error_naming_the_tears():
    """One iteration is not enough for the crude demo (cp and U vary with temperature, so the
    first quasi-Newton step is not the answer)."""
    case = load_case(demo_case_path("crude_preheat"))
    case.settings.max_iterations = 1
    with pytest.raises(ConvergenceError) as info:
        simulate(case)
    text = str(info.value)
    assert "did not converge" in text and "->" in text and "No results are reported" in text
    assert info.value.diagnostics["history"]


def test_a_linear_map_is_solved():
    a = np.array([[0.2, 0.7], [0.75, 0.2]])  # spectral radius 0.92: slow for plain substitution
    b = np.array([10.0, -4.0])
    exact = np.linalg.solve(np.eye(2) - a, b)
    result = converge_tears(lambda x: x @ a.T + b, np.zeros((1, 2)), 1e-10, 500)
    assert result.success
    np.testing.assert_allclose(result.x[0], exact, rtol=0, atol=1e-9)


def test_divergent_map_reaches_newton():
    a = np.array([[1.5, 0.2], [0.1, 1.8]])  # x = A x + b diverges under substitution
    b = np.array([1.0, 2.0])
    exact = np.linalg.solve(np.eye(2) - a, b)
    result = converge_tears(lambda x: x @ a.T + b, np.zeros((1, 2)), 1e-9, 300)
    assert result.success and "newton" in result.methods
    np.testing.assert_allclose(result.x[0], exact, atol=1e-8)


def test_each_scenario_of_a_batch_converges_on_its_own():
    slopes = np.array([0.1, 0.5, 0.95])[:, None]
    result = converge_tears(lambda x: slopes * x + 1.0, np.zeros((3, 1)), 1e-10, 200)
    np.testing.assert_allclose(result.x[:, 0], 1.0 / (1.0 - slopes[:, 0]), atol=1e-9)


def test_zero_flow_branch_gives_no_nan():
    case = coupled_case(recycle=0.0)
    result = simulate(case)
    assert not result.streams["temperature_c"].isna().any()
    assert result.streams.set_index("segment").loc["split.back -> mix", "flow_kg_s"] == 0.0


def test_a_loop_with_no_way_out_is_bad_input():
    case = {
        "fluids": {"oil": {"cp": 2.0}},
        "streams": {"feed": {"fluid": "oil", "flow": 1.0, "supply_temperature": 20, "path": "mix"}},
        "mixers": {"mix": {"path": "split"}},
        "splitters": {"split": {"branches": {"back": {"fraction": 1.0, "path": "mix"},
                                             "out": {"fraction": 0.0, "path": "product"}}}},
        "products": {"product": {}},
    }
    with pytest.raises(CaseError, match="no way out"):
        build_network(case_from_mapping(case))


def test_reversed_labels_move_heat_downhill_and_say_so():
    """A 'hot' side stream colder than the 'cold' side stream: heat flows cold side -> hot side."""
    case = {
        "fluids": {"w": {"cp": 4.18}},
        "streams": {"a": {"fluid": "w", "flow": 2.0, "supply_temperature": 40, "path": "E1.hot -> pa"},
                    "b": {"fluid": "w", "flow": 3.0, "supply_temperature": 90, "path": "E1.cold -> pb"}},
        "exchangers": {"E1": {"arrangement": "counterflow", "ua": 10.0}},
        "products": {"pa": {}, "pb": {}},
    }
    result = simulate(case_from_mapping(case))
    row = result.units.loc["E1"]
    assert row["duty_kw"] < 0 and row["hot_out_c"] > 40 and row["cold_out_c"] < 90
    assert "reversed_heat_flow" in set(result.findings["kind"])
    # the heat recovered is what passes, whichever stream the case calls hot: the same as with
    # the labels the right way round (it had come out negative)
    case["streams"]["a"]["path"], case["streams"]["b"]["path"] = "E1.cold -> pa", "E1.hot -> pb"
    swapped = simulate(case_from_mapping(case))
    assert swapped.units.loc["E1", "duty_kw"] == pytest.approx(-row["duty_kw"], rel=1e-12)
    recovered = [r.summary["heat_recovered_kw"] for r in (result, swapped)]
    assert recovered[0] == pytest.approx(recovered[1], rel=1e-12) and recovered[0] == pytest.approx(-row["duty_kw"])


def test_loosened_sweeps_far_from_the_answer_give_the_exact_answer_with_fewer_passes(monkeypatch):
    """Inexact Newton (Dembo, Eisenstat & Steihaug 1982): while the tears are far off, the
    exchangers may stop their own passes at FORCING times the residual. On the crude demo as
    shipped (cp(T), film U; a three-tear block) the answer is the one found with every sweep
    exact, to well inside the tolerance, the energy balance closes as tightly, and the
    exchangers make fewer passes; a sweep's precision reaches the rating and is 0 outside."""
    from hxtrain.solver.simulation import convergence
    from hxtrain.units import protocol, service_rating
    from hxtrain.solver.simulation.batch import simulate_batch

    passes, precisions = [0], set()
    rate = service_rating._rate

    def counted(*args):
        passes[0] += 1
        precisions.add(protocol.outlet_precision())
        return rate(*args)

    monkeypatch.setattr(service_rating, "_rate", counted)
    values = {"streams.crude.flow": np.linspace(60.0, 110.0, 9)}
    loosened = simulate_batch(demo_case_path("crude_preheat"), values)
    loosened_passes, loosened_precisions = passes[0], set(precisions)
    passes[0] = 0
    monkeypatch.setattr(convergence, "FORCING", 0.0)
    monkeypatch.setattr(convergence, "START_PRECISION", 0.0)
    exact = simulate_batch(demo_case_path("crude_preheat"), values)
    assert loosened.table["success"].all() and exact.table["success"].all()
    np.testing.assert_allclose(loosened.temperature, exact.temperature, rtol=0, atol=1e-8)
    assert loosened.table["relative_imbalance"].max() < 1e-12
    assert loosened_passes < 0.8 * passes[0]
    assert max(loosened_precisions) > 1e-4 and 0.0 in loosened_precisions and protocol.outlet_precision() == 0.0


@pytest.mark.parametrize("demo", ["crude_preheat", "feed_effluent"])
def test_a_jacobian_column_from_the_units_its_tear_reaches_is_the_whole_sweeps(demo, monkeypatch):
    """The forward-difference Jacobian sweeps only the units a shifted tear reaches (the others
    keep the whole sweep's states): each such column must equal g from a sweep of the whole block
    at the same point, within the units' own tolerance (cp(T) and film U: ~3e-10 K at 300 °C)."""
    import hxtrain.solver.simulation.engine as engine

    checked = []

    def checking(evaluate, x0, tolerance, max_iterations, one_tear):
        result = converge_tears(evaluate, x0, tolerance, max_iterations, one_tear)
        x = result.x
        for j in range(x.shape[1]):
            shifted = x.copy()
            shifted[:, j] += 3.0
            evaluate(x)
            partial = one_tear(shifted, j)
            np.testing.assert_allclose(partial, evaluate(shifted), rtol=0, atol=1e-8)
            checked.append(float(np.max(np.abs(partial - evaluate(x)))))  # the shift reached something
        return result

    monkeypatch.setattr(engine, "converge_tears", checking)
    result = simulate(load_case(demo_case_path(demo)))
    assert checked and max(checked) > 0.1
    assert result.balance["relative_imbalance"] < 1e-9  # the engine swept the answer whole again


def test_a_jacobian_column_sweeps_fewer_units_and_lands_on_the_same_answer(monkeypatch):
    """On the crude demo the three tears reach 10, 5 and 7 of the block's 13 units: the batch
    sweeps fewer units than with whole sweeps for every column, and its temperatures agree."""
    import hxtrain.solver.simulation.engine as engine
    from hxtrain.solver.simulation.batch import simulate_batch

    case = load_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": case.streams["crude"]["flow"] * np.linspace(0.7, 1.15, 50)}
    swept, sweep = [], engine._sweep
    monkeypatch.setattr(engine, "_sweep", lambda net, layout, units, *a: swept.append(len(units)) or sweep(
        net, layout, units, *a))
    partial = simulate_batch(case, values)
    partial_units = sum(swept)
    swept.clear()
    monkeypatch.setattr(engine, "converge_tears", lambda evaluate, x0, tol, most, one_tear: converge_tears(
        evaluate, x0, tol, most))
    whole = simulate_batch(case, values)
    assert partial_units < sum(swept)
    np.testing.assert_allclose(partial.temperature, whole.temperature, rtol=0, atol=1e-9)
