"""Back-calculated U and fouling from terminal temperatures and flows (plant data, issue 11 item 4).

Synthetic truth (the strongest test for plant data): each exchanger is rated by hxtrain with a
known fouling resistance, and its outlet temperatures and flows are read back through the unit's
``condition``; the fouling must come back to 1e-8 relative for every arrangement the forward
rating supports (the registry's F, G, H, J and X shells, 1-1 and 1-3 E shells, plates, air-cooled
bundles and crossflow with both fluids mixed included), with bypasses, shells in series (in
counterflow and in parallel flow) and in parallel, either side in the shell, and at a throughput
far from the design point (a flow change must never be read as fouling).
"""

import itertools

import numpy as np
import pytest

from hxtrain.network import build_network, case_from_mapping
from hxtrain.solver.demos import demo_case_path
from hxtrain.solver.simulation.evaluation import evaluate
from hxtrain.units.protocol import PortStates

DIAMETER_RATIO = 19.05 / 14.83

ARRANGEMENTS = [
    ({"arrangement": "counterflow"}, "counterflow"),
    ({"arrangement": "double_pipe"}, "double pipe"),
    ({"arrangement": "parallel_flow"}, "parallel flow"),
    ({"arrangement": "tema_e"}, "1-2 shell"),
    ({"arrangement": "tema_e", "tube_passes": 4}, "1-4 shell, hot in the shell"),
    ({"arrangement": "tema_e", "tube_passes": 4, "shell_side": "cold"}, "1-4 shell, cold in the shell"),
    ({"arrangement": "tema_e", "shells": 3}, "three 1-2 shells in series"),
    ({"arrangement": "tema_e", "shells_in_parallel": 2}, "two 1-2 shells in parallel"),
    ({"arrangement": "crossflow", "mixed_side": "none"}, "crossflow, both unmixed"),
    ({"arrangement": "crossflow", "mixed_side": "hot"}, "crossflow, hot mixed"),
    ({"arrangement": "crossflow", "mixed_side": "cold"}, "crossflow, cold mixed"),
    ({"arrangement": "counterflow", "shells": 2, "bypass": {"cold": 0.2}}, "counterflow with a cold bypass"),
    ({"arrangement": "tema_e", "bypass": {"hot": 0.15, "cold": 0.1}}, "1-2 shell with both bypasses"),
    # the arrangements of the registry added with issue 16 (inverse by search where no closed form)
    ({"arrangement": "tema_e", "tube_passes": 1}, "1-1 shell, counterflow"),
    ({"arrangement": "tema_e", "tube_passes": 1, "tube_flow": "parallel_flow"}, "1-1 shell, parallel flow"),
    ({"arrangement": "tema_e", "tube_passes": 3}, "1-3 shell, hot in the shell"),
    ({"arrangement": "tema_e", "tube_passes": 3, "shell_side": "cold"}, "1-3 shell, cold in the shell"),
    ({"arrangement": "tema_f"}, "F shell, 4 tube passes"),
    ({"arrangement": "tema_f", "tube_passes": 8, "shell_side": "cold"}, "F shell, 8 tube passes"),
    ({"arrangement": "tema_g", "tube_passes": 1}, "G shell, 1 tube pass"),
    ({"arrangement": "tema_g", "shell_side": "cold"}, "G shell, 2 tube passes"),
    ({"arrangement": "tema_h", "tube_passes": 1, "shell_side": "cold"}, "H shell, 1 tube pass"),
    ({"arrangement": "tema_h"}, "H shell, 2 tube passes"),
    ({"arrangement": "tema_j", "tube_passes": 1}, "J shell, 1 tube pass"),
    ({"arrangement": "tema_j", "shell_inlets": 2, "shell_side": "cold"}, "J shell, 2 inlets, 2 tube passes"),
    ({"arrangement": "tema_j", "tube_passes": 4}, "J shell, 4 tube passes"),
    ({"arrangement": "tema_x"}, "X shell, shell fluid unmixed"),
    ({"arrangement": "tema_x", "shell_fluid_mixed": True, "shell_side": "cold"}, "X shell, shell fluid mixed"),
    ({"arrangement": "crossflow", "mixed_side": "both"}, "crossflow, both mixed"),
    ({"arrangement": "plate", "passes": {"hot": 2, "cold": 3}}, "plate 2-3, overall counterflow"),
    ({"arrangement": "plate", "passes": {"hot": 4, "cold": 2}, "overall_flow": "parallel_flow"},
     "plate 4-2, overall parallel flow"),
    ({"arrangement": "plate", "passes": {"hot": 2, "cold": 2}, "overall_flow": "parallel_flow"},
     "plate 2-2, overall parallel flow"),
    ({"arrangement": "plate", "passes": {"hot": 1, "cold": 3}, "channel_flow": "parallel_flow"},
     "plate 1-3, end passes in parallel flow"),
    ({"arrangement": "air_cooler", "tube_rows": 4, "tube_passes": 2, "shell_side": "cold"}, "air-cooled bundle 4-2"),
    ({"arrangement": "tema_g", "shells": 2, "shells_flow": "parallel_flow"}, "two G shells in parallel flow"),
    ({"arrangement": "tema_j", "shells": 3}, "three J shells in counterflow"),
]


