"""The flash drum: split at the inlet state from the feed's enthalpy curve, vapour and liquid
leaving at one temperature from the enthalpy balance on the fluids named for them, and the outer
iteration of flows and states where the split moves the drum's own inlet.

The hand-worked drum's arithmetic is written out in the test; the drum inside a loop is checked
against an independent path: the same network with the drum replaced by a splitter at the
converged fraction (no drum code involved), whose inlet must give back that fraction."""

from __future__ import annotations

import copy
from pathlib import Path

import numpy as np
import pytest
import yaml

from hxtrain.network import build_network, load_case
from hxtrain.network.demos import demo_case_path
from hxtrain.solver import simulate
from hxtrain.solver.simulation import evaluation as evaluation_module
from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.solver.simulation.engine import ConvergenceError, solve_temperatures
from hxtrain.solver.simulation.evaluation import NOT_CONVERGED, SPLIT_TOLERANCE, assess, evaluate
from hxtrain.solver.simulation.sequencing import plan_calculation
from hxtrain.units.enthalpy_curves import EnthalpyCurve
from hxtrain.units.flash_drum import balance_temperature
from cli_helpers import run_in_process

HERE = Path(__file__).parent
PREFLASH = HERE / "valid" / "preflash_drum.yaml"
SMALL = HERE / "valid" / "small_train.yaml"


def preflash():
    return yaml.safe_load(PREFLASH.read_text(encoding="utf-8"))


def lone_drum(t_in, liquid_rows):
    """A 10 kg/s feed at ``t_in`` straight into a drum whose products go straight out."""
    curve = lambda rows: {"enthalpy_curve": {"pressure": "300 kPa", "rows": rows}}  # noqa: E731
    return {
        "fluids": {"feed": curve([[100, 200, 0], [200, 450, 0.2], [300, 750, 0.6]]),
                   "vapour": curve([[100, 500, 1], [300, 900, 1]]),
                   "liquid": curve(liquid_rows)},
        "streams": {"charge": {"fluid": "feed", "flow": 10, "supply_temperature": t_in, "path": "D-1"}},
        "flash_drums": {"D-1": {"vapour": {"fluid": "vapour", "path": "overhead"},
                                "liquid": {"fluid": "liquid", "path": "bottoms"}}},
        "products": {"overhead": {}, "bottoms": {}},
    }


def test_split_and_temperature_worked_by_hand():
    """Feed at 250 °C on the interval 200-300 °C of its curve: h = 450 + 50·(750-450)/100 = 600
    kJ/kg, q = 0.2 + 0.5·(0.6-0.2) = 0.4, so 4 kg/s of vapour and 6 kg/s of liquid. Vapour
    h_v = 500 + 2.0·(T-100), liquid h_l = 200 + 2.2·(T-100): 600 = 0.4·h_v + 0.6·h_l = 320 +
    2.12·(T-100), T = 100 + 280/2.12 = 232.0755 °C. These product curves are not the feed's
    (they would give 250 °C), so the drum warns."""
    result = simulate(lone_drum(250, [[100, 200, 0], [300, 640, 0]]))
    drum = result.units.loc["D-1"]
    assert drum["inlet_vapour_fraction"] == pytest.approx(0.4, abs=1e-12)
    assert drum["vapour_kg_s"] == pytest.approx(4.0, abs=1e-12)
    assert drum["liquid_kg_s"] == pytest.approx(6.0, abs=1e-12)
    assert drum["outlet_c"] == pytest.approx(100 + 280 / 2.12, abs=1e-9)
    assert drum["inlet_c"] == 250.0
    assert drum["outer_iterations"] == 2  # the start, then the fraction of its inlet confirmed
    assert list(result.findings["kind"]) == ["drum_curves_inconsistent"]
    assert result.findings.loc[0, "key"] == "flash_drums.D-1.vapour.fluid"
    streams = result.streams.set_index("segment")
    assert streams.loc["D-1.vapour -> overhead", "vapour_fraction"] == 1.0
    assert streams.loc["D-1.liquid -> bottoms", "temperature_c"] == pytest.approx(100 + 280 / 2.12, abs=1e-9)


