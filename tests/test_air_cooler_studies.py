"""Air coolers in everything that changes a case: clean against fouled, the cleaning ranking,
study changes, specifications, sweeps and uncertainty, and the warning lines.

A trial found air coolers left out of all of these (their fouling ignored by --against-clean and
`cleaning`, their keys refused by study files, no F or approach warning). The independent path
for each number is the batch with the unit's own parameter set (``air_coolers.TAG.fouling``).
"""

from __future__ import annotations

import numpy as np
import pytest
import yaml

from hxtrain.network import CaseError, build_network, case_from_mapping, fouled_units, load_case, without_fouling
from hxtrain.network.batch import is_batchable
from hxtrain.network.changes import apply_change, key_kind
from hxtrain.network.scenarios import varied_paths
from hxtrain.network.study import load_study
from hxtrain.solver import simulate
from hxtrain.solver.demos import DEMO_CASES, demo_case_path
from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.solver.studies.clean_vs_fouled import compare_clean_and_fouled
from hxtrain.solver.studies.cleaning import cleaning_ranking
from hxtrain.solver.studies.monte_carlo import run_uncertainty
from hxtrain.solver.studies.specifications import solve_specifications, specification_table
from hxtrain.solver.studies.sweeps import run_sweep

from cli_helpers import run_in_process


def cooler_document(**cooler):
    """A gas-oil rundown cooled by exchanger E-1 (fouled) and air cooler A-1 (clean U and fouling)."""
    return {
        "title": "rundown cooling with an air cooler (invented)",
        "fluids": {"oil": {"cp": {"polynomial": [1.8, 0.0035]}}},
        "streams": {"gas_oil": {"fluid": "oil", "flow": 20.0, "supply_temperature": 180.0,
                                "path": "E-1.hot -> A-1 -> rundown"},
                    "crude": {"fluid": "oil", "flow": 25.0, "supply_temperature": 40.0, "path": "E-1.cold -> feed"}},
        "exchangers": {"E-1": {"arrangement": "tema_e", "shell_side": "hot", "area_per_shell": 80.0,
                               "film": {"shell": 1000.0, "tube": 800.0},
                               "reference_flow": {"shell": 20.0, "tube": 25.0},
                               "fouling": {"shell": 0.0003, "tube": 0.0}}},
        "air_coolers": {"A-1": {"tube_rows": 4, "tube_passes": 2,
                                "air": {"inlet_temperature": 35.0, "flow": 150.0},
                                "clean_u": 500.0, "area": 250.0, "fouling": 0.0006, **cooler}},
        "products": {"rundown": {}, "feed": {}},
    }


@pytest.fixture
def cooler_file(tmp_path):
    path = tmp_path / "cooling.yaml"
    path.write_text(yaml.safe_dump(cooler_document()), encoding="utf-8")
    return path


def _duty(result, tag):
    return float(result.units.loc[tag, "duty_kw"])


def test_clean_against_fouled_cleans_the_air_cooler_too():
    """The clean state is the batch with every fouling parameter at zero (an independent path: the
    units' own parameters), to 1e-9 K; the air cooler's lost duty is positive."""
    case = case_from_mapping(cooler_document())
    comparison = compare_clean_and_fouled(case)
    batch = simulate_batch(case, {"air_coolers.A-1.fouling": [0.0], "exchangers.E-1.fouling.shell": [0.0]})
    assert batch.temperature[0] == pytest.approx(comparison.clean.streams["temperature_c"].to_numpy(), abs=1e-9)
    assert comparison.exchangers.loc["A-1", "duty_lost_to_fouling_kw"] > 20.0
    assert comparison.exchangers.loc["A-1", "duty_clean_kw"] == pytest.approx(_duty(comparison.clean, "A-1"))
    assert fouled_units(case) == ["E-1", "A-1"]


def test_without_fouling_of_the_air_cooler_alone_matches_its_parameter_at_zero():
    case = case_from_mapping(cooler_document())
    batch = simulate_batch(case, {"air_coolers.A-1.fouling": [0.0006, 0.0]})
    clean = simulate(without_fouling(case, ["A-1"]))
    fouled = simulate(case)
    assert batch.temperature[1] == pytest.approx(clean.streams["temperature_c"].to_numpy(), abs=1e-9)
    assert batch.temperature[0] == pytest.approx(fouled.streams["temperature_c"].to_numpy(), abs=1e-9)
    assert _duty(clean, "A-1") > _duty(fouled, "A-1")
    with pytest.raises(CaseError, match="no exchanger or air cooler 'A-9'"):
        without_fouling(case, ["A-9"])


