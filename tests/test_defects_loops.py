"""Loops that ask for the impossible, found by a new user's trial against an independent
linear solver (every answer agreed to 1e-9 K; these are the failures around them).

* A cooler inside a 50 % recycle taking 1000 kW from oil (cp 2 kJ/kg·K, 1 kg/s fed): 2 kg/s pass
  the cooler, so by hand T_mix = (100 + T_c) / 2 and T_c = T_mix - 1000 / (2 x 2) = T_mix - 250,
  whose only solution is T_c = -400 °C, below absolute zero: no answer.
* The iteration stops as soon as a scenario's numbers are gone (NaN cannot come back by any
  step), and a unit's own inner iterations stop on them too: with cp(T) the case had taken
  158 s (500 outer iterations, each exchanger and enthalpy inversion iterating to its limit).
"""

from __future__ import annotations

import time

import numpy as np
import pytest

from hxtrain.network import case_from_mapping
from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.solver.simulation.engine import ConvergenceError
from hxtrain.solver.simulation.results import simulate


def _loop(cp):
    return {"title": "cooler inside a recycle", "fluids": {"oil": {"cp": cp}},
            "streams": {"s": {"fluid": "oil", "flow": 1, "supply_temperature": 100, "path": "mx"}},
            "mixers": {"mx": {"path": "C-1 -> sp"}},
            "splitters": {"sp": {"branches": {"r": {"fraction": 0.5, "path": "mx"},
                                              "n": {"fraction": 0.5, "path": "p"}}}},
            "coolers": {"C-1": {"duty": 1000}}, "products": {"p": {}}}


@pytest.mark.parametrize("cp", [2.0, {"polynomial": [1.8, 0.002]}])
def test_an_impossible_loop_stops_soon_and_says_why(cp):
    """No answer, a message that says the temperatures left the physical range, within seconds
    (one iteration loop's worth, not 500)."""
    start = time.process_time()
    with pytest.raises(ConvergenceError, match="left the physical range on the way") as error:
        simulate(case_from_mapping(_loop(cp)))
    assert time.process_time() - start < 20.0
    assert error.value.diagnostics["iterations"] < 50


def test_the_same_duty_that_the_loop_can_carry_converges():
    """Hand check at 100 kW: T_mix = (100 + T_c) / 2 and T_c = T_mix - 100 / 4, so T_mix = 75 °C
    and T_c = 50 °C."""
    case = _loop(2.0)
    case["coolers"]["C-1"]["duty"] = 100
    streams = simulate(case_from_mapping(case)).streams
    assert streams.loc[streams["segment"] == "C-1 -> sp", "temperature_c"].item() == pytest.approx(50.0, abs=1e-6)


def test_each_scenario_counts_its_own_iterations():
    """A batch where one scenario cannot be answered: the others report the iterations they took,
    not the failing one's (the sweep had shown 500 against every converged point)."""
    case = _loop(2.0)
    result = simulate_batch(case_from_mapping(case), {"coolers.C-1.duty": np.array([50.0, 100.0, 1000.0])})
    table = result.table
    assert table["success"].tolist() == [True, True, False]
    assert (table["iterations"][:2] < 50).all() and "left the physical range" in table["message"][2]
