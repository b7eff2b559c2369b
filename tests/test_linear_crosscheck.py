"""Independent cross-check of the sequential-modular solution: the whole network as one linear system.

With constant cp and fixed UA every unit is affine in its inlet temperatures, so the segment
temperatures of a whole network satisfy one linear system A·T = b (GUIDE.md, "Physics that a
practitioner will check first"). This module assembles that system itself, from the checked
case model only (``Case`` tables and ``Case.origins`` paths) — no hxtrain network, solver or
unit code is used — solves it with ``numpy.linalg.solve`` and compares every segment temperature
with ``hxtrain.solver.simulate`` (streams table, ``temperature_c``).

How each row of A·T = b is formed (one unknown per segment, one row per segment, written at the
unit port the segment leaves):

* supply stream: T = T_supply.
* splitter branch: T = T_in. Mixer outlet: T = Σ C_i T_i / Σ C_i (adiabatic mixing,
  heat-capacity weighted).
* heater with a target: T = T_target; with a fixed duty: T = T_in + Q/C (cooler: − Q/C).
* air cooler with a fixed air flow (C_air = ṁ_air cp_air): T_out = T_in − P_air (C_air/C) (T_in −
  T_air), P_air from ht's ``temperature_effectiveness_air_cooler(R1=C_air/C, NTU1=UA/C_air, rows,
  passes)`` (side 1 the air); UA fixed (``ua``, ``u``·area, or area/(1/U_clean + R_f)). Fan
  control is not affine (the outlet is the target clipped to what the two flows reach), so it is
  left to the property tests. Bundles of 4 rows and 4 passes are left out here: ht's printed form
  of that one misses P = 1 − exp(−NTU) at R = 0 (``test_air_cooler.py``).
* exchanger: the exchanger proper sees C_h' = (1 − b_h) C_h and C_c' = (1 − b_c) C_c (bypass
  fractions b re-mixed at the outlet); Q = ε C'_min (T_h,in − T_c,in); after re-mixing the
  outlets are T_h,out = T_h,in − Q/C_h and T_c,out = T_c,in + Q/C_c (total C). ε comes from the
  ChEDL ``ht`` library (ht 1.2, ``ht.hx``):

  - counterflow, double_pipe: ``effectiveness_from_NTU(NTU, Cr, 'counterflow')`` with the total
    NTU (N counterflow units in overall counterflow are one counterflow exchanger);
  - parallel_flow: ``effectiveness_from_NTU(NTU/N, Cr, 'parallel')`` per unit;
  - tema_e, 2 tube passes: ``temperature_effectiveness_TEMA_E(R1=Cr, NTU1=NTU/N, Ntp=2)`` (the
    1-2 relation is symmetric in the sides, so the C_min basis is fine); 4 or more passes:
    ``temperature_effectiveness_TEMA_E`` on ht's basis, side 1 = the shell fluid
    (R1 = C_shell/C_tube, NTU1 = UA_shell/C_shell), converted to the C_min basis by
    ε = P_shell C_shell / C_min;
  - crossflow, both fluids unmixed: ``temperature_effectiveness_basic(Cr, NTU/N, 'crossflow')``
    (exact Triboix integral; symmetric); one fluid mixed: ``temperature_effectiveness_basic``
    with ``'crossflow, mixed 1'`` and side 1 = the mixed fluid, converted to the C_min basis;
  - N identical shells/units in series in overall counterflow: the series-combination formula
    written out here (Shah & Sekulić, Fundamentals of Heat Exchanger Design, Wiley 2003, ch. 3,
    the section on multipass exchangers / shells in series; section and equation numbers not
    verified), P = (X^N − 1)/(X^N − R) with X = (1 − R P_p)/(1 − P_p), and its R = 1 limit
    P = N P_p/(1 + (N − 1) P_p). It is evaluated in 60-digit ``decimal`` arithmetic, because the
    float form loses ~eps/|1 − R| near R = 1 (generated networks can have R within an ulp of 1).
    It is also checked here against ht's own ``'S&T'`` series (1-2 shells) for Cr < 1.

  ht evaluates the counterflow form literally, which near Cr = 1 (NTU·|1 − Cr| < 1e-4) carries a
  rounding error of about eps/(NTU·|1 − Cr|); there, the same textbook form is evaluated in
  60-digit decimal instead (ht's own branch takes Cr == 1 exactly).

Flows are solved first, also as a linear system (recycles included): segment mass flows and
heat-capacity rates C = Σ m_source·cp_source satisfy the same pass-through / split / mix
balances.

Segments are matched with hxtrain's streams table by (from_unit, to_unit, label); a label is
"<source port> -> <target port>", where a port is the unit name, or "unit.side" for an exchanger
side, or "splitter.branch" for a splitter branch (mixer inlets and plain in/out ports show the
unit only).

Required agreement: 1e-6 K on the three demo cases and on networks from
``network_generator.py`` (fixed seeds, splits, mixers, bypasses, countercurrent couplings, recycles,
heaters and coolers with targets or fixed duties). The largest disagreement is printed
(``pytest -s``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import Decimal, localcontext
from pathlib import Path

import numpy as np
import pytest
from ht.hx import (effectiveness_from_NTU, temperature_effectiveness_air_cooler, temperature_effectiveness_basic,
                   temperature_effectiveness_TEMA_E)

from hxtrain.network import case_from_mapping, load_case
from hxtrain.solver import simulate
from hxtrain.solver.simulation.benchmark import fixed_property_variant

from network_generator import AIR_COOLER_SETTINGS, RandomChooser, generate_case, unit_count

CASES = Path(__file__).resolve().parents[1] / "cases"
DEMOS = ("crude_preheat", "feed_effluent", "product_cooling")
SEEDS = (1, 2, 3, 7, 11, 19, 23, 42, 97, 1234)
AIR_COOLER_SEEDS = (1, 2, 9, 19)
HT_AIR_COOLER_SETTINGS = tuple(s for s in AIR_COOLER_SETTINGS if s != (4, 4))
"""The bundles of :data:`network_generator.AIR_COOLER_SETTINGS` whose ht form is right (see above)."""
TOLERANCE_K = 1e-6
DIGITS = 60

MEASURED: dict[str, float] = {}
"""Largest |T_hxtrain − T_linear| per case, K (printed by the last test)."""


# --------------------------------------------------------------------------------------------
# Segments, read from the case model's origins
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Seg:
    source: str
    source_port: str
    target: str
    target_port: str

    @property
    def label(self):
        def port(unit, p):
            return unit if p in ("in", "out") or p.startswith("in:") else f"{unit}.{p}"

        return f"{port(self.source, self.source_port)} -> {port(self.target, self.target_port)}"


def segments(case):
    """Every segment of every origin's path, in order: from an outlet port to an inlet port."""
    segs = []
    for origin in case.origins:
        unit, port = origin.unit, origin.port
        *through, last = origin.path
        for step in through:
            segs.append(Seg(unit, port, step.unit, step.side or "in"))
            unit, port = step.unit, step.side or "out"
        target_port = f"in:{origin.name}" if last.unit in case.mixers else "in"
        segs.append(Seg(unit, port, last.unit, target_port))
    return segs


