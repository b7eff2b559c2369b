"""Outside-reference tests of ``hxtrain.units.pntu_plates`` (plate exchangers by passes).

References, named beside each check:

* **ht 1.2 (ChEDL)** ``ht.hx.temperature_effectiveness_plate`` (Kandlikar & Shah 1989), with
  both orders of the passes (ht's ``Np1`` is side 1), and ``temperature_effectiveness_basic``.
  As in ``test_pntu_shells_reference``: 1e-9 relative to ht's float value wherever that value
  is within 1e-10 of ht's own formula evaluated in 60-digit decimal arithmetic, and 1e-13 to
  the 60-digit value everywhere.
* **The channel groups as 1-1 zones** (the model behind Kandlikar & Shah's formulas: many
  channels, fluids mixed between passes), solved in the test as one linear system with ht's
  counterflow and parallel-flow relations for the zones: the reference for 3-3 and 4-4, which
  ht does not have.
* Identities: equal passes in counterflow throughout are counterflow, in parallel flow
  throughout parallel flow; exchange of sides; R = 0; NTU -> 0; continuity at removable
  singularities.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from test_pntu_shells_reference import (
    EPS,
    HT_OWN,
    NTU_GRID,
    R_GRID,
    REL_DECIMAL,
    REL_HT,
    _rel,
    decimal_ht,
    float_ht,
)

from hxtrain.units import pntu_plates as PL


@dataclass(frozen=True)
class Plate:
    name: str
    passes: tuple  # (side-1 passes, side-2 passes)
    hx: Callable  # (ntu1, r1) -> P1 with side 1 the side of passes[0]
    ht_args: tuple | None  # extra arguments of ht's temperature_effectiveness_plate after Np1, Np2
    monotone: bool = True
    singular: tuple = (1.0,)
    ht_float_from: float = 0.0
    """Below this NTU ht's float value may be off by more than 1e-10 anywhere (see 2-3)."""


def _plates():
    out = [
        Plate("1_1_counterflow", (1, 1), lambda n, r: PL.p_plate_1_1(n, r), (True,)),
        Plate("1_1_parallel_flow", (1, 1), lambda n, r: PL.p_plate_1_1(n, r, False), (False,), singular=()),
    ]
    for m, func in ((2, PL.p_plate_1_2), (4, PL.p_plate_1_4)):
        for first, other in ((1, m), (m, 1)):
            out.append(Plate(f"{first}_{other}", (first, other), lambda n, r, f=func, s=first: f(n, r, s), (),
                             singular=(1.0, float(m))))
    for end, label in ((True, "end_passes_counterflow"), (False, "end_passes_parallel_flow")):
        for first in (1, 3):
            out.append(Plate(f"{first}_{4 - first}_{label}", (first, 4 - first),
                             lambda n, r, e=end, s=first: PL.p_plate_1_3(n, r, s, e), (end,), singular=(1.0, 3.0)))
    for overall in (True, False):
        for channels in (True, False):
            out.append(Plate(f"2_2_overall_{'counter' if overall else 'parallel'}_channels_"
                             f"{'counter' if channels else 'parallel'}", (2, 2),
                             lambda n, r, o=overall, c=channels: PL.p_plate_equal_passes(n, r, 2, o, c),
                             (overall, channels), monotone=overall or not channels))
        for m, func in ((3, PL.p_plate_2_3), (4, PL.p_plate_2_4)):
            for first in (2, m):
                other = m if first == 2 else 2
                # ht's 2-3 overall-counterflow form divides by the zones' P, which vanish with
                # NTU: its float value is off by up to 3e-6 at NTU = 1e-4 (measured)
                out.append(Plate(f"{first}_{other}_overall_{'counter' if overall else 'parallel'}", (first, other),
                                 lambda n, r, f=func, s=first, o=overall: f(n, r, s, o), (overall,),
                                 monotone=overall, singular=(1.0, 1.5, 2.0),
                                 ht_float_from=0.02 if (m == 3 and overall) else 0.0))
    return out


