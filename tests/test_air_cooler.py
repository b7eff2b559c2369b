"""Air coolers: the P–NTU relations of air-cooled bundles (``hxtrain.units.pntu_air_cooler``) and
the air-cooler unit in networks (``air_coolers`` section).

References, named beside each check:

* **ht 1.2 (ChEDL)** ``ht.hx.temperature_effectiveness_air_cooler`` (Schedwill's N rows, one
  pass; Nicole's 2-2, 3-3, 5-5 and 4-2 forms as given by Thulukkanam) read with side 1 the air:
  1e-12 where ht's float form is well conditioned (R·NTU >= 1e-3: below, its
  ``(1 - 1/ξ)/R`` loses ~eps/(R·NTU)).
* **The row model's differential equations**, solved exactly in the test (matrix exponential of
  the rows' linear system, :func:`row_model`): air unmixed along the tubes crossing the rows in
  turn, each row one tube deep, the process fluid mixed between passes and entering in the row
  where the air leaves. An independent check of every form, and the reference of the 4-row,
  4-pass form, which ht's printed version misses (it fails P = 1 - exp(-NTU) at R = 0).
* **Incropera** (Table 11.3, from memory): one row, one pass is crossflow with the air unmixed and
  the process fluid mixed.
* Networks: energy closure, the fan controller's target, the limits of the fans, and the same
  bundle rated as an exchanger against an air stream.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from ht import hx
from scipy.linalg import expm

from hxtrain.network import CaseError, case_from_mapping
from hxtrain.solver import simulate
from hxtrain.units import pntu
from hxtrain.units.pntu_air_cooler import AIR_COOLER_PASSES, p_air_cooler, p_air_cooler_air_basis

SETTINGS = [(rows, passes) for passes, rows_list in AIR_COOLER_PASSES.items() for rows in rows_list]
R_GRID = (0.01, 0.1, 0.3, 0.5, 1.0, 1.5, 3.0, 5.0)
NTU_GRID = (0.01, 0.1, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0)


def row_model(ntu_air, r_air, rows, passes):
    """P of the air from the row model, exactly: rows 0..N-1 in the air's order, x along the tubes
    (0 to 1). Air into row j: A_j = sum_{i<j} K (1-K)^{j-1-i} t_i (air enters at 0), K = 1 -
    exp(-NTU_air/N); each row's process fluid (rows/passes rows share a pass) changes as
    dt_j/ds = -(rows/passes) K R (t_j - A_j) along its flow direction s. One linear ODE system
    t' = M t in x; the pass inlets and the mixed pass outlets tie t(0) and t(1) = expm(M) t(0)."""
    k = -np.expm1(-ntu_air / rows)
    per = rows // passes
    # pass p holds the rows nearest the air outlet first; passes alternate direction
    pass_rows = [list(range(rows - 1 - p * per, rows - 1 - p * per - per, -1)) for p in range(passes)]
    direction = np.zeros(rows)
    for p, rs in enumerate(pass_rows):
        direction[rs] = 1.0 if p % 2 == 0 else -1.0
    m = np.zeros((rows, rows))
    for j in range(rows):
        rate = per * k * r_air * direction[j]
        m[j, j] -= rate
        for i in range(j):
            m[j, i] += rate * k * (1.0 - k) ** (j - 1 - i)
    phi = expm(m)  # t(1) = phi t(0)
    # unknowns: t(0) of every row; equations: each row's inlet equals its pass inlet temperature
    a, b = np.zeros((rows, rows)), np.zeros(rows)
    inlet = (np.eye(rows), 1.0)  # the first pass enters at 1 (the air at 0)
    for p, rs in enumerate(pass_rows):
        coefficients, value = inlet
        for j in rs:
            at_entry = np.eye(rows)[j] if direction[j] > 0 else phi[j]
            a[j] = at_entry - (coefficients if np.ndim(coefficients) == 1 else 0.0)
            b[j] = value if np.ndim(coefficients) == 0 or coefficients.ndim == 2 else 0.0
        exits = [phi[j] if direction[j] > 0 else np.eye(rows)[j] for j in rs]
        inlet = (np.mean(exits, axis=0), 0.0)
    t0 = np.linalg.solve(a, b)
    t_out = float(inlet[0] @ t0)
    return (1.0 - t_out) / r_air


def test_row_model_against_one_row():
    """The test's own model, checked first: one row, one pass is crossflow with the air unmixed and
    the process fluid mixed (Incropera Table 11.3, from memory), P_air = [1 - exp(-K R)]/R,
    K = 1 - exp(-NTU_air)."""
    for r in R_GRID:
        for n in NTU_GRID:
            expected = float(pntu.p_crossflow_one_mixed(n, r, side1_mixed=False))
            assert row_model(n, r, 1, 1) == pytest.approx(expected, rel=1e-12)


