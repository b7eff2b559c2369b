"""Fluids on enthalpy curves in networks: the segment state, the readers, zone rating in the
network, the vapour-fraction and internal-approach limits.

Independent paths named beside each check: today's rating of the same exchanger with constant-cp
fluids (a constant cp given as a curve must change nothing); the closed form ε = 1 − exp(−NTU)
of a pure condensing side (Incropera et al., Fundamentals of Heat and Mass Transfer, the ε–NTU
relation for Cr = 0, from memory); IAPWS enthalpies from CoolProp (test-only); hand arithmetic
written out in the test; the energy balance; a loop solved once on temperature and once on
enthalpy.
"""

from __future__ import annotations

import copy

import numpy as np
import pytest

from hxtrain.network import CaseError, build_network, case_from_mapping, load_case
from hxtrain.solver import demo_case_path
from hxtrain.solver.demos import DEMO_CASES
from hxtrain.solver.simulation.evaluation import evaluate
from hxtrain.solver.simulation.results import simulate
from hxtrain.solver.simulation.segment_state import segment_state

BOILING = {"enthalpy_curve": {"pressure": 500, "rows": [[50, 100, 0], [150, 300, 0], [150, 700, 1], [250, 850, 1]]}}
"""A pure fluid boiling at 150 °C: liquid cp 2, latent heat 400 kJ/kg, vapour cp 1.5 kJ/kg·K."""


def _case(fluids, streams, exchangers, products, **sections):
    return {"title": "phase change test", "settings": {"minimum_approach": 10, "tolerance": 1e-9},
            "fluids": fluids, "streams": streams, "exchangers": exchangers, "products": products, **sections}


def _two_stream(hot_fluid, cold_fluid, exchanger, t_hot=200.0, t_cold=40.0, m_hot=10.0, m_cold=12.0, **supply):
    fluids = {"hot_fluid": hot_fluid, "cold_fluid": cold_fluid}
    streams = {"hot": {"fluid": "hot_fluid", "flow": m_hot, "supply_temperature": t_hot, "path": "E-1.hot -> hot_out",
                       **supply},
               "cold": {"fluid": "cold_fluid", "flow": m_cold, "supply_temperature": t_cold, "path": "E-1.cold -> cold_out"}}
    return _case(fluids, streams, {"E-1": exchanger}, {"hot_out": {}, "cold_out": {}})


def _row(result, unit="E-1"):
    return result.units.loc[unit]


def _line(cp, low=-50.0, high=500.0, boiling=None):
    """A constant cp written as an enthalpy curve (h = cp·T, liquid); ``boiling``: a vapour
    branch above ``high`` that no stream reaches, as a plateau ("plateau") or over 10 K ("range"),
    which makes an exchanger on it rated by zones."""
    rows = [[low, cp * low, 0], [high, cp * high, 0]]
    if boiling:
        rows.append([high + (10.0 if boiling == "range" else 0.0), cp * high + 300.0, 1])
    return {"enthalpy_curve": {"pressure": 1000, "rows": rows}}


@pytest.mark.parametrize("boiling", ["plateau", "range"])
@pytest.mark.parametrize("exchanger", [{"arrangement": "counterflow", "ua": 30.0},
                                       {"arrangement": "tema_e", "u": 400, "area_per_shell": 60},
                                       {"arrangement": "tema_e", "shells": 3, "u": 400, "area_per_shell": 25},
                                       {"arrangement": "tema_e", "tube_passes": 4, "shell_side": "cold", "ua": 20.0},
                                       {"arrangement": "double_pipe", "ua": 5.0, "bypass": {"cold": 0.3}}])
def test_a_constant_cp_given_as_a_curve_is_rated_as_today(exchanger, boiling):
    """One zone, constant cp: rated by zones (the curves could boil, far above the streams) the
    exchanger gives today's P–NTU numbers (1e-9 K), carried as enthalpy or as temperature."""
    today = simulate(_two_stream({"cp": 2.3}, {"cp": 2.6}, exchanger))
    zoned = simulate(_two_stream(_line(2.3, boiling=boiling), _line(2.6, boiling=boiling), exchanger))
    for column in ("hot_out_c", "cold_out_c", "duty_kw"):
        assert abs(_row(zoned)[column] - _row(today)[column]) <= 1e-9 * max(1.0, abs(_row(today)[column]))
    assert "rated by zones" in _row(zoned)["u_source"]
    assert _row(zoned)["cold_out_vapour_fraction"] == 0.0


