"""Scale: tear sets that need no cycle enumeration, large blocks converged on all their segments,
flows and blends without dense steps, the linear limit, and the batch split that never slows.

Every check compares with an independent path: the structured direct solve of
``solver/simulation/linear_limit.py`` (no iteration) on constant-cp, fixed-UA networks, brute
force or the exact MILP for tear sets, one-by-one solves for batches. Timings are not tested
here (``hxtrain benchmark --sizes`` measures them).
"""

import itertools

import networkx as nx
import numpy as np
import pytest

from hxtrain.network import build_network, case_from_mapping, load_case
from hxtrain.solver import demo_case_path, simulate
from hxtrain.solver.simulation import batch as batch_module
from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.solver.simulation.benchmark import fixed_property_variant
from hxtrain.solver.simulation.linear_limit import direct_solve
from hxtrain.solver.simulation.sequencing import (choose_tears, disjoint_cycle_bound, greedy_tears,
                                                  plan_calculation)
from hxtrain.solver.simulation.size_ladder import SHAPES, ladder_case, unit_count


def acyclic_without(graph, tears):
    cut = nx.MultiDiGraph(graph)
    cut.remove_edges_from([(u, v, k) for u, v, k in graph.edges(keys=True) if k in set(tears)])
    return nx.is_directed_acyclic_graph(cut)


def assert_in_calculation_order(net, plan):
    """Every unit in one block of ``plan``, and every segment running forward between blocks or
    inside one."""
    position = {u: i for i, b in enumerate(plan) for u in b.units}
    assert sorted(position) == sorted(net.units) and sum(len(b.units) for b in plan) == len(net.units)
    for seg in net.segments:
        assert position[seg.source] <= position[seg.target]


def random_block(seed, nodes=7, edges=14):
    rng = np.random.default_rng(seed)
    graph = nx.MultiDiGraph()
    for k in range(edges):
        u, v = rng.integers(0, nodes, size=2)
        graph.add_edge(int(u), int(v), key=k)
    return graph


@pytest.mark.parametrize("seed", range(12))
def test_greedy_tears_break_every_cycle_and_the_bound_is_below_the_exact_minimum(seed):
    """On small random multigraphs: the greedy set leaves no cycle, and the disjoint-cycle bound
    never exceeds the minimum found by the exact MILP cover (itself checked by brute force in
    test_solver.py)."""
    graph = random_block(seed)
    greedy = greedy_tears(graph)
    assert acyclic_without(graph, greedy)
    exact, method = choose_tears(graph)
    assert method.startswith("minimum") and acyclic_without(graph, exact)
    assert disjoint_cycle_bound(graph) <= len(exact) <= len(greedy)


def test_a_long_countercurrent_coupling_gets_a_proven_minimum_tear_set_without_cycle_enumeration(monkeypatch):
    """600 exchangers in one block: no simple cycle is enumerated (nx.simple_cycles refused),
    and the greedy set equals the disjoint-cycle lower bound, so it is the fewest."""
    monkeypatch.setattr(nx, "simple_cycles", lambda *a, **k: pytest.fail("cycles enumerated on a large block"))
    net = build_network(case_from_mapping(ladder_case("countercurrent", 604, "fixed")))
    [block] = [b for b in plan_calculation(net.graph) if b.tears]
    assert len(block.units) == 600
    assert len(block.tears) == block.lower_bound == 599
    assert acyclic_without(net.graph.subgraph(block.units), block.tears)


@pytest.mark.parametrize("shape", SHAPES)
def test_every_ladder_shape_agrees_with_the_direct_linear_solve(shape):
    """Constant cp, fixed UA, about 300 units of each shape: the engine (large blocks by Newton on
    all their segments) within 1e-8 K of the structured direct solve, in a handful of
    iterations per block, balance closed. (The direct solve's own round-off grows with the
    torn segments: on 295 of them its answer is about 1e-9 K from satisfying every unit, the
    engine's about 1e-13 K.)"""
    case = case_from_mapping(ladder_case(shape, 300, "fixed"))
    result = simulate(case)
    direct = direct_solve(case)[0]
    assert np.max(np.abs(result.streams["temperature_c"].to_numpy() - direct)) < 1e-8
    assert result.balance["relative_imbalance"] < 1e-12
    assert max(result.tears["iterations"], default=0) <= 4


