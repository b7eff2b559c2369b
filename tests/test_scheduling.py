"""Cleaning schedules (issue 12): the march through the horizon, the rules every plan keeps, and
the optimiser against the exhaustive optimum on small instances (every plan enumerated and
marched through the same network)."""

import itertools
import textwrap
from pathlib import Path

import numpy as np
import pytest

from hxtrain.network import case_from_mapping
from hxtrain.network.schedule_file import load_schedule
from hxtrain.solver.scheduling.baselines import baseline_plans
from hxtrain.solver.scheduling.horizon import march, scenario_values
from hxtrain.solver.scheduling.optimiser import feasible, optimise
from hxtrain.solver.scheduling.setup import allowed_starts, build_horizon
from hxtrain.solver.simulation.evaluation import evaluate

SMALL_CASE = """
title: three-exchanger train for schedule tests (invented)
fluids:
  crude: {cp: {polynomial: [1.75, 0.0037]}}
  gas_oil: {cp: {polynomial: [1.85, 0.0034]}}
  residue: {cp: {polynomial: [1.80, 0.0033]}}
streams:
  crude: {fluid: crude, flow: 80, supply_temperature: 40, path: "X-1.cold -> X-2.cold -> X-3.cold -> H-1 -> hot_crude"}
  gas_oil: {fluid: gas_oil, flow: 35, supply_temperature: 230, path: "X-2.hot -> X-1.hot -> gas_oil_out"}
  residue: {fluid: residue, flow: 30, supply_temperature: 330, path: "X-3.hot -> residue_out"}
exchangers:
  X-1: &hx
    arrangement: tema_e
    shell_side: hot
    area_per_shell: 250
    film: {shell: 900, tube: 800}
    reference_flow: {shell: 35, tube: 80}
    fouling: {shell: 0.0003, tube: 0.0}
    tubes: {outer_diameter: 19.05 mm, inner_diameter: 14.83 mm, wall_conductivity: 45}
  X-2: *hx
  X-3: *hx
heaters:
  H-1: {outlet_temperature: 300}
products:
  hot_crude: {}
  gas_oil_out: {}
  residue_out: {}
"""


def small_schedule(tmp_path, exchangers, steps, at_once=1, durations=None, not_allowed=(), furnace=None):
    (tmp_path / "small.yaml").write_text(SMALL_CASE)
    laws = {"X-1": "{model: linear, rate: 8.0e-6, initial: 0.0004}",
            "X-2": "{model: asymptotic, r_inf: 0.0020, tau: 60 days, initial: 0.0005}",
            "X-3": "{model: linear, rate: 1.2e-5, initial: 0.0006}"}
    cleaning = "\n".join(f"    {name}: {{cost: {20000 + 5000 * k}, duration: {(durations or {}).get(name, 1)} weeks}}"
                         for k, name in enumerate(exchangers))
    forbidden = "".join(f"\n    - {{from: {a}, to: {b}, why: test}}" for a, b in not_allowed)
    text = textwrap.dedent(f"""
        title: small schedule
        case: small.yaml
        start: 2027-01-04
        horizon: {steps} weeks
        step: 1 week
        fouling:
          exchangers:
        """) + "\n".join(f"    {n}: {laws[n]}" for n in exchangers) + textwrap.dedent(f"""
        economics: {{fuel_price: 9.0, currency: USD, furnace_efficiency: 0.88, co2_price: 80}}
        cleaning:
          default: {{cost: 30000, duration: 1 week}}
          exchangers:
        """) + cleaning + f"\n  at_most_at_once: {at_once}\n" + (f"  not_allowed:{forbidden}\n" if not_allowed else "")
    if furnace:
        text += f"furnace: {{heater: H-1, maximum_duty: {furnace}, throughput: streams.crude.flow, lost_throughput_value: 15}}\n"
    (tmp_path / "schedule.yaml").write_text(text)
    return load_schedule(tmp_path / "schedule.yaml")


def every_plan(allowed, duration, at_once):
    """All plans that keep the rules (brute force over every subset of starts)."""
    exchangers, steps = allowed.shape
    options = list(itertools.product([False, True], repeat=exchangers * steps))
    plans = np.array(options, bool).reshape(-1, exchangers, steps)
    return plans[feasible(plans, allowed, duration, at_once)]