def test_bundled_cases_carry_temperature_only():
    """No bundled case without a fluid on a plateau carries enthalpy: the solver's path and
    numbers are those of temperature (the state array is the temperature array itself)."""
    for name in DEMO_CASES:
        net = build_network(load_case(demo_case_path(name)))
        layout = segment_state(net)
        has_plateau = any(f.state_by_enthalpy for f in net.fluids)
        assert layout.any == has_plateau, name
        if not has_plateau:
            ev = evaluate(load_case(demo_case_path(name)))
            assert ev.solution.state is ev.solution.temperature


def _steam_heater(steam_flow, ua, vapour_fraction=1.0, t_water=30.0, m_water=5.0, **steam_keys):
    from hxtrain.units.water_steam import saturation_temperature

    t_sat = saturation_temperature(1000.0)
    steam = {"water_steam": {"pressure": 1000, "temperature_range": [20, 250]}}
    case = _two_stream(steam, {"cp": 4.18}, {"arrangement": "counterflow", "ua": ua}, t_hot=t_sat,
                       t_cold=t_water, m_hot=steam_flow, m_cold=m_water, vapour_fraction=vapour_fraction)
    case["streams"]["hot"].update(steam_keys)
    return case, t_sat


def test_pure_condensation_against_the_closed_form():
    """Saturated steam that does not condense fully: one isothermal zone (Cr = 0), so
    Q = C_water (T_sat − T_in)(1 − exp(−UA/C_water)) exactly (ε–NTU at Cr = 0)."""
    case, t_sat = _steam_heater(steam_flow=2.0, ua=12.0)
    row = _row(simulate(case))
    c_water = 5.0 * 4.18
    expected = c_water * (t_sat - 30.0) * (1.0 - np.exp(-12.0 / c_water))
    assert abs(row["duty_kw"] - expected) <= 1e-9 * expected
    assert abs(row["hot_out_c"] - t_sat) <= 1e-9  # still on the plateau
    assert 0.0 < row["hot_out_vapour_fraction"] < 1.0


def test_steam_heater_against_coolprop_enthalpies():
    """The steam that leaves subcooled: the duty is the steam's enthalpy change, checked against
    CoolProp's IAPWS-95 at 10 bar (in: saturated vapour; out: liquid at the outlet temperature)
    within 0.05 % (IF97 against IAPWS-95 and the curve's linear interpolation, 0.01 kJ/kg)."""
    coolprop = pytest.importorskip("CoolProp.CoolProp")
    case, t_sat = _steam_heater(steam_flow=0.8, ua=60.0)
    row = _row(simulate(case))
    assert row["hot_out_vapour_fraction"] == 0.0 and row["hot_out_c"] < t_sat - 1.0  # condensed and subcooled
    h_in = coolprop.PropsSI("H", "P", 1e6, "Q", 1.0, "Water") / 1e3
    h_out = coolprop.PropsSI("H", "P", 1e6, "T", row["hot_out_c"] + 273.15, "Water") / 1e3
    assert abs(row["duty_kw"] / (0.8 * (h_in - h_out)) - 1.0) <= 5e-4
    assert abs(row["duty_kw"] - 5.0 * 4.18 * (row["cold_out_c"] - 30.0)) <= 1e-9 * row["duty_kw"]


def test_internal_pinch_is_found_where_the_ends_look_fine():
    """A pure fluid boiling at 150 °C (liquid cp 2, latent 400 kJ/kg, vapour cp 1.5), 1 kg/s from
    60 °C, against 4 kg/s of oil of cp 2.5 from 200 °C, UA 30 kW/K. Worked by hand at the duty
    the rating finds: the liquid takes 1·2·(150 − 60) = 180 kW before it boils, so where it starts
    to boil the oil is at T_h,out + 180/(4·2.5) and the approach there is that less 150 °C: below
    10 K, while both end approaches (200 − T_c,out and T_h,out − 60) are above it."""
    case = _two_stream({"cp": 2.5}, BOILING, {"arrangement": "counterflow", "ua": 30.0}, t_hot=200.0,
                       t_cold=60.0, m_hot=4.0, m_cold=1.0)
    result = simulate(case)
    row = _row(result)
    t_hot_out, t_cold_out = row["hot_out_c"], row["cold_out_c"]
    by_hand = t_hot_out + 180.0 / (4.0 * 2.5) - 150.0
    ends = min(200.0 - t_cold_out, t_hot_out - 60.0)
    print(f"\nends {ends:.2f} K, inside {by_hand:.3f} K")
    assert ends > 10.0 and by_hand < 10.0
    assert abs(row["internal_approach_k"] - by_hand) <= 1e-9
    assert abs(row["min_approach_k"] - ends) <= 1e-9
    messages = [m for m in result.findings["message"] if "inside the exchanger" in m]
    assert messages and f"{by_hand:.1f} K" in messages[0]
    assert f"at {180.0 / row['duty_kw']:.0%} of the duty from the cold end" in messages[0]
    # the same exchanger rated on its ends only would not warn: its smaller end approach is fine
    assert row["min_approach_k"] > case["settings"]["minimum_approach"]