def test_products_of_the_feeds_own_flash_leave_at_the_inlet_temperature():
    """At 200 °C the feed holds h 450 kJ/kg with q 0.2; vapour 700 and liquid 387.5 kJ/kg there
    give 0.2·700 + 0.8·387.5 = 450: the balance temperature is the inlet's, and no warning."""
    result = simulate(lone_drum(200, [[100, 200, 0], [200, 387.5, 0], [300, 640, 0]]))
    drum = result.units.loc["D-1"]
    assert drum["inlet_vapour_fraction"] == pytest.approx(0.2, abs=1e-12)
    assert drum["outlet_c"] == pytest.approx(200.0, abs=1e-9)
    assert result.findings.empty


def test_balance_temperature_against_a_root_finder():
    """The exact piecewise solve against scipy's brentq on the same balance, curves with points
    the other does not have and temperatures beyond both tables."""
    from scipy.optimize import brentq

    vapour = EnthalpyCurve([120, 200, 260, 380], [537.0, 719.9, 867.1, 1187.5], [1, 1, 1, 1])
    liquid = EnthalpyCurve([120, 230, 290, 380], [227.0, 527.5, 713.9, 1023.1])
    h_in = np.array([300.0, 540.0, 700.0, 1100.0, 200.0])
    q = np.array([0.0, 0.1, 0.3, 0.6, 0.05])
    found = balance_temperature(h_in, q, vapour, liquid)
    for h, share, t in zip(h_in, q, found):
        root = brentq(lambda x: share * vapour.enthalpy(x) + (1 - share) * liquid.enthalpy(x) - h, 0.0, 600.0,
                      xtol=1e-13)
        assert t == pytest.approx(root, abs=1e-9)


def test_energy_closes_through_the_drum_and_the_network():
    evaluation = evaluate(preflash())
    assert evaluation.success[0]
    assert evaluation.balance["relative_imbalance"][0] < 1e-9
    result = simulate(preflash())
    streams = result.streams.set_index("segment")
    net = result.network
    fluids = {net.segments[i].label: net.fluids[i] for i in range(len(net.segments))}

    def enthalpy_flow(label):
        return streams.loc[label, "flow_kg_s"] * float(fluids[label].enthalpy(streams.loc[label, "temperature_c"]))

    into = enthalpy_flow("E-21.cold -> D-21")
    out = enthalpy_flow("D-21.vapour -> light_ends_to_column") + enthalpy_flow("D-21.liquid -> E-22.cold")
    assert abs(into - out) <= 1e-9 * abs(into)
    mass_in = streams.loc["E-21.cold -> D-21", "flow_kg_s"]
    assert streams.loc["D-21.vapour -> light_ends_to_column", "flow_kg_s"] + \
        streams.loc["D-21.liquid -> E-22.cold", "flow_kg_s"] == pytest.approx(mass_in, rel=1e-12)


def test_drum_in_a_loop_settles_on_a_self_consistent_split():
    """The topped crude heats in E-22 on the residue that then heats the drum's own feed in E-21:
    the split sets the drum's inlet. Checked against a run that has no drum: the drum's products
    named as the feed's own curve (so the drum is a splitter at the inlet temperature), then the
    drum replaced by a splitter at the converged fraction: the same temperatures, and that
    splitter's inlet gives back the fraction it was set to."""
    case = preflash()
    case["flash_drums"]["D-21"]["vapour"]["fluid"] = "desalted_crude"
    case["flash_drums"]["D-21"]["liquid"]["fluid"] = "desalted_crude"
    result = simulate(case)
    drum = result.units.loc["D-21"]
    q = drum["inlet_vapour_fraction"]
    assert 0.02 < q < 0.2 and drum["outer_iterations"] > 2
    assert drum["outlet_c"] == pytest.approx(drum["inlet_c"], abs=1e-9)

    fixed = copy.deepcopy(case)
    entry = fixed.pop("flash_drums")["D-21"]
    vapour, liquid = entry["vapour"], entry["liquid"]
    fixed["splitters"] = {"D-21": {"branches": {"vapour": {"fraction": float(q), "path": vapour["path"]},
                                                "liquid": {"fraction": float(1 - q), "path": liquid["path"]}}}}
    again = simulate(fixed)
    np.testing.assert_allclose(again.streams["temperature_c"], result.streams["temperature_c"], rtol=0, atol=1e-5)
    inlet = again.streams.set_index("segment").loc["E-21.cold -> D-21"]
    feed = again.network.fluids[int(np.flatnonzero(again.streams["segment"] == "E-21.cold -> D-21")[0])]
    assert float(feed.vapour_fraction(feed.enthalpy(inlet["temperature_c"]))) == pytest.approx(q, abs=10 * SPLIT_TOLERANCE)