@pytest.mark.parametrize("setting", [
    dict(exchangers=("X-1", "X-2"), steps=6, at_once=1),
    dict(exchangers=("X-1", "X-2", "X-3"), steps=4, at_once=1, durations={"X-3": 2}),
    dict(exchangers=("X-2", "X-3"), steps=6, at_once=2, not_allowed=[("2027-01-18", "2027-01-24")]),
    dict(exchangers=("X-1", "X-3"), steps=6, at_once=1, furnace="28.7 MW"),
], ids=["2x6", "3x4 with a 2-step cleaning", "2x6 with a period closed", "2x6 with a furnace limit"])
def test_the_optimiser_finds_the_exhaustive_optimum(tmp_path, setting):
    """Exhaustive reference: every plan that keeps the rules marched through the same network;
    the optimiser's plan costs the least of them (to 1e-9 relative)."""
    schedule = small_schedule(tmp_path, **setting)
    horizon, _ = build_horizon(schedule)
    allowed = allowed_starts(schedule, horizon)
    plans = every_plan(allowed, horizon.duration, schedule.at_most_at_once)
    assert len(plans) > 50
    found = optimise(horizon, allowed, schedule.at_most_at_once)  # sets the reference of new limit violations
    objective = march(horizon, plans).costs["ranked_cost"].to_numpy()
    assert found.outcome.costs["ranked_cost"].iloc[0] == pytest.approx(objective.min(), rel=1e-9)
    assert feasible(found.plan[None], allowed, horizon.duration, schedule.at_most_at_once)[0]


def test_every_plan_keeps_the_rules(tmp_path):
    """The optimised plan and every baseline: at most k cleanings at once, none in a closed period
    (the allowed starts already exclude cleanings that would overlap one)."""
    schedule = small_schedule(tmp_path, ("X-1", "X-2", "X-3"), 12, at_once=1, durations={"X-2": 2},
                              not_allowed=[("2027-02-01", "2027-02-14")])
    horizon, _ = build_horizon(schedule)
    allowed = allowed_starts(schedule, horizon)
    closed = np.zeros(horizon.steps, bool)
    closed[4:6] = True
    assert not allowed[:, 4:6].any() and not allowed[1, 3]  # X-2's two-week cleaning from step 3 would overlap
    found = optimise(horizon, allowed, 1)
    plans = [found.plan, *baseline_plans(horizon, allowed, 1, [4], {n: 0.0008 for n in horizon.exchangers}).values()]
    for plan in plans:
        assert feasible(plan[None], allowed, horizon.duration, 1)[0]
        busy = march(horizon, plan[None]).out_of_service[0]
        assert busy.sum(axis=0).max() <= 1 and not busy[:, closed].any()


def test_a_horizon_without_fouling_equals_steady_simulations(tmp_path):
    """Zero fouling growth and no cleaning: every step's fired duty equals a steady simulation of
    the case at that step's settings and fouling; every step's energy balance closes to 1e-9."""
    schedule = small_schedule(tmp_path, ("X-1", "X-3"), 5)
    horizon, _ = build_horizon(schedule)
    for name in horizon.exchangers:
        law = horizon.laws[name]
        horizon.laws[name] = type(law)("linear", {"r_f0": 0.0, "rate": 0.0}, {"r_f0": 0.0, "rate": 0.0}, law.initial)
    plan = np.zeros((1, 2, 5), bool)
    outcome = march(horizon, plan)
    for s in range(5):
        data = case_from_mapping(__import__("yaml").safe_load(SMALL_CASE))
        for name in horizon.exchangers:
            data.exchangers[name]["spec"].set_fouling("shell", horizon.laws[name].initial)
            data.exchangers[name]["spec"].set_fouling("tube", 0.0)
        steady = evaluate(data)
        assert outcome.fired[0, s] == pytest.approx(float(steady.totals["fired_heater_duty_kw"][0]), rel=1e-10)
    values = scenario_values(horizon, outcome.fouling, outcome.out_of_service)
    assert np.max(evaluate(horizon.case, values).balance["relative_imbalance"]) < 1e-9