def test_vapour_fraction_above_its_maximum_is_a_limit():
    boiling = {"enthalpy_curve": {"pressure": 500, "rows": [[50, 100, 0], [150, 300, 0], [150, 600, 1],
                                                            [250, 750, 1]]}}
    exchanger = {"arrangement": "counterflow", "ua": 400.0, "maximum_vapour_fraction": {"cold": 0.2}}
    result = simulate(_two_stream({"cp": 2.5}, BOILING, exchanger, t_hot=200.0, t_cold=100.0, m_hot=10.0, m_cold=4.0))
    q = _row(result)["cold_out_vapour_fraction"]
    limits = result.findings[result.findings["kind"] == "vapour_fraction"]
    assert q > 0.2 and len(limits) == 1
    assert limits.iloc[0]["key"] == "exchangers.E-1.maximum_vapour_fraction.cold"
    assert f"{q:.3f}" in limits.iloc[0]["message"]


def _loop(water):
    """Water circulated through a steam heater with part of it recycled to its own inlet: the
    recycle is torn on a water segment."""
    case = _case({"water": water, "oil": {"cp": 2.4}},
                 {"makeup": {"fluid": "water", "flow": 4.0, "supply_temperature": 25.0, "path": "loop_mix"},
                  "oil": {"fluid": "oil", "flow": 6.0, "supply_temperature": 180.0, "path": "E-1.hot -> oil_out"}},
                 {"E-1": {"arrangement": "counterflow", "ua": 20.0}}, {"oil_out": {}, "water_out": {}},
                 mixers={"loop_mix": {"path": "E-1.cold -> loop_split"}},
                 splitters={"loop_split": {"branches": {"back": {"fraction": 0.7, "path": "loop_mix"},
                                                        "out": {"fraction": 0.3, "path": "water_out"}}}})
    return case


def test_a_loop_torn_on_enthalpy_gives_the_numbers_torn_on_temperature():
    """The same liquid curve with and without a plateau far above the loop's temperatures: the
    first is carried (and torn) as enthalpy, the second as temperature; the answers agree to
    1e-9 K and close their balance."""
    liquid = [[0, 0.0, 0], [200, 838.0, 0]]  # one cp over the loop's range: both ratings exact
    with_plateau = {"enthalpy_curve": {"pressure": 1600, "rows": liquid + [[200, 2793.0, 1], [250, 2919.0, 1]]}}
    without = {"enthalpy_curve": {"pressure": 500, "rows": liquid}}
    by_h, by_t = evaluate(_loop(with_plateau)), evaluate(_loop(without))
    assert by_h.solution.layout.any and not by_t.solution.layout.any
    assert by_h.success[0] and by_t.success[0]
    assert np.max(np.abs(by_h.temperature - by_t.temperature)) <= 1e-9
    assert abs(by_h.balance["relative_imbalance"][0]) <= 1e-12


def test_supply_on_a_plateau_needs_its_vapour_fraction():
    case, _ = _steam_heater(steam_flow=1.0, ua=10.0)
    del case["streams"]["hot"]["vapour_fraction"]
    with pytest.raises(CaseError, match="give the supply's 'vapour_fraction'") as error:
        case_from_mapping(case)
    assert error.value.path == ("streams", "hot", "vapour_fraction")