def test_fixed_point_with_the_case_curves():
    """The case's own product curves: the converged split, fixed and solved once (flows, then
    states), gives back itself from the drum's inlet state."""
    result = evaluate(preflash())
    q = result.reports["D-21"].quantities["q_in"]
    net = build_network(evaluation_module.as_case(preflash()))
    from hxtrain.network.graph import resolve_flows

    drum = net.units["D-21"]
    drum.set_split(np.asarray(q, float))
    resolve_flows(net)
    solution = solve_temperatures(net, tolerance=1e-9, max_iterations=100, batch=1, plan=plan_calculation(net.graph))
    seg = net.inlets["D-21"][0]
    feed = net.fluids[seg]
    assert float(feed.vapour_fraction(feed.enthalpy(solution.temperature[0, seg]))) == pytest.approx(q[0], abs=1e-6)
    np.testing.assert_allclose(solution.temperature, result.solution.temperature, rtol=0, atol=1e-4)


def test_batch_against_single_runs():
    """The crude feed's flow and temperature varied in one batch; each scenario against its own run."""
    flows = np.array([80.0, 91.6667, 100.0])
    temperatures = np.array([200.0, 205.0, 212.0])
    batch = simulate_batch(PREFLASH, {"streams.crude.flow": flows, "streams.crude.supply_temperature": temperatures})
    assert batch.table["success"].all()
    for k, (flow, t) in enumerate(zip(flows, temperatures)):
        case = preflash()
        case["streams"]["crude"].update(flow=float(flow), supply_temperature=float(t))
        one = simulate(case)
        np.testing.assert_allclose(batch.temperature[k], one.streams["temperature_c"].to_numpy(), rtol=0, atol=1e-6)
        assert batch.table.loc[k, "fired_heater_duty_kw"] == pytest.approx(one.summary["fired_heater_duty_kw"],
                                                                          rel=1e-7)


def test_drums_that_do_not_settle_are_not_converged(monkeypatch, capsys):
    """One outer pass is not enough for a drum in a loop: not converged, with the drum named, and
    no numbers (simulate raises; the command exits 3)."""
    monkeypatch.setattr(evaluation_module, "MAX_OUTER_ITERATIONS", 1)
    result = evaluate(preflash())
    assert result.status[0] == NOT_CONVERGED
    assert "flash drum D-21: its vapour fraction did not settle in 1 outer iterations" in result.reason(0)
    assert np.isnan(result.temperature).all()
    with pytest.raises(ConvergenceError, match="did not settle"):
        simulate(preflash())
    code, out, err = run_in_process(capsys, "run", PREFLASH)
    assert code == 3 and "did not settle" in err


def test_networks_without_drums_take_the_old_path_once(monkeypatch):
    """No drum: one temperature solve, no second flow solve, and the very numbers of the path
    before drums existed (solve, then assess)."""
    from hxtrain.network import graph

    calls = {"solve": 0, "flows": 0}
    real_solve = evaluation_module.solve_temperatures

    def counted(*args, **kwargs):
        calls["solve"] += 1
        return real_solve(*args, **kwargs)

    monkeypatch.setattr(evaluation_module, "solve_temperatures", counted)
    monkeypatch.setattr(graph, "resolve_flows", lambda net: calls.__setitem__("flows", calls["flows"] + 1))
    new = evaluate(SMALL)
    assert calls == {"solve": 1, "flows": 0}
    net = build_network(evaluation_module.as_case(SMALL))
    old = assess(net, real_solve(net, tolerance=net.case.settings.tolerance, max_iterations=net.case.settings.max_iterations,
                                 batch=1, plan=plan_calculation(net.graph)), net.case.settings.tolerance)
    np.testing.assert_array_equal(new.temperature, old.temperature)
    assert new.balance["relative_imbalance"][0] == old.balance["relative_imbalance"][0]