def test_tolerance_means_distance_from_the_solution_on_a_large_block():
    """A 400-exchanger countercurrent block with a loose tolerance: every segment lies within
    that tolerance of the direct solution (not merely a small last residual)."""
    case = case_from_mapping(ladder_case("countercurrent", 404, "fixed"))
    direct = direct_solve(case)[0]
    for tolerance in (1e-2, 1e-6):
        result = simulate(case, tolerance=tolerance)
        assert np.max(np.abs(result.streams["temperature_c"].to_numpy() - direct)) <= tolerance


def test_a_large_block_with_cp_varying_converges_in_a_handful_of_iterations():
    """cp linear in temperature on a 200-exchanger coupling: Newton with the coloured Jacobian
    converges in at most 6 iterations and the enthalpy balance closes."""
    result = simulate(case_from_mapping(ladder_case("countercurrent", 204, "varying")))
    assert result.tears["iterations"].max() <= 6
    assert result.balance["relative_imbalance"] < 1e-9
    assert "Newton" in result.tears["accelerators"].iloc[0]


def test_blends_follow_the_mass_of_each_supply():
    """Side-by-side trains blend a feed (70 kg/s) with a lighter one (30 kg/s): the blended
    segments carry 0.7/0.3 by mass of each fluid, so their cp is the mass-weighted mean."""
    mapping = ladder_case("side_by_side", 60, "fixed")
    net = build_network(case_from_mapping(mapping))
    cp_feed, cp_light = (mapping["fluids"][f]["cp"] for f in ("feed", "light_feed"))
    split = [s for s in net.segments if s.source.endswith("blend")]
    assert split
    for seg in split:
        assert float(np.asarray(net.fluids[seg.index].cp(np.array([100.0])))[0]) == pytest.approx(
            0.7 * cp_feed + 0.3 * cp_light, rel=1e-12)
        assert net.flow[0, seg.index] == pytest.approx(100.0, rel=1e-12)


def test_flows_by_supply_group_equal_flows_by_supply(monkeypatch):
    """A large network's flows are solved per group of supplies (fluid, utility) with a column
    per supply whose flow varies; a small one keeps each supply's share. Both give the same
    flows, the same groups on each segment and the same blends, with supply flows varied."""
    from hxtrain.network import flows as flows_module

    case = case_from_mapping(ladder_case("side_by_side", 60, "varying"))
    values = {"streams.T1light.flow": np.array([10.0, 30.0, 45.0]), "streams.T2heavy.flow": np.array([50.0, 70.0, 90.0])}
    by_supply = build_network(case, values)
    monkeypatch.setattr(flows_module, "SHARE_LIMIT", 0)
    by_group = build_network(case, values)
    np.testing.assert_allclose(by_group.flow, by_supply.flow, rtol=1e-12, atol=1e-12)
    t = np.array([[60.0], [150.0], [240.0]])
    for a, b in zip(by_group.fluids, by_supply.fluids):
        np.testing.assert_allclose(a.cp(t[:, 0]), b.cp(t[:, 0]), rtol=1e-12)


def test_varied_split_fractions_use_no_dense_matrix_and_match_single_solves(monkeypatch):
    """A sweep of a splitter fraction on a 330-unit network: the scenarios' flows come from the
    pass downstream (no recycle of flow; numpy's dense solve refused) and equal the flows of
    each scenario built alone."""
    mapping = ladder_case("side_by_side", 330, "fixed")
    case = case_from_mapping(mapping)
    fractions = np.array([0.2, 0.45, 0.8])
    path = "splitters.T3split.branches.a.fraction"
    monkeypatch.setattr(np.linalg, "solve", lambda *a, **k: pytest.fail("dense solve in the flows"))
    varied = build_network(case, {path: fractions})
    monkeypatch.undo()
    for i, x in enumerate(fractions):
        mapping["splitters"]["T3split"]["branches"]["a"]["fraction"] = x
        mapping["splitters"]["T3split"]["branches"]["b"]["fraction"] = 1.0 - x
        alone = build_network(case_from_mapping(mapping))
        np.testing.assert_allclose(varied.flow[i], alone.flow[0], rtol=1e-12, atol=1e-12)