def test_cleaning_resets_fouling_and_bypasses_the_exchanger(tmp_path):
    """While out of service the exchanger's duty is zero (both sides bypassed) and its fouling does
    not grow; it comes back clean (the law's value after a cleaning, zero here)."""
    schedule = small_schedule(tmp_path, ("X-1",), 6, durations={"X-1": 2})
    horizon, _ = build_horizon(schedule)
    plan = np.zeros((1, 1, 6), bool)
    plan[0, 0, 2] = True
    outcome = march(horizon, plan)
    assert outcome.out_of_service[0, 0].tolist() == [False, False, True, True, False, False]
    rate, dt = 8.0e-6, 7.0
    assert outcome.fouling[0, 0, 4] == pytest.approx(rate * dt / 2, rel=1e-12)  # clean at step 4's start
    assert outcome.fouling[0, 0, 2] == outcome.fouling[0, 0, 3]
    values = scenario_values(horizon, outcome.fouling, outcome.out_of_service)
    duty = evaluate(horizon.case, values).reports["X-1"].metrics["duty"]
    assert duty[2] == 0.0 and duty[3] == 0.0 and duty[1] > 0.0


def test_a_cleaning_that_breaks_a_design_limit_is_refused(tmp_path):
    """X-3's cold side may not pass a design temperature that the fouled train keeps but a clean
    X-3 would break: with new limit violations refused (the default) the plan never cleans X-3;
    allowing new violations, a cheaper plan that cleans X-3 is taken."""
    schedule = small_schedule(tmp_path, ("X-1", "X-3"), 26)
    horizon, _ = build_horizon(schedule)
    horizon.cleaning_cost = np.array([100.0, 100.0])  # cheap cleanings: cleaning X-3 pays unless refused
    allowed = allowed_starts(schedule, horizon)
    fouled = march(horizon, np.zeros((1,) + allowed.shape, bool))
    clean_x3 = np.zeros((1,) + allowed.shape, bool)
    clean_x3[0, 1, 0] = True
    cleaned = march(horizon, clean_x3)
    # a design temperature between X-3's hottest cold outlet fouled and cleaned
    t_fouled = _hottest_cold_outlet(horizon, fouled, "X-3")
    t_clean = _hottest_cold_outlet(horizon, cleaned, "X-3")
    assert t_clean > t_fouled + 1.0
    spec = horizon.case.exchangers["X-3"]
    spec["limits"]["design_temperature"] = {"cold": 0.5 * (t_fouled + t_clean)}
    refused = optimise(horizon, allowed, 1)
    assert not refused.plan[1].any() and refused.outcome.costs["new_limit_steps"].iloc[0] == 0
    horizon.new_limits_allowed = True
    allowed_plan = optimise(horizon, allowed, 1)
    assert allowed_plan.plan[1].any()
    assert allowed_plan.outcome.costs["total_cost"].iloc[0] < refused.outcome.costs["total_cost"].iloc[0]


def _hottest_cold_outlet(horizon, outcome, name):
    values = scenario_values(horizon, outcome.fouling, outcome.out_of_service)
    return float(np.max(evaluate(horizon.case, values).reports[name].metrics["cold_out"]))


def test_a_limit_the_uncleaned_train_already_breaks_is_standing_not_new():
    """By hand, on the rule itself: a limit the no-cleaning train breaks in some step is a
    standing violation (counted, never new); a limit it keeps over the whole horizon is new
    wherever a plan breaks it."""
    from hxtrain.solver.scheduling.horizon import new_violations

    steps = 4
    reference = {"standing": np.array([False, True, True, False]), "kept": np.zeros(steps, bool)}
    plans = {"standing": np.array([[True, True, True, True], [False, False, False, False]]).ravel(),
             "kept": np.array([[False, True, False, False], [True, True, False, False]]).ravel()}
    assert new_violations(plans, reference, 2, steps).tolist() == [[0, 1, 0, 0], [1, 1, 0, 0]]
    # a limit the reference never reports at all is new too
    assert new_violations({"other": np.ones(steps, bool)}, reference, 1, steps).tolist() == [[1, 1, 1, 1]]