def _worst(reference, rows, passes, keep=lambda r, n: True):
    worst, where = 0.0, None
    for r in R_GRID:
        for n in NTU_GRID:
            if not keep(r, n):
                continue
            d = abs(float(p_air_cooler_air_basis(n, r, rows, passes)) / reference(n, r) - 1.0)
            if d > worst:
                worst, where = d, (r, n)
    return worst, where


@pytest.mark.parametrize("rows, passes", [s for s in SETTINGS if s != (4, 4)])
def test_against_ht(rows, passes):
    """ht 1.2 temperature_effectiveness_air_cooler(R1, NTU1, rows, passes) with side 1 the air, to
    1e-12 where R·NTU >= 1e-3."""
    worst, where = _worst(lambda n, r: hx.temperature_effectiveness_air_cooler(r, n, rows, passes), rows, passes,
                          keep=lambda r, n: r * n >= 1e-3)
    assert worst <= 1e-12, (worst, where)


@pytest.mark.parametrize("rows, passes", SETTINGS)
def test_against_the_row_model(rows, passes):
    """The row model's differential equations solved exactly (:func:`row_model`), to 1e-11."""
    worst, where = _worst(lambda n, r: row_model(n, r, rows, passes), rows, passes)
    assert worst <= 1e-11, (worst, where)


def test_the_printed_four_row_four_pass_form_misses_the_zero_r_limit():
    """ht's (as printed) 4-4 form gives P = 0.618 at R = 1e-7, NTU = 1 where every exchanger has
    1 - exp(-1) = 0.632 (Shah & Sekulić 2003, from memory); the form derived here has it."""
    assert hx.temperature_effectiveness_air_cooler(1e-7, 1.0, 4, 4) == pytest.approx(0.6177, abs=1e-3)
    assert float(p_air_cooler_air_basis(1.0, 1e-7, 4, 4)) == pytest.approx(1.0 - np.exp(-1.0), rel=1e-6)