def test_the_cleaning_ranking_lists_a_fouled_air_cooler():
    case = case_from_mapping(cooler_document())
    ranking = cleaning_ranking(case).set_index("exchanger")
    assert set(ranking.index) == {"E-1", "A-1"}
    clean = simulate(without_fouling(case, ["A-1"]))
    assert ranking.loc["A-1", "exchanger_duty_gained_kw"] == pytest.approx(
        _duty(clean, "A-1") - _duty(simulate(case), "A-1"), abs=1e-9)


def test_a_study_cleans_scales_sweeps_and_samples_an_air_cooler(cooler_file, tmp_path):
    study_path = tmp_path / "study.yaml"
    study_path.write_text(yaml.safe_dump({
        "base": cooler_file.name,
        "variants": {"clean_a1": {"changes": [{"clean": "A-1"}]},
                     "bigger_a1": {"changes": [{"scale": "air_coolers.A-1.area", "by": 1.2}]}},
        "specifications": {"a1_for_60": {"adjust": "air_coolers.A-1.clean_u", "between": [200, 2000],
                                         "target": {"value": "A-1.outlet", "equals": 60.0}}},
        "sweeps": {"ambient": {"grid": {"air_coolers.A-1.air.inlet_temperature": [25.0, 35.0, 45.0]}}},
        "uncertainty": {"samples": 20, "inputs": {
            "air_coolers.A-1.air.inlet_temperature": {"distribution": "uniform", "low": 25.0, "high": 45.0}}},
    }), encoding="utf-8")
    study = load_study(study_path)
    clean = study.case(study.variants["clean_a1"][1])
    assert clean.air_coolers["A-1"]["fouling"] == 0.0
    assert study.case(study.variants["bigger_a1"][1]).air_coolers["A-1"]["area"] == pytest.approx(300.0)
    (spec,) = solve_specifications(study)
    assert spec.success and spec.achieved == pytest.approx(60.0, abs=1e-4)
    data = yaml.safe_load(cooler_file.read_text())
    data["air_coolers"]["A-1"]["clean_u"] = spec.value
    assert simulate(case_from_mapping(data)).units.loc["A-1", "hot_out_c"] == pytest.approx(60.0, abs=1e-4)
    assert "value_w_m2_k" in specification_table([spec])
    sweep = run_sweep(study, study.sweeps[0])
    for t_air, row in zip((25.0, 35.0, 45.0), sweep.itertuples()):
        data = yaml.safe_load(cooler_file.read_text())
        data["air_coolers"]["A-1"]["air"]["inlet_temperature"] = t_air
        single = simulate(case_from_mapping(data))
        assert row.heat_to_utilities_kw == pytest.approx(single.summary["heat_to_utilities_kw"], abs=1e-9)
    percentiles = run_uncertainty(study).percentiles.set_index("result")
    assert percentiles.loc["A-1.outlet", "p90"] > percentiles.loc["A-1.outlet", "p10"]


def test_a_missing_air_cooler_tag_is_named_with_the_nearest():
    data = cooler_document()
    with pytest.raises(CaseError, match="no exchanger or air cooler 'A-2' in the case; nearest: A-1"):
        apply_change(data, {"clean": "A-2"})
    data["air_coolers"]["A-1"].pop("fouling")
    data["air_coolers"]["A-1"].pop("clean_u")
    data["air_coolers"]["A-1"]["u"] = 400.0
    with pytest.raises(CaseError, match="air cooler 'A-1' has no fouling resistance to clean"):
        apply_change(data, {"clean": "A-1"})


@pytest.mark.parametrize("name", [*DEMO_CASES, "air_cooler_forms"])
def test_every_value_a_scenario_can_vary_is_a_study_key(name):
    """What the units declare they can vary (their parameters) is what study files may vary and
    scale: the two lists must not drift apart (air coolers had been left out of the second)."""
    if name == "air_cooler_forms":
        cases = [case_from_mapping(cooler_document()),
                 case_from_mapping(cooler_document(ua=90.0, clean_u=None, area=None, fouling=None)),
                 case_from_mapping(cooler_document(u=400.0, clean_u=None, fouling=None, air={
                     "inlet_temperature": 35.0, "fan_control": {"outlet_temperature": 60.0, "minimum_flow": 10.0,
                                                                "maximum_flow": 400.0}}))]
    else:
        cases = [load_case(demo_case_path(name))]
    for case in cases:
        for path in varied_paths(build_network(case)):
            assert is_batchable(path), path
            key_kind(path)