@pytest.mark.parametrize("offset", [-0.05, 0.0004, 0.099])
def test_a_supply_written_near_saturation_is_saturated(offset):
    """Saturated steam written to a rounded temperature (0.05 K below, 0.4 mK above; the band's
    edge, 0.099 K) is taken at the saturation temperature with its vapour fraction: the same
    duty as the exact temperature, to 1e-9 (hand check: the closed form of the test above).
    Read as subcooled liquid, 0.05 K below had given about a sixth of the duty, silently."""
    exact, t_sat = _steam_heater(steam_flow=2.0, ua=12.0)
    rounded, _ = _steam_heater(steam_flow=2.0, ua=12.0)
    rounded["streams"]["hot"]["supply_temperature"] = t_sat + offset
    assert _row(simulate(rounded))["duty_kw"] == pytest.approx(_row(simulate(exact))["duty_kw"], rel=1e-9)
    del rounded["streams"]["hot"]["vapour_fraction"]
    with pytest.raises(CaseError, match=r"within 0.1 K of the saturation temperature 179.88\d\d °C") as error:
        case_from_mapping(rounded)
    assert error.value.path == ("streams", "hot", "vapour_fraction")


def test_a_vapour_fraction_beyond_the_saturation_band_is_refused():
    """0.11 K below saturation is a subcooled liquid (its temperature fixes its state): a vapour
    fraction there is refused, the message giving the saturation temperature to 1e-4 K."""
    case, t_sat = _steam_heater(steam_flow=2.0, ua=12.0)
    case["streams"]["hot"]["supply_temperature"] = t_sat - 0.11
    with pytest.raises(CaseError, match=r"its saturation temperature is 179.88\d\d °C\): leave out") as error:
        case_from_mapping(case)
    assert error.value.path == ("streams", "hot", "vapour_fraction")


@pytest.mark.parametrize("change, key, fragment", [
    (lambda c: c["fluids"].update(hot_fluid={"cp": 2.0}), ("streams", "hot", "vapour_fraction"), "leave out"),
    (lambda c: c.update(heaters={"H-1": {"duty": 100}}) or c["streams"]["hot"].update(path="E-1.hot -> H-1 -> hot_out"),
     ("heaters", "H-1"), "cannot take it"),
    (lambda c: c["exchangers"]["E-1"].update(arrangement="crossflow", mixed_side="hot"),
     ("exchangers", "E-1", "arrangement"), "not covered"),
    (lambda c: c["exchangers"]["E-1"].update(arrangement="tema_e", tube_passes=4, shells=2, shell_side="hot"),
     ("exchangers", "E-1", "shells"), "one shell at a time"),
    (lambda c: c["exchangers"]["E-1"].update(arrangement="tema_e", tube_passes=1),
     ("exchangers", "E-1", "tube_passes"), "two tube passes or more"),
    (lambda c: c["exchangers"]["E-1"].update(shells=2, shells_flow="parallel_flow"),
     ("exchangers", "E-1", "shells_flow"), "overall counterflow only"),
])
def test_what_this_version_cannot_carry_is_refused_naming_the_key(change, key, fragment):
    case, _ = _steam_heater(steam_flow=1.0, ua=10.0)
    change(case)
    with pytest.raises(CaseError, match=fragment) as error:
        simulate(case)
    assert tuple(error.value.path[:len(key)]) == key


def test_a_liquid_curve_keeps_the_in_service_rating_of_any_arrangement():
    """A curve that holds no vapour is a smooth h(T): a crossflow exchanger on it is rated as
    with any cp model (mean cp), to 1e-9 K of the same fluid given by its cp."""
    exchanger = {"arrangement": "crossflow", "mixed_side": "hot", "ua": 20.0}
    today = simulate(_two_stream({"cp": 2.3}, {"cp": 2.6}, exchanger))
    curves = simulate(_two_stream(_line(2.3), _line(2.6), exchanger))
    assert abs(_row(curves)["cold_out_c"] - _row(today)["cold_out_c"]) <= 1e-9
    assert "rated by zones" not in _row(curves)["u_source"]


def test_a_curve_does_not_mix_with_another_fluid():
    curve = _line(2.3)
    case = _case({"a": curve, "b": {"cp": 2.0}},
                 {"s1": {"fluid": "a", "flow": 1, "supply_temperature": 50, "path": "m"},
                  "s2": {"fluid": "b", "flow": 1, "supply_temperature": 60, "path": "m"}},
                 {}, {"out": {}}, mixers={"m": {"path": "out"}})
    with pytest.raises(CaseError, match="mixes with no other fluid") as error:
        simulate(case)
    assert error.value.path == ("mixers", "m")


