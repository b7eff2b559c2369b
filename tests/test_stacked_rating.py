"""Units of one class rated together in one stacked call give each unit's own numbers.

The independent path is the unit-by-unit one (``protocol.one_by_one``: each unit's
``outlet_temperatures`` in turn). Stacking must change speed only: the tolerance is 1e-12 K.
"""

import copy

import numpy as np
import pytest

from hxtrain.network import build_network, case_from_mapping, load_case
from hxtrain.solver import demo_case_path
from hxtrain.solver.demos import DEMO_CASES
from hxtrain.solver.simulation import engine, evaluation
from hxtrain.solver.simulation.benchmark import fixed_property_variant
from hxtrain.solver.simulation.engine import solve_temperatures
from hxtrain.solver.simulation.sequencing import plan_calculation
from hxtrain.solver.simulation.size_ladder import SHAPES, ladder_case
from hxtrain.units import exchanger_model, protocol
from hxtrain.units.protocol import (StackedInlets, one_by_one, outlet_temperatures_together, reports_one_by_one,
                                   reports_together)

IDENTICAL = 1e-12


def _solve(mapping):
    """(the temperature solution, every unit's report there) of a case mapping."""
    case = case_from_mapping(mapping)
    net = build_network(case)
    solution = solve_temperatures(net, tolerance=case.settings.tolerance, max_iterations=case.settings.max_iterations,
                                  plan=plan_calculation(net.graph))
    return solution, evaluation.unit_reports(net, solution, np.broadcast_to(net.flow, solution.temperature.shape))


@pytest.mark.parametrize("properties", ["varying", "fixed"])
@pytest.mark.parametrize("shape", SHAPES)
def test_every_ladder_shape_solves_to_the_same_numbers_stacked_as_unit_by_unit(shape, properties, monkeypatch):
    """About 300 units of each shape (large blocks by Newton, whose sweeps rate units together):
    every segment temperature within 1e-12 K of the unit-by-unit sweep, in as many sweeps; and
    every unit's report, asked together by class, equal to the one asked alone."""
    calls = {"stacked": 0, "alone": 0}
    stacked_rating = protocol.outlet_temperatures_together

    def counted(label, rate):
        def rate_and_count(units, inlets):
            calls[label] += 1
            return rate(units, inlets)
        return rate_and_count

    monkeypatch.setattr(engine, "outlet_temperatures_together", counted("stacked", stacked_rating))
    together, reports = _solve(ladder_case(shape, 300, properties))
    monkeypatch.setattr(engine, "outlet_temperatures_together", counted("alone", one_by_one))
    monkeypatch.setattr(evaluation, "reports_together", reports_one_by_one)
    alone, own_reports = _solve(ladder_case(shape, 300, properties))
    for name, report in reports.items():
        _assert_same_report(report, own_reports[name])
    assert together.converged.all() and alone.converged.all()
    assert np.all(np.isfinite(together.temperature))
    assert np.max(np.abs(together.temperature - alone.temperature)) <= IDENTICAL
    assert calls["stacked"] == calls["alone"]  # same sweeps, same iterations
    assert calls["stacked"] > 0  # side by side too: its small independent blocks are merged into one


def _perturbed_inlets(net, temperature, units, batch, rng):
    """Each unit's converged inlets, shifted by up to 20 K and scaled by 0.7-1.3 in flow, per scenario."""
    t = np.stack([temperature[:, net.inlets[n]] for n in units]) + rng.uniform(-20.0, 20.0, (len(units), batch, 1))
    m = np.stack([np.broadcast_to(net.flow, temperature.shape)[:, net.inlets[n]] for n in units])
    m = m * rng.uniform(0.7, 1.3, m.shape)
    return StackedInlets(t, m, [tuple(net.fluids[s] for s in net.inlets[n]) for n in units])


def _case(label):
    name, _, variant = label.partition(" ")
    if name in SHAPES:
        return case_from_mapping(ladder_case(name, 120, variant))
    return fixed_property_variant(demo_case_path(name)) if variant else load_case(demo_case_path(name))


@pytest.mark.parametrize("label", [*DEMO_CASES, "crude_preheat fixed", "chained varying", "side_by_side varying"])
def test_units_rated_together_equal_each_rated_alone(label, monkeypatch):
    """Every unit class with two or more units of each demo, of the crude demo with constant cp
    and fixed UA, and of two ladder shapes with cp varying (exchangers iterated on their mean
    cp, each stopping at its own pass; blends of one pair of feeds in different proportions), at
    the converged inlets shifted per scenario, some exchangers bypassed in part and UA or U
    varied per scenario: the stacked call equals each unit alone (fresh copies, so no warm
    start is shared) to 1e-12 K, and so does a second call (warm-started from the first); their
    reports too (every quantity, total and finding)."""
    case = _case(label)
    stacked_members = []
    rate = exchanger_model.rate_in_service

    def spied(*args, members=1, **kwargs):
        stacked_members.append(members)
        return rate(*args, members=members, **kwargs)

    monkeypatch.setattr(exchanger_model, "rate_in_service", spied)
    batch = 4
    net = build_network(case)
    solution = solve_temperatures(net, tolerance=case.settings.tolerance, max_iterations=case.settings.max_iterations,
                                  batch=batch, plan=plan_calculation(net.graph))
    rng = np.random.default_rng(7)
    for k, unit in enumerate(net.units.values()):
        names = {p.name for p in unit.parameters()}
        if "bypass.cold" in names and k % 3 == 0:
            unit.set_parameter("bypass.cold", rng.uniform(0.0, 0.3, batch))
        for varied in ("ua", "u"):
            if varied in names and k % 2 == 0:
                unit.set_parameter(varied, rng.uniform(0.8, 1.2, batch) * np.mean(getattr_value(unit, varied)))
    classes = {}
    for name, unit in net.units.items():
        if unit.inlets and unit.outlets:
            classes.setdefault((type(unit), len(unit.inlets), len(unit.outlets)), []).append(name)
    checked = 0
    for names in classes.values():
        if len(names) < 2:
            continue
        inlets = _perturbed_inlets(net, solution.temperature, names, batch, rng)
        together_units = copy.deepcopy([net.units[n] for n in names])
        alone_units = copy.deepcopy([net.units[n] for n in names])
        for _ in range(2):
            together = outlet_temperatures_together(together_units, inlets)
            alone = one_by_one(alone_units, inlets)
            assert together.shape == alone.shape == (len(names), batch, len(net.outlets[names[0]]))
            assert np.all(np.isfinite(alone))
            assert np.max(np.abs(together - alone)) <= IDENTICAL
            for report, own in zip(reports_together(together_units, inlets), reports_one_by_one(alone_units, inlets)):
                _assert_same_report(report, own)
        checked += len(names)
    assert checked >= 2
    if label not in DEMO_CASES:  # exchangers with a fixed UA and shared fluids: some rate stacked
        assert max(stacked_members) >= 2


