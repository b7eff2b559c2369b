"""Regression tests for defects in what a run reports (issue "defects", items 5, 6, 7, 10, 11)
and for the one evaluation path that one case and a batch now share.

* 5: cleaning answers show the limits of the cleaned cases;
* 6: a heater or cooler whose inlet is already past its target idles with a warning, in every
  command, and one scenario with no answer does not abort a study;
* 7: totals say what they add (fired heaters, other heaters, coolers, utility exchangers,
  process-to-process recovery);
* 10: temperatures past the physical range and unclosed balances never come back as answers;
* 11: an idle heater is not refused on round-off.
"""

from __future__ import annotations

import copy

import numpy as np
import pytest
import yaml

from hxtrain.network import CaseError, case_from_mapping, load_case
from hxtrain.solver import ConvergenceError, demo_case_path, simulate
from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.solver.cli.main import main
from hxtrain.solver.simulation.evaluation import CHECK_FAILED, NOT_VALID, SUCCESS, evaluate
from hxtrain.solver.studies.clean_vs_fouled import compare_clean_and_fouled
from hxtrain.solver.studies import cleaning_ranking, compare
from hxtrain.network.study import load_study
from hxtrain.units import stream_units

ONE_COOLER = {
    "fluids": {"oil": {"cp": 2.0}},
    "streams": {"oil": {"fluid": "oil", "flow": 1.0, "supply_temperature": 20.0, "path": "C-1 -> out"}},
    "coolers": {"C-1": {"duty": 1000.0}},
    "products": {"out": {}},
}


def _with(data, **changes):
    data = copy.deepcopy(data)
    for path, value in changes.items():
        node = data
        *parents, last = path.split("__")
        for part in parents:
            node = node[part]
        node[last] = value
    return data


# ----------------------------------------------------------------------------- item 10


@pytest.mark.parametrize("cp", [2.0, {"polynomial": [2.0]}])
def test_a_cooler_that_would_pass_absolute_zero_is_refused(cp):
    """1000 kW from 1 kg/s of a 2 kJ/kg·K oil at 20 °C would put it at -480 °C: bad input, for a
    constant cp and for the same cp written as a polynomial (which used to clamp at -273.15 °C
    and report 'converged')."""
    case = case_from_mapping(_with(ONE_COOLER, fluids__oil__cp=cp))
    with pytest.raises(CaseError, match="no possible temperature"):
        simulate(case)


def test_a_heater_that_would_pass_the_physical_range_is_refused():
    data = _with(ONE_COOLER)
    data["heaters"] = {"H-1": {"duty": 20000.0}}
    data["streams"]["oil"]["path"] = "H-1 -> out"
    del data["coolers"]
    with pytest.raises(CaseError, match="no possible temperature"):
        simulate(case_from_mapping(data))


def test_in_a_batch_the_impossible_duty_marks_only_its_scenario(tmp_path):
    path = tmp_path / "one_cooler.yaml"
    path.write_text(yaml.safe_dump(ONE_COOLER))
    table = simulate_batch(path, {"coolers.C-1.duty": np.array([10.0, 1000.0])}).table
    assert list(table["success"]) == [True, False]
    assert table.loc[1, "status"] == NOT_VALID and "no possible temperature" in table.loc[1, "message"]
    assert np.isnan(table.loc[1, "cooler_duty_kw"]) and table.loc[0, "cooler_duty_kw"] == pytest.approx(10.0)


def test_the_command_line_exits_2_on_a_duty_past_absolute_zero(tmp_path, capsys):
    path = tmp_path / "one_cooler.yaml"
    path.write_text(yaml.safe_dump(ONE_COOLER))
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert str(path) in err and "no possible temperature" in err and "Traceback" not in err


def heaters_report_extra_heat(monkeypatch, kw):
    """Every heater reports ``kw`` more heat added than it put into its stream: a unit that does
    not meet its own balance."""
    original = stream_units.Heater.report

    def leaky(self, inlets):
        report = original(self, inlets)
        report.heat_added = np.asarray(report.heat_added) + kw
        return report

    monkeypatch.setattr(stream_units.Heater, "report", leaky)


