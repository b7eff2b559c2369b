"""Regression tests for two wrong-number defects (issue "defects", items 1 and 2).

1. **Tube passes of a geometry bundle.** Every arrangement used to hand its tube bundle two tube
   passes, so a single-pass exchanger (counterflow, parallel flow, double pipe, crossflow) given
   by ``geometry`` had half its tube flow area: Re twice the true value, h_tube ~1.7x and the tube
   Δp ~8x too high. Guarded by hand calculations of Re, h and Δp written out below (one pass for
   the single-pass arrangements, the TEMA E shell's own passes), with h checked against ChEDL ht.
2. **Crossflow, both fluids unmixed, at very large NTU.** Mason's series was cut at a fixed number
   of terms, so past R·NTU ~ 2e5 P fell as NTU rose (0.200 at NTU 1e6, R 1, where P -> 1).
   Guarded by monotonicity and bounds from NTU 1e-4 to 1e8, the limits, the textbook series in
   200-digit decimal arithmetic at large NTU and ChEDL ht where its quadrature converges.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from ht.conv_internal import turbulent_Gnielinski
from ht.hx import temperature_effectiveness_basic
from test_pntu_reference import dec_mason

from hxtrain.network import CaseError, case_from_mapping
from hxtrain.solver import simulate
from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.units import pntu

# ============================================================================ 1. tube passes

CP, MU, K, RHO = 2.2, 1.2e-3, 0.13, 850.0
"""Tube-side fluid, constant properties: cp kJ/kg·K, viscosity Pa·s, conductivity W/m·K, kg/m³."""
DI, DO, LENGTH, TUBES = 0.01483, 0.01905, 6.1, 400
TUBE_FLOW = 60.0
"""kg/s in the tubes: Re ~ 10 700 with one pass, so both one and two passes are turbulent."""


def bundle_case(arrangement, **extra):
    """Two streams through one exchanger given by geometry; the cold stream is in the tubes."""
    fluid = {"cp": CP, "viscosity": MU, "conductivity": K, "density": RHO}
    exchanger = {"arrangement": arrangement, "shell_side": "hot",
                 "geometry": {"tube_outer_diameter": DO, "tube_inner_diameter": DI, "tube_length": LENGTH,
                              "tubes": TUBES, "tube_pitch": 0.0254, "tube_layout": "square",
                              "baffle_spacing": 0.3, "baffles": 18, "shell_inner_diameter": 0.75,
                              "wall_conductivity": 45},
                 "pressure_drop": {"tube": {"allowable": "10 bar"}}}
    if arrangement == "crossflow":
        exchanger["mixed_side"] = "none"
    exchanger.update(extra)
    return {
        "title": "one geometry exchanger",
        "fluids": {"oil": fluid},
        "streams": {
            "hot": {"fluid": "oil", "flow": 30.0, "supply_temperature": 250.0, "path": "E-1.hot -> hot_out"},
            "cold": {"fluid": "oil", "flow": TUBE_FLOW, "supply_temperature": 60.0, "path": "E-1.cold -> cold_out"},
        },
        "exchangers": {"E-1": exchanger},
        "products": {"hot_out": {}, "cold_out": {}},
    }


def hand_calculation(passes):
    """Tube side of one shell with ``passes`` tube passes, written out (SI units).

    Flow area A = (N_t/N_p)·π·D_i²/4; Re = ṁ·D_i/(A·μ); Darcy friction by Filonenko,
    f = (1.82 log10 Re − 1.64)^-2; Gnielinski's Nu (Re >= 10^4, so no blending with the laminar
    value); Δp = N_p·(f·L/D_i + 4)·ρv²/2, four velocity heads of return loss per pass (Kern 1950,
    from memory) and v = ṁ/(ρA)."""
    area = TUBES / passes * math.pi * DI**2 / 4.0
    re = TUBE_FLOW * DI / (area * MU)
    f = (1.82 * math.log10(re) - 1.64) ** -2
    pr = CP * 1000.0 * MU / K
    nu = (f / 8.0) * (re - 1000.0) * pr / (1.0 + 12.7 * math.sqrt(f / 8.0) * (pr ** (2.0 / 3.0) - 1.0))
    velocity = TUBE_FLOW / (RHO * area)
    dp = passes * (f * LENGTH / DI + 4.0) * RHO * velocity**2 / 2.0
    return {"re": re, "f": f, "pr": pr, "h": nu * K / DI, "dp": dp}


def tube_side(data):
    row = simulate(case_from_mapping(data)).units.loc["E-1"]
    return {"re": row["re_tube"], "h": row["h_tube_w_m2_k"], "dp": row["dp_tube_kpa"] * 1000.0}


def check_against_hand(got, passes):
    hand = hand_calculation(passes)
    assert hand["re"] > 1e4  # the fully turbulent branch: Gnielinski's relation alone
    # the hand Nusselt number is Gnielinski's relation as ChEDL ht writes it, with the same f
    nu_ht = turbulent_Gnielinski(Re=hand["re"], Pr=hand["pr"], fd=hand["f"])
    assert hand["h"] == pytest.approx(nu_ht * K / DI, rel=1e-12)
    assert got["re"] == pytest.approx(hand["re"], rel=1e-12)
    assert got["h"] == pytest.approx(hand["h"], rel=1e-12)
    assert got["dp"] == pytest.approx(hand["dp"], rel=1e-12)


@pytest.mark.parametrize("arrangement", ["counterflow", "parallel_flow", "double_pipe", "crossflow"])
def test_single_pass_geometry_has_one_tube_pass(arrangement):
    """Counterflow, parallel flow, double pipe and crossflow are single-pass relations: the bundle
    has the whole tube count in one pass (old code: Re 21 400 instead of 10 700 here)."""
    check_against_hand(tube_side(bundle_case(arrangement)), passes=1)


@pytest.mark.parametrize("passes", [None, 2, 4])
def test_tema_e_geometry_keeps_its_tube_passes(passes):
    """A TEMA E shell keeps its ``tube_passes`` (default 2) in the bundle."""
    extra = {} if passes is None else {"tube_passes": passes}
    check_against_hand(tube_side(bundle_case("tema_e", **extra)), passes=passes or 2)


def test_one_and_two_passes_differ_as_the_flow_area():
    """The same bundle with one pass and with two: Re doubles, Δp rises ~2³ (velocity x2 squared,
    path x2, friction factor a little lower) — the size of the old error."""
    one, two = tube_side(bundle_case("counterflow")), tube_side(bundle_case("tema_e"))
    assert two["re"] == pytest.approx(2.0 * one["re"], rel=1e-12)
    assert 6.0 < two["dp"] / one["dp"] < 8.0


@pytest.mark.parametrize("arrangement", ["counterflow", "parallel_flow", "double_pipe", "crossflow"])
def test_tube_passes_refused_for_single_pass_arrangements(arrangement):
    """Several passes would be another P–NTU relation than the arrangement's: refused (exit 2)
    with the key path, not silently rated as one pass."""
    with pytest.raises(CaseError) as raised:
        case_from_mapping(bundle_case(arrangement, tube_passes=2))
    assert "exchangers.E-1.tube_passes" in str(raised.value)


# ============================================================================ 2. crossflow unmixed

NTU_LOG_GRID = np.logspace(-4, 8, 12 * 20 + 1)
"""NTU 1e-4 to 1e8, 20 points a decade."""


def p_unmixed(ntu, r):
    return pntu.p_crossflow_unmixed(ntu, np.full_like(np.asarray(ntu, dtype=float), r))


@pytest.mark.parametrize("r", [0.0, 0.1, 0.5, 1.0, 2.0, 10.0])
def test_unmixed_crossflow_monotone_and_bounded_up_to_ntu_1e8(r):
    """P1 never falls as NTU1 rises and stays within [0, min(1, 1/R1)] (R1 = C1/C2, side 1's
    basis as the function uses it); at NTU 1e8 it is at its limit: 1 for R <= 1, 1/R above
    (both fluids unmixed: every element of either fluid meets the other fluid's inlet
    temperature as NTU -> inf). Old code: 0.200 at NTU 1e6, R 1."""
    p = p_unmixed(NTU_LOG_GRID, r)
    assert np.all(np.isfinite(p))
    assert np.all(np.diff(p) >= 0.0), NTU_LOG_GRID[1:][np.diff(p) < 0.0]
    upper = min(1.0, 1.0 / r) if r > 0 else 1.0
    assert np.all((p >= 0.0) & (p <= upper))
    # the slowest approach is R = 1: 1 - P ~ 1/sqrt(pi NTU) = 5.6e-5 at NTU 1e8
    assert p[-1] == pytest.approx(upper, rel=1e-4, abs=0.0)


def test_unmixed_crossflow_r_zero_is_one_minus_exp():
    """R = 0 (the other stream isothermal): P = 1 - exp(-NTU) for any arrangement (Incropera,
    sec. 11.4), over the whole grid to 1e-14 relative."""
    expected = -np.expm1(-NTU_LOG_GRID)
    assert p_unmixed(NTU_LOG_GRID, 0.0) == pytest.approx(expected, rel=1e-14, abs=0.0)


@pytest.mark.parametrize("ntu, r", [(1e3, 1.0), (1e4, 1.0), (3e4, 1.0), (1e4, 0.999), (1e4, 0.99),
                                    (1e4, 0.97), (3e4, 1.001), (2e3, 0.9), (50.0, 0.02), (40.0, 1 / 40.0)])
def test_unmixed_crossflow_at_large_ntu_matches_mason_series_in_200_digits(ntu, r):
    """Mason (1954) series, textbook form, summed in 200-digit decimal arithmetic
    (``test_pntu_reference.dec_mason``: every term to 1e-40 of the sum) at NTU where the old
    cut-off series was already losing terms or close to it, and across R·NTU = 1 (the switch from
    the series to the closed form). 1e-13 relative."""
    got = float(p_unmixed(ntu, r))
    expected = float(dec_mason(ntu, r))
    assert got == pytest.approx(expected, rel=1e-13, abs=0.0)


def test_unmixed_crossflow_matches_ht_quadrature_where_it_converges():
    """ChEDL ht 1.2 ``temperature_effectiveness_basic(subtype='crossflow')`` (scipy quad of
    Triboix's exact integral; ht's 'crossflow approximate' is an approximate form, not used).
    ht's integrand holds I_0(v) unscaled for v up to 2·NTU·sqrt(R), which overflows past
    v ~ 700 (ht gives -inf or NaN there), and its 1 - exp(-x) forms lose digits for
    R·NTU < 1e-5: compared where neither applies, up to NTU 200, to 1e-9 relative."""
    bad, compared = [], 0
    for r in (0.01, 0.1, 0.3, 0.5, 0.8, 1.0, 1.3, 2.0, 4.0, 10.0):
        for ntu in (1e-3, 0.02, 0.3, 1.0, 2.0, 4.0, 8.0, 16.0, 30.0, 60.0, 120.0, 200.0):
            if r * ntu < 1e-5 or 2.0 * ntu * math.sqrt(r) > 700.0:
                continue
            compared += 1
            got = float(p_unmixed(ntu, r))
            expected = temperature_effectiveness_basic(R1=r, NTU1=ntu, subtype="crossflow")
            if not got == pytest.approx(expected, rel=1e-9, abs=0.0):
                bad.append((r, ntu, got, expected))
    assert not bad, bad
    assert compared > 100


@pytest.mark.parametrize("r", [0.5, 1.0, 0.999])
def test_unmixed_crossflow_joins_smoothly_where_the_method_changes(r):
    """The series (R·NTU < 1) and the closed form (R·NTU >= 1) meet without a step: on a grid of
    steps of 1e-12 relative across R·NTU = 1, P rises monotonically, and the step across the
    switch is the slope times the step to 3e-15 (the closed form's accuracy there: its Q_1 rule
    carries a few e-15 relative, measured 1.3e-15 in P at R = 0.5)."""
    ntu = (1.0 / r) * (1.0 + 1e-12 * np.arange(-50, 51))
    p = p_unmixed(ntu, r)
    assert np.all(np.diff(p) >= 0.0)
    slope = float(p[-1] - p[0]) / float(ntu[-1] - ntu[0])
    assert abs(float(p[51] - p[49]) - slope * float(ntu[51] - ntu[49])) < 3e-15


def test_unmixed_crossflow_is_finite_at_extreme_ntu():
    """Beyond the tested range P stays at its limit, never NaN: NTU 1e12, 1e200 and inf."""
    for r in (0.0, 0.5, 1.0, 2.0):
        upper = 1.0 if r <= 1.0 else 1.0 / r
        for ntu in (1e12, 1e200, math.inf):
            assert float(p_unmixed(ntu, r)) == pytest.approx(upper, rel=1e-5, abs=0.0), (r, ntu)


# ============================================================ a third trial: approach in shells, design behind a bypass


def _shells_one_by_one(t_hot_in, t_cold_in, c_hot, c_cold, ua_each, shells):
    """Single 1-2 shells joined counter-currently, converged by substitution on the cold
    temperatures between them: (hot outlet minus cold outlet of each shell, overall cold out)."""
    from hxtrain.units.pntu_rating import rate_exchanger

    cold_between = [t_cold_in] * shells  # cold into shell k; shell `shells - 1` takes the supply
    for _ in range(500):
        t_hot, differences, cold_out = t_hot_in, [], []
        for k in range(shells):
            one = rate_exchanger(t_hot, cold_between[k], c_hot, c_cold, ua_each, "tema_e", shells=1)
            differences.append(float(one.t_hot_out - one.t_cold_out))
            cold_out.append(float(one.t_cold_out))
            t_hot = float(one.t_hot_out)
        cold_between = [*cold_out[1:], t_cold_in]
    return differences, cold_out[0]


@pytest.mark.parametrize("shells", [1, 2, 3])
def test_the_approach_of_multipass_shells_is_where_their_outlets_meet(shells):
    """A 1-2 shell's outlets meet inside it: its approach is T_h,out - T_c,out where that is
    smaller than the counterflow end differences (common practice: the 1-2 shell's "temperature
    approach"); for shells in series, the smallest over the shells, each rated here alone and
    joined counter-currently by substitution (an independent path)."""
    from hxtrain.units.pntu_rating import rate_exchanger

    c_hot, c_cold, ua = 20 * 2.5, 30 * 2.2, 60.0 * shells
    whole = rate_exchanger(230.0, 30.0, c_hot, c_cold, ua, "tema_e", shells=shells)
    differences, cold_out = _shells_one_by_one(230.0, 30.0, c_hot, c_cold, ua / shells, shells)
    assert float(whole.t_cold_out) == pytest.approx(cold_out, abs=1e-9)
    ends = min(230.0 - float(whole.t_cold_out), float(whole.t_hot_out) - 30.0)
    assert min(differences) < ends  # the outlets' meeting is what decides here
    assert float(whole.approach) == pytest.approx(min(differences), abs=1e-9)
    counterflow = rate_exchanger(230.0, 30.0, c_hot, c_cold, ua, "counterflow")
    assert float(counterflow.approach) == pytest.approx(min(230.0 - float(counterflow.t_cold_out),
                                                            float(counterflow.t_hot_out) - 30.0), abs=1e-12)


def _bypassed_water_case(design_c):
    return {"settings": {"minimum_approach": 5},
            "fluids": {"oil": {"cp": 2.4}, "water": {"cp": 4.18}},
            "streams": {"oil": {"fluid": "oil", "flow": 20.0, "supply_temperature": 120.0, "path": "E-1.hot -> o"},
                        "water": {"fluid": "water", "flow": 40.0, "supply_temperature": 30.0, "path": "E-1.cold -> w"}},
            "exchangers": {"E-1": {"arrangement": "counterflow", "ua": 40.0, "bypass": {"cold": 0.3},
                                   "design_temperature": {"cold": design_c}}},
            "products": {"o": {}, "w": {}}}


def test_a_design_temperature_is_checked_inside_the_exchanger_ahead_of_its_bypass():
    """Water round a 30 % bypass rejoins colder: the tubes see the exchanger's own outlet,
    30 + Q / (0.7 · 40 · 4.18), above the mixed outlet, and that is what the design
    temperature limits."""
    result = simulate(case_from_mapping(_bypassed_water_case(45.0), "<test>"))
    duty = result.units.loc["E-1", "duty_kw"]
    inside = 30.0 + duty / (0.7 * 40.0 * 4.18)
    mixed = result.units.loc["E-1", "cold_out_c"]
    assert mixed == pytest.approx(30.0 + duty / (40.0 * 4.18), rel=1e-12) and mixed < 45.0 < inside
    limits = result.findings[result.findings["kind"] == "design_temperature"]
    assert len(limits) == 1 and f"reaches {inside:.1f} °C" in limits["message"].iloc[0]
    assert "ahead of its bypass" in limits["message"].iloc[0]
    above = simulate(case_from_mapping(_bypassed_water_case(inside + 0.1), "<test>"))
    assert not (above.findings["kind"] == "design_temperature").any()


def test_a_design_temperature_exceeded_on_both_sides_names_each_side():
    """Both sides above their design temperatures: each limit's key names its side, and the unit's
    row, the findings and the scenario's violated limits say 'hot' and 'cold' (a new user's trial
    found 'design_temperature ×2': two limits, which ones unsaid)."""
    data = _bypassed_water_case(45.0)
    data["exchangers"]["E-1"]["design_temperature"]["hot"] = 100.0
    result = simulate(case_from_mapping(data, "<test>"))
    limits = result.findings[result.findings["kind"] == "design_temperature"]
    assert sorted(limits["key"]) == ["exchangers.E-1.design_temperature.cold", "exchangers.E-1.design_temperature.hot"]
    assert result.units.loc["E-1", "findings"] == "design_temperature (hot), design_temperature (cold)"
    named = simulate_batch(case_from_mapping(data, "<test>"), {"streams.oil.flow": [20.0]}).table["violated_limits"]
    assert named.iloc[0] == "E-1 design_temperature (hot); E-1 design_temperature (cold)"


def test_a_side_bypassed_whole_is_held_to_the_other_sides_inlet():
    """All the water round E-1 (that side isolated) while the oil still flows at 120 °C: none of
    the water arriving at 30 °C is inside (an earlier trial: the limit had been reported at the
    water's inlet), but the tubes and what stands in them go towards the oil's inlet, 120 °C, and
    that is what the side's design temperature is checked against (a no_flow warning says why).
    With 99 % round, the 1 % inside is held to its own outlet; with the oil stopped too, the
    exchanger is isolated and nothing is checked."""
    data = _bypassed_water_case(100.0)
    data["exchangers"]["E-1"]["bypass"] = {"cold": 1.0}
    findings = simulate(case_from_mapping(data, "<test>")).findings.set_index("kind")
    assert "reaches 120.0 °C, above its design temperature of 100.0 °C" in findings.loc["design_temperature", "message"]
    assert "flows at 120.0 °C" in findings.loc["no_flow", "message"]
    data = _bypassed_water_case(25.0)
    data["exchangers"]["E-1"]["bypass"] = {"cold": 0.99}
    limits = simulate(case_from_mapping(data, "<test>")).findings
    assert (limits["kind"] == "design_temperature").sum() == 1
    data["exchangers"]["E-1"]["bypass"] = {"cold": 1.0, "hot": 1.0}
    assert not simulate(case_from_mapping(data, "<test>")).findings["kind"].isin(["design_temperature", "no_flow"]).any()


def test_a_bypassed_side_shows_its_outlet_inside_the_exchanger():
    """The tables show, beside the mixed outlet, the one inside the exchanger (what its LMTD, R and
    F refer to): 30 + Q / (0.7 · 40 · 4.18) on the 30 %-bypassed water side; none without a bypass."""
    result = simulate(case_from_mapping(_bypassed_water_case(90.0), "<test>"))
    row = result.units.loc["E-1"]
    assert row["cold_out_inside_c"] == pytest.approx(30.0 + row["duty_kw"] / (0.7 * 40.0 * 4.18), rel=1e-12)
    assert "hot_out_inside_c" not in result.units or np.isnan(row["hot_out_inside_c"])
    plain = _bypassed_water_case(90.0)
    del plain["exchangers"]["E-1"]["bypass"]
    assert "cold_out_inside_c" not in simulate(case_from_mapping(plain, "<test>")).units


@pytest.mark.parametrize("maximum, violated", [(30.0, False), (39.0, False), (25.0, True)])
def test_a_maximum_flow_is_checked_on_the_flow_through_the_exchanger(maximum, violated):
    """Of 40 kg/s of water a 30 % bypass takes 12 round E-1: 28 kg/s pass its tubes, the flow the
    films and pressure drops see, and the one a maximum limits (a new user's trial: 40 kg/s had
    been compared, a false limit)."""
    data = _bypassed_water_case(90.0)
    data["exchangers"]["E-1"]["maximum_flow"] = {"cold": maximum}
    limits = simulate(case_from_mapping(data, "<test>")).findings
    limits = limits[limits["kind"] == "maximum_flow"]
    assert len(limits) == violated
    if violated:
        assert "carries 28.00 kg/s through the exchanger (past its bypass)" in limits["message"].iloc[0]


def test_an_exchanger_with_a_side_not_flowing_shows_no_p_r_f_or_lmtd():
    """All the oil round a full bypass: no duty, and no P, R, NTU, F, LMTD, approach or outlet
    inside to speak of: blank (a new user's trial found P 1.00, F 1.00, LMTD 0.00 and R inf on
    such sides, numbers that look like answers)."""
    data = _bypassed_water_case(90.0)
    data["exchangers"]["E-1"]["bypass"] = {"hot": 1.0}
    row = simulate(case_from_mapping(data, "<test>")).units.loc["E-1"]
    assert row["duty_kw"] == 0.0 and row["cold_out_c"] == 30.0 and row["hot_out_c"] == 120.0
    for column in ("p", "r", "ntu", "f", "lmtd_k", "approach_k", "hot_out_inside_c"):  # an empty column is left out
        assert np.isnan(row.get(column, np.nan)), column