def test_the_pass_downstream_equals_the_sparse_solve_of_each_scenario():
    """Varied split fractions without a recycle of flow are taken segment by segment downstream
    (:func:`flows.downstream_flows`); on random feed-forward patterns of I - A (repeated entries,
    three groups of supplies, a blend) it gives the block-diagonal sparse LU's flows, make-up
    and carried groups; a pattern with a loop is left to the sparse solve, and a zero on the
    diagonal makes that scenario singular."""
    from hxtrain.network import flows

    rng = np.random.default_rng(7)
    n, k = 40, 6
    rows, cols, values = list(range(n)), list(range(n)), [np.ones(k)] * n
    for r in range(1, n):
        for c in rng.choice(r, size=min(r, 2), replace=False):
            for _ in range(1 + (r % 3 == 0)):  # some entries twice: the sparse form sums them
                rows.append(r), cols.append(int(c)), values.append(-rng.uniform(0.05, 0.5, k))
    rows, cols, values = np.array(rows), np.array(cols), np.stack(values, axis=1)
    entry, groups = np.array([0, 1, 5]), np.array([0, 1, 2])
    supplies = rng.uniform(1.0, 10.0, (k, 3))
    order = flows.acyclic_order(rows, cols, n)
    assert order is not None and sorted(order) == list(range(n))
    flow, carried, makeup, singular = flows.downstream_flows(rows, cols, values, order, n, entry, supplies, groups)
    right = np.zeros((k, n, 3))
    right[:, entry, groups] = supplies
    reference, reference_singular = flows.solve_block_diagonal(rows, cols, values, n, right)
    assert not singular.any() and not reference_singular.any()
    np.testing.assert_allclose(flow, reference.sum(axis=2), rtol=1e-12, atol=1e-12)
    np.testing.assert_array_equal(carried, np.any(reference > 0.0, axis=0))
    assert makeup and set(makeup) == set(np.flatnonzero(carried.sum(axis=1) > 1))
    for s, shares in makeup.items():
        np.testing.assert_allclose(shares, reference[:, s, :], rtol=1e-12, atol=1e-12)
    assert flows.acyclic_order(np.append(rows, 0), np.append(cols, n - 1), n) is None  # n-1 feeds 0: a loop
    values[2, 3] = 0.0  # scenario 2: segment 3's diagonal entry is zero
    assert flows.downstream_flows(rows, cols, values, order, n, entry, supplies, groups)[3].tolist() == \
        [False, False, True, False, False, False]


def test_the_direct_solve_agrees_with_the_batch_on_the_fixed_property_crude_demo():
    case = fixed_property_variant(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 7)}
    batch = simulate_batch(case, values)
    assert batch.table["success"].all()
    assert np.max(np.abs(direct_solve(case, values) - batch.temperature)) < 1e-9


def test_the_demos_keep_their_tear_iteration():
    """The bundled demos' blocks are small: they keep the tear iteration with its exact tear set
    (their printed numbers are those of that path)."""
    for demo in ("crude_preheat", "feed_effluent"):
        result = simulate(demo_case_path(demo))
        assert set(result.tears["tear_method"]) == {"minimum cycle cover (MILP)"}
        assert "Newton on every segment" not in " ".join(result.tears["accelerators"])


def test_a_cheap_batch_stays_in_one_process_and_a_costly_one_splits(monkeypatch):
    """A case's first split-allowed batch is timed here; below the cost that pays for a process
    its batches never start one; above it, a later batch is split (this process solving a part)
    and agrees with one batch."""
    monkeypatch.setattr(batch_module, "PROCESS_MINIMUM", 8)
    case = batch_module.as_case(demo_case_path("crude_preheat"))
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 40)}  # three parts of 13-14
    whole = simulate_batch(case, values)

    def refuse(*args, **kwargs):
        raise AssertionError("a process pool was started for a cheap batch")

    monkeypatch.setattr(batch_module, "PROCESS_COST", 1e9)
    with monkeypatch.context() as m:
        m.setattr(batch_module, "ProcessPoolExecutor", refuse)
        cheap = [simulate_batch(case, values, workers=2) for _ in range(2)]
    started = []

    class Counted(batch_module.ProcessPoolExecutor):
        def __init__(self, workers, **kwargs):
            started.append(workers)
            super().__init__(workers, **kwargs)

    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    monkeypatch.setattr(batch_module, "FIXED_COST_SCENARIOS", 0.0)  # so that a few scenarios split
    monkeypatch.setattr(batch_module, "ProcessPoolExecutor", Counted)
    split = simulate_batch(case, values, workers=3)
    assert started == [2]  # two workers beside this process
    assert [r.processes for r in (whole, *cheap, split)] == [1, 1, 1, 3]  # what the benchmark prints
    for result in (*cheap, split):
        assert len(result.table) == 40 and result.table["success"].all()
        np.testing.assert_allclose(result.temperature, whole.temperature, rtol=0, atol=1e-9)


