"""An exchanger with a fluid on an enthalpy curve, rated zone by zone (:mod:`.zone_rating`).

:class:`.exchanger_model.Exchanger` hands an exchanger here whenever either inlet's fluid is an
:class:`.enthalpy_curves.EnthalpyCurve` that holds vapour anywhere in its table (a vaporising
crude, a condensing overhead, water and steam): :func:`rated_by_zones`. Both sides are then rated on their enthalpy curves: the other side's fluid, if it is a
cp model, is sampled as a curve (exact for a constant cp; linear between points
:data:`SAMPLE_STEP` apart otherwise, see :mod:`.enthalpy_curves` for the error that leaves).

What is covered, and why the rest is refused (:func:`zone_problem`, which the network asks through
``Exchanger.fluid_problem`` before solving: exit 2 naming the key):

* arrangements ``counterflow`` and ``double_pipe`` (any number of shells in series: still
  counterflow), and ``tema_e`` with two tube passes or more, one shell or several in series
  (each shell rated by zones with its share of UA through F of its terminal temperatures, the
  shells chained in overall counterflow: :mod:`.zone_shells`; with three or more passes one
  shell only): those :func:`.zone_rating.rate_by_zones` rates. With three or more passes a UA
  beyond the NTU at which P peaks gives no number in that scenario (an input finding: the duty
  is not unique);
* U fixed (``ua``, or ``u`` with ``area_per_shell``), or films scaled from a reference
  (:class:`.u_models.ScaledFilms`) evaluated at the exchanger's flows and each side's mean
  temperature over the exchanger, iterated with the rating to its fixed point as in
  :mod:`.service_rating`: one U for all zones. An approximation, said in the report's label:
  the single-phase film correlations describe no boiling or condensing zone, and a side that
  holds vapour enters the property correction with its viscosity and conductivity only (the
  apparent cp of a two-phase range, latent heat included, is no film property). U from
  geometry is refused (it would need each phase's films in each zone);
* a bypass on either side: the exchanger proper takes (1 - bypass) of the flow and the bypassed
  part rejoins it by enthalpy, which is exact on a curve;
* the fluid on the other side a plain cp model (not a blend of several fluids).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .enthalpy_curves import EnthalpyCurve, curve_from_model
from .properties import Blend, ConstantCp
from .service_rating import MAX_PASSES, coefficient_quantities, coefficients_at, outlets_settled
from .u_models import FixedCoefficient, ScaledFilms
from .zone_rating import ZoneRating, rate_by_zones, shell_f
from .zone_shells import shell_terminals

__all__ = ["rated_by_zones", "zone_problem", "ZoneService", "rate_zoned", "zone_report", "SAMPLE_STEP"]

SAMPLE_STEP = 5.0
"""K between the points at which a cp model on the other side is sampled as a curve: for a crude
(dcp/dT about 0.004 kJ/kg·K²) the enthalpy is then within 0.013 kJ/kg of the model's."""
SAMPLE_SPAN = (-50.0, 600.0)
"""°C sampled for a cp model without a valid range (beyond it the end intervals extend)."""


def rated_by_zones(fluids) -> bool:
    """Whether an exchanger with these inlet fluids (hot, cold) is rated zone by zone: where a
    side's fluid is an enthalpy curve that holds vapour (it may boil or condense) or a plateau.
    A single-phase liquid curve is a smooth h(T) like any cp model, and keeps the in-service
    rating of every arrangement (mean cp over each side's range, U from films if given)."""
    return any(isinstance(f, EnthalpyCurve) and (f.holds_vapour or f.state_by_enthalpy) for f in fluids)


