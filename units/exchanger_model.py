"""The exchanger behind the unit protocol: rated in service, reported with its limits."""

from __future__ import annotations

from dataclasses import fields, replace

import numpy as np

from .protocol import HEAT_FROM_UTILITIES, HEAT_RECOVERED, HEAT_TO_UTILITIES, Parameter, PropertyNeed, UnitReport, UnitBase, check, \
    blanked_where_idle, design_temperature_findings, exchanger_totals, stagnant_side_findings, warning_line_findings
from .arrangements import arranged, unit_halves
from .pntu_rating import ExchangerRating
from .u_models import Coefficients, FixedCoefficient, GeometryFilms
from .back_calculation import back_calculate
from .service_rating import ExchangerSpec, ServiceRating, coefficient_quantities, coefficients_at, moved_outlets, \
    pressure_drops, rate_in_service, rates_linearly, shell_flows, through_exchanger
from .properties import stacked, stacking_key
from .zone_exchanger import rate_zoned, rated_by_zones, zone_problem, zone_report


def _anywhere_nonzero(value) -> bool:
    """Whether a bypass fraction (a number, or one per scenario) is nonzero anywhere; a plain
    number is compared without a numpy call (thousands of exchangers are keyed per sweep)."""
    if isinstance(value, (float, int)):
        return bool(value != 0.0)
    return bool(np.any(np.asarray(value) != 0.0))


def _unit_after_unit(values, batch) -> np.ndarray:
    """Per-unit values (numbers, or one per scenario) laid unit after unit along the batch axis:
    one array of ``len(values) * batch``, in one numpy call where they are all numbers or all of
    one shape (a run of thousands of exchangers is stacked so on every sweep)."""
    out = np.empty((len(values), batch))
    try:
        table = np.array(values, dtype=float)
    except ValueError:  # numbers and per-scenario arrays mixed
        for k, v in enumerate(values):
            out[k] = v
    else:
        out[:] = table.reshape(len(values), -1)
    return out.reshape(-1)


__all__ = ["Exchanger"]


def _bypass(spec, side):
    """The fraction of ``side`` ("hot", "cold") that goes round the exchanger."""
    return spec.bypass_hot if side == "hot" else spec.bypass_cold


def _exposed(flows, t_in, t_inside, towards):
    """(inlet, outlet inside) a side's design temperature is checked against: its own where it
    flows, else ``towards`` (the other side's inlet while that one flows, else NaN: nothing)."""
    return np.where(flows, t_in, towards), np.where(flows, t_inside, towards)


def _inside_words(bypass) -> str:
    """Where a side's peak is read: inside the exchanger where the side has a bypass (in every
    scenario: "its"; in some: "any", as in a schedule whose cleanings bypass the exchanger)."""
    bypass = np.asarray(bypass)
    if not bypass.any():
        return ""
    return f"inside the exchanger (ahead of {'its' if bypass.all() else 'any'} bypass) "


def _outlets_inside(rating) -> dict:
    """Each side's outlet from the exchanger proper, ahead of its bypass (a zone rating is of the
    exchanger proper already: its outlets are those)."""
    return {side: getattr(rating, f"t_{side}_out_exchanger", getattr(rating, f"t_{side}_out"))
            for side in ("hot", "cold")}