@pytest.mark.parametrize("rows, passes", SETTINGS)
def test_identities(rows, passes):
    """R = 0: 1 - exp(-NTU) (the other fluid isothermal); NTU = 0: 0; the process side equals
    the air side through P_p = R_air P_air, including R_p = 0; no overflow at 1e30."""
    n = np.array([0.0, 0.3, 2.0, 40.0])
    np.testing.assert_allclose(p_air_cooler_air_basis(n, 0.0, rows, passes), -np.expm1(-n), rtol=1e-13)
    np.testing.assert_allclose(p_air_cooler(n, 0.0, rows, passes, side1="process"), -np.expm1(-n), rtol=1e-13)
    r = np.array([0.2, 1.0, 4.0])
    process = p_air_cooler(1.5, r, rows, passes, side1="process")
    np.testing.assert_allclose(process, p_air_cooler_air_basis(1.5 * r, 1.0 / r, rows, passes) / r, rtol=1e-13)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no overflow or invalid-value warning (numpy's defaults)
        extreme = p_air_cooler_air_basis(np.array([1e30, 5.0, 1e-30]), np.array([1e-30, 1e30, 3.0]), rows, passes)
    assert np.all(np.isfinite(extreme)) and np.all(extreme >= 0.0)


@pytest.mark.parametrize("rows, passes", SETTINGS)
def test_monotone_in_ntu_up_to_1e8_on_both_sides(rows, passes):
    """P never falls as NTU rises (air-cooled bundles have no temperature cross), NTU from 1e-8 to
    1e8, R from 0 to 100 (1 and 1 +- 1e-9 included), air and process basis. Round-off allowed on
    the plateau P -> 1: 32 eps relative (measured while writing this: 19 eps, Schedwill's sum with
    7 to 10 rows at NTU 40-350, where 1 - P is below 1e-13)."""
    ntu = np.concatenate([[0.0], np.logspace(-8, 8, 241)])
    for side in ("air", "process"):
        for r in (0.0, 1e-6, 0.1, 0.5, 1.0 - 1e-9, 1.0, 1.0 + 1e-9, 2.0, 5.0, 100.0):
            p = p_air_cooler(ntu, r, rows, passes, side1=side)
            assert np.all(np.isfinite(p))
            steps = np.diff(p)
            assert np.all(steps >= -32 * np.finfo(float).eps * p[1:]), (side, r, ntu[1:][steps < 0][:3])


def test_report_largest_disagreement():
    """Prints, for the record, the largest relative disagreement of each form with ht and with the
    row model."""
    lines = []
    for rows, passes in SETTINGS:
        model, _ = _worst(lambda n, r: row_model(n, r, rows, passes), rows, passes)
        ht_worst = "      n/a" if (rows, passes) == (4, 4) else f"{_worst(lambda n, r: hx.temperature_effectiveness_air_cooler(r, n, rows, passes), rows, passes, keep=lambda r, n: r * n >= 1e-3)[0]:9.2e}"  # noqa: E501
        lines.append(f"{rows} rows {passes} passes   ht {ht_worst}   row model {model:9.2e}")
    print("\nair coolers: largest relative disagreement\n" + "\n".join(lines))


# --------------------------------------------------------------------------------------------
# The unit in a network
# --------------------------------------------------------------------------------------------
def air_cooler_case(air=None, u=None, supply=180.0, cp=None, rows=4, passes=2, flow=20.0):
    cooler = {"tube_rows": rows, "tube_passes": passes,
              "air": air or {"inlet_temperature": 35.0, "flow": 150.0}, **(u or {"ua": 180.0})}
    return case_from_mapping({
        "fluids": {"oil": {"cp": cp or {"polynomial": [1.8, 0.0035]}}},
        "streams": {"gas_oil": {"fluid": "oil", "flow": flow, "supply_temperature": supply,
                                "path": "E-1.hot -> A-1 -> rundown"},
                    "crude": {"fluid": "oil", "flow": 25.0, "supply_temperature": 40.0, "path": "E-1.cold -> feed"}},
        "exchangers": {"E-1": {"arrangement": "tema_e", "ua": 30.0}},
        "air_coolers": {"A-1": cooler},
        "products": {"rundown": {}, "feed": {}},
    })


def test_fixed_air_flow_closes_energy_and_counts_heat_to_utilities():
    """Energy: the process's enthalpy drop equals the air's gain (m_air cp_air ΔT_air) and the
    network balance closes to 1e-9; the duty counts as heat to utilities."""
    result = simulate(air_cooler_case())
    assert result.converged and result.balance["relative_imbalance"] < 1e-9
    row = result.units.loc["A-1"]
    assert row["duty_kw"] == pytest.approx(150.0 * 1.006 * (row["cold_out_c"] - row["cold_in_c"]), rel=1e-12)
    assert result.summary["heat_to_utilities_kw"] == pytest.approx(row["duty_kw"], rel=1e-12)
    assert row["hot_out_c"] == pytest.approx(result.units.loc["rundown", "inlet_c"], abs=1e-12)
    assert row["cold_in_c"] < row["hot_out_c"] < row["hot_in_c"]


def test_fan_control_meets_its_target():
    """The process leaves at the target (1e-9 K); the air flow found lies between the limits and,
    rated with that flow fixed, gives the target back (1e-6 K)."""
    fan = {"outlet_temperature": 60.0, "minimum_flow": 10.0, "maximum_flow": 400.0}
    result = simulate(air_cooler_case({"inlet_temperature": 35.0, "fan_control": fan}))
    assert result.units.loc["A-1", "hot_out_c"] == pytest.approx(60.0, abs=1e-9)
    # its F (0.706) is below the case's default warning line, the only finding
    assert result.balance["relative_imbalance"] < 1e-9 and list(result.findings["kind"]) == ["low_f"]
    row = result.units.loc["A-1"]
    air_flow = row["duty_kw"] / (1.006 * (row["cold_out_c"] - row["cold_in_c"]))
    assert 10.0 < air_flow < 400.0
    # the flow the fans settle at is in the units table (energy balance on the air, by hand)
    assert row["air_flow_kg_s"] == pytest.approx(air_flow, rel=1e-9)
    fixed = simulate(air_cooler_case({"inlet_temperature": 35.0, "flow": air_flow}))
    assert fixed.units.loc["A-1", "hot_out_c"] == pytest.approx(60.0, abs=1e-6)


def test_the_fans_at_their_limits_say_so():
    """At the maximum flow a process still above target: 'target not reached'; at the minimum
    flow one already below it: a warning; either way the outlet is what that flow gives."""
    hot_day = simulate(air_cooler_case({"inlet_temperature": 55.0,
                                        "fan_control": {"outlet_temperature": 58.0, "minimum_flow": 20.0,
                                                        "maximum_flow": 60.0}}))
    kinds = set(hot_day.findings["kind"])
    assert "target_not_reached" in kinds and hot_day.units.loc["A-1", "hot_out_c"] > 58.0
    at_max = simulate(air_cooler_case({"inlet_temperature": 55.0, "flow": 60.0}))
    assert hot_day.units.loc["A-1", "hot_out_c"] == pytest.approx(at_max.units.loc["A-1", "hot_out_c"], abs=1e-9)
    cold_day = simulate(air_cooler_case({"inlet_temperature": -10.0,
                                         "fan_control": {"outlet_temperature": 90.0, "minimum_flow": 60.0,
                                                         "maximum_flow": 400.0}}))
    assert "below_target_at_minimum_air" in set(cold_day.findings["kind"])
    assert cold_day.units.loc["A-1", "hot_out_c"] < 90.0


def test_a_missing_fan_limit_is_named_and_not_taken_for_a_misspelling_of_the_other():
    """'minimum_flow' and 'maximum_flow' are one edit-distance-2 apart: a fan control without its
    maximum must say the maximum is missing (not call the minimum a misspelling of it), and a
    really misspelt maximum is still named as one."""
    fan = {"outlet_temperature": 60.0, "minimum_flow": 10.0}
    with pytest.raises(CaseError) as missing:
        air_cooler_case({"inlet_temperature": 35.0, "fan_control": fan})
    message = str(missing.value)
    assert "air_coolers.A-1.air.fan_control" in message and "missing key 'maximum_flow'" in message
    assert "did you mean" not in message
    with pytest.raises(CaseError) as misspelt:
        air_cooler_case({"inlet_temperature": 35.0, "fan_control": {**fan, "maximun_flow": 400.0}})
    assert "maximun_flow" in str(misspelt.value) and "did you mean 'maximum_flow'" in str(misspelt.value)


def test_fouling_warms_the_outlet_or_costs_air():
    """A clean U with fouling in series (1/U = 1/U_clean + R_f): fouling raises the outlet at a
    fixed air flow, and the fans deliver more air to hold the target."""
    def outlet(fouling, air):
        u = {"clean_u": 40.0, "area": 1500.0, "fouling": fouling}
        row = simulate(air_cooler_case(air, u)).units.loc["A-1"]
        return row["hot_out_c"], row["duty_kw"] / (1.006 * (row["cold_out_c"] - row["cold_in_c"]))
    fixed = {"inlet_temperature": 35.0, "flow": 150.0}
    assert outlet(0.005, fixed)[0] > outlet(0.0, fixed)[0] + 1.0
    fan = {"inlet_temperature": 35.0, "fan_control": {"outlet_temperature": 65.0, "minimum_flow": 10.0,
                                                      "maximum_flow": 900.0}}
    assert outlet(0.005, fan)[0] == pytest.approx(65.0, abs=1e-9)
    assert outlet(0.005, fan)[1] > 1.1 * outlet(0.0, fan)[1]


def test_the_same_bundle_as_an_exchanger_against_an_air_stream():
    """Two paths, one answer: the air-cooler unit and the registry's air_cooler arrangement in an
    exchanger whose cold side is an air utility stream (cp 1.006) give the same duty (1e-10)."""
    unit = simulate(air_cooler_case(rows=3, passes=3)).units.loc["A-1", "duty_kw"]
    exchanger = simulate(case_from_mapping({
        "fluids": {"oil": {"cp": {"polynomial": [1.8, 0.0035]}}, "air": {"cp": 1.006}},
        "streams": {"gas_oil": {"fluid": "oil", "flow": 20.0, "supply_temperature": 180.0,
                                "path": "E-1.hot -> X-1.hot -> rundown"},
                    "crude": {"fluid": "oil", "flow": 25.0, "supply_temperature": 40.0, "path": "E-1.cold -> feed"},
                    "air": {"fluid": "air", "flow": 150.0, "supply_temperature": 35.0, "utility": True,
                            "path": "X-1.cold -> vent"}},
        "exchangers": {"E-1": {"arrangement": "tema_e", "ua": 30.0},
                       "X-1": {"arrangement": "air_cooler", "tube_rows": 3, "tube_passes": 3, "shell_side": "cold",
                               "ua": 180.0}},
        "products": {"rundown": {}, "feed": {}, "vent": {}},
    })).units.loc["X-1", "duty_kw"]
    assert unit == pytest.approx(exchanger, rel=1e-10)


def test_heat_flows_from_warm_air_into_a_colder_process():
    """Heat by temperature: process at 20 °C, air at 35 °C: the duty is negative (the air heats
    the process), a warning says so, energy closes."""
    result = simulate(air_cooler_case(supply=20.0, cp=2.0))
    row = result.units.loc["A-1"]
    assert row["duty_kw"] < 0.0 and 20.0 < row["hot_out_c"] < 35.0
    assert "reversed_heat_flow" in set(result.findings["kind"])
    assert result.balance["relative_imbalance"] < 1e-9