def test_a_batch_finds_its_calculation_order_once_for_all_its_parts(monkeypatch):
    """A large first batch's timed part, this process's part of the rest and the workers' parts
    share the order and tear sets found for the first part (part of every batch's fixed cost):
    one search, same answers."""
    from hxtrain.solver.simulation import evaluation

    monkeypatch.setattr(batch_module, "LEARNING_PART", 10)
    monkeypatch.setattr(batch_module, "PROCESS_MINIMUM", 8)
    monkeypatch.setattr(batch_module, "PROCESS_COST", 0.0)
    monkeypatch.setattr(batch_module, "FIXED_COST_SCENARIOS", 0.0)  # so that a few scenarios split
    path = demo_case_path("crude_preheat")
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 40)}  # a timed part of 10, two parts of 15
    whole = simulate_batch(path, values)
    searches = []
    search = evaluation.plan_calculation

    def counted(graph):
        searches.append(graph)
        return search(graph)

    monkeypatch.setattr(evaluation, "plan_calculation", counted)
    split = simulate_batch(path, values, workers=2)
    assert len(searches) == 1 and split.processes == 2
    assert [b.tears for b in split.plan] == [b.tears for b in whole.plan]
    np.testing.assert_allclose(split.temperature, whole.temperature, rtol=0, atol=1e-9)


def test_ladder_sizes_are_as_asked():
    for shape, units in itertools.product(SHAPES, (10, 100, 1000)):
        assert abs(unit_count(ladder_case(shape, units)) - units) <= 0.1 * units + 3


def test_independent_blocks_at_one_depth_merge_and_give_the_same_temperatures(monkeypatch):
    """Side-by-side trains: one cyclic block per train, none joined to another. They are merged
    into one block (converged on all its segments at once) whose units come before every unit
    they feed; the temperatures equal those of the trains solved one block at a time (tear
    iteration) within twice the tolerance, since each path is within the tolerance of the
    solution."""
    from hxtrain.solver.simulation import engine
    from hxtrain.solver.simulation.engine import solve_temperatures
    from hxtrain.solver.simulation.sequencing import plan_calculation

    case = case_from_mapping(ladder_case("side_by_side", 120, "varying"))
    net = build_network(case)
    plan = plan_calculation(net.graph)
    cyclic = [b for b in plan if b.tears]
    trains = sum(1 for s in net.segments if s.source.endswith("blend"))  # one blend per train
    assert len(cyclic) == 1 and len(cyclic[0].tears) == trains > 3
    assert cyclic[0].method.startswith(f"{trains} independent blocks merged")
    assert_in_calculation_order(net, plan)
    settings = dict(tolerance=case.settings.tolerance, max_iterations=case.settings.max_iterations)
    merged = solve_temperatures(net, plan=plan, **settings)
    monkeypatch.setattr(engine, "LARGE_BLOCK_TEARS", 10**9)  # neither merged nor converged by Newton
    separate_plan = plan_calculation(net.graph)
    assert len([b for b in separate_plan if b.tears]) == trains
    separate = solve_temperatures(net, plan=separate_plan, **settings)
    assert merged.converged.all() and separate.converged.all()
    assert np.max(np.abs(merged.temperature - separate.temperature)) <= 2 * case.settings.tolerance