def test_an_energy_balance_that_does_not_close_is_never_an_answer(monkeypatch):
    """A unit that reports 1000 kW more heat than it put in: the evaluation's own balance check
    marks the scenario (status 3) and simulate raises (exit 3), never returning numbers."""
    heaters_report_extra_heat(monkeypatch, 1000.0)
    evaluation = evaluate(demo_case_path("crude_preheat"))
    assert evaluation.status[0] == CHECK_FAILED and "energy balance does not close" in evaluation.message[0]
    assert np.isnan(evaluation.totals["fired_heater_duty_kw"][0])
    with pytest.raises(ConvergenceError, match="energy balance"):
        simulate(demo_case_path("crude_preheat"))


def test_fluid_temperature_search_never_returns_a_clamped_value():
    from hxtrain.units.properties import PolynomialCp

    oil = PolynomialCp([2.0])
    assert np.isnan(oil.temperature(np.array([-960.0]))[0])  # -480 °C: below absolute zero
    assert oil.temperature(np.array([200.0]))[0] == pytest.approx(100.0, abs=1e-10)


# ----------------------------------------------------------------------------- items 6, 11


def test_a_heater_already_above_its_target_idles_with_a_warning():
    data = yaml.safe_load(open(demo_case_path("crude_preheat")))
    data["heaters"]["F-101"]["outlet_temperature"] = 200.0  # the crude reaches the furnace at ~281 °C
    result = simulate(case_from_mapping(data))
    row = result.units.loc["F-101"]
    assert row["duty_kw"] == 0.0 and row["cold_out_c"] == row["cold_in_c"]
    warnings = result.findings[result.findings["kind"] == "target_not_reached"]
    assert list(warnings["unit"]) == ["F-101"] and "idles" in warnings["message"].iloc[0]


def test_a_computed_heater_duty_beyond_any_plant_is_warned_of():
    """Each input plausible, the result not: oil heated from 100 to 250 °C by a fired heater and
    cooled back by a cooler. A fired heater is warned of above 500 MW (the largest deliver
    ~100-300 MW, common practice), any other heater or cooler above 1 GW (the case format's edge
    of a plausible duty): 500 t/h (104 MW) gets no warning, 6,000 t/h (625 MW) one on the fired
    heater only, 20,000 t/h (2,083 MW) on both, and a utility heater of 625 MW none."""
    def case(flow, source="fired"):
        return {"fluids": {"oil": {"cp": 2.5}},
                "streams": {"oil": {"fluid": "oil", "flow": flow, "supply_temperature": 100,
                                    "path": "F-1 -> C-1 -> out"}},
                "heaters": {"F-1": {"outlet_temperature": 250, "heat_source": source}},
                "coolers": {"C-1": {"outlet_temperature": 100}}, "products": {"out": {}}}

    def warned(document):
        result = simulate(case_from_mapping(document))
        found = result.findings[result.findings["kind"] == "duty_beyond_plausible"]
        assert set(found["severity"]) <= {"warning"}
        return result, list(found["unit"]), list(found["message"])

    assert warned(case("500 t/h"))[1] == []
    _, units, messages = warned(case("6000 t/h"))
    assert units == ["F-1"] and messages[0].startswith(f"the heater's duty comes out at {6000 / 3.6 * 2.5 * 150:,.0f} "
                                                       "kW, above 500 MW, the edge of a plausible fired heater")
    assert warned(case("6000 t/h", "utility"))[1] == []
    result, units, messages = warned(case("20000 t/h"))
    duty = 20000 / 3.6 * 2.5 * 150.0
    assert result.units.loc["F-1", "duty_kw"] == pytest.approx(duty, rel=1e-12)
    assert units == ["F-1", "C-1"]
    assert messages[1].startswith(f"the cooler's duty comes out at {duty:,.0f} kW, above 1,000 MW, the edge of a "
                                  "plausible duty")


def test_an_idle_heater_is_not_refused_on_round_off():
    """The heater's target equals its inlet to the last digit (22.265566722596922 °C against
    295.4155667225969 K): it idles, with no warning and no error."""
    data = {
        "fluids": {"water": {"cp": 4.18}},
        "streams": {"w": {"fluid": "water", "flow": 1.0, "supply_temperature": "295.4155667225969 K",
                          "path": "H-1 -> out"}},
        "heaters": {"H-1": {"outlet_temperature": 22.265566722596922}},
        "products": {"out": {}},
    }
    result = simulate(case_from_mapping(data))
    assert abs(result.units.loc["H-1", "duty_kw"]) < 1e-9
    assert result.findings.empty