# --------------------------------------------------------------------------------------------
# Reading the case model (constant cp and fixed UA only)
# --------------------------------------------------------------------------------------------
class NotLinear(Exception):
    """The case has temperature-dependent cp or a flow-/temperature-dependent U: no A·T = b."""


def fluid_cp(case, name):
    """Constant cp of a fluid (kJ/kg·K): a float, or a property model that says its cp is constant."""
    fluid = case.fluids[name]
    if isinstance(fluid, (int, float)):
        return float(fluid)
    if getattr(fluid, "constant_cp", False):
        return float(np.asarray(fluid.cp(0.0)))
    raise NotLinear(f"fluid '{name}' has a temperature-dependent cp")


def exchanger_data(case, tag):
    """Arrangement, shells, total UA (kW/K), passes, shell side, mixed side and bypasses of an
    exchanger, from the case model (a plain table, or a table holding an exchanger ``spec``)."""
    d = case.exchangers[tag]
    spec = d.get("spec")
    if spec is None:
        return {k: d[k] for k in ("arrangement", "shells", "ua", "tube_passes", "shell_side", "mixed_side",
                                  "bypass_hot", "bypass_cold")}
    if spec.ua is not None:
        ua = spec.ua
    elif type(spec.thermal).__name__ == "FixedCoefficient":
        # U (W/m²·K) times the area of every shell, in series and in parallel
        ua = spec.thermal.u * spec.area_per_shell * spec.shells * getattr(spec, "shells_in_parallel", 1) / 1000.0
    else:
        raise NotLinear(f"exchanger '{tag}': U from {type(spec.thermal).__name__} varies with flow/temperature")
    # parallel shells: each bank sees C/P on both sides and UA/P, hence the same NTU, Cr and P
    return {"arrangement": spec.arrangement, "shells": spec.shells, "ua": ua, "tube_passes": spec.tube_passes,
            "shell_side": spec.shell_side, "mixed_side": spec.mixed_side, "bypass_hot": spec.bypass_hot,
            "bypass_cold": spec.bypass_cold}