def test_curve_from_a_csv_file_next_to_the_case(tmp_path):
    rows = [[-50, -115.0, 0], [500, 1150.0, 0]]
    (tmp_path / "oil.csv").write_text("temperature_c,enthalpy_kj_kg,vapour_fraction\n"
                                      + "".join(f"{t},{h},{q}\n" for t, h, q in rows), encoding="utf-8")
    case = _two_stream({"cp": 2.3}, {"enthalpy_curve": {"pressure": 300, "file": "oil.csv"}},
                       {"arrangement": "counterflow", "ua": 30.0})
    inline = copy.deepcopy(case)
    inline["fluids"]["cold_fluid"] = {"enthalpy_curve": {"pressure": 300, "rows": rows}}
    path = tmp_path / "case.yaml"
    import yaml

    path.write_text(yaml.safe_dump(case), encoding="utf-8")
    assert _row(simulate(path))["cold_out_c"] == _row(simulate(inline))["cold_out_c"]
    (tmp_path / "oil.csv").write_text("temperature_c,enthalpy_kj_kg,vapour_fraction\n-50,0,0\n20,-10,0\n",
                                      encoding="utf-8")
    with pytest.raises(CaseError, match="oil.csv line 3: enthalpy must rise") as error:
        load_case(path)
    assert error.value.path == ("fluids", "cold_fluid", "enthalpy_curve", "file")
    (tmp_path / "oil.csv").write_text("T,h,q\n", encoding="utf-8")
    with pytest.raises(CaseError, match="header temperature_c,enthalpy_kj_kg,vapour_fraction"):
        load_case(path)


def _countercurrent_chain(water, count=10):
    """Two water streams through ``count`` exchangers in pure countercurrent (hot E-n ... E-1,
    cold E-1 ... E-n): every neighbour pair is a cycle, more tears than the tear iteration takes,
    so the block is converged by the block Newton on all its segments."""
    names = [f"E-{i}" for i in range(1, count + 1)]
    return _case({"water": water},
                 {"hot": {"fluid": "water", "flow": 3.0, "supply_temperature": 140.0,
                          "path": " -> ".join(f"{n}.hot" for n in reversed(names)) + " -> hot_out"},
                  "cold": {"fluid": "water", "flow": 4.0, "supply_temperature": 20.0,
                           "path": " -> ".join(f"{n}.cold" for n in names) + " -> cold_out"}},
                 {n: {"arrangement": "counterflow", "ua": 4.0} for n in names}, {"hot_out": {}, "cold_out": {}})


def test_a_large_block_converged_on_enthalpy_gives_the_numbers_on_temperature():
    """The block Newton (every segment of the block its unknown) on enthalpy segments: the same
    answers as on temperature segments of the same liquid (1e-9 K), balance closed."""
    from hxtrain.solver.simulation.engine import LARGE_BLOCK_TEARS

    liquid = [[0, 0.0, 0], [200, 838.0, 0]]  # one cp over the loop's range: both ratings exact
    with_plateau = {"enthalpy_curve": {"pressure": 1600, "rows": liquid + [[200, 2793.0, 1], [250, 2919.0, 1]]}}
    by_h = evaluate(_countercurrent_chain(with_plateau))
    by_t = evaluate(_countercurrent_chain({"enthalpy_curve": {"pressure": 500, "rows": liquid}}))
    assert any(len(b.block.tears) > LARGE_BLOCK_TEARS for b in by_h.solution.blocks)
    assert by_h.solution.layout.any and by_h.success[0] and by_t.success[0]
    assert np.max(np.abs(by_h.temperature - by_t.temperature)) <= 1e-9
    assert abs(by_h.balance["relative_imbalance"][0]) <= 1e-12


def test_a_batch_on_the_vaporiser_demo_gives_each_scenario_its_own_numbers():
    """Feed flows and steam U varied in one batch: each scenario as simulated alone (1e-9 K)."""
    from hxtrain.solver.simulation.batch import simulate_batch

    path = demo_case_path("naphtha_vaporiser")
    flows, u = np.array([12.0, 16.0, 20.0]), np.array([700.0, 900.0, 1100.0])
    batch = simulate_batch(path, {"streams.feed.flow": flows, "exchangers.E-302.u": u})
    assert np.all(batch.table["status"] == 0)
    for k in range(3):
        alone = evaluate(load_case(path), {"streams.feed.flow": flows[k:k + 1], "exchangers.E-302.u": u[k:k + 1]})
        assert alone.success[0]
        assert np.max(np.abs(batch.temperature[k] - alone.temperature[0])) <= 1e-9