PLATES = _plates()


def reference(plate, r, n, ev):
    return ev("temperature_effectiveness_plate", r, n, plate.passes[0], plate.passes[1], *plate.ht_args)


def _compare(plate):
    """As in test_pntu_shells_reference._compare; 'skipped' counts the points where ht's float
    value is off by more than HT_OWN at NTU >= plate.ht_float_from."""
    worst_float = worst_all = worst_decimal = 0.0
    where, skipped = None, 0
    for r in R_GRID:
        for n in NTU_GRID:
            got = float(plate.hx(n, r))
            exact = reference(plate, r, n, decimal_ht)
            floating = reference(plate, r, n, float_ht)
            worst_decimal = max(worst_decimal, _rel(got, exact))
            d = _rel(got, floating)
            worst_all = max(worst_all, d)
            if _rel(floating, exact) > HT_OWN:
                skipped += n >= plate.ht_float_from
            elif d > worst_float:
                worst_float, where = d, (r, n)
    return worst_float, where, worst_all, worst_decimal, skipped


@pytest.mark.parametrize("plate", PLATES, ids=[p.name for p in PLATES])
def test_against_ht(plate):
    """ht.hx.temperature_effectiveness_plate(R1, NTU1, Np1, Np2, ...) with side 1 the side of
    ``plate.passes[0]``: 1e-9 to ht's float value (where it holds to 1e-10), 1e-13 to its
    60-digit value, R from 0.01 to 5, NTU from 1e-4 to 50. ht is trusted at >= 95 % of the
    grid (all of it from NTU 0.02 for the 2-3 overall counterflow form)."""
    worst_float, where, _, worst_decimal, skipped = _compare(plate)
    assert worst_float <= REL_HT, (worst_float, where)
    assert worst_decimal <= REL_DECIMAL, worst_decimal
    assert skipped <= len(R_GRID) * len(NTU_GRID) // 20


# --------------------------------------------------------------------------------------------
# Equal passes: the channel groups as 1-1 zones.
# --------------------------------------------------------------------------------------------
def zones_equal_passes(ntu1, r1, passes, overall_counterflow, channels_counterflow):
    """N-N plate exchanger as N 1-1 zones (one pass of each fluid facing each other), side 1
    through zones 0..N-1, side 2 through N-1..0 (overall counterflow) or 0..N-1; each zone by
    ht's basic counterflow or parallel relation at NTU1/N. One linear system in the zones'
    inlet temperatures (side 1 enters at 1, side 2 at 0); returns P1."""
    kind = "counterflow" if channels_counterflow else "parallel"
    p = float_ht("temperature_effectiveness_basic", r1, ntu1 / passes, kind)
    order2 = list(reversed(range(passes))) if overall_counterflow else list(range(passes))
    # unknowns x = [t1_in(0..N-1), t2_in(0..N-1)]; outlets t1_out = t1 - p(t1 - t2), t2_out = t2 + r p (t1 - t2)
    size = 2 * passes
    a, b = np.eye(size), np.zeros(size)
    for k in range(passes):
        if k == 0:
            b[0] = 1.0
        else:  # t1_in(k) = t1_out(k-1)
            a[k, k - 1] -= 1.0 - p
            a[k, passes + k - 1] -= p
    for i, k in enumerate(order2):
        if i > 0:
            j = order2[i - 1]  # t2_in(k) = t2_out(j)
            a[passes + k, j] -= r1 * p
            a[passes + k, passes + j] -= 1.0 - r1 * p
    x = np.linalg.solve(a, b)
    last = passes - 1
    return 1.0 - ((1.0 - p) * x[last] + p * x[passes + last])