def test_an_exchanger_in_service_keeps_the_cases_own_bypass(tmp_path):
    """X-1's cold side has a 5 % bypass in the case: in service every step keeps it (the
    schedule had set it to 0, rating another plant than `run` does: ~20 kW of fired duty a step
    on the crude demo), out of service both sides go round whole. Every in-service step's fired
    duty equals a separate evaluation of the case with that step's fouling written in."""
    import yaml

    from hxtrain.units.protocol import FIRED_HEATERS

    small_schedule(tmp_path, ("X-1",), 4)
    data = yaml.safe_load(SMALL_CASE)
    data["exchangers"]["X-1"] = dict(data["exchangers"]["X-1"], bypass={"cold": 0.05})
    (tmp_path / "small.yaml").write_text(yaml.safe_dump(data))
    horizon, _ = build_horizon(load_schedule(tmp_path / "schedule.yaml"))
    plan = np.zeros((1, 1, 4), bool)
    plan[0, 0, 2] = True
    outcome = march(horizon, plan)
    values = scenario_values(horizon, outcome.fouling, outcome.out_of_service)
    assert values["exchangers.X-1.bypass.cold"].tolist() == [0.05, 0.05, 1.0, 0.05]
    assert values["exchangers.X-1.bypass.hot"].tolist() == [0.0, 0.0, 1.0, 0.0]
    for step in (0, 1, 3):
        data["exchangers"]["X-1"]["fouling"] = {"shell": float(outcome.fouling[0, 0, step]), "tube": 0.0}
        alone = evaluate(case_from_mapping(data)).totals[FIRED_HEATERS]
        assert outcome.fired[0, step] == pytest.approx(float(alone[0]), rel=1e-9)


def test_a_threshold_law_the_case_cannot_feed_is_refused_naming_it(tmp_path, capsys):
    """Ebert-Panchal follows the tube side's Re, film temperature and shear, which need the
    tube-side fluid's viscosity, conductivity and density: the small case gives cp only, so the
    law is refused at its key (exit 2) before any plan is rated (it had been an internal error
    from the optimiser's costs, which had no number)."""
    from hxtrain.network import CaseError
    from hxtrain.solver.cli.main import main

    small_schedule(tmp_path, ("X-1",), 4)
    path = tmp_path / "schedule.yaml"
    path.write_text(path.read_text().replace(
        "{model: linear, rate: 8.0e-6, initial: 0.0004}",
        "{model: ebert_panchal, alpha: 1.0e+3, beta: -0.66, activation_energy: 68000, gamma: 1.0e-9, initial: 0.0006}"))
    with pytest.raises(CaseError, match="X-1's ebert_panchal law follows the tube side's conditions") as error:
        build_horizon(load_schedule(path))
    assert error.value.path == ("fouling", "exchangers", "X-1", "model")
    assert main(["schedule", str(path)]) == 2
    assert "viscosity, conductivity and density" in capsys.readouterr().err


def test_a_limit_is_quoted_at_its_worst_step():
    """A limit violated over many steps is quoted where it is farthest past the limit, not where
    it first is (the crude schedule's box had said 287.3 °C, its first step, where the plan
    reached 292.8 °C): the finding keeps how far past each scenario is."""
    from hxtrain.units.protocol import design_temperature_findings

    peaks = np.array([279.0, 281.0, 292.8, 285.0, np.nan])
    key = "exchangers.E-9.design_temperature.cold"
    finding, = design_temperature_findings({"the cold side ": (key, 280.0, peaks - 30.0, peaks)})
    assert finding.worst() == 2 and "292.8 °C" in finding.messages[finding.worst()]
    assert np.flatnonzero(finding.active)[0] == 1
    none, = design_temperature_findings({"the cold side ": (key, 300.0, peaks - 30.0, peaks)})
    assert none.worst() == -1


def test_a_furnace_limit_far_from_the_case_is_refused_as_a_unit_slip(tmp_path):
    """'maximum_duty: 40' (kW, as a bare number is) against a furnace firing ~30 MW: refused
    naming furnace.maximum_duty, as the monitoring file's fired-duty limit is (a new user's
    trial: every plan had cut the throughput to nothing); 28.7 MW is read as it is."""
    from hxtrain.network.errors import CaseError
    from hxtrain.solver.scheduling.setup import build_horizon

    with pytest.raises(CaseError, match=r"furnace\.maximum_duty.*a unit slip"):
        build_horizon(small_schedule(tmp_path, ("X-1",), 4, furnace="40"))
    horizon, _ = build_horizon(small_schedule(tmp_path, ("X-1",), 4, furnace="28.7 MW"))
    assert horizon.furnace.maximum_duty == pytest.approx(28700.0)