def test_console_and_report_show_the_drum(tmp_path, capsys):
    code, out, err = run_in_process(capsys, "run", PREFLASH)
    assert code == 0, err
    assert "Flash drums (split at the inlet state" in out and "feed vaporised" in out
    report = tmp_path / "report.html"
    code, _, err = run_in_process(capsys, "report", PREFLASH, "--out", report)
    assert code == 0, err
    html = report.read_text(encoding="utf-8")
    assert "Flash drums (split at the inlet state" in html
    assert ">D-21</text>" in html  # the drum's tag on its junction in the network picture
    table = tmp_path / "run.csv"
    code, _, err = run_in_process(capsys, "run", PREFLASH, "--out", table)
    assert code == 0, err
    rows = table.read_text(encoding="utf-8").splitlines()
    column = rows[0].split(",").index("outer_iterations")
    drum = next(r.split(",") for r in rows if r.startswith("D-21,"))
    expected = simulate(PREFLASH).units.loc["D-21", "outer_iterations"]
    assert drum[column] == str(int(expected)) and expected >= 2  # a count: a whole number, not "5.0"


def test_a_drum_with_a_warning_is_ringed_in_the_diagram():
    """The drum of the worked example warns (its product curves are not the feed's): its diamond
    is drawn in the warning colour, as any unit with a warning is ringed."""
    from hxtrain.solver.reporting.display_units import Display
    from hxtrain.solver.reporting.network_diagram import WARNING, network_svg

    warned = network_svg(simulate(lone_drum(250, [[100, 200, 0], [300, 640, 0]])), Display())
    assert f'stroke="{WARNING}"' in warned
    quiet = network_svg(simulate(lone_drum(200, [[100, 200, 0], [200, 387.5, 0], [300, 640, 0]])), Display())
    assert f'stroke="{WARNING}"' not in quiet


# ----------------------------------------------------------------------------- a feed let down

def let_down_drum(t_in):
    """A 10 kg/s liquid (constant cp 2.5 kJ/kg·K, h = 2.5·T) let down into a drum whose feed
    curve (liquid on the same reference below 200 °C) boils from 200 °C."""
    curve = lambda rows: {"enthalpy_curve": {"pressure": "300 kPa", "rows": rows}}  # noqa: E731
    return {
        "fluids": {"liquid_feed": {"cp": 2.5},
                   "feed_at_drum": curve([[100, 250, 0], [200, 500, 0], [300, 800, 0.4]]),
                   "vapour": curve([[100, 375, 1], [300, 875, 1]]),
                   "liquid": curve([[100, 250, 0], [300, 750, 0]])},
        "streams": {"charge": {"fluid": "liquid_feed", "flow": 10, "supply_temperature": t_in, "path": "D-1"}},
        "flash_drums": {"D-1": {"feed_curve": "feed_at_drum", "vapour": {"fluid": "vapour", "path": "overhead"},
                                "liquid": {"fluid": "liquid", "path": "bottoms"}}},
        "products": {"overhead": {}, "bottoms": {}},
    }


def test_let_down_worked_by_hand():
    """The liquid arrives at 240 °C with h = 2.5·240 = 600 kJ/kg and keeps it through the valve: on
    the feed curve's interval 200-300 °C, T = 200 + 100·(600-500)/300 = 233.333 °C and q = 0.4/3 =
    0.13333, so 1.3333 kg/s of vapour. Products h_v = 2.5·T + 125, h_l = 2.5·T: the balance
    2.5·T + 125·q = 600 gives T = (600 - 50/3)/2.5 = 233.333 °C, the flash temperature: the
    product curves are the feed's, no warning, and the drum's outlets are 6.67 K below its inlet."""
    result = simulate(let_down_drum(240.0))
    drum = result.units.loc["D-1"]
    assert drum["inlet_c"] == 240.0
    assert drum["inlet_vapour_fraction"] == pytest.approx(0.4 / 3, abs=1e-12)
    assert drum["vapour_kg_s"] == pytest.approx(4.0 / 3, abs=1e-11)
    assert drum["outlet_c"] == pytest.approx(700.0 / 3, abs=1e-9)
    assert result.findings.empty
    assert result.balance["relative_imbalance"] < 1e-12