def test_a_study_with_an_idle_cooler_variant_runs_every_scenario(tmp_path):
    """A variant whose cooler target lies above its inlet used to stop `compare` with exit 2
    naming neither the variant nor the unit; now the cooler idles with a warning naming the
    scenario, and the other variants are compared."""
    study = tmp_path / "study.yaml"
    study.write_text(yaml.safe_dump({
        "base": {"demo": "crude_preheat"},
        "variants": {"hot_target": {"changes": [{"set": "coolers.C-104.outlet_temperature", "to": 150}]},
                     "more_crude": {"changes": [{"scale": "streams.crude.flow", "by": 1.05}]}}}))
    comparison = compare(load_study(study))
    assert set(comparison.results) == {"base", "hot_target", "more_crude"} and not comparison.failures
    idle = comparison.findings[comparison.findings["kind"] == "target_not_reached"]
    assert list(idle["scenario"]) == ["hot_target"] and list(idle["unit"]) == ["C-104"]


def test_a_variant_with_no_answer_is_reported_beside_the_others(tmp_path):
    study = tmp_path / "study.yaml"
    study.write_text(yaml.safe_dump({
        "base": {"demo": "crude_preheat"},
        "variants": {"no_iterations": {"changes": [{"set": "settings.max_iterations", "to": 1}]},
                     "more_crude": {"changes": [{"scale": "streams.crude.flow", "by": 1.05}]}}}))
    comparison = compare(load_study(study))
    assert comparison.results["no_iterations"] is None and comparison.results["more_crude"] is not None
    assert "scenario 'no_iterations'" in comparison.failures["no_iterations"]
    assert comparison.table["no_iterations"].isna().all() and comparison.table["more_crude"].notna().all()


# ----------------------------------------------------------------------------- item 5


def test_against_clean_shows_the_clean_case_limits():
    comparison = compare_clean_and_fouled(demo_case_path("crude_preheat"))
    clean_limits = comparison.limits[(comparison.limits["state"] == "clean") & (comparison.limits["severity"] == "limit")]
    assert len(clean_limits) == len(comparison.clean.limits) >= 1
    assert comparison.totals.loc["limit_violations", "clean"] == len(comparison.clean.limits)
    assert "duty_lost_to_fouling_kw" in comparison.exchangers


def test_run_against_clean_prints_the_clean_limits(capsys):
    assert main(["run", "--against-clean"]) == 0
    out = capsys.readouterr().out
    assert "LIMITS VIOLATED WHEN CLEAN" in out


def test_cleaning_ranking_carries_the_limits_of_each_cleaned_case():
    ranking = cleaning_ranking(demo_case_path("crude_preheat"))
    case = load_case(demo_case_path("crude_preheat"))
    from hxtrain.network import without_fouling

    for _, row in ranking.iterrows():
        clean = simulate(without_fouling(case, [row["exchanger"]]))
        assert row["limits_when_clean"] == len(clean.limits)


def test_the_cleaning_command_boxes_the_limits_in_full(capsys):
    """Every console report ends with its violated limits in a box: the ranking had only counted
    them, cut each cleaning's new ones short at the table's width and never named the case's
    own (the demo's E-112 design temperature). Now: the case's own limits as it is, then each
    cleaning's new ones, in full."""
    ranking = cleaning_ranking(demo_case_path("crude_preheat"))
    new = ranking[ranking["new_limits_when_clean"].astype(str) != ""]
    assert main(["cleaning"]) == 0
    out = " ".join(capsys.readouterr().out.replace("\n!! ", " ").split())  # the box's wrapped lines joined
    assert f"LIMITS VIOLATED: 1 as it is, {len(new)} new with one cleaning, each cleaning's standing ones" in out
    # a cleaning that warms the train passes a standing limit by more: shown in the cleaned case's words
    assert "still with E-112 clean: E-112: the cold side reaches 283.2 °C, above its design temperature" in out
    assert ("as it is: E-112: the cold side reaches 280.8 °C, above its design temperature of 280.0 °C "
            "[exchangers.E-112.design_temperature.cold]") in out
    for row in new.itertuples():
        assert f"new with {row.exchanger} clean: {' '.join(str(row.new_limits_when_clean).split())}" in out


# ----------------------------------------------------------------------------- item 7


