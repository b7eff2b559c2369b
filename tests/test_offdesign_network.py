"""Off-design rating in networks: behaviour checks on the crude demo and on small cases.

* The crude preheat demo rated at 70 %, 100 % and 115 % of its crude flow, fouled and clean:
  convergence, energy closure, films, furnace, pressure drops and their limits.
* Clean against fouled, and compare_clean_and_fouled against two separate simulate() calls.
* Equivalent inputs give the same answer (clean_u + fouling against the films it implies).
* rate_in_service: constant cp with a fixed U is the closed-form P–NTU answer; cp(T) closes the
  exchanger's own enthalpy balance and matters.
* Shells in series and in parallel; laminar/transitional warnings; fluid data ranges.

Run with ``-s`` to see the demo's furnace inlet temperatures printed for quoting.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import yaml

from hxtrain.network import CaseError, case_from_mapping, load_case, without_fouling
from hxtrain.solver import demo_case_path, simulate
from hxtrain.solver.cli.main import main
from hxtrain.solver.studies.clean_vs_fouled import compare_clean_and_fouled
from hxtrain.units import resistances
from hxtrain.units.pntu_rating import rate_exchanger
from hxtrain.units.properties import ConstantCp, PolynomialCp, petroleum_fraction
from hxtrain.units.service_rating import ExchangerSpec, rate_in_service
from hxtrain.units.u_models import FixedCoefficient, ScaledFilms, SideFilm

SCALES = (0.70, 1.00, 1.15)
CLOSURE = 1e-9


# ============================================================================ the crude demo off design


def demo_case(scale=1.0):
    case = load_case(demo_case_path("crude_preheat"))
    case.streams["crude"]["flow"] *= scale
    return case


@pytest.fixture(scope="module")
def demo_runs():
    """{scale: {"fouled": result, "clean": result, "case": case}} for 70 / 100 / 115 % crude."""
    runs = {}
    for scale in SCALES:
        case = demo_case(scale)
        runs[scale] = {"case": case, "fouled": simulate(case), "clean": simulate(without_fouling(case))}
    return runs


def exchangers_of(result):
    return result.units[result.units["type"] == "exchanger"]


def test_demo_furnace_inlet_temperatures_for_the_record(demo_runs, capsys):
    """Prints the furnace inlet temperature and duty at 70/100/115 % crude, fouled and clean."""
    rows = []
    for scale in SCALES:
        row = {"crude_flow_pct": round(100 * scale)}
        for state in ("fouled", "clean"):
            summary = demo_runs[scale][state].summary
            row[f"F-101_inlet_c_{state}"] = summary["F-101_inlet_c"]
            row[f"furnace_duty_kw_{state}"] = summary["fired_heater_duty_kw"]
        rows.append(row)
    table = pd.DataFrame(rows).set_index("crude_flow_pct")
    with capsys.disabled():
        print("\nCrude preheat demo off design (F-101 = furnace):")
        print(table.to_string(float_format=lambda v: f"{v:,.2f}"))
    assert np.all(np.isfinite(table.to_numpy()))


@pytest.mark.parametrize("scale", SCALES)
@pytest.mark.parametrize("state", ["fouled", "clean"])
def test_demo_converges_and_closes_its_energy_balance(demo_runs, scale, state):
    result = demo_runs[scale][state]
    assert result.converged
    assert result.balance["relative_imbalance"] <= CLOSURE, result.balance
    exchangers = exchangers_of(result)
    assert len(exchangers) == 12
    assert (exchangers["u_source"] == "films scaled from reference").all()


def test_demo_tube_side_film_rises_with_crude_flow(demo_runs):
    """The crude is on the tube side of every exchanger: its film coefficient rises with the
    crude flow (flow^0.8, less the viscosity rise of a colder crude)."""
    h = pd.DataFrame({s: exchangers_of(demo_runs[s]["fouled"])["h_tube_w_m2_k"] for s in SCALES})
    assert (h[0.70] < h[1.00]).all() and (h[1.00] < h[1.15]).all(), h


def test_demo_service_u_rises_with_crude_flow_at_fixed_temperatures(demo_runs):
    """Each exchanger's U model, evaluated at the 100 % side temperatures with the crude flow
    at 70 / 100 / 115 %: U service rises with crude flow in every exchanger."""
    base = demo_runs[1.00]
    case, units = base["case"], exchangers_of(base["fouled"])
    for tag, row in units.iterrows():
        data = case.exchangers[tag]
        spec = data["spec"]
        shell_fluid, crude = _shell_fluid(case, tag), case.fluids["crude"]
        assert spec.shell_side == "hot"
        t_shell = 0.5 * (row["hot_in_c"] + row["hot_out_c"])
        t_tube = 0.5 * (row["cold_in_c"] + row["cold_out_c"])
        m_shell = spec.thermal.shell.reference_flow
        u = [float(spec.thermal.evaluate(m_shell, spec.thermal.tube.reference_flow * s * (1 - spec.bypass_cold),
                                         t_shell, t_tube, shell_fluid, crude).u_service)
             for s in SCALES]
        assert u[0] < u[1] < u[2], (tag, u)


def _shell_fluid(case, tag):
    """The fluid of the stream whose path passes TAG.hot (hot side = shell side in the demo)."""
    for name, stream in case.streams.items():
        if f"{tag}.hot" in [step.label for origin in case.origins if origin.name == name for step in origin.path]:
            return case.fluids[stream["fluid"]]
    raise AssertionError(f"no stream through {tag}.hot")


def test_demo_service_u_follows_its_films(demo_runs):
    """U service in the network: (a) is the series sum of the reported films, fouling and wall;
    (b) with the shell-side film held at its previous value, rises with crude flow in every
    exchanger; (c) the shell-side film (its flow unchanged) moves with the shell-side mean
    temperature (viscosity falls as the oil warms).

    Note: U service itself does NOT rise with crude flow in every exchanger: more crude cools
    the residue in E-104 and E-108 enough that its shell-side film falls by more than the
    crude's film gains (printed below). That is the property correction working, not a fault."""
    tables = {s: exchangers_of(demo_runs[s]["fouled"]) for s in SCALES}
    case = demo_runs[1.00]["case"]
    printed = {}
    for tag in tables[1.00].index:
        thermal = case.exchangers[tag]["spec"].thermal
        u = []
        for s in SCALES:
            row = tables[s].loc[tag]
            rebuilt = float(resistances.overall_coefficient(row["h_shell_w_m2_k"], row["h_tube_w_m2_k"], thermal.fouling_shell,
                                                            thermal.fouling_tube, thermal.wall, thermal.diameter_ratio))
            assert rebuilt == pytest.approx(row["u_service_w_m2_k"], rel=1e-12)
            u.append(row["u_service_w_m2_k"])
        printed[tag] = u
        for low, high in ((0.70, 1.00), (1.00, 1.15)):
            a, b = tables[low].loc[tag], tables[high].loc[tag]
            held = float(resistances.overall_coefficient(a["h_shell_w_m2_k"], b["h_tube_w_m2_k"], thermal.fouling_shell,
                                                         thermal.fouling_tube, thermal.wall, thermal.diameter_ratio))
            assert held > a["u_service_w_m2_k"], (tag, low, high)
            t_a = 0.5 * (a["hot_in_c"] + a["hot_out_c"])
            t_b = 0.5 * (b["hot_in_c"] + b["hot_out_c"])
            assert np.sign(b["h_shell_w_m2_k"] - a["h_shell_w_m2_k"]) == np.sign(t_b - t_a), (tag, low, high)
    print("\nU service (W/m2 K) at 70/100/115 % crude:")
    print(pd.DataFrame(printed, index=[f"{round(100 * s)} %" for s in SCALES]).T.round(1).to_string())