def test_let_down_below_the_bubble_point_flashes_nothing():
    """At 180 °C (h = 450, below the curve's 500 at 200 °C) the feed stays liquid: no vapour, and
    both outlets at the inlet temperature."""
    drum = simulate(let_down_drum(180.0)).units.loc["D-1"]
    assert drum["inlet_vapour_fraction"] == 0.0 and drum["vapour_kg_s"] == 0.0
    assert drum["outlet_c"] == pytest.approx(180.0, abs=1e-9)


def test_crude_demo_furnace_duty_includes_the_coil_vaporisation():
    """The crude demo (issue: real crude trains): the crude leaves E-112 liquid on its cp model,
    is let down into V-101 and flashes on its curve at 450 kPa; the topped crude is heated in
    F-101 on its own curve. Checked from the case file's rows by linear interpolation (np.interp,
    not hxtrain's curve code): the split is the feed curve's vapour fraction at the enthalpy the
    crude arrived with, the drum temperature the root of the products' balance (brentq) and
    within 0.05 K of where the feed's curve flashes (the rows are rounded to 0.1 kJ/kg), the furnace duty
    ṁ_l·(h_l(365) − h_l(T_drum)) and its outlet vapour fraction the liquid curve's at 365 °C; the
    energy balance closes to 1e-9 through the desalter and the drum."""
    from scipy.optimize import brentq

    path = demo_case_path("crude_preheat")
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    result = simulate(path)
    assert result.balance["relative_imbalance"] < 1e-9
    drum, furnace = result.units.loc["V-101"], result.units.loc["F-101"]
    crude = result.network.case.fluids["crude"]
    h_in = float(crude.enthalpy(np.array([drum["inlet_c"]]))[0])
    feed = np.array(data["fluids"]["crude_at_preflash_drum"]["enthalpy_curve"]["rows"], dtype=float)
    q = np.interp(h_in, feed[:, 1], feed[:, 2])
    vapour, liquid = (np.array(data["fluids"][name]["enthalpy_curve"]["rows"], dtype=float)
                      for name in ("light_ends", "topped_crude"))
    t_out = brentq(lambda t: q * np.interp(t, vapour[:, 0], vapour[:, 1])
                   + (1 - q) * np.interp(t, liquid[:, 0], liquid[:, 1]) - h_in, 200.0, 300.0, xtol=1e-13)
    assert drum["outlet_c"] == pytest.approx(t_out, abs=1e-9)
    # the three curves are of one flash: the products leave where the feed's curve flashes
    assert abs(drum["outlet_c"] - np.interp(h_in, feed[:, 1], feed[:, 0])) < 0.05
    assert drum["inlet_vapour_fraction"] == pytest.approx(q, abs=1e-12) and 0.05 < q < 0.1
    duty = drum["liquid_kg_s"] * (np.interp(365.0, liquid[:, 0], liquid[:, 1])
                                  - np.interp(drum["outlet_c"], liquid[:, 0], liquid[:, 1]))
    assert furnace["duty_kw"] == pytest.approx(duty, rel=1e-12)
    streams = result.streams.set_index("segment")
    assert streams.loc["F-101 -> column_feed", "vapour_fraction"] == pytest.approx(
        np.interp(365.0, liquid[:, 0], liquid[:, 2]), abs=1e-12)
    latent = drum["liquid_kg_s"] * (np.interp(365.0, liquid[:, 0], liquid[:, 1])
                                    - float(crude.enthalpy(np.array([365.0]))[0]))
    assert latent > 0.2 * furnace["duty_kw"]  # the coil's vaporisation is a fifth of the duty or more