# --------------------------------------------------------------------------------------------
# Effectiveness from ht, shells in series (Shah & Sekulić 2003)
# --------------------------------------------------------------------------------------------
def series_p(p_one, r, shells):
    """P of ``shells`` identical units in series in overall counterflow, on the basis on which
    ``p_one`` (one unit's P at NTU/N) and ``r`` are given (Shah & Sekulić 2003, ch. 3):
    P = (X^N − 1)/(X^N − R), X = (1 − R P_p)/(1 − P_p); R = 1: N P_p/(1 + (N − 1) P_p).
    Evaluated in 60-digit decimal arithmetic (exact for the float inputs up to 1e-60)."""
    if shells == 1:
        return p_one
    with localcontext() as ctx:
        ctx.prec = DIGITS
        p, rr, n = Decimal(p_one), Decimal(r), shells
        if rr == 1:
            return float(n * p / (1 + (n - 1) * p))
        x = (1 - rr * p) / (1 - p)
        xn = x**n
        return float((xn - 1) / (xn - rr))


def counterflow_p(ntu, cr):
    """ε of a counterflow exchanger (C_min basis) from ht; the same textbook form in 60-digit
    decimal where ht's float evaluation is ill-conditioned (NTU·|1 − Cr| < 1e-4, Cr ≠ 1)."""
    if cr == 1.0 or ntu * abs(1.0 - cr) >= 1e-4:
        return effectiveness_from_NTU(ntu, cr, subtype="counterflow")
    with localcontext() as ctx:
        ctx.prec = DIGITS
        n, c = Decimal(ntu), Decimal(cr)
        e = (-n * (1 - c)).exp()
        return float((1 - e) / (1 - c * e))


def effectiveness(ex, c_hot, c_cold):
    """ε on the C_min basis of the exchanger proper (after bypass) for the case-model data ``ex``."""
    cmin, cmax = min(c_hot, c_cold), max(c_hot, c_cold)
    cr = cmin / cmax
    shells, ua = ex["shells"], ex["ua"]
    ntu_unit = ua / shells / cmin
    arrangement = ex["arrangement"]
    if arrangement in ("counterflow", "double_pipe"):
        return counterflow_p(ua / cmin, cr)
    if arrangement == "parallel_flow":
        p = effectiveness_from_NTU(ntu_unit, cr, subtype="parallel")
    elif arrangement == "tema_e":
        if ex["tube_passes"] == 2:
            p = temperature_effectiveness_TEMA_E(R1=cr, NTU1=ntu_unit, Ntp=2)
        else:
            c_shell, c_tube = (c_hot, c_cold) if ex["shell_side"] == "hot" else (c_cold, c_hot)
            p_shell = temperature_effectiveness_TEMA_E(R1=c_shell / c_tube, NTU1=ua / shells / c_shell,
                                                       Ntp=ex["tube_passes"])
            p = p_shell * c_shell / cmin
    elif arrangement == "crossflow":
        if ex["mixed_side"] is None:
            p = temperature_effectiveness_basic(R1=cr, NTU1=ntu_unit, subtype="crossflow")
        else:
            c_mixed, c_unmixed = (c_hot, c_cold) if ex["mixed_side"] == "hot" else (c_cold, c_hot)
            p_mixed = temperature_effectiveness_basic(R1=c_mixed / c_unmixed, NTU1=ua / shells / c_mixed,
                                                      subtype="crossflow, mixed 1")
            p = p_mixed * c_mixed / cmin
    else:  # pragma: no cover - the case model admits no other arrangement
        raise AssertionError(arrangement)
    return series_p(p, cr, shells)