def test_demo_furnace_inlet_falls_and_duty_rises_with_crude_flow(demo_runs):
    for state in ("fouled", "clean"):
        inlet = [demo_runs[s][state].summary["F-101_inlet_c"] for s in SCALES]
        duty = [demo_runs[s][state].summary["fired_heater_duty_kw"] for s in SCALES]
        assert inlet[0] > inlet[1] > inlet[2], (state, inlet)
        assert duty[0] < duty[1] < duty[2], (state, duty)


def test_demo_crude_side_pressure_drop_scales_with_flow_to_the_1_8(demo_runs):
    """The crude is on the tube side everywhere; the demo's densities are constant, so the
    crude-side drops go exactly as (flow ratio)^1.8, and the shell-side drops (flows unchanged)
    stay put."""
    base = exchangers_of(demo_runs[1.00]["fouled"])
    with_tube = base["dp_tube_kpa"].dropna().index
    assert len(with_tube) >= 4
    for s in SCALES:
        table = exchangers_of(demo_runs[s]["fouled"])
        ratio = table.loc[with_tube, "dp_tube_kpa"] / base.loc[with_tube, "dp_tube_kpa"]
        np.testing.assert_allclose(ratio, s**1.8, rtol=1e-9)
        shell = table["dp_shell_kpa"].dropna()
        np.testing.assert_allclose(shell, base.loc[shell.index, "dp_shell_kpa"], rtol=1e-12)
    # at the reference (data-sheet) flow, the reported drop is the case's reference value
    case = demo_runs[1.00]["case"]
    assert base.loc["E-101", "dp_tube_kpa"] == pytest.approx(60.0, rel=1e-12)
    assert case.exchangers["E-101"]["limits"]["allowable_pressure_drop"]["tube"] == pytest.approx(80e3)