def zone_problem(spec, fluids):
    """(key, message) where zone rating cannot rate this exchanger, else None."""
    name = spec.arrangement.name
    if name == "tema_e" and spec.tube_passes < 2:
        return ("tube_passes", "an exchanger with a fluid on an enthalpy curve is rated by zones as TEMA E shells with "
                               f"two tube passes or more only (here {spec.tube_passes})")
    if name == "tema_e" and spec.tube_passes > 2 and spec.shells > 1:
        return ("shells", "an exchanger with a fluid on an enthalpy curve is rated by zones in TEMA E shells with "
                          f"{spec.tube_passes} tube passes one shell at a time only (here {spec.shells} in series): past "
                          "the peak of its P a shell of the series has no unique duty")
    if spec.shells > 1 and spec.arrangement.shells_flow != "counterflow":
        return ("shells_flow", "an exchanger with a fluid on an enthalpy curve is rated by zones with its shells in "
                               "series in overall counterflow only (here shells_flow: "
                               f"{spec.arrangement.shells_flow})")
    if name not in ("counterflow", "double_pipe", "tema_e"):
        return ("arrangement", f"an exchanger with a fluid on an enthalpy curve is rated by zones; arrangement {name} "
                               "is not covered (use counterflow, double_pipe or tema_e with two tube passes)")
    if spec.ua is None and not isinstance(spec.thermal, (FixedCoefficient, ScaledFilms)):
        return ("geometry", "an exchanger with a fluid on an enthalpy curve takes a fixed U or films scaled from a "
                            "reference in this version: U from geometry is not modelled for two-phase zones")
    if spec.pressure_drop:
        side = sorted(spec.pressure_drop)[0]
        return ("pressure_drop", "an exchanger with a fluid on an enthalpy curve is rated by zones, and its pressure "
                                 f"drop ({side} side) is not modelled for two-phase zones in this version: leave out "
                                 "'pressure_drop' rather than have it ignored")
    for fluid in fluids:
        if isinstance(fluid, Blend):
            return ("arrangement", "a blend of several fluids against a fluid on an enthalpy curve is not rated in "
                                   "this version")
    return None


def as_curve(fluid, cache: dict) -> EnthalpyCurve:
    """The fluid as an enthalpy curve: itself, or a cp model sampled (kept in ``cache``)."""
    if isinstance(fluid, EnthalpyCurve):
        return fluid
    known = cache.get(id(fluid))
    if known is None or known[0] is not fluid:
        low, high = fluid.valid_range or SAMPLE_SPAN
        points = [low, high] if isinstance(fluid, ConstantCp) else \
            np.linspace(low, high, max(2, int(np.ceil((high - low) / SAMPLE_STEP)) + 1))
        known = cache[id(fluid)] = (fluid, curve_from_model(fluid, points, valid_range=fluid.valid_range))
    return known[1]


@dataclass
class ZoneService:
    """An exchanger rated by zones, at its outlets (after any bypass has rejoined)."""

    rating: ZoneRating
    """The exchanger proper."""
    ua: np.ndarray
    h_hot_out: np.ndarray
    h_cold_out: np.ndarray
    t_hot_out: np.ndarray
    t_cold_out: np.ndarray
    q_hot_out: np.ndarray
    q_cold_out: np.ndarray
    end_approach: np.ndarray
    """The smaller temperature difference at the exchanger's two ends (counterflow ends)."""
    coefficients: object = None
    """U and its films where U follows the operating point (:class:`.u_models.Coefficients`)."""
    pressure_drop: dict = field(default_factory=dict)
    """None modelled (U is fixed): kept for the limit checks shared with the exchanger."""