@pytest.mark.parametrize("passes", (2, 3, 4))
@pytest.mark.parametrize("overall", (True, False))
@pytest.mark.parametrize("channels", (True, False))
def test_equal_passes_against_zone_network(passes, overall, channels):
    """N-N plates (3-3 and 4-4 have no ht function) equal the network of their 1-1 channel
    groups, each rated by ht's basic relations, 1e-9 (ht's float forms lose up to ~1e-11 at
    NTU/N = 2.5e-5); R from 0.01 to 5 (1 included), NTU from 1e-4 to 50."""
    for r in R_GRID:
        for n in NTU_GRID:
            got = float(PL.p_plate_equal_passes(n, r, passes, overall, channels))
            assert got == pytest.approx(zones_equal_passes(n, r, passes, overall, channels), rel=1e-9), (r, n)


@pytest.mark.parametrize("passes", (1, 2, 3, 4))
def test_equal_passes_throughout_one_direction(passes):
    """Counterflow channels in overall counterflow are one counterflow exchanger, parallel in
    parallel one parallel-flow exchanger (ht basic), 1e-9."""
    for r in R_GRID:
        for n in NTU_GRID:
            cf = float_ht("temperature_effectiveness_basic", r, n, "counterflow")
            pf = float_ht("temperature_effectiveness_basic", r, n, "parallel")
            assert float(PL.p_plate_equal_passes(n, r, passes, True, True)) == pytest.approx(cf, rel=1e-9)
            assert float(PL.p_plate_equal_passes(n, r, passes, False, False)) == pytest.approx(pf, rel=1e-9)


# --------------------------------------------------------------------------------------------
# Invariants.
# --------------------------------------------------------------------------------------------
ALL = [(p.name, p.hx, p.passes) for p in PLATES] + [
    (f"{n}_{n}_overall_{o}_channels_{c}", lambda x, r, n=n, o=o, c=c: PL.p_plate_equal_passes(x, r, n, o == "counter",
                                                                                            c == "counter"), (n, n))
    for n in (3, 4) for o in ("counter", "parallel") for c in ("counter", "parallel")]
ALL_IDS = [a[0] for a in ALL]
MONOTONE = {p.name for p in PLATES if p.monotone} | {
    f"{n}_{n}_overall_{o}_channels_{c}" for n in (3, 4) for o, c in
    (("counter", "counter"), ("counter", "parallel"), ("parallel", "parallel"))} | {
    "3_3_overall_parallel_channels_counter"}
"""With an odd number of counterflow units in overall parallel flow P rises all the way (at
R = 1 and NTU -> inf each unit swaps the temperatures: an odd number of swaps ends swapped, an
even number where it began)."""
BOUND_R = np.concatenate([[0.0], np.logspace(-6, 1, 36), [1.0, 1.5, 2.0, 3.0, 4.0]])
BOUND_NTU = np.concatenate([[0.0], np.logspace(-8, 8, 81)])


def _swapped(name, passes):
    """The same arrangement with the other side as side 1."""
    for other_name, func, other_passes in ALL:
        if other_passes == passes[::-1] and other_name.split("_", 2)[2:] == name.split("_", 2)[2:]:
            return func
    raise LookupError(name)


@pytest.mark.parametrize("name, func, passes", ALL, ids=ALL_IDS)
def test_p_within_physical_bounds_and_finite(name, func, passes):
    """0 <= P1 <= min(1, 1/R1), never NaN, R from 0 to 10, NTU from 0 to 1e8 (batch call)."""
    rr, nn = np.meshgrid(BOUND_R, BOUND_NTU, indexing="ij")
    p = func(nn, rr)
    assert isinstance(p, np.ndarray) and p.dtype == np.float64 and p.shape == rr.shape
    assert not np.any(np.isnan(p))
    assert np.all(p >= 0.0) and np.all(p <= 1.0) and np.all(p * rr <= 1.0 + 2 * EPS)