@pytest.mark.parametrize("name", ["crude_preheat", "feed_effluent", "product_cooling"])
def test_small_networks_flows_dense_equal_the_sparse_solve(name, monkeypatch):
    """A small network's fixed-split flows come from a dense solve (no scipy at start-up); the
    sparse LU of large networks gives the same flows, blends and groups, here forced on the
    demos and on a side-by-side network with a varied supply flow."""
    from hxtrain.network import flows as flows_module

    cases = [(load_case(demo_case_path(name)), None),
             (case_from_mapping(ladder_case("side_by_side", 60, "varying")),
              {"streams.T1light.flow": np.array([10.0, 30.0, 45.0])})]
    for case, values in cases:
        dense = build_network(case, values)
        monkeypatch.setattr(flows_module, "DENSE_SEGMENTS", 0)
        sparse = build_network(case, values)
        monkeypatch.undo()
        assert len(dense.segments) <= flows_module.DENSE_SEGMENTS
        np.testing.assert_allclose(dense.flow, sparse.flow, rtol=1e-13, atol=1e-12)
        t = np.linspace(40.0, 300.0, 3)
        for a, b in zip(dense.fluids, sparse.fluids):
            np.testing.assert_allclose(a.cp(t), b.cp(t), rtol=1e-13)


def chained_with_boosts(units, properties):
    """Chained trains with a heater of fixed duty between each pair of trains: an acyclic unit
    fed by one train that feeds the next."""
    mapping = ladder_case("chained", units, properties)
    crude = mapping["streams"]["crude"]
    trains = sum(1 for tag in mapping["exchangers"] if tag.endswith("E0"))
    for t in range(1, trains):
        mapping["heaters"][f"boost{t}"] = {"duty": 150.0}
        crude["path"] = crude["path"].replace(f"-> T{t}E0.cold", f"-> boost{t} -> T{t}E0.cold")
    return mapping, trains


def test_chained_trains_converge_as_one_run_with_the_temperatures_of_block_by_block(monkeypatch):
    """Trains in series on one cold stream, a heater between each pair: the trains and the heaters
    between them are converged as one run (Newton on all its segments) in a handful of
    iterations, its units before every unit they feed; the temperatures equal those of the
    blocks solved one by one (no run: RUN_ELEMENTS 0) within twice the tolerance, since each
    path is within the tolerance of the solution."""
    from hxtrain.solver.simulation import block_runs, engine
    from hxtrain.solver.simulation.engine import solve_temperatures

    mapping, trains = chained_with_boosts(200, "varying")
    case = case_from_mapping(mapping)
    net = build_network(case)
    plan = plan_calculation(net.graph)
    assert len([b for b in plan if b.tears]) == trains > 2
    order = block_runs.with_runs(net, plan, 1, engine.LARGE_BLOCK_TEARS)
    [run] = [b for b in order if b.parts]
    assert len([p for p in run.parts if p.tears]) == trains and len(run.tears) == sum(len(b.tears) for b in plan)
    assert {f"boost{t}" for t in range(1, trains)} <= set(run.units) and "crude_out" not in run.units
    assert_in_calculation_order(net, order)
    settings = dict(tolerance=case.settings.tolerance, max_iterations=case.settings.max_iterations)
    joined = solve_temperatures(net, plan=plan, **settings)
    assert [o.block for o in joined.blocks if o.tears] == [run] and joined.iterations <= 6
    monkeypatch.setattr(block_runs, "RUN_ELEMENTS", 0)
    separate = solve_temperatures(net, plan=plan, **settings)
    assert len([o for o in separate.blocks if o.tears]) == trains
    assert joined.converged.all() and separate.converged.all()
    assert np.max(np.abs(joined.temperature - separate.temperature)) <= 2 * case.settings.tolerance


def test_a_run_that_does_not_converge_is_solved_block_by_block():
    """Allowed four iterations, a run of eleven trains (it takes five) is given up and its trains
    are solved one by one (four each): every scenario converged, an outcome per train, the
    temperatures those of the run within twice the tolerance."""
    from hxtrain.solver.simulation.engine import solve_temperatures

    case = case_from_mapping(ladder_case("chained", 120, "varying"))
    net = build_network(case)
    plan = plan_calculation(net.graph)
    tolerance = case.settings.tolerance
    run = solve_temperatures(net, plan=plan, tolerance=tolerance, max_iterations=50)
    [outcome] = [o for o in run.blocks if o.tears]
    assert outcome.block.parts and outcome.tears.iterations > 4
    by_block = solve_temperatures(net, plan=plan, tolerance=tolerance, max_iterations=4)
    cyclic = [o for o in by_block.blocks if o.tears]
    assert by_block.converged.all() and [o.block for o in cyclic] == [b for b in plan if b.tears]
    assert np.max(np.abs(run.temperature - by_block.temperature)) <= 2 * tolerance