def rate_zoned(spec, inlets, cache: dict) -> ZoneService:
    """Rate an exchanger by zones from its inlets (:class:`.protocol.Inlets`, hot then cold)."""
    hot, cold = (as_curve(f, cache) for f in inlets.fluids)
    h_hot, h_cold = inlets.enthalpy(0), inlets.enthalpy(1)
    m_hot, m_cold = inlets.m[:, 0], inlets.m[:, 1]
    bypass_hot, bypass_cold = (np.asarray(b, dtype=float) for b in (spec.bypass_hot, spec.bypass_cold))
    m_hot_x, m_cold_x = m_hot * (1.0 - bypass_hot), m_cold * (1.0 - bypass_cold)
    arrangement = "tema_e" if spec.arrangement.name == "tema_e" else "counterflow"

    def rated(ua):
        return rate_by_zones(hot, cold, h_hot, h_cold, m_hot_x, m_cold_x, ua, arrangement, shells=spec.shells,
                             tube_passes=spec.tube_passes, shell_is_hot=spec.shell_side == "hot")

    coefficients = None
    if spec.ua is not None:
        ua = np.broadcast_to(np.asarray(spec.ua, dtype=float), h_hot.shape)
        x = rated(ua)
    elif isinstance(spec.thermal, FixedCoefficient):
        ua = np.broadcast_to(spec.thermal.u * spec.total_area / 1000.0, h_hot.shape)
        x = rated(ua)
    else:
        x, ua, coefficients = _rated_with_films(spec, inlets, m_hot_x, m_cold_x, rated, cache)
    # the outlets from each side's own fluid and the whole duty (the bypassed part rejoined by
    # enthalpy), so that every exchanger closes its balance in its fluids' enthalpy to round-off
    # (a sampled side's curve is used for the rating only)
    h_hot_out = h_hot - x.duty / np.where(m_hot > 0.0, m_hot, 1.0)
    h_cold_out = h_cold + x.duty / np.where(m_cold > 0.0, m_cold, 1.0)
    (fluid_hot, fluid_cold), (t_hot, t_cold) = inlets.fluids, (inlets.t[:, 0], inlets.t[:, 1])
    t_hot_out = fluid_hot.temperature(h_hot_out) if fluid_hot is hot else fluid_hot.temperature(h_hot_out, guess=x.t_hot_out)
    t_cold_out = (fluid_cold.temperature(h_cold_out) if fluid_cold is cold
                  else fluid_cold.temperature(h_cold_out, guess=x.t_cold_out))
    ends = np.minimum(np.abs(t_hot - x.t_cold_out), np.abs(x.t_hot_out - t_cold))
    return ZoneService(x, np.array(ua), h_hot_out, h_cold_out, t_hot_out, t_cold_out,
                       hot.vapour_fraction(h_hot_out), cold.vapour_fraction(h_cold_out), ends,
                       coefficients=coefficients)


def _rated_with_films(spec, inlets, m_hot_x, m_cold_x, rated, cache):
    """(rating, UA, coefficients) with U from scaled films at the flows through the exchanger and
    each side's mean temperature, (inlet + outlet)/2 of the exchanger proper, substituted until
    both outlets settle (:func:`.service_rating.outlets_settled`), as the in-service rating does
    (so a side without vapour gets its numbers); stops at once where U did not change. Starts
    from the outlets of the last call of the same batch (kept in ``cache``; speed only)."""
    t_hot, t_cold = inlets.t[:, 0], inlets.t[:, 1]
    fluids = tuple(_FilmView(f) if isinstance(f, EnthalpyCurve) and f.holds_vapour else f for f in inlets.fluids)
    last = cache.get("outlets")
    t_hot_x, t_cold_x = last if last is not None and last[0].shape == t_hot.shape else (t_hot, t_cold)
    u_before = moved_before = None
    u_at = coefficients_at(spec, m_hot_x, m_cold_x, *fluids)
    for _ in range(MAX_PASSES):
        coefficients = u_at(0.5 * (t_hot + t_hot_x), 0.5 * (t_cold + t_cold_x))
        if u_before is not None and np.array_equal(coefficients.u_service, u_before):
            break
        ua = coefficients.u_service * spec.total_area / 1000.0
        x = rated(ua)
        moved = np.maximum(np.abs(x.t_hot_out - t_hot_x), np.abs(x.t_cold_out - t_cold_x))
        t_hot_x, t_cold_x, u_before = x.t_hot_out, x.t_cold_out, coefficients.u_service
        if np.all(outlets_settled(moved, t_hot, moved_before)):
            break
        moved_before = moved
    cache["outlets"] = (t_hot_x, t_cold_x)
    return x, ua, coefficients