def air_cooler_share(d, c_process):
    """P_air C_air / C of an air cooler with a fixed air flow (its outlet: T_in − share (T_in −
    T_air)), from the case model's data ``d`` and the process C (kW/K); P_air from ht."""
    if d.get("fan") is not None:
        raise NotLinear("an air cooler with fan control holds its outlet at a target, clipped")
    if d.get("ua") is not None:
        ua = d["ua"]
    else:
        u = d["u"] if d.get("u") is not None else 1.0 / (1.0 / d["clean_u"] + d["fouling"])
        ua = u * d["area"] / 1000.0
    c_air = d["air_flow"] * d["air_cp"]
    p_air = temperature_effectiveness_air_cooler(R1=c_air / c_process, NTU1=ua / c_air, rows=d["rows"],
                                                 passes=d["passes"], coerce=False)
    return p_air * c_air / c_process


# --------------------------------------------------------------------------------------------
# The linear systems
# --------------------------------------------------------------------------------------------
def linear_solution(case):
    """Segment list, heat-capacity rates C (kW/K) and temperatures (°C) from A·T = b."""
    segs = segments(case)
    n = len(segs)
    into = {}
    for i, s in enumerate(segs):
        into.setdefault((s.target, s.target_port if not s.target_port.startswith("in:") else "mix"), []).append(i)

    def inlet(unit, port="in"):
        (i,) = into[(unit, port)]
        return i

    # flows: [mass flow, C] per segment; each segment's balance at the port it leaves
    a = np.eye(n)
    rhs = np.zeros((n, 2))
    for i, s in enumerate(segs):
        u, p = s.source, s.source_port
        if u in case.streams:
            d = case.streams[u]
            rhs[i] = d["flow"], d["flow"] * fluid_cp(case, d["fluid"])
        elif u in case.mixers:
            for j in into[(u, "mix")]:
                a[i, j] -= 1.0
        elif u in case.splitters:
            a[i, inlet(u)] -= case.splitters[u]["fractions"][p]
        elif u in case.exchangers:
            a[i, inlet(u, p)] -= 1.0
        elif u in case.desalters:  # crude out: crude + carry-over of the water; brine: the rest
            carry = case.desalters[u]["carry_over"]
            a[i, inlet(u, "water")] -= carry if p == "crude" else 1.0 - carry
            if p == "crude":
                a[i, inlet(u, "crude")] -= 1.0
        else:  # heater, cooler or air cooler
            a[i, inlet(u)] -= 1.0
    flows = np.linalg.solve(a, rhs)
    c = flows[:, 1]

    # temperatures
    a = np.eye(n)
    b = np.zeros(n)
    for i, s in enumerate(segs):
        u, p = s.source, s.source_port
        if u in case.streams:
            b[i] = case.streams[u]["supply_temperature"]
        elif u in case.mixers:
            members = into[(u, "mix")]
            total = sum(c[j] for j in members)
            for j in members:
                a[i, j] -= c[j] / total
        elif u in case.splitters:
            a[i, inlet(u)] -= 1.0
        elif u in case.heaters or u in case.coolers:
            d = case.heaters.get(u) or case.coolers[u]
            if d["outlet_temperature"] is not None:
                b[i] = d["outlet_temperature"]
            else:
                j = inlet(u)
                a[i, j] -= 1.0
                b[i] = (d["duty"] if u in case.heaters else -d["duty"]) / c[j]
        elif u in case.desalters:  # both outlets at the mixture's temperature, less the heat loss
            crude, water = inlet(u, "crude"), inlet(u, "water")
            total = c[crude] + c[water]
            a[i, crude] -= c[crude] / total
            a[i, water] -= c[water] / total
            b[i] = -case.desalters[u]["heat_loss"] / total
        elif u in case.air_coolers:
            j = inlet(u)
            share = air_cooler_share(case.air_coolers[u], c[j])
            a[i, j] -= 1.0 - share
            b[i] = share * case.air_coolers[u]["air_temperature"]
        else:
            ex = exchanger_data(case, u)
            h, k = inlet(u, "hot"), inlet(u, "cold")
            c_h, c_c = c[h] * (1.0 - ex["bypass_hot"]), c[k] * (1.0 - ex["bypass_cold"])
            eps = effectiveness(ex, c_h, c_c)
            q_per_k = eps * min(c_h, c_c)  # Q = q_per_k (T_h,in − T_c,in)
            if p == "hot":
                share = q_per_k / c[h]
                a[i, h] -= 1.0 - share
                a[i, k] -= share
            else:
                share = q_per_k / c[k]
                a[i, k] -= 1.0 - share
                a[i, h] -= share
    t = np.linalg.solve(a, b)
    return segs, flows[:, 0], c, t