def test_demo_allowable_pressure_drop_is_a_limit_at_115_percent(demo_runs):
    """At 115 % crude at least one crude-side drop exceeds its allowable and is reported as a
    'limit' finding naming exchangers.TAG.pressure_drop.tube.allowable; at 100 % none is."""
    for s, expect_some in ((1.00, False), (1.15, True)):
        result, case = demo_runs[s]["fouled"], demo_runs[s]["case"]
        table = exchangers_of(result)
        over = []
        for tag, data in case.exchangers.items():
            for side, allowable in data["limits"]["allowable_pressure_drop"].items():
                if table.loc[tag, f"dp_{side}_kpa"] * 1e3 > allowable:
                    over.append((tag, side))
        found = result.findings[result.findings["kind"] == "pressure_drop"]
        assert (found["severity"] == "limit").all()
        assert sorted(zip(found["unit"], [k.split(".")[3] for k in found["key"]])) == sorted(over)
        for tag, side in over:
            assert f"exchangers.{tag}.pressure_drop.{side}.allowable" in set(found["key"])
        assert bool(over) == expect_some, over
    assert demo_runs[1.15]["fouled"].summary["limit_violations"] >= 1


# ============================================================================ clean against fouled


@pytest.mark.parametrize("scale", SCALES)
def test_clean_u_is_at_least_service_u_and_furnace_duty_falls_when_clean(demo_runs, scale):
    fouled, clean = demo_runs[scale]["fouled"], demo_runs[scale]["clean"]
    f, c = exchangers_of(fouled), exchangers_of(clean)
    assert (f["u_clean_w_m2_k"] >= f["u_service_w_m2_k"]).all()
    assert (f["u_clean_w_m2_k"] > f["u_service_w_m2_k"]).all()  # every demo exchanger has fouling
    np.testing.assert_allclose(c["u_service_w_m2_k"], c["u_clean_w_m2_k"], rtol=1e-12)
    assert (c["fouling_shell_m2_k_w"] == 0).all() and (c["fouling_tube_m2_k_w"] == 0).all()
    assert clean.summary["fired_heater_duty_kw"] <= fouled.summary["fired_heater_duty_kw"]
    assert clean.summary["heat_recovered_kw"] >= fouled.summary["heat_recovered_kw"]
    assert clean.summary["F-101_inlet_c"] >= fouled.summary["F-101_inlet_c"]


def test_compare_clean_and_fouled_agrees_with_two_simulations(demo_runs):
    case = demo_case(1.0)
    comparison = compare_clean_and_fouled(case)
    fouled, clean = demo_runs[1.00]["fouled"], demo_runs[1.00]["clean"]
    totals = comparison.totals
    for key in ("heat_recovered_kw", "fired_heater_duty_kw", "cooler_duty_kw", "F-101_inlet_c"):
        assert totals.loc[key, "fouled"] == pytest.approx(fouled.summary[key], rel=1e-12)
        assert totals.loc[key, "clean"] == pytest.approx(clean.summary[key], rel=1e-12)
    assert comparison.fired_duty_penalty_kw == pytest.approx(
        fouled.summary["fired_heater_duty_kw"] - clean.summary["fired_heater_duty_kw"], rel=1e-12)
    assert comparison.fired_duty_penalty_kw > 0
    table = comparison.exchangers
    np.testing.assert_allclose(table["duty_fouled_kw"], exchangers_of(fouled)["duty_kw"], rtol=1e-12)
    np.testing.assert_allclose(table["duty_clean_kw"], exchangers_of(clean).loc[table.index, "duty_kw"], rtol=1e-12)
    np.testing.assert_allclose(table["duty_lost_to_fouling_kw"], table["duty_clean_kw"] - table["duty_fouled_kw"], rtol=1e-12)
    # the case passed in is left fouled
    assert simulate(case).summary["fired_heater_duty_kw"] == pytest.approx(fouled.summary["fired_heater_duty_kw"], rel=1e-12)


def test_compare_clean_and_fouled_accepts_a_path():
    comparison = compare_clean_and_fouled(demo_case_path("crude_preheat"))
    assert comparison.totals.loc["fired_heater_duty_kw", "clean"] < comparison.totals.loc["fired_heater_duty_kw", "fouled"]


# ============================================================================ small cases

TUBES = {"outer_diameter": "19.05 mm", "inner_diameter": "14.83 mm", "wall_conductivity": 45}
DO, DI, K_WALL = 0.01905, 0.01483, 45.0


def fluids_with_properties():
    return {
        "gas_oil": {"petroleum": {"specific_gravity": 0.88, "watson_k": 11.8},
                    "viscosity": {"points": [[100, "4 cP"], [250, "0.8 cP"]]}, "conductivity": 0.12, "density": 800},
        "crude": {"petroleum": {"api_gravity": 31, "watson_k": 11.8},
                  "viscosity": {"points": [[40, "9 cP"], [200, "0.9 cP"]]}, "conductivity": 0.12, "density": 830},
    }


def two_stream_case(exchanger, hot_flow=30.0, cold_flow=40.0, t_hot=260.0, t_cold=60.0, fluids=None):
    """One exchanger E-1: hot stream (gas oil) in the shell, cold stream (crude) in the tubes."""
    return {
        "title": "two streams, one exchanger",
        "fluids": fluids if fluids is not None else fluids_with_properties(),
        "streams": {
            "hot": {"fluid": "gas_oil", "flow": hot_flow, "supply_temperature": t_hot, "path": "E-1.hot -> hot_out"},
            "cold": {"fluid": "crude", "flow": cold_flow, "supply_temperature": t_cold, "path": "E-1.cold -> cold_out"},
        },
        "exchangers": {"E-1": exchanger},
        "products": {"hot_out": {}, "cold_out": {}},
    }