class _FilmView:
    """A fluid that holds vapour as the scaled films see it: its viscosity and conductivity, and
    one cp at every temperature (the cp ratio of the property correction is 1), since the
    apparent cp of a two-phase range, latent heat included, is no film property."""

    def __init__(self, fluid):
        self.fluid = fluid

    def viscosity(self, t):
        return self.fluid.viscosity(t)

    def log_viscosity(self, t):
        return self.fluid.log_viscosity(t)

    def conductivity(self, t):
        return self.fluid.conductivity(t)

    @property
    def conductivity_follows_temperature(self):
        return self.fluid.conductivity_follows_temperature

    def cp(self, t):
        return np.ones(np.shape(t))


def _pinch_words(rating, end_approach, active):
    """Where the smallest approach lies, in words, for the ``active`` scenarios: at the cold or
    hot end, or inside the exchanger at a share of the duty from the cold end."""
    words = np.full(rating.duty.shape, "", dtype=object)
    for k in np.flatnonzero(active):
        share = rating.pinch_position[k] / rating.duty[k]
        if abs(rating.approach[k] - end_approach[k]) <= 1e-9 * (1.0 + abs(end_approach[k])):
            words[k] = "at the cold end" if share < 0.5 else "at the hot end"
        else:
            words[k] = f"inside the exchanger at {share:.0%} of the duty from the cold end"
    return words