def test_curves_that_would_cross_inside_are_found_and_held_apart():
    """The boiling fluid above against less oil (3 kg/s): the pinch at the bubble point limits
    the duty. By hand: zero approach there means the oil is at 150 °C where the liquid starts
    to boil, so it leaves at 150 − 180/(3·2.5) = 126 °C and the duty is 7.5·(200 − 126) = 555 kW;
    the ends stay 50 K (200 − 150) and 66 K (126 − 60) apart. A rating from the ends alone
    (each side's mean cp over its range, P–NTU) lets the curves cross inside: at its duty the
    oil would be below the boiling liquid at the bubble point, which the zone profile finds."""
    from hxtrain.units.pntu_rating import rate_exchanger
    from hxtrain.units.zone_exchanger import as_curve
    from hxtrain.units.zone_rating import zone_profile

    case = _two_stream({"cp": 2.5}, BOILING, {"arrangement": "counterflow", "ua": 2000.0}, t_hot=200.0,
                       t_cold=60.0, m_hot=3.0, m_cold=1.0)
    result = simulate(case)
    row = _row(result)
    assert abs(row["duty_kw"] - 555.0) <= 1e-6 and abs(row["hot_out_c"] - 126.0) <= 1e-6
    assert abs(row["min_approach_k"] - 50.0) <= 1e-6 and -1e-9 <= row["internal_approach_k"] <= 1e-6
    assert any("inside the exchanger" in m for m in result.findings["message"])
    net = build_network(case_from_mapping(case))
    oil, liquid = net.fluids[0], net.fluids[2]
    c_cold = 1.0 * (liquid.enthalpy_at(150.0, 0.9375) - liquid.enthalpy_at(60.0)) / (150.0 - 60.0)
    by_ends = rate_exchanger(200.0, 60.0, 3.0 * 2.5, c_cold, 2000.0, "counterflow")
    assert float(by_ends.duty) > 555.0 + 1.0  # the ends alone allow more duty than the curves do
    oil_curve = as_curve(oil, {})
    profile = zone_profile(oil_curve, liquid, oil_curve.enthalpy(200.0), liquid.enthalpy_at(60.0), 3.0, 1.0,
                           by_ends.duty)
    assert float(profile.approach[0]) < -1.0  # the curves cross inside at that duty


def test_a_cross_in_a_one_two_shell_rated_by_zones_is_a_limit():
    """The same boiling duty in a 1-2 shell with a large UA: the cold stream leaves above the
    hot outlet, the temperature cross of a multipass shell, a violated limit as in the P–NTU
    rating; in counterflow the same outlets are no cross."""
    for arrangement, crossed in (("tema_e", True), ("counterflow", False)):
        result = simulate(_two_stream({"cp": 2.5}, BOILING, {"arrangement": arrangement, "ua": 40.0}, t_hot=200.0,
                                      t_cold=60.0, m_hot=4.0, m_cold=1.0))
        row = _row(result)
        assert row["cold_out_c"] > row["hot_out_c"]  # the outlets overlap in both
        assert ("temperature_cross" in set(result.limits["kind"])) == crossed


def _bowman_one_two_f(p, r):
    """F of a 1-2 shell (Bowman, Mueller & Nagle 1940, the 1-2 formula as Kern and every
    textbook print it; written out here apart from the code)."""
    root = np.sqrt(r * r + 1.0)
    return root * np.log((1.0 - p) / (1.0 - p * r)) / ((r - 1.0) * np.log(
        (2.0 - p * (r + 1.0 - root)) / (2.0 - p * (r + 1.0 + root))))


