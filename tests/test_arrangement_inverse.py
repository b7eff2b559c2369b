"""The inverse P–NTU (``hxtrain.units.pntu_inverse.ntu_from_p``) for every arrangement of the
registry added with issue 16, and units joined in overall parallel flow.

References, named beside each check:

* **Identity, forward then inverse**, as in ``test_pntu_inverse.py``: NTU -> P by the rating's own
  forward path (``arrangements.p_exchanger``) -> NTU by the inverse, over R from 0 to 5 (1
  exactly included) and NTU from 1e-4 to 20, either basis, 1-3 shells in counterflow and in
  parallel flow. The NTU must come back within ``1e-10 + 16·eps·cond`` relative
  (``cond = P/(NTU·dP/dNTU)``, the conditioning of the problem); where P rounds onto its
  supremum nothing is left to invert (NaN, and only P is checked). Past a maximum the upper root
  is asked for.
* **An independent scan** for the 1-3 E shell, whose P rises, dips and rises again, and units in
  overall parallel flow: the roots counted on a fine grid in the test; the lower root is the
  smallest, the upper the largest.
* Where P lies beyond the maximum (a J shell, units in parallel flow), no NTU: NaN; the
  back-calculation of a unit gives NaN with its reason (Shah & Sekulić 2003, ch. 3: P of a 1-2N
  or J shell is bounded at finite NTU, from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from hxtrain.units.arrangements import arranged, p_exchanger
from hxtrain.units.pntu_inverse import ntu_from_p, p_supremum, reached_twice
from hxtrain.units.pntu_inverse_search import shape_of

EPS = np.finfo(float).eps
R_GRID = np.array([0.0, 1e-6, 0.1, 0.5, 0.9, 1.0 - 1e-9, 1.0, 1.0 + 1e-9, 1.5, 2.0, 3.0, 5.0])
NTU_GRID = np.logspace(-4.0, math.log10(20.0), 25)
REL_NTU = 1e-10
COND_ULPS = 16.0
SATURATED_ULPS = 64.0


def _case(name, tube_passes=2, basis_is_shell=None, shells=1, shells_flow="counterflow", **options):
    return dict(arrangement=arranged(name, shells_flow=shells_flow, **options), tube_passes=tube_passes,
                basis_is_shell=basis_is_shell, shells=shells)


def _both_bases(name, tube_passes=2, **options):
    return [_case(name, tube_passes, b, **options) for b in (True, False)]


CASES = [
    _case("tema_e", 1), _case("tema_e", 1, tube_flow="parallel_flow"),
    *_both_bases("tema_f", 4), *_both_bases("tema_f", 8), _case("tema_f", 2),
    *_both_bases("tema_g", 1), *_both_bases("tema_g", 2), *_both_bases("tema_h", 1), *_both_bases("tema_h", 2),
    *_both_bases("tema_j", 1), *_both_bases("tema_j", 2, shell_inlets=2), *_both_bases("tema_j", 4),
    _case("tema_x"), *_both_bases("tema_x", shell_fluid_mixed=True), _case("crossflow", both_mixed=True),
    *_both_bases("plate", passes=(1, 2)), *_both_bases("plate", passes=(3, 1), channel_flow="parallel_flow"),
    *_both_bases("plate", passes=(1, 4)), *_both_bases("plate", passes=(2, 3)),
    *_both_bases("plate", passes=(2, 3), overall_flow="parallel_flow"),
    *_both_bases("plate", passes=(4, 2), overall_flow="parallel_flow"),
    _case("plate", passes=(2, 2), overall_flow="parallel_flow"), _case("plate", passes=(3, 3), channel_flow="parallel_flow"),
    *_both_bases("air_cooler", 1, tube_rows=3), *_both_bases("air_cooler", 2, tube_rows=4),
    *_both_bases("air_cooler", 4, tube_rows=4), *_both_bases("air_cooler", 5, tube_rows=5),
    *[_case("tema_g", 2, True, shells=n) for n in (2, 3)], *[_case("tema_j", 2, False, shells=n) for n in (2, 3)],
    *[_case("plate", 2, True, shells=n, passes=(1, 2)) for n in (2, 3)],
    *[_case(name, 2, True, shells=n, shells_flow="parallel_flow") for name in ("counterflow", "tema_e", "tema_g")
      for n in (2, 3)],
    _case("crossflow", shells=2, shells_flow="parallel_flow", both_mixed=True),
    *_both_bases("tema_e", 3),
]


def _several_extrema(case):
    return shape_of(case["arrangement"], case["shells"], case["tube_passes"]) == "dip"


ONE_MAXIMUM = [c for c in CASES if not _several_extrema(c)]
SEVERAL = [c for c in CASES if _several_extrema(c)]


def _id(case):
    a = case["arrangement"]
    options = ",".join(f"{k}={v}" for k, v in a.given)
    return f"{a.name}-{case['tube_passes']}-{case['basis_is_shell']}-x{case['shells']}-{a.shells_flow}-{options}"


def forward(ntu, r, case):
    c = dict(case)
    shells = c.pop("shells")
    return p_exchanger(ntu, r, c.pop("arrangement"), shells, **c)


def _conditioning(ntu, r, case, p):
    h = 1e-4
    slope = (forward(ntu * (1 + h), r, case) - forward(ntu * (1 - h), r, case)) / (2 * h * ntu)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.abs(p / (ntu * slope))


def _round_trip(case):
    rr, nn = np.meshgrid(R_GRID, NTU_GRID, indexing="ij")
    p = forward(nn, rr, case)
    sup, at = p_supremum(rr, **case, return_ntu=True)
    lower = ntu_from_p(p, rr, **case)
    upper = ntu_from_p(p, rr, **case, branch="upper")
    back = np.where(np.isfinite(at) & (nn > at), upper, lower)
    return rr, nn, p, sup, back


@pytest.mark.parametrize("case", ONE_MAXIMUM, ids=[_id(c) for c in ONE_MAXIMUM])
def test_round_trip_forward_inverse_forward(case):
    """Identity NTU -> P -> NTU (see the module docstring): within 1e-10 + 16·eps·cond; the P
    of the NTU returned equals P within 1e-13; NaN exactly where P has rounded onto the supremum."""
    rr, nn, p, sup, back = _round_trip(case)
    cond = _conditioning(nn, rr, case, p)
    saturated = p >= sup
    assert np.all(np.isnan(back[saturated]))
    lost = ~saturated & ~np.isfinite(back)
    assert not lost.any(), list(zip(rr[lost], nn[lost]))[:5]
    informative = ~saturated & (sup - p > SATURATED_ULPS * EPS * sup)
    error = np.abs(back / nn - 1.0)
    bad = informative & ~(error <= REL_NTU + COND_ULPS * EPS * cond)
    assert not bad.any(), list(zip(rr[bad], nn[bad], error[bad], cond[bad]))[:5]
    np.testing.assert_allclose(forward(back[~saturated], rr[~saturated], case), p[~saturated], rtol=1e-13, atol=0.0)


def test_round_trip_report():
    """Prints the largest NTU error where cond·eps <= 1e-12 per case; asserts it <= 1e-10."""
    lines, worst_all = [], 0.0
    for case in ONE_MAXIMUM:
        rr, nn, p, sup, back = _round_trip(case)
        well = (p < sup) & (_conditioning(nn, rr, case, p) * EPS <= 1e-12)
        worst = float(np.max(np.abs(back[well] / nn[well] - 1.0)))
        worst_all = max(worst_all, worst)
        lines.append(f"{_id(case):70s} {worst:9.2e} {int(well.sum()):4d}")
    print("\nround trip NTU -> P -> NTU (new arrangements): worst relative error where cond·eps <= 1e-12, points\n"
          + "\n".join(lines))
    assert worst_all <= REL_NTU


# --------------------------------------------------------------------------------------------
# Several extrema: the 1-3 E shell (a rise, a shallow dip, a rise) and units in parallel flow
# --------------------------------------------------------------------------------------------
FINE = np.logspace(-4.5, 9.5, 56001)
"""The test's own grid for counting roots: 4000 points a decade, as far as the inverse looks
(two counterflow units in parallel flow at R = 1 reach a small P again near NTU 4e4)."""


@pytest.mark.parametrize("case", SEVERAL, ids=[_id(c) for c in SEVERAL])
def test_where_p_is_reached_several_times(case):
    """Over the round-trip grid, with the roots counted on the test's fine grid: the lower branch
    is the smallest root and the upper the largest (to the grid, 1e-3 relative; exactly in P,
    1e-13); where the root is unique it is the NTU P came from (1e-10 + 16·eps·cond) and the upper
    branch is NaN; P at or above the supremum: NaN."""
    found_several = 0
    for r in R_GRID:
        curve = forward(FINE, np.full(FINE.shape, r), case)
        p = forward(NTU_GRID, np.full(NTU_GRID.shape, r), case)
        sup = p_supremum(r, **case)
        lower, upper = ntu_from_p(p, r, **case), ntu_from_p(p, r, **case, branch="upper")
        cond = _conditioning(NTU_GRID, np.full(NTU_GRID.shape, r), case, p)
        for k, target in enumerate(p):
            if target >= sup or sup - target <= SATURATED_ULPS * EPS * sup:
                continue
            above = curve >= target
            roots = FINE[1:][above[1:] != above[:-1]]
            np.testing.assert_allclose(forward(lower[k], r, case), target, rtol=1e-13)
            if len(roots) > 1 and not np.isnan(upper[k]):
                found_several += 1
                assert lower[k] == pytest.approx(roots[0], rel=1e-3), (r, NTU_GRID[k])
                assert upper[k] == pytest.approx(roots[-1], rel=1e-3), (r, NTU_GRID[k])
            elif len(roots) == 1:
                assert np.isnan(upper[k]), (r, NTU_GRID[k])
                assert abs(lower[k] / NTU_GRID[k] - 1.0) <= REL_NTU + COND_ULPS * EPS * cond[k], (r, NTU_GRID[k])
    print(f"\n{_id(case)}: {found_several} grid points reached more than once")


# --------------------------------------------------------------------------------------------
# Past the maximum
# --------------------------------------------------------------------------------------------
@pytest.mark.parametrize("case", [_case("tema_j", 2, True), _case("crossflow", both_mixed=True),
                                  _case("counterflow", shells=2, shells_flow="parallel_flow"),
                                  _case("plate", passes=(2, 3), overall_flow="parallel_flow", basis_is_shell=False)],
                         ids=["J 1-2", "crossflow both mixed", "2 counterflow units in parallel flow", "plate 2-3 parallel"])
def test_beyond_the_maximum_there_is_no_ntu_and_below_it_two(case):
    """P above the maximum at finite NTU: NaN on both branches. Between the NTU -> inf limit and
    the maximum: two roots, ``reached_twice`` says so, and each gives P back."""
    r = 0.6
    p_max, at = p_supremum(r, **case, return_ntu=True)
    assert np.isfinite(at)
    assert np.isnan(ntu_from_p(p_max * 1.001, r, **case)) and np.isnan(ntu_from_p(p_max * 1.001, r, **case,
                                                                                    branch="upper"))
    p = forward(float(at) * 3.0, r, case)  # on the falling side
    lower, upper = ntu_from_p(p, r, **case), ntu_from_p(p, r, **case, branch="upper")
    assert float(lower) < float(at) < float(upper)
    assert float(upper) == pytest.approx(float(at) * 3.0, rel=1e-9)
    assert bool(reached_twice(p, r, **case))
    assert not bool(reached_twice(forward(float(at) * 0.2, r, case) * 0.5, r, **case))


def test_a_unit_beyond_its_maximum_gets_no_fouling_value():
    """The unit's back-calculation (its condition): terminal temperatures whose P_hot lies above
    what a J shell reaches at that R give NaN with the reason, not a clipped UA."""
    from hxtrain.network import build_network, case_from_mapping
    from hxtrain.units.protocol import PortStates

    case = case_from_mapping({
        "fluids": {"oil": {"cp": 2.0}},
        "streams": {"hot": {"fluid": "oil", "flow": 10.0, "supply_temperature": 200.0, "path": "J-1.hot -> out_h"},
                    "cold": {"fluid": "oil", "flow": 10.0, "supply_temperature": 20.0, "path": "J-1.cold -> out_c"}},
        "exchangers": {"J-1": {"arrangement": "tema_j", "shell_side": "hot", "area_per_shell": 100.0,
                               "clean_u": 400.0, "clean_resistance_shell_share": 0.5,
                               "reference_flow": {"shell": 10.0, "tube": 10.0}}},
        "products": {"out_h": {}, "out_c": {}},
    })
    net = build_network(case)
    p_max = float(p_supremum(1.0, "tema_j", basis_is_shell=True))
    t_out_hot = 200.0 - (p_max + 0.01) * 180.0
    fluids = tuple(net.fluids[s] for s in net.inlets["J-1"])
    states = PortStates(np.array([[200.0, 20.0]]), np.array([[10.0, 10.0]]),
                        np.array([[t_out_hot, 20.0 + 200.0 - t_out_hot]]), np.array([[10.0, 10.0]]), fluids, fluids)
    condition = net.units["J-1"].condition(states)
    assert np.isnan(condition["ua"][0]) and "beyond" in condition["reason"][0]
