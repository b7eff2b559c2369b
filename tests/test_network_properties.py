"""Property-based tests (hypothesis) of network invariants over generated valid networks.

The networks come from ``network_generator.py`` (see its docstring): trains with splitters and
mixers, exchanger bypasses, countercurrent couplings (hot streams meeting the cold train in the
reverse order), true recycles (a splitter branch with fraction < 1 back to an upstream mixer,
locally or around a whole feed-effluent loop), heaters (target outlet or fixed duty) and
coolers, every exchanger arrangement of the registry with the options each takes (TEMA E with 1,
3 or 2-8 tube passes, F, G, H, J and X shells, crossflow mixed either way, plates by passes and
flow directions, air-cooled bundles by rows and passes, shells in series in overall parallel
flow: ``network_generator.EVERY_ARRANGEMENT``), and air coolers (the ``air_coolers`` unit
section: air as a utility with a fixed flow anywhere on a hot path, or with fan control at the
end of one); up to about 50 units (at most 12 exchangers and 6 split or
recycle blocks, to keep the default run near a minute). Every decision is a hypothesis draw,
so a failing network shrinks to a small one.

Properties (GUIDE.md, "Tests"):

* the solve converges (no exception) and the overall energy balance closes:
  ``result.balance['relative_imbalance'] <= 1e-9``;
* second law: no exchanger or air cooler moves heat from the colder to the hotter stream —
  ``duty_kw`` has the sign of ``hot_in_c - cold_in_c`` (an air cooler: process in minus air in)
  and each side's outlet (the process and the air) lies between the two inlets;
  (these first two are checked on every generated network, in all three tests below)
* every stream temperature lies in the envelope [min, max] of the supply temperatures, the
  heater/cooler target temperatures and the air coolers' air temperatures. Fixed duties can leave that envelope, so this property is
  checked on networks generated **without fixed-duty heaters or coolers** (``fixed_duty=False``);
* the result does not depend on the order in which the case lists its units: every section's
  entries, every splitter's branches and the top-level keys shuffled give the same segment
  temperatures to 1e-9 K (compared per segment label).
* units rated together in one stacked call (exchangers of one stacking key) give what each gives
  alone, at random inlets: outlets to 1e-12 K, every number of the reports to round-off.

Examples per property: the hypothesis profile (``tests/conftest.py``): ``default`` 150,
``thorough`` 2000 (``--hypothesis-profile=thorough`` or ``HXTRAIN_HYPOTHESIS_PROFILE=thorough``).
The number of networks checked and the slowest convergence are printed in pytest's terminal
summary.
"""

from __future__ import annotations

import random

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from hxtrain.network import case_from_mapping
from hxtrain.solver import simulate

from network_generator import AIR_COOLER_KINDS, EVERY_ARRANGEMENT, DrawChooser, RandomChooser, air_temperatures, \
    generate_case, has_fixed_duty, record, shuffled

ENERGY_CLOSURE = 1e-9
"""Largest relative imbalance accepted (the sequential-modular answer is polished to round-off)."""
SLACK_K = 1e-9
"""Temperature slack for the second-law and envelope checks, and the order-independence bound."""


@st.composite
def networks(draw, fixed_duty=True):
    """A valid generated case dict (see network_generator.generate_case)."""
    return generate_case(DrawChooser(draw), fixed_duty=fixed_duty, arrangements=EVERY_ARRANGEMENT,
                         air_coolers=AIR_COOLER_KINDS)


def _run(data, test_name, events=True):
    """Simulate a generated case and check what every solved network must satisfy: convergence
    without exception, energy closure and the second law in every exchanger. ``events``: count
    its features as hypothesis events (inside a hypothesis test only)."""
    case = case_from_mapping(data, "<generated>")
    result = simulate(case)
    record(test_name, result, data if events else None)
    check_converged_and_energy_closes(result)
    check_no_heat_flows_uphill(result, data)
    return case, result


def check_converged_and_energy_closes(result):
    """The solve converged to finite temperatures and the overall enthalpy balance closes to 1e-9."""
    assert result.converged
    assert np.all(np.isfinite(result.streams["temperature_c"]))
    assert result.balance["relative_imbalance"] <= ENERGY_CLOSURE, result.balance