@pytest.mark.parametrize("name, func, passes", ALL, ids=ALL_IDS)
def test_monotone_in_ntu_or_as_published(name, func, passes):
    """Overall counterflow (and parallel flow throughout): P1 non-decreasing in NTU1 up to 1e8
    (8 eps relative round-off), R from 0 to 5. Overall parallel flow with counterflow channels or
    with unequal passes falls past a maximum on NTU <= 50, confirmed by ht's 60-digit form (2-2,
    2-3, 2-4) or by the zone network (3-3, 4-4)."""
    ntu = np.logspace(-4, 8, 121)
    if name in MONOTONE:
        for r in (0.0, 0.01, 0.1, 0.5, 1.0, 2.0, 5.0):
            p = func(ntu, r)
            assert np.all(np.diff(p) >= -8 * EPS * p[1:]), r
        return
    plate = next((p for p in PLATES if p.name == name), None)
    falls = 0
    for r in R_GRID:
        vals = [float(func(n, r)) for n in NTU_GRID]
        for i in range(len(NTU_GRID) - 1):
            if vals[i + 1] < vals[i] * (1.0 - 1e-9):
                if plate is not None:
                    exact = [reference(plate, r, NTU_GRID[j], decimal_ht) for j in (i, i + 1)]
                else:
                    n_passes = passes[0]
                    exact = [zones_equal_passes(NTU_GRID[j], r, n_passes, False, True) for j in (i, i + 1)]
                assert exact[1] < exact[0], (r, NTU_GRID[i])
                falls += 1
    assert falls


@pytest.mark.parametrize("name, func, passes", ALL, ids=ALL_IDS)
def test_side_exchange(name, func, passes):
    """Same duty from either side: P1(NTU1, R1)·R1 equals the other side's P at
    (NTU1·R1, 1/R1), from the function with the other side as side 1 (the same one where the
    passes are equal), 1e-12."""
    other = func if passes[0] == passes[1] else _swapped(name, passes)
    for r in (0.01, 0.3, 1.0, 2.0, 7.0):
        for n in (1e-6, 0.1, 1.0, 10.0, 1e3):
            assert float(other(n * r, 1.0 / r)) == pytest.approx(float(func(n, r)) * r, rel=1e-12), (r, n)


def _singular(name):
    plate = next((p for p in PLATES if p.name == name), None)
    return plate.singular if plate is not None and plate.singular else (1.0,)


@pytest.mark.parametrize("name, func, passes", ALL, ids=ALL_IDS)
def test_continuous_at_removable_singularities(name, func, passes):
    """No 0/0 where a zone's R is 1 (R1 = 1, and R1 = 1.5, 2, 3 or 4 where the zones run at
    2R1/3, R1/2, R1/3, R1/4, with their reciprocals on the other basis): P at R0(1 ± 1e-7)
    within 1e-6 of P at R0, NTU from 1e-6 to 1e8 (to 1e4 where P falls with NTU: there P itself
    depends on NTU(1 - R) and changes by 25 % between R = 1 and 1 + 1e-7 at NTU = 1e8)."""
    points = set()
    for r0 in _singular(name):
        points |= {r0, 1.0 / r0}
    for r0 in sorted(points):
        for n in (1e-6, 0.01, 1.0, 10.0, 100.0, 1e4) + ((1e8,) if name in MONOTONE else ()):
            at = float(func(n, r0))
            for r in (r0 * (1 - 1e-7), r0 * (1 + 1e-7)):
                assert float(func(n, r)) == pytest.approx(at, rel=1e-6), (r0, n)


@pytest.mark.parametrize("name, func, passes", ALL, ids=ALL_IDS)
def test_small_ntu_expansion(name, func, passes):
    """NTU1 -> 0: P1 = NTU1 - (1 + R1)NTU1²/2 + O(NTU1³) (the expansion of counterflow and
    parallel flow alike), within (1 + R1)²NTU1², NTU1 = 1e-6 and 1e-3."""
    for r in (0.0, 0.01, 0.5, 1.0, 2.0, 5.0):
        for n in (1e-6, 1e-3):
            p = float(func(n, r))
            assert abs(p / n - (1.0 - (1.0 + r) * n / 2.0)) <= (1.0 + r) ** 2 * n * n + 4 * EPS, (r, n)