def film_exchanger(**extra):
    data = {"arrangement": "tema_e", "shell_side": "hot", "area_per_shell": 150,
            "film": {"shell": 1200, "tube": 900}, "reference_flow": {"shell": 30, "tube": 40},
            "reference_temperature": {"shell": 200, "tube": 120}, "fouling": {"shell": 3e-4, "tube": 5e-4},
            "tubes": TUBES}
    data.update(extra)
    return data


def e1(result):
    return result.units.loc["E-1"]


@pytest.mark.parametrize("flows", [(30.0, 40.0), (18.0, 55.0), (45.0, 12.0)])
def test_clean_u_with_fouling_equals_the_films_it_implies(flows):
    """An exchanger given by clean_u + clean_resistance_shell_share + fouling rates exactly as
    the same exchanger given by the film coefficients films_from_clean_coefficient returns."""
    clean_u, share = 420.0, 0.35
    wall = float(resistances.wall_resistance(DO, DI, K_WALL))
    h_shell, h_tube = (float(v) for v in resistances.films_from_clean_coefficient(clean_u, share, wall, DO / DI))
    common = {"arrangement": "tema_e", "shell_side": "hot", "area_per_shell": 150, "shells": 2,
              "reference_flow": {"shell": 30, "tube": 40}, "reference_temperature": {"shell": 200, "tube": 120},
              "fouling": {"shell": 3e-4, "tube": 5e-4}, "tubes": TUBES}
    by_clean = {**common, "clean_u": clean_u, "clean_resistance_shell_share": share}
    by_film = {**common, "film": {"shell": h_shell, "tube": h_tube}}
    hot, cold = flows
    a = e1(simulate(case_from_mapping(two_stream_case(by_clean, hot, cold))))
    b = e1(simulate(case_from_mapping(two_stream_case(by_film, hot, cold))))
    for column in ("duty_kw", "hot_out_c", "cold_out_c", "u_service_w_m2_k", "u_clean_w_m2_k", "h_shell_w_m2_k",
                   "h_tube_w_m2_k"):
        assert a[column] == pytest.approx(b[column], rel=1e-9), column
    if flows == (30.0, 40.0):
        # at the reference flows and temperatures the clean U is the data sheet's
        at_reference = case_from_mapping(two_stream_case(by_clean))
        thermal = at_reference.exchangers["E-1"]["spec"].thermal
        coefficients = thermal.evaluate(30.0, 40.0, 200.0, 120.0, at_reference.fluids["gas_oil"], at_reference.fluids["crude"])
        assert float(coefficients.u_clean) == pytest.approx(clean_u, rel=1e-12)
        assert float(coefficients.u_service) == pytest.approx(
            1.0 / (1.0 / clean_u + 3e-4 + 5e-4 * DO / DI), rel=1e-12)


def p_counterflow_closed_form(ntu, cr):
    """Counterflow effectiveness (Incropera Table 11.3; Shah & Sekulić Table 3.3):
    (1 - exp(-NTU(1-Cr))) / (1 - Cr exp(-NTU(1-Cr)))."""
    e = math.exp(-ntu * (1.0 - cr))
    return (1.0 - e) / (1.0 - cr * e)


def p_tema_e_closed_form(ntu, cr):
    """One shell pass, 2 tube passes (Incropera Table 11.3, shell-and-tube, one shell pass):
    2 / (1 + Cr + sqrt(1+Cr^2) (1 + exp(-NTU sqrt(1+Cr^2))) / (1 - exp(-NTU sqrt(1+Cr^2))))."""
    s = math.sqrt(1.0 + cr * cr)
    e = math.exp(-ntu * s)
    return 2.0 / (1.0 + cr + s * (1.0 + e) / (1.0 - e))


@pytest.mark.parametrize("arrangement,closed_form", [("counterflow", p_counterflow_closed_form),
                                                     ("tema_e", p_tema_e_closed_form)])
@pytest.mark.parametrize("thermal_form", ["ua", "fixed_u"])
def test_constant_cp_fixed_u_is_the_closed_form_pntu_answer(arrangement, closed_form, thermal_form):
    """Constant cp and a fixed U through rate_in_service: the P–NTU closed form, to round-off,
    and identical to rate_exchanger called directly (the service loop adds nothing)."""
    cp_hot, cp_cold = 2.5, 2.2
    hot, cold = ConstantCp(cp_hot), ConstantCp(cp_cold)
    for m_hot, m_cold, t_hot, t_cold, ua in [(30.0, 40.0, 260.0, 60.0, 40.0), (40.0, 10.0, 200.0, 20.0, 15.0),
                                              (12.0, 15.0, 310.0, 150.0, 80.0)]:
        if thermal_form == "ua":
            spec = ExchangerSpec(arrangement, ua=ua)
        else:
            spec = ExchangerSpec(arrangement, thermal=FixedCoefficient(ua * 1000.0 / 50.0), area_per_shell=50.0)
        service = rate_in_service(spec, t_hot, t_cold, m_hot, m_cold, hot, cold)
        assert service.passes == 1
        c_hot, c_cold = m_hot * cp_hot, m_cold * cp_cold
        c_min, c_max = min(c_hot, c_cold), max(c_hot, c_cold)
        duty = closed_form(ua / c_min, c_min / c_max) * c_min * (t_hot - t_cold)
        x = service.rating
        assert float(x.duty) == pytest.approx(duty, rel=1e-12)
        assert float(x.t_hot_out) == pytest.approx(t_hot - duty / c_hot, rel=1e-12)
        assert float(x.t_cold_out) == pytest.approx(t_cold + duty / c_cold, rel=1e-12)
        direct = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, arrangement)
        for name in ("duty", "t_hot_out", "t_cold_out", "f", "lmtd"):
            assert float(getattr(x, name)) == float(getattr(direct, name)), name