def disagreement(case, result=None):
    """Largest |T_hxtrain − T_linear| over all segments (K); also checks flows and C."""
    segs, m, c, t = linear_solution(case)
    result = result if result is not None else simulate(case)
    table = result.streams.set_index(["from_unit", "to_unit", "segment"])
    assert len(table) == len(segs)
    keys = [(s.source, s.target, s.label) for s in segs]
    assert table.index.is_unique and set(table.index) == set(keys)
    rows = table.loc[keys]
    np.testing.assert_allclose(rows["flow_kg_s"].to_numpy(), m, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(rows["heat_capacity_rate_kw_k"].to_numpy(), c, rtol=1e-12, atol=1e-12)
    return float(np.max(np.abs(rows["temperature_c"].to_numpy() - t)))


# --------------------------------------------------------------------------------------------
# Tests
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("demo", DEMOS)
def test_demo_case_matches_direct_linear_solve(demo):
    """Demo case: every segment temperature within 1e-6 K of the direct solve of A·T = b
    (effectiveness from ht 1.2; shells in series after Shah & Sekulić 2003). A demo whose data
    are not linear (cp varying with temperature, U with flow) is checked as its constant-cp,
    fixed-UA variant (:func:`hxtrain.solver.simulation.benchmark.fixed_property_variant`: each fluid's cp at
    the middle of its range, each exchanger's UA from the original solution; only the input is
    made by hxtrain, the solution it is checked against is this module's); the printout says which."""
    path = CASES / f"{demo}.yaml"
    case = load_case(path)
    try:
        linear_solution(case)
        what = demo
    except NotLinear as exc:
        case = fixed_property_variant(path)
        what = f"{demo} (constant-cp fixed-UA variant: {exc})"
    worst = disagreement(case)
    MEASURED[what] = worst
    print(f"\n{what}: largest |T_hxtrain - T_linear| = {worst:.3e} K")
    assert worst <= TOLERANCE_K


@pytest.mark.parametrize("seed", SEEDS)
def test_generated_network_matches_direct_linear_solve(seed):
    """Generated network (fixed seed): splits, mixers, bypasses, countercurrent couplings,
    recycles, heaters and coolers; within 1e-6 K of A·T = b (ht 1.2; Shah & Sekulić 2003)."""
    data = generate_case(RandomChooser(seed), title=f"seed {seed}")
    case = case_from_mapping(data, f"<generated seed {seed}>")
    assert case.splitters and case.mixers
    worst = disagreement(case)
    MEASURED[f"seed {seed} ({unit_count(data)} units)"] = worst
    print(f"\nseed {seed}: {unit_count(data)} units, largest |T_hxtrain - T_linear| = {worst:.3e} K")
    assert worst <= TOLERANCE_K


@pytest.mark.parametrize("seed", AIR_COOLER_SEEDS)
def test_generated_network_with_air_coolers_matches_direct_linear_solve(seed):
    """Generated network (fixed seed) with air coolers at a fixed air flow, on hot paths and
    inside recycles, U given each way: within 1e-6 K of A·T = b (P of the bundles from ht 1.2's
    temperature_effectiveness_air_cooler)."""
    data = generate_case(RandomChooser(seed), title=f"seed {seed}", air_coolers=("fixed",),
                         air_cooler_settings=HT_AIR_COOLER_SETTINGS)
    case = case_from_mapping(data, f"<generated seed {seed} with air coolers>")
    assert case.air_coolers
    worst = disagreement(case)
    MEASURED[f"seed {seed} with {len(case.air_coolers)} air coolers ({unit_count(data)} units)"] = worst
    assert worst <= TOLERANCE_K


def test_air_cooler_seeds_cover_every_bundle_and_way_to_u():
    """The air-cooler seeds together hold every bundle ht rates right, each way to give U, and an
    air cooler inside a recycle or feed-effluent loop."""
    bundles, forms, in_loop = set(), set(), False
    for seed in AIR_COOLER_SEEDS:
        data = generate_case(RandomChooser(seed), air_coolers=("fixed",), air_cooler_settings=HT_AIR_COOLER_SETTINGS)
        for tag, d in data["air_coolers"].items():
            bundles.add((d["tube_rows"], d["tube_passes"]))
            forms.add(next(k for k in ("ua", "u", "clean_u") if k in d))
        loop_paths = [d["path"] for name, d in data.get("mixers", {}).items() if "loop" in name]
        in_loop |= any("A-" in path for path in loop_paths)
    assert bundles == set(HT_AIR_COOLER_SETTINGS) and forms == {"ua", "u", "clean_u"} and in_loop, \
        (bundles, forms, in_loop)


def test_generated_networks_cover_the_features():
    """The fixed seeds together exercise every feature the cross-check is meant to cover."""
    seen = set()
    for seed in SEEDS:
        data = generate_case(RandomChooser(seed))
        case = case_from_mapping(data, "<generated>")
        for ex in (exchanger_data(case, tag) for tag in case.exchangers):
            seen.add(ex["arrangement"])
            if ex["bypass_hot"] or ex["bypass_cold"]:
                seen.add("bypass")
            if ex["shells"] > 1:
                seen.add("shells in series")
            if ex["arrangement"] == "tema_e" and ex["tube_passes"] > 2:
                seen.add(f"tema_e {ex['shell_side']} shell, 4+ passes")
            if ex["arrangement"] == "crossflow":
                seen.add(f"crossflow mixed {ex['mixed_side']}")
        for d in list(case.heaters.values()) + list(case.coolers.values()):
            seen.add("fixed duty" if d["duty"] is not None else "target")
        for d in case.splitters.values():
            seen.add("recycle" if "recycle" in d["fractions"] else "split")
        if _has_countercurrent_coupling(case):
            seen.add("countercurrent coupling")
    wanted = {"counterflow", "parallel_flow", "tema_e", "crossflow", "double_pipe", "bypass", "shells in series",
              "tema_e hot shell, 4+ passes", "tema_e cold shell, 4+ passes", "crossflow mixed None",
              "crossflow mixed hot", "crossflow mixed cold", "fixed duty", "target", "recycle", "split",
              "countercurrent coupling"}
    assert wanted <= seen, wanted - seen


def _has_countercurrent_coupling(case):
    """Two exchangers met in one order on a hot path and in the other order on a cold path."""
    order = {"hot": {}, "cold": {}}
    for origin in case.origins:
        tags = [(s.unit, s.side) for s in origin.path if s.side]
        for side in ("hot", "cold"):
            seq = [u for u, sd in tags if sd == side]
            for i, x in enumerate(seq):
                for y in seq[i + 1:]:
                    order[side][(x, y)] = True
    return any((y, x) in order["cold"] for (x, y) in order["hot"])


def test_series_formula_agrees_with_ht_shell_and_tube_series():
    """The Shah & Sekulić (2003) series formula written here against ht's 'S&T' series of 1-2
    TEMA E shells (``effectiveness_from_NTU(..., subtype='S&T', n_shell_tube=N)``), Cr < 1."""
    worst = 0.0
    for cr in (0.0, 0.1, 0.5, 0.9, 0.99):
        for ntu in (0.1, 0.5, 1.0, 3.0, 8.0):
            for n in (1, 2, 3, 4, 6):
                p1 = temperature_effectiveness_TEMA_E(R1=cr, NTU1=ntu / n, Ntp=2)
                ours = series_p(p1, cr, n)
                ref = effectiveness_from_NTU(ntu, cr, subtype="S&T", n_shell_tube=n)
                worst = max(worst, abs(ours - ref))
    assert worst < 1e-12, worst


def test_series_formula_limits():
    """R = 1 limit N P/(1 + (N − 1) P) is continuous with the general form (Shah & Sekulić 2003),
    and N counterflow units in series are one counterflow unit with the total NTU."""
    for p in (0.05, 0.4, 0.9):
        for n in (2, 3, 5):
            at_one = series_p(p, 1.0, n)
            near = series_p(p, 1.0 - 1e-12, n)
            assert abs(at_one - near) < 1e-10
    for cr in (0.3, 0.8, 1.0 - 1e-9, 1.0):
        for ntu in (0.2, 2.0, 7.0):
            for n in (2, 4):
                assert math.isclose(series_p(counterflow_p(ntu / n, cr), cr, n), counterflow_p(ntu, cr),
                                    rel_tol=1e-12)


def test_report_largest_disagreement():
    """Print the largest disagreement measured by the tests above (run with -s to see it)."""
    if not MEASURED:
        pytest.skip("run together with the cross-check tests")
    print("\nlargest |T_hxtrain - T_linear| per case (K):")
    for name, value in MEASURED.items():
        print(f"  {value:.3e}  {name}")
    print(f"  overall: {max(MEASURED.values()):.3e} K (required <= {TOLERANCE_K:g} K)")
    assert max(MEASURED.values()) <= TOLERANCE_K