@pytest.mark.parametrize("name, func, passes", ALL, ids=ALL_IDS)
def test_other_side_isothermal(name, func, passes):
    """R1 = 0: P1 = 1 - exp(-NTU1), 1e-14, NTU from 1e-8 to 1e8."""
    ntu = np.logspace(-8, 8, 33)
    np.testing.assert_allclose(func(ntu, 0.0), -np.expm1(-ntu), rtol=1e-14, atol=0.0)


@pytest.mark.parametrize("name, func, passes", ALL, ids=ALL_IDS)
def test_batch_equals_scalar_calls(name, func, passes):
    rr, nn = np.meshgrid(np.array(R_GRID), np.array(NTU_GRID), indexing="ij")
    scalar = np.array([[float(func(n, r)) for n in NTU_GRID] for r in R_GRID])
    np.testing.assert_array_equal(func(nn, rr), scalar)
    np.testing.assert_array_equal(func(np.array(NTU_GRID)[None, :], np.array(R_GRID)[:, None]), scalar)


@given(ntu=st.floats(1e-9, 1e8), r=st.floats(0.0, 20.0, allow_subnormal=False))
def test_bounds_property(ntu, r):
    """Random NTU and R (hypothesis): every plate relation within 0 <= P1 <= min(1, 1/R1)."""
    for name, func, _ in ALL:
        p = float(func(ntu, r))
        assert 0.0 <= p <= 1.0 and p * r <= 1.0 + 2 * EPS, name


def test_bad_arguments_are_refused():
    for func, passes in ((PL.p_plate_1_2, 3), (PL.p_plate_1_3, 2), (PL.p_plate_1_4, 2), (PL.p_plate_2_3, 4),
                         (PL.p_plate_2_4, 3)):
        with pytest.raises(ValueError):
            func(1.0, 0.5, passes)
    with pytest.raises(ValueError):
        PL.p_plate_equal_passes(1.0, 0.5, 0)


def test_arrangement_table():
    """Every entry: a lower_snake_case name, a callable taking (ntu1, r1) and returning float64
    arrays, a description naming its arguments, a published source."""
    assert {"plate_1_1_counterflow", "plate_1_2", "plate_2_2_counterflow", "plate_2_3_counterflow",
            "plate_3_3_overall_parallel_channels_counterflow", "plate_4_4_parallel_flow"} <= set(PL.ARRANGEMENT)
    for name, (func, description, source) in PL.ARRANGEMENT.items():
        assert name == name.lower() and " " not in name and name.startswith("plate_")
        out = func(np.array([0.5, 2.0]), np.array([0.3, 1.0]))
        assert out.dtype == np.float64 and out.shape == (2,)
        assert "ntu1" in description and source


def test_report_largest_disagreement():
    """Prints, per arrangement, the largest relative disagreement with ht's float value where
    ht holds to 1e-10 of its 60-digit value, the points where it does not, over every point,
    and with the 60-digit value; and with the zone network for the N-N plates. ``pytest -s``."""
    lines = [f"{'plate':45s} {'ht float':>9s} {'at (R, NTU)':15s} {'ht off':>6s} {'all points':>10s} {'60-digit':>9s}"]
    for plate in PLATES:
        worst_float, where, worst_all, worst_decimal, skipped = _compare(plate)
        lines.append(f"{plate.name:45s} {worst_float:9.1e} {str(where):15s} {skipped:6d} {worst_all:10.1e} "
                     f"{worst_decimal:9.1e}")
        assert worst_float <= REL_HT and worst_decimal <= REL_DECIMAL
    for passes in (2, 3, 4):
        for overall in (True, False):
            for channels in (True, False):
                worst = max(_rel(PL.p_plate_equal_passes(n, r, passes, overall, channels),
                                 zones_equal_passes(n, r, passes, overall, channels))
                            for r in R_GRID for n in NTU_GRID)
                lines.append(f"{passes}-{passes} overall {'counter' if overall else 'parallel':8s} channels "
                             f"{'counter' if channels else 'parallel':8s} vs zones {worst:9.1e}")
    print("\nLargest relative disagreement of hxtrain.units.pntu_plates\n" + "\n".join(lines))
