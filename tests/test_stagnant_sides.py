"""An exchanger with nothing flowing through one side while the other side flows: its outlet on
that side is its inlet and it has no duty, but what stands in that side goes towards the other
side's inlet temperature, and liquid blocked in there and heated needs thermal relief (common
practice). It is a warning, named with the side and the temperature, per scenario."""

import copy

import numpy as np

from hxtrain.network import case_from_mapping
from hxtrain.network.reading import read_document
from hxtrain.solver import demo_case_path
from hxtrain.solver.simulation.evaluation import evaluate
from hxtrain.solver.simulation.results import simulate

CRUDE = demo_case_path("crude_preheat")


def _crude_with_north_share(share):
    data = copy.deepcopy(read_document(CRUDE).data)
    branches = data["splitters"]["crude_split"]["branches"]
    branches["north"]["fraction"], branches["south"]["fraction"] = share, 1.0 - share
    return case_from_mapping(data, str(CRUDE))


def test_a_closed_branch_warns_of_the_stagnant_side_of_its_exchangers():
    result = simulate(_crude_with_north_share(0.0))
    warned = result.findings[result.findings["kind"] == "no_flow"].set_index("unit")
    assert list(warned.index) == ["E-105", "E-106"]
    for unit in warned.index:
        hot_in = result.units.loc[unit, "hot_in_c"]
        assert result.units.loc[unit, "duty_kw"] == 0.0
        assert warned.loc[unit, "severity"] == "warning"
        assert f"no flow through the cold side while the hot side flows at {hot_in:.1f} °C" in warned.loc[unit, "message"]
    assert "no_flow" in result.units.loc["E-105", "findings"] and "no_flow" not in result.units.loc["E-107", "findings"]


def test_the_warning_is_per_scenario_and_absent_where_both_sides_flow():
    assert not (simulate(CRUDE).findings["kind"] == "no_flow").any()
    evaluation = evaluate(CRUDE, {"splitters.crude_split.branches.north.fraction": np.array([0.5, 0.0, 0.3])})
    assert evaluation.success.all()
    warned = {unit: list(np.broadcast_to(f.active, (3,))) for unit, f in evaluation.findings if f.kind == "no_flow"
              and f.active.any()}
    assert warned == {"E-105": [False, True, False], "E-106": [False, True, False]}
