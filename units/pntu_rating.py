"""Rating of one two-stream heat exchanger from its inlet temperatures, flows and UA.

The exchanger is rated on the basis of the side with the smaller heat-capacity rate (R <= 1),
where every relation is well conditioned, and the results are then expressed on the hot-side
basis for the report. Heat flows by temperature, not by label: when the stream on the ``hot``
side enters colder than the ``cold`` side stream, the duty comes out negative (heat flowing from
the cold side to the hot side) and ``reversed`` is set.

The arrangements it rates are the registry :data:`ARRANGEMENTS` (:mod:`.arrangements`): one
relation and one line each, re-exported here with its dispatch :func:`p_one_unit`.

Units: temperatures in °C (or K: only differences matter), heat-capacity rates C = m·cp in kW/K,
UA in kW/K, duty in kW.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import pntu
from .arrangements import ARRANGEMENTS, Arranged, arranged, basic_equivalent, p_of_units, p_one_unit, \
    single_pass_aware, unit_halves
from .arrays import as_arrays, as_floats, select
from .pntu_inverse import p_one_unit_of_series

__all__ = ["ARRANGEMENTS", "ExchangerRating", "rate_exchanger", "p_one_unit", "carried", "HEAT_CAPACITY_RATE_FLOOR"]

SIDES = ("hot", "cold")

HEAT_CAPACITY_RATE_FLOOR = 1e-30
"""kW/K. A side whose heat-capacity rate is below this is rated as a side without flow: the
limit C -> 0 of every arrangement (NTU -> inf, P -> 1: it leaves at the other inlet temperature
when UA > 0), with zero duty. Why this value:

* it is far below any real stream: the smallest rate a case file admits is 1e-6 kg/s times
  0.1 kJ/kg·K = 1e-7 kW/K, and one split of that by the smallest meaningful fraction (2.2e-16)
  is 2.2e-23 kW/K; only chains of such splits, or a bypass of all but a rounding error, go
  lower;
* the heat it can carry across the whole temperature range (under 2300 K) is below 3e-27 kW,
  nothing against the energy-balance check (1e-6 relative) of any case;