def test_cp_of_temperature_closes_the_exchangers_own_enthalpy_balance():
    """Fluids with cp(T) and a film-scaled U: m_hot Δh_hot = m_cold Δh_cold = duty to 1e-9, and
    the outlet temperatures differ from a constant-cp rating at the inlet cp (cp(T) matters)."""
    hot = petroleum_fraction(0.90, 11.7)
    cold = PolynomialCp([1.75, 0.0042, 2.0e-6])
    thermal = ScaledFilms(SideFilm(1200.0, 30.0, 0.6), SideFilm(900.0, 40.0, 0.8), 3e-4, 5e-4,
                          float(resistances.wall_resistance(DO, DI, K_WALL)), DO / DI)
    for arrangement, shells in (("counterflow", 1), ("tema_e", 2)):
        spec = ExchangerSpec(arrangement, thermal=thermal, area_per_shell=150.0, shells=shells)
        m_hot, m_cold, t_hot, t_cold = 30.0, 40.0, 320.0, 60.0
        service = rate_in_service(spec, t_hot, t_cold, m_hot, m_cold, hot, cold)
        x = service.rating
        q_hot = m_hot * float(hot.enthalpy(t_hot) - hot.enthalpy(x.t_hot_out))
        q_cold = m_cold * float(cold.enthalpy(x.t_cold_out) - cold.enthalpy(t_cold))
        assert q_hot == pytest.approx(q_cold, rel=1e-9)
        assert float(x.duty) == pytest.approx(q_hot, rel=1e-9)
        assert service.passes > 1
        # the constant-cp rating at the inlet cp, same U
        const = ExchangerSpec(arrangement, ua=float(service.ua), shells=shells)
        fixed = rate_in_service(const, t_hot, t_cold, m_hot, m_cold, ConstantCp(float(hot.cp(t_hot))),
                                ConstantCp(float(cold.cp(t_cold)))).rating
        assert abs(float(fixed.t_hot_out) - float(x.t_hot_out)) > 1.0
        assert abs(float(fixed.t_cold_out) - float(x.t_cold_out)) > 1.0


def test_the_passes_stop_by_the_contraction_estimate_within_the_tolerance(monkeypatch):
    """The passes stop once the contraction bound c/(1-c) x change (c from the last two changes,
    times a safety factor) is within the tolerance: one pass sooner than the change alone on a
    fast-contracting exchanger, and still within the tolerance of the fixed point (found here
    with a tolerance 1000 times tighter and the estimate off)."""
    from hxtrain.units import service_rating

    hot, cold = petroleum_fraction(0.90, 11.7), PolynomialCp([1.75, 0.0042, 2.0e-6])
    thermal = ScaledFilms(SideFilm(1200.0, 30.0, 0.6), SideFilm(900.0, 40.0, 0.8), 3e-4, 5e-4,
                          float(resistances.wall_resistance(DO, DI, K_WALL)), DO / DI)
    spec = ExchangerSpec("tema_e", thermal=thermal, area_per_shell=150.0, shells=2)
    t_hot = np.linspace(250.0, 340.0, 50)
    args = (t_hot, 60.0, 30.0, 40.0, hot, cold)
    estimated = rate_in_service(spec, *args)
    with monkeypatch.context() as m:
        m.setattr(service_rating, "CONTRACTION_LIMIT", 0.0)  # the change alone
        by_change = rate_in_service(spec, *args)
        m.setattr(service_rating, "OUTLET_TOLERANCE", service_rating.OUTLET_TOLERANCE * 1e-3)
        tight = rate_in_service(spec, *args)
    assert estimated.passes < by_change.passes < tight.passes
    allowed = service_rating.OUTLET_TOLERANCE * (1.0 + t_hot)
    for result in (estimated, by_change):
        for side in ("t_hot_out", "t_cold_out"):
            assert np.all(np.abs(getattr(result.rating, side) - getattr(tight.rating, side)) <= allowed)