def test_a_limit_the_plan_violates_is_shown_beside_the_train_with_no_cleaning(tmp_path):
    """A cleaning warms the train downstream, so a plan may make a standing violation worse (the
    crude schedule: E-112 at 293.2 °C at worst against 288.0 °C with no cleaning, which the box
    had not said). Each limit the plan violates is shown with the same limit on the train with
    no cleaning: its steps and its worst; 'kept in every step' where that train keeps it."""
    import yaml

    from hxtrain.solver.reporting.schedule_text import schedule_report
    from hxtrain.solver.scheduling.plan_cleanings import _beside_no_cleaning, plan_cleanings

    small_schedule(tmp_path, ("X-1", "X-3"), 6)
    data = yaml.safe_load(SMALL_CASE)
    data["exchangers"]["X-3"]["design_temperature"] = {"cold": 150}  # below every step's outlet, fouled or clean
    (tmp_path / "small.yaml").write_text(yaml.safe_dump(data))
    result = plan_cleanings(tmp_path / "schedule.yaml")
    row = result.limits.set_index("unit").loc["X-3"]
    assert row["steps"] == 6 and row["no_cleaning_steps"] == 6
    hottest = [float(text.split("reaches ")[1].split(" °C")[0]) for text in (row["message"], row["no_cleaning_message"])]
    cleaned = bool(result.plans["optimised"][1].any())
    assert (hottest[0] > hottest[1]) if cleaned else (hottest[0] == hottest[1])
    text = " ".join(schedule_report(result).split())
    assert "with no cleaning: in 6 of 6 steps, at worst the cold side" in text and f"reaches {hottest[1]:.1f} °C" in text
    own = result.limits[["unit", "limit", "key", "steps", "first", "worst", "message"]]
    beside = _beside_no_cleaning(own.assign(unit="X-9"), own)  # a limit the train with no cleaning keeps throughout
    assert beside["no_cleaning_steps"].tolist() == [0] and beside["no_cleaning_message"].tolist() == [""]


def test_the_baselines_cleanings_are_written_and_default_intervals_left_out_are_said(tmp_path):
    """Each baseline's cleanings are a table of their own (its dates had not been written: a
    baseline's cost could not be checked against its plan), dated like the optimised plan's;
    the default fixed intervals (26 to 78 weeks) not shorter than a 6-week horizon had been
    dropped without a word."""
    from hxtrain.solver.reporting.schedule_text import schedule_report, schedule_tables
    from hxtrain.solver.scheduling.plan_cleanings import plan_cleanings

    schedule = small_schedule(tmp_path, ("X-1", "X-3"), 6)
    schedule.baselines["fouling_threshold"] = {"X-1": 1e-4, "X-3": 1e-4}  # below the start: cleaned when allowed
    result = plan_cleanings(schedule)
    table = schedule_tables(result)["baseline_cleanings"]
    assert list(table.columns) == ["baseline", "exchanger", "start", "back_in_service", "steps_out", "cost_usd"]
    counts = table.groupby("baseline").size()
    for name, plan in result.plans.items():
        if name != "optimised":
            assert counts.get(name, 0) == int(np.sum(plan))
    assert counts["fouling threshold"] >= 2 and str(table["start"].dtype).startswith("datetime64")
    text = " ".join(schedule_report(result).split())
    assert ("the default fixed-interval baselines of 26 weeks, 39 weeks, 52 weeks and 78 weeks are not shorter than "
            "the horizon: left out") in text
    # the optimiser's ranking figure is named as such (a trial read 'objective_usd' 2.2e10 as dollars)
    comparison = schedule_tables(result)["comparison"]
    assert "ranked_cost_usd" in comparison and "objective_usd" not in comparison
    assert "the baselines are shown as their rules make them, new violations and all" in text