def check_no_heat_flows_uphill(result, data):
    """Second law per exchanger and air cooler: sign(duty) = sign(T_hot,in − T_cold,in) (zero
    duty only at equal inlets), and both outlets between the two inlet temperatures (an air
    cooler's hot side is the process, its cold side the air)."""
    ex = result.units[result.units["type"].isin(["exchanger", "air cooler"])]
    assert len(ex) == len(data["exchangers"]) + len(data.get("air_coolers", {}))
    for tag, row in ex.iterrows():
        difference = row["hot_in_c"] - row["cold_in_c"]
        duty = row["duty_kw"]
        assert duty * difference >= 0.0, ("heat moved from cold to hot", tag, row.to_dict())
        if difference != 0.0:
            assert duty != 0.0, ("no duty across a temperature difference", tag, row.to_dict())
        low = min(row["hot_in_c"], row["cold_in_c"]) - SLACK_K
        high = max(row["hot_in_c"], row["cold_in_c"]) + SLACK_K
        for column in ("hot_out_c", "cold_out_c"):
            assert low <= row[column] <= high, ("outlet outside the inlets", tag, column, row.to_dict())


@given(networks())
def test_converges_closes_energy_and_moves_heat_only_downhill(data):
    """On networks with fixed-duty and target heaters/coolers: the solve converges (no
    exception), the energy balance closes to 1e-9 relative, and no exchanger moves heat from the
    colder stream to the hotter one (these three checks also run on every network of the other
    two properties)."""
    _run(data, "converges_energy_second_law")


@given(networks(fixed_duty=False))
def test_temperatures_stay_inside_supply_and_target_envelope(data):
    """No fixed duties (by construction): every segment temperature within [min, max] of the supply
    temperatures, the heater/cooler target temperatures and the air temperatures."""
    assert not has_fixed_duty(data)
    _, result = _run(data, "inside_envelope")
    check_inside_envelope(result, data)


def check_inside_envelope(result, data):
    """Every segment temperature within [min, max] of the supply, target and air temperatures."""
    levels = [s["supply_temperature"] for s in data["streams"].values()] + air_temperatures(data)
    for section in ("heaters", "coolers"):
        levels += [d["outlet_temperature"] for d in data.get(section, {}).values()]
    t = result.streams["temperature_c"]
    assert t.min() >= min(levels) - SLACK_K, (t.min(), min(levels))
    assert t.max() <= max(levels) + SLACK_K, (t.max(), max(levels))


@given(networks(), st.integers(0, 2**32 - 1))
def test_result_does_not_depend_on_unit_order(data, seed):
    """The same network with every section, every splitter's branches and the top-level keys in
    another order gives the same temperature on every segment (matched by label) to 1e-9 K."""
    check_order_independent(data, seed, "order_independent")


@pytest.mark.parametrize("seed", [3, 8])
@pytest.mark.parametrize("arrangement", EVERY_ARRANGEMENT)
def test_every_arrangement_in_generated_networks(arrangement, seed):
    """Each arrangement for certain (the draws above reach each only by chance): networks whose
    every exchanger has it, its options drawn, pass the same three properties: convergence with
    energy closure to 1e-9, no heat moved uphill, and order independence to 1e-9 K."""
    chooser = RandomChooser(1000 * seed + EVERY_ARRANGEMENT.index(arrangement))
    data = generate_case(chooser, max_exchangers=8, arrangements=(arrangement,))
    check_order_independent(data, seed, f"arrangement {arrangement}", events=False)
    assert {e["arrangement"] for e in data["exchangers"].values()} == {arrangement}