def test_a_warm_start_moved_with_the_inlets_saves_passes_and_keeps_the_fixed_point():
    """moved_outlets: the last rating's outlets carried to new inlets at their fractions of the
    inlet difference. With constant cp and a fixed U that is the answer itself (the outlets are
    affine in the inlets); with cp(T) and film U it starts the passes closer than the last
    outlets unmoved (fewer passes), and every start ends within the passes' tolerance of the
    fixed point (found here with a tolerance 1000 times tighter from a cold start)."""
    from hxtrain.units import service_rating
    from hxtrain.units.service_rating import moved_outlets

    t_hot, t_cold = np.linspace(250.0, 340.0, 50), np.linspace(40.0, 80.0, 50)
    shifted_hot, shifted_cold = t_hot + 7.0, t_cold - 3.0
    linear = ExchangerSpec("tema_e", ua=55.0, shells=2)
    first = rate_in_service(linear, t_hot, t_cold, 30.0, 40.0, ConstantCp(2.6), ConstantCp(2.2)).rating
    moved = moved_outlets((t_hot, t_cold), (first.t_hot_out_exchanger, first.t_cold_out_exchanger),
                          shifted_hot, shifted_cold)
    second = rate_in_service(linear, shifted_hot, shifted_cold, 30.0, 40.0, ConstantCp(2.6), ConstantCp(2.2)).rating
    assert np.allclose(moved[0], second.t_hot_out_exchanger, rtol=0, atol=1e-12)
    assert np.allclose(moved[1], second.t_cold_out_exchanger, rtol=0, atol=1e-12)

    hot, cold = petroleum_fraction(0.90, 11.7), PolynomialCp([1.75, 0.0042, 2.0e-6])
    thermal = ScaledFilms(SideFilm(1200.0, 30.0, 0.6), SideFilm(900.0, 40.0, 0.8), 3e-4, 5e-4,
                          float(resistances.wall_resistance(DO, DI, K_WALL)), DO / DI)
    spec = ExchangerSpec("tema_e", thermal=thermal, area_per_shell=150.0, shells=2)
    last = rate_in_service(spec, t_hot, t_cold, 30.0, 40.0, hot, cold).rating
    outlets = (last.t_hot_out_exchanger, last.t_cold_out_exchanger)
    args = (spec, shifted_hot, shifted_cold, 30.0, 40.0, hot, cold)
    warm = rate_in_service(*args, guess=moved_outlets((t_hot, t_cold), outlets, shifted_hot, shifted_cold))
    unmoved = rate_in_service(*args, guess=outlets)
    assert warm.passes < unmoved.passes
    with pytest.MonkeyPatch.context() as m:
        m.setattr(service_rating, "OUTLET_TOLERANCE", service_rating.OUTLET_TOLERANCE * 1e-3)
        tight = rate_in_service(*args)
    allowed = service_rating.OUTLET_TOLERANCE * (1.0 + shifted_hot)
    for result in (warm, unmoved):
        for side in ("t_hot_out", "t_cold_out"):
            assert np.all(np.abs(getattr(result.rating, side) - getattr(tight.rating, side)) <= allowed)
    assert moved_outlets(None, None, t_hot, t_cold) is None
    other_batch = (t_hot[:3], t_cold[:3])
    assert moved_outlets(other_batch, other_batch, t_hot, t_cold) is other_batch  # rate_in_service ignores it


def test_a_film_scaled_far_from_its_reference_flow_is_warned_of():
    """h ∝ ṁ^n is carried from one known point: a flow outside a third to three times the
    reference (per shell) gets a warning naming the side; a side without flow does not. In a case:
    the tube side of an exchanger at four times its reference flow, the shell side at one."""
    thermal = ScaledFilms(SideFilm(1200.0, 30.0, 0.6), SideFilm(900.0, 40.0, 0.8))
    shell, tube = thermal.scaling_findings("exchangers.E-1", np.array([5.0, 30.0, 95.0, 0.0]),
                                           np.array([40.0, 130.0, 12.0, 0.0]))
    assert shell.active.tolist() == [True, False, True, False]
    assert tube.active.tolist() == [False, True, True, False]
    data = {"fluids": {"oil": {"cp": 2.4}, "crude": {"cp": 2.1}},
            "streams": {"oil": {"fluid": "oil", "flow": 30.0, "supply_temperature": 300, "path": "E-1.hot -> a"},
                        "crude": {"fluid": "crude", "flow": 160.0, "supply_temperature": 40, "path": "E-1.cold -> b"}},
            "exchangers": {"E-1": {"arrangement": "tema_e", "shell_side": "hot", "area_per_shell": 200,
                                   "film": {"shell": 1200, "tube": 900}, "reference_flow": {"shell": 30, "tube": 40}}},
            "products": {"a": {}, "b": {}}}
    found = simulate(case_from_mapping(data)).findings
    far = found[found["kind"] == "film_far_from_reference"]
    assert len(far) == 1 and far["message"].iloc[0].startswith("the tube-side flow is 4.00 times the reference flow")
    data["streams"]["crude"]["flow"] = 100.0
    assert "film_far_from_reference" not in set(simulate(case_from_mapping(data)).findings["kind"])