def one_exchanger_case(extra, flow_factor=1.0, fouling=(0.0006, 0.0004), flows=(30.0, 40.0)):
    exchanger = {"shell_side": "hot", "area_per_shell": 150.0, "film": {"shell": 1100.0, "tube": 800.0},
                 "reference_flow": {"shell": 30.0, "tube": 40.0}, "fouling": {"shell": fouling[0], "tube": fouling[1]},
                 "tubes": {"outer_diameter": "19.05 mm", "inner_diameter": "14.83 mm", "wall_conductivity": 45}}
    exchanger.update(extra)
    return case_from_mapping({
        "fluids": {"oil": {"cp": {"polynomial": [1.8, 0.0035]}}, "crude": {"cp": {"polynomial": [1.75, 0.0037]}}},
        "streams": {
            "gas_oil": {"fluid": "oil", "flow": flows[0] * flow_factor, "supply_temperature": 260.0,
                        "path": "X-1.hot -> gas_oil_out"},
            "crude": {"fluid": "crude", "flow": flows[1] * flow_factor, "supply_temperature": 90.0,
                      "path": "X-1.cold -> crude_out"}},
        "exchangers": {"X-1": exchanger},
        "products": {"gas_oil_out": {}, "crude_out": {}},
    })


def port_states(net, temperature, name):
    """The unit's ports as a plant would measure them: the simulated segments."""
    flow = np.broadcast_to(net.flow, temperature.shape)
    ins, outs = net.inlets[name], net.outlets[name]
    return PortStates(temperature[:, ins], flow[:, ins], temperature[:, outs], flow[:, outs],
                      tuple(net.fluids[s] for s in ins), tuple(net.fluids[s] for s in outs))


def condition_of(case, name="X-1"):
    evaluation = evaluate(case)
    assert evaluation.success[0], evaluation.message[0]
    return evaluation.net.units[name].condition(port_states(evaluation.net, evaluation.solution.temperature, name))


@pytest.mark.parametrize("extra, label", ARRANGEMENTS, ids=[label for _, label in ARRANGEMENTS])
@pytest.mark.parametrize("flow_factor", [1.0, 0.55, 1.3])
def test_fouling_comes_back_from_noise_free_data(extra, label, flow_factor):
    """Synthetic truth: R_f = R_f,shell + R_f,tube·D_o/D_i (resistances referred to the outside
    area, Kern 1950 ch. 6, from memory) recovered to 1e-8 relative, at the design flow and at
    55 % and 130 % of it (U_clean is taken at the window's own flows)."""
    truth = 0.0006 + 0.0004 * DIAMETER_RATIO
    condition = condition_of(one_exchanger_case(extra, flow_factor))
    assert condition["reason"][0] == ""
    assert condition["fouling"][0] == pytest.approx(truth, rel=1e-8)


@pytest.mark.parametrize("flow_factor", [0.5, 0.8, 1.2])
def test_a_flow_change_is_not_read_as_fouling(flow_factor):
    """A clean exchanger at any throughput back-calculates to zero fouling: U falls with flow
    through the films, and U_clean at the same flows falls with it."""
    condition = condition_of(one_exchanger_case({"arrangement": "tema_e"}, flow_factor, fouling=(0.0, 0.0)))
    u_design = condition_of(one_exchanger_case({"arrangement": "tema_e"}, 1.0, fouling=(0.0, 0.0)))["u_service"][0]
    assert abs(condition["fouling"][0]) < 1e-12
    assert abs(condition["u_service"][0] - u_design) > 0.05 * u_design  # U really changed with flow