def _assert_same_report(report, own):
    """Every number of two reports within round-off, every label, total and finding the same."""
    for field in ("quantities", "totals", "metrics", "highlights"):
        mine, theirs = getattr(report, field), getattr(own, field)
        assert mine.keys() == theirs.keys()
        for key in mine:
            np.testing.assert_allclose(mine[key], theirs[key], rtol=IDENTICAL, atol=IDENTICAL, err_msg=key)
    np.testing.assert_allclose(report.heat_added, own.heat_added, rtol=IDENTICAL, atol=IDENTICAL)
    assert report.labels == own.labels
    assert [(f.kind, f.severity, f.key) for f in report.findings] == [(f.kind, f.severity, f.key) for f in own.findings]
    for mine, theirs in zip(report.findings, own.findings):
        assert np.array_equal(mine.active, theirs.active) and list(mine.messages) == list(theirs.messages)


def getattr_value(unit, varied):
    """The unit's current UA or U (to vary about)."""
    return unit.spec.ua if varied == "ua" else unit.spec.thermal.u


def _same_names_other_options():
    """Exchangers that share an arrangement's name but not its options: crossflow shells joined
    in parallel flow and in counterflow, a one-tube-pass TEMA E with the tubes in counterflow and
    in parallel flow; constant cp and fixed UA (so they would stack), a hot stream back through
    all four (a countercurrent coupling)."""
    exchangers = {
        "E-1": {"arrangement": "crossflow", "mixed_side": "none", "shells": 4, "shells_flow": "parallel_flow", "ua": 17.0},
        "E-2": {"arrangement": "crossflow", "mixed_side": "none", "shells": 4, "ua": 9.0},
        "E-3": {"arrangement": "tema_e", "tube_passes": 1, "tube_flow": "parallel_flow", "shell_side": "hot", "ua": 12.0},
        "E-4": {"arrangement": "tema_e", "tube_passes": 1, "tube_flow": "counterflow", "shell_side": "hot", "ua": 12.0},
    }
    return {
        "fluids": {"oil": {"cp": 2.1}},
        "streams": {"cold": {"fluid": "oil", "flow": 6.0, "supply_temperature": 30.0,
                             "path": "E-1.cold -> E-2.cold -> E-3.cold -> E-4.cold -> out_cold"},
                    "hot": {"fluid": "oil", "flow": 5.0, "supply_temperature": 240.0,
                            "path": "E-4.hot -> E-3.hot -> E-2.hot -> E-1.hot -> out_hot"}},
        "exchangers": exchangers,
        "products": {"out_cold": {}, "out_hot": {}},
    }


def test_exchangers_that_differ_only_in_arrangement_options_never_rate_as_one(monkeypatch):
    """An arrangement compares equal to its name, so a stacking key made of it put E-1 (shells in
    parallel flow) with E-2 (shells in counterflow) and rated both as E-2: a converged, balanced
    and wrong answer that changed with the order of the units (found by the order-independence
    property test). The key now holds the arrangement's options and shells flow: the network
    solved by tear iteration and by Newton on every segment (stacked calls) equals the
    structured direct solve (no stacking, no iteration), and the stacked call equals each
    exchanger rated alone."""
    from hxtrain.solver import simulate
    from hxtrain.solver.simulation.linear_limit import direct_solve

    case = case_from_mapping(_same_names_other_options())
    net = build_network(case)
    keys = [net.units[t]._stacking_key([net.fluids[s] for s in net.inlets[t]]) for t in ("E-1", "E-2", "E-3", "E-4")]
    assert len(set(keys)) == 4
    exact = direct_solve(case, {"streams.cold.flow": np.array([6.0])})[0]
    by_tears = simulate(case)
    monkeypatch.setattr(engine, "LARGE_BLOCK_TEARS", 0)  # every cyclic block by Newton on all its segments
    by_newton = simulate(case)
    assert "Newton on every segment" in by_newton.tears["accelerators"].iloc[0]
    for result in (by_tears, by_newton):
        np.testing.assert_allclose(result.streams["temperature_c"].to_numpy(), exact, rtol=0, atol=1e-9)
    names = ["E-1", "E-2", "E-3", "E-4"]
    inlets = _perturbed_inlets(net, np.array([exact, exact]), names, 2, np.random.default_rng(3))
    together = outlet_temperatures_together(copy.deepcopy([net.units[n] for n in names]), inlets)
    alone = one_by_one(copy.deepcopy([net.units[n] for n in names]), inlets)
    assert np.max(np.abs(together - alone)) <= IDENTICAL
