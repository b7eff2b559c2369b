r"""Zone-by-zone rating of a two-stream exchanger along both streams' enthalpy curves.

How it is meant to plug in: a segment's state becomes its specific enthalpy (kJ/kg), the value
the solver tears and converges; temperatures are derived from it (``curve.temperature(h)``) for
reports and for the units that need them. An exchanger whose sides are :class:`.EnthalpyCurve`
fluids is rated here from its inlet enthalpies, mass flows and UA, and hands back outlet
enthalpies (outlet temperatures and vapour fractions for the report, the smallest internal
approach for the limits). Constant-cp fluids rated with one zone give the numbers of
:func:`.pntu_rating.rate_exchanger`, so that existing cases do not move.

Method (zone analysis [1]_ [2]_ [3]_). At a trial duty Q both outlet enthalpies are fixed; the
points of either curve that fall between a side's inlet and outlet cut the exchanger into zones
in which both sides have one cp (the curves are linear between their points), so one heat-
capacity rate each (C = m·cp; C -> inf where a side is on a saturation plateau, which makes that
zone's R = 0). Each zone's duty and inlet temperatures give its P, and the inverse P–NTU relation
of the arrangement its NTU and UA share; the shares add up to the UA that duty needs, which rises
strictly with Q. The duty is the root of UA_needed(Q) = UA, found by a bracketed solve
(Illinois regula falsi [4]_, bisection where it stalls), vectorised over the batch, between 0 and
the largest duty the inlets allow (the internal pinch at zero approach, found exactly: between
the curves' points the hot-minus-cold difference is linear in the duty, so its minimum lies at
a point).

Arrangements covered: ``counterflow`` (exact for the curves) and ``tema_e`` with two tube passes
(1-2 shells, shell fluid mixed): the zones are laid out and rated in counterflow, and their UA
divided by the shell's F at its terminal temperatures (:func:`shell_f`), the weighted
temperature difference corrected by F of the common practice for multipass condensers and
vaporisers [2]_ [3]_. It is the 1-2 shell exactly where cp is constant, however many zones the
curves' points make (the counterflow zones' UA add up to the counterflow UA, and F is its ratio
to the shell's), and where one side is isothermal throughout (F = 1); elsewhere F of the
terminal temperatures stands for the shell's mixing along the whole profile. (Rating each zone
as a 1-2 shell of its own would tend to counterflow as the zones grow many.) One shell or several in series in
overall counterflow (``shells``: each shell so rated with its share of UA, the shells chained by
:mod:`.zone_shells`). A shell with three or more tube passes (one shell) is rated the same way
with F from the lower branch of its inverse: its P passes through a maximum at finite NTU, so a
UA beyond that NTU has no unique duty; the UA a duty needs then jumps to infinity at the peak,
the solve stops there with the UA not met, and that scenario gets no number (``past_peak``).

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003:
       rating with variable C and phase change by zones (section from memory).
.. [2] Hewitt, G. F. (ed.). Heat Exchanger Design Handbook. Begell House: zone analysis of
       condensers and vaporisers (from memory).
.. [3] Bell, K. J., and M. A. Ghaly. "An approximate generalized design method for
       multicomponent/partial condensers." AIChE Symp. Ser. 69 (131) (1973) 72-79.
.. [4] Dowell, M., and P. Jarratt. "A modified regula falsi method for computing the root of an
       equation." BIT 11 (1971) 168-174.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .arrays import as_arrays
from .enthalpy_curves import EnthalpyCurve
from .pntu_inverse import ntu_from_p

__all__ = ["ZoneProfile", "ZoneRating", "zone_profile", "duty_limit", "solve_duty", "shell_f", "rate_by_zones", "ZONE_ARRANGEMENTS"]

ZONE_ARRANGEMENTS = ("counterflow", "tema_e")
"""The arrangements rated zone by zone."""

DUTY_TOLERANCE = 4e-16
"""The solve stops where the duty's bracket, or its last step, is this small relative to the
largest duty (a few ulp)."""

UA_TOLERANCE = 1e-14
"""... or where the UA needed meets the UA to this relative tolerance (the zones' sum carries a
few ulp of round-off per zone; the duty's relative error is this times dln(Q)/dln(UA) <= 1)."""

MAX_STEPS = 200

PEAK_MARGIN = 1e-9
"""A shell with three or more tube passes is past its peak where the UA the duty found needs
misses the UA by more than this (relative), with the duty short of its limit by more than this."""


@dataclass(frozen=True)
class ZoneProfile:
    """The zones of an exchanger at one duty, each array (batch, ...).

    Positions are duties counted from the end where the cold stream enters (the hot outlet), kW;
    ``t_hot``, ``t_cold`` the temperatures there, °C; per zone (one fewer than the positions;
    zones of no width carry no duty and no UA) ``c_hot``, ``c_cold`` its heat-capacity rates in
    kW/K (inf on a plateau) and ``ua`` its UA share, kW/K (inf where the zone cannot reach its duty).
    """

    position: np.ndarray
    t_hot: np.ndarray
    t_cold: np.ndarray
    c_hot: np.ndarray
    c_cold: np.ndarray
    ua: np.ndarray

    @property
    def ua_needed(self):
        """UA the duty needs: the zones' shares summed, kW/K."""
        return self.ua.sum(axis=1)

    @property
    def approach(self):
        """Smallest hot-minus-cold temperature difference over the exchanger, K; negative where
        heat would have to flow from cold to hot somewhere (a cross)."""
        return np.min(self.t_hot - self.t_cold, axis=1)

    @property
    def pinch_position(self):
        """Where the smallest difference lies: duty from the cold-inlet end, kW."""
        at = np.argmin(self.t_hot - self.t_cold, axis=1)
        return np.take_along_axis(self.position, at[:, None], axis=1)[:, 0]


@dataclass(frozen=True)
class ZoneRating:
    """An exchanger rated zone by zone; every field an array over the batch.

    ``duty`` in kW from the stream entering the ``hot`` port to the other (negative where that
    stream entered colder: ``reversed``); outlet enthalpies in kJ/kg, temperatures in °C, vapour
    fractions in kg/kg; ``approach`` the smallest internal temperature difference (K) and
    ``pinch_position`` where (duty from the cold-inlet end, kW); ``duty_limit`` the largest duty
    the inlets allow (zero internal approach, or a curve's table ending in a plateau), kW;
    ``ua_used`` the UA that duty needs, kW/K: below the UA given where the duty stopped at a
    table's end (say, saturated steam given down to saturated liquid only: no subcooling known)
    or at the pinch to within round-off (near the pinch the UA needed grows as the logarithm of
    1/(limit − duty), so a UA well past it cannot be resolved in double precision); ``past_peak``
    where the UA is beyond the NTU at which P of a shell with three or more tube passes peaks, so
    that the duty is not unique in UA: no number is given there (NaN); ``profile`` the zones at the duty found (on the
    basis of the stream that actually gives heat).
    """

    duty: np.ndarray
    h_hot_out: np.ndarray
    h_cold_out: np.ndarray
    t_hot_out: np.ndarray
    t_cold_out: np.ndarray
    q_hot_out: np.ndarray
    q_cold_out: np.ndarray
    approach: np.ndarray
    pinch_position: np.ndarray
    duty_limit: np.ndarray
    ua_used: np.ndarray
    reversed: np.ndarray
    past_peak: np.ndarray
    profile: ZoneProfile


def _flows_positive(m_hot, m_cold):
    return (m_hot > 0.0) & (m_cold > 0.0)


def zone_profile(hot: EnthalpyCurve, cold: EnthalpyCurve, h_hot_in, h_cold_in, m_hot, m_cold, duty,
                 arrangement="counterflow", *, tube_passes=2, shell_is_hot=True) -> ZoneProfile:
    """The zones of a counterflow-ordered exchanger at a given duty, and the UA each needs.

    Parameters
    ----------
    hot, cold : EnthalpyCurve
        The fluids on the hot and cold sides (the hot side gives heat: ``duty >= 0``).
    h_hot_in, h_cold_in : array_like
        Inlet specific enthalpies, kJ/kg.
    m_hot, m_cold : array_like
        Mass flows, kg/s (> 0).
    duty : array_like
        Heat passed from the hot to the cold stream, kW.
    arrangement : {"counterflow", "tema_e"}
        How each zone is rated (see the module notes).
    tube_passes : int
        Tube passes of a ``tema_e`` shell: 2 (the 1-2 relation is symmetric in the sides).

    Returns
    -------
    ZoneProfile

    Examples
    --------
    Saturated steam at 180 °C condensing against water heated from 20 °C (cp 4.2 kJ/kg·K):

    >>> steam = EnthalpyCurve([180.0, 180.0], [763.0, 2778.0], [0.0, 1.0])
    >>> water = EnthalpyCurve([0.0, 200.0], [0.0, 840.0])
    >>> zones = zone_profile(steam, water, 2778.0, 84.0, 1.0, 10.0, 2015.0)
    >>> round(float(zones.ua_needed[0]), 6), round(float(zones.approach[0]), 6)
    (14.97142, 112.02381)
    """
    if arrangement not in ZONE_ARRANGEMENTS:
        raise ValueError(f"zone rating covers {', '.join(ZONE_ARRANGEMENTS)}; got {arrangement!r}")
    if arrangement == "tema_e" and tube_passes < 2:
        raise ValueError(f"zone rating of tema_e covers two tube passes or more; got {tube_passes}")
    h_hot_in, h_cold_in, m_hot, m_cold, duty = (np.atleast_1d(a) for a in
                                               as_arrays(h_hot_in, h_cold_in, m_hot, m_cold, duty))
    flowing = _flows_positive(m_hot, m_cold)
    safe_m_hot, safe_m_cold = np.where(flowing, m_hot, 1.0), np.where(flowing, m_cold, 1.0)
    h_hot_out = h_hot_in - duty / safe_m_hot
    # every point of either curve where it lies inside the exchanger, as a duty from the cold end
    positions = np.concatenate([np.zeros_like(duty)[:, None], duty[:, None],
                                safe_m_hot[:, None] * (hot.h_points[None, :] - h_hot_out[:, None]),
                                safe_m_cold[:, None] * (cold.h_points[None, :] - h_cold_in[:, None])], axis=1)
    positions = np.sort(np.clip(positions, 0.0, np.maximum(duty, 0.0)[:, None]), axis=1)
    h_hot = h_hot_out[:, None] + positions / safe_m_hot[:, None]
    h_cold = h_cold_in[:, None] + positions / safe_m_cold[:, None]
    t_hot, t_cold = hot.temperature(h_hot), cold.temperature(h_cold)

    width = np.diff(positions, axis=1)
    middle = 0.5 * (positions[:, 1:] + positions[:, :-1])
    c_hot = safe_m_hot[:, None] * hot.cp_at_enthalpy(h_hot_out[:, None] + middle / safe_m_hot[:, None])
    c_cold = safe_m_cold[:, None] * cold.cp_at_enthalpy(h_cold_in[:, None] + middle / safe_m_cold[:, None])
    # the hot stream enters a zone at its upper boundary, the cold stream at its lower one
    inlet_difference = t_hot[:, 1:] - t_cold[:, :-1]
    ua = _zone_ua(width, inlet_difference, c_hot, c_cold)
    if arrangement == "tema_e":  # the counterflow zones' UA over the shell's F (module notes)
        f = shell_f(t_hot[:, -1], t_hot[:, 0], t_cold[:, 0], t_cold[:, -1], tube_passes, shell_is_hot)[:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            ua = np.where(ua > 0.0, ua / f, ua)
    ua = np.where(flowing[:, None], ua, 0.0)
    return ZoneProfile(positions, t_hot, t_cold, c_hot, c_cold, ua)


def shell_f(t_hot_in, t_hot_out, t_cold_in, t_cold_out, tube_passes=2, shell_is_hot=True):
    """F of a TEMA E shell with ``tube_passes`` passes (shell fluid mixed; ``shell_is_hot``: the
    hot stream in the shell, which matters from three passes on) at its terminal temperatures
    (°C): NTU of counterflow over NTU of the shell at the same P and R, on the basis of the
    stream whose temperature changes more (R <= 1; R = 0 where the other is isothermal, F = 1).
    With four or more passes P passes through a maximum in NTU: the NTU is the lower branch's
    (the least UA that reaches P). 0 where P is at or past the largest the shell reaches (no UA
    reaches it); 1 with no temperature change; NaN where a temperature is unknown.

    >>> round(float(shell_f(150.0, 100.0, 40.0, 80.0)), 6)   # P = 50/110, R = 0.8
    0.914916
    """
    t_hot_in, t_hot_out, t_cold_in, t_cold_out = as_arrays(t_hot_in, t_hot_out, t_cold_in, t_cold_out)
    change_hot, change_cold = t_hot_in - t_hot_out, t_cold_out - t_cold_in
    larger, smaller = np.maximum(change_hot, change_cold), np.minimum(change_hot, change_cold)
    moves = (larger > 0.0) & (t_hot_in > t_cold_in)
    with np.errstate(divide="ignore", invalid="ignore"):
        p = np.where(moves, larger / (t_hot_in - t_cold_in), 0.0)
        r = np.where(moves, np.maximum(smaller, 0.0) / larger, 0.0)
        basis_is_shell = (change_hot >= change_cold) == shell_is_hot
        f = ntu_from_p(p, r, "counterflow") / ntu_from_p(p, r, "tema_e", basis_is_shell=basis_is_shell,
                                                         tube_passes=tube_passes, branch="lower")
    f = np.where(np.isnan(f), 0.0, f)  # past the supremum: no NTU reaches that P
    known = ~np.isnan(t_hot_in + t_hot_out + t_cold_in + t_cold_out)
    return np.where(known, np.where(moves, f, 1.0), np.nan)


def _zone_ua(width, inlet_difference, c_hot, c_cold):
    """UA share of each zone in counterflow from its duty, inlet temperature difference and rates
    by the inverse P–NTU relation on the basis of the smaller rate (R = 0 where the other side is isothermal);
    both sides isothermal: duty over the (constant) difference. Inf where the zone's duty cannot
    be reached (P at or past its supremum, or no positive difference)."""
    c_min, c_max = np.minimum(c_hot, c_cold), np.maximum(c_hot, c_cold)
    finite = np.isfinite(c_min)
    safe_min = np.where(finite, c_min, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        p = width / (safe_min * inlet_difference)
        r = np.where(np.isfinite(c_max), c_min / c_max, 0.0)
        ntu = ntu_from_p(p, r, "counterflow")
        ua = np.where(finite, ntu * safe_min, width / inlet_difference)
    reachable = (inlet_difference > 0.0) & np.isfinite(ua) & (ua >= 0.0)
    return np.where(width > 0.0, np.where(reachable, ua, np.inf), 0.0)


def duty_limit(hot: EnthalpyCurve, cold: EnthalpyCurve, h_hot_in, h_cold_in, m_hot, m_cold):
    """Largest duty (kW) from the hot to the cold stream with no negative temperature difference
    anywhere in counterflow: the least of the end limits (hot outlet down to the cold inlet
    temperature, cold outlet up to the hot inlet temperature) and of the limit each curve point
    between the inlet temperatures sets (zero difference there). Beyond a curve's table its end
    interval is extended; beyond an end that is a plateau the table's end bounds the stream, and
    an inlet there has no temperature: NaN.

    >>> steam = EnthalpyCurve([180.0, 180.0], [763.0, 2778.0], [0.0, 1.0])
    >>> water = EnthalpyCurve([0.0, 200.0], [0.0, 840.0])
    >>> float(duty_limit(steam, water, 2778.0, 84.0, 1.0, 10.0)[0])   # steam condensed whole
    2015.0
    """
    h_hot_in, h_cold_in, m_hot, m_cold = (np.atleast_1d(a) for a in as_arrays(h_hot_in, h_cold_in, m_hot, m_cold))
    t_hot_in, t_cold_in = hot.temperature(h_hot_in), cold.temperature(h_cold_in)

    def hot_down_to(t):  # lowest hot enthalpy at t, the hot table's start where t is beyond a plateau end
        low = hot.enthalpy_bounds(t)[0]
        return np.where(np.isfinite(low), low, hot.h_points[0])

    def cold_up_to(t):
        high = cold.enthalpy_bounds(t)[1]
        return np.where(np.isfinite(high), high, cold.h_points[-1])

    limits = [m_hot * (h_hot_in - hot_down_to(t_cold_in)), m_cold * (cold_up_to(t_hot_in) - h_cold_in)]
    # a cold curve point inside: the hot stream there may not fall below its temperature
    t_c, h_c = cold.t_points[None, :], cold.h_points[None, :]
    inside = (h_c > h_cold_in[:, None]) & (t_c <= t_hot_in[:, None])
    by_cold = m_hot[:, None] * (h_hot_in[:, None] - hot_down_to(t_c)) + m_cold[:, None] * (h_c - h_cold_in[:, None])
    limits.append(np.min(np.where(inside, by_cold, np.inf), axis=1))
    t_h, h_h = hot.t_points[None, :], hot.h_points[None, :]
    inside = (h_h < h_hot_in[:, None]) & (t_h >= t_cold_in[:, None])
    by_hot = m_hot[:, None] * (h_hot_in[:, None] - h_h) + m_cold[:, None] * (cold_up_to(t_h) - h_cold_in[:, None])
    limits.append(np.min(np.where(inside, by_hot, np.inf), axis=1))
    limit = np.where(_flows_positive(m_hot, m_cold), np.maximum(np.minimum.reduce(limits), 0.0), 0.0)
    # an inlet its curve cannot place (past an end that is a plateau) has no limit to give
    return np.where(np.isnan(t_hot_in) | np.isnan(t_cold_in), np.nan, limit)


def solve_duty(needed, ua, upper):
    """Root of needed(Q) = UA on [0, upper] per scenario, ``needed`` rising (inf past reach).

    Illinois regula falsi [4]_ on s(Q) = UA_needed/(UA + UA_needed) − 1/2, in [−1/2, 1/2), and
    1/2 past reach, which is linear in Q for a single counterflow zone at R = 1 and keeps the
    secant steps finite; bisection where a step falls outside the bracket or the bracket has
    not halved in eight steps. From the third trial on, a trial is the secant through the last two
    trials' own values wherever that lies inside the bracket (a secant method kept in the
    bracket): where one end stays and the other creeps up on the root, as near a pinch where the
    UA needed rises without bound, Illinois' halving of the kept end's value only halves the
    distance a step; an inner solve of two shells in series had taken 31 steps, now 7 (the
    shells-in-series trial case: 5.6 times faster in all, the same duties to 1e-13 K). Stops at
    :data:`UA_TOLERANCE` or :data:`DUTY_TOLERANCE`."""
    low, high = np.zeros_like(upper), upper.copy()
    s_low, s_high = np.full_like(upper, -0.5), np.full_like(upper, 0.5)
    kept_low_before = np.zeros(upper.shape, bool)
    kept_high_before = np.zeros(upper.shape, bool)
    q = np.full_like(upper, np.nan)  # no step yet: the first is never "too small"
    s_q = q_before = s_before = np.full_like(upper, np.nan)  # the last trial's value, the trial before it
    active = (ua > 0.0) & (upper > 0.0)
    checked_width = high - low
    for step in range(MAX_STEPS):
        if not active.any():
            break
        with np.errstate(invalid="ignore", divide="ignore"):
            secant = low - s_low * (high - low) / (s_high - s_low)
            latest = q - s_q * (q - q_before) / (s_q - s_before)  # NaN until two trials
        secant = np.where((latest > low) & (latest < high), latest, secant)
        stalled = (step % 8 == 7) & (high - low > 0.5 * checked_width)
        if step % 8 == 7:
            checked_width = high - low
        trial = np.where(~np.isfinite(secant) | (secant <= low) | (secant >= high) | stalled, 0.5 * (low + high),
                         secant)
        with np.errstate(invalid="ignore"):
            moved = np.abs(trial - q)
        q_before, s_before = np.where(active, q, q_before), np.where(active, s_q, s_before)
        q = np.where(active, trial, q)
        needed_q = needed(q)
        with np.errstate(invalid="ignore"):
            s = np.where(np.isfinite(needed_q), needed_q / (ua + needed_q), 1.0) - 0.5
        s_q = np.where(active, s, s_q)
        above = active & (s > 0.0)
        below = active & ~(s > 0.0)
        # Illinois: where the same end is kept twice running, halve its value
        s_low = np.where(above & kept_low_before, 0.5 * s_low, np.where(below, s, s_low))
        s_high = np.where(below & kept_high_before, 0.5 * s_high, np.where(above, s, s_high))
        kept_low_before, kept_high_before = above, below
        high, low = np.where(above, q, high), np.where(below, q, low)
        met = np.abs(needed_q - ua) <= UA_TOLERANCE * ua
        small = (high - low <= DUTY_TOLERANCE * upper) | (moved <= DUTY_TOLERANCE * upper)  # NaN: False
        active &= ~(met | small)
    # an inlet beyond what its curve knows (past an end that is a plateau) has no limit: NaN
    return np.where(np.isnan(upper) | np.isnan(ua), np.nan, np.where((ua > 0.0) & (upper > 0.0), q, 0.0))


def rate_by_zones(hot: EnthalpyCurve, cold: EnthalpyCurve, h_hot_in, h_cold_in, m_hot, m_cold, ua,
                  arrangement="counterflow", *, tube_passes=2, shells=1, shell_is_hot=True) -> ZoneRating:
    """Rate an exchanger zone by zone from its inlet enthalpies, mass flows and UA.

    Parameters
    ----------
    hot, cold : EnthalpyCurve
        Fluids on the ``hot`` and ``cold`` sides. Heat flows by temperature: where the hot-side
        stream enters colder, the sides swap roles and the duty comes out negative.
    h_hot_in, h_cold_in : array_like
        Inlet specific enthalpies, kJ/kg (each in its own curve's reference).
    m_hot, m_cold : array_like
        Mass flows, kg/s (>= 0; no flow on a side gives no duty).
    ua : array_like
        Overall conductance, kW/K (>= 0), shared out over the zones.
    arrangement, tube_passes, shell_is_hot
        As for :func:`zone_profile` (``shell_is_hot`` for the case's sides).
    shells : int
        Identical ``tema_e`` shells in series in overall counterflow, each with UA/shells
        (:mod:`.zone_shells`); counterflow is one counterflow whatever its shells.

    Returns
    -------
    ZoneRating

    Examples
    --------
    >>> steam = EnthalpyCurve([180.0, 180.0], [763.0, 2778.0], [0.0, 1.0])
    >>> water = EnthalpyCurve([0.0, 200.0], [0.0, 840.0])
    >>> rating = rate_by_zones(steam, water, 2778.0, 84.0, 1.0, 10.0, 10.0)   # NTU = 10/42
    >>> round(float(rating.duty[0]), 6), round(float(rating.q_hot_out[0]), 6)
    (1423.782342, 0.293408)
    >>> bool(abs(rating.duty[0] / (42.0 * 160.0) - (1 - np.exp(-10 / 42))) < 1e-14)
    True
    """
    h_hot_in, h_cold_in, m_hot, m_cold, ua = (np.atleast_1d(a).astype(float) for a in
                                             as_arrays(h_hot_in, h_cold_in, m_hot, m_cold, ua))
    forward = ~(hot.temperature(h_hot_in) < cold.temperature(h_cold_in))
    if arrangement == "tema_e" and tube_passes > 2 and shells > 1:
        raise ValueError(f"zone rating of tema_e with {tube_passes} tube passes covers one shell (a shell of a series "
                         "past its peak has no unique duty for the chain to find)")
    options = dict(arrangement=arrangement, tube_passes=tube_passes,
                   shells=shells if arrangement == "tema_e" else 1, shell_is_hot=shell_is_hot)
    if forward.all():
        return _rate_forward(hot, cold, h_hot_in, h_cold_in, m_hot, m_cold, ua, **options)
    # where the hot-side stream enters colder, it is the one that takes heat: rate those swapped
    parts = {}
    for flag, swapped in ((True, False), (False, True)):
        index = np.flatnonzero(forward == flag)
        if index.size == 0:
            continue
        args = (h_hot_in[index], h_cold_in[index], m_hot[index], m_cold[index])
        if swapped:
            part = _swapped(_rate_forward(cold, hot, args[1], args[0], args[3], args[2], ua[index],
                                          **{**options, "shell_is_hot": not shell_is_hot}))
        else:
            part = _rate_forward(hot, cold, *args, ua[index], **options)
        parts[flag] = (index, part)
    return _joined(parts, len(ua))


def _rate_forward(hot, cold, h_hot_in, h_cold_in, m_hot, m_cold, ua, *, shells, **options):
    upper = duty_limit(hot, cold, h_hot_in, h_cold_in, m_hot, m_cold)

    def profile_at(q):
        if shells == 1:
            return zone_profile(hot, cold, h_hot_in, h_cold_in, m_hot, m_cold, q, **options)
        from .zone_shells import series_profile  # here: zone_shells builds on this module

        return series_profile(hot, cold, h_hot_in, h_cold_in, m_hot, m_cold, q, ua, shells, **options)

    duty = solve_duty(lambda q: profile_at(q).ua_needed, ua, upper)
    profile = profile_at(duty)
    # with three or more tube passes the UA a duty needs jumps to inf where P peaks: a UA beyond
    # that stops the solve at the jump, the UA not met (short of it or inf on the far side) and
    # the duty short of its limit (module notes)
    past_peak = np.zeros(duty.shape, bool)
    if options["arrangement"] == "tema_e" and options["tube_passes"] > 2:
        with np.errstate(invalid="ignore"):
            missed = ~(np.abs(profile.ua_needed - ua) <= PEAK_MARGIN * ua)  # short of it, or inf
        past_peak = missed & (duty < upper * (1.0 - PEAK_MARGIN))
        duty = np.where(past_peak, np.nan, duty)
    flowing = _flows_positive(m_hot, m_cold)
    h_hot_out = h_hot_in - duty / np.where(flowing, m_hot, 1.0)
    h_cold_out = h_cold_in + duty / np.where(flowing, m_cold, 1.0)
    return ZoneRating(duty, h_hot_out, h_cold_out, hot.temperature(h_hot_out), cold.temperature(h_cold_out),
                      hot.vapour_fraction(h_hot_out), cold.vapour_fraction(h_cold_out), profile.approach,
                      profile.pinch_position, upper, profile.ua_needed, np.zeros(duty.shape, bool), past_peak, profile)


def _swapped(part: ZoneRating) -> ZoneRating:
    """A rating made with the sides swapped, expressed on the case's sides (duty negative)."""
    return ZoneRating(-part.duty, part.h_cold_out, part.h_hot_out, part.t_cold_out, part.t_hot_out,
                      part.q_cold_out, part.q_hot_out, part.approach, part.pinch_position, -part.duty_limit,
                      part.ua_used, part.duty != 0.0, part.past_peak, part.profile)


def _joined(parts, size):
    """One rating of the whole batch from the ratings of its forward and swapped scenarios."""
    fields = [f for f in ZoneRating.__dataclass_fields__ if f != "profile"]
    joined = {}
    for name in fields:
        sample = getattr(next(iter(parts.values()))[1], name)
        out = np.empty((size,), dtype=sample.dtype)
        for index, part in parts.values():
            out[index] = getattr(part, name)
        joined[name] = out
    # profiles of different widths: points repeat the last one, extra zones carry no UA
    width = max(part.profile.position.shape[1] for _, part in parts.values())
    profile = {}
    for name in ZoneProfile.__dataclass_fields__:
        at_points = name in ("position", "t_hot", "t_cold")
        out = np.zeros((size, width if at_points else width - 1))
        for index, part in parts.values():
            values = getattr(part.profile, name)
            missing = out.shape[1] - values.shape[1]
            out[index] = np.pad(values, ((0, 0), (0, missing)), mode="edge" if at_points else "constant",
                                constant_values=0.0) if missing else values
        profile[name] = out
    return ZoneRating(**joined, profile=ZoneProfile(**profile))