def test_cp_of_temperature_in_a_case_closes_on_enthalpy():
    result = simulate(case_from_mapping(two_stream_case(film_exchanger(), t_hot=330.0, t_cold=40.0)))
    row = e1(result)
    fluids = case_from_mapping(two_stream_case(film_exchanger())).fluids
    q_hot = 30.0 * float(fluids["gas_oil"].enthalpy(row["hot_in_c"]) - fluids["gas_oil"].enthalpy(row["hot_out_c"]))
    q_cold = 40.0 * float(fluids["crude"].enthalpy(row["cold_out_c"]) - fluids["crude"].enthalpy(row["cold_in_c"]))
    assert q_hot == pytest.approx(q_cold, rel=1e-9)
    assert row["duty_kw"] == pytest.approx(q_hot, rel=1e-9)
    assert result.balance["relative_imbalance"] <= CLOSURE


def test_second_shell_in_series_raises_the_duty():
    one = e1(simulate(case_from_mapping(two_stream_case(film_exchanger(shells=1)))))
    two = e1(simulate(case_from_mapping(two_stream_case(film_exchanger(shells=2)))))
    assert two["duty_kw"] > one["duty_kw"]
    # twice the area; U differs only through the side temperatures (property correction)
    assert two["ua_kw_k"] == pytest.approx(2 * one["ua_kw_k"], rel=0.1)


def test_shells_in_parallel_halve_the_flow_per_shell_and_lower_u():
    """Units level: the same per-shell film model; two parallel shells each carry half of both
    flows, so with films scaling with flow U falls (by 0.5^0.6..0.5^0.8 on the films)."""
    thermal = ScaledFilms(SideFilm(1200.0, 30.0, 0.6), SideFilm(900.0, 40.0, 0.8))
    hot, cold = ConstantCp(2.5), ConstantCp(2.2)
    one = rate_in_service(ExchangerSpec("tema_e", thermal=thermal, area_per_shell=150.0), 260.0, 60.0, 30.0, 40.0, hot, cold)
    two = rate_in_service(ExchangerSpec("tema_e", thermal=thermal, area_per_shell=150.0, shells_in_parallel=2),
                          260.0, 60.0, 30.0, 40.0, hot, cold)
    u1, u2 = float(one.coefficients.u_service), float(two.coefficients.u_service)
    assert u2 < u1
    assert float(two.coefficients.h_shell) == pytest.approx(1200.0 * 0.5**0.6, rel=1e-12)
    assert float(two.coefficients.h_tube) == pytest.approx(900.0 * 0.5**0.8, rel=1e-12)
    assert float(two.ua) == pytest.approx(u2 * 300.0 / 1000.0, rel=1e-12)  # twice the area


def geometry_exchanger(**extra):
    data = {"arrangement": "tema_e", "shell_side": "hot",
            "geometry": {"tube_outer_diameter": "19.05 mm", "tube_inner_diameter": "14.83 mm", "tube_length": "6.1 m",
                         "tubes": 400, "tube_pitch": "25.4 mm", "tube_layout": "square", "baffle_spacing": "0.3 m",
                         "baffles": 18, "shell_inner_diameter": "0.75 m", "wall_conductivity": 45},
            "fouling": {"shell": 3e-4, "tube": 5e-4}}
    data.update(extra)
    return data


def test_shells_in_parallel_from_geometry_lower_u():
    """Case level, films from geometry: a second shell in parallel halves Re on both sides."""
    case = case_from_mapping(two_stream_case(geometry_exchanger()))
    one = e1(simulate(case))
    two = e1(simulate(case_from_mapping(two_stream_case(geometry_exchanger(shells_in_parallel=2)))))
    assert two["u_service_w_m2_k"] < one["u_service_w_m2_k"]
    assert two["u_clean_w_m2_k"] < one["u_clean_w_m2_k"]
    # Re mu = m D / A: half the flow per shell, once the viscosity at each side mean is taken out
    crude = case.fluids["crude"]
    re_mu = [float(r["re_tube"] * crude.viscosity(0.5 * (r["cold_in_c"] + r["cold_out_c"]))) for r in (one, two)]
    assert re_mu[1] == pytest.approx(0.5 * re_mu[0], rel=1e-9)


def test_shells_in_parallel_with_data_sheet_films_keep_u_at_the_reference_flow():
    """README: reference_flow is the flow through the whole exchanger. Two parallel shells with
    the same film data: each shell sees half the flow at half the reference, so U is unchanged
    and the area doubles."""
    one = e1(simulate(case_from_mapping(two_stream_case(film_exchanger()))))
    two = e1(simulate(case_from_mapping(two_stream_case(film_exchanger(shells_in_parallel=2)))))
    assert two["ua_kw_k"] > one["ua_kw_k"]
    assert two["duty_kw"] > one["duty_kw"]


def findings_of(result, kind):
    return result.findings[result.findings["kind"] == kind]