def test_a_shortened_horizon_leaves_out_what_lies_beyond_it_and_says_so(tmp_path):
    """A 52-week schedule cut to 20 weeks: its closed period, its later operating change and its
    26-week fixed interval lie beyond the horizon and are left out, named in the report with their
    key paths (a trial had the demo schedule refused three times, exit 2, until each was taken out
    of the file); what lies within stays. An operating change before the start is still refused
    (the start's operation is the case's own)."""
    from hxtrain.network.errors import CaseError
    from hxtrain.solver.reporting.schedule_text import schedule_report
    from hxtrain.solver.scheduling.plan_cleanings import plan_cleanings

    base = (Path(__file__).parent / "malformed_schedules" / "base.yaml").read_text(encoding="utf-8")
    assert "horizon: 52 weeks" in base and "from: 2027-07-05" in base
    short = tmp_path / "short.yaml"
    short.write_text(base.replace("horizon: 52 weeks", "horizon: 20 weeks"), encoding="utf-8")
    schedule = load_schedule(short)
    beyond = dict(schedule.beyond_horizon)
    assert beyond == {"cleaning.not_allowed[0]": "no cleaning from 2027-12-01 to 2027-12-31",
                      "operation[1]": "the operation set from 2027-07-05",
                      "baselines.fixed_intervals[1]": "a fixed interval of 26 weeks"}
    assert schedule.baselines["fixed_intervals"] == [13] and len(schedule.operation) == 1 and not schedule.not_allowed
    text = " ".join(schedule_report(plan_cleanings(schedule)).split())
    assert ("left out, beyond the horizon: no cleaning from 2027-12-01 to 2027-12-31 (cleaning.not_allowed[0]); the "
            "operation set from 2027-07-05 (operation[1]); a fixed interval of 26 weeks (baselines.fixed_intervals[1])"
            in text)
    early = tmp_path / "early.yaml"
    early.write_text(short.read_text(encoding="utf-8").replace("from: 2027-07-05", "from: 2026-07-05"),
                     encoding="utf-8")
    with pytest.raises(CaseError, match="the operation at the start is the case's own"):
        load_schedule(early)


def test_each_baselines_limits_are_tabled_and_its_new_ones_named(tmp_path):
    """A trial saw a baseline's 'new' limit steps counted (72 for every 26 weeks in the demo) but
    never which limit: every baseline's limits are a table beside the train with no cleaning, and
    the report names the new ones (those the train with no cleaning keeps). On a small schedule
    the table agrees with the comparison's counts; the wording is checked on a made table."""
    import types

    import pandas as pd

    from hxtrain.solver.reporting.schedule_text import _new_baseline_limits, schedule_tables
    from hxtrain.solver.scheduling.plan_cleanings import plan_cleanings

    schedule = small_schedule(tmp_path, ("X-1", "X-3"), 6)
    schedule.baselines["fouling_threshold"] = {"X-1": 1e-4, "X-3": 1e-4}
    result = plan_cleanings(schedule)
    table = schedule_tables(result)["baseline_limits"]
    assert list(table.columns[:4]) == ["baseline", "unit", "limit", "key"]
    comparison = result.comparison
    for name in comparison.index.drop("optimised"):
        rows = table[table["baseline"] == name]
        assert (rows["steps"] <= comparison.at[name, "limit_steps"]).all()
        assert ((rows["no_cleaning_steps"] == 0).any()) == (comparison.at[name, "new_limit_steps"] > 0), name
    made = types.SimpleNamespace(baseline_limits=pd.DataFrame({
        "baseline": ["no cleaning", "every 26 steps", "every 26 steps"], "unit": ["E-112", "E-112", "E-103"],
        "limit": ["design_temperature", "design_temperature", "temperature_cross"], "steps": [91, 84, 71],
        "worst": pd.to_datetime(["2028-12-25", "2028-12-25", "2027-08-02"]), "no_cleaning_steps": [91, 91, 0]}))
    text = " ".join(_new_baseline_limits(made))
    assert "every 26 steps: E-103 temperature_cross in 71 steps (worst 2027-08-02)" in text
    assert "E-112" not in text and "no cleaning:" not in text


def test_the_laws_table_lists_the_exchangers_in_the_cases_order(tmp_path):
    """Laws written in the file in another order (X-3 before X-1), or written beside fitted ones
    (a trial saw a written law listed after all the fitted ones): the table of where each law
    came from follows the case's order of exchangers."""
    small_schedule(tmp_path, ("X-3", "X-1"), 4)
    _, sources = build_horizon(load_schedule(tmp_path / "schedule.yaml"))
    assert list(sources.index) == ["X-1", "X-3"]
