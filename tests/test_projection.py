"""The train projected forward with fouling laws (solver/monitoring/projection.py).

Independent paths: a steady simulation of the case file with the same fouling (``simulate`` on
the YAML mapping, not the batch's key-path setter); the fouling laws' closed forms
(units/fouling_models.py); the threshold rate from a separate evaluation of each step's state;
linear interpolation as an identity.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import yaml

from hxtrain.solver import demo_case_path, simulate
from hxtrain.solver.monitoring.fouling_fits import FoulingFits, fouling_side_conditions
from hxtrain.solver.monitoring.projection import (FoulingLaw, crossing_date, evaluation_conditions, project,
                                                  project_network)
from hxtrain.solver.simulation.evaluation import evaluate
from hxtrain.units.fouling_models import MODELS, asymptotic_fouling, linear_fouling

CASE = demo_case_path("crude_preheat")
EXCHANGERS = [f"E-1{n:02d}" for n in range(1, 13)]
START = pd.Timestamp("2026-06-01")
DAY = pd.Timedelta(days=1)


def demo_mapping():
    with open(CASE, encoding="utf-8") as f:
        return yaml.safe_load(f)


def steady(fouling: dict, mapping=None):
    """The case file itself with these total fouling resistances (shell side, none on the tube
    side), simulated alone: the result table."""
    mapping = mapping or demo_mapping()
    for tag, value in fouling.items():
        mapping["exchangers"][tag]["fouling"] = {"shell": float(value), "tube": 0.0}
    return simulate(mapping).units


def start_fouling():
    return {tag: 2e-4 + 5e-5 * i for i, tag in enumerate(EXCHANGERS)}


@pytest.mark.parametrize("stepped", [False, True], ids=["one batch", "step by step"])
def test_zero_growth_is_the_steady_simulation_at_every_step(stepped):
    """No growth: every step is the steady state of the case with the starting fouling. The
    step-by-step path (a threshold law, here with no deposition) must give the same."""
    laws = {tag: FoulingLaw("linear", {"r_f0": 0.0, "rate": 0.0}, r) for tag, r in start_fouling().items()}
    if stepped:
        laws["E-112"] = FoulingLaw("ebert_panchal", {"r_f0": 0.0, "alpha": 0.0, "beta": -0.66,
                                                     "activation_energy": 68e3, "gamma": 1e-7}, laws["E-112"].start)
    result = project_network(CASE, laws, start=START, horizon=28 * DAY, step=7 * DAY)
    reference = steady(start_fouling())
    steps = result.steps
    assert len(steps) == 5 and steps["success"].all()
    assert np.allclose(steps["F-101.fired_duty_kw"], reference.loc["F-101", "duty_kw"], rtol=1e-9)
    assert np.allclose(steps["F-101.inlet_c"], reference.loc["F-101", "cold_in_c"], rtol=0, atol=1e-6)
    for tag, value in start_fouling().items():
        assert np.all(steps[f"{tag}.fouling_m2_k_w"] == value)


def test_linear_and_asymptotic_laws_follow_their_closed_forms():
    """Constant conditions: linear fouling R0 + rate t and asymptotic R0 + r_inf (1 - exp(-t/tau))
    (Kern & Seaton) at every step, the last step shortened to end at the horizon; the furnace at
    a step is the steady simulation with that fouling."""
    laws = {"E-104": FoulingLaw("linear", {"r_f0": 0.0, "rate": 3e-6}, 4e-4),
            "E-110": FoulingLaw("asymptotic", {"r_f0": 3e-4, "r_inf": 8e-4, "tau": 60.0}, 3e-4),
            "E-112": FoulingLaw("linear", {"r_f0": 0.0, "rate": 2e-6}, 5e-4)}
    result = project_network(CASE, laws, start=START, horizon=100 * DAY, step=7 * DAY)
    steps = result.steps
    elapsed = ((steps.index - START) / DAY).to_numpy()
    assert elapsed[-1] == 100.0 and elapsed[-2] == 98.0
    assert np.allclose(steps["E-104.fouling_m2_k_w"], linear_fouling(elapsed, 3e-6, 4e-4), rtol=1e-14, atol=0)
    assert np.allclose(steps["E-112.fouling_m2_k_w"], linear_fouling(elapsed, 2e-6, 5e-4), rtol=1e-14, atol=0)
    assert np.allclose(steps["E-110.fouling_m2_k_w"], asymptotic_fouling(elapsed, 8e-4, 60.0, 3e-4), rtol=1e-13, atol=0)
    for k in (0, len(steps) - 1):
        reference = steady({tag: steps[f"{tag}.fouling_m2_k_w"].iloc[k] for tag in laws})
        assert steps["F-101.fired_duty_kw"].iloc[k] == pytest.approx(reference.loc["F-101", "duty_kw"], rel=1e-9)
    assert np.all(np.diff(steps["F-101.fired_duty_kw"]) > 0.0)  # more fouling, more firing


def test_threshold_steps_advance_at_the_rate_of_the_previous_state():
    """Ebert–Panchal on E-112: over each step the fouling grows at the rate the network's
    conditions at the start of the step give (a separate evaluation of that state), while a
    linear law beside it keeps its closed form."""
    law = FoulingLaw("ebert_panchal", {"r_f0": 0.0, "alpha": 3e4, "beta": -0.66, "activation_energy": 68e3,
                                       "gamma": 2e-7}, 5e-4)
    laws = {"E-112": law, "E-104": FoulingLaw("linear", {"r_f0": 0.0, "rate": 3e-6}, 4e-4)}
    steps = project_network(CASE, laws, start=START, horizon=21 * DAY, step=7 * DAY).steps
    r = steps["E-112.fouling_m2_k_w"].to_numpy()
    assert np.all(np.diff(r) > 0.0)
    for s in range(len(steps) - 1):
        values = {"exchangers.E-112.fouling.shell": [r[s]], "exchangers.E-112.fouling.tube": [0.0],
                  "exchangers.E-104.fouling.shell": [steps["E-104.fouling_m2_k_w"].iloc[s]],
                  "exchangers.E-104.fouling.tube": [0.0]}
        ev = evaluate(CASE, values)
        table = evaluation_conditions(ev)
        table = table[table["unit"] == "E-112"]
        c = fouling_side_conditions(ev.net, table).iloc[0]
        rate = MODELS["ebert_panchal"].rate(r[s], **law.parameters, re=c["re"], pr=c["pr"], t_film=c["t_film"],
                                            tau_w=c["tau_w"])
        assert r[s + 1] - r[s] == pytest.approx(float(rate) * 7.0, rel=1e-8)
    assert np.allclose(steps["E-104.fouling_m2_k_w"], 4e-4 + 3e-6 * 7.0 * np.arange(4), rtol=1e-14)


def test_crossing_dates_are_linear_interpolations():
    """Identity: between two steps the value is taken as linear in time."""
    times = pd.date_range("2027-01-01", periods=4, freq="7D")
    assert crossing_date(times, [10, 20, 30, 40], 25.0) == (times[1] + 3.5 * DAY, False)
    assert crossing_date(times, [10, 20, 30, 40], 20.0) == (times[1], False)  # met exactly at a step
    assert crossing_date(times, [10, 20, 30, 40], 5.0) == (times[0], True)  # already past at the start
    assert crossing_date(times, [10, 20, 30, 40], 45.0) == (pd.NaT, False)
    assert crossing_date(times, [290, 285, 282, 281], 283.0, rising=False) == (times[1] + 7 * DAY * 2 / 3, False)


def test_limit_dates_on_a_constructed_case():
    """A fired-duty limit set half way between two steps' duties is dated half way between them
    (linear interpolation), and the steady simulation at that date's fouling meets it within the
    interpolation error (an eighth of the second difference of the duty, as for a parabola); the
    same for a lowest inlet temperature, and for a case limit that appears on the way: the
    residue rundown cooler's design temperature, crossed as E-104 fouls and sends it hotter
    residue (its margin, inlet minus design, interpolated the same way)."""
    laws = {"E-104": FoulingLaw("linear", {"r_f0": 0.0, "rate": 2e-5}, 0.0),
            "E-112": FoulingLaw("linear", {"r_f0": 0.0, "rate": 2e-5}, 2e-4)}
    probe = project_network(CASE, laws, start=START, horizon=56 * DAY, step=7 * DAY).steps
    duty, inlet = probe["F-101.fired_duty_kw"].to_numpy(), probe["F-101.inlet_c"].to_numpy()
    cooler = [steady({t: probe[f"{t}.fouling_m2_k_w"].iloc[k] for t in laws}).loc["C-101", "hot_in_c"] for k in (0, 8)]
    mapping = demo_mapping()
    mapping["coolers"]["C-101"]["design_temperature"] = float(np.mean(cooler))
    limits = {"fired_duty": {"F-101": 0.5 * (duty[3] + duty[4])},
              "inlet_temperature": {"F-101": 0.5 * (inlet[5] + inlet[6])}}
    result = project_network(mapping, laws, start=START, horizon=56 * DAY, step=7 * DAY, limits=limits)
    dates = result.limits.set_index("key")["date"]
    assert dates["limits.fired_duty.F-101"] == START + 24.5 * DAY
    assert dates["limits.inlet_temperature.F-101"] == START + 38.5 * DAY
    row = result.limits.set_index("key").loc["coolers.C-101.design_temperature"]
    assert row["interpolated"] and not row["at_start"] and START < row["date"] < START + 56 * DAY

    def at(date):
        days = (date - START) / DAY
        return steady({"E-104": 2e-5 * days, "E-112": 2e-4 + 2e-5 * days}, demo_mapping())

    curvature = np.abs(np.diff(duty, 2)).max()
    assert abs(at(dates["limits.fired_duty.F-101"]).loc["F-101", "duty_kw"] - limits["fired_duty"]["F-101"]) \
        <= curvature / 8 + 1e-6
    curvature = np.abs(np.diff(inlet, 2)).max()
    assert abs(at(dates["limits.inlet_temperature.F-101"]).loc["F-101", "cold_in_c"]
               - limits["inlet_temperature"]["F-101"]) <= curvature / 8 + 1e-6
    assert at(row["date"]).loc["C-101", "hot_in_c"] == pytest.approx(np.mean(cooler), abs=0.05)


def test_projection_from_reconciled_windows_starts_at_the_last_window():
    """End to end from plant-data windows (noise-free, every segment measured): the projection's
    first step is the steady simulation of the last window with the laws' starting fouling;
    exchangers without a law keep the fouling back-calculated there."""
    from hxtrain.solver.monitoring.network_balances import FLOW, TEMPERATURE
    from hxtrain.solver.monitoring.plant_state import reconcile_windows

    truth = start_fouling()
    flows = np.array([90.0, 95.0, 88.0])
    values = {"streams.crude.flow": flows}
    for tag, r in truth.items():
        values[f"exchangers.{tag}.fouling.shell"] = np.full(3, r)
        values[f"exchangers.{tag}.fouling.tube"] = np.zeros(3)
    ev = evaluate(CASE, values)
    net, t = ev.net, ev.solution.temperature
    m = np.broadcast_to(net.flow, t.shape)
    measured = [(TEMPERATURE, s) for s in range(len(net.segments))]
    measured += [(FLOW, net.outlets[n][0]) for n, u in net.units.items() if not u.inlets]
    readings = np.concatenate([t, m[:, [s for _, s in measured[len(net.segments):]]]], axis=1)
    sigma = np.concatenate([np.ones_like(t), 0.02 * readings[:, t.shape[1]:]], axis=1)
    base = evaluate(CASE)
    index = pd.date_range("2026-05-30", periods=3, freq="D")
    states = reconcile_windows(base.net, base, measured, readings, sigma)
    fits = pd.DataFrame([{"exchanger": "E-112", "model": "linear", "parameters": {"r_f0": 0.0, "rate": 1e-6},
                          "chosen": True, "now": index[-1], "fouling_now": 7e-4}])
    result = project(CASE, states, index, FoulingFits(fits, pd.DataFrame()), horizon=14 * DAY, step=7 * DAY)
    assert result.steps.index[0] == index[-1]
    mapping = demo_mapping()
    mapping["streams"]["crude"]["flow"] = float(flows[-1])
    reference = steady(dict(truth, **{"E-112": 7e-4}), mapping)
    assert result.steps["F-101.fired_duty_kw"].iloc[0] == pytest.approx(reference.loc["F-101", "duty_kw"], rel=1e-6)
    assert list(result.steps["E-112.fouling_m2_k_w"]) == pytest.approx([7e-4, 7e-4 + 7e-6, 7e-4 + 14e-6], rel=1e-14)