* it keeps every product of the relations (NTU = UA/C up to 1e36 for the largest UA, C·ΔT, the
  ratio of two rates) a normal floating-point number: a denormal C (below 2.2e-308) carries a
  few significant digits at most, and would put its stream at a temperature that is wrong by a
  sizeable part of the inlet difference."""


@dataclass(frozen=True)
class ExchangerRating:
    """Rating of an exchanger, every field an array over the batch axis.

    P, R and NTU are on the hot-side basis (side 1 = the stream entering the ``hot`` port):
    ``p = (T_hot_in - T_hot_out)/(T_hot_in - T_cold_in)``, ``r = C_hot/C_cold``,
    ``ntu = UA/C_hot``. ``effectiveness`` is Q/Q_max on the C_min basis. ``shell_p_sum`` is
    P_hot + P_cold of one shell; above 1 the cold stream leaves a shell above the hot outlet. Temperatures on the
    exchanger proper (``*_out_exchanger``) differ from the outlet temperatures only with a bypass.
    """

    t_hot_out: np.ndarray
    t_cold_out: np.ndarray
    t_hot_out_exchanger: np.ndarray
    t_cold_out_exchanger: np.ndarray
    duty: np.ndarray
    ntu: np.ndarray
    p: np.ndarray
    r: np.ndarray
    effectiveness: np.ndarray
    f: np.ndarray
    lmtd: np.ndarray
    approach: np.ndarray
    shell_p_sum: np.ndarray
    temperature_cross: np.ndarray
    reversed: np.ndarray


def carried(c):
    """Heat-capacity rates with those below :data:`HEAT_CAPACITY_RATE_FLOOR` set to 0 (no flow).

    >>> carried(np.array([2.5, 1e-31, 5e-324, 0.0])).tolist()
    [2.5, 0.0, 0.0, 0.0]
    """
    c = np.asarray(c, dtype=float)
    below = c < HEAT_CAPACITY_RATE_FLOOR
    return np.where(below, 0.0, c) if below.any() else c


def _outlet(t_in, t_other_in, c, duty_out, ua):
    """Outlet temperature of one side losing ``duty_out``; a side without flow leaves at the
    other inlet temperature (the limit P -> 1 as its NTU -> inf), or at its own with UA = 0."""
    flows = c > 0.0
    if flows.all():  # the usual case: no side without flow to take the limit for
        return t_in - duty_out / c
    safe_c = select(flows, c, 1.0)
    stagnant = select(ua > 0.0, t_other_in, t_in)
    return select(flows, t_in - duty_out / safe_c, stagnant)


def _unit_outlet_difference(t_hot_in, t_cold_out, p_c_min, c_hot, c_cold, shells):
    """The smallest hot-outlet minus cold-outlet difference of any one unit of ``shells`` in
    series, counter-current between units (hot enters the first, cold leaves it): in a
    multipass shell the two outlets meet inside the shell (a 1-2 shell's "temperature
    approach", common practice; below zero a temperature cross), while the ends of the series
    show only the counterflow terminal differences. Marched from the hot end: in each unit
    T_c,in = (T_c,out - a T_h,in) / (1 - a), a = P·C_min / C_cold, and
    T_h,out = T_h,in - P·C_min / C_hot · (T_h,in - T_c,in), with ``p_c_min`` = P·C_min of one unit."""
    with np.errstate(divide="ignore", invalid="ignore"):
        a_cold = np.where(c_cold > 0.0, p_c_min / np.where(c_cold > 0.0, c_cold, 1.0), 0.0)
        a_hot = np.where(c_hot > 0.0, p_c_min / np.where(c_hot > 0.0, c_hot, 1.0), 0.0)
        t_hot, t_cold_leaving, smallest = t_hot_in, t_cold_out, np.inf
        for _ in range(int(shells)):
            t_cold_entering = (t_cold_leaving - a_cold * t_hot) / (1.0 - a_cold)
            t_hot_leaving = t_hot - a_hot * (t_hot - t_cold_entering)
            smallest = np.minimum(smallest, t_hot_leaving - t_cold_leaving)
            t_hot, t_cold_leaving = t_hot_leaving, t_cold_entering
    return np.where(np.isfinite(smallest), smallest, t_hot_in - t_cold_out)


def rate_exchanger(
    t_hot_in,
    t_cold_in,
    c_hot,
    c_cold,
    ua,
    arrangement="counterflow",
    *,
    shells=1,
    tube_passes=2,
    shell_side="hot",
    mixed_side=None,
    bypass_hot=0.0,
    bypass_cold=0.0,
    details=True,
):
    """Rate an exchanger (or ``shells`` identical shells in series) by the P–NTU method.

    Parameters
    ----------
    t_hot_in, t_cold_in : array_like
        Inlet temperatures of the streams on the hot and cold sides, °C.
    c_hot, c_cold : array_like
        Heat-capacity rates m·cp of the two streams, kW/K (>= 0; zero flow is allowed).
    ua : array_like
        Overall conductance of all shells together, kW/K (U × area per shell × shells).
    arrangement : str or Arranged
        A name of :data:`ARRANGEMENTS` (with its default options) or an :class:`Arranged`.
    shells : int
        Identical shells (or units) in series, in overall counterflow unless the arrangement's
        ``shells_flow`` is ``"parallel_flow"``; each gets UA/shells.
    tube_passes : int
        Tube passes per shell, for the arrangements that take them (see :data:`ARRANGEMENTS`);
        single-pass relations ignore it.
    shell_side : {"hot", "cold"}
        Which stream flows in the shell (for a plate: the stream whose passes come first in its
        ``passes`` option); matters where the relation is not symmetric in the sides.
    mixed_side : {None, "hot", "cold", "both"}
        Crossflow: the mixed fluid, None for both fluids unmixed, "both" for both mixed.
    bypass_hot, bypass_cold : array_like
        Fraction of each side's flow routed around the exchanger and re-mixed at its outlet.
    details : bool
        False leaves out what only a report needs (P, R, NTU on the hot side, F, LMTD, approach,
        cross, reversed: set to None), for iterations that need only outlets and duty.

    Returns
    -------
    ExchangerRating
    """
    a = arranged(arrangement)
    if mixed_side == "both":
        a, mixed_side = Arranged(a.name, tuple(sorted(dict(a.given, both_mixed=True).items())), a.shells_flow), None
    t_hot_in, t_cold_in, c_hot, c_cold, ua = as_arrays(t_hot_in, t_cold_in, c_hot, c_cold, ua)
    # most exchangers have no bypass: skip the arithmetic that would multiply by one
    bypass_hot, bypass_cold = as_floats(bypass_hot, bypass_cold)
    c_hot = carried(c_hot * (1.0 - bypass_hot) if bypass_hot.any() else c_hot)
    c_cold = carried(c_cold * (1.0 - bypass_cold) if bypass_cold.any() else c_cold)

    hot_is_min = c_hot <= c_cold
    c_min = np.minimum(c_hot, c_cold)
    c_max = np.maximum(c_hot, c_cold)
    has_flow = c_min > 0.0
    r = select(has_flow, c_min / select(has_flow, c_max, 1.0), 0.0)
    ntu = select(has_flow, ua / select(has_flow, c_min, 1.0), 0.0)

    p_shell = p_one_unit(
        ntu / shells,
        r,
        a,
        basis_is_shell=hot_is_min == (shell_side == "hot"),
        basis_is_mixed=None if mixed_side is None else hot_is_min == (mixed_side == "hot"),
        tube_passes=tube_passes,
    )
    effectiveness = p_of_units(p_shell, r, shells, a.shells_flow)
    duty = effectiveness * c_min * (t_hot_in - t_cold_in)

    t_hot_x = _outlet(t_hot_in, t_cold_in, c_hot, duty, ua)
    t_cold_x = _outlet(t_cold_in, t_hot_in, c_cold, -duty, ua)
    t_hot_out = (1.0 - bypass_hot) * t_hot_x + bypass_hot * t_hot_in if bypass_hot.any() else t_hot_x
    t_cold_out = (1.0 - bypass_cold) * t_cold_x + bypass_cold * t_cold_in if bypass_cold.any() else t_cold_x
    if not details:
        return ExchangerRating(t_hot_out, t_cold_out, t_hot_x, t_cold_x, duty, *([None] * 10))

    # report on the hot-side basis; a hot side without flow is the limit P = 1, R = 0, NTU = inf
    hot_flows = c_hot > 0.0
    safe_hot = np.where(hot_flows, c_hot, 1.0)
    with np.errstate(divide="ignore"):
        p_hot = np.where(hot_flows, effectiveness * c_min / safe_hot, np.where(ua > 0.0, 1.0, 0.0))
        r_hot = np.where(c_cold > 0.0, c_hot / np.where(c_cold > 0.0, c_cold, 1.0), np.inf)
        ntu_hot = np.where(hot_flows, ua / safe_hot, np.where(ua > 0.0, np.inf, 0.0))
    # counterflow is the F = 1 reference by definition; computing it would only add round-off
    series_in_parallel = shells > 1 and a.shells_flow == "parallel_flow"
    counterflow = basic_equivalent(a, single_pass_aware(a, tube_passes)) == "counterflow" and not series_in_parallel
    f = np.ones_like(duty) if counterflow else pntu.f_factor(effectiveness, r, ntu)

    direction = np.where(t_hot_in >= t_cold_in, 1.0, -1.0)
    end_hot_in = t_hot_in - t_cold_x  # counterflow terminal differences on the exchanger proper
    end_hot_out = t_hot_x - t_cold_in
    mean_difference = pntu.lmtd(end_hot_in, end_hot_out)
    passes, options = single_pass_aware(a, tube_passes), a.options
    if a.line.same_end(passes, options) or series_in_parallel:
        approach = direction * (t_hot_x - t_cold_x)  # both streams leave at one end
    else:
        approach = np.minimum(direction * end_hot_in, direction * end_hot_out)
    # a multipass unit's outlets meet inside it; an F shell's two E halves each have their own
    halves = unit_halves(a, tube_passes)
    p_part = p_shell if halves == 1 else p_one_unit_of_series(p_shell, r, halves)
    if a.line.cross(passes, options) and not (a.line.same_end(passes, options) or series_in_parallel):
        approach = np.minimum(approach, direction * _unit_outlet_difference(
            t_hot_in, t_cold_x, p_part * c_min, c_hot, c_cold, shells * halves))
    # a temperature cross inside one unit (or half), P_hot + P_cold > 1 (the same for every unit
    # of a series, whose units share P and R): heat flows back inside a multipass unit, or, in
    # units joined in parallel flow, in the next unit
    shell_p_sum = p_part * (1.0 + r)
    if a.line.cross(passes, options) or series_in_parallel:
        cross = shell_p_sum > 1.0 + 1e-12
    else:
        cross = np.zeros_like(duty, bool)
    return ExchangerRating(
        t_hot_out=t_hot_out,
        t_cold_out=t_cold_out,
        t_hot_out_exchanger=t_hot_x,
        t_cold_out_exchanger=t_cold_x,
        duty=duty,
        ntu=ntu_hot,
        p=p_hot,
        r=r_hot,
        effectiveness=effectiveness,
        f=f,
        lmtd=mean_difference,
        approach=approach,
        shell_p_sum=shell_p_sum,
        temperature_cross=cross & has_flow,
        reversed=(t_hot_in < t_cold_in) & (duty != 0.0),
    )
