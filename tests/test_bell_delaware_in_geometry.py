"""The Bell–Delaware shell side as an option of the geometry path (``geometry.shell_side_method:
bell_delaware``).

References, named beside each check:

* ``hxtrain.units.bell_delaware.shell_side_bell_delaware`` called directly on the geometry the
  case describes: the film and the pressure drop a rated exchanger reports must be that
  function's (its ideal-bank fits and correction factors are checked against ChEDL ht's
  Bell–Delaware functions in ``test_bell_delaware_reference.py``).
* **No published worked example** is checked here: the numbers of Serth (2007, Example 6.1 on
  the Delaware method), Kakaç & Liu, Thulukkanam and Taborek (HEDH) could not be found to look
  up, and recalling them is not good enough to test against.
* The method's own physics (Taborek, HEDH 3.3, from memory): larger clearances leak more and
  lower h; sealing strips block the bypass lane and raise it; Kern's method stays the default.
* Synthetic truth: fouling back-calculated from noise-free terminal temperatures of a
  Bell–Delaware exchanger to 1e-8.
"""

from __future__ import annotations

import copy

import numpy as np
import pytest

from hxtrain.network import case_from_mapping
from hxtrain.solver import simulate
from hxtrain.solver.simulation.evaluation import evaluate
from hxtrain.units.bell_delaware import shell_side_bell_delaware

CP, MU, K, RHO = 2.2, 1.2e-3, 0.13, 850.0
SHELL = dict(shell_diameter=0.75, outer_diameter=0.01905, pitch=0.0254, layout="square", baffle_spacing=0.3,
             baffles=18, tubes=400)


def bd_case(**geometry):
    """A TEMA E shell rated from geometry; the hot stream in the shell; constant properties."""
    fluid = {"cp": CP, "viscosity": MU, "conductivity": K, "density": RHO}
    exchanger = {"arrangement": "tema_e", "shell_side": "hot",
                 "geometry": {"tube_outer_diameter": 0.01905, "tube_inner_diameter": 0.01483, "tube_length": 6.1,
                              "tubes": 400, "tube_pitch": 0.0254, "tube_layout": "square", "baffle_spacing": 0.3,
                              "baffles": 18, "shell_inner_diameter": 0.75, "wall_conductivity": 45,
                              "shell_side_method": "bell_delaware", "baffle_cut": 0.25, **geometry},
                 "pressure_drop": {"shell": {"allowable": "2 bar"}, "tube": {"allowable": "2 bar"}}}
    exchanger["geometry"] = {k: v for k, v in exchanger["geometry"].items() if v is not None}
    return {
        "fluids": {"oil": fluid},
        "streams": {"hot": {"fluid": "oil", "flow": 30.0, "supply_temperature": 250.0, "path": "E-1.hot -> hot_out"},
                    "cold": {"fluid": "oil", "flow": 60.0, "supply_temperature": 60.0, "path": "E-1.cold -> cold_out"}},
        "exchangers": {"E-1": exchanger},
        "products": {"hot_out": {}, "cold_out": {}},
    }


def row(case):
    result = simulate(case_from_mapping(case))
    assert result.converged
    return result.units.loc["E-1"]


@pytest.mark.parametrize("geometry, direct", [
    ({}, {}),
    ({"baffle_cut": 0.35, "sealing_strip_pairs": 2, "bundle_shell_clearance": "40 mm"},
     {"baffle_cut": 0.35, "sealing_strip_pairs": 2, "bundle_shell_clearance": 0.040}),
    ({"shell_baffle_clearance": "6 mm", "tube_baffle_clearance": "0.8 mm", "inlet_baffle_spacing": 0.45,
      "outlet_baffle_spacing": 0.5},
     {"shell_baffle_clearance": 0.006, "tube_baffle_clearance": 0.0008, "inlet_baffle_spacing": 0.45,
      "outlet_baffle_spacing": 0.5}),
])
def test_the_film_and_the_drop_are_the_bell_delaware_functions(geometry, direct):
    """h_shell and Δp_shell of the rated exchanger equal shell_side_bell_delaware on the same
    geometry (keys as the case gives them), at the shell flow, to 1e-12."""
    reported = row(bd_case(**geometry))
    expected = shell_side_bell_delaware(30.0, RHO, MU, 1000.0 * CP, K, {**SHELL, "baffle_cut": 0.25, **direct})
    assert reported["h_shell_w_m2_k"] == pytest.approx(float(expected.heat_transfer_coefficient), rel=1e-12)
    assert reported["dp_shell_kpa"] == pytest.approx(float(expected.pressure_drop) / 1000.0, rel=1e-12)


def test_kern_stays_the_default():
    """Without shell_side_method the results are Kern's, the same as with 'kern' written out."""
    kern = bd_case()
    geometry = kern["exchangers"]["E-1"]["geometry"]
    del geometry["shell_side_method"], geometry["baffle_cut"]
    written = copy.deepcopy(kern)
    written["exchangers"]["E-1"]["geometry"]["shell_side_method"] = "kern"
    assert row(kern).equals(row(written))
    assert row(kern)["h_shell_w_m2_k"] != pytest.approx(row(bd_case())["h_shell_w_m2_k"], rel=1e-3)


def test_leakage_and_bypass_move_h_the_way_the_method_says():
    """Larger shell-baffle and tube-baffle clearances leak more (J_l falls): h falls. Sealing strips
    block the bundle bypass (J_b rises): h rises (Taborek, HEDH 3.3, from memory)."""
    base = row(bd_case(bundle_shell_clearance="35 mm"))["h_shell_w_m2_k"]
    leaky = row(bd_case(bundle_shell_clearance="35 mm", shell_baffle_clearance="12 mm",
                        tube_baffle_clearance="1.6 mm"))["h_shell_w_m2_k"]
    sealed = row(bd_case(bundle_shell_clearance="35 mm", sealing_strip_pairs=3))["h_shell_w_m2_k"]
    assert leaky < 0.95 * base < sealed


def test_fouling_comes_back_from_a_bell_delaware_exchanger():
    """Synthetic truth (as test_back_calculation.py): fouling set, terminal temperatures simulated,
    fouling back-calculated through the unit's condition to 1e-8 relative; the clean U is the
    Bell–Delaware one at the window's flows."""
    from test_back_calculation import port_states

    case = bd_case()
    case["exchangers"]["E-1"]["fouling"] = {"shell": 0.0005, "tube": 0.0002}
    evaluation = evaluate(case_from_mapping(case))
    net = evaluation.net
    condition = net.units["E-1"].condition(port_states(net, evaluation.solution.temperature, "E-1"))
    truth = 0.0005 + 0.0002 * 0.01905 / 0.01483
    assert condition["fouling"][0] == pytest.approx(truth, rel=1e-8)
    assert np.isfinite(condition["h_shell"][0])