class Exchanger(UnitBase):
    """A two-stream exchanger rated by P–NTU in service (:func:`rate_in_service`).

    ``limits`` may hold ``design_temperature`` {"hot"/"cold": °C}, ``maximum_flow``
    {"hot"/"cold": kg/s}, ``allowable_pressure_drop`` {"shell"/"tube": Pa} and
    ``maximum_vapour_fraction`` {"hot"/"cold": kg/kg, checked where a side is on an enthalpy
    curve}. An exchanger with a fluid on an enthalpy curve is rated by zones
    (:mod:`.zone_exchanger`).
    ``minimum_approach`` (K) and ``minimum_f`` are the warning lines.
    """

    kind = "exchanger"
    group = "exchangers"
    inlets = ("hot", "cold")
    outlets = ("hot", "cold")

    def __init__(self, name, key, spec: ExchangerSpec, *, minimum_approach, minimum_f, limits=None,
                 utility_inlets=()):
        self.name, self.key, self.spec = name, key, spec
        self.minimum_approach, self.minimum_f = minimum_approach, minimum_f
        self.limits = limits or {}
        self.utility_inlets = frozenset(utility_inlets)
        """Sides ("hot"/"cold") carrying a utility stream: the duty then counts as heat to (or
        from) utilities rather than heat recovered between process streams."""
        self._last_outlets = self._last_inlets = None  # warm start of the in-service iteration (speed only)
        self._affine = None  # the outlets' fixed fractions of the inlet difference, and what they hold for
        self._flow_part = None  # U's part fixed by the flows (coefficients_at), and what it holds for
        self._curves = {}  # cp models sampled as enthalpy curves for zone rating (speed only)

    @property
    def total(self):
        """Which run total the duty counts in (None: utility on both sides, in no total)."""
        hot, cold = "hot" in self.utility_inlets, "cold" in self.utility_inlets
        return {(False, False): HEAT_RECOVERED, (False, True): HEAT_TO_UTILITIES,
                (True, False): HEAT_FROM_UTILITIES}.get((hot, cold))

    def required_properties(self):
        """Rated from geometry, the films need viscosity and conductivity, and a pressure drop
        from geometry needs density."""
        if not isinstance(self.spec.thermal, GeometryFilms):
            return None
        needed = ("viscosity", "conductivity") + (("density",) if self.spec.pressure_drop else ())
        return PropertyNeed(needed, "geometry", "rating from geometry")

    def fluid_problem(self, fluids):
        """Why this exchanger cannot be rated by zones where a side's fluid asks for it (None if it can)."""
        return zone_problem(self.spec, fluids) if rated_by_zones(fluids) else None

    def parameters(self):
        spec = self.spec
        found = [Parameter(f"bypass.{side}", "fraction", 0.0, 1.0) for side in ("hot", "cold")]
        if spec.ua is not None:
            found.append(Parameter("ua", "conductance", 0.0))
        elif isinstance(spec.thermal, FixedCoefficient):
            found.append(Parameter("u", "heat_transfer_coefficient", 0.0))
        found += [Parameter(f"fouling.{part}", "fouling_resistance", 0.0) for part in spec.fouling]
        return tuple(found)

    def set_parameter(self, name, values):
        values = np.asarray(values, dtype=float)
        if name not in {p.name for p in self.parameters()}:
            return super().set_parameter(name, values)
        group, _, part = name.partition(".")
        if group == "bypass":
            setattr(self.spec, f"bypass_{part}", values)
        elif group == "ua":
            self.spec.ua = values
        elif group == "u":
            self.spec.thermal.u = values
        else:
            self.spec.set_fouling(part, values)
        self._last_outlets = self._last_inlets = self._affine = self._flow_part = None

    def rate(self, inlets, details=True):
        t_hot, t_cold = inlets.t[:, 0], inlets.t[:, 1]
        guess = moved_outlets(self._last_inlets, self._last_outlets, t_hot, t_cold)
        service = rate_in_service(self.spec, t_hot, t_cold, inlets.m[:, 0], inlets.m[:, 1],
                                  inlets.fluids[0], inlets.fluids[1], guess=guess, details=details,
                                  u_at=self._u_at_flows(inlets))
        self._last_inlets = (t_hot, t_cold)
        self._last_outlets = (service.rating.t_hot_out_exchanger, service.rating.t_cold_out_exchanger)
        return service

    def balance_identities(self):
        return (("flow", "hot", "hot"), ("flow", "cold", "cold"))

    def balances(self, states, unknowns):
        """Energy: the hot side gives what the cold side takes (both sides' enthalpy flows)."""
        return (states.enthalpy_out() - states.enthalpy_in())[:, None]

    def condition(self, states):
        """Duty, UA, service and clean U and fouling resistance from the terminal temperatures
        and flows (:func:`.back_calculation.back_calculate`). Not for an exchanger rated by zones:
        its sides' states at a plateau are not fixed by temperatures, and a mean cp over a boiling
        range would give a UA that is no one's: NaN, with the reason."""
        if rated_by_zones(states.fluids_in):
            nothing = np.full(states.t_in.shape[0], np.nan)
            reason = np.full(nothing.shape, "a side on an enthalpy curve that holds vapour: not back-calculated in "
                                            "this version", dtype=object)
            return {k: nothing for k in ("duty", "ua", "u_service", "u_clean", "fouling", "p", "r")} | {"reason": reason}
        c = back_calculate(self.spec, states.t_in[:, 0], states.t_out[:, 0], states.t_in[:, 1], states.t_out[:, 1],
                           states.m_in[:, 0], states.m_in[:, 1], states.fluids_in[0], states.fluids_in[1])
        return {"duty": c.duty, "ua": c.ua, "u_service": c.u_service, "u_clean": c.u_clean, "fouling": c.fouling,
                "p": c.p_hot, "r": c.r_hot, **c.films, "reason": c.reason}

    def settings_from_states(self, states, unknowns):
        """The back-calculated fouling resistance, all referred to the outside area and so set
        as shell-side fouling with none on the tube side (a total cannot be split between the
        sides from terminal temperatures); a negative value is set as zero (the caller reports
        it); NaN where it could not be found, which makes that scenario not valid. Nothing where
        U takes no fouling."""
        if not self.spec.fouling:
            return {}
        fouling = self.condition(states)["fouling"]
        return {"fouling.shell": np.where(np.isnan(fouling), np.nan, np.maximum(fouling, 0.0)),
                "fouling.tube": np.zeros_like(fouling)}

    def outlet_temperatures(self, inlets):
        if rated_by_zones(inlets.fluids):
            return self.outlet_states(inlets, inlets.fluids)[0]
        fractions = self._affine_fractions(inlets)
        if fractions is not None:
            t_hot, t_cold = inlets.t[:, 0], inlets.t[:, 1]
            difference = t_hot - t_cold
            return np.stack([t_hot - fractions[0] * difference, t_cold + fractions[1] * difference], axis=1)
        x = self.rate(inlets, details=False).rating
        return np.stack([x.t_hot_out, x.t_cold_out], axis=1)

    def _u_at_flows(self, inlets):
        """U as a function of the sides' mean temperatures at these flows
        (:func:`.service_rating.coefficients_at`), kept while the flows and fluids stay: the
        sweeps of a tear iteration rate an exchanger at the same flows again and again. None
        with a fixed UA."""
        if self.spec.ua is not None:
            return None
        m, fluids = inlets.m, inlets.fluids
        if not _holds_for(self._flow_part, fluids, m):
            u_at = coefficients_at(self.spec, *through_exchanger(self.spec, m[:, 0], m[:, 1]), *fluids)
            self._flow_part = (fluids[0], fluids[1], np.array(m), u_at)
        return self._flow_part[3]

    def _affine_fractions(self, inlets):
        """(hot, cold) fractions of the inlet difference by which each side's outlet moves, where
        the rating is linear and homogeneous in the inlet temperatures: constant cp on both sides
        and a U that does not follow the operating point, so that the duty is P·C_min·ΔT_in with
        P from the flows and UA alone (bypasses and zero-flow limits are linear too). Found once
        by a rating at inlets of 1 and 0 °C and kept while the flows, fluids and parameters stay
        (absolute round-off about 1e-16 of the inlet difference); the many sweeps of a tear
        iteration then cost a few array operations each. None where the rating is not linear."""
        spec, fluids, m = self.spec, inlets.fluids, inlets.m
        if not rates_linearly(spec, fluids[0], fluids[1]):
            return None
        kept = self._affine
        if _holds_for(kept, fluids, m):
            return kept[3]
        ones = np.ones(m.shape[0])
        x = rate_in_service(spec, ones, 0.0 * ones, m[:, 0], m[:, 1], fluids[0], fluids[1], details=False).rating
        fractions = (1.0 - x.t_hot_out, x.t_cold_out)
        self._affine = (fluids[0], fluids[1], np.array(m), fractions)
        return fractions

    def outlet_states(self, inlets, outlet_fluids):
        """Outlet temperatures and enthalpies: from the zone rating where a side is on an
        enthalpy curve (NaN where it cannot be rated: the report says why), else the rating's
        temperatures with the outlet fluids' enthalpies."""
        if not rated_by_zones(inlets.fluids):
            t = self.outlet_temperatures(inlets)
            return t, np.stack([f.enthalpy(t[:, j]) for j, f in enumerate(outlet_fluids)], axis=1)
        service = self._rate_zoned(inlets)
        if service is None:
            nothing = np.full((inlets.batch, 2), np.nan)
            return nothing, nothing
        return (np.stack([service.t_hot_out, service.t_cold_out], axis=1),
                np.stack([service.h_hot_out, service.h_cold_out], axis=1))

    def _rate_zoned(self, inlets):
        """The zone rating (:mod:`.zone_exchanger`), None where this exchanger cannot be rated so."""
        if zone_problem(self.spec, inlets.fluids) is not None:
            return None
        return rate_zoned(self.spec, inlets, self._curves)

    @classmethod
    def outlet_temperatures_together(cls, units, inlets):
        """Exchangers that share arrangement, shells, fluids (or a blend's constituents) and a U
        that does not follow the operating point are rated in one call, stacked along the batch
        axis (:func:`rate_in_service` with ``members``); the rest one by one. The numbers are
        each exchanger's own (every step is elementwise; each stops iterating on its own)."""
        out = np.empty(inlets.t.shape[:2] + (2,))
        for members, service in cls._stacks(units, inlets, details=False):
            if service is None:
                out[members] = units[members[0]].outlet_temperatures(inlets.of(members[0]))
            else:
                x, shape = service.rating, (len(members), inlets.t.shape[1])
                out[members] = np.stack([x.t_hot_out.reshape(shape), x.t_cold_out.reshape(shape)], axis=2)
        return out

    @classmethod
    def report_together(cls, units, inlets):
        """Each exchanger's report, the ratings of those that stack made in one call (as in
        :meth:`outlet_temperatures_together`), each exchanger's pressure drops, findings and
        quantities its own."""
        reports = [None] * len(units)
        for members, service in cls._stacks(units, inlets, details=True):
            for j, k in enumerate(members):
                one = inlets.of(k)
                reports[k] = units[k].report(one) if service is None else \
                    units[k]._report_from(one, units[k]._share(service, j, len(members), one))
        return reports

    @classmethod
    def _stacks(cls, units, inlets, details):
        """(unit positions, their stacked rating) for each group of one stacking key; (one
        position, None) for an exchanger that rates alone."""
        groups = {}
        for k, unit in enumerate(units):
            key = unit._stacking_key(inlets.fluids[k])
            groups.setdefault(key if key is not None else ("alone", k), []).append(k)
        for members in groups.values():
            if len(members) == 1:
                yield members, None
            else:
                yield members, cls._rate_stacked([units[k] for k in members], inlets.t[members], inlets.m[members],
                                                 [inlets.fluids[k] for k in members], details)

    def _stacking_key(self, fluids):
        """Exchangers of one key rate together; None: this one rates alone (U follows the films)."""
        spec = self.spec
        if not spec.u_is_fixed or rated_by_zones(fluids):
            return None
        bypassed = (_anywhere_nonzero(spec.bypass_hot), _anywhere_nonzero(spec.bypass_cold))
        return (arranged(spec.arrangement).identity, spec.shells, spec.shells_in_parallel, spec.tube_passes,
                spec.shell_side, spec.mixed_side, spec.ua is None, bypassed, stacking_key(fluids[0]),
                stacking_key(fluids[1]))

    @staticmethod
    def _rate_stacked(units, t, m, fluids, details):
        """The stacked rating (batch axis: unit after unit) of exchangers of one stacking key;
        each keeps its own share as the warm start of its next rating."""
        count, batch = t.shape[:2]

        def along(values):
            return _unit_after_unit(list(values), batch)

        specs = [u.spec for u in units]
        fixed_ua = specs[0].ua is not None
        spec = replace(specs[0], pressure_drop={}, bypass_hot=along(s.bypass_hot for s in specs),
                       bypass_cold=along(s.bypass_cold for s in specs),
                       ua=along(s.ua for s in specs) if fixed_ua else None,
                       thermal=specs[0].thermal if fixed_ua else FixedCoefficient(along(s.thermal.u for s in specs)),
                       area_per_shell=None if fixed_ua else along(s.area_per_shell for s in specs))
        moved = [moved_outlets(u._last_inlets, u._last_outlets, t[k, :, 0], t[k, :, 1]) for k, u in enumerate(units)]
        guesses = [g if g is not None and np.shape(g[0]) == (batch,) else (t[k, :, 0], t[k, :, 1])
                   for k, g in enumerate(moved)]
        guess = tuple(np.concatenate([g[side] for g in guesses]) for side in (0, 1))
        service = rate_in_service(spec, t[:, :, 0].reshape(-1), t[:, :, 1].reshape(-1), m[:, :, 0].reshape(-1),
                                  m[:, :, 1].reshape(-1), stacked([f[0] for f in fluids], batch),
                                  stacked([f[1] for f in fluids], batch), guess=guess, details=details, members=count)
        x = service.rating
        hot_x, cold_x = x.t_hot_out_exchanger.reshape(count, batch), x.t_cold_out_exchanger.reshape(count, batch)
        for k, unit in enumerate(units):
            unit._last_inlets, unit._last_outlets = (t[k, :, 0], t[k, :, 1]), (hot_x[k], cold_x[k])
        return service

    def _share(self, service, j, count, inlets):
        """This exchanger's part (the j-th of ``count``) of a stacked rating with details, with
        its own pressure drops."""
        total = service.rating.duty.shape

        def part(value):
            value = np.asarray(value)
            return value.reshape(count, -1)[j] if value.shape == total else value

        rating = ExchangerRating(**{f.name: None if getattr(service.rating, f.name) is None
                                    else part(getattr(service.rating, f.name)) for f in fields(ExchangerRating)})
        c = service.coefficients
        coefficients = None if c is None else Coefficients(part(c.u_service), part(c.u_clean))
        drops = pressure_drops(self.spec, rating, inlets.t[:, 0], inlets.t[:, 1], inlets.m[:, 0], inlets.m[:, 1],
                               inlets.fluids[0], inlets.fluids[1])
        return ServiceRating(rating, coefficients, part(service.ua), drops, part(service.passes))

    def report(self, inlets):
        if rated_by_zones(inlets.fluids):
            return zone_report(self, inlets, self._rate_zoned(inlets), zone_problem(self.spec, inlets.fluids))
        return self._report_from(inlets, self.rate(inlets))

    def _report_from(self, inlets, service):
        x = service.rating
        t_hot, t_cold = inlets.t[:, 0], inlets.t[:, 1]
        quantities = {
            "duty": x.duty, "t_hot_in": t_hot, "t_hot_out": x.t_hot_out, "t_cold_in": t_cold,
            "t_cold_out": x.t_cold_out, "ua": service.ua, "ntu": x.ntu, "p": x.p, "r": x.r,
            "effectiveness": x.effectiveness, "f": x.f, "lmtd": x.lmtd, "approach": x.approach,
        }
        through = self._through(inlets)
        still = {side: m <= 0.0 for side, m in through.items()}
        quantities = blanked_where_idle(quantities, still["hot"] | still["cold"])
        for side, t_inside in _outlets_inside(x).items():
            fraction = _bypass(self.spec, side)
            if np.any(fraction):  # what the side reaches inside, ahead of its bypass
                quantities[f"t_{side}_out_inside"] = np.where(still[side], np.nan, t_inside)
                quantities[f"bypass_{side}"] = np.broadcast_to(fraction, x.duty.shape)
        coefficients = service.coefficients
        quantities.update(coefficient_quantities(self.spec, coefficients, x.duty.shape))
        for side, drop in service.pressure_drop.items():
            quantities[f"dp_{side}"] = drop
        labels = {"u_source": "fixed UA" if self.spec.ua is not None else self.spec.thermal.source}
        findings = (self._limit_findings(inlets, service, through)
                    + self._rating_findings(x, coefficients, t_hot, t_cold))
        findings += stagnant_side_findings(self.key, still, {"hot": t_hot, "cold": t_cold})
        if hasattr(self.spec.thermal, "scaling_findings") and self.spec.ua is None:  # U from films known at one flow
            findings += self.spec.thermal.scaling_findings(self.key, *shell_flows(self.spec, through["hot"],
                                                                                  through["cold"]))
            shell, tube = inlets.fluids if self.spec.shell_side == "hot" else inlets.fluids[::-1]
            findings += self.spec.thermal.reference_findings(self.key, shell, tube, x.duty.shape)
        totals = exchanger_totals(self.total, x.duty)
        metrics = {"duty": x.duty, "hot_in": t_hot, "hot_out": x.t_hot_out, "cold_in": t_cold, "cold_out": x.t_cold_out}
        return UnitReport(quantities, findings, labels=labels, totals=totals, metrics=metrics)

    def _through(self, inlets) -> dict:
        """Side -> the flow through the exchanger itself, its bypass's share gone round."""
        return dict(zip(("hot", "cold"), through_exchanger(self.spec, *inlets.m.T)))

    def _limit_findings(self, inlets, service, through=None):
        """``through``: :meth:`_through`, where the caller has it."""
        through = through or self._through(inlets)
        x, key = service.rating, self.key
        t_hot, t_cold = inlets.t[:, 0], inlets.t[:, 1]
        design = self.limits.get("design_temperature", {})
        # a side's peak is inside the exchanger: its outlet there, ahead of any bypass that
        # mixes back what went round (the mixed outlet lies between that and the inlet)
        inside, inlets_t = _outlets_inside(x), {"hot": t_hot, "cold": t_cold}
        # what passes through the shells and tubes counts, not what goes round them; a side with
        # nothing through it (bypassed whole, a closed branch) goes towards the other side's inlet
        # while that one flows (its metal and what stands in it: the no_flow warning), and has
        # nothing to limit where neither flows (an exchanger isolated)
        findings = design_temperature_findings({
            f"the {side} side {_inside_words(_bypass(self.spec, side))}":
                (f"{key}.design_temperature.{side}", design.get(side),
                 *_exposed(through[side] > 0.0, inlets_t[side], inside[side],
                           np.where(through[other] > 0.0, inlets_t[other], np.nan)))
            for side, other in (("hot", "cold"), ("cold", "hot"))})
        for side, m in through.items():
            limit = self.limits.get("maximum_flow", {}).get(side)
            if limit is not None:
                where = _bypass(self.spec, side)
                words = (f" through the exchanger ({'past' if np.all(where) else 'less any'} its bypass)"
                         if np.any(where) else "")
                findings.append(check("maximum_flow", "limit", m > limit, f"{key}.maximum_flow.{side}",
                                      f"the {side} side carries {{m:.2f}} kg/s{words}, above its maximum of "
                                      "{lim:.2f} kg/s", excess=m - limit, m=m, lim=limit))
        for side, drop in service.pressure_drop.items():
            limit = self.limits.get("allowable_pressure_drop", {}).get(side)
            if limit is not None:
                findings.append(check("pressure_drop", "limit", drop > limit, f"{key}.pressure_drop.{side}.allowable",
                                      f"{side}-side pressure drop {{dp:.1f}} kPa is above the allowable {{lim:.1f}} kPa",
                                      excess=drop - limit, dp=drop / 1000.0, lim=limit / 1000.0))
        return findings

    def _cross_place(self):
        """Where a cross is judged, in words: (the part it is inside, per what P is summed): a
        multipass shell, per shell or per half of an F shell (see
        :attr:`.arrangements.Arrangement.halves`), or a plate pack with passes."""
        if self.spec.arrangement.name == "plate":
            return "a plate pack with passes", "per pack"
        halved = unit_halves(self.spec.arrangement, self.spec.tube_passes) > 1
        return "a multipass shell", "per half of the F shell" if halved else "per shell"

    def _rating_findings(self, x, coefficients, t_hot, t_cold):
        key = self.key
        works = x.duty != 0.0
        inside, per = self._cross_place()
        findings = [
            check("temperature_cross", "limit", x.temperature_cross, key,
                  f"temperature cross inside {inside} (P_hot + P_cold = {{s:.3f}} {per} > 1): "
                  "the stream being heated leaves above the outlet of the stream being cooled; F = {f:.3f}",
                  excess=x.shell_p_sum - 1.0, s=x.shell_p_sum, f=x.f),
            *warning_line_findings(x, key, works, self.minimum_f, self.minimum_approach),
            check("reversed_heat_flow", "warning", x.reversed, key,
                  "the hot-side stream enters colder ({th:.1f} °C) than the cold-side stream ({tc:.1f} °C): heat "
                  "flows from the cold side to the hot side ({q:.1f} kW)", th=t_hot, tc=t_cold, q=-x.duty),
        ]
        return findings + self._film_findings(coefficients)

    def _film_findings(self, coefficients):
        """Warnings on the tube-side flow regime where U is from films that know it."""
        if coefficients is None or "laminar_tube_side" not in coefficients.notes:
            return []
        notes, key = coefficients.notes, self.key
        return [check("laminar_tube_side", "warning", notes["laminar_tube_side"], key,
                      "tube-side Re = {re:.0f} is laminar: the film is rated by a laminar form",
                      re=coefficients.reynolds_tube),
                check("transitional_tube_side", "warning", notes["transitional_tube_side"], key,
                      "tube-side Re = {re:.0f} is transitional (2300-10000): the film coefficient "
                      "is uncertain there", re=coefficients.reynolds_tube)]


def _holds_for(kept, fluids, m) -> bool:
    """Whether ``kept`` (fluid hot, fluid cold, flows, what was worked out from them) was worked
    out for these fluids and flows (batch, 2)."""
    return kept is not None and kept[0] is fluids[0] and kept[1] is fluids[1] and kept[2].shape == m.shape \
        and np.array_equal(kept[2], m)