def zone_report(unit, inlets, service: ZoneService | None, problem):
    """The report of exchanger ``unit`` rated by zones (``problem``: why it cannot be)."""
    from .protocol import UnitReport, check, exchanger_totals

    key, batch = unit.key, inlets.batch
    if problem is not None:
        nothing = np.full(batch, np.nan)
        finding = check("zone_rating", "input", np.ones(batch, bool), f"{key}.{problem[0]}", problem[1])
        return UnitReport({"duty": nothing}, [finding])
    x, t_hot, t_cold = service.rating, inlets.t[:, 0], inlets.t[:, 1]
    works = x.duty != 0.0
    multipass = unit.spec.arrangement.name == "tema_e"
    terminals = shell_terminals(x.profile, unit.spec.shells if multipass else 1)
    _, giver_outs, _, taker_outs = terminals
    worst = np.argmax(taker_outs - giver_outs, axis=1)[:, None]  # the shell whose outlets come closest
    giver_out, taker_out = (np.take_along_axis(ends, worst, axis=1)[:, 0] for ends in (giver_outs, taker_outs))
    crossed = taker_out > giver_out
    # a multipass shell's outlets meet inside it (the approach of a 1-2 shell, as for the P-NTU
    # rating); its F at its terminal temperatures is the one that corrects its zones
    meeting = np.where(works, giver_out - taker_out, np.inf) if multipass else np.full(x.duty.shape, np.inf)
    f = _smallest_shell_f(unit.spec, terminals, x.reversed) if multipass else np.ones(x.duty.shape)
    quantities = {"duty": x.duty, "t_hot_in": t_hot, "t_hot_out": service.t_hot_out, "t_cold_in": t_cold,
                  "t_cold_out": service.t_cold_out, "q_hot_out": service.q_hot_out, "q_cold_out": service.q_cold_out,
                  "ua": service.ua, "f": f, "approach": np.minimum(service.end_approach, meeting),
                  "approach_internal": np.minimum(x.approach, meeting),
                  **coefficient_quantities(unit.spec, service.coefficients, x.duty.shape)}
    findings = unit._limit_findings(inlets, service) + unit._film_findings(service.coefficients)
    for j, side in enumerate(("hot", "cold")):
        limit = unit.limits.get("maximum_vapour_fraction", {}).get(side)
        if limit is not None:
            q_out = (service.q_hot_out, service.q_cold_out)[j]
            findings.append(check("vapour_fraction", "limit", q_out > limit + 1e-12, f"{key}.maximum_vapour_fraction.{side}",
                                  f"the {side} side leaves {{q:.3f}} vapour (mass fraction), above its maximum of "
                                  "{lim:.3f}", excess=q_out - limit, q=q_out, lim=limit))
    # a cross in a multipass shell is its own limit below: the zones' approach is not the point there
    close = works & ~(multipass & crossed) & (x.approach < unit.minimum_approach)
    findings += [
        check("approach", "warning", close, key,
              "smallest approach {a:.1f} K, {where} (ends {e:.1f} K), is below the case's {lim:.1f} K", a=x.approach,
              where=_pinch_words(x, service.end_approach, close), e=service.end_approach, lim=unit.minimum_approach),
        check("outlet_approach", "warning", works & ~crossed & (meeting < unit.minimum_approach), key,
              "the outlets of a multipass shell meet {m:.1f} K apart inside it (the stream giving heat leaves at "
              "{th:.1f} °C, the one taking it at {tc:.1f} °C), below the case's {lim:.1f} K",
              m=meeting, th=giver_out, tc=taker_out, lim=unit.minimum_approach),
        check("low_f", "warning", works & multipass & (f < unit.minimum_f), key,
              "F = {f:.3f} at the shell's terminal temperatures is below {lim:.2f}: steep, unreliable part of the F "
              "curve (the zones are corrected by it)", f=f, lim=unit.minimum_f),
        # in a multipass shell the stream taking heat leaving above the giver's outlet is a
        # temperature cross (P_hot + P_cold > 1), whatever the zones: the P–NTU rating's limit
        check("temperature_cross", "limit", works & (unit.spec.arrangement.name == "tema_e") & crossed, key,
              "temperature cross inside a multipass shell: the stream taking heat leaves it at {tc:.1f} °C, above the "
              "outlet of the stream giving heat at {th:.1f} °C", excess=taker_out - giver_out, tc=taker_out,
              th=giver_out),
        check("past_peak", "input", x.past_peak, key,
              f"the UA ({{ua:.1f}} kW/K) is beyond the NTU at which P of a shell with {unit.spec.tube_passes} tube "
              "passes peaks at these flows: the duty is not unique in UA and no number is given (two tube passes, "
              "or less area, make it unique)", ua=service.ua),
        check("reversed_heat_flow", "warning", x.reversed, key,
              "the hot-side stream enters colder ({th:.1f} °C) than the cold-side stream ({tc:.1f} °C): heat "
              "flows from the cold side to the hot side ({q:.1f} kW)", th=t_hot, tc=t_cold, q=-x.duty),
    ]
    totals = exchanger_totals(unit.total, x.duty)
    metrics = {"duty": x.duty, "hot_in": t_hot, "hot_out": service.t_hot_out, "cold_in": t_cold,
               "cold_out": service.t_cold_out, "hot_out_vapour_fraction": service.q_hot_out,
               "cold_out_vapour_fraction": service.q_cold_out}
    profile = {"duty": x.profile.position, "hot": x.profile.t_hot, "cold": x.profile.t_cold}
    return UnitReport(quantities, findings, profile=profile, labels={"u_source": u_source(unit.spec)}, totals=totals,
                      metrics=metrics)


def _smallest_shell_f(spec, terminals, reversed_flow):
    """The smallest F of the shells in series (:func:`.zone_rating.shell_f` at each shell's
    terminal temperatures from :func:`.zone_shells.shell_terminals`, on the basis of the stream
    giving heat: the shell holds it where the case's shell side is the hot one and heat flows
    from hot to cold)."""
    giver_in, giver_out, taker_in, taker_out = terminals
    giver_in_shell = np.broadcast_to(((spec.shell_side == "hot") != reversed_flow)[:, None], giver_in.shape)
    f = shell_f(giver_in.ravel(), giver_out.ravel(), taker_in.ravel(), taker_out.ravel(), spec.tube_passes,
                giver_in_shell.ravel())
    return np.min(f.reshape(giver_in.shape), axis=1)


def u_source(spec) -> str:
    """Where an exchanger rated by zones has its U from, in words for the report."""
    if spec.ua is not None:
        return "fixed UA, rated by zones"
    if isinstance(spec.thermal, FixedCoefficient):
        return f"{spec.thermal.source}, rated by zones"
    return f"{spec.thermal.source} at the mean single-phase conditions, one U for all zones, rated by zones"