@pytest.mark.parametrize("ua, warned", [(10.0, set()), (15.0, {"outlet_approach"}), (30.0, {"low_f"})])
def test_a_one_two_shell_rated_by_zones_gives_its_outlet_approach_and_f(ua, warned):
    """A 1-2 shell boiling a feed: its outlets meet inside the shell, so its approach is the
    smaller of the ends and hot out - cold out (10.6 K at UA 10, 3.0 K at UA 15: warned below
    the case's 10 K), and its F is that of its terminal temperatures (Bowman's 1-2 formula),
    warned below 0.75 (0.72 at UA 30, where the outlets cross too). Before, the table gave the
    ends only and no F: a vaporiser 3 K from a cross passed silently."""
    result = simulate(_two_stream({"cp": 2.5}, BOILING, {"arrangement": "tema_e", "ua": ua}, t_hot=200.0,
                                  t_cold=60.0, m_hot=4.0, m_cold=1.0))
    row = _row(result)
    ends = min(200.0 - row["cold_out_c"], row["hot_out_c"] - 60.0)
    outlets = row["hot_out_c"] - row["cold_out_c"]
    assert row["min_approach_k"] == pytest.approx(min(ends, outlets), abs=1e-9)
    assert row["internal_approach_k"] <= row["min_approach_k"] + 1e-9
    hot_change, cold_change = 200.0 - row["hot_out_c"], row["cold_out_c"] - 60.0
    p = max(hot_change, cold_change) / 140.0
    r = min(hot_change, cold_change) / max(hot_change, cold_change)
    assert row["f"] == pytest.approx(_bowman_one_two_f(p, r), rel=1e-9)
    assert warned <= set(result.findings["kind"]) and not ({"outlet_approach", "low_f"} - warned) & set(
        result.findings["kind"])


def test_a_furnace_on_a_wide_boiling_curve_adds_the_heat_of_vaporisation():
    """A wide-boiling feed (no plateau: carried as temperature) heated to 260 °C in a fired
    heater: the duty is ṁ·(h(260) − h(200)) read off the table, by hand 20·(740 − 470) =
    5,400 kW with h(260) = 700 + 80·(10/20) = 740 between the rows at 250 and 270 °C, against
    20·2.5·60 = 3,000 kW on the liquid's cp (2.5 below 200 °C) alone; the outlet's vapour
    fraction 0.6 + 0.2·(10/20) = 0.7."""
    feed = {"enthalpy_curve": {"pressure": 300, "rows": [[100, 220.0, 0], [200, 470.0, 0], [230, 600.0, 0.3],
                                                         [250, 700.0, 0.6], [270, 780.0, 0.8], [300, 850.0, 1]]}}
    case = _case({"feed": feed}, {"feed": {"fluid": "feed", "flow": 20.0, "supply_temperature": 200.0,
                                           "path": "F-1 -> out"}}, {}, {"out": {}},
                 heaters={"F-1": {"outlet_temperature": 260.0}})
    del case["exchangers"]
    result = simulate(case)
    h_260 = 700.0 + (780.0 - 700.0) * (260.0 - 250.0) / 20.0
    assert abs(result.units.loc["F-1", "duty_kw"] - 20.0 * (h_260 - 470.0)) <= 1e-9
    assert abs(result.streams["vapour_fraction"].iloc[-1] - 0.7) <= 1e-12


def test_an_exchanger_rated_by_zones_is_not_back_calculated():
    """Plant-data back-calculation (mean cp over each side's range) would give a UA that belongs
    to no exchanger where a side boils: NaN with the reason, never a number."""
    from hxtrain.units.protocol import PortStates

    net = build_network(load_case(demo_case_path("naphtha_vaporiser")))
    fluids = tuple(net.fluids[s] for s in net.inlets["E-301"])
    states = PortStates(np.array([[290.0, 45.0]]), np.array([[30.0, 16.7]]), np.array([[185.0, 211.0]]),
                        np.array([[30.0, 16.7]]), fluids, fluids)
    condition = net.units["E-301"].condition(states)
    assert np.isnan(condition["ua"][0]) and np.isnan(condition["fouling"][0])
    assert "not back-calculated" in condition["reason"][0]


def test_a_four_pass_shell_past_its_peak_gives_no_number():
    """A 1-4 shell at NTU about 6 and R near 1 is past the NTU at which its P peaks: the duty is
    not unique in UA, so the scenario is not valid, naming the exchanger; at a UA below the peak
    it is rated (today's numbers: see the test above)."""
    exchanger = {"arrangement": "tema_e", "tube_passes": 4, "shell_side": "hot", "ua": 140.0}
    case = case_from_mapping(_two_stream(_line(2.3, boiling="plateau"), _line(2.6, boiling="plateau"), exchanger,
                                         m_cold=10.0 * 2.3 / 2.6))
    result = evaluate(case)
    assert result.status[0] == 2 and "not unique in UA" in result.reason(0) and "E-1" in result.reason(0)
    exchanger["ua"] = 15.0
    assert evaluate(case_from_mapping(_two_stream(_line(2.3, boiling="plateau"), _line(2.6, boiling="plateau"),
                                                  exchanger, m_cold=10.0 * 2.3 / 2.6))).status[0] == 0