def test_totals_separate_fired_and_other_heaters():
    """The feed-effluent demo's reactor heat release (R-201, heat_source: reaction) is not a
    furnace duty: the fired total is the trim heater H-201 alone."""
    result = simulate(demo_case_path("feed_effluent"))
    units = result.units
    assert result.summary["fired_heater_duty_kw"] == pytest.approx(units.loc["H-201", "duty_kw"], rel=1e-12)
    assert result.summary["other_heater_duty_kw"] == pytest.approx(3200.0, rel=1e-12)


def test_exchangers_against_utilities_are_not_heat_recovery():
    """Product cooling: every exchanger cools naphtha against a utility (boiler feed water, air,
    cooling water): no process-to-process recovery, all of it heat to utilities."""
    result = simulate(demo_case_path("product_cooling"))
    exchangers = result.units[result.units["group"] == "exchangers"]
    assert result.summary["heat_recovered_kw"] == 0.0
    assert result.summary["heat_to_utilities_kw"] == pytest.approx(exchangers["duty_kw"].sum(), rel=1e-12)


def test_totals_add_up_to_the_heat_added():
    """Heaters minus coolers and heat lost (the crude demo's desalter) equals the net heat added
    in the energy balance (exchangers against utility streams move heat inside the envelope)."""
    for demo in ("crude_preheat", "feed_effluent", "product_cooling"):
        s = simulate(demo_case_path(demo))
        net_added = (s.summary["fired_heater_duty_kw"] + s.summary["other_heater_duty_kw"]
                     - s.summary["cooler_duty_kw"] - s.summary.get("heat_lost_kw", 0.0))
        assert net_added == pytest.approx(s.balance["heat_added_net_kw"], rel=1e-12, abs=1e-9)


# ----------------------------------------------------------------------------- one evaluation path


def test_one_case_is_a_batch_of_one():
    """simulate and simulate_batch are views of one evaluation: the same totals to round-off."""
    path = demo_case_path("crude_preheat")
    one = simulate(path)
    table = simulate_batch(path, {"streams.crude.flow": np.array([one.streams.loc[0, "flow_kg_s"]])}).table
    for key in ("heat_recovered_kw", "fired_heater_duty_kw", "cooler_duty_kw", "F-101_inlet_c"):
        assert table.loc[0, key] == pytest.approx(one.summary[key], rel=1e-12)


def test_a_recycle_returning_everything_is_an_invalid_scenario_not_a_crash(tmp_path):
    """A batch that varies a recycle fraction up to 1 used to end in numpy's LinAlgError
    (exit 1); now that scenario is not valid with the reason, and alone it is a CaseError."""
    path = demo_case_path("feed_effluent")
    table = simulate_batch(path, {"splitters.effluent_split.branches.recycle.fraction": np.array([0.25, 1.0])}).table
    assert list(table["success"]) == [True, False]
    assert "recycle returns all of its flow" in table.loc[1, "message"]
    data = yaml.safe_load(open(path))
    data["splitters"]["effluent_split"]["branches"]["recycle"]["fraction"] = 1.0
    data["splitters"]["effluent_split"]["branches"]["net_effluent"]["fraction"] = 0.0
    with pytest.raises(CaseError):
        simulate(case_from_mapping(data))


def test_every_batch_has_the_same_columns():
    path = demo_case_path("crude_preheat")
    a = simulate_batch(path, {"streams.crude.flow": np.array([90.0, 95.0])}).table
    b = simulate_batch(path, {"exchangers.E-110.bypass.cold": np.array([0.0, 0.2])}).table
    assert list(a.columns)[1:] == list(b.columns)[1:]
    assert {"success", "status", "message"} <= set(a.columns)
    assert (a["status"] == SUCCESS).all()


def test_against_clean_writes_the_fouling_tables(tmp_path, capsys):
    """Item 5: the fouling penalty goes into the --out file beside the run's tables."""
    import pandas as pd

    target = tmp_path / "fc.xlsx"
    assert main(["run", "--against-clean", "--out", str(target)]) == 0
    sheets = pd.read_excel(target, sheet_name=None)
    assert {"fouling_by_exchanger", "fouling_totals", "fouling_findings"} <= set(sheets)
    assert "duty_lost_to_fouling_kw" in sheets["fouling_by_exchanger"].columns
    assert (sheets["fouling_findings"]["state"] == "clean").any()