def test_drum_and_desalter_outlets_share_one_temperature_in_reconciliation():
    """Both products of a drum, and a desalter's crude and brine, leave at one temperature: the
    plant-data balances hold one temperature variable for each pair (else an unmeasured vapour
    temperature would take up any error of the energy balance)."""
    from hxtrain.solver.monitoring.network_balances import NetworkBalances

    net = build_network(load_case(demo_case_path("crude_preheat")))
    balances = NetworkBalances(net, [])
    column = {net.segments[i].label: balances.slot_column[i] for i in range(len(net.segments))}
    assert column["V-101.vapour -> light_ends_to_column"] == column["V-101.liquid -> F-101"]
    assert column["D-101.crude -> E-104.cold"] == column["D-101.water -> brine_to_treatment"]
    assert column["E-112.cold -> V-101"] != column["V-101.liquid -> F-101"]


@pytest.mark.parametrize("source", ["crude_demo", "preflash"])
def test_what_no_split_reaches_is_solved_once_with_the_same_numbers(monkeypatch, source):
    """The outer passes solve again only the blocks at or below a drum; with every drum's inlet
    above all drums (the crude demo's V-101), the first pass solves only what lies above. The
    numbers are those of re-solving the whole network in every pass (each block is solved from
    the same guess with the same flows: the flows above the drum move only by the round-off of
    the flow solve redone with the new split) within 1e-9 K, for a batch of throughputs; the
    preflash example (its liquid heats its own feed) re-solves its loop and keeps its numbers."""
    case = demo_case_path("crude_preheat") if source == "crude_demo" else preflash()
    values = {"streams.crude.flow": np.array([0.8, 1.0, 1.1]) * (95.0 if source == "crude_demo" else 330 / 3.6)}
    solved = []
    real_solve = evaluation_module.solve_temperatures

    def counted(*args, **kwargs):
        solved.append(len(kwargs["plan"]))
        return real_solve(*args, **kwargs)

    monkeypatch.setattr(evaluation_module, "solve_temperatures", counted)
    parts = evaluate(case, values)
    plan = plan_calculation(build_network(evaluation_module.as_case(case)).graph)
    if source == "crude_demo":
        assert sum(solved) == len(plan) and len(solved) == 2  # each block once: above the drum, then below
    solved.clear()
    monkeypatch.setattr(evaluation_module, "_parts", lambda net, drums, plan: ([], plan, False))
    whole = evaluate(case, values)
    assert all(n == len(plan) for n in solved)
    assert parts.success.all() and whole.success.all()
    np.testing.assert_allclose(parts.temperature, whole.temperature, rtol=0.0, atol=1e-9)
    assert np.all(parts.balance["relative_imbalance"] < 1e-12)


def test_an_outer_pass_starts_each_block_from_the_last_pass_answer(monkeypatch):
    """Each outer pass of flows and states solves the blocks at or below a drum again; it starts
    their tears from the previous pass's answer (the split moves less each pass) instead of the
    mean of the supplies: the pre-flash loop's last pass took 7 sweeps of its block like the
    first, now fewer. The answer is the same (to the tolerance's polish) as with cold starts."""
    from hxtrain.solver.simulation import engine
    from hxtrain.solver.simulation.segment_state import SegmentState

    sweeps = []
    original = engine.converge_tears

    def counted(*args, **kwargs):
        result = original(*args, **kwargs)
        sweeps.append(result.evaluations)
        return result

    monkeypatch.setattr(engine, "converge_tears", counted)
    warm = simulate(PREFLASH)
    assert len(sweeps) >= 3 and sweeps[-1] < sweeps[0]
    cold_start = SegmentState.start
    monkeypatch.setattr(SegmentState, "start", lambda self, net, segments, point: cold_start(
        self, net, segments, type(point)(point.mean)))
    sweeps.clear()
    cold = simulate(PREFLASH)
    assert sweeps[-1] == sweeps[0]  # cold starts: the last pass as dear as the first
    np.testing.assert_allclose(warm.streams["temperature_c"], cold.streams["temperature_c"], rtol=0, atol=1e-6)