def test_every_exchanger_of_the_crude_demo():
    """The bundled crude train (cp(T), viscosity-corrected films, shells in series): each
    exchanger's fouling from the simulated terminal temperatures equals its case value."""
    evaluation = evaluate(demo_case_path("crude_preheat"))
    net, temperature = evaluation.net, evaluation.solution.temperature
    for name, unit in net.units.items():
        if not getattr(getattr(unit, "spec", None), "fouling", None):  # units with no fouling to find
            continue
        truth = unit.spec.fouling["shell"] + unit.spec.fouling["tube"] * unit.spec.thermal.diameter_ratio
        found = unit.condition(port_states(net, temperature, name))["fouling"][0]
        assert found == pytest.approx(truth, rel=1e-8), name


def test_heat_flowing_uphill_is_not_given_a_number():
    """Temperatures that cannot come from this exchanger (the cold side leaving hotter than the
    hot side entered) give NaN with a reason, never a fouling value."""
    case = one_exchanger_case({"arrangement": "counterflow"})
    net = build_network(case)
    states = PortStates(np.array([[200.0, 90.0]]), np.array([[30.0, 40.0]]), np.array([[150.0, 210.0]]),
                        np.array([[30.0, 40.0]]), tuple(net.fluids[s] for s in net.inlets["X-1"]),
                        tuple(net.fluids[s] for s in net.outlets["X-1"]))
    condition = net.units["X-1"].condition(states)
    assert np.isnan(condition["fouling"][0]) and condition["reason"][0]


def test_a_p_beyond_the_arrangement_limit_is_not_given_a_number():
    """A 1-2 shell cannot reach P_hot = 0.9 at R = 1 (its limit is 2/(2 + sqrt 2) = 0.586, Bowman
    et al. 1940, from memory): NaN with the reason, not a clipped UA."""
    case = one_exchanger_case({"arrangement": "tema_e"}, fouling=(0.0, 0.0))
    net = build_network(case)
    fluids = tuple(net.fluids[s] for s in net.inlets["X-1"])
    hot, cold = fluids
    # equal heat-capacity rates: pick the cold flow so that m·cp matches over these ranges
    t_hi, t_ho, t_ci = 260.0, 260.0 - 0.9 * 170.0, 90.0
    duty = 30.0 * (hot.enthalpy(t_hi) - hot.enthalpy(t_ho))
    t_co = t_ci + (t_hi - t_ho)
    m_cold = duty / (cold.enthalpy(t_co) - cold.enthalpy(t_ci))
    states = PortStates(np.array([[t_hi, t_ci]]), np.array([[30.0, m_cold]]), np.array([[t_ho, t_co]]),
                        np.array([[30.0, m_cold]]), fluids, fluids)
    condition = net.units["X-1"].condition(states)
    assert np.isnan(condition["ua"][0]) and "beyond" in condition["reason"][0]


@pytest.mark.parametrize("extra", [e for e, _ in ARRANGEMENTS[:4]])
def test_batches_of_states_back_calculate_element_by_element(extra):
    """Vectorized over windows: a batch of three operating points gives each one's answer."""
    conditions = [condition_of(one_exchanger_case(extra, f)) for f in (0.6, 1.0, 1.2)]
    evaluations = [evaluate(one_exchanger_case(extra, f)) for f in (0.6, 1.0, 1.2)]
    temperature = np.concatenate([e.solution.temperature for e in evaluations])
    net = evaluations[0].net
    flow = np.concatenate([np.broadcast_to(e.net.flow, e.solution.temperature.shape) for e in evaluations])
    ins, outs = net.inlets["X-1"], net.outlets["X-1"]
    states = PortStates(temperature[:, ins], flow[:, ins], temperature[:, outs], flow[:, outs],
                        tuple(net.fluids[s] for s in ins), tuple(net.fluids[s] for s in outs))
    batch = net.units["X-1"].condition(states)
    for k, single in enumerate(conditions):
        for key in ("duty", "ua", "u_service", "u_clean", "fouling"):
            assert batch[key][k] == pytest.approx(single[key][0], rel=1e-12), key


def test_both_bases_give_the_same_fouling():
    """The inverse is evaluated on the side with the smaller C: the hot side in one order of the
    flows, the cold side in the other; both give the fouling back."""
    for flows in itertools.permutations((20.0, 60.0)):
        condition = condition_of(one_exchanger_case({"arrangement": "tema_e", "tube_passes": 4}, flows=flows))
        assert condition["fouling"][0] == pytest.approx(0.0006 + 0.0004 * DIAMETER_RATIO, rel=1e-8)