@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("kinds", [("fixed",), ("fan",), AIR_COOLER_KINDS])
def test_air_coolers_in_generated_networks(kinds, seed):
    """Air coolers for certain (the draws above reach them only by chance): networks of every
    arrangement with air coolers of the kinds asked for (a fixed air flow, fan control, both) pass
    the same properties: convergence with energy closure to 1e-9, no heat moved uphill in any
    exchanger or air cooler, order independence to 1e-9 K; and, without fixed duties, the
    envelope of supply, target and air temperatures."""
    found, checked = set(), 0
    for draw in range(10):  # fixed seeds, every network checked, until both duty modes and each kind are seen
        fixed_duty = draw % 2 == 0
        chooser = RandomChooser(1000 * seed + 100 * draw + 10 * len(kinds) + AIR_COOLER_KINDS.index(kinds[0]))
        data = generate_case(chooser, max_exchangers=8, fixed_duty=fixed_duty, arrangements=EVERY_ARRANGEMENT,
                             air_coolers=kinds)
        result = check_order_independent(data, seed, f"air coolers {'+'.join(kinds)}", events=False)
        if not fixed_duty:
            check_inside_envelope(result, data)
        found |= {"fan" if "fan_control" in d["air"] else "fixed" for d in data.get("air_coolers", {}).values()}
        checked += 1
        if checked >= 2 and found == set(kinds):
            break
    assert found == set(kinds), (found, kinds)


def check_order_independent(data, seed, test_name, events=True):
    """The checks of :func:`_run` and the same network shuffled (``seed``) matching it; returns the
    first result."""
    _, first = _run(data, test_name, events)
    other = shuffled(data, random.Random(seed))
    second = simulate(case_from_mapping(other, "<shuffled>"))
    a = first.streams.set_index("segment")["temperature_c"]
    b = second.streams.set_index("segment")["temperature_c"]
    assert a.index.is_unique and set(a.index) == set(b.index)
    difference = (a - b.loc[a.index]).abs()
    assert difference.max() <= SLACK_K, difference.sort_values().tail(5)
    return first


@given(networks(), st.integers(0, 2**32 - 1))
def test_units_rated_together_equal_each_rated_alone(data, seed):
    """Every unit class that rates several units in one stacked call (exchangers of one stacking
    key) gives each unit of a generated network what it gives alone, at random inlet
    temperatures (10-300 °C, either side the hotter) and flows (0.5-1.5 times the network's),
    three scenarios: outlets to 1e-12 K and every number of the reports to round-off. A key
    that leaves out something the rating reads (an arrangement's options) fails here whatever
    the order of the units or the path the solver takes."""
    import copy

    from hxtrain.network import build_network
    from hxtrain.units.protocol import StackedInlets, one_by_one, outlet_temperatures_together, reports_one_by_one, \
        reports_together

    net = build_network(case_from_mapping(data, "<generated>"))
    rng = np.random.default_rng(seed)
    classes = {}
    for name, unit in net.units.items():
        if unit.inlets and unit.outlets and hasattr(type(unit), "outlet_temperatures_together"):
            classes.setdefault((type(unit), len(unit.inlets), len(unit.outlets)), []).append(name)
    for names in classes.values():
        if len(names) < 2:
            continue
        t = rng.uniform(10.0, 300.0, (len(names), 3, len(net.inlets[names[0]])))
        m = np.stack([np.broadcast_to(net.flow, (3, len(net.segments)))[:, net.inlets[n]] for n in names])
        inlets = StackedInlets(t, m * rng.uniform(0.5, 1.5, m.shape),
                               [tuple(net.fluids[s] for s in net.inlets[n]) for n in names])
        units = [net.units[n] for n in names]
        together = outlet_temperatures_together(copy.deepcopy(units), inlets)
        alone = one_by_one(copy.deepcopy(units), inlets)
        np.testing.assert_allclose(together, alone, rtol=0, atol=1e-12, equal_nan=True)
        for mine, own in zip(reports_together(copy.deepcopy(units), inlets), reports_one_by_one(copy.deepcopy(units), inlets)):
            for key in own.quantities:
                np.testing.assert_allclose(mine.quantities[key], own.quantities[key], rtol=1e-12, atol=1e-12,
                                           equal_nan=True, err_msg=key)
            assert mine.labels == own.labels
            assert [(f.kind, f.key) for f in mine.findings] == [(f.kind, f.key) for f in own.findings]
