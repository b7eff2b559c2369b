"""Rating an exchanger in service: U from its thermal model, cp from the fluids' enthalpy.

The P–NTU relations (:func:`rate_exchanger`) need constant heat-capacity rates and a fixed UA.
In service both depend on the outlet temperatures: cp through the fluids' enthalpy curves, U
through the film coefficients at the side mean temperatures. This module iterates (successive
substitution) on the exchanger's outlet temperatures until they change by less than
:data:`OUTLET_TOLERANCE` times (1 + |T_hot,in|):

* each side's heat-capacity rate is ṁ times the *mean* cp over the side's actual temperature
  range, (h(T_in) - h(T_out)) / (T_in - T_out), so that the P–NTU duty equals the enthalpy
  change exactly at the fixed point;
* U is evaluated at the side mean temperatures and the flow through one shell.

The cold outlet is finally taken from the enthalpy balance on the duty, so each exchanger
closes its own energy balance to round-off whatever the iteration's residual. With constant cp
and a fixed U the first pass is the answer.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .arrays import as_arrays, select
from .pntu_rating import ExchangerRating, carried, rate_exchanger
from .protocol import note_outlets_loosened, outlet_precision
from .u_models import Coefficients, FixedCoefficient

OUTLET_TOLERANCE = 1e-12
"""Passes stop once both outlets move less than this times (1 + |T_hot,in|) in every scenario
(or less than what a solver allows at its present iterate: :func:`.protocol.outlets_within`)."""
MAX_PASSES = 100


CONTRACTION_LIMIT = 0.5
"""Largest ratio of successive outlet changes read as a contraction (see :func:`outlets_settled`)."""
CONTRACTION_SAFETY = 2.0
"""Factor on the last ratio of changes when it estimates the contraction still to come: the
ratios of an exchanger's passes wander by up to about this much from one pass to the next
(measured on the crude demo: 0.005-0.05, rarely more than doubling)."""


def outlets_settled(change, t_hot_in, previous_change=None, tolerance=None):
    """Where the outlets are within the passes' tolerance of the iteration's fixed point:
    :data:`OUTLET_TOLERANCE` times (1 + |T_hot,in|), or the looser precision a solver allows here
    (noted where that looser precision is what settles some scenario: the result is then not
    exact).

    The distance is estimated from the last change, and where the change before it is given and
    the two show a contraction (ratio c = change / previous_change below
    :data:`CONTRACTION_LIMIT`), from the a-posteriori bound of a contraction,
    distance <= c / (1 - c) x change, with c taken :data:`CONTRACTION_SAFETY` times larger: a
    successive substitution that contracts by ~0.01 a pass then stops one pass earlier than the
    change alone would let it, at the same distance from the answer. The looser precision is
    judged on the change itself: an inexact Newton sweep counts on its units being that close
    (made as loose as allowed, the tear iteration took a fifth iteration on the crude demo).
    ``tolerance``: :func:`own_tolerance` of ``t_hot_in``, where the caller has it (every pass)."""
    distance = change
    if previous_change is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = change / previous_change  # inf or NaN where nothing moved before: no contraction
            contracting = ratio < CONTRACTION_LIMIT
            if contracting.any():  # elsewhere the factor is not used
                factor = np.minimum(1.0, CONTRACTION_SAFETY * ratio / (1.0 - ratio))
                distance = np.where(contracting, change * factor, change)
    # a scenario whose numbers are gone (NaN from inlets no state has) has nothing to settle
    own = (distance <= (own_tolerance(t_hot_in) if tolerance is None else tolerance)) | ~np.isfinite(change)
    allowed = outlet_precision()
    if allowed <= 0.0:
        return own
    settled = own | (change <= allowed)
    if np.any(settled & ~own):
        note_outlets_loosened()
    return settled


def own_tolerance(t_hot_in):
    """K: how far from their fixed point the passes leave the outlets, :data:`OUTLET_TOLERANCE`
    times (1 + |T_hot,in|)."""
    return OUTLET_TOLERANCE * (1.0 + np.abs(t_hot_in))


@dataclass
class ExchangerSpec:
    """What is fixed about an exchanger: arrangement, shells and its U model.

    ``area_per_shell`` in m² (None with a fixed ``ua``); ``ua`` in kW/K overrides the U model.
    ``pressure_drop`` maps "shell"/"tube" to a callable (mass flow through one shell, mean
    temperature, fluid) -> Pa.
    """

    arrangement: str
    thermal: object = None
    ua: float | None = None
    area_per_shell: float | None = None
    shells: int = 1
    shells_in_parallel: int = 1
    tube_passes: int = 2
    shell_side: str = "hot"
    mixed_side: str | None = None
    bypass_hot: float = 0.0
    bypass_cold: float = 0.0
    pressure_drop: dict = field(default_factory=dict)

    @property
    def u_is_fixed(self) -> bool:
        """U does not follow the operating point (a fixed UA or U): with constant cp on both
        sides the rating is then linear in the inlet temperatures."""
        return self.ua is not None or isinstance(self.thermal, FixedCoefficient)

    @property
    def total_area(self):
        return None if self.area_per_shell is None else self.area_per_shell * self.shells * self.shells_in_parallel

    @property
    def fouling(self) -> dict:
        """Fouling resistances (m²·K/W) by part, ``shell`` and ``tube``; empty where U takes no
        fouling (a fixed UA or a fixed service U)."""
        if self.ua is not None or not getattr(self.thermal, "takes_fouling", False):
            return {}
        return {"shell": self.thermal.fouling_shell, "tube": self.thermal.fouling_tube}

    def set_fouling(self, part, value):
        """Replace the fouling resistance of ``part`` (``shell`` or ``tube``), m²·K/W: a number
        or one value per scenario."""
        if part not in self.fouling:
            raise KeyError(f"no {part}-side fouling resistance here (U is not built from films)")
        setattr(self.thermal, f"fouling_{part}", value)


@dataclass
class ServiceRating:
    rating: ExchangerRating
    coefficients: Coefficients | None
    ua: np.ndarray
    pressure_drop: dict
    passes: int | np.ndarray
    """Passes of the iteration (stacked exchangers: each one's, along the batch axis)."""


def _side(spec, hot_value, cold_value, side):
    """The value for the shell or tube side from hot/cold values."""
    shell_is_hot = spec.shell_side == "hot"
    return hot_value if (side == "shell") == shell_is_hot else cold_value


def through_exchanger(spec: ExchangerSpec, m_hot, m_cold):
    """(hot, cold) flows through the exchanger proper, kg/s: each side's bypass taken off."""
    return m_hot * (1.0 - spec.bypass_hot), m_cold * (1.0 - spec.bypass_cold)


def shell_flows(spec: ExchangerSpec, m_hot_x, m_cold_x):
    """(shell side, tube side) flows through one shell, kg/s, from the hot and cold flows through
    the exchanger proper (bypasses taken off): each parallel set takes its share."""
    per_shell = 1.0 / spec.shells_in_parallel
    return _side(spec, m_hot_x, m_cold_x, "shell") * per_shell, _side(spec, m_hot_x, m_cold_x, "tube") * per_shell


def coefficients_at(spec: ExchangerSpec, m_hot_x, m_cold_x, fluid_hot, fluid_cold):
    """U and its parts (:class:`.u_models.Coefficients`) from the exchanger's U model as a
    function of each side's mean temperature (°C; hot, cold), at the flows through the exchanger
    proper (kg/s, bypasses taken off; see :func:`shell_flows`): what the flows alone fix is
    worked out once for all of an exchanger's passes."""
    at_flows = spec.thermal.at_flows(*shell_flows(spec, m_hot_x, m_cold_x))
    fluids = _side(spec, fluid_hot, fluid_cold, "shell"), _side(spec, fluid_hot, fluid_cold, "tube")

    def at_temperatures(t_mean_hot, t_mean_cold):
        return at_flows(_side(spec, t_mean_hot, t_mean_cold, "shell"), _side(spec, t_mean_hot, t_mean_cold, "tube"),
                        *fluids)
    return at_temperatures


def coefficient_quantities(spec: ExchangerSpec, coefficients, shape) -> dict:
    """The report's U quantities (service and clean U, films, tube-side Re, fouling), each of
    ``shape``; empty where U is not from a model (a fixed UA)."""
    if coefficients is None:
        return {}
    found = {"u_service": coefficients.u_service, "u_clean": coefficients.u_clean}
    if coefficients.h_shell is not None:
        found.update(h_shell=coefficients.h_shell, h_tube=coefficients.h_tube)
    if coefficients.reynolds_tube is not None:
        found["re_tube"] = coefficients.reynolds_tube
    for part, resistance in spec.fouling.items():
        found[f"fouling_{part}"] = np.broadcast_to(resistance, shape)
    return found


def rates_linearly(spec: ExchangerSpec, fluid_hot, fluid_cold) -> bool:
    """Constant cp on both sides and a fixed U: the rating is linear and homogeneous in the inlet
    temperatures (one pass, closed form)."""
    return spec.u_is_fixed and fluid_hot.constant_cp and fluid_cold.constant_cp


def rate_in_service(spec: ExchangerSpec, t_hot_in, t_cold_in, m_hot, m_cold, fluid_hot, fluid_cold,
                    guess=None, details=True, members=1, u_at=None) -> ServiceRating:
    """Rate an exchanger with temperature-dependent cp and a flow- and temperature-dependent U.

    ``guess`` (hot and cold outlet temperatures of the exchanger proper, e.g. from the previous
    call) only shortens the iteration; the answer is the same fixed point. ``u_at``: what
    :func:`coefficients_at` gives for these flows and fluids, where the caller kept it. ``details=False``
    skips what only a report needs (see :func:`rate_exchanger`) and the pressure drops.

    ``members`` > 1: the batch axis holds that many exchangers of one arrangement stacked, each
    over an equal share of it (their UA, areas and bypasses as arrays along the axis). Each
    stops passing when its own share has converged, keeping the values of that pass, so every
    exchanger gets the numbers it gets rated alone. Only with a U that does not change with the
    operating point (the coefficients are not kept per pass) and no pressure-drop models.
    """
    t_hot_in, t_cold_in, m_hot, m_cold = as_arrays(t_hot_in, t_cold_in, m_hot, m_cold)
    m_hot_x, m_cold_x = through_exchanger(spec, m_hot, m_cold)
    simple = rates_linearly(spec, fluid_hot, fluid_cold)
    warm = guess is not None and np.shape(guess[0]) == t_hot_in.shape
    if warm:
        t_hot_x, t_cold_x = (np.array(g, dtype=float) for g in guess)
    else:
        t_hot_x, t_cold_x = t_hot_in.copy(), t_cold_in.copy()
    # a report's rating starts from the last sweep's, at these inlets: its first pass is nearly
    # always the last, so it is made with the report's quantities at once
    first_is_last = details and warm and members == 1
    coefficients = None
    if spec.ua is None and u_at is None:
        u_at = coefficients_at(spec, m_hot_x, m_cold_x, fluid_hot, fluid_cold)
    h_in = (fluid_hot.enthalpy(t_hot_in), fluid_cold.enthalpy(t_cold_in))  # every pass's mean cp starts here
    frozen = np.zeros(t_hot_in.shape, bool)  # stacked exchangers that stopped at an earlier pass
    stopped = np.zeros(t_hot_in.shape, int)  # and the pass each stopped at
    previous_change, tolerance = None, own_tolerance(t_hot_in)
    for passes in range(1, MAX_PASSES + 1):
        t_mean_hot, t_mean_cold = _mean(t_hot_in, t_hot_x), _mean(t_cold_in, t_cold_x)
        if spec.ua is not None:
            ua = np.broadcast_to(np.asarray(spec.ua, dtype=float), t_hot_in.shape)
        else:
            coefficients = u_at(t_mean_hot, t_mean_cold)
            ua = coefficients.u_service * spec.total_area / 1000.0
        c_hot = m_hot * fluid_hot.mean_cp(t_hot_in, t_hot_x, h_in[0])
        c_cold = m_cold * fluid_cold.mean_cp(t_cold_in, t_cold_x, h_in[1])
        with_details = details and (simple or (first_is_last and passes == 1))
        rating = _rate(spec, t_hot_in, t_cold_in, c_hot, c_cold, ua, with_details)
        change = _largest_move(rating.t_hot_out_exchanger, t_hot_x, rating.t_cold_out_exchanger, t_cold_x)
        met = outlets_settled(change, t_hot_in, previous_change, tolerance)
        previous_change = change
        if members > 1:
            if passes > 1:
                rating, c_hot, c_cold, ua = _keep_frozen(frozen, (rating, c_hot, c_cold, ua), kept)
            stopped = np.where(frozen, stopped, passes)
        t_hot_x, t_cold_x = rating.t_hot_out_exchanger, rating.t_cold_out_exchanger
        if simple or np.all(met | frozen if members > 1 else met):
            break
        if members > 1:
            frozen = frozen | np.repeat(met.reshape(members, -1).all(axis=1), met.size // members)
            kept = (rating, c_hot, c_cold, ua)
    if details and rating.f is None:  # the report's quantities at the last pass, not at every pass
        rating = _rate(spec, t_hot_in, t_cold_in, c_hot, c_cold, ua, True)
    flowing = (carried(c_hot * (1.0 - spec.bypass_hot)) > 0.0, carried(c_cold * (1.0 - spec.bypass_cold)) > 0.0)
    rating = _close_on_enthalpy(rating, t_hot_in, t_cold_in, m_hot_x, m_cold_x, fluid_hot, fluid_cold, spec, simple,
                                flowing, h_in)
    drops = pressure_drops(spec, rating, t_hot_in, t_cold_in, m_hot, m_cold, fluid_hot, fluid_cold) if details else {}
    return ServiceRating(rating, coefficients, ua, drops, stopped if members > 1 else passes)


def moved_outlets(last_inlets, last_outlets, t_hot_in, t_cold_in):
    """A warm start for :func:`rate_in_service` at new inlets from a rating at others: each
    outlet keeps its fraction of the inlet difference, (T_h,in - T_h,out) / (T_h,in - T_c,in) and
    (T_c,out - T_c,in) / (T_h,in - T_c,in) (exact where cp and U are constant, nearly so where
    they follow the temperatures); the last outlets as they were where the last inlet difference
    was too small to give fractions. None without a last rating of this batch's shape."""
    if last_outlets is None or last_inlets is None or np.shape(last_outlets[0]) != np.shape(t_hot_in):
        return last_outlets
    (hot_in, cold_in), (hot_out, cold_out) = last_inlets, last_outlets
    span = hot_in - cold_in
    usable = np.abs(span) > 1e-6 * (1.0 + np.abs(hot_in))
    safe = select(usable, span, 1.0)
    new_span = t_hot_in - t_cold_in
    hot_drop = hot_in - hot_out  # carried in place: T_h,in - (T_h,in - T_h,out) / span x new span
    hot_drop /= safe
    hot_drop *= new_span
    cold_rise = cold_out - cold_in  # and T_c,in + (T_c,out - T_c,in) / span x new span
    cold_rise /= safe
    cold_rise *= new_span
    cold_rise += t_cold_in
    return select(usable, t_hot_in - hot_drop, hot_out), select(usable, cold_rise, cold_out)


def _mean(a, b):
    """(a + b) / 2 as 0.5 x (a + b), in place: one new array."""
    total = a + b
    total *= 0.5
    return total


def _largest_move(hot_new, hot_old, cold_new, cold_old):
    """max(|hot_new - hot_old|, |cold_new - cold_old|), in place: two new arrays, not five."""
    hot, cold = np.asarray(hot_new - hot_old), np.asarray(cold_new - cold_old)  # arrays even for one value
    np.abs(hot, out=hot)
    np.abs(cold, out=cold)
    return np.maximum(hot, cold, out=hot)


def _rate(spec, t_hot_in, t_cold_in, c_hot, c_cold, ua, details):
    return rate_exchanger(t_hot_in, t_cold_in, c_hot, c_cold, ua, spec.arrangement, shells=spec.shells,
                          tube_passes=spec.tube_passes, shell_side=spec.shell_side, mixed_side=spec.mixed_side,
                          bypass_hot=spec.bypass_hot, bypass_cold=spec.bypass_cold, details=details)


def pressure_drops(spec, rating, t_hot_in, t_cold_in, m_hot, m_cold, fluid_hot, fluid_cold) -> dict:
    """Pa by side ("shell"/"tube") of the exchanger rated ``rating``, from its pressure-drop
    models at the flow through one shell and the side's mean temperature."""
    m_x = dict(zip(("hot", "cold"), through_exchanger(spec, m_hot, m_cold)))
    t_mean = {"hot": 0.5 * (t_hot_in + rating.t_hot_out_exchanger), "cold": 0.5 * (t_cold_in + rating.t_cold_out_exchanger)}
    drops = {}
    for side, model in spec.pressure_drop.items():
        label = spec.shell_side if side == "shell" else ("cold" if spec.shell_side == "hot" else "hot")
        fluid = fluid_hot if label == "hot" else fluid_cold
        drops[side] = model(m_x[label] * (1.0 / spec.shells_in_parallel), t_mean[label], fluid) * spec.shells
    return drops


def _keep_frozen(frozen, new, old):
    """``new`` (a rating without details, c_hot, c_cold, UA) with the values of ``old`` where
    ``frozen``: a stacked exchanger that has converged keeps the pass it stopped at."""
    if not frozen.any():
        return new

    def pick(n, o):
        return np.where(frozen, o, n)

    rating = ExchangerRating(*(pick(getattr(new[0], f), getattr(old[0], f)) for f in _OUTLET_FIELDS),
                             *([None] * 10))
    return (rating, *(pick(n, o) for n, o in zip(new[1:], old[1:])))


_OUTLET_FIELDS = ("t_hot_out", "t_cold_out", "t_hot_out_exchanger", "t_cold_out_exchanger", "duty")
"""The fields of a rating without details (:func:`rate_exchanger` with ``details=False``)."""


def _close_on_enthalpy(rating, t_hot_in, t_cold_in, m_hot_x, m_cold_x, fluid_hot, fluid_cold, spec, simple,
                       flowing, h_in):
    """Duty from the hot side's enthalpy change; cold outlet from the cold side's enthalpy;
    bypass re-mixed on enthalpy. Constant-cp, fixed-U exchangers keep the closed-form result.
    ``flowing`` (hot, cold): where each side's heat-capacity rate is above the floor of
    :func:`rate_exchanger` (elsewhere its zero-flow result stands); ``h_in`` the inlets'
    enthalpies (hot, cold)."""
    if simple:
        return rating
    hot_flows, cold_flows = flowing
    enthalpy_drop = h_in[0] - fluid_hot.enthalpy(rating.t_hot_out_exchanger)
    duty = select(hot_flows, m_hot_x * enthalpy_drop, rating.duty)
    h_cold = h_in[1] + duty / select(cold_flows, m_cold_x, 1.0)
    t_cold_x = select(cold_flows, fluid_cold.temperature(h_cold, guess=rating.t_cold_out_exchanger),
                      rating.t_cold_out_exchanger)
    t_hot_out = _remix(fluid_hot, t_hot_in, rating.t_hot_out_exchanger, spec.bypass_hot)
    t_cold_out = _remix(fluid_cold, t_cold_in, t_cold_x, spec.bypass_cold)
    return ExchangerRating(**{**rating.__dict__, "duty": duty,
                              "t_cold_out_exchanger": t_cold_x, "t_hot_out": t_hot_out, "t_cold_out": t_cold_out})


def _remix(fluid, t_in, t_exchanger, bypass):
    if np.all(np.asarray(bypass) == 0.0):
        return t_exchanger
    h = (1.0 - bypass) * fluid.enthalpy(t_exchanger) + bypass * fluid.enthalpy(t_in)
    return fluid.temperature(h, guess=t_exchanger)