def test_an_air_cooler_warns_on_low_f_and_approach():
    data = cooler_document()
    data["settings"] = {"minimum_f": 0.99, "minimum_approach": 200.0}
    result = simulate(case_from_mapping(data))
    kinds = set(result.findings.loc[result.findings["unit"] == "A-1", "kind"])
    assert {"low_f", "approach"} <= kinds
    assert not {"low_f", "approach"} & set(simulate(case_from_mapping(cooler_document())).findings["kind"])


def test_an_air_cooler_without_flow_leaves_its_rating_blank():
    data = cooler_document()
    data["streams"]["gas_oil"]["path"] = "E-1.hot -> split"
    data["splitters"] = {"split": {"branches": {"main": {"fraction": 1.0, "path": "rundown"},
                                                "spare": {"fraction": 0.0, "path": "A-1 -> spare_out"}}}}
    data["products"]["spare_out"] = {}
    row = simulate(case_from_mapping(data)).units.loc["A-1"]
    assert row["duty_kw"] == 0.0
    assert all(np.isnan(row[c]) for c in ("ntu", "p", "f", "lmtd") if c in row)


def test_check_counts_air_coolers(cooler_file, capsys):
    code, out, _ = run_in_process(capsys, "check", cooler_file)
    assert code == 0 and "1 exchanger, 1 air cooler;" in out


def test_a_capital_u_on_an_air_cooler_is_taken_for_u(tmp_path, capsys):
    data = cooler_document(U=400.0, clean_u=None, fouling=None)
    for key in ("clean_u", "fouling"):
        data["air_coolers"]["A-1"].pop(key)
    path = tmp_path / "typo.yaml"
    path.write_text(yaml.safe_dump(data), encoding="utf-8")
    code, out, err = run_in_process(capsys, "check", path)
    assert code == 2 and "unknown key 'U' (did you mean 'u'?)" in err


def test_a_bypass_or_shell_asked_of_an_air_cooler_says_what_it_is():
    """It had been 'no exchanger 'A-1' in the case; nearest: E-1' while A-1 was in the case."""
    for change in ({"bypass": "A-1.hot", "fraction": 0.2}, {"add_shells": "A-1", "count": 1}):
        with pytest.raises(CaseError, match="'A-1' is an air cooler: bypasses and shells are changed on exchangers"):
            apply_change(cooler_document(), change)


def test_a_misspelt_uncertain_input_is_named_with_the_key_meant(cooler_file, tmp_path):
    """It had been refused as 'cannot vary within a batch', with no word of the slip."""
    study_path = tmp_path / "typo.yaml"
    study_path.write_text(yaml.safe_dump({"base": cooler_file.name, "uncertainty": {"inputs": {
        "air_coolers.A-1.air.inlet_temp": {"distribution": "uniform", "low": 25.0, "high": 45.0}}}}),
        encoding="utf-8")
    with pytest.raises(CaseError, match="did you mean air_coolers.A-1.air.inlet_temperature"):
        load_study(study_path)


def test_study_commands_show_the_base_case_display_units(tmp_path, capsys):
    """A case's settings.display_units had been honoured by run and report only: compare, sweep,
    uncertainty, cleaning and run --against-clean showed and wrote kW and °C."""
    data = cooler_document()
    data["settings"] = {"display_units": {"duty": "MW", "temperature": "degF"}}
    (tmp_path / "cooling.yaml").write_text(yaml.safe_dump(data), encoding="utf-8")
    study = tmp_path / "study.yaml"
    study.write_text(yaml.safe_dump({
        "base": "cooling.yaml", "variants": {"clean_a1": {"changes": [{"clean": "A-1"}]}},
        "sweeps": {"ambient": {"grid": {"air_coolers.A-1.air.inlet_temperature": [25.0, 35.0]}}},
        "uncertainty": {"samples": 5, "inputs": {
            "air_coolers.A-1.air.inlet_temperature": {"distribution": "uniform", "low": 25.0, "high": 45.0}}}}),
        encoding="utf-8")
    case = tmp_path / "cooling.yaml"
    for command in (("compare", study), ("sweep", study), ("uncertainty", study), ("cleaning", case),
                    ("run", case, "--against-clean")):
        code, out, err = run_in_process(capsys, *command)
        assert code == 0, err
        assert "MW" in out.replace("_mw", " MW") and "kW" not in out.replace("kW/K", ""), (command[0], out)
    code, out, err = run_in_process(capsys, "compare", study, "--out", tmp_path / "cmp.csv")
    assert code == 0 and "heat_to_utilities_mw" in (tmp_path / "cmp.csv").read_text(encoding="utf-8")