def test_laminar_and_transitional_tube_side_warnings_when_flow_is_cut():
    """reference_reynolds_tube = 12 000 at 40 kg/s and 120 °C: Re follows the flow and the
    viscosity (the crude runs colder than 120 °C here): no warning at 60 kg/s (Re ~ 10 500),
    transitional at 20 kg/s, laminar at 2 kg/s."""
    exchanger = film_exchanger(reference_reynolds_tube=12000)
    seen = {}
    for cold_flow in (60.0, 20.0, 2.0):
        result = simulate(case_from_mapping(two_stream_case(exchanger, cold_flow=cold_flow)))
        re = e1(result)["re_tube"]
        laminar = findings_of(result, "laminar_tube_side")
        transitional = findings_of(result, "transitional_tube_side")
        assert (laminar["severity"] == "warning").all() and (transitional["severity"] == "warning").all()
        assert len(laminar) == (1 if re < 2300 else 0), (cold_flow, re)
        assert len(transitional) == (1 if 2300 <= re < 1e4 else 0), (cold_flow, re)
        seen[cold_flow] = ("laminar" if re < 2300 else "transitional" if re < 1e4 else "turbulent")
        for finding in pd.concat([laminar, transitional])["message"]:
            assert f"Re = {re:.0f}" in finding
    assert seen == {60.0: "turbulent", 20.0: "transitional", 2.0: "laminar"}, seen


def test_laminar_tube_side_warning_from_geometry():
    result = simulate(case_from_mapping(two_stream_case(geometry_exchanger(), cold_flow=1.5)))
    assert e1(result)["re_tube"] < 2300
    assert len(findings_of(result, "laminar_tube_side")) == 1


def test_laminar_reference_scales_with_the_laminar_exponent():
    """ScaledFilms' docstring: "below 2300 the film scales as a laminar developing flow
    (Nu ∝ (Re Pr)^(1/3), Sieder–Tate form) instead of with the turbulent exponent". With a
    laminar reference (Re_ref = 1500) and the flow halved (Re = 750, still laminar), h must be
    h_ref (1/2)^(1/3) = 0.7937 h_ref, not the turbulent h_ref (1/2)^0.8 = 0.5743 h_ref."""
    tube = SideFilm(900.0, 40.0, 0.8, reference_reynolds=1500.0)
    thermal = ScaledFilms(SideFilm(1200.0, 30.0, 0.6), tube)
    fluid = ConstantCp(2.2)
    c = thermal.evaluate(30.0, 20.0, 200.0, 120.0, fluid, fluid)
    assert bool(c.notes["laminar_tube_side"])
    assert float(c.reynolds_tube) == pytest.approx(750.0)
    assert float(c.h_tube) == pytest.approx(900.0 * 0.5 ** (1.0 / 3.0), rel=1e-9)


# ============================================================================ fluid data ranges


def write_case(tmp_path, data, name="range_case.yaml"):
    path = tmp_path / name
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path


def ranged_case(extrapolate=None, cold_range=(0, 120), table=False):
    fluids = fluids_with_properties()
    if table:
        fluids["crude"] = {"cp": {"table": [[0, 1.8], [100, 2.1], [120, 2.16]]}}
    else:
        fluids["crude"]["valid_range"] = list(cold_range)
    if extrapolate is not None:
        fluids["crude"]["extrapolate"] = extrapolate
    # 40 kg/s crude from 60 °C against 30 kg/s gas oil from 330 °C: the crude leaves near 150 °C,
    # above the 120 °C where its data end
    return two_stream_case(film_exchanger(), t_hot=330.0, fluids=fluids)


@pytest.mark.parametrize("table", [False, True], ids=["valid_range", "table_span"])
def test_stream_outside_valid_range_is_bad_input(tmp_path, capsys, table):
    key = "fluids.crude.cp" if table else "fluids.crude.valid_range"
    data = ranged_case(table=table)
    with pytest.raises(CaseError) as raised:
        simulate(case_from_mapping(data))
    assert key in str(raised.value)
    path = write_case(tmp_path, data)
    capsys.readouterr()
    code = main(["run", str(path)])
    captured = capsys.readouterr()
    assert code == 2, captured.err
    assert key in captured.err and "range_case.yaml" in captured.err
    assert "extrapolate: true" in captured.err
    assert captured.out == ""


@pytest.mark.parametrize("table", [False, True], ids=["valid_range", "table_span"])
def test_extrapolate_true_turns_the_refusal_into_a_warning(tmp_path, capsys, table):
    data = ranged_case(extrapolate=True, table=table)
    result = simulate(case_from_mapping(data))
    found = findings_of(result, "property_extrapolation")
    assert len(found) >= 1
    assert (found["severity"] == "warning").all()
    key = "fluids.crude.cp" if table else "fluids.crude.valid_range"
    assert set(found["key"]) == {key}
    assert e1(result)["cold_out_c"] > 120.0
    capsys.readouterr()
    assert main(["run", str(write_case(tmp_path, data))]) == 0


def test_extrapolate_false_is_the_default_and_inside_the_range_is_quiet():
    data = ranged_case(extrapolate=False)
    with pytest.raises(CaseError):
        simulate(case_from_mapping(data))
    quiet = simulate(case_from_mapping(ranged_case(cold_range=(0, 380))))
    assert findings_of(quiet, "property_extrapolation").empty
