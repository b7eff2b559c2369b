"""Messages a new-user trial of the exchanger types, studies and benchmarks found misleading:
each test fails on the wording or behaviour it had."""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from hxtrain.network import case_from_mapping, load_case
from hxtrain.solver import simulate
from hxtrain.solver.demos import demo_case_path
from hxtrain.solver.reporting.display_units import Display
from hxtrain.solver.studies.specifications import _solved

from cli_helpers import run_in_process


def _messages(result, tag, kind):
    rows = result.findings[(result.findings["unit"] == tag) & (result.findings["kind"] == kind)]
    return [str(m) for m in rows["message"]]


def test_a_pinch_at_an_end_of_a_zone_rated_exchanger_is_not_called_inside():
    """The naphtha vaporiser's steam heater is closest at its cold end (0 % of the duty); it had
    been worded 'inside the exchanger at 0% of the duty'."""
    (message,) = _messages(simulate(load_case(demo_case_path("naphtha_vaporiser"))), "E-302", "approach")
    assert "at the cold end" in message and "inside" not in message


def test_a_crossed_multipass_zone_shell_reports_the_cross_not_an_approach():
    """A 1-3 shell with a temperature cross: the cross is the limit; the zones' own approach
    (positive, 4 K, while the outlets cross by 101 K) is not also given as a warning."""
    case = case_from_mapping({
        "fluids": {"oil": {"cp": 2.5}, "feed": {"enthalpy_curve": {"pressure": "600 kPa", "rows": [
            [20, 0.0, 0], [150, 300.0, 0], [165, 380.0, 0.3], [180, 470.0, 0.65], [195, 540.0, 0.95],
            [200, 560.0, 1], [300, 760.0, 1]]}}},
        "streams": {"oil": {"fluid": "oil", "flow": 10, "supply_temperature": 280, "path": "E-1.hot -> p1"},
                    "feed": {"fluid": "feed", "flow": 5, "supply_temperature": 100, "path": "E-1.cold -> p2"}},
        "exchangers": {"E-1": {"arrangement": "tema_e", "tube_passes": 3, "shell_side": "hot", "ua": 400}},
        "products": {"p1": {}, "p2": {}}})
    kinds = set(simulate(case).findings["kind"])
    assert "temperature_cross" in kinds and "approach" not in kinds


def test_a_plate_cross_is_worded_for_a_plate_pack():
    case = case_from_mapping({
        "fluids": {"gasoil": {"cp": 2.4}, "water": {"cp": 4.18}},
        "streams": {"h": {"fluid": "gasoil", "flow": 12, "supply_temperature": 220, "path": "P-2.hot -> ph"},
                    "c": {"fluid": "water", "flow": 5, "supply_temperature": 40, "path": "P-2.cold -> pc"}},
        "exchangers": {"P-2": {"arrangement": "plate", "passes": {"hot": 1, "cold": 2}, "shell_side": "hot",
                               "ua": 40}},
        "products": {"ph": {}, "pc": {}}})
    (message,) = _messages(simulate(case), "P-2", "temperature_cross")
    assert "inside a plate pack with passes" in message and "per pack" in message and "shell" not in message


def test_a_specification_out_of_reach_names_what_each_end_gives():
    """The low end gave the higher result: 'gives 95.0 °C to 65.0 °C at its ends' had read as min
    to max at the ends."""
    spec = SimpleNamespace(low=10.0, high=40.0, adjust="streams.oil.flow", adjust_unit=" kg/s", target_unit=" °C")
    message = _solved(spec, lambda x: 105.0 - x, 20.0, 1e-6, lambda *parts: parts[-1])
    assert "gives 95.0 °C at the low end, 65.0 °C at the high end, and from 65.0 °C to 95.0 °C" in str(message)


def test_a_conductance_in_a_message_is_converted_like_its_column():
    """A specification that adjusts a UA wrote kW/K in a US report, and its file column had no
    unit ending (``value``)."""
    assert Display("us").message("UA = 100 kW/K; U 350.0 W/m²/K") == "UA = 189,563 Btu/h·°F; U 61.6 Btu/h·ft²·°F"
    assert Display("si").message("fouling 0.00035 m²·K/W over 250.0 m²") == "fouling 0.00035 m²·K/W over 250.0 m²"


@pytest.mark.parametrize("options, named", [
    (("--properties", "fixed"), "--properties is for --sizes"),
    (("--sizes", "10", "--scenarios", "50"), "--scenarios is for the scenario benchmark"),
    (("--windows", "60"), "--windows is for --plant-data"),
    (("--plant-data", "--sizes", "10"), "give one of --plant-data and --sizes"),
])
def test_a_benchmark_option_that_does_not_apply_is_refused(capsys, options, named):
    """Each had been ignored without a word (a ladder 'with' 50 scenarios ran the ladder)."""
    code, out, err = run_in_process(capsys, "benchmark", *options)
    assert code == 2 and named in err and not out


def _supply_case(supply):
    return {"fluids": {"oil": {"cp": 2.5}, "feed": {"cp": {"polynomial": [2.0, 0.004]}, "valid_range": [20, 300]}},
            "streams": {"oil": {"fluid": "oil", "flow": 10, "supply_temperature": 280, "path": "E-1.hot -> p1"},
                        "feed": {"fluid": "feed", "flow": 5, "supply_temperature": supply, "path": "E-1.cold -> p2"}},
            "exchangers": {"E-1": {"arrangement": "counterflow", "ua": 20}},
            "products": {"p1": {}, "p2": {}}}


def test_a_supply_outside_its_fluid_data_is_refused_at_its_own_key(tmp_path, capsys):
    """`check` had accepted it and `run` blamed the fluid's data (fluids.feed...), not the supply."""
    import yaml

    path = tmp_path / "cold_feed.yaml"
    path.write_text(yaml.safe_dump(_supply_case(10.0)), encoding="utf-8")
    code, _, err = run_in_process(capsys, "check", path)
    assert code == 2 and "streams.feed.supply_temperature" in err and "outside the data range 20 to 300" in err


def test_a_batch_supply_outside_its_fluid_data_names_the_supply():
    from hxtrain.solver.simulation.batch import simulate_batch

    batch = simulate_batch(case_from_mapping(_supply_case(40.0)), {"streams.feed.supply_temperature": [40.0, 10.0]})
    assert list(batch.table["valid"]) == [True, False]
    assert batch.table.loc[1, "message"].startswith("streams.feed.supply_temperature: ")
    assert "outside the data range 20 to 300" in batch.table.loc[1, "message"]