def test_a_large_batch_keeps_its_blocks_and_a_plan_read_back_forms_its_runs_again():
    """Runs are formed for the batch at hand: none where the batch alone fills RUN_ELEMENTS; a plan
    read back from an evaluation (runs in it) is split into its blocks first, so a larger batch
    never inherits a run too large for it."""
    from hxtrain.solver.simulation.block_runs import RUN_ELEMENTS, unjoined, with_runs
    from hxtrain.solver.simulation.engine import LARGE_BLOCK_TEARS

    net = build_network(case_from_mapping(ladder_case("chained", 120, "fixed")))
    plan = plan_calculation(net.graph)
    assert with_runs(net, plan, RUN_ELEMENTS, LARGE_BLOCK_TEARS) == plan
    joined = with_runs(net, plan, 1, LARGE_BLOCK_TEARS)
    assert len(joined) < len(plan) and sorted(map(id, unjoined(joined))) == sorted(map(id, plan))
    assert with_runs(net, joined, RUN_ELEMENTS, LARGE_BLOCK_TEARS) == unjoined(joined)
    assert with_runs(net, joined, 1, LARGE_BLOCK_TEARS) == joined


def test_a_run_over_a_batch_gives_each_scenario_its_one_by_one_temperatures(monkeypatch):
    """Five crude flows through chained trains in one evaluation (one run over the batch, each
    scenario stopping on its own) against each flow alone with its blocks solved one by one:
    every success, the temperatures within twice the tolerance."""
    from hxtrain.solver.simulation import block_runs
    from hxtrain.solver.simulation.evaluation import evaluate

    case = case_from_mapping(chained_with_boosts(120, "varying")[0])
    flows = np.linspace(60.0, 140.0, 5)
    together = evaluate(case, {"streams.crude.flow": flows})
    assert [len(o.block.parts or ()) > 1 for o in together.solution.blocks if o.tears] == [True]
    monkeypatch.setattr(block_runs, "RUN_ELEMENTS", 0)
    alone = np.concatenate([evaluate(case, {"streams.crude.flow": [f]}).temperature for f in flows])
    assert together.success.all() and np.isfinite(alone).all()
    assert np.max(np.abs(together.temperature - alone)) <= 2 * case.settings.tolerance


def test_the_ladder_exponent_counts_a_shape_built_of_whole_trains():
    """A shape asked for 1,000 units may build 923 (whole trains): it counts among the sizes the
    exponent is fitted over; with fewer than two sizes the text says so instead of printing nan."""
    from hxtrain.solver.simulation.size_benchmark import STAGES, exponent, ladder_text

    rows = [{"shape": "side_by_side", "units": 923, "total": 0.5}, {"shape": "side_by_side", "units": 9282, "total": 5.0},
            {"shape": "chained", "units": 993, "total": 0.4}]
    assert exponent(rows, "side_by_side") == pytest.approx(np.log(10.0) / np.log(9282 / 923))
    assert np.isnan(exponent(rows, "chained"))
    timed = [dict(r, times=dict.fromkeys(STAGES, 0.0), peak=1.0, tears=1, tears_at_least=1, iterations=1,
                  converged=True) for r in rows]
    text = ladder_text(timed, "varying")
    assert "chained n/a (fewer than two sizes)" in text and "nan" not in text
    # the peak above the process's memory before the network: the interpreter's own is not the network's
    measured = ladder_text([dict(timed[0], peak=263.0, start=126.0)], "varying").splitlines()
    heading = next(line for line in measured if "peak MB" in line)
    row = next(line for line in measured if line.startswith("side_by_side"))
    assert heading.index("above") < heading.index("tears") and row.split()[-5:-3] == ["263", "137"], row
